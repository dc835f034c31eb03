"""Kinematic models of eccentric and inclined rings: where an edge is at a longitude and time.

A body file may give a ring (or ringlet) an ``[rings.orbit]`` table.  Each edge is a
precessing Keplerian ellipse in the ring plane with normal modes (Murray & Dermott 1999,
ch. 2; the mode form of French et al. 1991 and Nicholson et al. 2014):

    R(lambda, t) = a (1 - e^2) / (1 + e cos(lambda - varpi(t)))
                   - sum_m A_m cos(m (lambda - phi_m - Omega_m (t - t0)))
    varpi(t)     = varpi_0 + varpidot (t - t0)
    z(lambda, t) = a sin(i) sin(lambda - Omega(t)),   Omega(t) = Omega_0 + Omegadot (t - t0)

with lambda the inertial ring longitude of occplan (from the ascending node of the ring
plane on the ICRF equator), varpidot and Omegadot the apsidal and nodal rates (given, or
computed from the planet's zonal harmonics at a: :mod:`occplan.dynamics`), and normal modes
m (m >= 1, or m < 0 for the outer-Lindblad-type modes) with radial amplitude A_m, the
longitude phi_m of a radius minimum at the epoch and pattern speed Omega_m.

The ring-level keys give both edges; ``[rings.orbit.inner]`` and ``[rings.orbit.outer]`` may
override any of a_km, e, periapse_deg, periapse_rate_deg_day, inclination_deg, node_deg,
node_rate_deg_day, modes and rms_km per edge (each edge of Saturn's ringlets has its own
fitted orbit; the Uranian epsilon ring is 20 km wide at periapse and 96 km at apoapse).

``longitude_reference = "B1950"`` marks longitudes measured from the ascending node of the
ring plane on the B1950 (FK4) equator, as the Uranian ring solutions of French et al. 1988
and 1991 are; they are turned to occplan's ICRF node once per body
(:func:`reference_offset_rad`).  ``phase_sigma_deg`` is the 1-sigma of the periapse and node
longitudes at the event (an extrapolated precession), ``rms_km`` the fit's radial scatter;
:func:`edge_radius_sigma_km` turns both into a radial uncertainty.

:func:`apply_ring_orbits` replaces the circular-envelope crossings of such a ring on a track
by the times the chord meets the edges themselves: on each side, Brent's method on
r'(t) - R(lambda'(t), t) inside the envelope crossing, where r' and lambda' are the radius
and longitude at which the ray meets the inclined edge (the ring-plane intercept shifted by
z / sin B* along the ray: the in-plane shift is z (s_x, s_y) / s_z, s the unit vector toward
the star in the ring frame).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import lru_cache

import numpy as np

from .errors import DataFileError

SECONDS_PER_DAY = 86400.0
EDGE_KEYS = {"a_km", "e", "periapse_deg", "periapse_rate_deg_day", "inclination_deg",
             "node_deg", "node_rate_deg_day", "modes", "rms_km"}
ORBIT_KEYS = {"epoch_jd_tdb", "a_km", "e", "periapse_deg", "periapse_rate_deg_day",
              "inclination_deg", "node_deg", "node_rate_deg_day", "inner_a_km", "inner_e",
              "outer_a_km", "outer_e", "modes", "source", "longitude_reference",
              "phase_sigma_deg", "rms_km", "inner", "outer"}
MODE_KEYS = {"m", "amplitude_km", "phase_deg", "pattern_speed_deg_day", "source"}
REFERENCES = ("ICRF", "B1950")


@dataclass(frozen=True)
class Mode:
    m: int
    amplitude_km: float
    phase_deg: float
    pattern_speed_deg_day: float


@dataclass(frozen=True)
class EdgeOrbit:
    """One edge: a precessing, inclined ellipse with normal modes (module docstring)."""

    a_km: float
    e: float
    periapse_deg: float
    periapse_rate_deg_day: float | None = None
    inclination_deg: float = 0.0
    node_deg: float = 0.0
    node_rate_deg_day: float | None = None
    modes: tuple = ()
    rms_km: float = 0.0


@dataclass(frozen=True)
class RingOrbit:
    """A ring's two edges (module docstring)."""

    epoch_jd_tdb: float
    inner: EdgeOrbit
    outer: EdgeOrbit
    longitude_reference: str = "ICRF"
    phase_sigma_deg: float = 0.0
    source: str = ""

    def edge_orbit(self, which: str) -> EdgeOrbit:
        return self.inner if which == "inner" else self.outer

    def edge(self, which: str) -> tuple[float, float]:
        """(a, e) of the inner or outer edge."""
        o = self.edge_orbit(which)
        return o.a_km, o.e

    @property
    def a_km(self) -> float:
        return 0.5 * (self.inner.a_km + self.outer.a_km)

    @property
    def inclination_deg(self) -> float:
        return max(self.inner.inclination_deg, self.outer.inclination_deg)


