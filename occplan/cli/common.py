"""Turning the shared command-line options into library objects (no physics here)."""

from __future__ import annotations

from ..bodies import get_body
from ..catalogs import check_magnitude, find_site
from ..ephemeris import Observer, StarSpec, get_ephemeris, parse_epoch_jd_tt, parse_star_position, parse_utc, tdb_s_of
from ..errors import InputError


def ephemeris(kernel):
    return get_ephemeris(tuple(str(k) for k in (kernel or [])))


def body(name):
    return get_body(name)


def star(star_text=None, pm_ra=0.0, pm_dec=0.0, parallax=0.0, rv=0.0, star_epoch="2016.0",
         vmag=None, kmag=None, catalog=None, star_id=None) -> StarSpec:
    """A StarSpec from --star and its motion options, or from --catalog/--star-id."""
    if catalog is not None:
        if star_text is not None:
            raise InputError("give either --star or --catalog/--star-id, not both")
        if star_id is None:
            raise InputError("--catalog needs --star-id (the source_id of the star)")
        from ..catalogs import catalog_star

        spec = catalog_star(catalog, star_id)
        if vmag is not None or kmag is not None:
            from dataclasses import replace

            spec = replace(spec, vmag=check_magnitude(vmag, "V") if vmag is not None else spec.vmag,
                           kmag=check_magnitude(kmag, "K") if kmag is not None else spec.kmag)
        return spec
    if star_text is None:
        raise InputError('give the star: --star "RA DEC" (or --catalog FILE --star-id ID)')
    ra, dec = parse_star_position(star_text)
    _check_motion(pm_ra, pm_dec, parallax, rv)
    return StarSpec(ra_deg=ra, dec_deg=dec, pm_ra_mas_yr=pm_ra, pm_dec_mas_yr=pm_dec,
                    parallax_mas=parallax, rv_km_s=rv, epoch_jd_tt=parse_epoch_jd_tt(star_epoch),
                    name=star_text, vmag=check_magnitude(vmag, "V"), kmag=check_magnitude(kmag, "K"))


def _check_motion(pm_ra, pm_dec, parallax, rv) -> None:
    """Physical bounds of --pm-ra/--pm-dec/--parallax/--rv (see occplan.geometry.check_star)."""
    from ..geometry import MAX_PARALLAX_MAS, MAX_PROPER_MOTION_MAS_YR, MAX_RADIAL_VELOCITY_KM_S

    for option, value, low, high, unit in (
            ("--pm-ra", pm_ra, -MAX_PROPER_MOTION_MAS_YR, MAX_PROPER_MOTION_MAS_YR, "mas/yr"),
            ("--pm-dec", pm_dec, -MAX_PROPER_MOTION_MAS_YR, MAX_PROPER_MOTION_MAS_YR, "mas/yr"),
            ("--parallax", parallax, 0.0, MAX_PARALLAX_MAS, "mas"),
            ("--rv", rv, -MAX_RADIAL_VELOCITY_KM_S, MAX_RADIAL_VELOCITY_KM_S, "km/s")):
        if not low <= value <= high:
            raise InputError(f"{option} {value:g} {unit} is outside {low:g}..{high:g} {unit}, the "
                             "range of real stars" + ("; pass 0 if unknown" if option == "--parallax" else ""))


def observer(site=None, sites=None, lat=None, lon=None, height=0.0, geocentre=False,
             observer_id=None) -> Observer:
    """An Observer from exactly one of --site/--sites, --lat/--lon, --geocentre, --observer-id."""
    chosen = [site is not None, lat is not None or lon is not None, bool(geocentre),
              observer_id is not None]
    if sum(chosen) != 1:
        raise InputError("give exactly one observer: --site NAME --sites FILE, --lat/--lon "
                         "[--height], --geocentre, or --observer-id ID --kernel FILE")
    if site is not None:
        if sites is None:
            raise InputError("--site needs --sites FILE (a TOML file of [[sites]])")
        return find_site(sites, site).observer()
    if lat is not None or lon is not None:
        if lat is None or lon is None:
            raise InputError("--lat and --lon go together")
        return Observer.site("", lat, lon, height)
    if geocentre:
        return Observer.geocentre()
    return Observer.spacecraft(observer_id)


def window(start, end) -> tuple[float, float]:
    """(start, end) in TDB seconds past J2000 from --start/--end."""
    if start is None or end is None:
        raise InputError("give the time window: --start and --end (UTC ISO 8601)")
    t0, t1 = tdb_s_of(parse_utc(start)), tdb_s_of(parse_utc(end))
    if t1 <= t0:
        raise InputError(f"--end {end} is not after --start {start}")
    return float(t0), float(t1)



def event_report(opts: dict):
    """The EventReport that `occplan event` and `occplan plot` both start from.

    ``opts`` holds the shared options by their parameter names (a command's ``locals()``).
    """
    from ..events import evaluate_event
    from ..telescope import load_telescope

    o = opts
    if o["sigma"] is not None and o["sigma"] < 0:
        raise InputError(f"--sigma {o['sigma']} g/cm^2 is negative")
    from ..chords import check_chord_step

    t0_s, t1_s = window(o["start"], o["end"])
    check_chord_step(t0_s, t1_s, o["step"])
    profile = o["telescope"]
    if profile is None and o["site"] is not None and o["sites"] is not None:
        profile = find_site(o["sites"], o["site"]).telescope  # the site's own, as find/rank use
    tel = load_telescope(profile, cadence_s=o["cadence"],
                         band=o["band"].upper() if o["band"] else None, aperture_m=o["aperture"])
    return evaluate_event(
        body(o["body"]),
        star(o["star"], o["pm_ra"], o["pm_dec"], o["parallax"], o["rv"], o["star_epoch"],
             o["vmag"], o["kmag"], o["catalog"], o["star_id"]),
        observer(o["site"], o["sites"], o["lat"], o["lon"], o["height"], o["geocentre"],
                 o["observer_id"]),
        (t0_s, t1_s), telescope=tel, kernels=o["kernel"],
        deflection=not o["no_deflection"], barycentre_only=o["barycentre"], step_s=o["step"],
        max_order=o["max_order"], sigma_g_cm2=o["sigma"],
        samples_per_wavelength=o["samples_per_wavelength"],
        luminosity_class=o["luminosity_class"], min_snr=o["min_snr"],
        star_error_mas=o.get("star_error_mas"), planet_error_km=o.get("planet_error_km"),
        pole_error_deg=o.get("pole_error_deg"),
    )
