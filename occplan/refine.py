"""Exact geocentric closest approaches of many stars at once (stage 2 of the catalog search).

The same physics as :func:`occplan.geometry.exact_geometry` and the same search as the
per-star refinement (:func:`occplan.search.refine_candidate`), arranged for thousands of
stars:

- **Nodes on one grid, ephemeris once.**  Every run (a star and a stretch of the planet's
  path where it is within reach) gets spline nodes on a common grid ``h`` = path step / 30
  (120 s for the 1 h path nodes), two more on each side, like
  :func:`occplan.geometry.track_nodes`.  The Earth, the Sun and the planet centre are
  evaluated once, every 600 s where some run needs them (:class:`PathEphemeris`), and
  interpolated at every node and ring time by Lagrange cubics (error below 1e-5 km).
- **Per (star, node)**, vectorised over all pairs: the star's astrometric direction (the
  space-motion formula of skyfield's ``Star.observe``: position and velocity from
  parallax, proper motion and radial velocity, light-time difference dt = u.O/c), the Sun's
  differential deflection, three light-time passes to the ring-plane intercept, the
  planet's deflection, the intercept and the sky plane.
- **Splines of all runs at once.**  Cubic splines (not-a-knot, as in the track) on the
  node index, one scipy call per node count; their coefficients are gathered per segment
  so any (run, time) can be evaluated in one vectorised expression.
- **Minima and sky distance.**  Local minima of r(t): sign changes of u.du/dt on the nodes,
  solved together by ``scipy.optimize.elementwise.find_root``; the distance of the ray from
  the outer-ring ellipse over each minimum's basin sampled every 30 s as before, then a
  vectorised golden-section search to 0.01 s around the smallest sample.

``tests/test_refine.py`` compares this with the per-star refinement on a few hundred stars.
"""

from __future__ import annotations

import math

import numpy as np

from .constants import SECONDS_PER_DAY, SPEED_OF_LIGHT_KM_S
from .ephemeris import J2000_TDB_JD, Observer, time_from_tdb_s
from .errors import GeometryError
from .geometry import (EDGE_ON_LIMIT_DEG, LIGHT_TIME_PASSES, Corrections, _check_edge_on, _deflection_by_sun,
                       deflect_offset,
                       _sin_elevation, intercept_reach_km)

GRID_PER_PATH_STEP = 30  # spline nodes per path node step (120 s for 1 h path nodes)
EPHEMERIS_STEP_S = 600.0
SKY_SAMPLE_S = 30.0  # spacing of the sky-distance samples (as the per-star refinement)
GOLDEN_TOL_S = 0.01
PAIR_BLOCK = 100_000  # (star, node) pairs evaluated at a time: bounds the memory (~250 MB)
# skyfield's constants for the star's space motion (skyfield.constants; IAU 2012 au)
AU_KM = 149597870.700
C_AU_DAY = SPEED_OF_LIGHT_KM_S * SECONDS_PER_DAY / AU_KM
ZERO_PARALLAX_MAS = 1.0e-6  # skyfield's stand-in for a missing parallax (1 Gpc)

_Q = ("u_node", "u_perp", "sky_f", "sky_g", "opening_angle", "star_elevation", "pole_cos",
      "pole_sin", "distance")
_QI = {k: i for i, k in enumerate(_Q)}


def _dot(a, b):
    return np.einsum("i...,i...->...", a, b)


def _unit(v):
    return v / np.sqrt(_dot(v, v))


def _cross(a, b):
    """a x b for (3, N) arrays (np.cross is several times slower on these shapes)."""
    return np.array([a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2],
                     a[0] * b[1] - a[1] * b[0]])


# --------------------------------------------------------------------------- star motion