def _modes(items, where: str) -> tuple:
    if not isinstance(items, list):
        raise DataFileError(f"{where}: orbit modes must be an array of tables")
    out = []
    for k, mode in enumerate(items):
        if not isinstance(mode, dict) or set(mode) - MODE_KEYS or \
                not {"m", "amplitude_km", "phase_deg", "pattern_speed_deg_day"} <= set(mode):
            raise DataFileError(f"{where}: orbit mode {k} needs m, amplitude_km, phase_deg and "
                                "pattern_speed_deg_day (and an optional source)")
        if int(mode["m"]) == 0:
            raise DataFileError(f"{where}: orbit mode {k}: m = 0 (a breathing mode) is not "
                                "supported; leave it out and count its amplitude in rms_km")
        out.append(Mode(int(mode["m"]), float(mode["amplitude_km"]), float(mode["phase_deg"]),
                        float(mode["pattern_speed_deg_day"])))
    return tuple(out)


def _num(table: dict, key: str, where: str, default=None):
    v = table.get(key, default)
    if v is None:
        return None
    if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
        raise DataFileError(f"{where}: orbit {key} = {v!r} must be a finite number")
    return float(v)


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
    ref = str(table.get("longitude_reference", "ICRF"))
    if ref not in REFERENCES:
        raise DataFileError(f"{where}: orbit longitude_reference {ref!r} must be one of "
                            + ", ".join(REFERENCES))
    base = {
        "a_km": _num(table, "a_km", where), "e": _num(table, "e", where),
        "periapse_deg": _num(table, "periapse_deg", where),
        "periapse_rate_deg_day": _num(table, "periapse_rate_deg_day", where),
        "inclination_deg": _num(table, "inclination_deg", where, 0.0),
        "node_deg": _num(table, "node_deg", where, 0.0),
        "node_rate_deg_day": _num(table, "node_rate_deg_day", where),
        "modes": _modes(table.get("modes", []), where),
        "rms_km": _num(table, "rms_km", where, 0.0),
    }
    edges = {}
    for which in ("inner", "outer"):
        vals = dict(base)
        # the older flat keys inner_a_km / inner_e (outer_...) still work
        for key in ("a_km", "e"):
            flat = _num(table, f"{which}_{key}", where)
            if flat is not None:
                vals[key] = flat
        sub = table.get(which, {})
        if not isinstance(sub, dict):
            raise DataFileError(f"{where}: orbit {which!r} must be a table")
        bad = set(sub) - EDGE_KEYS
        if bad:
            raise DataFileError(f"{where}: unknown key(s) {', '.join(sorted(bad))} in orbit "
                                f"{which!r}; allowed: {', '.join(sorted(EDGE_KEYS))}")
        for key in EDGE_KEYS - {"modes"}:
            if key in sub:
                vals[key] = _num(sub, key, f"{where} {which}")
        if "modes" in sub:
            vals["modes"] = _modes(sub["modes"], f"{where} {which}")
        edges[which] = EdgeOrbit(**vals)
        if not (vals["a_km"] > 0 and 0 <= vals["e"] < 1):
            raise DataFileError(f"{where}: orbit {which} edge needs a > 0 and 0 <= e < 1")
        if not (0 <= vals["inclination_deg"] < 90 and vals["rms_km"] >= 0):
            raise DataFileError(f"{where}: orbit {which} edge needs 0 <= inclination < 90 deg "
                                "and rms_km >= 0")
    sigma = _num(table, "phase_sigma_deg", where, 0.0)
    if sigma < 0:
        raise DataFileError(f"{where}: orbit phase_sigma_deg must be >= 0")
    return RingOrbit(epoch_jd_tdb=_num(table, "epoch_jd_tdb", where), inner=edges["inner"],
                     outer=edges["outer"], longitude_reference=ref, phase_sigma_deg=sigma,
                     source=str(table.get("source", "")))


