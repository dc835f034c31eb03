"""Which ring regions and resonance zones a chord crosses, and what it takes to resolve them.

For each side of the chord (ingress and egress are two separate radial profiles) and each
resonance zone [zone_inner_km, zone_outer_km], the crossing gives: entry and exit times, the
time the ray crosses the resonance radius, ring longitude, radial velocity, whether the planet
hides it, the shortest wavelength to resolve and the sampling interval this needs,

    dt_req = lambda_min / (N |dr/dt|)      (N samples per wavelength, default 4; 2 = Nyquist),

and the achievable radial resolution.  Resolution limits are projected from the sky plane to
ring radius by |grad r| (km of radius per km in the sky plane): with u along the rings' long
axis and v along the projected pole, r^2 = u^2 + v^2 / sin^2 B*, so
|grad r| = sqrt(u^2 + v^2 / sin^4 B*) / r (1 along the long axis, 1/|sin B*| along the
short one).  The achievable resolution combines in quadrature the radial distance covered in
one sample (|dr/dt| x cadence), the Fresnel scale sqrt(lambda D / 2) and the star's projected
diameter, each projected by |grad r|.  A zone is resolvable when that is below lambda_min / 2
(docs/features_and_scoring.md, section 2) and, when the signal to noise could be evaluated, the SNR per resolution
element reaches ``min_snr``.

Sky-plane polygons (shapely): the oblate planet's disk is an ellipse with semi-axes R_eq and
sqrt(R_eq^2 sin^2 B + R_pol^2 cos^2 B), short axis along the projected pole; a ring of radius
r is an ellipse r x r |sin B*|.  The chord is a line with time as its third coordinate, so its
intersection with the disk gives the planet-hidden intervals directly.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from .geometry import Track

if TYPE_CHECKING:  # shapely is imported where it is used (a fast `occplan --help`)
    from shapely.geometry import Polygon

DEFAULT_SAMPLES_PER_WAVELENGTH = 4.0
NYQUIST_SAMPLES_PER_WAVELENGTH = 2.0
DEFAULT_MIN_SNR = 3.0
# features whose radius a chord locates even when it does not resolve their profile: a step
# (edge) or a dip (narrow ring) is timed to about one resolution element over its SNR
LOCATED = ("edge", "narrow ring")
ELLIPSE_VERTICES = 1440  # chord error of the polygon: R (1 - cos(pi/1440)) = 0.14 km at 60,000 km


# --------------------------------------------------------------------------- sky polygons


def ellipse(a_km: float, b_km: float, pole_angle_deg: float, n: int = ELLIPSE_VERTICES) -> Polygon:
    """Sky-plane ellipse (f east, g north, km): semi-axis a along the rings' long axis,
    b along the projected pole at position angle P."""
    from shapely.geometry import Polygon

    th = np.linspace(0.0, 2.0 * np.pi, n, endpoint=False)
    u, v = a_km * np.cos(th), b_km * np.sin(th)
    p = math.radians(pole_angle_deg)
    f = u * math.cos(p) + v * math.sin(p)
    g = -u * math.sin(p) + v * math.cos(p)
    return Polygon(np.column_stack([f, g]))


def planet_disk(body, opening_angle_deg: float, pole_angle_deg: float) -> Polygon:
    """The oblate planet's outline on the sky (km from its centre).

    Pass the star elevation B* for the planet's shadow along the star's rays (what hides the
    star); the observer's B gives the outline seen from the observer.  From the Earth the two
    differ by ~1e-3 deg (a few hundred metres on the disk)."""
    b = math.radians(opening_angle_deg)
    minor = math.sqrt((body.equatorial_radius_km * math.sin(b)) ** 2
                      + (body.polar_radius_km * math.cos(b)) ** 2)
    return ellipse(body.equatorial_radius_km, minor, pole_angle_deg)


def ring_annulus(inner_km: float, outer_km: float, star_elevation_deg: float,
                 pole_angle_deg: float):
    s = abs(math.sin(math.radians(star_elevation_deg)))
    outer = ellipse(outer_km, outer_km * s, pole_angle_deg)
    inner = ellipse(inner_km, inner_km * s, pole_angle_deg)
    return outer.difference(inner)


def far_side(polygon, star_elevation_deg: float, pole_angle_deg: float, size_km: float):
    """The part of a ring polygon behind the planet's sky plane (hidden where on the disk).

    A ring point at sky offset (u, v) lies at depth -v cot(B*) along the line of sight, so the
    far half is the one with v sign(B*) < 0.
    """
    from shapely.geometry import Polygon

    p = math.radians(pole_angle_deg)
    e_v = np.array([math.sin(p), math.cos(p)])
    e_u = np.array([math.cos(p), -math.sin(p)])
    sgn = -1.0 if star_elevation_deg > 0 else 1.0
    big = 4.0 * size_km
    corners = [big * e_u, big * e_u + sgn * big * e_v, -big * e_u + sgn * big * e_v, -big * e_u]
    return polygon.intersection(Polygon(corners))


def hidden_intervals(track: Track) -> list[tuple[float, float]]:
    """(start_s, end_s) intervals when the planet's disk hides the star (shapely).

    Uses the disk at mid-chord (B and P change by < 1e-4 deg over a chord).
    """
    from shapely.geometry import LineString

    m = track.meta
    disk = planet_disk(track.body, m["star_elevation_deg"], m["pole_position_angle_deg"])
    t0 = float(track.tdb_s[0])
    pts = np.column_stack([track.sky_f_km, track.sky_g_km, track.tdb_s - t0])
    pts = pts[np.isfinite(pts).all(axis=1)]  # nan: the ray passes the planet behind the observer
    line = LineString(pts if len(pts) > 1 else [])
    inter = line.intersection(disk)
    out = []
    parts = getattr(inter, "geoms", [inter])
    for part in parts:
        if isinstance(part, LineString) and not part.is_empty:
            z = np.array(part.coords)[:, 2]
            out.append((t0 + float(z.min()), t0 + float(z.max())))
    return sorted(out)


class SkyScene:
    """The planet's disk and the ring regions on the sky for one chord (built once)."""

    def __init__(self, body, opening_angle_deg: float, star_elevation_deg: float,
                 pole_angle_deg: float):
        self.body = body
        self.disk = planet_disk(body, star_elevation_deg, pole_angle_deg)
        self.rings = {r.name: ring_annulus(r.inner_km, r.outer_km, star_elevation_deg, pole_angle_deg)
                      for r in body.rings}

    @classmethod
    def for_track(cls, track: Track) -> "SkyScene":
        m = track.meta
        return cls(track.body, m["opening_angle_deg"], m["star_elevation_deg"],
                   m["pole_position_angle_deg"])


