"""Evaluate one candidate event: the Python API behind `occplan event` (and `occplan plot`).

``evaluate_event`` computes the track, the region passes, the resonance zones crossed on each
side with the cadence they need and whether they can be resolved, the resolution limits
(Fresnel scale, stellar diameter), the signal to noise per resolution element, observability
at the site and the cautions.  ``EventReport.to_json()`` gives the fields of docs/features_and_scoring.md, section 4.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from . import __version__
from .chords import pass_rows, ring_note
from .coverage import DEFAULT_MIN_SNR, DEFAULT_SAMPLES_PER_WAVELENGTH, hidden_intervals, zone_crossings
from .ephemeris import J2000_TDB_JD, Observer, get_ephemeris, time_from_tdb_s, utc_iso, window_tdb_s
from .geometry import Corrections, Track, compute_track, window_times

SAFETY_NOTE = ("Pointing optics near the Sun can blind an observer and destroy a camera; the "
               "site's rules and the observatory's safety practice come first.")


def select_features(body, max_order: int = 3, sigma_g_cm2=None, viscosity_cm2_s=None,
                    settings=None, epoch_jd_tdb: float | None = None):
    """The features an event is checked against: the body's whole feature catalogue
    (:func:`occplan.features.body_features`: waves that fit in their ring, resonance-held
    edges, narrow rings, overlap regions, corotation zones), every kind kept."""
    from .features import body_features

    return body_features(body, max_order=int(max_order), sigma_g_cm2=sigma_g_cm2,
                         viscosity_cm2_s=viscosity_cm2_s, settings=settings,
                         epoch_jd_tdb=epoch_jd_tdb)


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
    uncertainty: dict = field(default_factory=dict)  # budget, closest approach, crossings
    recording: dict | None = None

    # ---------------------------------------------------------------- JSON
    def crossing_radius_km(self, z) -> float:
        """Where the chord meets the feature: an eccentric ring's or edge's solved radius (the
        mean of its edges' for a ring), else the ring-plane radius at the feature's time."""
        tr = self.track
        f = z.feature
        if f.feature in ("narrow ring", "edge"):
            hits = [c.boundary_km for c in tr.crossings if c.region == f.region and c.side == z.side
                    and z.start_s - 1e-6 <= c.tdb_s <= z.end_s + 1e-6]
            reg = next((r for r in tr.body.rings if r.name == f.region), None)
            if hits and reg is not None and reg.orbit is not None:
                return float(np.mean(hits))
        t = z.time_s if np.isfinite(z.time_s) else 0.5 * (z.start_s + z.end_s)
        return float(tr.interp.radius(np.array([t]))[0])

    def zone_rows(self) -> list[dict]:
        rows = []
        for z in self.zones:
            f = z.feature
            rows.append({
                "name": f.name, "feature": f.feature,
                "label": f.label, "satellite": f.satellite, "kind": f.kind, "wave": f.wave,
                "m": f.m, "order": f.order, "resonance_radius_km": f.resonance_radius_km,
                "crossing_radius_km": self.crossing_radius_km(z),
                "side": z.side,
                "time_utc": None if not np.isfinite(z.time_s) else _utc(z.time_s),
                "time_sigma_s": z.time_sigma_s,
                "start_utc": _utc(z.start_s), "end_utc": _utc(z.end_s),
                "radial_velocity_km_s": z.radial_velocity_km_s,
                "ring_longitude_deg": z.ring_longitude_deg,
                "required_interval_s": z.required_interval_s,
                "achievable_resolution_km": z.achievable_resolution_km,
                "resolvable": z.resolvable, "behind_planet": z.behind_planet,
                "resolved_extent_km": z.resolved_extent_km,
                "resolved_fraction": z.resolved_fraction,
                "feature_scale_km": z.feature_scale_km, "limit": z.limit,
                "amplitude": f.amplitude, "weight": f.weight,
                "optical_depth": f.optical_depth, "transmission": z.transmission,
                "contrast": z.contrast, "snr_per_element": z.snr_per_element,
                "location_sigma_km": z.location_sigma_km,
                "usable": z.usable, "torque_dyn_cm": f.torque_dyn_cm, "edge": f.edge,
                "zone_inner_km": f.zone_inner_km, "zone_outer_km": f.zone_outer_km,
                "region": f.region, "partial": z.partial, "reasons": z.reasons,
                "note": f.note,
            })
        return rows

    def to_table(self):
        """The feature crossings as an astropy QTable (units, UTC Time columns), the rest of
        the report in ``.meta``."""
        from .tables import to_astropy

        data = self.to_json()
        return to_astropy(self.zone_rows(), {k: v for k, v in data.items() if k != "zones"},
                          qtable=True)

    def from_memory(self) -> list[str]:
        """Which inputs of this event rest on values the data files mark "from memory"."""
        out = []
        body = self.track.body
        crossed = {p.region for p in self.track.passes}
        for reg in body.rings:
            if reg.name in crossed and "from memory" in reg.source:
                out.append(f"{reg.name}: {reg.source}")
            orbit = getattr(reg, "orbit", None)
            if reg.name in crossed and orbit is not None and "from memory" in orbit.source:
                out.append(f"{reg.name} orbit: {orbit.source}")
        if "from memory" in str(body.photometry.get("source", "")):
            out.append(f"{body.name} reflectances: {body.photometry['source']}")
        for name, term in (self.uncertainty.get("budget") or {}).get("terms", {}).items():
            if "from memory" in str(term.get("from", "")) and name in ("planet", "pole"):
                out.append(f"{name} uncertainty: {term['from']}")
        return out

    def crossing_rows(self) -> list[dict]:
        """Region crossings with the 1-sigma of their start and end times."""
        rows = pass_rows(self.track)
        sig = self.uncertainty.get("passes", [])
        for row, (a, b) in zip(rows, sig):
            row["start_sigma_s"], row["end_sigma_s"] = a, b
        return rows

    def _recording_json(self):
        if not self.recording:
            return None
        r = dict(self.recording)
        r["start_utc"], r["stop_utc"] = _utc(r.pop("start_s")), _utc(r.pop("stop_s"))
        return r

    def to_json(self) -> dict:
        tr = self.track
        return {
            "body": tr.body.name,
            "star": tr.star.describe(),
            "observer": tr.observer.describe(),
            "closest_approach": {"time_utc": (_utc(tr.closest_approach_s)
                                              if np.isfinite(tr.closest_approach_radius_km) else None),
                                 "ring_radius_km": tr.closest_approach_radius_km,
                                 "at_window_edge": tr.closest_approach_at_edge,
                                 "time_sigma_s": self.uncertainty.get("closest_approach", {}).get("time_s"),
                                 "radius_sigma_km": self.uncertainty.get("closest_approach", {}).get("radius_km"),
                                 "reach_probability": self.uncertainty.get("reach_probability", [])},
            "opening_angle_deg": tr.meta["opening_angle_deg"],
            "star_elevation_deg": tr.meta["star_elevation_deg"],
            "pole_position_angle_deg": tr.meta["pole_position_angle_deg"],
            "distance_au": tr.meta["distance_km"] / 149597870.7,
            "crossings": self.crossing_rows(),
            "planet_hidden": [{"start_utc": _utc(a), "end_utc": _utc(b)} for a, b in self.hidden],
            "zones": self.zone_rows(),
            "resolution": self.resolution,
            "photometry": self.photometry,
            "telescope": self.telescope.describe(),
            "observability": self.observability,
            "cautions": self.cautions,
            "uncertainty": self.uncertainty.get("budget"),
            "from_memory": self.from_memory(),
            "recording": self._recording_json(),
            "note": ring_note(tr),
            "meta": self.meta,
        }


def _hms(iso: str | None, sigma_s) -> str:
    """HH:MM:SS with as many decimals as the 1-sigma supports, and the sigma itself."""
    from .uncertainty import time_precision

    if iso is None:
        return "-"
    if sigma_s is None or not np.isfinite(sigma_s):
        return iso[11:23]
    nd = time_precision(sigma_s)
    hh, mm, ss = iso[11:13], iso[14:16], float(iso[17:23])
    sec = f"{ss:0{3 + nd if nd else 2}.{nd}f}"
    if sec.startswith("60"):
        return iso[11:23] + f" +-{sigma_s:.2g}s"  # rounding into the next minute: keep as is
    return f"{hh}:{mm}:{sec} +-{sigma_s:.2g}s"


def _utc(t_s: float) -> str:
    return utc_iso(time_from_tdb_s(t_s))


def evaluate_event(body, star, observer: Observer, window, *, telescope=None, kernels=None,
                   deflection: bool = True, barycentre_only: bool = False, step_s: float = 10.0,
                   max_order: int = 3, sigma_g_cm2=None, viscosity_cm2_s=None,
                   samples_per_wavelength: float | None = None, min_snr: float = DEFAULT_MIN_SNR,
                   luminosity_class: str = "auto", min_altitude_deg: float | None = None,
                   sun_limit_deg: float | None = None, star_error_mas: float | None = None,
                   planet_error_km: float | None = None,
                   pole_error_deg: float | None = None) -> EventReport:
    """Evaluate one candidate occultation (see the module docstring).

    ``body`` a Body or its name; ``star`` a StarSpec or an astropy SkyCoord; ``observer`` an
    Observer or an astropy EarthLocation; ``window`` (start, end) as UTC ISO strings,
    astropy Times or TDB seconds past J2000; ``telescope`` a
    :class:`occplan.telescope.TelescopeProfile` (default profile if None).  ``.to_table()``
    of the report is a QTable of its feature crossings.
    ``star_error_mas``, ``planet_error_km``, ``pole_error_deg`` override the error budget
    (:func:`occplan.uncertainty.error_budget`).
    """
    from . import observability as obs_mod
    from . import photometry as ph
    from .astro import observer as as_observer, star_spec, window_seconds
    from .bodies import get_body
    from .telescope import load_telescope

    # the public boundary: a body name, a SkyCoord, an EarthLocation, astropy Times
    body, star, observer = get_body(body), star_spec(star), as_observer(observer)
    window = window_seconds(window)

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
        diam = ph.star_angular_diameter(star, luminosity_class)
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

    # Photometry: star rate in the band; background from the planet and the rings in the
    # aperture, blurred by the seeing (occplan.skylight); the ring's opacity attenuates the star.
    from .skylight import ApertureBackground

    star_mag, photometry = _star_magnitude(star, band.name)
    helio = float(ph.heliocentric_distance_au(
        eph.planet_km(body, time_from_tdb_s(track.closest_approach_s), barycentre_only=True),
        eph.sun_km(time_from_tdb_s(track.closest_approach_s))))
    height_m = observer.height_m if observer.kind == "site" else 0.0
    b_star = float(track.meta["star_elevation_deg"])
    sky = ApertureBackground(body, band.name, tel, distance, helio, track.meta["opening_angle_deg"],
                             b_star, track.meta["pole_position_angle_deg"],
                             track.meta.get("sun_opening_angle_deg"))
    photometry["background"] = sky.describe()

    airmass = np.asarray(cond.airmass, dtype=float) if cond.applicable else None

    def airmass_at(when_s):
        if airmass is None:
            return 1.0
        am = np.interp(when_s, times, airmass)
        return float(am) if np.isfinite(am) and am >= 1 else float("nan")

    snr_function = None
    if star_mag is not None:
        star_rate = ph.star_photon_rate(star_mag, band.name, tel.aperture_m, tel.throughput,
                                        tel.central_obstruction)

        def snr_function(feats, element_km, speed, when_s):
            """SNR of each feature's signal per radial element (photometry.feature_snr)."""
            tc = np.array([ph.feature_contrast(f.feature, f.amplitude, f.optical_depth, b_star)
                           for f in feats]).reshape(-1, 2)
            transmission, contrast = tc[:, 0], tc[:, 1]
            if not sky.evaluated:
                return np.full(len(feats), np.nan), transmission, contrast
            f = np.interp(when_s, track.tdb_s, track.sky_f_km)
            g = np.interp(when_s, track.tdb_s, track.sky_g_km)
            bg = np.sum(sky.rates_many(f, g), axis=0)
            am = np.array([airmass_at(t) for t in when_s])
            good = np.isfinite(am)
            snr = np.full(len(feats), np.nan)
            if np.any(good):
                sig = ph.scintillation_sigma(tel.aperture_m, am[good], height_m, tel.exposure_s)
                snr[good] = ph.feature_snr(star_rate, transmission[good], contrast[good], bg[good],
                                           tel.exposure_s, read_noise_e=tel.read_noise_e,
                                           n_pixels=tel.n_pixels, scintillation_sigma=sig,
                                           dark_e_s=tel.dark_e_s, element_km=element_km[good],
                                           radial_velocity_km_s=speed[good],
                                           sampling_interval_s=tel.cadence_s)
            return snr, transmission, contrast

        photometry.update({"star_rate_photons_s": float(star_rate),
                           "scintillation": "Young 1967 in the form of Dravins et al. 1998, "
                                            "applied to the star's transmitted light (an "
                                            "extended background scintillates far less)",
                           "feature_snr": ph.FEATURE_SNR_FORMULA})
    # co-orbital satellites (Janus/Epimetheus) in their configuration at the event
    features = select_features(body, max_order, sigma_g_cm2, viscosity_cm2_s,
                               epoch_jd_tdb=J2000_TDB_JD + float(np.mean([t0, t1])) / 86400.0)
    hidden = hidden_intervals(track)
    zones = zone_crossings(track, features, cadence_s=tel.cadence_s, fresnel_km=fresnel,
                           stellar_diameter_km=resolution["stellar_diameter_km"],
                           samples_per_wavelength=spw, snr_function=snr_function,
                           min_snr=min_snr, hidden=hidden)
    if cond.applicable:
        usable = np.asarray(cond.usable, dtype=float)
        if zones:
            ends = np.array([[z.start_s, z.end_s] for z in zones])
            probe = ends[:, :1] + (ends[:, 1:] - ends[:, :1]) * np.linspace(0.0, 1.0, 5)
            ok = np.all(np.interp(probe, times, usable) > 0.5, axis=1)
            for z, flag in zip(zones, ok):
                z.usable = bool(flag)
    meta = dict(track.meta)
    from .features import load_settings

    meta.update({"max_order": max_order, "features_considered": len(features),
                 "feature_selection": (f"the body's feature catalogue (resonances of order 1.."
                                       f"{max_order}; occplan.features, thresholds "
                                       f"{load_settings().path})"),
                 "min_snr": min_snr, "occplan_version": __version__})
    unc, recording = _uncertainties(track, star, zones, tel, star_error_mas, planet_error_km,
                                    pole_error_deg)
    return EventReport(track=track, zones=zones, telescope=tel, resolution=resolution,
                       photometry=photometry, observability=cond.summary(), cautions=cautions,
                       hidden=hidden, meta=meta, conditions=cond, uncertainty=unc,
                       recording=recording)


def _uncertainties(track, star, zones, tel, star_error_mas, planet_error_km, pole_error_deg):
    """1-sigma of the closest approach, the region crossings and each feature's crossing
    time (occplan.uncertainty), the chance that the chord reaches each boundary near its
    closest approach, and the recording plan."""
    from . import uncertainty as un

    budget = un.error_budget(track, star, planet_sky_km=planet_error_km, pole_deg=pole_error_deg,
                             star_error_mas=star_error_mas)
    out = {"budget": budget.describe()}
    if not np.isfinite(track.closest_approach_radius_km):
        return out, None
    ca = un.closest_approach_sigmas(track, budget)
    out["closest_approach"] = ca
    passes = track.passes
    if passes:
        a = un.crossing_time_sigma_s(track, budget, [p.start_s for p in passes])
        b = un.crossing_time_sigma_s(track, budget, [p.end_s for p in passes])
        # a window edge or the chord's turning point is no boundary crossing: no sigma there
        t_ca, t0, t1 = track.closest_approach_s, track.tdb_s[0], track.tdb_s[-1]

        def sig(t, value):
            return None if (abs(t - t_ca) < 1e-3 or t <= t0 or t >= t1) else float(value)

        # an eccentric ring's model adds its own radial uncertainty at each edge
        a = [math.hypot(x, un.ring_model_time_sigma_s(track, p.region, p.side, p.start_s, "start"))
             for p, x in zip(passes, a)]
        b = [math.hypot(y, un.ring_model_time_sigma_s(track, p.region, p.side, p.end_s, "end"))
             for p, y in zip(passes, b)]
        out["passes"] = [(sig(p.start_s, x), sig(p.end_s, y)) for p, x, y in zip(passes, a, b)]
    timed = [z for z in zones if np.isfinite(z.time_s)]
    if timed:
        for z, sig in zip(timed, un.crossing_time_sigma_s(track, budget, [z.time_s for z in timed])):
            model = 0.0
            if z.feature.feature == "narrow ring":
                model = un.ring_model_time_sigma_s(track, z.feature.region, z.side, z.time_s, "mid")
            elif z.feature.feature == "edge":
                from .coverage import _modelled_edge

                reg = next((r for r in track.body.rings if r.name == z.feature.region), None)
                which = _modelled_edge(reg, z.feature.edge_radius_km) if reg is not None else None
                if which:
                    model = un.ring_model_time_sigma_s(track, reg.name, z.side, z.time_s, which)
            z.time_sigma_s = float(math.hypot(sig, model))
    # grazing chords: the chance of reaching each boundary within 3 sigma of closest approach
    r_ca, s_ca = track.closest_approach_radius_km, ca["radius_km"]
    t_ca = track.closest_approach_s
    bounds = set()
    for r in track.body.rings:
        for which, radius in (("inner", r.inner_km), ("outer", r.outer_km)):
            if r.orbit is not None and np.isfinite(r_ca):
                # an eccentric edge where the chord turns: its radius at that longitude
                from .ring_orbits import edge_radius_km

                u = track.interp.in_plane(np.array([t_ca]))[0][:, 0]
                radius = float(edge_radius_km(r.orbit, track.body, which,
                                              math.atan2(u[1], u[0]), t_ca))
            bounds.add((r.name, which, radius))
    out["reach_probability"] = sorted(
        ({"region": n, "edge": e, "boundary_km": b,
          "probability": un.reach_probability(r_ca, s_ca, b)}
         for n, e, b in bounds if np.isfinite(s_ca) and abs(b - r_ca) < 3 * s_ca),
        key=lambda x: x["boundary_km"])
    recording = None
    if passes:
        first = min(passes, key=lambda p: p.start_s)
        last = max(passes, key=lambda p: p.end_s)
        sig_first = un.crossing_time_sigma_s(track, budget, [first.start_s])[0]
        sig_last = un.crossing_time_sigma_s(track, budget, [last.end_s])[0]
        recording = un.recording_plan(first.start_s, last.end_s, sig_first, sig_last, tel)
    return out, recording


def _star_magnitude(star, band_name: str):
    """The star's magnitude in the band, and what was done to get it."""
    from . import photometry as ph

    info = {"band": band_name, "vmag": star.vmag, "kmag": star.kmag}
    known = ((getattr(star, "extra", None) or {}).get("photometry") or {}).get(band_name)
    given = {"V": star.vmag, "K": star.kmag}.get(band_name)
    if known and known.get("mag") is not None and (given is None or given == known["mag"]):
        # a catalog's measured or Gaia-derived magnitude (unless --vmag/--kmag replaced it)
        info.update(star_mag=known["mag"], star_mag_sigma=known.get("sigma"), star_mag_method=known["source"])
        return known["mag"], info
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
    """One screen for people: the ``max_zones`` strongest feature crossings (by weight, then
    torque), in time order; all of them with ``max_zones=None`` (and always in
    ``--format json``)."""
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
        lines.append(f"  {p['side']:7s} {p['region']:18s} "
                     f"{_hms(p['start_utc'], p.get('start_sigma_s'))} .. "
                     f"{_hms(p['end_utc'], p.get('end_sigma_s'))}"
                     + ("  (cut by the window)" if p["clipped_by_window"] else ""))
    if not d["crossings"]:
        lines.append("  none")
    for h in d["planet_hidden"]:
        lines.append(f"  planet hides the star {h['start_utc'][11:23]} .. {h['end_utc'][11:23]}")
    ca = d["closest_approach"]
    if ca.get("time_sigma_s") is not None and np.isfinite(ca["time_sigma_s"]):
        lines.append(f"  closest approach {ca['ring_radius_km']:,.0f} +- {ca['radius_sigma_km']:,.1f} km "
                     f"at {_hms(ca['time_utc'], ca['time_sigma_s'])}")
    for rp in ca.get("reach_probability") or []:
        lines.append(f"  chance the chord reaches the {rp['edge']} edge of the {rp['region']} "
                     f"({rp['boundary_km']:,.0f} km): {100 * rp['probability']:.0f} %")
    budget = d.get("uncertainty") or {}
    if budget:
        parts = [f"{k} {v['sigma_km']:.3g} km" for k, v in budget.get("terms", {}).items()
                 if "sigma_km" in v]
        pole = budget.get("terms", {}).get("pole", {}).get("sigma_deg")
        if pole:
            parts.append(f"pole {pole:g} deg")
        lines.append("  1-sigma budget (sky plane at the planet): " + ", ".join(parts)
                     + "; times print to the precision their sigma supports")
        for n in budget.get("notes", []):
            lines.append(f"  note: {n}")
    rec = d.get("recording")
    if rec:
        lines.append(f"  record {rec['start_utc'][11:19]} .. {rec['stop_utc'][11:19]} UTC "
                     f"({rec['duration_s'] / 60:.1f} min, {rec['frames']:,} frames at "
                     f"{rep.telescope.cadence_s:g} s, {rec['data_volume_gb']:.2f} GB at "
                     f"{rep.telescope.frame_width_px:g} x {rep.telescope.frame_height_px:g} px x "
                     f"{rep.telescope.bits_per_pixel:g} bit): 3 sigma + 60 s of baseline around the "
                     "first and last region crossing")
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
    bg = rep.photometry.get("background", {})
    for n in bg.get("notes", []):
        lines.append(f"  note: {n}")
    n_feat = len({z.feature.name for z in rep.zones if z.feature.weight > 0})
    n_listed = len({z.feature.name for z in rep.zones if z.feature.weight <= 0})
    n_located = sum((not z.resolvable) and z.feature.feature in ("edge", "narrow ring")
                    and np.isfinite(z.location_sigma_km) and not z.partial and not z.behind_planet
                    for z in rep.zones)
    lines += ["", f"Features crossed: {n_feat} scored ({len(rep.zones)} crossings: {n_res} resolvable, "
                  f"{n_part} in part, {n_located} located only"
                  + (f"; {n_listed} corotation zones listed, not scored" if n_listed else "") + "); "
                  f"{rep.meta['feature_selection']}",
              "  SNR: the feature's own signal per resolution element, through the ring's slant "
              "transmission T = exp(-tau/|sin B*|), with the planet and ring light in the aperture"]
    if rep.zones:
        lines.append(f"  {'side':7s} {'time (UTC) +- 1 sigma':21s} {'feature':40s} {'r km':>9s} "
                     f"{'v km/s':>7s} {'L km':>6s} {'dt_req s':>8s} {'res km':>6s} {'T':>6s} "
                     f"{'SNR':>6s}  verdict")
    shown = rep.zones
    if max_zones is not None and len(shown) > max_zones:
        keep = set(map(id, sorted(shown, key=lambda z: (-z.feature.weight,
                                                        -z.feature.torque_dyn_cm))[:max_zones]))
        shown = [z for z in shown if id(z) in keep]
    for z in shown:
        f = z.feature
        t = _hms(_utc(z.time_s), z.time_sigma_s) if np.isfinite(z.time_s) else "(partial)"
        if f.weight <= 0:
            verdict = "listed (corotation zone, not scored)"
        elif z.resolvable:
            verdict = "resolvable"
        elif 0 < z.resolved_fraction < 0.995 and not z.behind_planet:
            verdict = (f"partly: {z.resolved_extent_km:.0f} of {f.width_km:.0f} km resolved "
                       f"({z.limit}-limited)")
            if z.reasons and "SNR" in " ".join(z.reasons):
                verdict += "; " + next(r for r in z.reasons if "SNR" in r)
        elif (f.feature in ("edge", "narrow ring") and np.isfinite(z.location_sigma_km)
              and not z.behind_planet and not z.partial):
            verdict = (f"located to {z.location_sigma_km:.2g} km, profile not resolved "
                       f"({z.limit}-limited, {z.achievable_resolution_km:.2f} km)")
        else:
            verdict = "NOT: " + (z.reasons[0] if z.reasons else "")
        if z.usable is False:
            verdict += " [not observable]"
        snr = f"{z.snr_per_element:6.1f}" if np.isfinite(z.snr_per_element) else "     -"
        trans = f"{z.transmission:6.3f}" if np.isfinite(z.transmission) else "     -"
        lines.append(f"  {z.side:7s} {t:21s} {f.name[:40]:40s} {rep.crossing_radius_km(z):9.1f} "
                     f"{z.radial_velocity_km_s:7.2f} {z.feature_scale_km:6.2f} "
                     f"{z.required_interval_s:8.3f} {z.achievable_resolution_km:6.2f} {trans} {snr}  {verdict}")
    if len(shown) < len(rep.zones):
        lines.append(f"  ... the {len(shown)} strongest of {len(rep.zones)} feature crossings shown; "
                     "all are in --format json / csv / ecsv")
    if d.get("from_memory"):
        lines += ["", f"Values marked 'from memory' in the data files that this event rests on "
                      f"({len(d['from_memory'])}; see --format json for the full sources):"]
        names = [item.split(":")[0] for item in d["from_memory"]]
        orbits = [n[:-len(" orbit")] for n in names if n.endswith(" orbit")]
        rest = [n for n in names if not n.endswith(" orbit")]
        if rest:
            lines.append("  - " + ", ".join(rest))
        if orbits:
            lines.append("  - ring orbits: " + ", ".join(orbits))
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
