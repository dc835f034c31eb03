"""Ranking: weights file, factor arithmetic, monotonicity (faster camera, daylight)."""

from __future__ import annotations

import math

import pytest

from occplan.bodies import get_body
from occplan.catalogs import Site
from occplan.ephemeris import StarSpec, parse_utc, tdb_s_of
from occplan.errors import DataFileError
from occplan.ranking import (RankSettings, evaluate_and_score, load_weights, rank_rows,
                             rescore_rows, score_zones, zone_factors)
from occplan.telescope import load_telescope

# An invented star on Saturn's geocentric path (about 12 arcsec from the planet centre on
# 2027-06-15, the same as tests/test_cli_track.py); bright, so the camera is photon limited.
STAR = StarSpec(23.99933, 7.46989, vmag=8.0, kmag=6.0, name="bright")
WINDOW = (tdb_s_of(parse_utc("2027-06-15T00:00Z")), tdb_s_of(parse_utc("2027-06-15T02:30Z")))
# an invented site where Saturn is up before dawn during the egress (local time about 04:00)
SITE = Site("east", -25.0, 45.0, 100.0)


def record(**kw):
    base = {"name": "Mimas 2:1 edge", "feature": "edge", "label": "2:1", "satellite": "Mimas",
            "kind": "ILR", "side": "ingress", "resonance_radius_km": 117550.0, "weight": 1.0,
            "amplitude": 1.0, "torque_dyn_cm": 1e21, "resolvable": True, "behind_planet": False,
            "snr_per_element": 10.0, "feature_scale_km": 4.0, "achievable_resolution_km": 1.0,
            "resolved_fraction": 1.0, "ring_longitude_deg": 10.0, "usable": True}
    base.update(kw)
    return base


def test_default_weights_have_reasons():
    w = load_weights()
    for table, entries in w.values.items():
        for key in entries:
            assert any(k.startswith(key) or k == table for k in w.sources), (table, key)


def test_worked_example_of_the_module_docstring():
    """occplan.ranking's worked example: an edge crossed on both sides, resolved, SNR 10 and
    5 with reference 5, 150 deg apart: 0.8 + (1 - cos 150)/2 x 0.5 = 1.2665."""
    w = load_weights()
    assert w["snr.reference"] == 5.0
    recs = [record(snr_per_element=10.0, ring_longitude_deg=10.0),
            record(side="egress", snr_per_element=5.0, ring_longitude_deg=160.0)]
    s = score_zones(recs, w)
    assert s["score"] == pytest.approx(0.8 + (1 - math.cos(math.radians(150))) / 2 * 0.5, abs=1e-12)
    assert s["features_crossed"] == 1 and s["features_both_sides"] == 1
    assert s["score_ingress"] == pytest.approx(0.8) and s["score_egress"] == pytest.approx(0.5)
    assert "Mimas 2:1 edge" in s["deciding_features"]


def test_factor_arithmetic():
    w = load_weights()
    f = zone_factors(record(weight=0.3, resolved_fraction=0.5, snr_per_element=5.0), w)
    assert f["value"] == pytest.approx(0.3 * 0.5 * 0.5, abs=1e-12)
    # no credit floor: an unresolved wave earns nothing, whatever its SNR
    wave = dict(feature="density wave", name="Mimas 5:3 density wave", resolved_fraction=0.0,
                resolvable=False)
    assert zone_factors(record(**wave), w)["value"] == 0.0
    assert zone_factors(record(behind_planet=True), w)["value"] == 0.0
    assert zone_factors(record(usable=False), w)["value"] == 0.0
    # a corotation zone (weight 0 by kind) never scores
    assert zone_factors(record(feature="corotation", weight=0.0), w)["value"] == 0.0
    # unknown SNR counts as a marginal detection, never as a good one
    unknown = zone_factors(record(snr_per_element=float("nan")), w)["snr_factor"]
    assert unknown == w["snr.unknown"] < zone_factors(record(snr_per_element=5.0), w)["snr_factor"]