# --------------------------------------------------------------------------- zone crossings


def radial_projection_factor(track: Track, when_s) -> np.ndarray:
    """|grad r| in the sky plane (km of ring radius per km on the sky) at the given times."""
    v = track.interp(np.atleast_1d(when_s))
    f, g = v["sky_f"], v["sky_g"]
    p = np.arctan2(v["pole_sin"], v["pole_cos"])
    sb = np.sin(v["star_elevation"])
    u = f * np.cos(p) - g * np.sin(p)
    w = f * np.sin(p) + g * np.cos(p)
    r = np.hypot(u, w / sb)
    return np.sqrt(u * u + (w / sb**2) ** 2) / r


def ray_length_ratio(track: Track, when_s: float) -> float:
    """Distance from the observer to the ring point along the ray at ``when_s``, over the
    observer-planet distance the resolution limits were computed for (1 to 1e-4 from Earth;
    it matters for a spacecraft near the planet)."""
    v = track.interp(np.array([when_s]))
    return float(v["ray_length"][0] / track.meta["distance_km"])


def times_at_radius(track: Track, radius_km: float) -> np.ndarray:
    """All times in the window when the chord crosses ring radius ``radius_km`` (sorted)."""
    return crossing_times_many(track, np.array([float(radius_km)]))[0]


def crossing_times_many(track: Track, radii_km) -> list[np.ndarray]:
    """Crossing times of many radii at once (see :func:`occplan.geometry.crossing_times`)."""
    from .geometry import crossing_times

    return crossing_times(track.interp, radii_km, float(track.tdb_s[0]), float(track.tdb_s[-1]))


def sides(track: Track) -> list[tuple[str, float, float]]:
    """The chord's radial profiles: ('ingress', start, closest approach) and ('egress', ...)."""
    t0, t1, ca = float(track.tdb_s[0]), float(track.tdb_s[-1]), track.closest_approach_s
    out = []
    if ca > t0:
        out.append(("ingress", t0, ca))
    if ca < t1:
        out.append(("egress", ca, t1))
    return out


