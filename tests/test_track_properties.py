"""Hypothesis properties of the ring-plane track over random stars anywhere on the sky.

Stars are drawn uniformly on the sky, next to the point opposite the planet, along the ring
plane (B* near 0) and next to the planet itself; observers are the geocentre or random sites;
epochs 1950-2050 (inside DE421); bodies Saturn, Uranus, Neptune and Jupiter.  The properties:

- the track is computed (or refused as edge-on, and then the observer's |B| is small);
- a sample has a ring radius only where the exact ring-plane intercept lies in front of the
  observer with the ray passing the planet in front of it; a star whose line of sight meets
  the ring plane only behind the observer crosses nothing;
- radii are >= 0, longitudes in [0, 360), angles within their ranges, B always finite;
- every boundary crossing is real: the exact geometry at its time has a real intercept on
  that boundary;
- continuity: r changes between samples by no more than the ray can sweep.

Derandomized (fixed examples) so CI is reproducible; 150 examples a property, a few seconds.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from occplan.bodies import get_body
from occplan.ephemeris import J2000_TDB_JD, Observer, StarSpec, time_from_tdb_s
from occplan.errors import GeometryError
from occplan.geometry import compute_track, exact_geometry, window_times

BODIES = ("saturn", "uranus", "neptune", "jupiter")
T_1950 = -50.0 * 365.25 * 86400.0  # TDB s past J2000
T_2050 = 50.0 * 365.25 * 86400.0
# The ray's sky-plane speed relative to the planet stays under 100 km/s from the Earth
# (orbital 30 km/s, rotation 0.5 km/s, the planet's own 13 km/s at most; common practice):
# in the ring plane that is at most 100 / |sin B*| km/s.
MAX_SKY_SPEED_KM_S = 100.0
# Crossing radius re-computed exactly at the root: the splines are within metres where the
# star is visible (tests/test_geometry.py); 0.1 km leaves room for the root tolerance at high
# speed.  Behind the planet the deflection is tapered (geometry.exact_geometry) and the
# splines follow it less closely: 1 km there (0.18 km seen).
CROSSING_TOL_KM = 0.1

SETTINGS = settings(max_examples=150, deadline=None, derandomize=True,
                    suppress_health_check=[HealthCheck.function_scoped_fixture,
                                           HealthCheck.too_slow])


def _radec(v):
    v = np.asarray(v, dtype=float) / np.linalg.norm(v)
    ra = float(np.degrees(np.arctan2(v[1], v[0])) % 360.0)
    if ra >= 360.0:
        ra = 0.0
    return ra, float(np.degrees(np.arcsin(np.clip(v[2], -1.0, 1.0))))


def _frame(eph, body, observer, t_s):
    """Unit vectors at t: towards the planet (q), the pole n, and the ring-plane node N."""
    when = time_from_tdb_s(np.array([t_s]))
    q = (eph.planet_km(body, when, barycentre_only=True).reshape(3, -1)
         - eph.observer_km(observer, when).reshape(3, -1))[:, 0]
    q /= np.linalg.norm(q)
    n = body.pole.unit_vector(J2000_TDB_JD + t_s / 86400.0).reshape(3, -1)[:, 0]
    node = np.cross([0.0, 0.0, 1.0], n)
    node /= np.linalg.norm(node)
    return q, n, node


@st.composite
def scenarios(draw):
    """(body name, mid-window TDB s, site (lat, lon, height) or None, star kind, angle, x)."""
    body = draw(st.sampled_from(BODIES))
    t_mid = draw(st.floats(T_1950, T_2050))
    site = None
    if draw(st.booleans()):
        site = (draw(st.floats(-90.0, 90.0)), draw(st.floats(-180.0, 180.0)),
                draw(st.floats(0.0, 3000.0)))
    kind = draw(st.sampled_from(["sky", "antipode", "plane", "near"]))
    return body, t_mid, site, kind, draw(st.floats(0.0, 2.0 * math.pi)), draw(st.floats(-1.0, 1.0))


def _setup(eph, case, kind=None):
    name, t_mid, site, star_kind, a, x = case
    body = get_body(name)
    observer = Observer.geocentre() if site is None else Observer.site("p", *site)
    star = _star(eph, body, observer, t_mid, kind or star_kind, a, x)
    return body, observer, star, t_mid


def _star(eph, body, observer, t_mid, kind, a, x):
    q, n, node = _frame(eph, body, observer, t_mid)
    if kind == "sky":  # uniform on the sphere: z = x, azimuth a
        return StarSpec(*_radec([math.sqrt(1 - x * x) * math.cos(a),
                                 math.sqrt(1 - x * x) * math.sin(a), x]))
    side = np.cross(q, n)
    side /= np.linalg.norm(side)
    up = np.cross(side, q)
    offset = math.cos(a) * side + math.sin(a) * up
    if kind == "antipode":  # within 1 deg of the point opposite the planet
        return StarSpec(*_radec(-q + math.radians(abs(x)) * offset))
    if kind == "plane":  # in the ring plane, any azimuth, tilted by up to 0.01 deg
        perp = np.cross(n, node)
        return StarSpec(*_radec(math.cos(a) * node + math.sin(a) * perp
                                + math.radians(0.01 * x) * n))
    # next to the planet: up to 3 outer-ring radii off the centre on the sky
    dist_km = 5.0e8 * {"jupiter": 1.0, "saturn": 2.0, "uranus": 4.0, "neptune": 6.0}[body.name.lower()]
    return StarSpec(*_radec(q + 3.0 * x * body.outer_ring_km / dist_km * offset))


def _track(eph, body, observer, star, t_mid, step_s=300.0):
    times = window_times(t_mid - 3600.0, t_mid + 3600.0, step_s)
    try:
        return compute_track(eph, body, observer, star, times), times
    except GeometryError as exc:
        assert "edge-on" in str(exc)
        g = exact_geometry(eph, body, observer, star, np.array([t_mid]))
        assert abs(math.degrees(g["opening_angle"][0])) < 0.02
        return None, times


@SETTINGS
@given(scenarios())
def test_ranges_and_no_crossing_behind_the_observer(eph, case):
    kind = case[3]
    body, observer, star, t_mid = _setup(eph, case)
    tr, times = _track(eph, body, observer, star, t_mid)
    if tr is None:
        return
    r = tr.ring_radius_km
    has = np.isfinite(r)
    assert np.all(np.isfinite(tr.opening_angle_deg)) and np.all(np.abs(tr.opening_angle_deg) <= 90)
    assert np.all(np.abs(tr.star_elevation_deg) <= 90)
    assert np.all(r[has] >= 0)
    lon = tr.ring_longitude_deg[has]
    assert np.all((lon >= 0) & (lon < 360))
    assert np.array_equal(np.isfinite(tr.ring_longitude_deg), has)
    assert np.all(np.isfinite(tr.radial_velocity_km_s[has]))

    exact = exact_geometry(eph, body, observer, star, times)
    # a radius only where the exact intercept is real: in front of the observer, with the ray
    # passing the planet in front of it
    assert np.all(exact["ray_length"][has] > 0) and np.all(exact["ahead"][has])
    if not np.any(exact["valid"]):
        assert not has.any() and tr.crossings == [] and tr.passes == []
        assert not np.any(tr.behind_planet)
    if kind == "antipode":  # the line of sight meets the ring plane only behind the observer
        assert tr.crossings == [] and not has.any() and not np.any(tr.behind_planet)
    assert np.isnan(tr.closest_approach_radius_km) == (not has.any())


@SETTINGS
@given(scenarios())
def test_crossings_are_real_and_the_track_is_continuous(eph, case):
    kind = "near" if case[3] in ("sky", "antipode") else case[3]  # where crossings happen
    body, observer, star, t_mid = _setup(eph, case, kind)
    tr, times = _track(eph, body, observer, star, t_mid, step_s=120.0)
    if tr is None:
        return
    sin_bs = abs(math.sin(math.radians(tr.meta["star_elevation_deg"])))
    vmax = MAX_SKY_SPEED_KM_S / max(sin_bs, 1e-9)
    r = tr.ring_radius_km
    ok = np.isfinite(r[:-1]) & np.isfinite(r[1:])
    assert np.all(np.abs(np.diff(r))[ok] <= vmax * np.diff(times)[ok])
    assert np.all(np.abs(tr.radial_velocity_km_s[np.isfinite(r)]) <= vmax)
    if tr.crossings:
        when = np.array([c.tdb_s for c in tr.crossings])
        g = exact_geometry(eph, body, observer, star, when)
        assert np.all(g["valid"]) and np.all(g["ray_length"] > 0)
        r_exact = np.hypot(g["u_node"], g["u_perp"])
        bounds = np.array([c.boundary_km for c in tr.crossings])
        seen = ~np.array([c.behind_planet for c in tr.crossings])  # hidden ones: tapered, looser
        # (a virtual radius behind the planet; seen: 1.0 km on 120 s nodes)
        # edges with an orbit model are met in their own (inclined) plane, not the equator
        # plane: tests/test_ring_orbits.py checks them against the exact tilted-plane geometry
        modelled = {reg.name for reg in body.rings if reg.orbit is not None}
        modelled |= {gap.name for gap in getattr(body, "gaps", ())
                     if any(abs(gap.inner_km - reg.outer_km) < 1.0 or abs(gap.outer_km - reg.inner_km) < 1.0
                            for reg in body.rings if reg.orbit is not None)}
        flat = ~np.array([c.region in modelled for c in tr.crossings])
        r_exact, bounds, seen = r_exact[flat], bounds[flat], seen[flat]
        err = np.abs(r_exact - bounds)
        assert np.all(err[seen] < CROSSING_TOL_KM) and np.all(err < 20 * CROSSING_TOL_KM), err.max()
        assert all(times[0] <= c.tdb_s <= times[-1] for c in tr.crossings)


@pytest.mark.parametrize("body_name", BODIES)
def test_exact_antipode_and_ring_plane_star(eph, body_name):
    """The two extreme directions for every body, geocentric, at J2000 + 27 yr."""
    body = get_body(body_name)
    observer = Observer.geocentre()
    t_mid = 27.0 * 365.25 * 86400.0
    q, n, node = _frame(eph, body, observer, t_mid)
    tr, _ = _track(eph, body, observer, StarSpec(*_radec(-q)), t_mid)
    assert tr is not None and tr.crossings == [] and np.all(np.isnan(tr.ring_radius_km))
    tr, _ = _track(eph, body, observer, StarSpec(*_radec(np.cross(n, node))), t_mid)
    assert tr is not None and tr.crossings == []
    assert abs(tr.meta["star_elevation_deg"]) < 0.01


@settings(max_examples=40, deadline=None, derandomize=True,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(scenarios())
def test_interpolation_error_within_the_stated_bound(eph, case):
    """The interpolated ring radius against exact per-sample geometry, on samples 13 s apart
    (never on the 120-s nodes), where the star is visible and within twice the outer ring
    radius: within INTERPOLATION_SKY_TOL_M / |sin B*| (the bound occplan.chords states in its
    output; a sky-plane error e moves the ring-plane intercept by e / |sin B*|)."""
    from occplan.chords import INTERPOLATION_SKY_TOL_M

    body, observer, star, t_mid = _setup(eph, case, "near")
    times = window_times(t_mid - 3600.0, t_mid + 3600.0, 13.0)
    try:
        tr = compute_track(eph, body, observer, star, times)
    except GeometryError:
        return
    ex = compute_track(eph, body, observer, star, times, exact=True)
    r, r_exact = tr.ring_radius_km, ex.ring_radius_km
    assert np.array_equal(np.isfinite(r), np.isfinite(r_exact))
    near = (np.isfinite(r_exact) & ~np.asarray(ex.behind_planet, bool)
            & (r_exact < 2.0 * body.outer_ring_km))
    sin_bs = abs(math.sin(math.radians(ex.meta["star_elevation_deg"])))
    err_m = np.abs(r - r_exact)[near] * 1000.0
    assert np.all(err_m * sin_bs <= INTERPOLATION_SKY_TOL_M), (err_m.max(), sin_bs)


def test_interpolation_reported_cases():
    """The two worst cases a property search found: Uranus just outside the limb (6.45 m at
    60-s samples, 2000-01-01T12:00:56Z) is within the stated bound; Neptune at r = 2.5e6 km
    (42 m, B* = 0.64 deg) lies beyond twice the outer ring radius, where no bound is stated."""
    from occplan.chords import INTERPOLATION_SKY_TOL_M
    from occplan.ephemeris import get_ephemeris, parse_utc, tdb_s_of

    eph = get_ephemeris()
    body = get_body("uranus")
    t_mid = float(tdb_s_of(parse_utc("2000-01-01T12:00:56Z")))
    times = window_times(t_mid - 3 * 3600.0, t_mid + 3 * 3600.0, 7.0)
    star = StarSpec(317.48435, -17.01884)
    tr = compute_track(eph, body, Observer.geocentre(), star, times)
    ex = compute_track(eph, body, Observer.geocentre(), star, times, exact=True)
    seen = np.isfinite(ex.ring_radius_km) & ~np.asarray(ex.behind_planet, bool)
    assert seen.any()
    sin_bs = abs(math.sin(math.radians(ex.meta["star_elevation_deg"])))
    err_m = np.abs(tr.ring_radius_km - ex.ring_radius_km)[seen] * 1000.0
    assert 1.0 < err_m.max() < INTERPOLATION_SKY_TOL_M / sin_bs  # over the old 1 m claim