# --------------------------------------------------------------------------- frames


@lru_cache(maxsize=16)
def _b1950_pole_icrf() -> tuple:
    """The B1950 (FK4, no E-terms) equator's pole in ICRF coordinates (astropy's FK4 -> ICRS
    transformation)."""
    import astropy.units as u
    from astropy.coordinates import ICRS, FK4NoETerms, SkyCoord

    c = SkyCoord(0 * u.deg, 90 * u.deg, frame=FK4NoETerms(equinox="B1950", obstime="B1950"))
    v = c.transform_to(ICRS()).cartesian.xyz.value
    return tuple(float(x) for x in v / np.linalg.norm(v))


def node_direction(pole, equator_pole=(0.0, 0.0, 1.0)) -> np.ndarray:
    """Unit vector to the ascending node of the ring plane (pole ``pole``) on the equator whose
    pole is ``equator_pole`` (ICRF components)."""
    n = np.asarray(pole, dtype=float)
    z = np.asarray(equator_pole, dtype=float)
    v = np.cross(z, n)
    return v / np.linalg.norm(v)


_OFFSETS: dict = {}


def reference_offset_rad(orbit: RingOrbit, body) -> float:
    """Angle (rad) to add to the orbit's longitudes to refer them to occplan's ICRF node:
    the B1950 node's longitude measured from the ICRF node in the ring plane, prograde
    (0 for ``longitude_reference = "ICRF"``).  Computed once per orbit and pole model."""
    if orbit.longitude_reference == "ICRF":
        return 0.0
    key = (orbit, body.pole)
    if key not in _OFFSETS:
        _OFFSETS[key] = _reference_offset(orbit, body)
    return _OFFSETS[key]


def _reference_offset(orbit: RingOrbit, body) -> float:
    n = np.asarray(body.pole.unit_vector(orbit.epoch_jd_tdb), dtype=float).reshape(3)
    node_icrf = node_direction(n)
    node_b = node_direction(n, _b1950_pole_icrf())
    perp = np.cross(n, node_icrf)
    return float(math.atan2(float(node_b @ perp), float(node_b @ node_icrf)))


# --------------------------------------------------------------------------- edges


def _days(orbit: RingOrbit, t_tdb_s) -> np.ndarray:
    from .constants import J2000_JD_TDB

    return np.asarray(t_tdb_s, dtype=float) / SECONDS_PER_DAY - (orbit.epoch_jd_tdb - J2000_JD_TDB)


_RATES: dict = {}


def _rate_deg_day(given, body, a_km, which: str) -> float:
    if given is not None:
        return float(given)
    key = (body.gm_km3_s2, body.reference_radius_km, tuple(body.zonal_j), float(a_km), which)
    if key not in _RATES:
        from .dynamics import apsidal_rate_rad_s, nodal_rate_rad_s

        fn = apsidal_rate_rad_s if which == "apse" else nodal_rate_rad_s
        _RATES[key] = math.degrees(float(fn(body, a_km))) * SECONDS_PER_DAY
    return _RATES[key]


def periapse_rad(orbit: RingOrbit, body, t_tdb_s, which: str = "outer") -> np.ndarray:
    """Longitude of periapse of an edge (rad, occplan's ICRF node) at TDB seconds past J2000."""
    o = orbit.edge_orbit(which)
    rate = _rate_deg_day(o.periapse_rate_deg_day, body, o.a_km, "apse")
    return (math.radians(o.periapse_deg) + reference_offset_rad(orbit, body)
            + math.radians(rate) * _days(orbit, t_tdb_s))