@dataclass
class ZoneCrossing:
    """One feature (:class:`occplan.features.Feature`) crossed on one side of the chord."""

    feature: object  # occplan.features.Feature
    side: str
    time_s: float  # crossing of the resonance radius (nan if that side does not reach it)
    start_s: float  # entering the feature's zone
    end_s: float  # leaving it
    radial_velocity_km_s: float  # at the resonance radius (or mid-zone)
    max_radial_speed_km_s: float  # largest |dr/dt| inside the zone
    ring_longitude_deg: float
    behind_planet: bool
    feature_scale_km: float  # the scale that must be resolved (see feature_scale_km())
    required_interval_s: float
    achievable_resolution_km: float
    limit: str  # which term dominates the achievable resolution
    resolvable: bool
    reasons: list = field(default_factory=list)
    partial: bool = False  # the side does not cover the whole zone
    resolved_extent_km: float = 0.0  # how much of the zone is resolved
    resolved_fraction: float = 0.0  # resolved_extent / zone width (1 = all of it)
    snr_per_element: float = float("nan")  # SNR of the feature's signal per resolution element
    location_sigma_km: float = float("nan")  # edges, narrow rings: radius located to element / SNR
    transmission: float = float("nan")  # slant transmission exp(-tau/|sin B*|) of the region
    contrast: float = float("nan")  # the feature's signal as a fraction of the unocculted star
    usable: bool | None = None  # observable at the site (None: not evaluated)
    time_sigma_s: float = float("nan")  # 1-sigma of the crossing time (occplan.uncertainty)


def _radius_window(track: Track, side_start: float, side_end: float, r_lo: float, r_hi: float,
                   t_lo, t_hi, r_side):
    """Times [a, b] (within a side) when r lies in [r_lo, r_hi], or None.

    ``t_lo``/``t_hi`` are the crossing times of r_lo and r_hi, ``r_side`` the radii at the
    side's two ends."""
    lo_side, hi_side = min(r_side), max(r_side)
    if r_hi < lo_side or r_lo > hi_side:
        return None
    times = [t for t in np.r_[t_lo, t_hi] if side_start <= t <= side_end]
    inside = [t for t, r in zip((side_start, side_end), r_side) if r_lo <= r <= r_hi]
    pts = sorted(times + inside)
    if not pts:
        return None
    return pts[0], pts[-1]


EDGE_SCALE_FACTOR = 4.0  # an edge's scale L = 4 max(w, F): resolved when the resolution < 2 max(w, F)


def feature_scale_km(feat, fresnel_ring_km: float) -> float:
    """The radial scale L a chord must resolve to record a feature (resolution < L / 2).

    - waves and overlap regions: the shortest wavelength in the zone;
    - edges: 4 max(w, F), w the edge's width and F the Fresnel scale projected to the ring
      plane: an edge sharper than F shows as a Fresnel diffraction pattern about F wide
      (textbook optics), so an edge counts as resolved when the profile's resolution is
      within a factor 2 of max(w, F);
    - narrow rings: the ring's width; corotation zones: the libration width.
    """
    if feat.feature == "edge":
        return EDGE_SCALE_FACTOR * max(feat.scale_km, fresnel_ring_km)
    return max(float(feat.scale_km), 1e-3)


def resolved_extent(feat, resolution_km: float, sampled_km: float = 0.0,
                    scale_km: float | None = None) -> tuple[float, float]:
    """How much of a feature a radial resolution and a sampling step resolve.

    For a wave the wavelength at distance x from resonance is 2 pi ell^2 / x (linear theory,
    :func:`occplan.resonances.wave_zones`; ell^2 = x_1^2 / (4 pi) from the first-wavelength
    distance x_1).  It stays above twice the resolution out to x = pi ell^2 / resolution, and
    above N samples (``sampled_km`` = N |dr/dt| dt) out to x = 2 pi ell^2 / sampled_km.
    Returns (extent_km, fraction of the zone width), the extent measured from the resonance.
    Features without a wave train (edges, narrow rings, corotation zones, overlap regions)
    are all or nothing: resolved when the resolution is below half their scale L and the
    sampling step below L (:func:`feature_scale_km`).
    """
    width = max(feat.zone_outer_km - feat.zone_inner_km, 1e-9)
    x1 = getattr(feat, "first_wavelength_km", float("nan"))
    wave = feat.feature in ("density wave", "bending wave")
    if not wave or not np.isfinite(x1) or x1 <= 0:
        scale = feat.scale_km if scale_km is None else scale_km
        ok = resolution_km < scale / 2.0 and sampled_km <= scale
        return (width if ok else 0.0), (1.0 if ok else 0.0)
    ell2 = x1 * x1 / (4.0 * math.pi)
    extent = min(width, math.pi * ell2 / max(resolution_km, 1e-9))
    if sampled_km > 0:
        extent = min(extent, 2.0 * math.pi * ell2 / sampled_km)
    return extent, extent / width