def star_motion(table):
    """Barycentric position (au) and velocity (au/day) of each star, shape (3, N) each.

    Notes
    -----
    The space-motion model of skyfield's ``Star`` (from the Hipparcos and Gaia convention):
    distance 1 / sin(parallax), a Doppler factor k = 1 / (1 - v_r/c), proper motions scaled
    by k / (parallax 365.25); a missing or non-positive parallax is 1e-6 mas.
    """
    plx = np.where(np.isfinite(table.parallax_mas) & (table.parallax_mas > 0.0),
                   table.parallax_mas, ZERO_PARALLAX_MAS)
    rv = np.nan_to_num(table.rv_km_s)
    dist = 1.0 / np.sin(np.radians(plx / 3.6e6))
    ra, dec = np.radians(table.ra_deg), np.radians(table.dec_deg)
    ca, sa, cd, sd = np.cos(ra), np.sin(ra), np.cos(dec), np.sin(dec)
    pos = np.array([dist * cd * ca, dist * cd * sa, dist * sd])
    k = 1.0 / (1.0 - rv / SPEED_OF_LIGHT_KM_S)
    pmr = table.pm_ra_mas_yr / (plx * 365.25) * k
    pmd = table.pm_dec_mas_yr / (plx * 365.25) * k
    rvl = rv * SECONDS_PER_DAY / AU_KM * k
    vel = np.array([-pmr * sa - pmd * sd * ca + rvl * cd * ca,
                    pmr * ca - pmd * sd * sa + rvl * cd * sa,
                    pmd * cd + rvl * sd])
    return pos, vel


