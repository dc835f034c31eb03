"""Where on Earth: the grid's parallax-shifted chords against chords computed directly for
those sites, and the grid's altitudes against astropy's."""

from __future__ import annotations

import json
import warnings

import numpy as np
import pytest

from occplan.bodies import get_body
from occplan.ephemeris import Observer, StarSpec, get_ephemeris, parse_utc, tdb_s_of
from occplan.geometry import compute_track, window_times
from occplan.world import world_grid

STAR = StarSpec(36.00676, 11.44189, name="invented")
WINDOW = ("2028-10-30T01:30Z", "2028-10-30T04:30Z")


@pytest.fixture(scope="module")
def grid():
    return world_grid("saturn", STAR, WINDOW, resolution_deg=10.0, step_s=60.0)


def test_grid_chord_equals_the_direct_chord(grid):
    """The minimum ring radius and the ring-crossing interval of a grid point equal those of
    the chord computed for that site (geodetic, height 0).  Tolerance 5 km in radius (3.3 km
    seen over 70 sites at B* = 18 deg): the shift leaves out the change of the planet's light
    deflection with each ray's impact parameter (R_E^2/b: ~1 km), the light time across the
    Earth (20 ms at ~20 km/s: 0.4 km) and the planet's distance from each site (0.6 km), all
    magnified by 1/sin B* across the rings' short axis; a 5-deg grid cell is 550 km wide."""
    eph = get_ephemeris()
    saturn = get_body("saturn")
    t0, t1 = tdb_s_of(parse_utc(WINDOW[0])), tdb_s_of(parse_utc(WINDOW[1]))
    times = window_times(t0, t1, 60.0)
    checked = 0
    for i in np.nonzero(grid.crosses_rings)[0][::37]:
        site = Observer.site("grid", float(grid.lat_deg[i]), float(grid.lon_deg[i]), 0.0)
        tr = compute_track(eph, saturn, site, STAR, times)
        r = np.where(tr.behind_planet | ~np.isfinite(tr.ring_radius_km), np.inf, tr.ring_radius_km)
        assert r.min() == pytest.approx(grid.min_ring_radius_km[i], abs=5.0)
        checked += 1
    assert checked >= 5


def test_altitudes_match_astropy(grid):
    """Planet altitude at sample grid points against astropy's AltAz (no refraction;
    astropy's apparent place differs from the geometric one by aberration, under 0.01 deg;
    tolerance 0.05 deg)."""
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, get_body as astropy_body
    from astropy.time import Time
    from astropy.utils import iers

    iers.conf.auto_download = False
    eph = get_ephemeris()
    saturn = get_body("saturn")
    t0 = tdb_s_of(parse_utc(WINDOW[0]))
    t1 = tdb_s_of(parse_utc(WINDOW[1]))
    times = window_times(t0, t1, 60.0)
    from occplan.ephemeris import time_from_tdb_s
    from occplan.world import geodetic_itrs_km, zenith_itrs

    jd = 2451545.0 + times / 86400.0
    rot = eph.itrs_to_icrs(jd)
    when = time_from_tdb_s(times)
    p = eph.planet_km(saturn, when, barycentre_only=True) - eph.earth_km(when)
    p /= np.linalg.norm(p, axis=0)
    for lat, lon in ((-23.4, -68.0), (35.0, 140.0), (51.5, 0.0)):
        zen = np.einsum("ijn,j->in", rot, zenith_itrs(lat, lon))
        ours = np.degrees(np.arcsin(np.einsum("in,in->n", zen, p)))
        loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, 0 * u.m)
        t = Time(["2028-10-30T01:30:00", "2028-10-30T03:00:00", "2028-10-30T04:30:00"], scale="utc")
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            ref = astropy_body("saturn", t, loc).transform_to(
                AltAz(obstime=t, location=loc, pressure=0 * u.hPa)).alt.deg
        ours3 = ours[[0, (len(times) - 1) // 2, -1]]
        assert np.allclose(ours3, ref, atol=0.05), (lat, lon, ours3, ref)
    assert geodetic_itrs_km(0.0, 0.0)[0] == pytest.approx(6378.137)


def test_where_command_writes_table_map_and_geojson(cli, tmp_path):
    png, gj = tmp_path / "w.png", tmp_path / "w.geojson"
    res = cli("where", "--body", "saturn", "--star", "36.00676 11.44189", "--start", WINDOW[0],
              "--end", WINDOW[1], "--resolution", "15", "--map", str(png), "--geojson", str(gj))
    assert res.exit_code == 0, res.output
    assert "can observe it" in res.output
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    data = json.loads(gj.read_text())
    assert data["type"] == "FeatureCollection" and data["features"]
    f = data["features"][0]
    assert f["geometry"]["type"] == "Point" and "observable" in f["properties"]
    bad = cli("where", "--body", "saturn", "--star", "36.00676 11.44189", "--start", WINDOW[0],
              "--end", WINDOW[1], "--resolution", "0.01")
    assert bad.exit_code == 2 and "limit" in bad.stderr


def test_place_scores_with_a_reference_telescope():
    """Scores on the grid: only at (a thinned sample of) observable places, never elsewhere;
    each equals the ranking of a station evaluated directly at that place (the ranking's own
    formula, tests/test_ranking.py); the star's brightness raises them (more photons never
    lower a score, occplan.ranking)."""
    import dataclasses

    from occplan.catalogs import Site
    from occplan.ephemeris import parse_utc, tdb_s_of
    from occplan.ranking import EVAL_PAD_S, evaluate_and_score
    from occplan.world import score_places, world_grid

    bright = dataclasses.replace(STAR, vmag=9.8, kmag=6.1)
    g = score_places(world_grid("saturn", bright, WINDOW, resolution_deg=10.0, step_s=60.0),
                     spacing_deg=40.0, max_places=4)
    ok = np.isfinite(g.score)
    assert 0 < ok.sum() <= 4 and np.all(g.observable[ok])
    i = int(np.nonzero(ok)[0][0])
    site = Site("p", float(g.lat_deg[i]), float(g.lon_deg[i]), 0.0)
    a = tdb_s_of(parse_utc(g.start_utc[i])) - EVAL_PAD_S
    b = tdb_s_of(parse_utc(g.end_utc[i])) + EVAL_PAD_S
    _, direct, _ = evaluate_and_score("saturn", bright, site.observer(), (a, b), site=site)
    assert g.score[i] == pytest.approx(direct["score"], rel=1e-9)
    faint = score_places(world_grid("saturn", dataclasses.replace(bright, vmag=13.8, kmag=10.1),
                                    WINDOW, resolution_deg=10.0, step_s=60.0),
                         spacing_deg=40.0, max_places=4)
    assert np.all(faint.score[ok] <= g.score[ok] + 1e-12) and np.any(faint.score[ok] < g.score[ok])
