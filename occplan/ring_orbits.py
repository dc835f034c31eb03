"""Kinematic models of eccentric rings: where an edge is at a given longitude and time.

A body file may give a ring (or ringlet) an ``[rings.orbit]`` table.  Each edge is a
precessing Keplerian ellipse in the ring plane (Murray & Dermott 1999, ch. 2):

    R(lambda, t) = a (1 - e^2) / (1 + e cos(lambda - varpi(t))) - sum_m A_m cos(m (lambda - phi_m - Omega_m (t - t0)))
    varpi(t)     = varpi_0 + varpidot (t - t0)

with lambda the inertial ring longitude of occplan (from the ascending node of the ring
plane on the ICRF equator), varpidot the apsidal precession rate (given, or computed from
the planet's zonal harmonics at a: :func:`occplan.dynamics.apsidal_rate_rad_s`), and
optional normal modes m with radial amplitude A_m, the longitude phi_m of a radius minimum at
the epoch and pattern speed Omega_m.  The inner and outer edges may have their own a and e
(the epsilon ring of Uranus is 20 km wide at periapse and 96 km at apoapse: its edges' ae
differ by 76 km); by default both share the ring's e.

:func:`apply_ring_orbits` replaces the circular-envelope crossings of such a ring on a track
by the times the chord meets the edges themselves (Brent's method on r(t) - R(lambda(t), t)
inside the envelope crossing).  Vertical offsets of inclined rings are not modelled (a ring
inclined by i moves by up to a i out of the plane: a note says so when i is given).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq

from .errors import DataFileError

SECONDS_PER_DAY = 86400.0
ORBIT_KEYS = {"epoch_jd_tdb", "a_km", "e", "periapse_deg", "periapse_rate_deg_day",
              "inclination_deg", "node_deg", "node_rate_deg_day", "inner_a_km", "inner_e",
              "outer_a_km", "outer_e", "modes", "source"}
MODE_KEYS = {"m", "amplitude_km", "phase_deg", "pattern_speed_deg_day", "source"}


@dataclass(frozen=True)
class Mode:
    m: int
    amplitude_km: float
    phase_deg: float
    pattern_speed_deg_day: float


@dataclass(frozen=True)
class RingOrbit:
    """A ring's edges as precessing ellipses (module docstring)."""

    epoch_jd_tdb: float
    a_km: float
    e: float
    periapse_deg: float
    periapse_rate_deg_day: float | None = None
    inclination_deg: float = 0.0
    node_deg: float = 0.0
    node_rate_deg_day: float | None = None
    inner_a_km: float | None = None
    inner_e: float | None = None
    outer_a_km: float | None = None
    outer_e: float | None = None
    modes: tuple = field(default_factory=tuple)
    source: str = ""

    def edge(self, which: str) -> tuple[float, float]:
        """(a, e) of the inner or outer edge."""
        if which == "inner":
            return (self.inner_a_km or self.a_km), (self.e if self.inner_e is None else self.inner_e)
        return (self.outer_a_km or self.a_km), (self.e if self.outer_e is None else self.outer_e)


def parse_orbit(table: dict, where: str) -> RingOrbit:
    """A RingOrbit from a body file's ``[rings.orbit]`` table (one-line errors)."""
    if not isinstance(table, dict):
        raise DataFileError(f"{where}: 'orbit' must be a table")
    unknown = set(table) - ORBIT_KEYS
    if unknown:
        raise DataFileError(f"{where}: unknown orbit key(s) {', '.join(sorted(unknown))}; "
                            f"allowed: {', '.join(sorted(ORBIT_KEYS))}")
    for key in ("epoch_jd_tdb", "a_km", "e", "periapse_deg"):
        if key not in table:
            raise DataFileError(f"{where}: orbit needs {key!r}")

    def num(key, default=None):
        v = table.get(key, default)
        if v is None:
            return None
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            raise DataFileError(f"{where}: orbit {key} = {v!r} must be a finite number")
        return float(v)

    modes = []
    for k, mode in enumerate(table.get("modes", [])):
        if not isinstance(mode, dict) or set(mode) - MODE_KEYS or \
                not {"m", "amplitude_km", "phase_deg", "pattern_speed_deg_day"} <= set(mode):
            raise DataFileError(f"{where}: orbit mode {k} needs m, amplitude_km, phase_deg and "
                                "pattern_speed_deg_day (and an optional source)")
        modes.append(Mode(int(mode["m"]), float(mode["amplitude_km"]), float(mode["phase_deg"]),
                          float(mode["pattern_speed_deg_day"])))
    orbit = RingOrbit(
        epoch_jd_tdb=num("epoch_jd_tdb"), a_km=num("a_km"), e=num("e"),
        periapse_deg=num("periapse_deg"), periapse_rate_deg_day=num("periapse_rate_deg_day"),
        inclination_deg=num("inclination_deg", 0.0), node_deg=num("node_deg", 0.0),
        node_rate_deg_day=num("node_rate_deg_day"), inner_a_km=num("inner_a_km"),
        inner_e=num("inner_e"), outer_a_km=num("outer_a_km"), outer_e=num("outer_e"),
        modes=tuple(modes), source=str(table.get("source", "")))
    for which in ("inner", "outer"):
        a, e = orbit.edge(which)
        if not (a > 0 and 0 <= e < 1):
            raise DataFileError(f"{where}: orbit {which} edge needs a > 0 and 0 <= e < 1")
    return orbit


