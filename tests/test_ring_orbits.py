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
from occplan.ring_orbits import RingOrbit, parse_orbit

from .test_geometry import offset_star, saturn_radec

A, E = 51149.32, 0.007936
A_IN, A_OUT = A - 58.1 / 2, A + 58.1 / 2
DELTA_E = (37.6 - 58.1 * E) / (2 * A)  # edges' ae differ by 37.6 km: 20.5 km wide at periapse
T_MID = tdb_s_of(parse_utc("2028-11-16T04:00:00Z"))


def _body(varpi_deg):
    uranus = get_body("uranus")
    orbit = RingOrbit(epoch_jd_tdb=2462091.5, a_km=A, e=E, periapse_deg=varpi_deg,
                      periapse_rate_deg_day=0.0, inner_a_km=A_IN, inner_e=E - DELTA_E,
                      outer_a_km=A_OUT, outer_e=E + DELTA_E, source="test orbit")
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
