"""Eccentric rings: crossings solved against the edges' ellipses, not a circular envelope.

Analytic reference: a precessing ellipse r = a (1 - e^2) / (1 + e cos(lambda - varpi))
(Murray & Dermott 1999, ch. 2), typed here independently of occplan.ring_orbits.  The test
orbit uses the Uranian epsilon ring's a, e and widths (French et al. 1988, Icarus 73, 349;
width 20 km at periapse, 96 km at apoapse) with an arbitrary periapse longitude: it checks
the geometry, not the ring's published orientation.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from scipy.optimize import brentq

from occplan.bodies import get_body
from occplan.ephemeris import Observer, get_ephemeris, parse_utc, tdb_s_of
from occplan.errors import DataFileError
from occplan.geometry import compute_track, window_times
from occplan.ring_orbits import parse_orbit

from .test_geometry import offset_star, saturn_radec

A, E = 51149.32, 0.007936
A_IN, A_OUT = A - 58.1 / 2, A + 58.1 / 2
DELTA_E = (37.6 - 58.1 * E) / (2 * A)  # edges' ae differ by 37.6 km: 20.5 km wide at periapse
T_MID = tdb_s_of(parse_utc("2028-11-16T04:00:00Z"))


def _body(varpi_deg):
    uranus = get_body("uranus")
    orbit = parse_orbit({"epoch_jd_tdb": 2462091.5, "a_km": A, "e": E, "periapse_deg": varpi_deg,
                         "periapse_rate_deg_day": 0.0, "inner_a_km": A_IN, "inner_e": E - DELTA_E,
                         "outer_a_km": A_OUT, "outer_e": E + DELTA_E, "source": "test orbit"},
                        "test")
    rings = tuple(dataclasses.replace(r, orbit=orbit) if r.name == "epsilon ring" else r
                  for r in uranus.rings)
    return dataclasses.replace(uranus, rings=rings)


def _ellipse(a, e, lon_deg, varpi_deg):
    return a * (1 - e * e) / (1 + e * math.cos(math.radians(lon_deg - varpi_deg)))


@pytest.fixture(scope="module")
def chord():
    eph = get_ephemeris()
    uranus = get_body("uranus")
    ra, dec = saturn_radec(eph, uranus, T_MID)
    star = offset_star(ra, dec, 0.0, 1.0)
    times = window_times(T_MID - 3 * 3600, T_MID + 3 * 3600, 10.0)
    return eph, star, times


@pytest.mark.parametrize("varpi", [0.0, 90.0, 200.0])
def test_epsilon_crossings_follow_the_ellipse(chord, varpi):
    eph, star, times = chord
    tr = compute_track(eph, _body(varpi), Observer.geocentre(), star, times)
    passes = [p for p in tr.passes if p.region == "epsilon ring"]
    assert len(passes) == 2  # ingress and egress
    for p in passes:
        for t_edge in (p.start_s, p.end_s):
            r = float(tr.interp.radius(np.array([t_edge]))[0])
            u = tr.interp.in_plane(np.array([t_edge]))[0][:, 0]
            lon = math.degrees(math.atan2(u[1], u[0]))
            inner = _ellipse(A_IN, E - DELTA_E, lon, varpi)
            outer = _ellipse(A_OUT, E + DELTA_E, lon, varpi)
            assert min(abs(r - inner), abs(r - outer)) < 1e-3  # km
            assert A_IN * (1 - E) - 40 < r < A_OUT * (1 + E) + 40
        # the crossing lasts the local width / |dr/dt|: seconds, not the envelope's minute
        mid = 0.5 * (p.start_s + p.end_s)
        u = tr.interp.in_plane(np.array([mid]))[0][:, 0]
        lon = math.degrees(math.atan2(u[1], u[0]))
        width = _ellipse(A_OUT, E + DELTA_E, lon, varpi) - _ellipse(A_IN, E - DELTA_E, lon, varpi)
        speed = abs(float(tr.interp.radial_velocity(np.array([mid]))[0]))
        assert p.end_s - p.start_s == pytest.approx(width / speed, rel=0.02)
        assert p.end_s - p.start_s < 20.0


def test_periapse_moves_the_crossing(chord):
    """Turning the ellipse by 180 deg moves the crossing radius by about 2 a e cos f."""
    eph, star, times = chord
    radii = []
    for varpi in (0.0, 180.0):
        tr = compute_track(eph, _body(varpi), Observer.geocentre(), star, times)
        p = next(p for p in tr.passes if p.region == "epsilon ring" and p.side == "ingress")
        radii.append(float(tr.interp.radius(np.array([p.start_s]))[0]))
        u = tr.interp.in_plane(np.array([p.start_s]))[0][:, 0]
        lon = math.degrees(math.atan2(u[1], u[0]))
    expected = abs(2 * A_OUT * (E + DELTA_E) * math.cos(math.radians(lon)))
    assert abs(radii[0] - radii[1]) == pytest.approx(expected, rel=0.05)


def test_orbit_table_is_validated():
    with pytest.raises(DataFileError, match="unknown orbit key"):
        parse_orbit({"epoch_jd_tdb": 1.0, "a_km": 1.0, "e": 0.0, "periapse_deg": 0.0, "ecc": 1}, "x")
    with pytest.raises(DataFileError, match="needs 'e'"):
        parse_orbit({"epoch_jd_tdb": 1.0, "a_km": 1.0, "periapse_deg": 0.0}, "x")
    with pytest.raises(DataFileError, match="0 <= e < 1"):
        parse_orbit({"epoch_jd_tdb": 1.0, "a_km": 1.0, "e": 1.5, "periapse_deg": 0.0}, "x")


def test_brent_reference_for_one_edge(chord):
    """The solver's edge time against an independent Brent root of r(t) - R(lambda(t))."""
    eph, star, times = chord
    body = _body(45.0)
    tr = compute_track(eph, body, Observer.geocentre(), star, times)
    p = next(p for p in tr.passes if p.region == "epsilon ring" and p.side == "egress")

    def miss(t):
        u = tr.interp.in_plane(np.array([t]))[0][:, 0]
        lon = math.degrees(math.atan2(u[1], u[0]))
        return math.hypot(u[0], u[1]) - _ellipse(A_OUT, E + DELTA_E, lon, 45.0)

    t_ref = brentq(miss, p.start_s - 60, p.end_s + 60)
    assert p.end_s == pytest.approx(t_ref, abs=1e-4)