def node_rad(orbit: RingOrbit, body, t_tdb_s, which: str = "outer") -> np.ndarray:
    """Longitude of the ascending node of an inclined edge on the ring plane (rad)."""
    o = orbit.edge_orbit(which)
    rate = _rate_deg_day(o.node_rate_deg_day, body, o.a_km, "node")
    return (math.radians(o.node_deg) + reference_offset_rad(orbit, body)
            + math.radians(rate) * _days(orbit, t_tdb_s))


def edge_radius_km(orbit: RingOrbit, body, which: str, longitude_rad, t_tdb_s) -> np.ndarray:
    """Radius of the inner or outer edge at ring longitude and time (module docstring;
    the formula is :meth:`EdgeSet.radius`)."""
    return _one_edge(orbit, body, which, longitude_rad, t_tdb_s, "radius")


def edge_height_km(orbit: RingOrbit, body, which: str, longitude_rad, t_tdb_s) -> np.ndarray:
    """Height of an inclined edge above the ring plane, a sin i sin(lambda - Omega), km
    (:meth:`EdgeSet.height`)."""
    return _one_edge(orbit, body, which, longitude_rad, t_tdb_s, "height")


def _one_edge(orbit, body, which, longitude_rad, t_tdb_s, what: str) -> np.ndarray:
    lon, t = np.broadcast_arrays(np.asarray(longitude_rad, dtype=float),
                                 np.asarray(t_tdb_s, dtype=float))
    idx = np.zeros(lon.size, dtype=int)
    out = getattr(EdgeSet(body, [(orbit, which)]), what)(lon.ravel(), t.ravel(), idx)
    return out.reshape(lon.shape)


def edge_radius_sigma_km(orbit: RingOrbit, body, which: str, longitude_rad, t_tdb_s,
                         cot_b: float = 0.0) -> float:
    """1-sigma of an edge's radius at a longitude: the fit's rms, the periapse phase error
    (a e |sin f| sigma_phase), each normal mode's pattern-phase error (m A_m |sin arg|
    sigma_phase) and, for an inclined edge, the node phase error moving its height
    (a sin i |cos(lambda - Omega)| sigma_phase, seen in the ring plane times cot B*), all
    added in quadrature."""
    o = orbit.edge_orbit(which)
    s = math.radians(orbit.phase_sigma_deg)
    lon = float(longitude_rad)
    f = lon - float(periapse_rad(orbit, body, t_tdb_s, which))
    radial = o.a_km * o.e * abs(math.sin(f)) * s
    if o.modes:  # each mode's pattern phase off by sigma moves the radius by m A |sin arg| sigma
        dt_day = float(_days(orbit, t_tdb_s))
        offset = reference_offset_rad(orbit, body)
        for mode in o.modes:
            arg = mode.m * (lon - offset - math.radians(mode.phase_deg)
                            - math.radians(mode.pattern_speed_deg_day) * dt_day)
            radial = math.hypot(radial, abs(mode.m) * mode.amplitude_km * abs(math.sin(arg)) * s)
    vertical = 0.0
    if o.inclination_deg:
        d = lon - float(node_rad(orbit, body, t_tdb_s, which))
        vertical = o.a_km * math.sin(math.radians(o.inclination_deg)) * abs(math.cos(d)) * s * abs(cot_b)
    return float(math.sqrt(o.rms_km ** 2 + radial ** 2 + vertical ** 2))


def radius_span_km(orbit: RingOrbit) -> tuple[float, float]:
    """Smallest and largest radius either edge can reach (all modes at their extremes)."""
    lo, hi = np.inf, -np.inf
    for o in (orbit.inner, orbit.outer):
        modes = sum(abs(m.amplitude_km) for m in o.modes)
        lo = min(lo, o.a_km * (1 - o.e) - modes)
        hi = max(hi, o.a_km * (1 + o.e) + modes)
    return lo, hi