def _observed_fraction(feat, extent_km: float, r_lo: float, r_hi: float) -> tuple[float, bool]:
    """Fraction of the zone width that is both resolved and crossed by this side's radii
    [r_lo, r_hi]; and whether the side covers the whole zone."""
    width = max(feat.zone_outer_km - feat.zone_inner_km, 1e-9)
    if feat.propagation == "outward":
        lo, hi = feat.zone_inner_km, feat.zone_inner_km + extent_km
    elif feat.propagation == "inward":
        lo, hi = feat.zone_outer_km - extent_km, feat.zone_outer_km
    else:  # all of it when resolved
        lo, hi = (feat.zone_inner_km, feat.zone_outer_km) if extent_km > 0 else (0.0, 0.0)
    overlap = max(0.0, min(hi, r_hi) - max(lo, r_lo))
    # 1 m of slack: the zone's entry and exit times are roots found to 1e-7 s at tens of km/s
    whole = r_lo <= feat.zone_inner_km + 1e-3 and r_hi >= feat.zone_outer_km - 1e-3
    return min(overlap / width, 1.0), whole


def _modelled_edge(region, edge_radius_km: float):
    """'inner' or 'outer' when that edge of ``region`` (mean radius ``edge_radius_km``) has an
    orbit model, else None."""
    orbit = getattr(region, "orbit", None)
    if orbit is None or not np.isfinite(edge_radius_km):
        return None
    which = "inner" if abs(edge_radius_km - region.inner_km) < abs(edge_radius_km - region.outer_km) \
        else "outer"
    o = orbit.edge_orbit(which)
    return which if (o.e > 0 or o.modes or o.inclination_deg) else None