# --------------------------------------------------------------------------- built-in rings


def _spice_b1950_offset_deg(body, jd_tdb):
    """Longitude of the ring plane's B1950 ascending node from its ICRF one, with the B1950
    equator's pole from SPICE's built-in B1950 frame (spiceypy.pxform; NAIF Frames Required
    Reading), independent of occplan's astropy FK4 route."""
    import spiceypy

    z_b = np.array(spiceypy.pxform("B1950", "J2000", 0.0)) @ np.array([0.0, 0.0, 1.0])
    n = np.asarray(body.pole.unit_vector(jd_tdb), dtype=float).reshape(3)
    node = np.cross([0.0, 0.0, 1.0], n)
    node /= np.linalg.norm(node)
    node_b = np.cross(z_b, n)
    node_b /= np.linalg.norm(node_b)
    return math.degrees(math.atan2(np.cross(n, node) @ node_b, node @ node_b))


def test_b1950_longitudes_turn_to_the_icrf_node():
    from occplan.ring_orbits import reference_offset_rad

    uranus = get_body("uranus")
    orbit = next(r.orbit for r in uranus.rings if r.name == "epsilon ring")
    assert orbit.longitude_reference == "B1950"
    ours = math.degrees(reference_offset_rad(orbit, uranus))
    assert ours == pytest.approx(_spice_b1950_offset_deg(uranus, orbit.epoch_jd_tdb), abs=1e-5)


@pytest.fixture(scope="module")
def uranus_event(chord):
    eph, star, times = chord
    uranus = get_body("uranus")
    return uranus, compute_track(eph, uranus, Observer.geocentre(), star, times)


def test_every_uranian_ring_has_its_orbit_and_is_crossed_on_it(uranus_event):
    """French et al. 1991 elements (the body file): every ring's edges are crossed between
    a (1 - e) and a (1 + e) of that edge, widened by the in-plane shift of an inclined ring
    (at most a sin i cot B*)."""
    uranus, tr = uranus_event
    rings = {r.name: r for r in uranus.rings}
    assert all(r.orbit is not None for r in rings.values()) and len(rings) == 10
    b_star = math.radians(abs(tr.meta["star_elevation_deg"]))
    seen = set()
    for c in tr.crossings:
        orbit = rings[c.region].orbit
        edge = orbit.edge_orbit(c.edge)
        lift = edge.a_km * math.sin(math.radians(edge.inclination_deg)) / math.tan(b_star)
        assert edge.a_km * (1 - edge.e) - lift - 1e-3 <= c.boundary_km <= \
            edge.a_km * (1 + edge.e) + lift + 1e-3, (c.region, c.edge)
        seen.add((c.region, c.side))
    assert len(seen) == 20  # ten rings, both sides