def test_unresolved_edges_and_narrow_rings_earn_a_location_credit():
    """An edge or narrow ring that the chord does not resolve is still located to
    sigma_r = element / SNR: credit / (1 + (sigma_r / reference)^2) (occplan.ranking,
    location_factor; the formula is this module's design choice, checked by hand here)."""
    w = load_weights()
    credit, ref = w["location.credit"], w["location.reference_km"]
    unresolved = dict(resolved_fraction=0.0, resolvable=False, snr_per_element=10.0)
    for sigma in (0.1, 1.0, 4.0):
        f = zone_factors(record(location_sigma_km=sigma, **unresolved), w)
        assert f["resolved_factor"] == pytest.approx(credit / (1 + (sigma / ref) ** 2), rel=1e-12)
        assert f["value"] == pytest.approx(f["resolved_factor"] * 100 / 125, rel=1e-12)
    ring = zone_factors(record(feature="narrow ring", location_sigma_km=0.5, **unresolved), w)
    assert ring["resolved_factor"] == pytest.approx(credit / 1.25, rel=1e-12)
    # a better location (brighter star: smaller sigma) never scores lower
    vals = [zone_factors(record(location_sigma_km=s_, **unresolved), w)["value"]
            for s_ in (5.0, 2.0, 1.0, 0.3)]
    assert vals == sorted(vals) and vals[0] < vals[-1]
    # a resolved edge keeps its full credit; a partial crossing or one behind the planet
    # locates nothing
    assert zone_factors(record(location_sigma_km=0.1), w)["resolved_factor"] == 1.0
    assert zone_factors(record(location_sigma_km=0.1, partial=True, **unresolved), w)["value"] == 0.0
    assert zone_factors(record(location_sigma_km=0.1, behind_planet=True, **unresolved),
                        w)["value"] == 0.0
    # without an SNR the edge counts as located to one resolution element
    f = zone_factors(record(snr_per_element=float("nan"), resolved_fraction=0.0,
                            achievable_resolution_km=2.0), w)
    assert f["resolved_factor"] == pytest.approx(credit / 5.0, rel=1e-12)


def test_same_longitude_twice_saturates():
    """A second crossing at the same ring longitude adds nothing; at the opposite ansa it
    counts in full (diversity (1 - cos dlon)/2)."""
    w = load_weights()
    one = score_zones([record()], w)["score"]
    same = score_zones([record(), record(side="egress")], w)["score"]
    opposite = score_zones([record(), record(side="egress", ring_longitude_deg=190.0)], w)["score"]
    assert same == pytest.approx(one, abs=1e-12)
    assert opposite == pytest.approx(2 * one, abs=1e-12)


def test_unknown_observability_is_not_perfect():
    """Geocentre crossings (usable None) go to potential_score; score stays 0, and the rank
    puts every observable event with a score first."""
    w = load_weights()
    geo = score_zones([record(usable=None), record(usable=None, side="egress",
                                                   ring_longitude_deg=190.0)], w)
    assert geo["score"] == 0.0 and geo["potential_score"] > 0 and geo["observability"] == "unknown"
    site = score_zones([record(weight=0.1)], w)
    rows = rank_rows([{"star_id": "geo", **geo}, {"star_id": "site", **site}])
    assert [r["star_id"] for r in rows] == ["site", "geo"]


def test_user_weights_and_bad_files(tmp_path):
    p = tmp_path / "w.toml"
    p.write_text("[snr]\nreference = 10.0\n")
    assert load_weights(p)["snr.reference"] == 10.0
    assert load_weights(p)["kinds.edge"] == 1.0
    for text, needle in (("[snr]\nfoo = 1\n", "unknown key"),
                         ("[bogus]\nx = 1\n", "unknown table"),
                         ("[snr]\nreference = -1\n", ">= 0"),
                         ("[snr]\nunknown = 2\n", "<= 1"),
                         ("[snr\n", "not valid TOML")):
        p.write_text(text)
        with pytest.raises(DataFileError, match=needle):
            load_weights(p)
    p.write_bytes(b"[snr]\nreference = \xff\n")
    with pytest.raises(DataFileError, match="UTF-8"):
        load_weights(p)


def test_rescore_with_other_weights(tmp_path):
    w = load_weights()
    rows = [{"star_id": "1", "zones": [record(snr_per_element=5.0)]}]
    base = rescore_rows(rows, {}, w)[0]["score"]
    assert base == pytest.approx(0.5)
    p = tmp_path / "w.toml"
    p.write_text("[kinds]\nedge = 0.5\n")
    assert rescore_rows(rows, {}, load_weights(p))[0]["score"] == pytest.approx(0.5 * base, rel=1e-12)
    with pytest.raises(DataFileError, match="must be a number"):
        rescore_rows([{"star_id": "1", "zones": [record(weight="big")]}], {}, w)
    with pytest.raises(DataFileError, match="must be a list"):
        rescore_rows([{"star_id": "1", "zones": "x"}], {}, w)


@pytest.fixture(scope="module")
def saturn_body():
    return get_body("saturn")


def test_faster_camera_never_ranks_lower(saturn_body):
    """Photon-limited star: each faster cadence keeps or raises the score (module docstring)."""
    scores = []
    for cadence in (0.5, 0.2, 0.05):
        tel = load_telescope(None, cadence_s=cadence)
        _, s, _ = evaluate_and_score(saturn_body, STAR, SITE.observer(), WINDOW, site=SITE,
                                     settings=RankSettings(telescope=tel))
        scores.append((s["score"], s["features_resolvable"]))
    assert scores[0][0] > 0
    for (a, na), (b, nb) in zip(scores[:-1], scores[1:]):
        assert b >= a - 1e-9 and nb >= na
    assert scores[-1][0] > scores[0][0]  # the sweep does change what is resolved


