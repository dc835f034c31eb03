"""Uncertainties of predicted times and radii, and recording plans.

The linear propagation (occplan.uncertainty) is checked against a seeded Monte Carlo of the
same inputs through the full geometry (occplan.geometry.compute_track with perturbed
catalogue positions): the sigmas agree to 10 %.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from occplan import uncertainty as un
from occplan.bodies import get_body
from occplan.ephemeris import Observer, StarSpec, get_ephemeris, parse_utc, tdb_s_of
from occplan.geometry import Corrections, compute_track, crossing_times, window_times
from occplan.telescope import load_telescope

from .test_geometry import offset_star, saturn_radec

T_MID = tdb_s_of(parse_utc("2028-10-30T02:40:00Z"))
SIGMA_MAS = 20.0  # an invented catalogue error, large enough to dominate rounding


@pytest.fixture(scope="module")
def setup():
    eph = get_ephemeris()
    saturn = get_body("saturn")
    ra, dec = saturn_radec(eph, saturn, T_MID)
    base = offset_star(ra, dec, 0.0, 8.0)
    star = StarSpec(base.ra_deg, base.dec_deg, epoch_jd_tt=2461700.0, name="invented",
                    errors={"ra_error": SIGMA_MAS, "dec_error": 0.6 * SIGMA_MAS,
                            "ra_dec_corr": 0.4})
    return eph, saturn, star


def _ingress_a_ring_outer_edge(eph, saturn, star, times):
    tr = compute_track(eph, saturn, Observer.geocentre(), star, times, Corrections())
    hits = crossing_times(tr.interp, np.array([136770.0]), float(times[0]), float(times[-1]))[0]
    return tr, float(np.min(hits))


def test_linear_sigmas_match_a_monte_carlo(setup):
    """1,000 seeded draws of the catalogue position (with its correlation), each through the
    full geometry: the spread of the A ring's outer-edge ingress time and of the closest
    approach radius agree with the linear sigmas to 10 % (standard error of a 1,000-draw
    sigma: 2.2 %)."""
    eph, saturn, star = setup
    times = window_times(T_MID - 3 * 3600, T_MID + 3 * 3600, 60.0)
    tr, t_edge = _ingress_a_ring_outer_edge(eph, saturn, star, times)
    budget = un.error_budget(tr, star, planet_sky_km=0.0, pole_deg=0.0)
    sig_t = float(un.crossing_time_sigma_s(tr, budget, [t_edge])[0])
    ca = un.closest_approach_sigmas(tr, budget)

    rng = np.random.default_rng(20281030)
    err = star.errors
    cov = np.array([[err["ra_error"] ** 2, err["ra_dec_corr"] * err["ra_error"] * err["dec_error"]],
                    [err["ra_dec_corr"] * err["ra_error"] * err["dec_error"], err["dec_error"] ** 2]])
    draws = rng.multivariate_normal([0.0, 0.0], cov, size=1000)  # mas, (RA*, Dec)
    short = window_times(t_edge - 600, t_edge + 600, 20.0)
    ca_times = window_times(tr.closest_approach_s - 900, tr.closest_approach_s + 900, 30.0)
    t_hits, r_ca = [], []
    for d_ra, d_dec in draws:
        s = offset_star(star.ra_deg, star.dec_deg, d_ra / 1000.0, d_dec / 1000.0)
        s = StarSpec(s.ra_deg, s.dec_deg, epoch_jd_tt=star.epoch_jd_tt)
        t_hits.append(_ingress_a_ring_outer_edge(eph, saturn, s, short)[1])
        r_ca.append(compute_track(eph, saturn, Observer.geocentre(), s, ca_times,
                                  Corrections()).closest_approach_radius_km)
    assert np.std(t_hits, ddof=1) == pytest.approx(sig_t, rel=0.10)
    assert np.std(r_ca, ddof=1) == pytest.approx(ca["radius_km"], rel=0.10)
    assert sig_t > 0.5  # the test probes a real spread (20 mas ~ 120 km at 8.2 AU)


def test_error_budget_terms(setup):
    """Catalogue errors propagate with the proper motion (x = x0 + mu dt: common practice);
    the planet, site and pole terms come from the data file; unknown terms are said."""
    eph, saturn, star = setup
    times = window_times(T_MID - 3600, T_MID + 3600, 60.0)
    tr = compute_track(eph, saturn, Observer.site("s", -23.4, -68.0, 2900.0), star, times)
    b = un.error_budget(tr, star)
    assert set(b.terms) == {"star", "planet", "site", "pole"}
    km_per_mas = tr.meta["distance_km"] * un.MAS_RAD
    assert b.terms["star"]["sigma_km"] > 0.6 * SIGMA_MAS * km_per_mas
    moving = StarSpec(star.ra_deg, star.dec_deg, epoch_jd_tt=star.epoch_jd_tt - 3652.5,
                      errors={"ra_error": 0.0, "dec_error": 0.0, "pmra_error": 1.0, "pmdec_error": 1.0})
    cov = un.star_covariance_mas2(moving, float(tr.closest_approach_s))
    dt_yr = (float(tr.closest_approach_s) / 86400.0 - (moving.epoch_jd_tt - 2451545.0)) / 365.25
    assert cov[0, 0] == pytest.approx(dt_yr**2, rel=1e-9)
    none = un.error_budget(tr, StarSpec(star.ra_deg, star.dec_deg))
    assert "star" not in none.terms and any("unknown" in n for n in none.notes)


def test_reach_probability_and_time_precision():
    """Gaussian closest approach: 50 % at the boundary, 84 % one sigma inside (common
    practice); printed decimals follow the sigma."""
    assert un.reach_probability(1000.0, 10.0, 1000.0) == pytest.approx(0.5)
    assert un.reach_probability(1000.0, 10.0, 1010.0) == pytest.approx(0.8413, abs=1e-4)
    assert un.reach_probability(1000.0, 10.0, 990.0) == pytest.approx(0.1587, abs=1e-4)
    # one decimal finer than the sigma's leading digit: 30 s -> whole seconds, 3 s -> 0.1 s
    assert [un.time_precision(s) for s in (30.0, 3.0, 0.3, 0.03, 0.0004)] == [0, 1, 2, 3, 3]


def test_recording_plan_arithmetic():
    tel = load_telescope(None, cadence_s=0.05, frame_width_px=200, frame_height_px=100,
                         bits_per_pixel=16)
    plan = un.recording_plan(1000.0, 4000.0, 2.0, 4.0, tel)
    assert plan["start_s"] == pytest.approx(1000.0 - 3 * 2.0 - 60.0)
    assert plan["stop_s"] == pytest.approx(4000.0 + 3 * 4.0 + 60.0)
    assert plan["frames"] == math.ceil(plan["duration_s"] / 0.05)
    assert plan["data_volume_gb"] == pytest.approx(plan["frames"] * 200 * 100 * 2 / 1e9)


def test_event_report_carries_sigmas(setup):
    from occplan.events import evaluate_event, summary_text

    eph, saturn, star = setup
    star = StarSpec(star.ra_deg, star.dec_deg, vmag=9.0, kmag=6.0, epoch_jd_tt=star.epoch_jd_tt,
                    errors=star.errors)
    rep = evaluate_event(saturn, star, Observer.site("s", -23.4, -68.0, 2900.0),
                         ("2028-10-30T00:30Z", "2028-10-30T04:50Z"))
    d = rep.to_json()
    assert d["closest_approach"]["time_sigma_s"] > 0 and d["closest_approach"]["radius_sigma_km"] > 0
    crossed = [c for c in d["crossings"] if c.get("start_sigma_s") is not None]
    assert crossed and all(c["start_sigma_s"] > 0 for c in crossed)
    timed = [z for z in d["zones"] if z["time_utc"]]
    assert timed and all(z["time_sigma_s"] > 0 for z in timed)
    rec = d["recording"]
    assert rec["start_utc"] < min(c["start_utc"] for c in d["crossings"])
    assert rec["stop_utc"] > max(c["end_utc"] for c in d["crossings"])
    text = summary_text(rep)
    assert "record " in text and "+-" in text and "1-sigma budget" in text


def test_gaia_error_columns_reach_the_star(tmp_path):
    """A catalog with Gaia's astrometric error columns (ECSV with units; pmra_error given in
    arcsec/yr to check the conversion) fills StarSpec.errors in mas and mas/yr."""
    from astropy.table import Table

    from occplan.catalogs import read_catalog_table

    t = Table({"source_id": ["1"], "ra": [10.0], "dec": [5.0], "pmra": [1.0], "pmdec": [2.0],
               "parallax": [0.5], "ra_error": [0.03], "dec_error": [0.04],
               "pmra_error": [5e-5], "pmdec_error": [0.06], "ra_dec_corr": [0.2]})
    t["ra"].unit = t["dec"].unit = "deg"
    t["pmra"].unit = t["pmdec"].unit = "mas / yr"
    t["parallax"].unit = "mas"
    t["ra_error"].unit = t["dec_error"].unit = "mas"
    t["pmra_error"].unit = "arcsec / yr"
    t["pmdec_error"].unit = "mas / yr"
    path = tmp_path / "gaia.ecsv"
    t.write(path, format="ascii.ecsv")
    star = read_catalog_table(path).star(0)
    assert star.errors["ra_error"] == pytest.approx(0.03)
    assert star.errors["pmra_error"] == pytest.approx(0.05)
    assert star.errors["ra_dec_corr"] == pytest.approx(0.2)
    assert un.star_covariance_mas2(star, 0.0) is not None


def test_find_margin_from_the_catalog_errors():
    """find's threshold margin: 3 sigma of the planet's position and of the worst star
    position when the catalog has Gaia errors (occplan.uncertainty.search_margin_km), the
    fixed default otherwise; the metadata says which."""
    from occplan.catalogs import StarTable
    from occplan.search import DEFAULT_MARGIN_KM, search_candidates

    saturn = get_body("saturn")
    stars = [StarSpec(24.0, 7.5, name="a", errors={"ra_error": 0.1, "dec_error": 0.1}),
             StarSpec(24.1, 7.4, name="b", errors={"ra_error": 2.0, "dec_error": 2.0})]
    table = StarTable.from_stars(stars)
    window = ("2027-06-14T00:00Z", "2027-06-16T00:00Z")
    _, _, info = search_candidates(saturn, table, window)
    from occplan.ephemeris import time_from_tdb_s

    eph = get_ephemeris()
    mid = time_from_tdb_s(np.array([tdb_s_of(parse_utc("2027-06-15T00:00Z"))]))
    dist_km = float(np.linalg.norm(eph.planet_km(saturn, mid, barycentre_only=True)[:, 0]
                                   - eph.earth_km(mid)[:, 0]))
    star_km = math.hypot(2.0, 2.0) * dist_km * un.MAS_RAD
    assert info["margin_km"] == pytest.approx(3 * math.hypot(star_km, 5.0), rel=0.01)
    assert "3 sigma" in info["margin_from"]
    plain = StarTable.from_stars([StarSpec(24.0, 7.5, name="c")])
    assert search_candidates(saturn, plain, window)[2]["margin_km"] == DEFAULT_MARGIN_KM
    assert search_candidates(saturn, table, window, margin_km=123.0)[2]["margin_km"] == 123.0