def test_inclined_edge_against_the_exact_plane_intersection(uranus_event):
    """The 6 ring is inclined by 0.0616 deg (a sin i = 45 km; French et al. 1991).  At the
    solved crossing time the ray, intersected exactly with the ring's own tilted plane
    (normal (sin i sin Omega, -sin i cos Omega, cos i) in the ring frame, textbook orbital
    geometry), lands on the edge's precessing ellipse.  Node and periapse are propagated here
    by hand, with the B1950 node from SPICE."""
    from astropy.coordinates import SkyCoord
    import astropy.units as u

    uranus, tr = uranus_event
    ring = next(r for r in uranus.rings if r.name == "6 ring")
    orbit = ring.orbit
    c = next(c for c in tr.crossings if c.region == "6 ring" and c.edge == "outer")
    edge = orbit.outer
    jd = 2451545.0 + c.tdb_s / 86400.0
    days = jd - orbit.epoch_jd_tdb
    off = _spice_b1950_offset_deg(uranus, orbit.epoch_jd_tdb)
    node_l = math.radians(edge.node_deg + off + edge.node_rate_deg_day * days)
    peri = math.radians(edge.periapse_deg + off + edge.periapse_rate_deg_day * days)
    inc = math.radians(edge.inclination_deg)
    # ring frame: ascending node of the ring plane on the ICRF equator, perpendicular, pole
    n = np.asarray(uranus.pole.unit_vector(jd), dtype=float).reshape(3)
    x = np.cross([0.0, 0.0, 1.0], n)
    x /= np.linalg.norm(x)
    y = np.cross(n, x)
    sc = SkyCoord(tr.star.ra_deg * u.deg, tr.star.dec_deg * u.deg).cartesian.xyz.value
    s = np.array([sc @ x, sc @ y, sc @ n])
    uu = tr.interp.in_plane(np.array([c.tdb_s]))[0][:, 0]
    U = np.array([uu[0], uu[1], 0.0])
    normal = np.array([math.sin(inc) * math.sin(node_l), -math.sin(inc) * math.cos(node_l),
                       math.cos(inc)])
    q = U - (normal @ U) / (normal @ s) * s
    lon = math.atan2(q[1], q[0])
    r_ellipse = edge.a_km * (1 - edge.e ** 2) / (1 + edge.e * math.cos(lon - peri))
    assert np.linalg.norm(q) == pytest.approx(r_ellipse, abs=0.05)
    # and the tilt matters: the flat-plane radius misses the edge by ten times the tolerance
    assert abs(np.linalg.norm(U) - r_ellipse) > 0.5


def test_mode_phase_error_moves_the_radius_as_a_finite_difference():
    """edge_radius_sigma_km's mode term m A |sin arg| sigma against turning the pattern by
    sigma in edge_radius_km (a finite difference; small-angle calculus)."""
    from occplan.ring_orbits import edge_radius_km, edge_radius_sigma_km

    saturn = get_body("saturn")
    table = {"epoch_jd_tdb": 2454467.0, "a_km": 117569.41, "e": 0.0, "periapse_deg": 0.0,
             "periapse_rate_deg_day": 0.0, "phase_sigma_deg": 0.5,
             "modes": [{"m": 2, "amplitude_km": 31.77, "phase_deg": 164.83,
                        "pattern_speed_deg_day": 381.98729}]}
    turned = dict(table, modes=[dict(table["modes"][0], phase_deg=164.83 + 0.5)])
    o, o2 = parse_orbit(table, "t"), parse_orbit(turned, "t")
    t = 8.0e8
    for lon in np.radians([10.0, 50.0, 100.0, 222.0]):
        d = abs(float(edge_radius_km(o2, saturn, "outer", lon, t) - edge_radius_km(o, saturn, "outer", lon, t)))
        assert edge_radius_sigma_km(o, saturn, "outer", lon, t) == pytest.approx(d, rel=0.02, abs=0.01)


def test_vectorised_edge_set_matches_the_per_edge_formulas():
    """EdgeSet (all edges at once, used by the crossing solver) against edge_radius_km and
    edge_height_km edge by edge, for every built-in ring orbit (Uranus's inclined rings,
    Saturn's B-ring edge with its normal modes): the same numbers to 1 mm."""
    from occplan.ring_orbits import EdgeSet, edge_height_km, edge_radius_km

    rng = np.random.default_rng(11)
    for name in ("uranus", "saturn"):
        body = get_body(name)
        edges = [(r.orbit, w) for r in body.rings if r.orbit is not None
                 for w in ("inner", "outer")]
        assert len(edges) >= 10
        eset = EdgeSet(body, edges)
        idx = rng.integers(0, len(edges), 400)
        lon = rng.uniform(-np.pi, 3 * np.pi, 400)
        t = rng.uniform(7e8, 1.1e9, 400)
        want_r = [edge_radius_km(*edges[k][:1], body, edges[k][1], lon[i], t[i])
                  for i, k in enumerate(idx)]
        want_z = [edge_height_km(*edges[k][:1], body, edges[k][1], lon[i], t[i])
                  for i, k in enumerate(idx)]
        assert np.max(np.abs(eset.radius(lon, t, idx) - np.array(want_r, dtype=float))) < 1e-6
        assert np.max(np.abs(eset.height(lon, t, idx) - np.array(want_z, dtype=float))) < 1e-6