@pytest.mark.parametrize("what", ["brighter star", "larger aperture"])
def test_more_photons_rank_strictly_higher(saturn_body, what):
    """Same geometry: a brighter star (same colour) or a larger telescope never ranks lower,
    and strictly higher while features are not fully measured (q_snr < 1 everywhere)."""
    scores = []
    for step in range(3):
        if what == "brighter star":
            star = StarSpec(STAR.ra_deg, STAR.dec_deg, vmag=13.0 - 2 * step, kmag=11.0 - 2 * step)
            tel = load_telescope(None)
        else:
            star = STAR
            tel = load_telescope(None, aperture_m=0.5 * 2**step)
        _, s, _ = evaluate_and_score(saturn_body, star, SITE.observer(), WINDOW, site=SITE,
                                     settings=RankSettings(telescope=tel))
        scores.append(s["score"])
    assert scores[0] > 0
    assert scores[0] < scores[1] < scores[2], scores


def test_daylight_never_raises_the_score(saturn_body):
    """Hiding crossings behind daylight (a Sun limit the site never meets) cannot help."""
    _, open_sky, _ = evaluate_and_score(saturn_body, STAR, SITE.observer(), WINDOW, site=SITE)
    strict = Site("east", -25.0, 45.0, 100.0, min_altitude_deg=89.0)  # Saturn never that high
    _, hidden, _ = evaluate_and_score(saturn_body, STAR, strict.observer(), WINDOW, site=strict)
    assert open_sky["feature_crossings"] == hidden["feature_crossings"] > 0
    assert hidden["score"] <= open_sky["score"]
    assert hidden["score"] == 0.0 and hidden["crossings_unusable"] == hidden["feature_crossings"]
    assert hidden["observability"] == "not observable"
    assert math.isfinite(open_sky["score"])


def test_duplicated_resonance_term_changes_nothing(saturn_body):
    """A term listed twice in the resonance catalogue is one term: the features (and so
    every score) are the same."""
    from occplan.features import derive_features
    from occplan.resonances import find_resonances

    res = find_resonances(saturn_body, rmin_km=130000, rmax_km=137000, max_m=40)
    base = derive_features(saturn_body, res)
    doubled = derive_features(saturn_body, res + res[::7])
    assert [(f.name, f.torque_dyn_cm, f.weight) for f in base] == \
        [(f.name, f.torque_dyn_cm, f.weight) for f in doubled]


def test_uranus_chord_through_all_rings_outranks_epsilon_alone():
    """Same star brightness, same observer: a chord through all ten rings outranks one that
    reaches only the epsilon ring (each narrow ring is one feature).  Invented stars placed
    by root finding on the chord's closest-approach radius; geocentre, so the comparison is
    of the potential score (observability unknown)."""
    from scipy.optimize import brentq

    from occplan.ephemeris import Observer, get_ephemeris
    from occplan.geometry import compute_track, window_times

    from .test_geometry import offset_star, saturn_radec

    eph = get_ephemeris()
    uranus = get_body("uranus")
    t_mid = tdb_s_of(parse_utc("2028-11-16T04:00:00Z"))
    ra, dec = saturn_radec(eph, uranus, t_mid)
    times = window_times(t_mid - 3 * 3600, t_mid + 3 * 3600, 60.0)

    def min_radius(d_arcsec):
        star = offset_star(ra, dec, 0.0, d_arcsec)
        return compute_track(eph, uranus, Observer.geocentre(), star, times).closest_approach_radius_km

    scores = {}
    for name, target in (("all rings", 36000.0), ("epsilon only", 50350.0)):
        d = brentq(lambda x: min_radius(x) - target, 0.01, 6.0, xtol=1e-4)
        star = offset_star(ra, dec, 0.0, d)
        star = StarSpec(star.ra_deg, star.dec_deg, vmag=12.0, kmag=9.0, name=name)
        records, s, _ = evaluate_and_score(uranus, star, Observer.geocentre(),
                                           (t_mid - 3 * 3600, t_mid + 3 * 3600),
                                           settings=RankSettings(telescope=load_telescope(None, band="K")))
        assert s["observability"] == "unknown" and s["score"] == 0.0
        scores[name] = (s["potential_score"], {r["name"] for r in records})
    assert "6 ring" in scores["all rings"][1] and "6 ring" not in scores["epsilon only"][1]
    assert "epsilon ring" in scores["epsilon only"][1]
    assert scores["all rings"][0] > scores["epsilon only"][0] > 0
