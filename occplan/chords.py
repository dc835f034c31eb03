"""Python API behind `occplan chord` and `occplan aspect`.

>>> from occplan.chords import chord
>>> from occplan.bodies import get_body
>>> from occplan.ephemeris import Observer, StarSpec
>>> res = chord(get_body("saturn"), StarSpec(23.99933, 7.46995), Observer.geocentre(),
...             ("2027-06-15T00:00Z", "2027-06-15T04:00Z"), step_s=60)   # doctest: +SKIP
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import __version__
from .constants import AU_KM
from .errors import InputError
from .ephemeris import Observer, get_ephemeris, time_from_tdb_s, utc_iso
from .geometry import Corrections, Track, check_node_budget, compute_track, window_times

# Sky-plane bound of the interpolated chord against exact geometry where the star is visible
# and within twice the outer ring radius (tests/test_track_properties.py; seen: 5 m next to
# the limbs of Uranus and Neptune, where the planet's deflection bends fastest; under 1 m
# a few planet radii out).
INTERPOLATION_SKY_TOL_M = 10.0

CHORD_COLUMNS = ["time_utc", "ring_radius_km", "ring_longitude_deg", "radial_velocity_km_s",
                 "sky_f_km", "sky_g_km", "opening_angle_deg", "behind_planet", "region"]
ASPECT_COLUMNS = ["time_utc", "opening_angle_deg", "sun_opening_angle_deg",
                  "pole_position_angle_deg", "distance_au", "planet_radius_arcsec",
                  "outer_ring_radius_arcsec", "planet_ra_deg", "planet_dec_deg"]


@dataclass
class ChordResult:
    track: Track
    meta: dict

    @property
    def rows(self) -> list[dict]:
        """One dict per sample (built on demand: the text formats write columns)."""
        return self.track.rows()

    def columns(self) -> dict:
        return self.track.columns()

    def to_table(self):
        """The chord as an astropy QTable: units on every physical column, a UTC Time column
        (:data:`occplan.columns.COLUMN_UNITS`); the metadata in ``.meta``."""
        from .tables import to_astropy

        return to_astropy(self.rows, self.meta, qtable=True)


def crossing_rows(track: Track) -> list[dict]:
    return [
        {"region": c.region, "edge": c.edge, "side": c.side, "boundary_km": c.boundary_km,
         "time_utc": utc_iso(time_from_tdb_s(c.tdb_s)),
         "radial_velocity_km_s": c.radial_velocity_km_s, "behind_planet": c.behind_planet}
        for c in track.crossings
    ]


def pass_rows(track: Track) -> list[dict]:
    return [
        {"region": p.region, "side": p.side, "start_utc": utc_iso(time_from_tdb_s(p.start_s)),
         "end_utc": utc_iso(time_from_tdb_s(p.end_s)), "clipped_by_window": p.clipped}
        for p in track.passes
    ]


def ring_note(track: Track) -> str:
    """One sentence on whether and how the chord reaches the rings."""
    body = track.body
    rmin = track.closest_approach_radius_km
    if not np.isfinite(rmin):
        b, b_star = track.meta["opening_angle_deg"], track.meta["star_elevation_deg"]
        if not np.any(np.isfinite(track.sky_f_km)):
            why = (f"behind the observer: the star is more than 90 deg from {body.name} on "
                   "the sky")
        elif b * b_star > 0:
            why = ("behind the observer: the star and the observer are on the same side of "
                   "the ring plane (B and B* have the same sign)")
        else:
            why = (f"far beyond the planet: the line of sight runs nearly along the ring "
                   f"plane (B* {b_star:+.4f} deg)")
        return f"no ring crossing: the line of sight meets the ring plane of {body.name} only {why}"
    when = utc_iso(time_from_tdb_s(track.closest_approach_s), 0)
    edge = " (at the window edge: widen the window to see the true minimum)" \
        if track.closest_approach_at_edge else ""
    if not track.passes:
        return (f"no ring crossing: the chord stays outside the rings of {body.name} "
                f"(minimum ring radius {rmin:,.0f} km at {when}{edge}; outermost ring edge "
                f"{body.outer_ring_km:,.0f} km)")
    return f"closest approach: ring radius {rmin:,.0f} km at {when}{edge}"


def check_chord_step(t0_s: float, t1_s: float, step_s: float) -> None:
    """Refuse a step longer than the window (a chord needs two samples at least) and a
    window over the memory budget (:func:`occplan.geometry.check_node_budget`).

    Raises
    ------
    InputError
    """
    span = float(t1_s) - float(t0_s)
    if np.isfinite(step_s) and np.isfinite(span) and step_s > span:
        raise InputError(f"--step {step_s:g} s is longer than the window ({span:g} s): a chord "
                         f"needs two samples at least; give --step {span:g} or less")
    check_node_budget(t0_s, t1_s)


def chord(body, star, observer: Observer, window, step_s: float = 60.0, kernels=None,
          deflection: bool = True, barycentre_only: bool = False, exact: bool = False) -> ChordResult:
    """The chord table of a star for an observer over a window (start, end).

    ``body`` a Body or its name; ``star`` a StarSpec or an astropy SkyCoord; ``observer`` an
    Observer or an astropy EarthLocation; ``window`` items UTC ISO strings, astropy Times or
    TDB seconds past J2000 (:mod:`occplan.astro`).  ``.to_table()`` of the result is a QTable.
    """
    from .astro import observer as as_observer, star_spec, window_seconds
    from .bodies import get_body

    body, star, observer = get_body(body), star_spec(star), as_observer(observer)
    eph = get_ephemeris(tuple(str(k) for k in (kernels or [])))
    t0, t1 = window_seconds(window)
    check_chord_step(t0, t1, step_s)
    times = window_times(t0, t1, step_s)
    track = compute_track(eph, body, observer, star, times,
                          Corrections(deflection=deflection, barycentre_only=barycentre_only),
                          exact=exact)
    meta = dict(track.meta)
    meta["step_s"] = step_s
    meta["closest_approach"] = {
        "time_utc": utc_iso(time_from_tdb_s(track.closest_approach_s)),
        "ring_radius_km": track.closest_approach_radius_km,
        "at_window_edge": track.closest_approach_at_edge,
    }
    meta["crossings"] = pass_rows(track)
    meta["boundary_crossings"] = crossing_rows(track)
    meta["note"] = ring_note(track)
    meta["behind_planet_rows"] = (
        "rows with behind_planet true: the planet hides the star; their ring radius, longitude "
        "and speed are virtual (where the ray, its deflection tapered inside the planet, would "
        "meet the ring plane), interpolated without an accuracy bound (they may differ from "
        "exact geometry by thousands of km)")
    meta["interpolation_accuracy"] = (
        f"visible rows within twice the outer ring radius: ring radius within "
        f"{INTERPOLATION_SKY_TOL_M:g} m / |sin B*| of exact geometry (B* = star_elevation_deg), "
        f"{INTERPOLATION_SKY_TOL_M:g} m in the sky plane; measured, tests/test_track_properties.py")
    return ChordResult(track=track, meta=meta)


def summary_text(result: ChordResult) -> str:
    """Header lines for the people's table."""
    m = result.meta
    c = m["corrections"]
    lines = [
        f"# {m['body']} chord, observer {m['observer']['name']}, {m['start_utc']} .. {m['end_utc']}",
        f"# opening angle B {m['opening_angle_deg']:+.4f} deg, star elevation B* "
        f"{m['star_elevation_deg']:+.4f} deg, pole position angle P {m['pole_position_angle_deg']:.3f} deg, "
        f"distance {m['distance_km'] / AU_KM:.5f} AU",
        f"# planet centre: {c['planet_centre']}"
        + (f" (residual ~{c['planet_centre_residual_km']:.1f} km)" if c["planet_centre_residual_km"] else "")
        + f"; deflection {'on' if c['planet_deflection'] else 'off'}; no aberration; {m['interpolation']}",
        f"# a pole-direction error of 0.001 deg moves these radii by about "
        f"{m['pole_sensitivity_km_per_mdeg']:.1f} km at {m['pole_sensitivity_radius_km']:,.0f} km",
        f"# {m['note']}",
        *[f"# note: {n}" for n in m.get("notes", [])],
    ]
    for p in m["crossings"]:
        lines.append(f"#   {p['side']:7s} {p['region']:18s} {p['start_utc']} .. {p['end_utc']}"
                     + ("  (cut by the window)" if p["clipped_by_window"] else ""))
    return "\n".join(lines) + "\n"