def periapse_rad(orbit: RingOrbit, body, t_tdb_s) -> np.ndarray:
    """Longitude of periapse (rad) at TDB seconds past J2000."""
    from .constants import J2000_JD_TDB
    from .dynamics import apsidal_rate_rad_s

    if orbit.periapse_rate_deg_day is not None:
        rate = math.radians(orbit.periapse_rate_deg_day) / SECONDS_PER_DAY
    else:
        rate = float(apsidal_rate_rad_s(body, orbit.a_km))
    dt = np.asarray(t_tdb_s, dtype=float) - (orbit.epoch_jd_tdb - J2000_JD_TDB) * SECONDS_PER_DAY
    return math.radians(orbit.periapse_deg) + rate * dt


def edge_radius_km(orbit: RingOrbit, body, which: str, longitude_rad, t_tdb_s) -> np.ndarray:
    """Radius of the inner or outer edge at ring longitude and time (module docstring)."""
    from .constants import J2000_JD_TDB

    a, e = orbit.edge(which)
    lon = np.asarray(longitude_rad, dtype=float)
    f = lon - periapse_rad(orbit, body, t_tdb_s)
    r = a * (1.0 - e * e) / (1.0 + e * np.cos(f))
    dt_day = np.asarray(t_tdb_s, dtype=float) / SECONDS_PER_DAY - (orbit.epoch_jd_tdb - J2000_JD_TDB)
    for mode in orbit.modes:
        arg = mode.m * (lon - math.radians(mode.phase_deg)
                        - math.radians(mode.pattern_speed_deg_day) * dt_day)
        r = r - mode.amplitude_km * np.cos(arg)
    return r


def radius_span_km(orbit: RingOrbit) -> tuple[float, float]:
    """Smallest and largest radius either edge can reach (all modes at their extremes)."""
    modes = sum(abs(m.amplitude_km) for m in orbit.modes)
    lo = min(a * (1 - e) for a, e in (orbit.edge("inner"), orbit.edge("outer"))) - modes
    hi = max(a * (1 + e) for a, e in (orbit.edge("inner"), orbit.edge("outer"))) + modes
    return lo, hi


def apply_ring_orbits(track) -> list[str]:
    """Replace envelope crossings of rings with an orbit model by edge crossings (in place).

    On each side of the chord (ingress: r decreasing, egress: increasing) the edges are
    bracketed by the times the chord crosses the smallest and largest radius the ring can
    reach; each edge's time is the root of r(t) - R(lambda(t), t) there (Brent).
    Returns notes for the output metadata.
    """
    from .geometry import Crossing, RegionPass, crossing_times

    body = track.body
    notes = []
    interp = track.interp
    t0, t1, ca = float(track.tdb_s[0]), float(track.tdb_s[-1]), float(track.closest_approach_s)
    sides = [s for s in (("ingress", t0, ca), ("egress", ca, t1)) if s[2] > s[1]]
    for reg in body.rings:
        orbit = getattr(reg, "orbit", None)
        if orbit is None or not np.isfinite(track.closest_approach_radius_km):
            continue
        if orbit.inclination_deg:
            notes.append(f"{reg.name}: inclination {orbit.inclination_deg:g} deg not modelled "
                         f"(vertical offsets up to {orbit.a_km * math.radians(orbit.inclination_deg):.1f} km)")

        def miss(t, which):
            u = interp.in_plane(np.array([t]))[0][:, 0]
            lon = math.atan2(u[1], u[0])
            return float(np.hypot(u[0], u[1]) - edge_radius_km(orbit, body, which, lon, t))

        lo, hi = radius_span_km(orbit)
        t_lo, t_hi = crossing_times(interp, np.array([lo - 1.0, hi + 1.0]), t0, t1)
        passes = [p for p in track.passes if p.region != reg.name]
        crossings = [c for c in track.crossings if c.region != reg.name]
        for side, a, b in sides:
            in_lo = [t for t in t_lo if a <= t <= b]
            in_hi = [t for t in t_hi if a <= t <= b]
            if side == "ingress":
                ba, bb = (in_hi[0] if in_hi else a), (in_lo[0] if in_lo else b)
            else:
                ba, bb = (in_lo[-1] if in_lo else a), (in_hi[-1] if in_hi else b)
            times = {}
            for which in ("inner", "outer"):
                fa, fb = miss(ba, which), miss(bb, which)
                if np.isfinite(fa) and np.isfinite(fb) and fa * fb < 0:
                    times[which] = brentq(miss, ba, bb, args=(which,), xtol=1e-6)
            if not times:
                continue  # this side misses the ring itself
            if len(times) == 2:
                start, end = sorted(times.values())
                clipped = False
            else:  # one edge crossed: the chord turns (or the window ends) inside the ring
                (_, t_edge), = times.items()
                start, end = sorted((t_edge, b if side == "ingress" else a))
                clipped = start == t0 or end == t1
            passes.append(RegionPass(region=reg.name, side=side, start_s=float(start),
                                     end_s=float(end), clipped=clipped))
            for which, t_edge in times.items():
                crossings.append(Crossing(
                    boundary_km=float(interp.radius(np.array([t_edge]))[0]), region=reg.name,
                    edge=which, tdb_s=float(t_edge), side=side,
                    radial_velocity_km_s=float(interp.radial_velocity(np.array([t_edge]))[0]),
                    behind_planet=bool(interp.limb(np.array([t_edge]))[0] < 0)))
        track.passes = sorted(passes, key=lambda q: q.start_s)
        track.crossings = sorted(crossings, key=lambda c: c.tdb_s)
        notes.append(f"{reg.name}: crossings solved against its eccentric edges "
                     f"({orbit.source or 'body file orbit'})")
    return notes