def star_distance_km(table) -> np.ndarray:
    """Parallax distance of each star (km; inf without a positive parallax)."""
    p = np.asarray(table.parallax_mas, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        d = AU_KM / np.tan(np.radians(p / 3.6e6))
    return np.where(np.isfinite(p) & (p > 0.0), d, np.inf)


# --------------------------------------------------------------------------- shared ephemeris


class PathEphemeris:
    """The geocentre, the Sun and the planet centre (barycentric ICRF, km) tabulated every
    ``EPHEMERIS_STEP_S`` where the runs need them, interpolated by four-point Lagrange cubics.

    Notes
    -----
    The cubic's error is below h^4 |x^(4)| / 40 (h the step): with the fastest terms in the
    table, the Earth's monthly wobble about the Earth-Moon barycentre (4,670 km at 2.66e-6
    rad/s) and Io's pull on Jupiter's centre (about 20 km at 4.1e-5 rad/s), that is under
    1e-5 km at 600 s (``tests/test_refine.py`` compares with the exact ephemeris).  Each run
    [a, b] needs [a - (2 D + 10 R_out)/c, b] (the light time to the farthest intercept
    looked at, :func:`occplan.geometry.intercept_reach_km`) plus its pads.
    """

    def __init__(self, eph, body, starts_s, ends_s, corrections: Corrections,
                 step_s: float = None, max_light_time_s: float = 0.0, anchor_s: float = None):
        step = EPHEMERIS_STEP_S if step_s is None else float(step_s)
        first = float(np.min(starts_s)) - max_light_time_s
        # on a grid through anchor_s: the same stars give the same numbers whatever the batch
        anchor = first if anchor_s is None else float(anchor_s)
        self.step, self.origin = step, anchor + math.floor((first - anchor) / step) * step
        m_lo = np.floor((np.asarray(starts_s) - max_light_time_s - self.origin) / step).astype(np.int64) - 2
        m_hi = np.ceil((np.asarray(ends_s) - self.origin) / step).astype(np.int64) + 3
        self.base = int(m_lo.min())
        size = int(m_hi.max()) - self.base + 1
        diff = np.zeros(size + 1, dtype=np.int64)
        np.add.at(diff, m_lo - self.base, 1)
        np.add.at(diff, m_hi - self.base + 1, -1)
        need = np.cumsum(diff)[:-1] > 0
        self.index = np.full(size, -1, dtype=np.int64)
        self.index[need] = np.arange(int(need.sum()))
        t = self.origin + (self.base + np.nonzero(need)[0]) * step
        when = time_from_tdb_s(t)
        self.obs = eph.observer_km(Observer.geocentre(), when).reshape(3, -1)
        self.planet = eph.planet_km(body, when, barycentre_only=corrections.barycentre_only).reshape(3, -1)
        self.sun = eph.sun_km(when).reshape(3, -1) if corrections.deflection else None

    def __call__(self, table, tdb_s):
        x = (np.asarray(tdb_s, dtype=float) - self.origin) / self.step
        m0 = np.floor(x).astype(np.int64)
        s = x - m0
        w = ((-s * (s - 1) * (s - 2) / 6.0), (s + 1) * (s - 1) * (s - 2) / 2.0,
             (-(s + 1) * s * (s - 2) / 2.0), (s + 1) * s * (s - 1) / 6.0)
        out = 0.0
        for k, wk in enumerate(w):
            idx = self.index[m0 - 1 + k - self.base]
            if np.any(idx < 0):
                raise RuntimeError("ephemeris table does not cover the time asked")
            out = out + table[:, idx] * wk
        return out


def path_ephemeris(eph, body, starts_s, ends_s, corrections: Corrections,
                   anchor_s: float = None) -> PathEphemeris:
    """A :class:`PathEphemeris` for runs spanning [starts, ends] (TDB s)."""
    t = np.array([np.min(starts_s), np.max(ends_s)])
    when = time_from_tdb_s(t)
    dist = np.linalg.norm(eph.planet_km(body, when).reshape(3, -1)
                          - eph.observer_km(Observer.geocentre(), when).reshape(3, -1), axis=0)
    d_max = float(dist.max()) + 2.0 * AU_KM  # the Earth moves the distance by < 2 au
    lt = float(intercept_reach_km(body, d_max)) / SPEED_OF_LIGHT_KM_S + EPHEMERIS_STEP_S
    return PathEphemeris(eph, body, starts_s, ends_s, corrections, max_light_time_s=lt,
                         anchor_s=anchor_s)


def pair_geometry(body, ephem: PathEphemeris, t, pos, vel, epoch_jd, star_dist_km,
                  corrections: Corrections):
    """Exact geometry at (star, node) pairs: times ``t`` (TDB s), the pairs' star
    position/velocity (3, P), epochs (P,) and distances (P,).

    Returns a (len(_Q), P) array of the spline quantities and the ``valid`` flags, as
    :func:`occplan.geometry.exact_geometry` defines them.
    """
    o = ephem(ephem.obs, t)
    planet = ephem(ephem.planet, t)
    # astrometric star direction (skyfield Star.observe from the geocentre)
    o_au = o / AU_KM
    u0 = pos / np.linalg.norm(pos, axis=0)
    dt_day = _dot(u0, o_au) / C_AU_DAY
    star = pos + vel * (J2000_TDB_JD + t / SECONDS_PER_DAY + dt_day - epoch_jd)
    s = _unit(star - o_au)
    t_ring = t - np.linalg.norm(planet - o, axis=0) / SPEED_OF_LIGHT_KM_S
    if corrections.deflection:
        sun = ephem(ephem.sun, t)
        e_vec = o - sun
        s = _unit(s + _deflection_by_sun(s, s, e_vec)
                  - _deflection_by_sun(_unit(planet - o), _unit(planet - sun), e_vec))
    for _ in range(LIGHT_TIME_PASSES):
        planet = ephem(ephem.planet, t_ring)
        n = body.pole.unit_vector(J2000_TDB_JD + t_ring / SECONDS_PER_DAY).reshape(3, -1)
        lam = _dot(n, planet - o) / _sin_elevation(n, s)
        reach = intercept_reach_km(body, np.linalg.norm(planet - o, axis=0))
        t_ring = t - np.clip(lam, 0.0, reach) / SPEED_OF_LIGHT_KM_S
    q = planet - o
    distance = np.linalg.norm(q, axis=0)
    qs = _dot(q, s)
    d = qs * s - q
    if corrections.deflection:
        d, _ = deflect_offset(d, distance, body)
    origin = planet + d - qs * s
    lam = _dot(n, planet - origin) / _sin_elevation(n, s)
    rho = origin + lam * s - planet
    ray_length = _dot(origin - o, s) + lam
    reach = np.minimum(intercept_reach_km(body, distance), star_dist_km)
    valid = (qs > 0.0) & (ray_length > 0.0) & (ray_length < reach) & np.all(np.isfinite(rho), axis=0)
    zero = np.zeros_like(n[0])
    node = _unit(np.array([-n[1], n[0], zero]))  # z x n
    perp = _cross(n, node)
    east = np.array([-s[1], s[0], zero])  # z x s
    pole_star = np.sqrt(_dot(east, east)) < 1e-12
    east[:, pole_star] = np.array([0.0, 1.0, 0.0])[:, None]
    east = _unit(east)
    north = _cross(s, east)
    pole_angle = np.arctan2(_dot(n, east), _dot(n, north))
    out = np.empty((len(_Q), t.size))
    out[0], out[1] = _dot(rho, node), _dot(rho, perp)
    out[2], out[3] = _dot(d, east), _dot(d, north)
    out[4] = np.arcsin(np.clip(-_dot(n, q) / distance, -1, 1))
    out[5] = np.arcsin(np.clip(_dot(n, s), -1, 1))
    out[6], out[7] = np.cos(pole_angle), np.sin(pole_angle)
    out[8] = distance
    return out, valid


# --------------------------------------------------------------------------- splines


class RunSplines:
    """Cubic splines of every run, evaluated at any (run, node-index coordinate x)."""

    def __init__(self, n_nodes, values, valid):
        from scipy.interpolate import CubicSpline

        # runs are sorted by node count; nodes of run r are values[:, noff[r]:noff[r] + n[r]]
        self.n = np.asarray(n_nodes)
        self.noff = np.r_[0, np.cumsum(self.n)[:-1]]
        self.soff = self.noff - np.arange(self.n.size)
        self.valid_nodes = valid
        q = values.shape[0]
        coef = np.empty((4, int(np.sum(self.n - 1)), q))
        bounds = np.r_[0, np.nonzero(np.diff(self.n))[0] + 1, self.n.size]
        for lo, hi in zip(bounds[:-1], bounds[1:]):  # one scipy call per node count
            m, g = int(self.n[lo]), hi - lo
            y = values[:, self.noff[lo]:self.noff[lo] + m * g].reshape(q, g, m)
            c = CubicSpline(np.arange(m, dtype=float), y, axis=2).c  # (4, m-1, q, g)
            s0 = self.soff[lo]
            coef[:, s0:s0 + g * (m - 1)] = c.transpose(0, 3, 1, 2).reshape(4, g * (m - 1), q)
        self.coef = coef  # (power, segment, quantity)

    def _locate(self, run, x):
        i = np.clip(np.floor(x).astype(int), 0, self.n[run] - 2)
        return self.soff[run] + i, x - i, self.noff[run] + i

    def __call__(self, run, x, keys=_Q, deriv=False):
        seg, s, _ = self._locate(run, x)
        out = np.empty((len(keys), s.size))
        for i, key in enumerate(keys):
            c = self.coef[:, seg, _QI[key]]
            if deriv:
                out[i] = (3.0 * c[0] * s + 2.0 * c[1]) * s + c[2]
            else:
                out[i] = ((c[0] * s + c[1]) * s + c[2]) * s + c[3]
        return out

    def valid(self, run, x):
        _, _, node = self._locate(run, x)
        return self.valid_nodes[node] & self.valid_nodes[node + 1]

    def half_dr2(self, run, x):
        """u.du/dx (nan where the intercept is not real)."""
        v = self(run, x, ("u_node", "u_perp"))
        dv = self(run, x, ("u_node", "u_perp"), deriv=True)
        g = v[0] * dv[0] + v[1] * dv[1]
        return np.where(self.valid(run, x), g, np.nan)

    def sky_distance_km(self, run, x, outer_ring_km: float):
        from .search import distance_to_ellipse

        f, g, pc, ps, se = self(run, x, ("sky_f", "sky_g", "pole_cos", "pole_sin", "star_elevation"))
        p = np.arctan2(ps, pc)
        u = f * np.cos(p) - g * np.sin(p)
        w = f * np.sin(p) + g * np.cos(p)
        return distance_to_ellipse(u, w, outer_ring_km, outer_ring_km * np.abs(np.sin(se)))


# --------------------------------------------------------------------------- the refinement


def _segments(counts):
    """(group index, position within group) of a flat array made of groups of ``counts``."""
    counts = np.asarray(counts, dtype=int)
    group = np.repeat(np.arange(counts.size), counts)
    start = np.r_[0, np.cumsum(counts)[:-1]]
    return group, np.arange(group.size) - start[group], start


def refine_runs(eph, body, stars, run_star, run_a_s, run_b_s, grid_step_s, window,
                corrections: Corrections, margin_km: float, limit_km: float,
                origin_s: float | None = None, ephem: PathEphemeris | None = None):
    """Geocentric closest approaches of all runs (see the module notes).

    Parameters
    ----------
    stars : StarTable of the stars refined
    run_star : (R,) int, index into ``stars`` of each run
    run_a_s, run_b_s : (R,) run bounds, TDB s, on the grid ``grid_step_s``
    window : (t0, t1) TDB s; closest approaches outside are dropped
    limit_km : sky-distance threshold (R_E + margin)
    origin_s : a time on the grid (default: the first run's start minus two steps)
    ephem : a :class:`PathEphemeris` covering the runs (default: built for them)

    Returns
    -------
    dict of arrays per candidate (``star``, ``closest_approach_s``, ``min_ring_radius_km``,
    ``sky_distance_km``, ``sky_distance_time_s``, ``sky_speed_km_s``, ``opening_angle_deg``,
    ``star_elevation_deg``, ``distance_km``, ``at_window_edge``) and a list of
    (star index, reason) of runs skipped (rings edge-on).
    """
    h = float(grid_step_s)
    run_star = np.asarray(run_star, dtype=int)
    a_s, b_s = np.asarray(run_a_s, float), np.asarray(run_b_s, float)
    empty = {k: np.array([]) for k in ("star", "closest_approach_s", "min_ring_radius_km",
                                       "sky_distance_km", "sky_distance_time_s",
                                       "sky_speed_km_s", "opening_angle_deg",
                                       "star_elevation_deg", "distance_km", "at_window_edge")}
    if run_star.size == 0:
        return empty, []
    origin = float(np.min(a_s)) - 2.0 * h if origin_s is None else float(origin_s)
    m_a = np.rint((a_s - origin) / h).astype(np.int64)
    m_b = np.rint((b_s - origin) / h).astype(np.int64)
    n = (m_b - m_a) + 5
    order = np.argsort(n, kind="stable")
    run_star, m_a, n = run_star[order], m_a[order], n[order]
    node_run, node_k, _ = _segments(n)
    node_m = m_a[node_run] - 2 + node_k
    if ephem is None:
        ephem = path_ephemeris(eph, body, origin + (m_a - 2) * h, origin + (m_a + n - 3) * h,
                               corrections)
    pos, vel = star_motion(stars)
    epoch = np.asarray(stars.epoch_jd_tt, dtype=float)
    sdist = star_distance_km(stars)
    values = np.empty((len(_Q), node_m.size))
    valid = np.empty(node_m.size, dtype=bool)
    for lo in range(0, node_m.size, PAIR_BLOCK):
        sl = slice(lo, lo + PAIR_BLOCK)
        j = run_star[node_run[sl]]
        values[:, sl], valid[sl] = pair_geometry(
            body, ephem, origin + node_m[sl] * h, pos[:, j], vel[:, j], epoch[j], sdist[j],
            corrections)

    # rings edge-on at a node of a run (|B| < 0.01 deg, or B changing sign): skip the run
    b_nodes = values[_QI["opening_angle"]]
    start = np.r_[0, np.cumsum(n)[:-1]]
    worst = np.minimum.reduceat(np.abs(b_nodes), start)
    south = np.signbit(b_nodes).astype(np.int8)
    sign_change = np.maximum.reduceat(south, start) != np.minimum.reduceat(south, start)
    edge_on = sign_change | (np.degrees(worst) < EDGE_ON_LIMIT_DEG)
    skipped = []
    for r in np.nonzero(edge_on)[0]:
        try:
            _check_edge_on({"opening_angle": b_nodes[start[r]:start[r] + n[r]]})
        except GeometryError as exc:
            skipped.append((int(run_star[r]), str(exc)))

    sp = RunSplines(n, values, valid)
    t_first = origin + (m_a - 2) * h  # time of x = 0 of each run
    keep = np.nonzero(~edge_on)[0]

    # local minima of r(t) on [a, b] = x in [2, n - 3]: u.du/dt from - to + between nodes
    gcount = n[keep] - 4
    grp, k, _ = _segments(gcount)
    g_run = keep[grp]
    gx = 2.0 + k
    gv = sp.half_dr2(g_run, gx)
    last = np.r_[grp[1:] != grp[:-1], True]
    first = np.r_[True, grp[1:] != grp[:-1]]
    nxt = np.r_[gv[1:], np.nan]
    bracket = ~last & (gv < 0) & (nxt >= 0)
    mins_run = [g_run[first & (gv >= 0)], g_run[last & (gv < 0)]]
    mins_x = [gx[first & (gv >= 0)], gx[last & (gv < 0)]]
    bi = np.nonzero(bracket)[0]
    if bi.size:
        from scipy.optimize.elementwise import find_root

        rr = g_run[bi]
        res = find_root(lambda x, r: sp.half_dr2(r.astype(int), x), (gx[bi], gx[bi] + 1.0),
                        args=(rr.astype(float),), tolerances={"xatol": 1e-9, "xrtol": 0.0})
        mins_run.append(rr)
        mins_x.append(np.asarray(res.x, dtype=float))
    m_run, m_x = np.concatenate(mins_run), np.concatenate(mins_x)
    o = np.lexsort((m_x, m_run))
    m_run, m_x = m_run[o], m_x[o]
    same_prev = np.r_[False, m_run[1:] == m_run[:-1]]
    same_next = np.r_[m_run[1:] == m_run[:-1], False]
    x_lo = np.where(same_prev, 0.5 * (np.r_[0.0, m_x[:-1]] + m_x), 2.0)
    x_hi = np.where(same_next, 0.5 * (np.r_[m_x[1:], 0.0] + m_x), n[m_run] - 3.0)
    t_ca = t_first[m_run] + m_x * h
    inw = (t_ca >= window[0]) & (t_ca <= window[1])
    m_run, m_x, x_lo, x_hi, t_ca = m_run[inw], m_x[inw], x_lo[inw], x_hi[inw], t_ca[inw]
    if m_run.size == 0:
        return empty, skipped

    # sky distance over each basin: samples every 30 s, then golden section around the least
    span_s = (x_hi - x_lo) * h
    cnt = np.minimum(np.maximum(span_s / SKY_SAMPLE_S, 16), 20000).astype(int)
    grp, k, start = _segments(cnt)
    xs = x_lo[grp] + (x_hi - x_lo)[grp] * k / (cnt[grp] - 1)
    d = sp.sky_distance_km(m_run[grp], xs, body.outer_ring_km)
    dmin = np.minimum.reduceat(d, start)
    at_min = np.nonzero(d == dmin[grp])[0]
    kbest = at_min[np.unique(grp[at_min], return_index=True)[1]]
    kk = k[kbest]
    x_best = xs[kbest]
    lo = np.where(kk > 0, xs[np.maximum(kbest - 1, 0)], x_best)
    hi = np.where(kk < cnt - 1, xs[np.minimum(kbest + 1, xs.size - 1)], x_best)
    gx_, gd_ = _golden(lambda x: sp.sky_distance_km(m_run, x, body.outer_ring_km), lo, hi,
                       GOLDEN_TOL_S / h)
    better = (dmin > 0.0) & (gd_ < dmin)
    d_sky = np.where(better, gd_, dmin)
    x_d = np.where(better, gx_, x_best)
    ok = d_sky <= limit_km
    m_run, m_x, t_ca, d_sky, x_d = m_run[ok], m_x[ok], t_ca[ok], d_sky[ok], x_d[ok]

    v = sp(m_run, m_x, ("u_node", "u_perp", "opening_angle", "star_elevation", "distance"))
    r_min = np.where(sp.valid(m_run, m_x), np.hypot(v[0], v[1]), np.nan)
    dx = 30.0 / h
    f0, g0 = sp(m_run, m_x - dx, ("sky_f", "sky_g"))
    f1, g1 = sp(m_run, m_x + dx, ("sky_f", "sky_g"))
    a_run = t_first[m_run] + 2.0 * h
    b_run = t_first[m_run] + (n[m_run] - 3.0) * h
    out = {
        "star": run_star[m_run], "closest_approach_s": t_ca, "min_ring_radius_km": r_min,
        "sky_distance_km": d_sky, "sky_distance_time_s": t_first[m_run] + x_d * h,
        "sky_speed_km_s": np.hypot(f1 - f0, g1 - g0) / 60.0,
        "opening_angle_deg": np.degrees(v[2]), "star_elevation_deg": np.degrees(v[3]),
        "distance_km": v[4],
        "at_window_edge": (t_ca <= a_run + 1.0) | (t_ca >= b_run - 1.0),
    }
    return out, skipped


def _golden(fun, lo, hi, tol):
    """Vectorised golden-section search for the minimum of ``fun`` on [lo, hi] (each entry)."""
    invphi = (math.sqrt(5.0) - 1.0) / 2.0
    a, b = np.asarray(lo, float).copy(), np.asarray(hi, float).copy()
    c, d = b - invphi * (b - a), a + invphi * (b - a)
    fc, fd = fun(c), fun(d)
    width = float(np.max(b - a, initial=0.0))
    iters = 0 if width <= tol else int(math.ceil(math.log(tol / width) / math.log(invphi))) + 1
    for _ in range(iters):
        left = fc < fd
        b = np.where(left, d, b)
        a = np.where(left, a, c)
        d_new = np.where(left, c, a + invphi * (b - a))
        c_new = np.where(left, b - invphi * (b - a), d)
        fc_keep, fd_keep = fc, fd
        c, d = c_new, d_new
        fnew = fun(np.where(left, c, d))
        fc = np.where(left, fnew, fd_keep)
        fd = np.where(left, fc_keep, fnew)
    x = 0.5 * (a + b)
    return x, fun(x)