def star_in_ring_frame(track) -> np.ndarray:
    """Unit vector toward the star in occplan's ring frame (ICRF node, its perpendicular, the
    pole) at the track's closest approach: (s_x, s_y, s_z)."""
    from .constants import J2000_JD_TDB

    cached = getattr(track, "_star_ring_frame", None)
    if cached is not None and cached[0] == track.closest_approach_s:
        return cached[1]
    star = track.star
    ra, dec = math.radians(star.ra_deg), math.radians(star.dec_deg)
    s = np.array([math.cos(dec) * math.cos(ra), math.cos(dec) * math.sin(ra), math.sin(dec)])
    jd = J2000_JD_TDB + float(track.closest_approach_s) / SECONDS_PER_DAY
    n = np.asarray(track.body.pole.unit_vector(jd), dtype=float).reshape(3)
    node = node_direction(n)
    perp = np.cross(n, node)
    out = np.array([s @ node, s @ perp, s @ n])
    track._star_ring_frame = (track.closest_approach_s, out)  # the same for every crossing
    return out


# --------------------------------------------------------------------------- crossings


def _regions_with_orbits(body):
    return [reg for reg in body.rings if getattr(reg, "orbit", None) is not None]


def apply_ring_orbits(track) -> list[str]:
    """Replace envelope crossings of rings with an orbit model by edge crossings (in place).

    On each side of the chord (ingress: r decreasing, egress: increasing) the edges are
    bracketed by the times the chord crosses the smallest and largest radius the ring can
    reach (widened by the largest in-plane shift of an inclined edge); each edge's time is
    the root of r'(t) - R(lambda'(t), t) there (all edges of all rings solved together,
    :func:`_solve_edges`), r' the radius where the ray meets the
    edge's own plane (module docstring).  A gap whose edge coincides with a modelled ring edge
    (the Huygens gap's inner edge is the B ring's outer edge) takes the same crossing.
    Returns notes for the output metadata.
    """
    from .geometry import Crossing, RegionPass, crossing_times

    body = track.body
    notes = []
    interp = track.interp
    t0, t1, ca = float(track.tdb_s[0]), float(track.tdb_s[-1]), float(track.closest_approach_s)
    sides = [s for s in (("ingress", t0, ca), ("egress", ca, t1)) if s[2] > s[1]]
    if not np.isfinite(track.closest_approach_radius_km):
        return notes
    s_ring = star_in_ring_frame(track)
    shift_dir = s_ring[:2] / s_ring[2] if abs(s_ring[2]) > 1e-9 else np.zeros(2)
    cot_b = float(np.hypot(*shift_dir))
    gaps = list(getattr(body, "gaps", ()))
    # every modelled ring the chord can reach, and all their envelope crossings in one call
    r_ca = float(track.closest_approach_radius_km)
    todo = []
    for reg in _regions_with_orbits(body):
        lo, hi = radius_span_km(reg.orbit)
        lift = max(o.a_km * math.sin(math.radians(o.inclination_deg))
                   for o in (reg.orbit.inner, reg.orbit.outer)) * cot_b
        if r_ca <= hi + 1.0 + lift:
            todo.append((reg, max(lo - 1.0 - lift, 1.0), hi + 1.0 + lift))
        else:  # the chord stays outside every radius the ring can reach: not crossed
            track.passes = [q for q in track.passes if q.region != reg.name]
            track.crossings = [c for c in track.crossings if c.region != reg.name]
    roots = crossing_times(interp, np.array([r for _, lo, hi in todo for r in (lo, hi)]), t0, t1) \
        if todo else []
    # every edge on every side bracketed, then all solved together
    jobs = []  # (ring index, side, which, a, b)
    for k in range(len(todo)):
        t_lo, t_hi = roots[2 * k], roots[2 * k + 1]
        for side, a, b in sides:
            in_lo = [t for t in t_lo if a <= t <= b]
            in_hi = [t for t in t_hi if a <= t <= b]
            if side == "ingress":
                ba, bb = (in_hi[0] if in_hi else a), (in_lo[0] if in_lo else b)
            else:
                ba, bb = (in_lo[-1] if in_lo else a), (in_hi[-1] if in_hi else b)
            for which in ("inner", "outer"):
                jobs.append((k, side, which, ba, bb))
    edges = [(todo[k][0].orbit, which) for k, _side, which, _a, _b in jobs]
    solved = _solve_edges(interp, body, shift_dir, edges,
                          np.array([j[3] for j in jobs]), np.array([j[4] for j in jobs]))
    job_of = {(k, side, which): n for n, (k, side, which, _a, _b) in enumerate(jobs)}
    for k, (reg, _lo, _hi) in enumerate(todo):
        orbit = reg.orbit
        passes = [p for p in track.passes if p.region != reg.name]
        crossings = [c for c in track.crossings if c.region != reg.name]
        # gap edges that are this ring's edges (same mean radius within 1 km)
        twins = [(g.name, "inner" if abs(g.inner_km - orbit.edge(w)[0]) < 1.0 else "outer", w)
                 for g in gaps for w in ("inner", "outer")
                 if min(abs(g.inner_km - orbit.edge(w)[0]), abs(g.outer_km - orbit.edge(w)[0])) < 1.0]
        for side, a, b in sides:
            times, radii = {}, {}
            for which in ("inner", "outer"):
                n = job_of.get((k, side, which))
                if n is not None and np.isfinite(solved[0][n]):
                    times[which], radii[which] = float(solved[0][n]), float(solved[1][n])
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
                crossing = Crossing(
                    boundary_km=radii[which], region=reg.name,
                    edge=which, tdb_s=float(t_edge), side=side,
                    radial_velocity_km_s=float(interp.radial_velocity(np.array([t_edge]))[0]),
                    behind_planet=bool(interp.limb(np.array([t_edge]))[0] < 0))
                crossings.append(crossing)
                for gap, gap_edge, w in twins:
                    if w != which:
                        continue
                    crossings = [c for c in crossings if not (c.region == gap and c.edge == gap_edge
                                                              and c.side == side)]
                    crossings.append(Crossing(**{**crossing.__dict__, "region": gap,
                                                 "edge": gap_edge}))
        for gap, gap_edge, _ in twins:  # the gap's passes start or end at the moved edge
            passes = _retime_gap_passes(passes, crossings, gap, gap_edge)
        track.passes = sorted(passes, key=lambda q: q.start_s)
        track.crossings = sorted(crossings, key=lambda c: c.tdb_s)
        what = "eccentric" + (" and inclined" if orbit.inclination_deg else "")
        notes.append(f"{reg.name}: crossings solved against its {what} edges (orbit of the "
                     f"body file, epoch JD {orbit.epoch_jd_tdb:.1f} TDB, longitudes from the "
                     f"{orbit.longitude_reference} node; its source says where it comes from)")
    return notes


