"""Event evaluation: coverage geometry, cadence, resolution and the `occplan event` command."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

from occplan.coverage import hidden_intervals, planet_disk, radial_projection_factor
from occplan.ephemeris import Observer, StarSpec, parse_utc, tdb_s_of
from occplan.events import evaluate_event
from occplan.geometry import Corrections, compute_track, window_times

from .test_geometry import offset_star, saturn_radec

T_MID = tdb_s_of(parse_utc("2027-06-15T00:50:00Z"))
SITE = Observer.site("test site", -25.0, 160.0, 1000.0)  # Saturn up, in daylight (usable False)
STAR = "23.9962 7.4705"


def test_hidden_part_of_a_central_chord_is_the_projected_diameter(eph, saturn):
    """Common practice (geometry of the ellipse): a chord through the centre of the planet's
    projected disk stays hidden for the ellipse's diameter along the chord / sky speed.
    Tolerance 1 km of chord: the polygon's 0.14 km sagitta at each limb plus the change of the
    sky speed across the disk (the Earth's acceleration, ~1e-5 relative)."""
    ra, dec = saturn_radec(eph, saturn, T_MID)
    star = StarSpec(ra_deg=ra, dec_deg=dec)
    times = window_times(T_MID - 4 * 3600, T_MID + 4 * 3600, 5.0)
    tr = compute_track(eph, saturn, Observer.geocentre(), star, times,
                       Corrections(deflection=False, barycentre_only=True))
    (a, b), = hidden_intervals(tr)
    i = np.argmin(np.abs(times - T_MID))
    vf = np.gradient(tr.sky_f_km, times)[i]
    vg = np.gradient(tr.sky_g_km, times)[i]
    speed = math.hypot(vf, vg)
    # the ellipse's diameter in the direction of motion
    p = math.radians(tr.meta["pole_position_angle_deg"])
    e_u = np.array([math.cos(p), -math.sin(p)])  # long axis in (f, g)
    e_v = np.array([math.sin(p), math.cos(p)])   # projected pole
    d = np.array([vf, vg]) / speed
    bb = math.radians(tr.meta["opening_angle_deg"])
    semi_a = saturn.equatorial_radius_km
    semi_b = math.sqrt((semi_a * math.sin(bb)) ** 2 + (saturn.polar_radius_km * math.cos(bb)) ** 2)
    cu, cv = d @ e_u, d @ e_v
    diameter = 2 * semi_a * semi_b / math.sqrt((semi_b * cu) ** 2 + (semi_a * cv) ** 2)
    assert (b - a) * speed == pytest.approx(diameter, abs=1.0)
    # the exact 3-D limb test agrees with the shapely polygon to a sample
    hidden = tr.behind_planet
    assert abs(hidden.sum() * 5.0 - (b - a)) <= 10.0
    # and the disk polygon has the right area (pi a b to the polygon's 1e-5)
    disk = planet_disk(saturn, tr.meta["opening_angle_deg"], tr.meta["pole_position_angle_deg"])
    assert disk.area == pytest.approx(math.pi * semi_a * semi_b, rel=1e-4)


def test_projection_factor_limits(eph, saturn):
    """|grad r| is 1 along the rings' long axis and 1/|sin B*| along the projected pole."""
    ra, dec = saturn_radec(eph, saturn, T_MID)
    star = offset_star(ra, dec, 1.0, 1.0)
    times = window_times(T_MID - 3600, T_MID + 3600, 60.0)
    tr = compute_track(eph, saturn, Observer.geocentre(), star, times)
    g = radial_projection_factor(tr, times)
    sb = abs(math.sin(math.radians(tr.meta["star_elevation_deg"])))
    assert np.all(g >= 1.0 - 1e-9) and np.all(g <= 1.0 / sb + 1e-9)


@pytest.fixture(scope="module")
def report(saturn):
    ra, dec = 23.9962, 7.4705
    return evaluate_event(saturn, StarSpec(ra, dec, vmag=9.5, kmag=6.0, name="invented"),
                          SITE, ("2027-06-14T22:00Z", "2027-06-15T04:00Z"))


def test_event_zones_are_consistent(report):
    data = report.to_json()
    for key in ("body", "star", "observer", "closest_approach", "opening_angle_deg",
                "star_elevation_deg", "pole_position_angle_deg", "crossings", "zones",
                "resolution", "observability", "cautions"):
        assert key in data
    assert data["zones"], "a chord across the A ring crosses resonance zones"
    spw = report.resolution["samples_per_wavelength"]
    for z, row in zip(report.zones, data["zones"]):
        assert z.start_s <= z.end_s
        if np.isfinite(z.time_s):
            assert z.start_s - 1e-3 <= z.time_s <= z.end_s + 1e-3
            assert row["start_utc"] <= row["time_utc"] <= row["end_utc"]
        # docs/design.md sec. 6: dt_req = lambda_min / (N |dr/dt|)
        assert z.required_interval_s == pytest.approx(z.feature_scale_km / (spw * z.max_radial_speed_km_s))
        # docs/design.md sec. 6: resolvable = finer than half the shortest wavelength, sampled at
        # N per wavelength, fully crossed, not hidden, and enough SNR
        assert z.resolvable == (z.achievable_resolution_km < z.feature_scale_km / 2
                                and report.telescope.cadence_s <= z.required_interval_s
                                and not z.partial and not z.behind_planet
                                and z.feature.weight > 0
                                and np.isfinite(z.snr_per_element) and z.snr_per_element >= 3.0)
        assert 0.0 <= z.resolved_fraction <= 1.0
        if z.resolvable:
            assert z.resolved_fraction == pytest.approx(1.0)
    labels = {(r["satellite"], r["label"], r["feature"]) for r in data["zones"]}
    # co-orbitals are one feature (Janus/Epimetheus); Mimas 5:3 has both waves
    assert ("Janus/Epimetheus", "6:5", "density wave") in labels
    assert ("Mimas", "5:3", "density wave") in labels and ("Mimas", "5:3", "bending wave") in labels
    assert data["resolution"]["fresnel_km"] == pytest.approx(
        math.sqrt(0.798e-9 * data["distance_au"] * 1.495978707e8 / 2), rel=1e-2)


def test_faster_camera_resolves_no_fewer_zones(saturn):
    from occplan.telescope import load_telescope

    counts = []
    for cadence in (1.0, 0.1, 0.01):
        rep = evaluate_event(saturn, StarSpec(23.9962, 7.4705, vmag=11.0, kmag=10.0), SITE,
                             ("2027-06-15T00:20Z", "2027-06-15T01:30Z"),
                             telescope=load_telescope(cadence_s=cadence, band="K"))
        counts.append(sum(z.resolvable for z in rep.zones))
    assert counts[0] <= counts[1] <= counts[2]
    assert counts[2] > 0


def test_event_cli_summary_and_json(cli):
    args = ["event", "--star", STAR, "--vmag", "9.5", "--kmag", "6", "--lat", "-25",
            "--lon", "160", "--height", "1000", "--start", "2027-06-15T00:20Z",
            "--end", "2027-06-15T01:30Z", "--max-order", "1"]
    res = cli(*args)
    assert res.exit_code == 0, res.output
    for needle in ("Ring regions crossed", "Fresnel scale", "Features crossed", "Observability"):
        assert needle in res.output
    data = json.loads(cli(*args, "--format", "json").output)
    z = data["zones"][0]
    for key in ("name", "feature", "label", "satellite", "kind", "wave", "m", "order",
                "resonance_radius_km", "side", "transmission", "contrast", "snr_per_element",
                "time_utc", "start_utc", "end_utc", "radial_velocity_km_s", "required_interval_s",
                "achievable_resolution_km", "resolvable", "behind_planet"):
        assert key in z
    assert data["resolution"]["stellar_diameter_km"] > 0


def test_event_without_magnitudes_says_what_was_not_evaluated(cli):
    res = cli("event", "--star", STAR, "--geocentre", "--start", "2027-06-15T00:20Z",
              "--end", "2027-06-15T01:30Z", "--max-order", "1", "--format", "json")
    data = json.loads(res.output)
    assert data["resolution"]["stellar_diameter_km"] is None
    assert "not evaluated" in " ".join(data["resolution"]["notes"])
    assert data["observability"]["applicable"] is False


def test_event_with_no_ring_crossing(cli):
    res = cli("event", "--star", "25.0 8.0", "--lat", "-25", "--lon", "160", "--start",
              "2027-06-15T00:20Z", "--end", "2027-06-15T01:30Z")
    assert res.exit_code == 0 and "no ring crossing" in res.output


@pytest.mark.parametrize("extra,needle", [
    (["--band", "Q"], "band"),
    (["--cadence", "0"], "cadence"),
    (["--aperture", "-1"], "aperture"),
    (["--vmag", "40"], "magnitude"),
    (["--sigma", "-5"], "negative"),
])
def test_event_bad_input(cli, extra, needle):
    res = cli("event", "--star", STAR, "--geocentre", "--start", "2027-06-15T00:20Z",
              "--end", "2027-06-15T01:30Z", *extra)
    assert res.exit_code == 2
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and needle in lines[0].lower(), res.output


def test_event_telescope_file_with_unknown_key(cli, tmp_path):
    tel = tmp_path / "tel.toml"
    tel.write_text('aperture_m = 1.0\nfocal_ratio = 8\n')
    res = cli("event", "--star", STAR, "--geocentre", "--start", "2027-06-15T00:20Z",
              "--end", "2027-06-15T01:30Z", "--telescope", tel)
    assert res.exit_code == 2 and "focal_ratio" in res.output


def test_gaps_are_crossed_and_hold_no_waves(saturn, report):
    """The Encke gap (cleared by Pan; edges French et al. 1993, Icarus 103, 163) is crossed
    like a region, and no feature lies inside it (Prometheus 16:15 ILR, 133,557 km, is no
    A-ring wave); wave zones next to it stop at its edges."""
    from occplan.events import select_features

    assert any(p.region == "Encke gap" for p in report.track.passes)
    feats = select_features(saturn)
    inside = [f for f in feats if 133423.24 < f.resonance_radius_km < 133744.84]
    assert inside == []
    for f in feats:
        if f.region == "A ring":
            assert not (f.zone_inner_km < 133500.0 < f.zone_outer_km), f.name
