"""Candidate events across a star catalog and a date window (the API behind `occplan find`).

Three stages (and a vectorised screen), each conservative for the next:

1. **Prefilter** (:func:`prefilter`).  The planet's geocentric astrometric direction p(t_k)
   (light time iterated, no aberration, like the stars) on nodes every ``node_step_s``
   (1 h by default) over the window, and a k-d tree (``scipy.spatial.cKDTree``) on those unit
   vectors.  Each catalog star, propagated to mid-window with its proper motion, is kept when
   it lies within

       theta = R_thr / D_min + h_max / 2 + m_star,     R_thr = R_out + R_E + margin

   of a node (chord distance of unit vectors, equal to the angle to 1e-12 at these sizes):
   R_out the outer edge of the outermost ring region, R_E = 6378.137 km (WGS84 equatorial
   radius; a site's ray is parallel to the geocentre's, so on the sky at the planet it is
   displaced by at most R_E), D_min the smallest geocentric distance in the window, h_max the
   largest angular step between nodes (every point of the path is within h/2 of a node, plus
   a sagitta below 1e-9 rad), and m_star the star's own motion allowance: |mu| times the
   largest time from mid-window, plus 1.02 x parallax (the Earth's distance from the
   barycentre is at most 1.017 AU), plus the second-order term (|mu| dt)^2 of the linear
   propagation.  The circle of radius R_thr contains the ring ellipse dilated by R_E, so no
   candidate is lost here.
1b. **Screen** (:func:`screen`, vectorised over all prefiltered stars).  Each node segment
   of a star's runs is cut into 64 pieces; the star's sky-plane offset from the linearly
   interpolated planet direction, in the ring frame of the nearer node, gives its distance
   to the outer-ring ellipse; segments farther than R_E + margin plus half a piece and the
   allowances (star motion, light time, path sagitta, deflection) are dropped.  This removes
   most of the circle's area when the rings are open, before any per-star exact work.
2. **Geocentric refinement** (:func:`refine_candidate`).  For each prefiltered star and each
   contiguous run of nodes where it is within reach, the exact geocentric track
   (:func:`occplan.geometry.compute_track`: full light time to the ring intercept, parallax,
   deflection, planet-centre correction).  Each local minimum of the ring-plane radius r(t)
   (root of u.du/dt by Brent's method on the track splines) is a closest approach,
   ``closest_approach_utc`` / ``min_ring_radius_km``.  The star is a **candidate** when

       d_sky = min_t dist( (f, g)(t), outer-ring ellipse ) <= R_E + margin,

   the sky-plane distance (km at the planet) of the geocentric ray from the filled ellipse of
   the outermost ring edge (semi-axes R_out along the rings' long axis and R_out |sin B*|
   along the projected pole).  This is the projected form of "within the outer ring radius
   plus the Earth's radius and a margin": a site can see the star cross the rings only if its
   own ray, at most R_E from the geocentre's on the sky, falls inside that ellipse.
   d_sky is minimised with Brent's bounded method on the splines.  Only closest approaches
   inside the requested window are kept (the nodes extend ``pad_s`` beyond it so that the
   minimum itself is found).
3. **Per observer** (:func:`topocentric_event`).  The observer's own track around the
   geocentric closest approach, over the time the chord needs to cross the outer ring plus
   the Earth's radius at the geocentric sky speed (with 15 min either side), and its ring
   crossings by root finding.  An event is an (observer, closest approach) whose chord
   crosses at least one ring region.
"""

from __future__ import annotations

import math
import sys
from dataclasses import dataclass, field

import numpy as np

from . import __version__
from .constants import SPEED_OF_LIGHT_KM_S
from .ephemeris import Observer, get_ephemeris, time_from_tdb_s, utc_iso, window_tdb_s
from .errors import CoverageError, GeometryError, InputError
from .geometry import Corrections, compute_track, window_times

EARTH_RADIUS_KM = 6378.137  # WGS84 equatorial radius (NIMA TR8350.2)
DEFAULT_MARGIN_KM = 1000.0  # occplan choice: planet-ephemeris and star-position errors at 10 AU
DEFAULT_NODE_STEP_S = 3600.0
DEFAULT_PAD_S = 2 * 86400.0
MAS_RAD = math.radians(1.0 / 3.6e6)
EARTH_BARYCENTRE_AU_MAX = 1.02  # aphelion 1.0167 AU plus the Sun's offset from the barycentre
JULIAN_YEAR_DAYS = 365.25
J2000_JD = 2451545.0
SIDE_PAD_S = 900.0  # observer windows reach 15 min beyond the outer ring + R_E crossing
MAX_HALF_WINDOW_S = 2 * 86400.0
PLANET_SPEED_MAX_KM_S = 14.0  # Jupiter at perihelion moves 13.7 km/s about the Sun (common practice)


# --------------------------------------------------------------------------- small kernels


def star_unit_vectors(table, tdb_s_ref: float) -> np.ndarray:
    """Barycentric unit vectors (N, 3) of catalog stars at a reference time.

    Linear propagation in the tangent plane, u = (u0 + dt (mu_a* e_a + mu_d e_d)) / |...|,
    with e_a = (-sin a, cos a, 0) and e_d = (-sin d cos a, -sin d sin a, cos d); the neglected
    terms are of order (|mu| dt)^2 (a few 1e-11 rad for 100 mas/yr over 10 yr) and the
    parallax, both covered by :func:`star_margins_rad`.
    """
    a = np.radians(table.ra_deg)
    d = np.radians(table.dec_deg)
    ca, sa, cd, sd = np.cos(a), np.sin(a), np.cos(d), np.sin(d)
    dt_yr = (J2000_JD + tdb_s_ref / 86400.0 - table.epoch_jd_tt) / JULIAN_YEAR_DAYS
    pa = table.pm_ra_mas_yr * MAS_RAD * dt_yr
    pd = table.pm_dec_mas_yr * MAS_RAD * dt_yr
    u = np.column_stack([cd * ca - pa * sa - pd * sd * ca,
                         cd * sa + pa * ca - pd * sd * sa,
                         sd + pd * cd])
    return u / np.linalg.norm(u, axis=1)[:, None]