def aspect(body, observer: Observer, window, step_s: float = 3600.0, kernels=None,
           barycentre_only: bool = False) -> tuple[list, dict]:
    """How the ring system looks from an observer: B, the Sun's B', P, distance, radii.

    ``B = asin(n.(O-P) / abs(O-P))`` (planetocentric latitude of the observer w.r.t. the ring plane);
    B' the same for the Sun at the planet's light-time-corrected epoch; P the position angle
    of the projected pole from celestial north through east, for the direction to the planet.
    Accepts astropy objects as :func:`chord` does.
    """
    from .astro import observer as as_observer, window_seconds
    from .bodies import get_body

    body, observer = get_body(body), as_observer(observer)
    eph = get_ephemeris(tuple(str(k) for k in (kernels or [])))
    t0, t1 = window_seconds(window)
    times = window_times(t0, t1, step_s)
    when = time_from_tdb_s(times)
    eph.check_planet_coverage(body, when)
    eph.check_observer_coverage(observer, when)
    obs = eph.observer_km(observer, when).reshape(3, -1)
    planet = eph.planet_km(body, when, barycentre_only).reshape(3, -1)
    lt = np.linalg.norm(planet - obs, axis=0) / 299792.458
    for _ in range(2):
        planet = eph.planet_km(body, time_from_tdb_s(times - lt), barycentre_only).reshape(3, -1)
        lt = np.linalg.norm(planet - obs, axis=0) / 299792.458
    t_planet = times - lt
    n = body.pole.unit_vector(2451545.0 + t_planet / 86400.0).reshape(3, -1)
    q = planet - obs
    dist = np.linalg.norm(q, axis=0)
    u = q / dist
    sun = eph.sun_km(time_from_tdb_s(t_planet)).reshape(3, -1)
    sun_dir = sun - planet
    sun_dir /= np.linalg.norm(sun_dir, axis=0)
    b_obs = np.degrees(np.arcsin(np.einsum("ij,ij->j", n, -u)))
    b_sun = np.degrees(np.arcsin(np.einsum("ij,ij->j", n, sun_dir)))
    z = np.array([0.0, 0.0, 1.0])[:, None]
    east = np.cross(np.broadcast_to(z, u.shape), u, axis=0)
    east /= np.linalg.norm(east, axis=0)
    north = np.cross(u, east, axis=0)
    pa = np.degrees(np.arctan2(np.einsum("ij,ij->j", n, east), np.einsum("ij,ij->j", n, north))) % 360
    arcsec = np.degrees(1.0) * 3600.0
    utc = utc_iso(when)
    rows = [
        {"time_utc": utc[i], "opening_angle_deg": float(b_obs[i]),
         "sun_opening_angle_deg": float(b_sun[i]), "pole_position_angle_deg": float(pa[i]),
         "distance_au": float(dist[i] / AU_KM),
         "planet_radius_arcsec": float(body.equatorial_radius_km / dist[i] * arcsec),
         "outer_ring_radius_arcsec": float(body.outer_ring_km / dist[i] * arcsec),
         "planet_ra_deg": float(np.degrees(np.arctan2(u[1, i], u[0, i])) % 360.0),
         "planet_dec_deg": float(np.degrees(np.arcsin(u[2, i])))}
        for i in range(times.size)
    ]
    meta = {"occplan_version": __version__, "body": body.name, "observer": observer.describe(),
            "kernels": eph.kernel_labels(),
            "planet_centre": "system barycentre (uncorrected)" if barycentre_only
            else eph.planet_centre_source(body),
            "step_s": step_s,
            "note": "B > 0: the north (angular-momentum) face of the rings is seen; "
                    "the rings are edge-on where B changes sign; planet RA/Dec astrometric "
                    "(ICRS, light time, no aberration: the frame of catalogue stars)"}
    return rows, meta
