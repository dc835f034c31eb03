"""Search kernels and catalog edge cases: ellipse distance, proper-motion propagation,
stars listed twice, without proper motion, at other epochs, at the window edges."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from shapely.geometry import Polygon

from occplan.bodies import get_body
from occplan.catalogs import StarTable, read_catalog_table
from occplan.ephemeris import Observer, StarSpec, get_ephemeris, parse_utc, tdb_s_of
from occplan.errors import CoverageError, InputError
from occplan.search import (EARTH_RADIUS_KM, _runs, distance_to_ellipse, find_events, planet_path,
                            search_candidates, star_unit_vectors)

START, END = "2027-09-01T00:00:00Z", "2027-09-11T00:00:00Z"


def test_distance_to_ellipse_against_shapely():
    """Reference: shapely distance to a 20,000-vertex polygon (chord error 1.2e-8 a)."""
    rng = np.random.default_rng(3)
    for a, b in ((1.0, 0.3), (1.0, 0.02), (1.0, 1.0)):
        th = np.linspace(0, 2 * np.pi, 20000, endpoint=False)
        poly = Polygon(np.column_stack([a * np.cos(th), b * np.sin(th)]))
        x, y = rng.uniform(-3, 3, (2, 400))
        ref = shapely.distance(shapely.points(np.column_stack([x, y])), poly)
        got = distance_to_ellipse(x, y, a, b)
        assert np.max(np.abs(got - ref)) < 1e-6  # polygon error 1.2e-8, Newton converged


def test_star_propagation_against_astropy():
    """Reference: astropy SkyCoord.apply_space_motion (rigorous space motion); 100 mas/yr over
    11.7 yr differs from the linear tangent-plane step by (mu dt)^2 ~ 1e-11 rad: 0.01 mas."""
    import astropy.units as u
    from astropy.coordinates import SkyCoord
    from astropy.time import Time

    stars = [StarSpec(10.0, 5.0, 80.0, -60.0, 0.0, 0.0, 2457389.0, name="a"),
             StarSpec(200.0, -70.0, -100.0, 30.0, 0.0, 0.0, 2457389.0, name="b")]
    table = StarTable.from_stars(stars)
    t_ref = tdb_s_of(parse_utc("2027-09-01T00:00:00Z"))
    got = star_unit_vectors(table, t_ref)
    for s, g in zip(stars, got):
        c = SkyCoord(ra=s.ra_deg * u.deg, dec=s.dec_deg * u.deg, pm_ra_cosdec=s.pm_ra_mas_yr * u.mas / u.yr,
                     pm_dec=s.pm_dec_mas_yr * u.mas / u.yr, distance=1000 * u.pc,
                     radial_velocity=0 * u.km / u.s, obstime=Time(2016.0, format="jyear", scale="tt"))
        moved = c.apply_space_motion(new_obstime=Time(2451545.0 + t_ref / 86400.0, format="jd", scale="tdb"))
        ref = moved.cartesian.xyz.value / np.linalg.norm(moved.cartesian.xyz.value)
        assert np.degrees(np.linalg.norm(g - ref)) * 3.6e6 < 0.05  # mas


def test_runs():
    m = np.array([0, 1, 1, 0, 0, 1, 0, 1, 1, 1, 0], dtype=bool)
    assert _runs(m, join=0) == [(1, 2), (5, 5), (7, 9)]
    assert _runs(m, join=1) == [(1, 2), (5, 9)]
    assert _runs(np.zeros(4, bool)) == []


@pytest.fixture(scope="module")
def path_nodes():
    body = get_body("saturn")
    eph = get_ephemeris()
    t0, t1 = tdb_s_of(parse_utc(START)), tdb_s_of(parse_utc(END))
    return body, planet_path(eph, body, t0 - 86400.0, t1 + 86400.0, 600.0, body.outer_ring_km), t0, t1


def on_path(path, t_s, offset_rad=0.0):
    """RA, Dec (deg) of the planet's geocentric direction at t (plus a northward offset)."""
    u = np.array([np.interp(t_s, path.tdb_s, path.unit[:, i]) for i in range(3)])
    u /= np.linalg.norm(u)
    ra = np.degrees(np.arctan2(u[1], u[0])) % 360.0
    dec = np.degrees(np.arcsin(u[2])) + np.degrees(offset_rad)
    return float(ra), float(dec)