def star_margins_rad(table, tdb_s_ref: float, half_span_s: float) -> np.ndarray:
    """Angular allowance per star for the prefilter (rad); see the module docstring."""
    mu = np.hypot(table.pm_ra_mas_yr, table.pm_dec_mas_yr) * MAS_RAD  # rad / yr
    dt_epoch = np.abs(J2000_JD + tdb_s_ref / 86400.0 - table.epoch_jd_tt) / JULIAN_YEAR_DAYS
    half_yr = half_span_s / 86400.0 / JULIAN_YEAR_DAYS
    return (mu * half_yr + EARTH_BARYCENTRE_AU_MAX * table.parallax_mas * MAS_RAD
            + (mu * (dt_epoch + half_yr)) ** 2 + 1e-10)


def distance_to_ellipse(x, y, a: float, b):
    """Distance (same unit) from points (x, y) to the filled ellipse x^2/a^2 + y^2/b^2 <= 1.

    0 inside.  Outside, the closest point is (a^2 x/(t + a^2), b^2 y/(t + b^2)) with t > 0 the
    root of F(t) = (a x/(t + a^2))^2 + (b y/(t + b^2))^2 - 1 (Lagrange condition of the
    projection; e.g. Eberly, "Distance from a point to an ellipse", 2011).  F is convex and
    decreasing for t > 0, so Newton's method from below the root (t = 0, or the lower bound
    sqrt(a^2 x^2 + b^2 y^2) - max(a, b)^2) climbs to it monotonically.
    ``b`` may be an array (the ring ellipse's short axis changes with B*).
    """
    x = np.abs(np.asarray(x, dtype=float))
    y = np.abs(np.asarray(y, dtype=float))
    b = np.broadcast_to(np.maximum(np.asarray(b, dtype=float), 1e-9), x.shape)
    a2, b2 = a * a, b * b
    inside = (x / a) ** 2 + (y / b) ** 2 <= 1.0
    t = np.zeros_like(x)
    # Newton on the points still moving only (the others have converged)
    shape = x.shape
    x, y, b2, inside, t = (np.ravel(v) for v in (x, y, b2, inside, t))
    b = np.ravel(np.ascontiguousarray(b))
    act = np.nonzero(~inside)[0]
    # start at a lower bound of the root: F(t) >= (a^2 x^2 + b^2 y^2)/(t + max(a, b)^2)^2 - 1
    t[act] = np.maximum(np.sqrt((a * x[act]) ** 2 + (b[act] * y[act]) ** 2)
                        - np.maximum(a2, b2[act]), 0.0)
    for _ in range(60):
        if act.size == 0:
            break
        xa, ya, ba, b2a, ta = x[act], y[act], b[act], b2[act], t[act]
        ex, ey = a * xa / (ta + a2), ba * ya / (ta + b2a)
        f = ex * ex + ey * ey - 1.0
        df = -2.0 * (ex * ex / (ta + a2) + ey * ey / (ta + b2a))
        step = np.where(df == 0, 0.0, -f / np.where(df == 0, -1.0, df))
        t[act] = ta + np.maximum(step, 0.0)
        act = act[np.abs(step) > 1e-12 * (ta + a2)]
    x, y, b2, inside, t = (v.reshape(shape) for v in (x, y, b2, inside, t))
    xc, yc = a2 * x / (t + a2), b2 * y / (t + b2)
    return np.where(inside, 0.0, np.hypot(x - xc, y - yc))


def _runs(mask: np.ndarray, join: int = 1) -> list[tuple[int, int]]:
    """(first, last) index pairs of runs of True, joining runs separated by <= join False."""
    idx = np.nonzero(mask)[0]
    if idx.size == 0:
        return []
    breaks = np.nonzero(np.diff(idx) > join + 1)[0]
    starts = np.r_[idx[0], idx[breaks + 1]]
    ends = np.r_[idx[breaks], idx[-1]]
    return list(zip(starts.tolist(), ends.tolist()))


# --------------------------------------------------------------------------- planet path


@dataclass
class PlanetPath:
    """The planet's geocentric astrometric direction on time nodes."""

    tdb_s: np.ndarray
    unit: np.ndarray  # (N, 3)
    distance_km: np.ndarray
    threshold_km: float
    step_rad: np.ndarray  # angle between consecutive nodes (N-1,)
    light_time_allowance_km: np.ndarray  # (N,) see planet_path
    pole_angle_rad: np.ndarray = None  # (N,) position angle P of the projected pole
    sin_b: np.ndarray = None  # (N,) |sin B| at the nodes
    outer_ring_km: float = float("nan")

    @property
    def theta_nodes_rad(self) -> np.ndarray:
        return (self.threshold_km + self.light_time_allowance_km) / self.distance_km

    @property
    def theta_rad(self) -> float:
        """Largest angular radius of the threshold circle over the nodes."""
        return float(self.theta_nodes_rad.max())


def planet_path(eph, body, t0_s: float, t1_s: float, step_s: float, threshold_km: float,
                corrections: Corrections = Corrections()) -> PlanetPath:
    """Geocentric astrometric unit vectors of the planet centre (light time iterated twice).

    The track takes the light time to the ring intercept, up to R_out / (c |sin B|) longer
    than the planet centre's; the planet moves by at most ``PLANET_SPEED_MAX_KM_S`` times
    that, which the prefilter adds per node (``light_time_allowance_km``, tens of km
    except near ring-plane crossings).
    """
    n = max(int(math.ceil((t1_s - t0_s) / step_s)) + 1, 2)
    t = np.linspace(t0_s, t1_s, n)
    when = time_from_tdb_s(t)
    geo = Observer.geocentre()
    obs = eph.observer_km(geo, when).reshape(3, -1)
    planet = eph.planet_km(body, when, barycentre_only=corrections.barycentre_only).reshape(3, -1)
    for _ in range(2):
        lt = np.linalg.norm(planet - obs, axis=0) / SPEED_OF_LIGHT_KM_S
        planet = eph.planet_km(body, time_from_tdb_s(t - lt),
                               barycentre_only=corrections.barycentre_only).reshape(3, -1)
    q = planet - obs
    dist = np.linalg.norm(q, axis=0)
    unit = (q / dist).T
    steps = np.linalg.norm(np.diff(unit, axis=0), axis=1)
    pole = body.pole.unit_vector(J2000_JD + (t - lt) / 86400.0).reshape(3, -1)
    sin_b = np.abs(np.einsum("ij,ji->i", unit, pole))
    allowance = PLANET_SPEED_MAX_KM_S * body.outer_ring_km / (
        SPEED_OF_LIGHT_KM_S * np.maximum(sin_b, 1e-4))
    z = np.array([0.0, 0.0, 1.0])
    east = np.cross(z, unit)
    east /= np.linalg.norm(east, axis=1)[:, None]
    north = np.cross(unit, east)
    pa = np.arctan2(np.einsum("ij,ji->i", east, pole), np.einsum("ij,ji->i", north, pole))
    return PlanetPath(t, unit, dist, float(threshold_km), steps, allowance, pa, sin_b,
                      body.outer_ring_km)


