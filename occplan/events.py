"""Evaluate one candidate event: the Python API behind `occplan event` (and `occplan plot`).

``evaluate_event`` computes the track, the region passes, the resonance zones crossed on each
side with the cadence they need and whether they can be resolved, the resolution limits
(Fresnel scale, stellar diameter), the signal to noise per resolution element, observability
at the site and the cautions.  ``EventReport.to_json()`` gives the DESIGN.md section 8 fields.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import __version__
from .chords import pass_rows, ring_note
from .coverage import (DEFAULT_MIN_SNR, DEFAULT_SAMPLES_PER_WAVELENGTH, SkyScene, hidden_intervals, zone_crossings)
from .ephemeris import J2000_TDB_JD, Observer, get_ephemeris, time_from_tdb_s, utc_iso, window_tdb_s
from .geometry import Corrections, Track, compute_track, window_times

DEFAULT_TOP_ZONES = 60
SAFETY_NOTE = ("Pointing optics near the Sun can blind an observer and destroy a camera; the "
               "site's rules and the observatory's safety practice come first.")


_RESONANCE_CACHE: dict = {}


def _resonances(body, max_order: int, top: int, min_torque, sigma, viscosity):
    key = (body.path, body.name, max_order, top, min_torque, sigma, viscosity)
    if key not in _RESONANCE_CACHE:
        _RESONANCE_CACHE[key] = _compute_resonances(body, max_order, top, min_torque, sigma, viscosity)
    return _RESONANCE_CACHE[key]


def _compute_resonances(body, max_order, top, min_torque, sigma, viscosity):
    from .resonances import find_resonances

    res = find_resonances(body, max_order=max_order, min_torque=min_torque, sigma_g_cm2=sigma,
                          viscosity_cm2_s=viscosity)
    # CRs launch no wave (edges are kept); outside every ring region there is nothing to see
    res = [r for r in res if (r.wave != "none" or r.edge) and r.region]
    if min_torque is None and len(res) > top:
        # rank by the torque itself (per-sigma torque x the region's surface density): a
        # resonance in a tenuous ring drives a weak wave however large its coefficient
        res = sorted(res, key=lambda r: -r.torque_dyn_cm)[:top]
        res.sort(key=lambda r: r.resonance_radius_km)
    return tuple(res)



def select_resonances(body, max_order: int = 3, top: int = DEFAULT_TOP_ZONES, min_torque=None,
                      sigma_g_cm2=None, viscosity_cm2_s=None):
    """The resonance zones an event is checked against: waves and resonance-held edges.

    Corotation resonances and resonances outside every ring region are left out (no wave).
    Without ``min_torque`` the ``top`` strongest by torque (torque per unit surface density
    times the region's surface density) are kept.
    """
    return list(_resonances(body, int(max_order), int(top), min_torque, sigma_g_cm2, viscosity_cm2_s))


@dataclass
class EventReport:
    track: Track
    zones: list  # ZoneCrossing
    telescope: object
    resolution: dict
    photometry: dict
    observability: dict
    cautions: list
    hidden: list
    meta: dict = field(default_factory=dict)
    conditions: object = None

    # ---------------------------------------------------------------- JSON
    def zone_rows(self) -> list[dict]:
        rows = []
        for z in self.zones:
            r = z.resonance
            rows.append({
                "label": r.label, "satellite": r.satellite, "kind": r.kind, "wave": r.wave,
                "m": r.m, "order": r.order, "resonance_radius_km": r.resonance_radius_km,
                "side": z.side,
                "time_utc": None if not np.isfinite(z.time_s) else _utc(z.time_s),
                "start_utc": _utc(z.start_s), "end_utc": _utc(z.end_s),
                "radial_velocity_km_s": z.radial_velocity_km_s,
                "ring_longitude_deg": z.ring_longitude_deg,
                "required_interval_s": z.required_interval_s,
                "achievable_resolution_km": z.achievable_resolution_km,
                "resolvable": z.resolvable, "behind_planet": z.behind_planet,
                "resolved_extent_km": z.resolved_extent_km,
                "resolved_fraction": z.resolved_fraction,
                "shortest_wavelength_km": z.feature_scale_km, "limit": z.limit,
                "snr_per_element": z.snr_per_element, "usable": z.usable,
                "torque_per_sigma": r.torque_per_sigma, "edge": r.edge,
                "zone_inner_km": r.zone_inner_km, "zone_outer_km": r.zone_outer_km,
                "region": r.region, "partial": z.partial, "reasons": z.reasons,
            })
        return rows

    def to_json(self) -> dict:
        tr = self.track
        return {
            "body": tr.body.name,
            "star": tr.star.describe(),
            "observer": tr.observer.describe(),
            "closest_approach": {"time_utc": _utc(tr.closest_approach_s),
                                 "ring_radius_km": tr.closest_approach_radius_km,
                                 "at_window_edge": tr.closest_approach_at_edge},
            "opening_angle_deg": tr.meta["opening_angle_deg"],
            "star_elevation_deg": tr.meta["star_elevation_deg"],
            "pole_position_angle_deg": tr.meta["pole_position_angle_deg"],
            "distance_au": tr.meta["distance_km"] / 149597870.7,
            "crossings": pass_rows(tr),
            "planet_hidden": [{"start_utc": _utc(a), "end_utc": _utc(b)} for a, b in self.hidden],
            "zones": self.zone_rows(),
            "resolution": self.resolution,
            "photometry": self.photometry,
            "telescope": self.telescope.describe(),
            "observability": self.observability,
            "cautions": self.cautions,
            "note": ring_note(tr),
            "meta": self.meta,
        }


def _utc(t_s: float) -> str:
    return utc_iso(time_from_tdb_s(t_s))


def evaluate_event(body, star, observer: Observer, window, *, telescope=None, kernels=None,
                   deflection: bool = True, barycentre_only: bool = False, step_s: float = 10.0,
                   max_order: int = 3, top_zones: int = DEFAULT_TOP_ZONES, min_torque=None,
                   sigma_g_cm2=None, viscosity_cm2_s=None,
                   samples_per_wavelength: float | None = None, min_snr: float = DEFAULT_MIN_SNR,
                   luminosity_class: str = "auto", min_altitude_deg: float | None = None,
                   sun_limit_deg: float | None = None) -> EventReport:
    """Evaluate one candidate occultation (see the module docstring).

    ``window`` is (start, end) as UTC ISO strings or TDB seconds past J2000;
    ``telescope`` a :class:`occplan.telescope.TelescopeProfile` (default profile if None).
    """
    from . import observability as obs_mod
    from . import photometry as ph
    from .telescope import load_telescope

    tel = telescope or load_telescope()
    spw = samples_per_wavelength or tel.samples_per_wavelength or DEFAULT_SAMPLES_PER_WAVELENGTH
    eph = get_ephemeris(tuple(str(k) for k in (kernels or [])))
    t0, t1 = window_tdb_s(window)
    times = window_times(t0, t1, step_s)
    track = compute_track(eph, body, observer, star, times,
                          Corrections(deflection=deflection, barycentre_only=barycentre_only))
    band = ph.band(tel.band)
    distance = float(track.meta["distance_km"])
    fresnel = float(ph.fresnel_scale_km(band.wavelength_um, distance))
    resolution = {"band": band.name, "wavelength_um": band.wavelength_um, "fresnel_km": fresnel,
                  "stellar_diameter_km": None, "stellar_diameter_mas": None,
                  "cadence_s": tel.cadence_s, "samples_per_wavelength": spw,
                  "nyquist_samples_per_wavelength": 2.0, "notes": []}
    if star.vmag is not None and star.kmag is not None:
        diam = ph.stellar_angular_diameter_mas(star.vmag, star.kmag, luminosity_class)
        resolution["stellar_diameter_mas"] = diam.theta_mas
        resolution["stellar_diameter_km"] = float(ph.projected_stellar_diameter_km(diam.theta_mas, distance))
        resolution["stellar_diameter_relative_uncertainty"] = diam.relative_uncertainty
        resolution["stellar_diameter_relation"] = diam.relation
        if diam.note:
            resolution["notes"].append(diam.note)
    else:
        resolution["notes"].append("stellar diameter not evaluated: it needs both --vmag and --kmag")

    # Observability (sites only) on the window.
    jd = J2000_TDB_JD + times / 86400.0
    kw = {}
    if min_altitude_deg is not None:
        kw["min_altitude_deg"] = min_altitude_deg
    if sun_limit_deg is not None:
        kw["sun_limit_deg"] = sun_limit_deg
    cond = obs_mod.observing_conditions(eph, body, observer, jd, **kw)
    cautions = list(obs_mod.cautions(cond))
    sun_caution = any(c.upper().startswith("CAUTION") and "Sun" in c for c in cautions)
    if sun_caution and not any("safety" in c.lower() for c in cautions):
        cautions.append(SAFETY_NOTE)

    # Photometry: star rate in the band, background from the sky-plane scene.
    star_mag, photometry = _star_magnitude(star, band.name)
    scene = SkyScene.for_track(track)
    helio = float(ph.heliocentric_distance_au(
        eph.planet_km(body, time_from_tdb_s(track.closest_approach_s), barycentre_only=True),
        eph.sun_km(time_from_tdb_s(track.closest_approach_s))))
    height_m = observer.height_m if observer.kind == "site" else 0.0

    def airmass_at(when_s):
        if not cond.applicable:
            return 1.0
        am = np.interp(when_s, times, np.asarray(cond.airmass, dtype=float))
        return float(am) if np.isfinite(am) and am >= 1 else float("nan")

    snr_function = None
    if star_mag is not None:
        star_rate = ph.star_photon_rate(star_mag, band.name, tel.aperture_m, tel.throughput,
                                        tel.central_obstruction)
        aperture_km = math.radians(tel.aperture_radius_arcsec / 3600.0) * distance

        def snr_function(res_km, speed, when_s):
            f = float(np.interp(when_s, track.tdb_s, track.sky_f_km))
            g = float(np.interp(when_s, track.tdb_s, track.sky_g_km))
            fill = scene.aperture_fill(f, g, aperture_km)
            bg = ph.background_rate(band.name, tel.aperture_m, tel.throughput,
                                    tel.aperture_radius_arcsec, helio, body=body,
                                    central_obstruction=tel.central_obstruction, **fill)
            am = airmass_at(when_s)
            if not np.isfinite(am):
                return float("nan")
            sig = ph.scintillation_sigma(tel.aperture_m, am, height_m, tel.exposure_s)
            sample = ph.snr_per_sample(star_rate, bg.rate_photons_s, tel.exposure_s,
                                       read_noise_e=tel.read_noise_e, n_pixels=tel.n_pixels,
                                       scintillation_sigma=sig, dark_e_s=tel.dark_e_s,
                                       scintillate_background=False)
            element = ph.snr_per_resolution_element(sample, res_km, speed, tel.cadence_s)
            return float(element.snr)

        photometry.update({"star_rate_photons_s": float(star_rate),
                           "scintillation": "Young 1967 in the form of Dravins et al. 1998, "
                                            "applied to the star (an extended background "
                                            "scintillates far less)",
                           "background": "planet and rings in the aperture from sky-plane "
                                         "polygons and the body file's reflectances"})
    resonances = select_resonances(body, max_order, top_zones, min_torque, sigma_g_cm2,
                                   viscosity_cm2_s)
    hidden = hidden_intervals(track)
    zones = zone_crossings(track, resonances, cadence_s=tel.cadence_s, fresnel_km=fresnel,
                           stellar_diameter_km=resolution["stellar_diameter_km"],
                           samples_per_wavelength=spw, snr_function=snr_function,
                           min_snr=min_snr, hidden=hidden)
    if cond.applicable:
        usable = np.asarray(cond.usable, dtype=float)
        for z in zones:
            probe = np.linspace(z.start_s, z.end_s, 5)
            z.usable = bool(np.all(np.interp(probe, times, usable) > 0.5))
    meta = dict(track.meta)
    meta.update({"max_order": max_order, "zones_considered": len(resonances),
                 "zone_selection": (f"the {top_zones} strongest waves and resonance-held edges "
                                    "by torque (per-sigma torque x region sigma), orders 1.."
                                    f"{max_order}") if min_torque is None
                 else f"torque_per_sigma >= {min_torque:g} cm^4 s^-2",
                 "min_snr": min_snr, "occplan_version": __version__})
    return EventReport(track=track, zones=zones, telescope=tel, resolution=resolution,
                       photometry=photometry, observability=cond.summary(), cautions=cautions,
                       hidden=hidden, meta=meta, conditions=cond)


def _star_magnitude(star, band_name: str):
    """The star's magnitude in the band, and what was done to get it."""
    from . import photometry as ph

    info = {"band": band_name, "vmag": star.vmag, "kmag": star.kmag}
    if star.vmag is not None and star.kmag is not None:
        mag = ph.estimate_band_magnitude(star.vmag, star.kmag, band_name)
        info["star_mag"] = mag
        if band_name not in ("V", "K"):
            info["star_mag_method"] = "interpolated from V and K (about 0.15 mag for FGK stars)"
        return mag, info
    if star.vmag is not None and band_name == "V":
        info["star_mag"] = star.vmag
        return star.vmag, info
    if star.kmag is not None and band_name == "K":
        info["star_mag"] = star.kmag
        return star.kmag, info
    info["star_mag"] = None
    info["note"] = (f"signal to noise not evaluated: the star's {band_name} magnitude is unknown "
                    "(give --vmag and --kmag)")
    return None, info


def summary_text(rep: EventReport, max_zones: int | None = 30) -> str:
    """One screen for people: the ``max_zones`` strongest zone crossings (by torque), in time
    order; all of them with ``max_zones=None`` (and always in ``--format json``)."""
    d = rep.to_json()
    tr = rep.track
    lines = [
        f"{d['body']} ring occultation: star {tr.star.name or ''} "
        f"(RA {tr.star.ra_deg:.6f}, Dec {tr.star.dec_deg:+.6f}), observer {tr.observer.name}",
        f"  window {tr.meta['start_utc']} .. {tr.meta['end_utc']}; {d['note']}",
        f"  opening angle B {d['opening_angle_deg']:+.3f} deg, star elevation B* "
        f"{d['star_elevation_deg']:+.3f} deg, P {d['pole_position_angle_deg']:.2f} deg, "
        f"distance {d['distance_au']:.4f} AU",
        f"  planet centre: {tr.meta['corrections']['planet_centre']}; deflection (planet, Sun) "
        f"{'on' if tr.meta['corrections']['planet_deflection'] else 'off'}; 0.001 deg of pole "
        f"error moves the radii by ~{tr.meta['pole_sensitivity_km_per_mdeg']:.1f} km "
        f"(at {tr.meta['pole_sensitivity_radius_km']:,.0f} km)",
        f"  telescope: {rep.telescope.name}",
        *[f"  note: {n}" for n in tr.meta.get("notes", [])],
        "",
        "Ring regions crossed:",
    ]
    for p in d["crossings"]:
        lines.append(f"  {p['side']:7s} {p['region']:18s} {p['start_utc'][11:23]} .. {p['end_utc'][11:23]}"
                     + ("  (cut by the window)" if p["clipped_by_window"] else ""))
    if not d["crossings"]:
        lines.append("  none")
    for h in d["planet_hidden"]:
        lines.append(f"  planet hides the star {h['start_utc'][11:23]} .. {h['end_utc'][11:23]}")
    res = d["resolution"]
    sd = res["stellar_diameter_km"]
    lines += [
        "",
        f"Resolution: {res['band']} band ({res['wavelength_um']:.2f} um); Fresnel scale "
        f"{res['fresnel_km']:.2f} km; stellar diameter "
        + (f"{sd:.2f} km ({res['stellar_diameter_mas']:.3f} mas)" if sd is not None else "not evaluated")
        + f"; camera {rep.telescope.cadence_s:g} s, {res['samples_per_wavelength']:g} samples per "
          "wavelength (2 is the Nyquist bound)",
    ]
    for n in res["notes"]:
        lines.append(f"  note: {n}")
    if rep.photometry.get("note"):
        lines.append(f"  note: {rep.photometry['note']}")
    n_res = sum(z.resolvable for z in rep.zones)
    n_part = sum((not z.resolvable) and z.resolved_fraction > 0 for z in rep.zones)
    lines += ["", f"Resonance zones crossed: {len(rep.zones)} ({n_res} resolvable over the whole "
                  f"wave train, {n_part} in part); {rep.meta['zone_selection']}"]
    if rep.zones:
        lines.append(f"  {'side':7s} {'time (UTC)':12s} {'feature':22s} {'r_res km':>10s} "
                     f"{'v km/s':>7s} {'lam km':>7s} {'dt_req s':>8s} {'res km':>7s} {'SNR':>6s}  verdict")
    shown = rep.zones
    if max_zones is not None and len(shown) > max_zones:
        keep = set(map(id, sorted(shown, key=lambda z: -z.resonance.torque_dyn_cm)[:max_zones]))
        shown = [z for z in shown if id(z) in keep]
    for z in shown:
        r = z.resonance
        t = _utc(z.time_s)[11:23] if np.isfinite(z.time_s) else "(partial)"
        what = f"{r.satellite} {r.label} {'edge' if r.edge else r.kind}"
        if z.resolvable:
            verdict = "resolvable"
        elif 0 < z.resolved_fraction < 0.995 and not z.behind_planet:
            verdict = (f"partly: first {z.resolved_extent_km:.0f} of "
                       f"{r.zone_outer_km - r.zone_inner_km:.0f} km resolved ({z.limit}-limited)")
        else:
            verdict = "NOT: " + (z.reasons[0] if z.reasons else "")
        if z.usable is False:
            verdict += " [not observable]"
        snr = f"{z.snr_per_element:6.1f}" if np.isfinite(z.snr_per_element) else "     -"
        lines.append(f"  {z.side:7s} {t:12s} {what:22s} {r.resonance_radius_km:10.1f} "
                     f"{z.radial_velocity_km_s:7.2f} {z.feature_scale_km:7.2f} "
                     f"{z.required_interval_s:8.3f} {z.achievable_resolution_km:7.2f} {snr}  {verdict}")
    if len(shown) < len(rep.zones):
        lines.append(f"  ... the {len(shown)} strongest of {len(rep.zones)} zone crossings shown; "
                     "all are in --format json / csv / ecsv")
    ob = d["observability"]
    lines.append("")
    if ob.get("applicable"):
        lines.append(
            f"Observability: planet altitude {ob['min_altitude_deg']:.1f}..{ob['max_altitude_deg']:.1f} deg, "
            f"worst Sun altitude {ob['worst_sun_altitude_deg']:.1f} deg ({ob['worst_sun_category']}), "
            f"Moon {ob['min_moon_separation_deg']:.0f} deg away, {100 * ob['max_moon_illumination']:.0f}% lit; "
            f"usable {100 * ob['usable_fraction']:.0f}% of the window")
    else:
        sep = ob.get("min_sun_separation_deg")
        lines.append(f"Observability: {ob.get('reason', 'not applicable')}"
                     + (f" (Sun {sep:.0f} deg from the target at the closest)" if sep is not None else ""))
    reason = ob.get("reason", "")
    for c in d["cautions"]:
        if reason and reason.rstrip(".") in c:
            continue  # already said on the Observability line
        lines.append(f"  {c}")
    return "\n".join(lines) + "\n"