def test_edge_cases_of_a_catalog(tmp_path, path_nodes):
    body, path, t0, t1 = path_nodes
    t_a, t_b, t_c = t0 + 2 * 86400.0, t0 + 5 * 86400.0, t0 + 8 * 86400.0
    ra_a, dec_a = on_path(path, t_a)
    ra_b, dec_b = on_path(path, t_b)
    ra_c, dec_c = on_path(path, t_c)
    # star B at epoch J2000.0 with 200 mas/yr: its catalogue place is 5.5 arcsec from where it
    # is in 2027 (back-propagated along the tangent plane; second order ~1e-9 deg)
    years = (2451545.0 + t_b / 86400.0 - 2451545.0) / 365.25
    pm_ra, pm_dec = 150.0, -132.0
    dec_b0 = dec_b - pm_dec * years / 3.6e6
    ra_b0 = ra_b - pm_ra * years / 3.6e6 / np.cos(np.radians(dec_b))
    # star C at the window start's epoch (ref_epoch 2027.666..) and with no motion at all
    epoch_c = 2000.0 + (2451545.0 + t0 / 86400.0 - 2451545.0) / 365.25
    lines = ["source_id,ra,dec,pmra,pmdec,parallax,radial_velocity,ref_epoch,vmag,kmag",
             f"11,{ra_a:.10f},{dec_a:.10f},0,0,0,,2027.5,10,8",
             f"11,{ra_a:.10f},{dec_a:.10f},0,0,0,,2027.5,10,8",  # listed twice
             f"22,{ra_b0:.10f},{dec_b0:.10f},{pm_ra},{pm_dec},0.5,,2000.0,11,9",
             f"33,{ra_c:.10f},{dec_c:.10f},0,0,0,,{epoch_c:.8f},,",
             f"44,{ra_c:.10f},{dec_c + 0.01:.10f},,,,,2016.0,12,10"]  # no proper motion
    path_csv = tmp_path / "edge.csv"
    path_csv.write_text("\n".join(lines) + "\n")
    table = read_catalog_table(path_csv)
    assert len(table) == 3 and len(table.report.skipped) == 2
    cands, skipped, _ = search_candidates(body, table, (t0, t1))
    assert not skipped
    by_id = {c.star_id: c for c in cands}
    assert sorted(by_id) == ["11", "22", "33"] and len(cands) == 3
    # each placed on the planet's path: the geocentric chord passes near the planet centre
    # (deflection, the ring-intercept light time and parallax move it by < 1,000 km), and
    # the closest approach falls within 5 min of the placement time (sky speed ~25 km/s)
    for sid, t in (("11", t_a), ("22", t_b), ("33", t_c)):
        assert by_id[sid].min_ring_radius_km < 60000.0
        assert abs(by_id[sid].closest_approach_s - t) < 300.0


def test_window_edges_and_threshold_radius(path_nodes):
    body, path, t0, t1 = path_nodes
    inside_end = StarSpec(*on_path(path, t1 - 3600.0), epoch_jd_tt=2461650.0, name="before-end")
    after_end = StarSpec(*on_path(path, t1 + 3 * 3600.0), epoch_jd_tt=2461650.0, name="after-end")
    # 0.1 deg north: about 1.6 million km at 10 AU, far outside any threshold
    far = StarSpec(*on_path(path, t0 + 4 * 86400.0, np.radians(0.1)), epoch_jd_tt=2461650.0, name="far")
    cands, _, info = search_candidates(body, [inside_end, after_end, far], (t0, t1))
    assert [c.star_id for c in cands] == ["before-end"]
    assert info["threshold_km"] == pytest.approx(EARTH_RADIUS_KM + 1000.0)


def test_find_events_for_sites_and_geocentre(path_nodes):
    body, path, t0, t1 = path_nodes
    star = StarSpec(*on_path(path, t0 + 3 * 86400.0, 1.0e-5), epoch_jd_tt=2461650.0, name="s1")
    sites = [Observer.site("north", 45.0, 10.0, 500.0), Observer.geocentre()]
    res = find_events(body, [star], (t0, t1), sites)
    assert {e.site_name for e in res.events} == {"north", "geocentre"}
    for e in res.events:
        assert e.crosses_rings and e.crossing_start_s < e.closest_approach_s < e.crossing_end_s
        # a site's closest approach differs from the geocentre's by at most R_E / sky speed
        dt = abs(e.closest_approach_s - e.candidate.closest_approach_s)
        assert dt < EARTH_RADIUS_KM / e.candidate.sky_speed_km_s + 60.0
    row = res.rows()[0]
    for key in ("star_id", "body", "site", "closest_approach_utc", "min_ring_radius_km"):
        assert key in row


def test_bad_windows_and_observers(path_nodes):
    body, _, t0, t1 = path_nodes
    star = StarSpec(10.0, 5.0, name="x")
    with pytest.raises(CoverageError, match="coverage"):
        search_candidates(body, [star], ("2651-01-01", "2651-02-01"))  # DE440 ends 2650
    with pytest.raises(InputError, match="not after"):
        search_candidates(body, [star], (t1, t0))
    with pytest.raises(InputError, match="observer"):
        find_events(body, [star], (t0, t1), [])
    with pytest.raises(InputError, match="margin"):
        search_candidates(body, [star], (t0, t1), margin_km=-1.0)


def test_jobs_share_the_work_and_change_no_result(path_nodes):
    """Tracks and scores computed on two forked processes equal the serial ones exactly
    (the same functions on the same inputs; common practice for a process pool)."""
    import copy

    from occplan.parallel import effective_jobs
    from occplan.ranking import score_events

    body, path, t0, t1 = path_nodes
    stars = [StarSpec(*on_path(path, t0 + (1.0 + k) * 86400.0, 2.0e-6 * k), epoch_jd_tt=2461650.0,
                      name=f"p{k}") for k in range(5)]
    sites = [Observer.site("north", 45.0, 10.0, 500.0), Observer.site("south", -30.0, -70.0, 2000.0)]
    serial = find_events(body, stars, (t0, t1), sites, jobs=1)
    forked = find_events(body, stars, (t0, t1), sites, jobs=2)
    key = [(e.star_id, e.site_name, e.closest_approach_s, e.min_ring_radius_km, len(e.passes))
           for e in serial.events]
    assert len(key) >= 8 and effective_jobs(2, len(key)) == 2
    assert key == [(e.star_id, e.site_name, e.closest_approach_s, e.min_ring_radius_km,
                    len(e.passes)) for e in forked.events]
    again = copy.deepcopy(serial)
    score_events(serial, jobs=1)
    score_events(again, jobs=2)
    import json

    def same(x):  # nan-aware equality of the records
        return json.dumps(x, sort_keys=True, default=str)

    assert same([e.score for e in serial.events]) == same([e.score for e in again.events])
    assert same([e.zones for e in serial.events]) == same([e.zones for e in again.events])
    assert any(e.score["score"] > 0 or e.score["potential_score"] > 0 for e in serial.events)
    with pytest.raises(InputError, match="--jobs"):
        effective_jobs(-1, 10)