def _pair_runs(star, node, join: int = 1):
    """Runs of (star, node) pairs sorted by star then node: (star, first node, last node) of
    each run, joining runs of one star separated by <= ``join`` missing nodes (as
    :func:`_runs` does for one star)."""
    star, node = np.asarray(star, dtype=np.int64), np.asarray(node, dtype=np.int64)
    if star.size == 0:
        return star, node, node
    brk = np.r_[True, (star[1:] != star[:-1]) | (node[1:] - node[:-1] > join + 1)]
    starts = np.nonzero(brk)[0]
    ends = np.r_[starts[1:] - 1, star.size - 1]
    return star[starts], node[starts], node[ends]


@dataclass
class Reach:
    """Stars within reach of the path and, for each run of nodes, its star and node span."""

    rows: np.ndarray  # row of each star reached, in the catalog as streamed
    run_star: np.ndarray  # index into rows (and into the stars' table) of each run
    run_first: np.ndarray  # first path node of each run
    run_last: np.ndarray

    def runs_of(self, j: int) -> list[tuple[int, int]]:
        sel = self.run_star == j
        return list(zip(self.run_first[sel].tolist(), self.run_last[sel].tolist()))


def prefilter(path: PlanetPath, table, tree=None):
    """Catalog rows that come within reach of the path, and for each the node runs.

    Vectorised over stars and nodes: a nearest-node query (radius per group of stars with
    similar motion allowances) finds the stars, a ball query on the same k-d tree their
    nodes, and each node is kept when the star is within theta_k + h_k + m_star of it.

    Returns
    -------
    :class:`Reach` (``rows`` index ``table``)
    """
    from scipy.spatial import cKDTree

    t_ref = 0.5 * (path.tdb_s[0] + path.tdb_s[-1])
    half = 0.5 * (path.tdb_s[-1] - path.tdb_s[0])
    base = path.theta_rad + 0.5 * float(path.step_rad.max(initial=0.0)) + 1e-9
    tree = cKDTree(path.unit) if tree is None else tree
    u = star_unit_vectors(table, t_ref)
    margin = star_margins_rad(table, t_ref, half)
    # group stars by their margin (powers of two) so that one query radius serves a group
    level = np.ceil(np.log2(np.maximum(margin, 1e-9) / 1e-9)).astype(int)
    hit = np.zeros(len(table), dtype=bool)
    for lv in np.unique(level):
        sel = np.nonzero(level == lv)[0]
        d, _ = tree.query(u[sel], distance_upper_bound=base + 1e-9 * 2.0 ** lv)
        hit[sel] = np.isfinite(d)
    rows = np.nonzero(hit)[0]
    empty = np.zeros(0, dtype=np.int64)
    if rows.size == 0:
        return Reach(rows, empty, empty, empty)
    u, margin = u[rows], margin[rows]
    found = tree.query_ball_point(u, base + margin + 1e-9, return_sorted=True)
    counts = np.fromiter((len(x) for x in found), dtype=np.int64, count=rows.size)
    if counts.sum() == 0:
        return Reach(rows, empty, empty, empty)
    node = np.concatenate([np.asarray(x, dtype=np.int64) for x in found if len(x)])
    star = np.repeat(np.arange(rows.size), counts)
    h = np.r_[path.step_rad, 0.0]
    h = 0.5 * np.maximum(h, np.r_[0.0, path.step_rad])
    chord = np.linalg.norm(path.unit[node] - u[star], axis=1)
    near = chord <= path.theta_nodes_rad[node] + h[node] + margin[star] + 1e-9
    return Reach(rows, *_pair_runs(star[near], node[near]))


SCREEN_SUBSTEPS = 64
PATH_ACCELERATION_KM_S2 = 1.0e-5  # Earth's orbital acceleration 5.9e-6 km/s^2 plus the planet's
DEFLECTION_ALLOWANCE_KM = 100.0  # planet deflection (about 23 km at Saturn) and B, P drift