def zone_crossings(track: Track, features, *, cadence_s: float, fresnel_km: float,
                   stellar_diameter_km: float | None,
                   samples_per_wavelength: float = DEFAULT_SAMPLES_PER_WAVELENGTH,
                   snr_function=None, min_snr: float = DEFAULT_MIN_SNR,
                   hidden: list | None = None) -> list[ZoneCrossing]:
    """Every feature the chord crosses, per side.

    Parameters
    ----------
    features : list of occplan.features.Feature
    cadence_s : float
        Sampling interval of the camera (s).
    fresnel_km : float
        Fresnel scale in the sky plane at the distance ``track.meta["distance_km"]`` (km);
        each crossing scales it to the distance of its ring point along the ray (sqrt law).
    stellar_diameter_km : float or None
        The star's diameter projected at that same distance (km), scaled per crossing
        linearly; None when it could not be evaluated: that limit is then left out, and the
        reasons say so.
    snr_function : callable, optional
        ``snr_function(features, element_km, radial_speed_km_s, when_s)`` with arrays (one
        entry per crossing) -> arrays (SNR of each feature's signal per element, slant
        transmission, contrast).
    hidden : list of (start_s, end_s), optional
        Planet-hidden intervals (default: :func:`hidden_intervals`).
    """
    if samples_per_wavelength < NYQUIST_SAMPLES_PER_WAVELENGTH:
        from .errors import InputError

        raise InputError(f"{samples_per_wavelength} samples per wavelength is below the Nyquist "
                         f"bound of {NYQUIST_SAMPLES_PER_WAVELENGTH}")
    hidden = hidden_intervals(track) if hidden is None else hidden
    interp = track.interp
    features = list(features)
    # the third radius times the feature: an edge's ring edge, else the resonance radius
    radii = np.array([[f.zone_inner_km, f.zone_outer_km, f.timing_radius_km] for f in features]
                     ).reshape(-1)
    crossing = crossing_times_many(track, radii) if radii.size else []
    # 1. which features each side crosses, and when
    found = []  # (feature, side, start, end, t_res or nan)
    # narrow rings with an orbit model: their edges' crossings (occplan.ring_orbits), not
    # the circular envelope
    orbit_rings = {reg.name for reg in track.body.rings if getattr(reg, "orbit", None) is not None}
    regions = {reg.name: reg for reg in track.body.rings}
    for side, a, b in sides(track):
        r_side = interp.radius(np.array([a, b]))
        for k, feat in enumerate(features):
            if feat.feature == "narrow ring" and feat.region in orbit_rings:
                ps = [p for p in track.passes if p.region == feat.region and p.side == side]
                if ps:
                    found.append((feat, side, ps[0].start_s, ps[0].end_s,
                                  0.5 * (ps[0].start_s + ps[0].end_s)))
                continue
            if feat.feature == "edge" and feat.region in orbit_rings:
                # an eccentric edge (the B ring's, held by Mimas 2:1): timed at the chord's
                # solved crossing of the edge itself, its zone carried along with it
                edge = _modelled_edge(regions[feat.region], feat.edge_radius_km)
                hits = [c for c in track.crossings if c.region == feat.region
                        and c.edge == edge and c.side == side]
                if edge is not None:
                    if hits:
                        t = hits[0].tdb_s
                        v = max(abs(hits[0].radial_velocity_km_s), 1e-9)
                        half = 0.5 * (feat.zone_outer_km - feat.zone_inner_km) / v
                        found.append((feat, side, max(t - half, a), min(t + half, b), t))
                    continue
            win = _radius_window(track, a, b, feat.zone_inner_km, feat.zone_outer_km,
                                 crossing[3 * k], crossing[3 * k + 1], r_side)
            if win is None or win[1] - win[0] < 1e-3:
                continue  # not crossed, or only touched at the chord's turning point
            t_res = [t for t in crossing[3 * k + 2] if a <= t <= b]
            found.append((feat, side, win[0], win[1], t_res[0] if t_res else float("nan")))
    if not found:
        return []
    # 2. the geometry of every crossing at once
    start = np.array([x[2] for x in found])
    end = np.array([x[3] for x in found])
    t_res = np.array([x[4] for x in found])
    when = np.where(np.isfinite(t_res), t_res, 0.5 * (start + end))
    n = len(found)
    speeds = np.abs(interp.radial_velocity(np.concatenate([start, when, end]))).reshape(3, n)
    vmax = speeds.max(axis=0)
    v_here = interp.radial_velocity(when)
    grad = radial_projection_factor(track, when)
    vals = interp(when)
    scale = vals["ray_length"] / track.meta["distance_km"]
    u = interp.in_plane(when)[0]
    lon = np.degrees(np.arctan2(u[1], u[0])) % 360.0
    r_ends = interp.radius(np.concatenate([start, end])).reshape(2, n)
    fresnel_ring = fresnel_km * np.sqrt(scale) * grad
    lam = np.array([feature_scale_km(x[0], fr) for x, fr in zip(found, fresnel_ring)])
    if orbit_rings:  # a narrow eccentric ring's width where the chord crosses it
        from .ring_orbits import edge_radius_km

        regs = {reg.name: reg for reg in track.body.rings}
        for i, (feat, *_rest) in enumerate(found):
            if feat.feature == "narrow ring" and feat.region in orbit_rings:
                orbit = regs[feat.region].orbit
                lon_rad = math.radians(lon[i])
                lam[i] = float(edge_radius_km(orbit, track.body, "outer", lon_rad, when[i])
                               - edge_radius_km(orbit, track.body, "inner", lon_rad, when[i]))
    with np.errstate(divide="ignore"):
        dt_req = np.where(vmax > 0, lam / (samples_per_wavelength * np.where(vmax > 0, vmax, 1.0)),
                          np.inf)
    terms = {"cadence": vmax * cadence_s, "Fresnel scale": fresnel_ring}
    if stellar_diameter_km is not None:
        terms["stellar diameter"] = stellar_diameter_km * scale * grad
    resolution = np.sqrt(sum(t * t for t in terms.values()))
    names = list(terms)
    limits = [names[i] for i in np.argmax(np.vstack(list(terms.values())), axis=0)]
    element = np.maximum(resolution, lam / 2.0)
    snr = np.full(n, np.nan)
    transmission = np.full(n, np.nan)
    contrast = np.full(n, np.nan)
    scored = np.array([x[0].weight > 0 for x in found])
    if snr_function is not None and np.any(scored):
        feats = [x[0] for x, ok in zip(found, scored) if ok]
        s_, t_, c_ = snr_function(feats, element[scored], vmax[scored], when[scored])
        snr[scored], transmission[scored], contrast[scored] = s_, t_, c_
        # a narrow ring narrower than the resolution element fills only lam / element of it:
        # its signal per element is diluted by that fraction (the noise is not), so an
        # unresolved ring is measured by its equivalent depth
        narrow = np.array([x[0].feature == "narrow ring" for x in found])
        fill = np.where(narrow & (element > lam), lam / np.where(element > 0, element, 1.0), 1.0)
        snr, contrast = snr * fill, contrast * fill
    # 3. one record per crossing
    hidden_at = np.zeros(n, dtype=bool)
    for h0, h1 in hidden:
        hidden_at |= (when >= h0) & (when <= h1)
    out = []
    for i, (feat, side, _, _, _) in enumerate(found):
        reasons = []
        if stellar_diameter_km is None:
            reasons.append("stellar diameter not evaluated (needs the star's colour)")
        ok = bool(resolution[i] < lam[i] / 2.0)
        what = "shortest wavelength" if feat.feature in ("density wave", "bending wave",
                                                        "overlap region") else "feature scale"
        if not ok:
            reasons.insert(0, f"achievable {resolution[i]:.2f} km >= half the {what} "
                              f"({lam[i] / 2:.2f} km), limited by the {limits[i]}")
        if cadence_s > dt_req[i]:
            ok = False
            reasons.append(f"cadence {cadence_s:g} s is slower than the {dt_req[i]:.3g} s "
                           f"needed for {samples_per_wavelength:g} samples per {what}")
        if not scored[i]:
            reasons.append("corotation zone: listed, not scored")
        elif snr_function is None:
            reasons.append("SNR not evaluated (needs the star's magnitude)")
        elif not np.isfinite(snr[i]):
            ok = False
            reasons.append("SNR undefined (the planet is below the horizon then, or the "
                           "background is unknown)")
        elif snr[i] < min_snr:
            ok = False
            reasons.append(f"feature SNR per resolution element {snr[i]:.1f} < {min_snr:g} "
                           f"(ring transmission {transmission[i]:.3g}, contrast {contrast[i]:.3g})")
        extent, _ = resolved_extent(feat, resolution[i],
                                    samples_per_wavelength * vmax[i] * cadence_s, scale_km=lam[i])
        fraction, whole = _observed_fraction(feat, extent, float(r_ends[:, i].min()),
                                             float(r_ends[:, i].max()))
        if feat.feature == "narrow ring" and feat.region in orbit_rings:
            whole, fraction = True, (1.0 if extent > 0 else 0.0)  # both edges were crossed
        if not whole:
            ok = False
            reasons.append("only part of the zone crossed on this side")
        behind = bool(hidden_at[i])
        out.append(ZoneCrossing(
            feature=feat, side=side, time_s=float(t_res[i]), start_s=float(start[i]),
            end_s=float(end[i]), radial_velocity_km_s=float(v_here[i]),
            max_radial_speed_km_s=float(vmax[i]), ring_longitude_deg=float(lon[i]),
            behind_planet=behind, feature_scale_km=float(lam[i]),
            required_interval_s=float(dt_req[i]),
            achievable_resolution_km=float(resolution[i]), limit=limits[i],
            resolvable=bool(ok and not behind and scored[i]),
            reasons=reasons + (["behind the planet"] if behind else []),
            partial=not whole, snr_per_element=float(snr[i]),
            transmission=float(transmission[i]), contrast=float(contrast[i]),
            location_sigma_km=(float(element[i] / snr[i]) if feat.feature in LOCATED
                               and np.isfinite(snr[i]) and snr[i] > 0 else float("nan")),
            resolved_extent_km=0.0 if behind else extent,
            resolved_fraction=0.0 if behind else fraction,
        ))
    out.sort(key=lambda z: (z.start_s, z.feature.resonance_radius_km))
    return out
