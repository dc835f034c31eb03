"""The ring-plane track of a star for an observer over a time array.

For reception times t at the observer O(t) (barycentric ICRF, km; TDB Julian dates):

1. Star direction s(t): astrometric, from :meth:`Ephemeris.star_direction` (proper motion,
   parallax from O(t), radial velocity; no aberration on the star, none on the planet).
2. Ring time t_r = t - lambda/c with lambda the distance along the ray to the ring-plane
   intercept; planet centre P(t_r) and pole n(t_r); iterated three times (converges to
   well under a millimetre: each pass shrinks the error by v/c ~ 1e-4).
3. Intercept lambda = n.(P - O)/(n.s), rho = O + lambda s - P.
4. Light deflection by the planet: the ray that reaches the observer with sky-plane impact
   parameter b passed the planet at b' = (b + sqrt(b^2 + 4 R_E^2))/2, R_E^2 = 4 GM D / c^2
   (Einstein-radius form of the point-mass deflection alpha = 4GM/(c^2 b'); about +23 km at
   100,000 km for Saturn at 9 AU).  The ray is shifted outward in the sky plane accordingly
   (tapered smoothly inside the polar radius, where the star is hidden anyway).
5. Ring radius r = |rho|; inertial ring longitude from the ascending node of the ring plane on
   the ICRF equator: N = z x n/|z x n|, M = n x N, longitude = atan2(rho.M, rho.N).
6. Sky plane at the planet: f = z x s/|z x s| (east), g = s x f (north), offsets in km.
   Opening angle B = asin(n.(O-P)/|O-P|); star elevation B* = asin(n.s); pole position
   angle P = atan2(n.f, n.g) (from north through east).
7. A sample has a ring-plane intercept only if the intercept lies in front of the observer
   (lambda > 0), the ray passes the planet in front of the observer ((P - O).s > 0, the
   star less than 90 deg from the planet) and the intercept lies before the star (its
   parallax distance) and within reach of the rings (:func:`intercept_reach_km`).
   Otherwise the line through the star meets the ring plane only behind the observer (a
   star on the far side of the sky, or on the observer's side of the ring plane) or far
   beyond the planet (a ray along the ring plane), and the sample is "no crossing": radius,
   longitude and speeds are nan there, and so are the sky-plane offsets when the ray passes
   the planet behind the observer.

Speed: the exact geometry is evaluated on coarse nodes (120 s by default) and the smooth
quantities (in-plane components of rho, sky-plane offsets, angles, distance, limb function)
are interpolated with cubic splines; derivatives (radial velocity, longitude rate) come from
the splines, not from finite differences.  ``tests/test_geometry.py`` measures the
interpolation error against exact evaluation.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from . import __version__
from .constants import GM_SUN_KM3_S2, SECONDS_PER_DAY, SPEED_OF_LIGHT_KM_S
from .ephemeris import J2000_TDB_JD, time_from_tdb_s, utc_iso
from .errors import GeometryError, InputError

EDGE_ON_LIMIT_DEG = 0.01
LIGHT_TIME_PASSES = 3
DEFAULT_NODE_STEP_S = 120.0
# Memory budget of one track: the exact geometry is evaluated on at most this many nodes
# (about 555 days at 120 s; some 500 bytes a node are kept for the splines, about 250 MB),
# in blocks of NODE_BLOCK (a topocentric node needs about 23 kB while it is evaluated).
MAX_TRACK_NODES = 400_000
NODE_BLOCK = 2_000
MAX_SAMPLES = 5_000_000
_Z = np.array([0.0, 0.0, 1.0])
_Y = np.array([0.0, 1.0, 0.0])
# |n.s| below this is treated as this (a ray in the ring plane): keeps lambda finite
_MIN_SIN_ELEVATION = 1e-15


def _unit(v):
    return v / np.linalg.norm(v, axis=0)


def _dot(a, b):
    return np.einsum("i...,i...->...", a, b)


def _cross(a, b):
    return np.cross(a, b, axis=0)


@dataclass(frozen=True)
class Corrections:
    """Which corrections the track applies (reported in output metadata)."""

    deflection: bool = True
    barycentre_only: bool = False


def deflect_offset(d, distance_km, body):
    """The ray's offset from the planet centre (3, N) after the planet's light deflection,
    and the outward shift (km).

    A point mass deflects a ray passing at impact parameter b outward to
    b' = (b + sqrt(b^2 + 4 R_E^2)) / 2, R_E^2 = 4 GM D / c^2 (the Einstein-ring form; about
    R_E^2 / b for b >> R_E).  Inside the polar radius the ray is blocked by the planet
    whatever its deflection; there b is replaced by b + (Rp - b)^3 / Rp^2 (C2-continuous at
    Rp, >= 0.6 Rp) so the hidden stretch of the track stays smooth for the splines.  Visible
    rays always have b >= Rp, so they get the exact deflection.
    """
    b = np.linalg.norm(d, axis=0)
    re2 = 4.0 * body.gm_km3_s2 * distance_km / SPEED_OF_LIGHT_KM_S**2
    rp = body.polar_radius_km
    b_eff = np.where(b < rp, b + (rp - b) ** 3 / rp**2, b)
    shift = 0.5 * (b_eff + np.sqrt(b_eff * b_eff + 4.0 * re2)) - b_eff
    return d * ((b + shift) / np.where(b > 0, b, 1.0)), shift


def exact_geometry(eph, body, observer, star, tdb_s, corrections: Corrections = Corrections()):
    """Exact ring-plane geometry at each time (no interpolation).

    Parameters
    ----------
    eph : occplan.ephemeris.Ephemeris
    body : occplan.bodies.Body
    observer : occplan.ephemeris.Observer
    star : occplan.ephemeris.StarSpec
    tdb_s : array_like
        Reception times at the observer, TDB seconds past J2000.

    Returns
    -------
    dict of arrays (trailing axis time): ``rho`` (3,N) intercept minus planet centre, km;
    ``u_node``/``u_perp`` in-plane components of rho along N and M, km; ``sky_f``/``sky_g``
    sky-plane offsets of the ray from the planet centre, km; ``opening_angle`` B,
    ``star_elevation`` B*, ``pole_angle`` P (rad); ``distance`` observer-planet, km;
    ``ray_length`` distance from the observer to the intercept along the ray, km;
    ``limb`` scaled closest distance of the ray to the oblate planet minus 1 (negative: the
    star is behind the planet); ``ring_time`` TDB s at the intercept; ``deflection`` radial
    sky-plane shift applied, km; ``ahead`` True where the ray passes the planet in front of
    the observer ((P - O).s > 0); ``valid`` True where the intercept is real (in front of the
    observer, before the star: module docstring, item 7).  The other values stay finite where
    ``valid`` is False (the intercept behind the observer) so that they can be splined; they
    mean nothing there.
    """
    t = np.atleast_1d(np.asarray(tdb_s, dtype=float))
    when = time_from_tdb_s(t)
    obs = eph.observer_km(observer, when).reshape(3, -1)
    s = eph.star_direction(star, observer, when).reshape(3, -1)
    barycentre_only = corrections.barycentre_only
    planet = eph.planet_km(body, when, barycentre_only=barycentre_only).reshape(3, -1)
    t_ring = t - np.linalg.norm(planet - obs, axis=0) / SPEED_OF_LIGHT_KM_S
    if corrections.deflection:
        s = _unit(s + solar_deflection(eph, obs, s, planet, when))
    # The mean-orbit offset of the centre (< 1 km/min of change) is evaluated at the first
    # ring-time estimate and again at the last pass only; the kernel part every pass.
    offset = eph.planet_offset_km(body, time_from_tdb_s(t_ring), barycentre_only).reshape(3, -1)
    for k in range(LIGHT_TIME_PASSES):
        ring_when = time_from_tdb_s(t_ring)
        if k == LIGHT_TIME_PASSES - 1:
            offset = eph.planet_offset_km(body, ring_when, barycentre_only).reshape(3, -1)
        planet = eph.planet_base_km(body, ring_when, barycentre_only).reshape(3, -1) + offset
        n = body.pole.unit_vector(J2000_TDB_JD + t_ring / SECONDS_PER_DAY).reshape(3, -1)
        lam = _dot(n, planet - obs) / _sin_elevation(n, s)
        # An intercept behind the observer or far beyond the planet (a ray nearly in the ring
        # plane) has no light time worth the name: keep the ring time within the ephemeris.
        reach = intercept_reach_km(body, np.linalg.norm(planet - obs, axis=0))
        t_ring = t - np.clip(lam, 0.0, reach) / SPEED_OF_LIGHT_KM_S

    q = planet - obs
    distance = np.linalg.norm(q, axis=0)
    # Offset of the straight ray from the planet centre, perpendicular to s.
    d = _dot(q, s) * s - q
    shift = np.zeros_like(distance)
    if corrections.deflection:
        d, shift = deflect_offset(d, distance, body)
    origin = planet + d - _dot(q, s) * s  # a point on the (shifted) ray: the closest point
    lam = _dot(n, planet - origin) / _sin_elevation(n, s)
    rho = origin + lam * s - planet
    ray_length = _dot(origin - obs, s) + lam
    ahead = _dot(q, s) > 0.0
    reach = np.minimum(intercept_reach_km(body, distance), star_distance_km(star))
    valid = ahead & (ray_length > 0.0) & (ray_length < reach) & np.all(np.isfinite(rho), axis=0)

    node = _unit(_cross(np.broadcast_to(_Z[:, None], n.shape), n))
    perp = _cross(n, node)
    east = _cross(np.broadcast_to(_Z[:, None], s.shape), s)
    # At a celestial pole "east" is undefined: take the east of RA 0 there
    pole_star = np.linalg.norm(east, axis=0) < 1e-12
    east = _unit(np.where(pole_star, _Y[:, None], east))
    north = _cross(s, east)

    # Oblate-limb test: scale the planet to a unit sphere and find the ray's closest approach.
    w = origin - planet
    scale_eq, scale_pol = 1.0 / body.equatorial_radius_km, 1.0 / body.polar_radius_km
    w_s = w * scale_eq + (scale_pol - scale_eq) * _dot(w, n) * n
    s_s = s * scale_eq + (scale_pol - scale_eq) * _dot(s, n) * n
    mu = -_dot(w_s, s_s) / _dot(s_s, s_s)
    limb = np.linalg.norm(w_s + mu * s_s, axis=0) - 1.0

    return {
        "rho": rho,
        "u_node": _dot(rho, node),
        "u_perp": _dot(rho, perp),
        "sky_f": _dot(d, east),
        "sky_g": _dot(d, north),
        "opening_angle": np.arcsin(np.clip(_dot(n, -q) / distance, -1, 1)),
        "star_elevation": np.arcsin(np.clip(_dot(n, s), -1, 1)),
        "pole_angle": np.arctan2(_dot(n, east), _dot(n, north)),
        "distance": distance,
        "limb": limb,
        "ring_time": t_ring,
        "deflection": shift,
        "ray_length": ray_length,
        "ahead": ahead,
        "valid": valid,
    }


def _sin_elevation(n, s):
    """n.s, kept away from zero (a ray in the ring plane meets it at a finite, huge lambda)."""
    ns = _dot(n, s)
    return np.where(np.abs(ns) < _MIN_SIN_ELEVATION, np.copysign(_MIN_SIN_ELEVATION, ns), ns)


def intercept_reach_km(body, distance_km):
    """Farthest ring-plane intercept along the ray that is still looked at, km.

    Notes
    -----
    2 D + 10 R_out (D observer-planet distance, R_out the outermost ring edge): an intercept
    beyond lies more than D + 10 R_out from the planet, far outside every ring, and only a ray
    running nearly along the ring plane (|B*| << |B|) gets there.  Such samples are "no
    crossing"; the limit also keeps the light-time iteration within two light-times.
    """
    return 2.0 * np.asarray(distance_km) + 10.0 * body.outer_ring_km


def star_distance_km(star) -> float:
    """Distance of the star from its parallax (km; inf without one).

    Notes
    -----
    d = 1 AU / tan(parallax) (common practice); a non-positive parallax means "unknown".
    """
    from .constants import AU_KM

    p_mas = float(getattr(star, "parallax_mas", 0.0) or 0.0)
    if not p_mas > 0.0:
        return math.inf
    return AU_KM / math.tan(math.radians(p_mas / 3.6e6))


def _deflection_by_sun(p_hat, q_hat, e_vec):
    """Change of the unit direction p_hat of a source seen from an observer at e_vec from the
    Sun, the source lying along q_hat from the Sun (q_hat = p_hat for a star at infinity):
    g ((p.q) e - (e.p) q) / (1 + q.e), g = 2 GM_sun / (c^2 |e|) (the PPN point-mass formula
    of Kaplan et al. 1989, AJ 97, 1197, as in skyfield's relativity module)."""
    emag = np.linalg.norm(e_vec, axis=0)
    e_hat = e_vec / emag
    g = 2.0 * GM_SUN_KM3_S2 / (SPEED_OF_LIGHT_KM_S**2 * emag)
    return g * (_dot(p_hat, q_hat) * e_hat - _dot(e_hat, p_hat) * q_hat) / (1.0 + _dot(q_hat, e_hat))


def solar_deflection(eph, obs, s, planet, when):
    """Differential light deflection by the Sun, star (at infinity) minus planet.

    The ray reaching the observer in the star's apparent direction passes the planet where a
    source at the planet's distance would appear in that direction, so the geometric
    direction of the ray at the planet is s + D(star) - D(planet) (D from
    :func:`_deflection_by_sun`).  Size: 0.1 mas at 150 deg elongation to 3 mas at 17 deg,
    i.e. 1-20 km at Saturn.  Applied with the planet's own deflection (``Corrections.deflection``).
    """
    sun = eph.sun_km(when).reshape(3, -1)
    e_vec = obs - sun
    p_hat = _unit(planet - obs)
    q_hat = _unit(planet - sun)
    return _deflection_by_sun(s, s, e_vec) - _deflection_by_sun(p_hat, q_hat, e_vec)


@dataclass
class Crossing:
    """The chord crossing a ring-region boundary."""

    boundary_km: float
    region: str  # region whose edge this is
    edge: str  # 'inner' | 'outer'
    tdb_s: float
    side: str  # 'ingress' (r decreasing) | 'egress'
    radial_velocity_km_s: float
    behind_planet: bool


@dataclass
class RegionPass:
    """One passage of the chord through a ring region on one side (a radial profile)."""

    region: str
    side: str
    start_s: float
    end_s: float
    clipped: bool  # the window cut this passage short


@dataclass
class Track:
    """The ring-plane track of a star: per-sample arrays plus events and metadata."""

    body: object
    observer: object
    star: object
    tdb_s: np.ndarray  # TDB seconds past J2000
    ring_radius_km: np.ndarray
    ring_longitude_deg: np.ndarray
    radial_velocity_km_s: np.ndarray
    longitude_rate_deg_s: np.ndarray
    sky_f_km: np.ndarray
    sky_g_km: np.ndarray
    opening_angle_deg: np.ndarray
    star_elevation_deg: np.ndarray
    pole_position_angle_deg: np.ndarray
    distance_km: np.ndarray
    behind_planet: np.ndarray
    crossings: list = field(default_factory=list)
    passes: list = field(default_factory=list)
    closest_approach_s: float = np.nan
    closest_approach_radius_km: float = np.nan
    closest_approach_at_edge: bool = False
    meta: dict = field(default_factory=dict)
    interp: object = None  # the _Interpolant used (for evaluation at other times)

    @property
    def crosses_rings(self) -> bool:
        return bool(self.passes)

    def regions(self):
        return self.body.region_at(self.ring_radius_km)

    def columns(self) -> dict:
        """The chord's columns (field names of docs/output_schema.md), one array each."""
        return {
            "time_utc": np.array(utc_iso(time_from_tdb_s(self.tdb_s)), dtype=object),
            "ring_radius_km": np.asarray(self.ring_radius_km, dtype=float),
            "ring_longitude_deg": np.asarray(self.ring_longitude_deg, dtype=float),
            "radial_velocity_km_s": np.asarray(self.radial_velocity_km_s, dtype=float),
            "sky_f_km": np.asarray(self.sky_f_km, dtype=float),
            "sky_g_km": np.asarray(self.sky_g_km, dtype=float),
            "opening_angle_deg": np.asarray(self.opening_angle_deg, dtype=float),
            "behind_planet": np.asarray(self.behind_planet, dtype=bool),
            "region": np.asarray(self.regions(), dtype=object),
        }

    def rows(self) -> list[dict]:
        """Chord rows with the field names of docs/output_schema.md."""
        from .tables import columns_to_rows

        return columns_to_rows(self.columns())


class _Interpolant:
    """Cubic splines of the smooth exact quantities on time nodes (seconds from t0).

    The in-plane components of rho get a spline of their own: root finding and the radial
    velocity only need those two rows.
    """

    KEYS = ("sky_f", "sky_g", "opening_angle", "star_elevation", "pole_cos", "pole_sin",
            "distance", "ray_length")

    def __init__(self, node_s, exact):
        from scipy.interpolate import CubicSpline

        self.t0 = float(node_s[0])
        self.node_s = np.asarray(node_s, dtype=float)
        self.node_valid = np.asarray(exact["valid"], dtype=bool)
        self.node_ahead = np.asarray(exact["ahead"], dtype=bool)
        x = node_s - self.t0
        values = dict(exact)
        values["pole_cos"] = np.cos(exact["pole_angle"])
        values["pole_sin"] = np.sin(exact["pole_angle"])
        self.plane = CubicSpline(x, np.vstack([exact["u_node"], exact["u_perp"]]), axis=1)
        self.plane_deriv = self.plane.derivative()
        self.other = CubicSpline(x, np.vstack([values[k] for k in self.KEYS]), axis=1)
        self.limb_spline = CubicSpline(x, exact["limb"])

    def seconds(self, tdb_s):
        return np.asarray(tdb_s, dtype=float) - self.t0

    def _between(self, node_mask, tdb_s):
        """True where both nodes around each time satisfy ``node_mask``.

        The splines are trusted only between two nodes with a real intercept: next to a node
        without one the interpolated intercept is meaningless (it jumps through infinity
        where a ray turns parallel to the ring plane), and such stretches lie far outside any
        ring (at 90 deg from the planet or with the ray in the ring plane).
        """
        i = np.searchsorted(self.node_s, np.asarray(tdb_s, dtype=float), side="right") - 1
        i = np.clip(i, 0, self.node_s.size - 2)
        return node_mask[i] & node_mask[i + 1]

    def valid(self, tdb_s):
        """True where the ring-plane intercept is real (in front of the observer)."""
        return self._between(self.node_valid, tdb_s)

    def ahead(self, tdb_s):
        """True where the ray passes the planet in front of the observer."""
        return self._between(self.node_ahead, tdb_s)

    def __call__(self, tdb_s):
        x = self.seconds(tdb_s)
        out = dict(zip(self.KEYS, self.other(x)))
        out["u_node"], out["u_perp"] = self.plane(x)
        out["limb"] = self.limb_spline(x)
        return out

    def in_plane(self, tdb_s):
        """(u, du/dt) for the two in-plane components, shape (2, N) each; nan where the
        intercept is not real (:meth:`valid`)."""
        x = self.seconds(tdb_s)
        bad = ~self.valid(tdb_s)
        u, du = self.plane(x), self.plane_deriv(x)
        if np.any(bad):
            u, du = np.where(bad, np.nan, u), np.where(bad, np.nan, du)
        return u, du

    def radius(self, tdb_s):
        v = self.in_plane(tdb_s)[0]
        return np.hypot(v[0], v[1])

    def radial_velocity(self, tdb_s):
        v, dv = self.in_plane(tdb_s)
        return (v[0] * dv[0] + v[1] * dv[1]) / np.hypot(v[0], v[1])

    def longitude_rate(self, tdb_s):
        v, dv = self.in_plane(tdb_s)
        return (v[0] * dv[1] - v[1] * dv[0]) / (v[0] ** 2 + v[1] ** 2)

    def limb(self, tdb_s):
        return self.limb_spline(self.seconds(tdb_s))

    def half_dr2_dt(self, tdb_s):
        """u.du/dt = (1/2) d(r^2)/dt: smooth even where r passes near zero."""
        v, dv = self.in_plane(np.atleast_1d(tdb_s))
        return v[0] * dv[0] + v[1] * dv[1]

    def extrema(self) -> tuple[np.ndarray, np.ndarray]:
        """Times of the local minima and maxima of r(t) over the node span (Brent's method
        on u.du/dt), cached."""
        from scipy.optimize import brentq

        if not hasattr(self, "_extrema"):
            g = self.half_dr2_dt(self.node_s)
            idx = np.nonzero(np.sign(g[:-1]) * np.sign(g[1:]) < 0)[0]
            times = np.array([brentq(lambda tt: float(self.half_dr2_dt(tt)[0]),
                                     self.node_s[i], self.node_s[i + 1], xtol=1e-6)
                              for i in idx], dtype=float)
            is_min = g[idx] < 0
            self._extrema = (times[is_min], times[~is_min])
        return self._extrema

    def breaks(self) -> np.ndarray:
        """Nodes plus the extrema of r(t): r is monotonic between consecutive breaks."""
        if not hasattr(self, "_breaks"):
            mins, maxs = self.extrema()
            self._breaks = np.union1d(self.node_s, np.r_[mins, maxs])
        return self._breaks


def crossing_times(interp: "_Interpolant", radii_km, t0: float, t1: float) -> list[np.ndarray]:
    """Times in [t0, t1] when r(t) equals each of ``radii_km`` (a sorted array per radius).

    r(t) is monotonic between consecutive :meth:`_Interpolant.breaks` (nodes and extrema of
    r), so every root sits alone in a bracket where r - R changes sign; all brackets of all
    radii are solved at once by scipy's vectorized bracketed root finder
    (``scipy.optimize.elementwise.find_root``, Chandrupatla's method) to 1e-7 s.
    """
    from scipy.optimize.elementwise import find_root

    radii = np.atleast_1d(np.asarray(radii_km, dtype=float))
    grid = interp.breaks()
    grid = grid[(grid >= t0) & (grid <= t1)]
    grid = np.union1d(grid, [t0, t1])
    # r is nan where the intercept is not real: such brackets have no sign change
    f = interp.radius(grid)[:, None] - radii[None, :]
    i, j = np.nonzero((np.sign(f[:-1]) * np.sign(f[1:]) < 0) | ((f[:-1] == 0) & (np.abs(f[1:]) > 0)))
    out = [[] for _ in range(radii.size)]
    if i.size:
        # solve in seconds from the first break: TDB seconds past J2000 (~1e9) resolve only
        # 1e-7 s, so a tolerance of 1e-7 s on them could never be met
        ref = float(grid[0])
        res = find_root(lambda x, r: interp.radius(x + ref) - r, (grid[i] - ref, grid[i + 1] - ref),
                        args=(radii[j],), tolerances={"xatol": 1e-7, "xrtol": 0.0})
        for jj, xx in zip(j, np.asarray(res.x, dtype=float) + ref):
            out[jj].append(float(xx))
    return [np.sort(np.array(v, dtype=float)) for v in out]


def window_times(start_s: float, end_s: float, step_s: float) -> np.ndarray:
    """Sample times from start to end inclusive at step_s seconds (TDB seconds past J2000).

    A step longer than the window gives the start alone.
    """
    if not np.isfinite(step_s) or step_s <= 0:
        raise InputError(f"--step must be a positive number of seconds, got {step_s}")
    if not (np.isfinite(start_s) and np.isfinite(end_s)):
        raise InputError("the window start and end must be finite times; check --start and --end")
    if end_s <= start_s:
        raise InputError("the window end is not after its start; check --start and --end")
    n = int(np.floor((end_s - start_s) / step_s + 1e-6)) + 1
    if n > MAX_SAMPLES:
        raise InputError(f"{n:,} samples is more than the {MAX_SAMPLES:,} one table may hold; "
                         "use a larger --step or a shorter window")
    # Uniform in UTC, so printed times fall on the step (TDB - UTC wanders by +-1.7 ms a year)
    from .ephemeris import tdb_s_of, timescale

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        y, mo, d, h, mi, sec = time_from_tdb_s(start_s).utc
        sec = round(float(sec), 6)  # the start as given (to 1 us)
        times = tdb_s_of(timescale().utc(int(y), int(mo), int(d), int(h), int(mi),
                                         sec + np.arange(n) * step_s))
    return np.atleast_1d(times)


def check_node_budget(t0_s: float, t1_s: float, node_step_s: float = DEFAULT_NODE_STEP_S) -> int:
    """Number of spline nodes over [t0, t1] (without the padding); refuses a window over
    :data:`MAX_TRACK_NODES` before anything is allocated.

    Raises
    ------
    InputError
    """
    span_s = float(t1_s) - float(t0_s)
    n_inner = int(np.ceil(span_s / node_step_s)) + 1
    if n_inner + 4 > MAX_TRACK_NODES:
        days = MAX_TRACK_NODES * node_step_s / SECONDS_PER_DAY
        raise InputError(
            f"a {span_s / SECONDS_PER_DAY:,.1f}-day window needs {n_inner:,} geometry nodes "
            f"({node_step_s:g} s apart, whatever --step is), over the budget of "
            f"{MAX_TRACK_NODES:,} (about {days:,.0f} days); split the window into shorter ones")
    return n_inner


def track_nodes(t0_s: float, t1_s: float, node_step_s: float = DEFAULT_NODE_STEP_S) -> np.ndarray:
    """Spline nodes spanning [t0, t1] at most ``node_step_s`` apart, two more on each side.

    Raises
    ------
    InputError
        More than :data:`MAX_TRACK_NODES` nodes (the memory budget of one track), refused
        before anything is allocated.
    """
    span_s = float(t1_s) - float(t0_s)
    n_inner = check_node_budget(t0_s, t1_s, node_step_s)
    pad = node_step_s
    inner = np.linspace(t0_s, t1_s, n_inner) if span_s > 0 else np.array([float(t0_s)])
    return np.concatenate([[t0_s - 2 * pad, t0_s - pad], inner, [t1_s + pad, t1_s + 2 * pad]])


def _exact_in_blocks(eph, body, observer, star, nodes, corrections):
    """:func:`exact_geometry` on the nodes, NODE_BLOCK at a time (a loop over blocks, not
    samples: it bounds the memory a topocentric evaluation needs while it runs)."""
    if nodes.size <= NODE_BLOCK:
        return exact_geometry(eph, body, observer, star, nodes, corrections)
    parts = [exact_geometry(eph, body, observer, star, nodes[k:k + NODE_BLOCK], corrections)
             for k in range(0, nodes.size, NODE_BLOCK)]
    return {key: np.concatenate([p[key] for p in parts], axis=-1) for key in parts[0]}


def compute_track(eph, body, observer, star, tdb_s, corrections: Corrections = Corrections(),
                  node_step_s: float = DEFAULT_NODE_STEP_S, exact: bool = False) -> Track:
    """The ring-plane track of ``star`` seen by ``observer`` at times ``tdb_s``.

    Times are TDB seconds past J2000 (see :func:`occplan.ephemeris.time_from_tdb_s`).

    The exact geometry (:func:`exact_geometry`) is evaluated on nodes every ``node_step_s``
    seconds spanning the window and interpolated by cubic splines (``exact=True`` evaluates
    every sample exactly instead; the interpolation error is measured in the tests and in
    ``benchmarks/bench_chord.py``).  Ring-region boundary crossings and the closest approach
    are found by bracketed root finding on the interpolated r(t) (:func:`crossing_times`).

    Samples without a real ring-plane intercept (behind the observer: module docstring,
    item 7) are "no crossing": nan radius, longitude and speeds, no crossings there.  When no
    sample has one, the closest approach is the first sample with a nan radius.

    Raises
    ------
    CoverageError
        A window outside the loaded kernels.
    GeometryError
        Rings nearly edge-on to the observer (|B| < 0.01 deg, or B changing sign in the
        window): the chord is undefined there.
    InputError
        Times not finite or not increasing, or a window over the node budget
        (:data:`MAX_TRACK_NODES`).
    """
    t = np.atleast_1d(np.asarray(tdb_s, dtype=float))
    if t.size < 1 or not np.all(np.isfinite(t)):
        raise InputError("no valid sample times")
    if t.size > 1 and np.any(np.diff(t) <= 0):
        raise InputError("sample times must increase")
    check_star(star)
    nodes = track_nodes(t[0], t[-1], node_step_s)
    node_times = time_from_tdb_s(nodes)
    eph.check_planet_coverage(body, node_times)
    eph.check_observer_coverage(observer, node_times)

    node_geo = _exact_in_blocks(eph, body, observer, star, nodes, corrections)
    _check_edge_on(node_geo)
    interp = _Interpolant(nodes, node_geo)
    valid, ahead = interp.valid(t), interp.ahead(t)
    if exact:
        geo = exact_geometry(eph, body, observer, star, t, corrections)
        geo["pole_cos"], geo["pole_sin"] = np.cos(geo["pole_angle"]), np.sin(geo["pole_angle"])
        valid, ahead = valid & geo["valid"], ahead & geo["ahead"]
        # Derivatives: from the node splines even in exact mode (no finite differences).
        _, dv = interp.in_plane(t)
        v = np.vstack([geo["u_node"], geo["u_perp"]])
    else:
        geo = interp(t)
        v, dv = interp.in_plane(t)
    v = np.where(valid, v, np.nan)
    with np.errstate(invalid="ignore", divide="ignore"):
        r = np.hypot(v[0], v[1])
        vr = (v[0] * dv[0] + v[1] * dv[1]) / r
        vlon = (v[0] * dv[1] - v[1] * dv[0]) / r**2
    lon = np.degrees(np.arctan2(v[1], v[0])) % 360.0
    pole = np.degrees(np.arctan2(geo["pole_sin"], geo["pole_cos"])) % 360.0

    track = Track(
        body=body, observer=observer, star=star, tdb_s=t,
        ring_radius_km=r, ring_longitude_deg=lon, radial_velocity_km_s=vr,
        longitude_rate_deg_s=np.degrees(vlon),
        sky_f_km=np.where(ahead, geo["sky_f"], np.nan),
        sky_g_km=np.where(ahead, geo["sky_g"], np.nan),
        opening_angle_deg=np.degrees(geo["opening_angle"]),
        star_elevation_deg=np.degrees(geo["star_elevation"]),
        pole_position_angle_deg=pole, distance_km=geo["distance"],
        behind_planet=(geo["limb"] < 0.0) & ahead, interp=interp,
    )
    _find_events(track, interp, body, nodes, t)
    orbit_notes = []
    if any(getattr(reg, "orbit", None) is not None for reg in body.rings):
        from .ring_orbits import apply_ring_orbits

        orbit_notes = apply_ring_orbits(track)
    track.meta = track_meta(eph, body, observer, star, corrections, node_geo, t, node_step_s,
                            exact)
    track.meta["notes"] = list(track.meta.get("notes", [])) + orbit_notes
    track.meta["samples_with_intercept"] = int(np.count_nonzero(valid))
    # How much a pole error moves the radii: tilting the ring plane by delta moves the
    # intercept of a ray at radius r by about r delta / tan|B*| (common practice).
    # Quoted at the outermost ring edge the chord reaches (else at the closest approach).
    tan_b = abs(math.tan(math.radians(track.meta["star_elevation_deg"])))
    r_ref = max([c.boundary_km for c in track.crossings] or [track.closest_approach_radius_km])
    if not np.isfinite(r_ref):  # no intercept in front of the observer: quote the outer rings
        r_ref = body.outer_ring_km
    track.meta["pole_sensitivity_radius_km"] = float(r_ref)
    track.meta["pole_sensitivity_km_per_mdeg"] = r_ref * math.radians(1e-3) / max(tan_b, 1e-6)
    return track


# Physical bounds of a star's catalogue motion (common practice): the largest known proper
# motion is about 10 arcsec/yr (Barnard's star), the largest parallax about 0.77 arcsec
# (Proxima Cen), stellar radial velocities stay well below 1,000 km/s (from memory).
MAX_PROPER_MOTION_MAS_YR = 1.0e5
MAX_PARALLAX_MAS = 1.0e4
MAX_RADIAL_VELOCITY_KM_S = 1.0e4


def check_star(star) -> None:
    """Refuse a star whose motion is not finite or not physical (a "star" 2 AU away).

    The bounds are ten times the extremes known (:data:`MAX_PROPER_MOTION_MAS_YR`,
    :data:`MAX_PARALLAX_MAS`, :data:`MAX_RADIAL_VELOCITY_KM_S`).

    Raises
    ------
    InputError
        With the field named and the bound.
    """
    name = f"star {star.name}: " if getattr(star, "name", "") else ""
    for field_name, label, bound, unit in (
            ("pm_ra_mas_yr", "proper motion in RA", MAX_PROPER_MOTION_MAS_YR, "mas/yr"),
            ("pm_dec_mas_yr", "proper motion in Dec", MAX_PROPER_MOTION_MAS_YR, "mas/yr"),
            ("parallax_mas", "parallax", MAX_PARALLAX_MAS, "mas"),
            ("rv_km_s", "radial velocity", MAX_RADIAL_VELOCITY_KM_S, "km/s")):
        value = float(getattr(star, field_name, 0.0) or 0.0)
        if not math.isfinite(value):
            raise InputError(f"{name}{label} {value} is not a finite number")
        if abs(value) > bound:
            raise InputError(f"{name}{label} {value:g} {unit} is beyond any star's "
                             f"(at most {bound:g} {unit} in absolute value)")


def _check_edge_on(geo):
    """Refuse a window where the observer sees the rings nearly edge-on.

    Only the observer's opening angle B matters: a star near the ring plane (small B*) seen
    from an observer well off the plane just meets the plane far from the planet.
    """
    b = geo["opening_angle"]
    crosses_plane = np.any(np.signbit(b[1:]) != np.signbit(b[:-1]))
    worst = 0.0 if crosses_plane else float(np.degrees(np.min(np.abs(b))))
    if worst < EDGE_ON_LIMIT_DEG:
        raise GeometryError(
            f"the rings are nearly edge-on in this window (|B| = {worst:.4f} deg < "
            f"{EDGE_ON_LIMIT_DEG} deg): the ring-plane chord is undefined there; choose "
            "another window"
        )


def _find_events(track: Track, interp: _Interpolant, body, nodes, t):
    """Closest approach, boundary crossings and region passes, by root finding."""
    t0, t1 = t[0], t[-1]
    # Closest approach: the smallest local minimum of r in the window (roots of u.du/dt),
    # or a window end; r is nan where the intercept is not real.
    mins = [float(x) for x in interp.extrema()[0] if t0 <= x <= t1]
    candidates = mins + [t0, t1]
    radii = interp.radius(np.array(candidates))
    edge = [k >= len(mins) for k in range(len(candidates))]
    if not np.any(np.isfinite(radii)):  # no real intercept at the ends: try every sample
        candidates, radii = list(t), track.ring_radius_km
        edge = [k in (0, t.size - 1) for k in range(t.size)]
    if np.any(np.isfinite(radii)):
        k = int(np.nanargmin(radii))
        track.closest_approach_s = float(candidates[k])
        track.closest_approach_radius_km = float(radii[k])
        track.closest_approach_at_edge = bool(edge[k])
    else:  # no sample has a ring-plane intercept in front of the observer
        track.closest_approach_s = float(t0)
        track.closest_approach_radius_km = float("nan")
        track.closest_approach_at_edge = False
    ca = track.closest_approach_s

    crossings = []
    regions = list(body.rings) + list(getattr(body, "gaps", ()))  # gaps: crossed like regions
    edges = [(reg, edge, radius) for reg in regions
             for edge, radius in (("inner", reg.inner_km), ("outer", reg.outer_km))]
    all_roots = crossing_times(interp, [e[2] for e in edges], t0, t1)
    for (reg, edge, radius), roots in zip(edges, all_roots):
        speeds = interp.radial_velocity(roots)
        hidden = interp.limb(roots) < 0
        for x, v, hid in zip(roots, speeds, hidden):
            crossings.append(Crossing(
                boundary_km=radius, region=reg.name, edge=edge, tdb_s=x,
                side="ingress" if x < ca else "egress", radial_velocity_km_s=float(v),
                behind_planet=bool(hid),
            ))
    crossings.sort(key=lambda c: c.tdb_s)
    track.crossings = crossings

    passes = []
    for reg in regions:
        times = sorted(c.tdb_s for c in crossings if c.region == reg.name)
        r_start = interp.radius(np.array([t0]))[0]
        inside = reg.inner_km <= r_start < reg.outer_km
        edges = [t0] + times + [t1]
        for a, b in zip(edges[:-1], edges[1:]):
            if inside:
                # split a passage that spans the closest approach into its two sides
                pieces = [(a, ca), (ca, b)] if a < ca < b else [(a, b)]
                for pa, pb in pieces:
                    passes.append(RegionPass(
                        region=reg.name, side="ingress" if pb <= ca else "egress",
                        start_s=pa, end_s=pb,
                        clipped=(pa == t0 or pb == t1),
                    ))
            inside = not inside
    passes.sort(key=lambda p: p.start_s)
    track.passes = passes


def track_meta(eph, body, observer, star, corrections, node_geo, t, node_step_s, exact):
    """Output metadata: inputs, kernels, corrections applied, aspect at mid-window."""
    mid = len(node_geo["distance"]) // 2
    if corrections.barycentre_only:
        centre = "system barycentre (uncorrected)"
        residual = None
    elif eph.planet_centre_source(body) == "kernel":
        centre = "planet centre from user kernel"
        residual = 0.0
    else:
        from .mean_orbits import correction_residual_km

        centre = "barycentre corrected by satellite mean orbits"
        residual = float(correction_residual_km(body))
    notes = []
    eo = None
    if observer.kind == "site":
        from .ephemeris import earth_orientation

        eo = earth_orientation(t, observer.lat_deg)
        if eo["status"] != "observed":
            notes.append(eo["note"])
    return {
        "occplan_version": __version__,
        "body": body.name,
        "body_file": body.path,
        "observer": observer.describe(),
        "star": star.describe(),
        "start_utc": utc_iso(time_from_tdb_s(t[0])),
        "end_utc": utc_iso(time_from_tdb_s(t[-1])),
        "samples": int(t.size),
        "kernels": eph.kernel_labels(),
        "earth_orientation": eo,
        "corrections": {
            "light_time": "iterated to the ring-plane intercept",
            "aberration": "none (astrometric star and planet)",
            "planet_deflection": bool(corrections.deflection),
            "solar_deflection": ("differential, star minus planet" if corrections.deflection
                                 else "off"),
            "planet_centre": centre,
            "planet_centre_residual_km": residual,
        },
        "interpolation": "exact at every sample" if exact else f"cubic spline on {node_step_s:g} s nodes",
        "opening_angle_deg": float(np.degrees(node_geo["opening_angle"][mid])),
        "star_elevation_deg": float(np.degrees(node_geo["star_elevation"][mid])),
        "pole_position_angle_deg": float(np.degrees(node_geo["pole_angle"][mid]) % 360.0),
        "distance_km": float(node_geo["distance"][mid]),
        "frame": "ICRF; ring longitude from the ascending node of the ring plane on the ICRF equator",
        "notes": notes,
    }