def screen(path: PlanetPath, table, reach: Reach, limit_km: float, chunk: int = 20000):
    """Stage 1.5: keep the node runs whose segments can reach the outer-ring ellipse.

    Each node segment is cut into ``SCREEN_SUBSTEPS`` pieces; at each point the linearly
    interpolated planet direction gives the star's sky-plane offset (u, w) in the ring frame
    of the nearer node and its distance to the outer-ring ellipse (:func:`distance_to_ellipse`).
    A segment passes when min distance - half a piece - allowances <= ``limit_km``; the
    allowances are the star's motion margin, the light-time allowance, the sagitta of the
    path over a segment (``PATH_ACCELERATION_KM_S2`` T^2 / 8) and ``DEFLECTION_ALLOWANCE_KM``.
    ``table`` holds the stars of ``reach`` (row j is ``reach.rows[j]``).  Returns a
    :class:`Reach` with the runs reduced to the passing segments (and its stars only).
    """
    empty = np.zeros(0, dtype=np.int64)
    if reach.run_star.size == 0:
        return Reach(empty, empty, empty, empty)
    t_ref = 0.5 * (path.tdb_s[0] + path.tdb_s[-1])
    half = 0.5 * (path.tdb_s[-1] - path.tdb_s[0])
    u_star = star_unit_vectors(table, t_ref)
    margin_rad = star_margins_rad(table, t_ref, half)
    last_node = path.tdb_s.size - 2
    k_lo = np.maximum(reach.run_first - 1, 0)
    k_hi = np.minimum(reach.run_last, last_node)
    cnt = np.maximum(k_hi - k_lo + 1, 0)
    pj = np.repeat(reach.run_star, cnt)
    pk = np.repeat(k_lo, cnt) + (np.arange(cnt.sum()) - np.repeat(np.cumsum(cnt) - cnt, cnt))
    tau = (np.arange(SCREEN_SUBSTEPS + 1) / SCREEN_SUBSTEPS)[None, :, None]
    dt_node = np.diff(path.tdb_s)
    z = np.array([0.0, 0.0, 1.0])
    ok = np.zeros(pj.size, dtype=bool)
    for lo in range(0, pj.size, chunk):
        j, k = pj[lo:lo + chunk], pk[lo:lo + chunk]
        p = path.unit[k][:, None, :] * (1 - tau) + path.unit[k + 1][:, None, :] * tau
        p /= np.linalg.norm(p, axis=2)[..., None]
        dist = path.distance_km[k][:, None] * (1 - tau[..., 0]) + path.distance_km[k + 1][:, None] * tau[..., 0]
        s = u_star[j][:, None, :]
        d = (s - p * np.einsum("ijk,ijk->ij", p, s)[..., None]) * dist[..., None]
        east = np.cross(z, p)
        east /= np.linalg.norm(east, axis=2)[..., None]
        north = np.cross(p, east)
        f, g = np.einsum("ijk,ijk->ij", d, east), np.einsum("ijk,ijk->ij", d, north)
        near = np.where(tau[..., 0] < 0.5, k[:, None], k[:, None] + 1)
        pa, sb = path.pole_angle_rad[near], path.sin_b[near]
        u = f * np.cos(pa) - g * np.sin(pa)
        w = f * np.sin(pa) + g * np.cos(pa)
        dmin = distance_to_ellipse(u, w, path.outer_ring_km, path.outer_ring_km * sb).min(axis=1)
        piece = path.distance_km[k] * path.step_rad[k] / SCREEN_SUBSTEPS
        allowance = (0.5 * piece + margin_rad[j] * path.distance_km[k]
                     + np.maximum(path.light_time_allowance_km[k], path.light_time_allowance_km[k + 1])
                     + PATH_ACCELERATION_KM_S2 * dt_node[k] ** 2 / 8.0 + DEFLECTION_ALLOWANCE_KM)
        ok[lo:lo + chunk] = dmin - allowance <= limit_km
    j = np.r_[pj[ok], pj[ok]]
    k = np.r_[pk[ok], pk[ok] + 1]
    key = np.unique(j * np.int64(path.tdb_s.size) + k)
    run_star, first, last = _pair_runs(key // path.tdb_s.size, key % path.tdb_s.size)
    stars, run_star = np.unique(run_star, return_inverse=True)
    return Reach(stars, run_star.astype(np.int64), first, last)


# --------------------------------------------------------------------------- refinement


@dataclass
class Candidate:
    """A geocentric closest approach that passes the threshold (see the module docstring)."""

    row: int  # index into the star table
    star: object  # StarSpec
    closest_approach_s: float
    min_ring_radius_km: float
    sky_distance_km: float  # d_sky: distance of the geocentric ray from the outer-ring ellipse
    sky_distance_time_s: float
    sky_speed_km_s: float  # geocentric speed of the ray on the sky at closest approach
    opening_angle_deg: float
    star_elevation_deg: float
    distance_km: float
    at_window_edge: bool

    @property
    def star_id(self) -> str:
        return str(self.star.name)


def _local_minima(interp, t0: float, t1: float) -> list[float]:
    """Times of the local minima of r(t) in [t0, t1] (u.du/dt from - to +, Brent)."""
    from scipy.optimize import brentq

    def g(tt):
        v, dv = interp.in_plane(np.atleast_1d(tt))
        return v[0] * dv[0] + v[1] * dv[1]

    nodes = interp.node_s
    grid = np.union1d(nodes[(nodes > t0) & (nodes < t1)], [t0, t1])
    gv = g(grid)
    idx = np.nonzero((gv[:-1] < 0) & (gv[1:] >= 0))[0]
    mins = [brentq(lambda tt: float(g(tt)[0]), grid[i], grid[i + 1], xtol=1e-6) for i in idx]
    if gv[0] >= 0:
        mins.insert(0, float(t0))  # r increasing from the start: the minimum is at the edge
    if gv[-1] < 0:
        mins.append(float(t1))
    return mins


def sky_distance_km(track, body, tdb_s):
    """d(t): distance of the track's ray from the outer-ring ellipse on the sky (km)."""
    v = track.interp(np.atleast_1d(np.asarray(tdb_s, dtype=float)))
    p = np.arctan2(v["pole_sin"], v["pole_cos"])
    u = v["sky_f"] * np.cos(p) - v["sky_g"] * np.sin(p)
    w = v["sky_f"] * np.sin(p) + v["sky_g"] * np.cos(p)
    r_out = body.outer_ring_km
    return distance_to_ellipse(u, w, r_out, r_out * np.abs(np.sin(v["star_elevation"])))


def _min_sky_distance(track, body, a: float, b: float):
    """(d_min, t) over [a, b]: dense spline samples, then Brent's bounded method."""
    from scipy.optimize import minimize_scalar

    n = int(min(max((b - a) / 30.0, 16), 20000))
    tt = np.linspace(a, b, n)
    d = sky_distance_km(track, body, tt)
    k = int(np.argmin(d))
    if d[k] == 0.0:
        return 0.0, float(tt[k])
    lo, hi = tt[max(k - 1, 0)], tt[min(k + 1, n - 1)]
    if hi <= lo:
        return float(d[k]), float(tt[k])
    res = minimize_scalar(lambda x: float(sky_distance_km(track, body, x)[0]), bounds=(lo, hi),
                          method="bounded", options={"xatol": 0.01})
    if res.fun < d[k]:
        return float(res.fun), float(res.x)
    return float(d[k]), float(tt[k])


def refine_candidate(eph, body, star, row, t_start: float, t_end: float, window: tuple,
                     corrections: Corrections, margin_km: float, step_s: float = 300.0):
    """Exact geocentric closest approaches of one star over [t_start, t_end].

    Returns the :class:`Candidate` objects (within the threshold, closest approach inside
    ``window``).  Raises GeometryError when the rings are edge-on there.
    """
    times = window_times(t_start, t_end, min(step_s, max((t_end - t_start) / 4.0, 1.0)))
    track = compute_track(eph, body, Observer.geocentre(), star, times, corrections)
    interp = track.interp
    mins = _local_minima(interp, t_start, t_end)
    out = []
    limit = EARTH_RADIUS_KM + margin_km
    # a side of each minimum reaches the neighbouring minimum's basin at the midpoint
    bounds = [t_start] + [0.5 * (x + y) for x, y in zip(mins[:-1], mins[1:])] + [t_end]
    for k, t_ca in enumerate(mins):
        if not window[0] <= t_ca <= window[1]:
            continue
        d_min, t_d = _min_sky_distance(track, body, bounds[k], bounds[k + 1])
        if d_min > limit:
            continue
        r_min = float(interp.radius(np.array([t_ca]))[0])
        probe = np.array([t_ca - 30.0, t_ca + 30.0])
        v = interp(probe)
        speed = float(math.hypot(v["sky_f"][1] - v["sky_f"][0], v["sky_g"][1] - v["sky_g"][0]) / 60.0)
        at_ca = interp(np.array([t_ca]))
        out.append(Candidate(
            row=row, star=star, closest_approach_s=float(t_ca), min_ring_radius_km=r_min,
            sky_distance_km=d_min, sky_distance_time_s=t_d, sky_speed_km_s=speed,
            opening_angle_deg=float(np.degrees(at_ca["opening_angle"][0])),
            star_elevation_deg=float(np.degrees(at_ca["star_elevation"][0])),
            distance_km=float(at_ca["distance"][0]),
            at_window_edge=bool(t_ca <= t_start + 1.0 or t_ca >= t_end - 1.0),
        ))
    return out


# --------------------------------------------------------------------------- observers


@dataclass
class Event:
    """One candidate seen by one observer."""

    candidate: Candidate
    observer: Observer
    site: object = None  # occplan.catalogs.Site or None
    closest_approach_s: float = float("nan")
    min_ring_radius_km: float = float("nan")
    crosses_rings: bool = False
    passes: list = field(default_factory=list)  # geometry.RegionPass
    crossing_start_s: float = float("nan")
    crossing_end_s: float = float("nan")
    behind_planet: bool = False
    opening_angle_deg: float = float("nan")
    star_elevation_deg: float = float("nan")
    distance_km: float = float("nan")
    window_s: tuple = (float("nan"), float("nan"))
    zones: dict | None = None  # filled by occplan.ranking
    score: dict | None = None

    @property
    def site_name(self) -> str:
        return self.observer.name

    @property
    def star_id(self) -> str:
        return self.candidate.star_id

    def row(self) -> dict:
        """The find fields of docs/output_schema.md plus what rank needs to rebuild the event."""
        c, s = self.candidate, self.candidate.star
        # in the order the chord meets them (outer to inner on ingress)
        regions = list(dict.fromkeys(p.region for p in sorted(self.passes, key=lambda p: p.start_s)))
        row = {
            "star_id": c.star_id, "body": None, "site": self.site_name,
            "closest_approach_utc": _utc(self.closest_approach_s),
            "min_ring_radius_km": self.min_ring_radius_km,
            "crossing_start_utc": _utc(self.crossing_start_s) if self.crosses_rings else None,
            "crossing_end_utc": _utc(self.crossing_end_s) if self.crosses_rings else None,
            "regions": ", ".join(regions),
            "behind_planet": self.behind_planet,
            "geocentric_closest_approach_utc": _utc(c.closest_approach_s),
            "geocentric_min_ring_radius_km": c.min_ring_radius_km,
            "sky_distance_km": c.sky_distance_km,
            "opening_angle_deg": self.opening_angle_deg,
            "star_elevation_deg": self.star_elevation_deg,
            "distance_au": self.distance_km / 149597870.7,
            "at_window_edge": c.at_window_edge,
            "vmag": s.vmag, "kmag": s.kmag,
            "star_ra_deg": s.ra_deg, "star_dec_deg": s.dec_deg,
            "star_pm_ra_mas_yr": s.pm_ra_mas_yr, "star_pm_dec_mas_yr": s.pm_dec_mas_yr,
            "star_parallax_mas": s.parallax_mas, "star_rv_km_s": s.rv_km_s,
            "star_epoch_jd_tt": s.epoch_jd_tt,
            # what the catalog said of the star beyond the columns above (Gaia G and BP-RP,
            # per-band magnitudes with their source and scatter, astrometric errors): rank
            # --from rebuilds the same star from them
            "star_extra": dict(s.extra or {}), "star_errors": dict(s.errors or {}),
            "window_start_utc": _utc(self.window_s[0]), "window_end_utc": _utc(self.window_s[1]),
        }
        return row


def _utc(t_s: float) -> str | None:
    return None if not np.isfinite(t_s) else utc_iso(time_from_tdb_s(t_s))


def observer_half_window_s(body, cand: Candidate, margin_km: float) -> float:
    """Half-width of an observer's window around the geocentric closest approach (s)."""
    reach = body.outer_ring_km + EARTH_RADIUS_KM + margin_km
    speed = max(cand.sky_speed_km_s, 1e-3)
    return float(min(max(reach / speed, 1800.0) + SIDE_PAD_S, MAX_HALF_WINDOW_S))


def topocentric_event(eph, body, cand: Candidate, observer: Observer, corrections: Corrections,
                      margin_km: float, site=None, step_s: float = 60.0) -> Event:
    """The observer's track around a geocentric closest approach, and its ring crossings."""
    half = observer_half_window_s(body, cand, margin_km)
    a, b = cand.closest_approach_s - half, cand.closest_approach_s + half
    times = window_times(a, b, step_s)
    track = compute_track(eph, body, observer, cand.star, times, corrections)
    ev = Event(candidate=cand, observer=observer, site=site, window_s=(a, b),
               closest_approach_s=track.closest_approach_s,
               min_ring_radius_km=track.closest_approach_radius_km,
               crosses_rings=track.crosses_rings, passes=list(track.passes),
               opening_angle_deg=float(track.meta["opening_angle_deg"]),
               star_elevation_deg=float(track.meta["star_elevation_deg"]),
               distance_km=float(track.meta["distance_km"]))
    if track.passes:
        ev.crossing_start_s = min(p.start_s for p in track.passes)
        ev.crossing_end_s = max(p.end_s for p in track.passes)
        ev.behind_planet = bool(any(c.behind_planet for c in track.crossings))
    return ev


# --------------------------------------------------------------------------- the search


@dataclass
class SearchResult:
    body: object
    candidates: list
    events: list
    skipped: list  # (star_id, reason)
    meta: dict

    def to_table(self):
        """The events as an astropy QTable (units, UTC Time columns; scores and their factors
        when :func:`occplan.ranking.score_events` has run), the search metadata in ``.meta``."""
        from .ranking import event_rows
        from .tables import to_astropy

        rows = [{k: v for k, v in r.items() if k not in ("zones", "zone_factors")}
                for r in event_rows(self)]
        return to_astropy(rows, self.meta, qtable=True)

    def rows(self) -> list[dict]:
        out = []
        for ev in self.events:
            row = ev.row()
            row["body"] = self.body.name
            out.append(row)
        return out


def _progress(total: int, label: str, enabled):
    """A rich progress bar on stderr (when stderr is a terminal, or ``enabled`` is True)."""
    show = sys.stderr.isatty() if enabled is None else bool(enabled)
    if not show or total == 0:
        return None
    from rich.console import Console
    from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

    prog = Progress(TextColumn(label), BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(),
                    console=Console(file=sys.stderr), transient=True)
    prog.start()
    prog.task = prog.add_task(label, total=total)
    return prog


DEFAULT_CHUNK_ROWS = 250_000  # catalog rows prefiltered at a time (about 100 MB of work arrays)
REFINE_PAIRS = 400_000  # (star, spline node) pairs refined together (about 150 MB)

_FIELDS = ("source_id", "ra_deg", "dec_deg", "pm_ra_mas_yr", "pm_dec_mas_yr", "parallax_mas",
           "rv_km_s", "epoch_jd_tt", "vmag", "kmag", "gmag")


def as_star_source(table):
    """A StarTable as is, a list of StarSpec as a StarTable, anything else as an iterable of
    StarTable chunks."""
    from .catalogs import StarTable
    from .ephemeris import StarSpec

    if isinstance(table, StarTable):
        return table
    if isinstance(table, (list, tuple)) and all(isinstance(s, StarSpec) for s in table):
        return StarTable.from_stars(list(table))
    return table


def iter_chunks(source, chunk_rows: int):
    """StarTable chunks of at most ``chunk_rows`` rows from a StarTable (or an iterable of
    chunks, passed through)."""
    from .catalogs import StarTable

    if isinstance(source, StarTable):
        for lo in range(0, len(source), chunk_rows):
            yield source if len(source) <= chunk_rows else source.subset(
                np.arange(lo, min(lo + chunk_rows, len(source))))
        return
    yield from source


def concat_tables(parts):
    """One StarTable from several (None for none)."""
    from .catalogs import StarTable

    if not parts:
        return None
    if len(parts) == 1:
        return parts[0]
    kw = {f: np.concatenate([getattr(p, f) for p in parts]) for f in _FIELDS}
    return StarTable(**kw, report=parts[0].report)


def check_stars(stars) -> None:
    """Refuse (InputError, naming the star) a star whose motion is not finite or not
    physical, as the per-star track does (:func:`occplan.geometry.check_star`)."""
    from .geometry import (MAX_PARALLAX_MAS, MAX_PROPER_MOTION_MAS_YR, MAX_RADIAL_VELOCITY_KM_S,
                           check_star)

    bad = np.zeros(len(stars), dtype=bool)
    for name, bound in (("pm_ra_mas_yr", MAX_PROPER_MOTION_MAS_YR),
                        ("pm_dec_mas_yr", MAX_PROPER_MOTION_MAS_YR),
                        ("parallax_mas", MAX_PARALLAX_MAS), ("rv_km_s", MAX_RADIAL_VELOCITY_KM_S)):
        v = np.nan_to_num(np.asarray(getattr(stars, name), dtype=float), nan=0.0,
                          posinf=np.inf, neginf=-np.inf)
        bad |= ~np.isfinite(v) | (np.abs(v) > bound)
    if np.any(bad):
        check_star(stars.star(int(np.nonzero(bad)[0][0])))


def refine_all(eph, body, path, stars, rows, reach, window, corrections, margin_km, progress=None):
    """Stage 2 for every run of ``reach`` (stars of ``stars``, catalog rows ``rows``), in
    blocks of about :data:`REFINE_PAIRS` spline nodes ordered by time
    (:func:`occplan.refine.refine_runs`).  Returns (candidates, skipped)."""
    from .refine import path_ephemeris, refine_runs

    n_path = path.tdb_s.size
    a = path.tdb_s[np.maximum(reach.run_first - 1, 0)]
    b = path.tdb_s[np.minimum(reach.run_last + 1, n_path - 1)]
    step = float(path.tdb_s[1] - path.tdb_s[0])
    per_step = max(int(math.ceil(step / 120.0 - 1e-9)), 1)
    h = step / per_step
    order = np.argsort(a, kind="stable")
    nodes = np.rint((b - a) / h)[order] + 5
    block = np.floor(np.cumsum(nodes) / REFINE_PAIRS).astype(int)
    cuts = np.r_[0, np.nonzero(np.diff(block))[0] + 1, order.size]
    ephem = path_ephemeris(eph, body, a - 2 * h, b + 2 * h, corrections, anchor_s=path.tdb_s[0])
    candidates, skipped = [], []
    bar = _progress(len(cuts) - 1, "refining candidates", progress)
    try:
        for lo, hi in zip(cuts[:-1], cuts[1:]):
            sel = order[lo:hi]
            got, skip = refine_runs(eph, body, stars, reach.run_star[sel], a[sel], b[sel], h,
                                    window, corrections, margin_km, EARTH_RADIUS_KM + margin_km,
                                    origin_s=path.tdb_s[0] - 2 * h, ephem=ephem)
            skipped += [(str(stars.source_id[j]), reason) for j, reason in skip]
            for i, j in enumerate(got["star"].tolist()):
                candidates.append(Candidate(
                    row=int(rows[j]), star=stars.star(j),
                    **{k: (bool(v[i]) if k == "at_window_edge" else float(v[i]))
                       for k, v in got.items() if k != "star"}))
            if bar is not None:
                bar.advance(bar.task)
    finally:
        if bar is not None:
            bar.stop()
    return candidates, skipped


def search_radius_rad(path: PlanetPath) -> float:
    """Largest angle from the path at which a star (at mid-window) can be a candidate,
    before its own motion allowance (the prefilter's circle plus half a node step)."""
    return path.theta_rad + 0.5 * float(path.step_rad.max(initial=0.0)) + 1e-9


def years_from_epoch(epoch_yr: float, t0_s: float, t1_s: float) -> float:
    """Largest time (Julian years) between a catalog epoch and the window ends."""
    ep = (epoch_yr - 2000.0) * JULIAN_YEAR_DAYS * 86400.0
    return max(abs(t0_s - ep), abs(t1_s - ep)) / 86400.0 / JULIAN_YEAR_DAYS


def screen_chunks(path: PlanetPath, chunks, margin_km: float,
                  chunk_rows: int = DEFAULT_CHUNK_ROWS):
    """Stage 1 over StarTable chunks (a StarTable is cut into ``chunk_rows``): the prefilter
    and the screen.

    Returns (stars screened or None, their catalog rows as streamed, their :class:`Reach`
    (``run_star`` indexes the screened stars), stars searched, stars prefiltered).
    """
    from scipy.spatial import cKDTree

    tree = cKDTree(path.unit)
    n_searched, parts = 0, []
    for chunk in iter_chunks(chunks, chunk_rows):
        reach = prefilter(path, chunk, tree)
        if reach.rows.size:
            parts.append((chunk.subset(reach.rows), reach.rows + n_searched, reach))
        n_searched += len(chunk)
    hits, rows, reach = join_reached(parts)
    if hits is None:
        return None, None, None, n_searched, 0
    pre = screen(path, hits, reach, EARTH_RADIUS_KM + margin_km)
    return hits.subset(pre.rows), rows[pre.rows], pre, n_searched, len(rows)


def join_reached(parts):
    """Several (stars, their catalog rows, their :class:`Reach`) as one: the tables and rows
    concatenated, each Reach's ``run_star`` moved past the stars before it.  Parts without
    stars are left out; (None, None, None) when none has any."""
    parts = [p for p in parts if p[0] is not None and len(p[1])]
    if not parts:
        return None, None, None
    offsets = np.cumsum([0] + [len(p[1]) for p in parts[:-1]])
    rows = np.concatenate([p[1] for p in parts])
    reach = Reach(np.arange(rows.size),
                  np.concatenate([p[2].run_star + o for p, o in zip(parts, offsets)]),
                  np.concatenate([p[2].run_first for p in parts]),
                  np.concatenate([p[2].run_last for p in parts]))
    return concat_tables([p[0] for p in parts]), rows, reach


def split_runs(stars, rows, reach: Reach, parts: int) -> list:
    """Screened stars cut into up to ``parts`` groups of contiguous stars with about equal
    numbers of path nodes to refine (the refinement's cost): a list of (stars, rows, Reach),
    each Reach's ``run_star`` indexing its own group."""
    n = len(rows)
    nodes = np.bincount(reach.run_star, weights=reach.run_last - reach.run_first + 1.0,
                        minlength=n)
    total = float(nodes.sum())
    parts = max(1, min(int(parts), n))
    cut = np.searchsorted(np.cumsum(nodes), total * np.arange(1, parts) / parts, side="right")
    bounds = np.unique(np.r_[0, np.minimum(cut + 1, n), n])
    out = []
    for lo, hi in zip(bounds[:-1], bounds[1:]):
        sel = (reach.run_star >= lo) & (reach.run_star < hi)
        if not np.any(sel):
            continue
        out.append((stars.subset(np.arange(lo, hi)), rows[lo:hi],
                    Reach(np.arange(hi - lo), reach.run_star[sel] - lo, reach.run_first[sel],
                          reach.run_last[sel])))
    return out


def search_path(eph, body, path: PlanetPath, chunks, window, corrections: Corrections,
                margin_km: float, progress=None, chunk_rows: int = DEFAULT_CHUNK_ROWS):
    """Stages 1 and 2 over StarTable chunks (a StarTable is cut into ``chunk_rows``).

    Returns (candidates, skipped, (stars searched, prefiltered, screened)).
    """
    stars, rows, pre, n_searched, n_hits = screen_chunks(path, chunks, margin_km, chunk_rows)
    if stars is None:
        return [], [], (n_searched, 0, 0)
    check_stars(stars)
    candidates, skipped = [], []
    if pre.run_star.size:
        candidates, skipped = refine_all(eph, body, path, stars, rows, pre, window, corrections,
                                         margin_km, progress)
    return candidates, skipped, (n_searched, n_hits, int(pre.rows.size))


def check_window(body, window, kernels=None) -> tuple[float, float]:
    """The window in TDB seconds, after checking it against the kernels' coverage."""
    from .astro import window_seconds

    eph = get_ephemeris(tuple(str(k) for k in (kernels or [])))
    t0, t1 = window_seconds(window)  # UTC ISO strings, astropy Times or TDB seconds
    eph.check_planet_coverage(body, time_from_tdb_s(np.array([t0, t1])))
    eph.check_observer_coverage(Observer.geocentre(), time_from_tdb_s(np.array([t0, t1])))
    return t0, t1


def search_candidates(body, table, window, *, kernels=None,
                      corrections: Corrections = Corrections(), margin_km: float | None = None,
                      node_step_s: float = DEFAULT_NODE_STEP_S, pad_s: float = DEFAULT_PAD_S,
                      progress=None, chunk_rows: int = DEFAULT_CHUNK_ROWS, engine: str = "local",
                      scheduler: str | None = None, workers: int = 2, dask_processes: bool = True):
    """Geocentric candidates of a star table over a window (stages 1 and 2).

    Parameters
    ----------
    body : occplan.bodies.Body
    table : occplan.catalogs.StarTable, a list of StarSpec, or an iterable of StarTable chunks
        (streamed: only the stars within reach of the path are kept; ``Candidate.row`` counts
        rows across the chunks).  A StarTable is read ``chunk_rows`` rows at a time.
    window : (start, end)
        UTC ISO strings or TDB seconds past J2000.
    margin_km : float, optional
        Added to the Earth's radius in the threshold (module docstring).  Default: 3 sigma of
        the planet's ephemeris position and of the catalog's worst star position when the
        catalog has Gaia position errors (:func:`occplan.uncertainty.search_margin_km`), else
        DEFAULT_MARGIN_KM.
    engine : "local" or "dask"
        "dask" runs stages 1 and 2 per catalog piece on a Dask cluster
        (:mod:`occplan.dask_engine`; ``scheduler`` address, else a LocalCluster of
        ``workers``); the candidates are the same.

    Returns
    -------
    (list of Candidate, list of (star_id, reason) skipped, dict of search info)
    """
    table = as_star_source(table)
    if engine not in ("local", "dask"):
        raise InputError(f"--engine {engine!r}: give local or dask")
    eph = get_ephemeris(tuple(str(k) for k in (kernels or [])))
    t0, t1 = check_window(body, window, kernels)
    margin_from = "--margin"
    if margin_km is None:
        from .uncertainty import search_margin_km

        mid = time_from_tdb_s(np.array([0.5 * (t0 + t1)]))
        dist = float(np.linalg.norm(eph.planet_km(body, mid, barycentre_only=True)[:, 0]
                                    - eph.earth_km(mid)[:, 0]))
        margin_km, margin_from = search_margin_km(body, table, dist, 0.5 * (t0 + t1))
        if margin_km is None:
            margin_km = DEFAULT_MARGIN_KM
            margin_from = f"fixed {DEFAULT_MARGIN_KM:g} km: {margin_from}"
    if not np.isfinite(margin_km) or margin_km < 0:
        raise InputError(f"--margin {margin_km} km must be >= 0")
    lo, hi = t0 - pad_s, t1 + pad_s
    try:
        eph.check_planet_coverage(body, time_from_tdb_s(np.array([lo - 3600.0, hi + 3600.0])))
    except CoverageError:
        lo, hi = t0, t1  # a window at the end of the kernel: no padding
    threshold = body.outer_ring_km + EARTH_RADIUS_KM + margin_km
    path = planet_path(eph, body, lo, hi, node_step_s, threshold, corrections)
    partitions, pieces = None, None
    if hasattr(table, "select"):  # a partitioned catalog: read only what the path can reach
        pieces = table.select(path.unit, search_radius_rad(path),
                              years_from_epoch(table.ref_epoch_yr, lo, hi))
        partitions = dict(table.info)
    if engine == "dask":
        from .dask_engine import search_on_dask

        source = table if pieces is None else (pieces, table.column_map, table.allow_no_motion)
        if pieces is None and not hasattr(table, "subset"):
            from .catalogs import StarTable  # an iterable of chunks: gather it first
            source = concat_tables(list(table)) or StarTable.from_stars([])
        candidates, skipped, counts = search_on_dask(
            body, path, source, (t0, t1), corrections, margin_km, kernels, scheduler, workers,
            dask_processes, chunk_rows)
    else:
        if pieces is not None:
            catalog = table
            table = (chunk for pc in pieces for chunk in catalog.read(pc, chunk_rows))
        candidates, skipped, counts = search_path(eph, body, path, table, (t0, t1), corrections,
                                                  margin_km, progress, chunk_rows)
    n_searched, n_hits, n_screened = counts
    candidates.sort(key=lambda c: (c.closest_approach_s, c.row))
    info = {
        "stars_searched": n_searched, "prefiltered": n_hits,
        "screened": n_screened, "candidates": len(candidates),
        "threshold": (f"sky-plane distance of the geocentric ray from the outer-ring ellipse "
                      f"(R_out = {body.outer_ring_km:g} km) <= R_E {EARTH_RADIUS_KM} km + margin "
                      f"{margin_km:g} km"),
        "threshold_km": EARTH_RADIUS_KM + margin_km, "margin_km": margin_km,
        "margin_from": margin_from,
        "prefilter": (f"k-d tree on the planet's geocentric path, {node_step_s:g} s nodes; circle "
                      f"radius {threshold:.0f} km at the planet ({math.degrees(path.theta_rad) * 3600:.2f}"
                      " arcsec) plus half a node step and each star's motion allowance"),
        "search_nodes_utc": [_utc(lo), _utc(hi)],
    }
    if partitions is not None:
        info["partitions"] = partitions
    return candidates, skipped, info


def find_events(body, table, window, observers, *, kernels=None,
                corrections: Corrections = Corrections(), margin_km: float | None = None,
                node_step_s: float = DEFAULT_NODE_STEP_S, include_misses: bool = False,
                progress=None, engine: str = "local", scheduler: str | None = None,
                jobs: int = 1) -> SearchResult:
    """Candidate events of a catalog over a window for each observer (all three stages).

    ``observers`` is a list of :class:`occplan.ephemeris.Observer` or of
    :class:`occplan.catalogs.Site` (whose telescope path is kept for the ranking).  Events
    whose chord misses every ring region at that observer are dropped unless
    ``include_misses``.  ``jobs`` processes share the observers' tracks
    (:func:`occplan.parallel.map_indexed`; 0: one per core).
    """
    from .parallel import map_indexed
    from .catalogs import Site

    if not observers:
        raise InputError("no observer: give --sites FILE (and --site NAME ...) or --geocentre")
    eph = get_ephemeris(tuple(str(k) for k in (kernels or [])))
    candidates, skipped, info = search_candidates(
        body, table, window, kernels=kernels, corrections=corrections, margin_km=margin_km,
        node_step_s=node_step_s, progress=progress, engine=engine, scheduler=scheduler)
    margin_km = info["margin_km"]  # the one the search used (given, or from the errors)
    pairs = [(o.observer(), o) if isinstance(o, Site) else (o, None) for o in observers]
    events = []
    misses = 0
    work = [(cand, obs, site) for cand in candidates for obs, site in pairs]

    def one(i):
        cand, obs, site = work[i]
        try:
            return topocentric_event(eph, body, cand, obs, corrections, margin_km, site)
        except GeometryError as exc:
            return f"{obs.name}: {exc}"

    done = map_indexed(one, len(work), jobs, progress, "observer tracks")
    for (cand, _obs, _site), ev in zip(work, done):
        if isinstance(ev, str):
            skipped.append((cand.star_id, ev))
        elif ev.crosses_rings or include_misses:
            events.append(ev)
        else:
            misses += 1
    events.sort(key=lambda e: (e.closest_approach_s, e.site_name))
    t0, t1 = window_tdb_s(window)
    meta = {
        "occplan_version": __version__, "body": body.name, "body_file": body.path,
        "start_utc": _utc(t0), "end_utc": _utc(t1),
        "observers": [o.describe() | ({"telescope": s.telescope,
                                       "min_altitude_deg": s.min_altitude_deg} if s else {})
                      for o, s in pairs],
        "kernels": [k["file"] for k in eph.kernels()],
        "corrections": {"planet_deflection": bool(corrections.deflection),
                        "barycentre_only": bool(corrections.barycentre_only),
                        "aberration": "none (astrometric star and planet)"},
        "search": info,
        "observer_misses": misses,
        "skipped": [{"star_id": s, "reason": r} for s, r in skipped],
        "closest_approach": "time of the minimum ring-plane radius for that observer",
    }
    report = getattr(table, "report", None)
    if report is not None:
        meta["catalog"] = report.describe()
    return SearchResult(body=body, candidates=candidates, events=events, skipped=skipped,
                        meta=meta)