class EdgeSet:
    """Many edges (one element each) evaluated together: the same formulas as
    :func:`edge_radius_km` and :func:`edge_height_km`, with their parameters laid out as
    arrays (normal modes padded with zero amplitude), so one call serves every edge of every
    ring a chord crosses.  ``idx`` selects elements (repeats allowed)."""

    def __init__(self, body, edges):
        from .constants import J2000_JD_TDB

        rows, modes = [], []
        for orbit, which in edges:
            o = orbit.edge_orbit(which)
            off = reference_offset_rad(orbit, body)
            apse = _rate_deg_day(o.periapse_rate_deg_day, body, o.a_km, "apse")
            node = _rate_deg_day(o.node_rate_deg_day, body, o.a_km, "node")
            rows.append((orbit.epoch_jd_tdb - J2000_JD_TDB, o.a_km, o.e,
                         math.radians(o.periapse_deg) + off, math.radians(apse),
                         o.a_km * math.sin(math.radians(o.inclination_deg or 0.0)),
                         math.radians(o.node_deg or 0.0) + off, math.radians(node)))
            modes.append([(md.m, md.amplitude_km, off + math.radians(md.phase_deg),
                           math.radians(md.pattern_speed_deg_day)) for md in o.modes])
        cols = np.array(rows, dtype=float).reshape(-1, 8).T
        (self.epoch_day, self.a, self.e, self.peri0, self.peri_rate, self.a_sin_i,
         self.node0, self.node_rate) = cols
        width = max([len(m) for m in modes] + [1])
        pad = np.zeros((len(edges), width, 4))
        for k, m in enumerate(modes):
            if m:
                pad[k, :len(m)] = m
        self.m, self.amp, self.phase, self.speed = np.moveaxis(pad, 2, 0)

    def _days(self, t, idx):
        return np.asarray(t, dtype=float) / SECONDS_PER_DAY - self.epoch_day[idx]

    def height(self, lon, t, idx):
        return self.a_sin_i[idx] * np.sin(lon - self.node0[idx]
                                          - self.node_rate[idx] * self._days(t, idx))

    def radius(self, lon, t, idx):
        d = self._days(t, idx)
        a, e = self.a[idx], self.e[idx]
        r = a * (1.0 - e * e) / (1.0 + e * np.cos(lon - self.peri0[idx] - self.peri_rate[idx] * d))
        arg = self.m[idx] * (lon[:, None] - self.phase[idx] - self.speed[idx] * d[:, None])
        return r - np.sum(self.amp[idx] * np.cos(arg), axis=1)


def _edge_points(interp, shift_dir, edges: EdgeSet, idx, t):
    """(radius, longitude) where the rays at times ``t`` meet the planes of the edges
    ``idx`` of ``edges``: the in-plane intercept shifted along the star's direction by the
    edge's height (fixed-point steps: the height depends on the longitude).  nan where the
    intercept is not real."""
    t = np.asarray(t, dtype=float)
    idx = np.asarray(idx, dtype=int)
    u = np.where(interp.valid(t), interp.plane(interp.seconds(t)), np.nan)
    lon = np.arctan2(u[1], u[0])
    v = u
    for _ in range(3):
        v = u + edges.height(lon, t, idx) * shift_dir[:, None]
        lon = np.arctan2(v[1], v[0])
    return np.hypot(v[0], v[1]), lon


def _edge_miss(interp, shift_dir, edges: EdgeSet, idx, t):
    """r'(t) - R(lambda'(t), t) for each element's edge (module docstring)."""
    r, lon = _edge_points(interp, shift_dir, edges, idx, t)
    return r - edges.radius(lon, t, np.asarray(idx, dtype=int))


def _solve_edges(interp, body, shift_dir, edges, a, b):
    """Crossing times (nan where the bracket [a, b] holds no sign change) and edge radii of
    ``edges`` (a list of (orbit, which), one per bracket), all solved at once by scipy's
    vectorised bracketed root finder (Chandrupatla's method) to 1e-7 s."""
    from scipy.optimize.elementwise import find_root

    n = len(edges)
    times, radii = np.full(n, np.nan), np.full(n, np.nan)
    if not n:
        return times, radii
    kind = np.arange(n)
    eset = EdgeSet(body, edges)
    fa = _edge_miss(interp, shift_dir, eset, kind, a)
    fb = _edge_miss(interp, shift_dir, eset, kind, b)
    ok = np.nonzero(np.isfinite(fa) & np.isfinite(fb) & (fa * fb < 0))[0]
    if not ok.size:
        return times, radii
    # solved in seconds from a reference time (module note in occplan.geometry.crossing_times)
    ref = float(np.min(a[ok]))
    res = find_root(lambda x, kk: _edge_miss(interp, shift_dir, eset, kk, x + ref),
                    (a[ok] - ref, b[ok] - ref), args=(kind[ok],),
                    tolerances={"xatol": 1e-7, "xrtol": 0.0})
    times[ok] = np.asarray(res.x, dtype=float) + ref
    radii[ok] = _edge_points(interp, shift_dir, eset, kind[ok], times[ok])[0]
    return times, radii


def _retime_gap_passes(passes, crossings, gap, gap_edge):
    """Move the ends of a gap's passes that sit at its shared edge to that edge's new time."""
    out = []
    for p in passes:
        if p.region != gap:
            out.append(p)
            continue
        mine = [c for c in crossings if c.region == gap and c.edge == gap_edge and c.side == p.side]
        if not mine:
            out.append(p)
            continue
        t = mine[0].tdb_s
        # the shared edge is the end nearer in time to the new crossing
        if abs(p.start_s - t) <= abs(p.end_s - t):
            p = replace(p, start_s=min(t, p.end_s))
        else:
            p = replace(p, end_s=max(t, p.start_s))
        out.append(p)
    return out


__all__ = ["EdgeOrbit", "Mode", "RingOrbit", "apply_ring_orbits", "edge_height_km",
           "edge_radius_km", "edge_radius_sigma_km", "node_rad", "parse_orbit", "periapse_rad",
           "radius_span_km", "reference_offset_rad", "star_in_ring_frame"]
