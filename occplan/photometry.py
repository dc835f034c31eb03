"""Photometry of an occultation: resolution limits, count rates, noise and signal to noise.

Pure numpy, no kernels.  Units inside: km, s, um for wavelengths, photons (or electrons, once
the throughput includes the detector's quantum efficiency) per second.

What is here
------------
- :func:`band` / :func:`band_names`: the photometric bands of ``occplan/data/bands.toml``
  (zero points with their sources, the Sun's magnitude per band).
- :func:`fresnel_scale_km`: diffraction limit of the radial resolution at the rings.
- :func:`stellar_angular_diameter_mas`, :func:`projected_stellar_diameter_km`: the star's
  size from its V and K magnitudes (surface-brightness relations) and at the rings.
- :func:`star_photon_rate`, :func:`background_rate`: detected photon rates.
- :func:`scintillation_sigma`: Young's formula for the relative scintillation noise.
- :func:`snr_per_sample`, :func:`snr_per_resolution_element`, :func:`snr_for_telescope`:
  a noise budget with every term kept, so an output can show them.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import asdict, dataclass, field
from functools import lru_cache
from importlib import resources

import numpy as np

from .constants import AU_KM
from .errors import DataFileError, InputError, UnknownNameError

# SI 2019 exact values (h defines the kilogram, c the metre).
PLANCK_J_S = 6.62607015e-34
SPEED_OF_LIGHT_M_S = 299792458.0
ARCSEC_RAD = math.pi / (180.0 * 3600.0)
MAS_RAD = ARCSEC_RAD * 1.0e-3
STAR_MAG_RANGE = (-2.0, 25.0)
# Near-infrared magnitudes of the brightest red giants reach -4.5 (Betelgeuse, K about -4.4,
# from memory), so K inputs of the diameter relations get a wider range.
K_MAG_RANGE = (-5.0, 25.0)


# --------------------------------------------------------------------------- bands


@dataclass(frozen=True)
class Band:
    """A photometric band: effective wavelength, width and zero point (see bands.toml)."""

    name: str
    system: str
    wavelength_um: float
    bandwidth_um: float
    f_lambda_w_m2_um: float
    photon_flux_m2_s: float  # photons s^-1 m^-2 from a zero-magnitude star, whole band
    sun_mag: float
    sources: dict = field(default_factory=dict, compare=False, hash=False)


@lru_cache(maxsize=1)
def _bands() -> dict:
    res = resources.files("occplan") / "data" / "bands.toml"
    try:
        data = tomllib.loads(res.read_text(encoding="utf-8"))["bands"]
    except (KeyError, tomllib.TOMLDecodeError) as exc:
        raise DataFileError(f"occplan/data/bands.toml is malformed ({exc}); reinstall occplan") from None
    out = {}
    for name, b in data.items():
        band_obj = Band(
            name=name,
            system=str(b["system"]),
            wavelength_um=float(b["wavelength_um"]),
            bandwidth_um=float(b["bandwidth_um"]),
            f_lambda_w_m2_um=float(b["f_lambda_w_m2_um"]),
            photon_flux_m2_s=float(b["photon_flux_m2_s"]),
            sun_mag=float(b["sun_mag"]),
            sources={k: v for k, v in b.items() if k.endswith("_source")},
        )
        out[name.upper()] = band_obj
        for alias in b.get("aliases", []):
            out[str(alias).upper()] = band_obj
    return out


def band_names() -> list[str]:
    """Names of the known bands, blue to red (aliases not listed)."""
    seen = {}
    for b in _bands().values():
        seen[b.name] = b.wavelength_um
    return sorted(seen, key=seen.get)


def band(name: str | Band) -> Band:
    """The band called ``name`` (case-insensitive; 'Ks' is an alias of 'K')."""
    if isinstance(name, Band):
        return name
    key = str(name).strip().upper()
    bands = _bands()
    if key not in bands:
        raise UnknownNameError(f"unknown band {name!r}; known bands are {', '.join(band_names())}")
    return bands[key]


# --------------------------------------------------------------------------- input checks


def _positive(name: str, value, advice: str):
    v = np.asarray(value, dtype=float)
    if not np.all(np.isfinite(v)) or np.any(v <= 0):
        raise InputError(f"{name} must be a positive number (got {value!r}); {advice}")
    return v if v.ndim else float(v)


def _check_throughput(throughput) -> float:
    t = float(throughput)
    if not (math.isfinite(t) and 0.0 < t <= 1.0):
        raise InputError(f"throughput {throughput!r} is outside (0, 1]; give the fraction of "
                         "photons detected (optics x filter x quantum efficiency), e.g. 0.5")
    return t


def _check_obstruction(central_obstruction) -> float:
    e = float(central_obstruction)
    if not (math.isfinite(e) and 0.0 <= e < 1.0):
        raise InputError(f"central obstruction {central_obstruction!r} is outside [0, 1); give "
                         "the secondary mirror's diameter as a fraction of the aperture, e.g. 0.3")
    return e


def _check_mag(name: str, mag, rng=STAR_MAG_RANGE):
    m = np.asarray(mag, dtype=float)
    lo, hi = rng
    if not np.all(np.isfinite(m)) or np.any(m < lo) or np.any(m > hi):
        raise InputError(f"{name} {mag!r} is outside {lo:g}..{hi:g}; check the magnitude "
                         "(a missing value must be left out, not given as 99)")
    return m if m.ndim else float(m)


def collecting_area_m2(aperture_m: float, central_obstruction: float = 0.0) -> float:
    """Clear collecting area (m^2) of a circular aperture with a central obstruction.

    A = pi/4 D^2 (1 - eps^2), eps the obstruction's diameter as a fraction of D.
    """
    d = _positive("aperture", aperture_m, "give the telescope diameter in metres, e.g. 1.0")
    e = _check_obstruction(central_obstruction)
    return math.pi / 4.0 * float(d) ** 2 * (1.0 - e * e)


# --------------------------------------------------------------------------- resolution


def fresnel_scale_km(wavelength_um, distance_km):
    """Fresnel scale F = sqrt(lambda D / 2) in km.

    Parameters
    ----------
    wavelength_um : float or array
        Observing wavelength (um).
    distance_km : float or array
        Observer-to-rings distance (km).

    Notes
    -----
    F = sqrt(lambda D / 2) is the textbook Fresnel scale of occultation work (common practice):
    a sharp edge is blurred over about F, so the radial resolution cannot be much below it
    without a diffraction reconstruction.  About 0.6 km at 0.55 um and 1.2 km at 2.2 um for
    a planet 9.5 AU away.
    """
    lam_km = _positive("wavelength", wavelength_um, "give it in micrometres, e.g. 0.55") * 1.0e-9
    d = _positive("distance", distance_km, "give the observer-ring distance in km")
    return np.sqrt(lam_km * d / 2.0)


@dataclass(frozen=True)
class StellarDiameter:
    """A star's limb-darkened angular diameter from a surface-brightness relation."""

    theta_mas: float
    relative_uncertainty: float  # 1-sigma fraction of theta stated for the relation
    relation: str  # the relation used, with its source
    luminosity_class: str  # 'dwarf' or 'giant' (the one used)
    v_minus_k: float
    note: str = ""

    def as_dict(self) -> dict:
        return asdict(self)


# Kervella et al. 2004, A&A 426, 297, abstract and table: log theta_LD = a (V-K) + b - 0.2 K,
# a = 0.0755, b = 0.5170, intrinsic dispersion <= 1 % in theta_LD, valid for dwarfs A0..M2
# (-0.1 <~ V-K <~ 3.7; the colour limits are from memory).
_KERVELLA_A, _KERVELLA_B, _KERVELLA_SIGMA = 0.0755, 0.5170, 0.01
_KERVELLA_VK = (-0.1, 3.7)
# van Belle 1999, PASP 111, 1515: theta(V=0) = 10^(0.669 + 0.223 (V-K)) mas for giants and
# supergiants, theta = theta(V=0) 10^(-V/5); spread 11-12 % (abstract).  Coefficients and
# the colour range (about 0..8) are from memory.
_VANBELLE_A, _VANBELLE_B, _VANBELLE_SIGMA = 0.223, 0.669, 0.12
_VANBELLE_VK = (0.0, 8.0)
# 'auto': above this V-K colour the star is taken for a giant.  Reason: it is the red end of
# Kervella's dwarf calibration (M2 V); a star redder than that and bright enough for a ring
# occultation (V <~ 14) is almost always an M giant, whereas M dwarfs that red are faint.
AUTO_GIANT_VK = 3.7


def stellar_angular_diameter_mas(vmag: float, kmag: float, luminosity_class: str = "auto",
                                 vmag_sigma: float = 0.0, kmag_sigma: float = 0.0):
    """Limb-darkened angular diameter (mas) from V and K magnitudes.

    Parameters
    ----------
    vmag, kmag : float
        Dereddened Johnson V and K magnitudes (2MASS Ks is close enough: a few 0.01 mag).
    luminosity_class : {'dwarf', 'giant', 'auto'}
        Which relation to use.  'auto' uses the giant relation when V-K > 3.7 and the
        dwarf relation otherwise (see Notes).
    vmag_sigma, kmag_sigma : float
        1-sigma uncertainties of V and K (mag), e.g. the scatter of a colour transformation;
        propagated into ``relative_uncertainty`` (added in quadrature to the relation's).

    Returns
    -------
    StellarDiameter

    Notes
    -----
    Dwarfs and subgiants (Kervella et al. 2004, A&A 426, 297):
    log10 theta_LD = 0.0755 (V-K) + 0.5170 - 0.2 K, dispersion <= 1 %.
    Giants (van Belle 1999, PASP 111, 1515): log10 theta = 0.669 + 0.223 (V-K) - 0.2 V,
    spread 11-12 %.
    Colour alone cannot tell a dwarf from a giant.  For 2.3 < V-K < 3.7 (K stars) the two
    relations agree within 10 %, so the choice matters little; for bluer stars the giant
    relation gives up to 40 % larger diameters.  'auto' therefore defaults to the dwarf
    relation and switches to the giant one only beyond the dwarf calibration (V-K > 3.7),
    where a bright star is nearly always a giant; the note says so.  Pass the class when it
    is known (spectral type, parallax: :func:`star_angular_diameter`).
    With log10 theta = a V + b K + c, the magnitudes' errors add
    ln(10) sqrt((a sigma_V)^2 + (b sigma_K)^2) to the relative uncertainty (independent errors
    assumed: conservative for V and K derived from the same Gaia colour).
    """
    v = _check_mag("V magnitude", vmag)
    k = _check_mag("K magnitude", kmag, K_MAG_RANGE)
    vk = float(v) - float(k)
    cls = str(luminosity_class).strip().lower()
    if cls not in ("dwarf", "giant", "auto"):
        raise InputError(f"luminosity class {luminosity_class!r} unknown; use dwarf, giant or auto")
    note = ""
    if cls == "auto":
        cls = "giant" if vk > AUTO_GIANT_VK else "dwarf"
        shown = f"{vk:.2f}"
        if float(shown) == AUTO_GIANT_VK:  # never print "3.70 > 3.7": show the digits that decide
            shown = f"{vk:.4f}"
        note = (f"luminosity class not given: V-K = {shown} {'>' if cls == 'giant' else '<='} "
                f"{AUTO_GIANT_VK} taken as a {cls} (colour alone cannot tell; pass it if known)")
    if cls == "dwarf":
        log_theta = _KERVELLA_A * vk + _KERVELLA_B - 0.2 * float(k)
        sigma, rng = _KERVELLA_SIGMA, _KERVELLA_VK
        dv, dk = _KERVELLA_A, -_KERVELLA_A - 0.2
        relation = "Kervella et al. 2004 (A&A 426, 297): log theta = 0.0755 (V-K) + 0.5170 - 0.2 K"
    else:
        log_theta = _VANBELLE_B + _VANBELLE_A * vk - 0.2 * float(v)
        sigma, rng = _VANBELLE_SIGMA, _VANBELLE_VK
        dv, dk = _VANBELLE_A - 0.2, -_VANBELLE_A
        relation = "van Belle 1999 (PASP 111, 1515): log theta = 0.669 + 0.223 (V-K) - 0.2 V"
    sv, sk = float(vmag_sigma or 0.0), float(kmag_sigma or 0.0)
    if not (np.isfinite(sv) and np.isfinite(sk) and sv >= 0 and sk >= 0):
        raise InputError(f"magnitude uncertainties {vmag_sigma!r}, {kmag_sigma!r} must be >= 0")
    if sv > 0 or sk > 0:
        from_mags = math.log(10.0) * math.hypot(dv * sv, dk * sk)
        sigma = math.hypot(sigma, from_mags)
        extra = f"V, K uncertainties {sv:.3f}, {sk:.3f} mag add {100 * from_mags:.1f} % to the diameter"
        note = f"{note}; {extra}" if note else extra
    if not rng[0] <= vk <= rng[1]:
        extra = f"V-K = {vk:.2f} is outside the {cls} calibration {rng[0]}..{rng[1]}: extrapolated"
        note = f"{note}; {extra}" if note else extra
    return StellarDiameter(10.0 ** log_theta, sigma, relation, cls, vk, note)


EXTINCTION_NOTE = ("magnitudes not corrected for interstellar extinction: a reddened star's V-K "
                   "is redder and its diameter overestimated")


def star_angular_diameter(star, luminosity_class: str = "auto"):
    """The angular diameter of a :class:`occplan.ephemeris.StarSpec`, or None without V and K.

    Like :func:`stellar_angular_diameter_mas` on ``star.vmag``, ``star.kmag``, and in
    addition: the magnitudes' uncertainties from ``star.extra['photometry']`` (the scatter of
    a Gaia colour transformation, :mod:`occplan.gaia_photometry`) are propagated, and with
    ``luminosity_class='auto'`` a significant parallax (``star.extra['parallax_error_mas']``)
    decides dwarf or giant through the absolute K magnitude
    (:func:`occplan.gaia_photometry.luminosity_class_from_parallax`); otherwise the colour
    rule.  The note always says which class was used and why, and where V or K come from.
    """
    from .gaia_photometry import luminosity_class_from_parallax

    if star.vmag is None or star.kmag is None:
        return None
    extra = getattr(star, "extra", None) or {}
    phot = extra.get("photometry") or {}

    def sigma(band):  # only for the magnitude the catalog gave (not a --vmag/--kmag override)
        rec = phot.get(band) or {}
        s = rec.get("sigma")
        same = rec.get("mag") == (star.vmag if band == "V" else star.kmag)
        return 0.0 if not same or s is None or not np.isfinite(s) else float(s)

    notes = []
    cls = str(luminosity_class).strip().lower()
    if cls == "auto":
        plx_cls, why = luminosity_class_from_parallax(star.vmag, star.kmag, star.parallax_mas,
                                                      extra.get("parallax_error_mas"))
        if plx_cls is not None:
            cls = plx_cls
        notes.append(why)
    else:
        notes.append(f"luminosity class {cls} (given)")
    diam = stellar_angular_diameter_mas(star.vmag, star.kmag, cls, sigma("V"), sigma("K"))
    for band, value in (("V", star.vmag), ("K", star.kmag)):
        rec = phot.get(band) or {}
        if rec.get("source") and rec.get("mag") == value:
            notes.append(f"{band} from {rec['source']}")
    notes.append(EXTINCTION_NOTE)
    note = "; ".join([n for n in [diam.note, *notes] if n])
    return StellarDiameter(diam.theta_mas, diam.relative_uncertainty, diam.relation,
                           diam.luminosity_class, diam.v_minus_k, note)


def projected_stellar_diameter_km(theta_mas, distance_km):
    """The star's diameter projected at the rings (km): theta (rad) x distance.

    Small-angle product; theta in mas, distance observer-rings in km.
    """
    th = np.asarray(theta_mas, dtype=float)
    if np.any(~np.isfinite(th)) or np.any(th < 0):
        raise InputError(f"angular diameter {theta_mas!r} mas must be >= 0")
    d = _positive("distance", distance_km, "give the observer-ring distance in km")
    return th * MAS_RAD * d


# --------------------------------------------------------------------------- photon rates


def star_photon_rate(mag, band_name, aperture_m, throughput, central_obstruction=0.0):
    """Detected photon rate (photons/s) of a star of magnitude ``mag`` in ``band_name``.

    N = N0 10^(-0.4 m) A tau, with N0 the band's zero-point photon flux (photons s^-1 m^-2,
    bands.toml: Bessell et al. 1998 for V R I, Cohen et al. 2003 for J H K), A the clear area
    pi/4 D^2 (1 - eps^2) and tau the throughput (optics x filter x quantum efficiency, so the
    result counts photo-electrons).
    """
    b = band(band_name)
    m = _check_mag("star magnitude", mag)
    area = collecting_area_m2(aperture_m, central_obstruction)
    tau = _check_throughput(throughput)
    return b.photon_flux_m2_s * 10.0 ** (-0.4 * np.asarray(m)) * area * tau


def surface_brightness_mag_arcsec2(band_name, reflectance_if, heliocentric_distance_au):
    """Surface brightness (mag/arcsec^2) of a sunlit surface of reflectance I/F.

    mu = m_sun + 5 log10(r_AU) - 2.5 log10((I/F) Omega_1 / pi),
    with m_sun the Sun's magnitude at 1 AU in the band, r the heliocentric distance and
    Omega_1 = (pi / 648000)^2 sr the solid angle of one square arcsecond.

    Notes
    -----
    I/F is the radiance over the incident solar flux divided by pi (common practice in
    planetary photometry), so a patch of solid angle Omega sends (I/F) Omega / pi times the
    solar flux at the planet.  At zero phase the disk-averaged I/F of a planet is its
    geometric albedo p (the definition of p), so p may stand in for I/F on the disk.
    """
    b = band(band_name)
    if_ = _positive("I/F", reflectance_if, "give the reflectance, e.g. 0.3")
    r = _positive("heliocentric distance", heliocentric_distance_au, "give it in AU")
    return b.sun_mag + 5.0 * np.log10(r) - 2.5 * np.log10(if_ * ARCSEC_RAD ** 2 / math.pi)


@dataclass(frozen=True)
class Background:
    """Photon rate from the planet and rings inside the photometric aperture."""

    evaluated: bool
    rate_photons_s: float  # total detected (0 when not evaluated)
    ring_rate_photons_s: float = 0.0
    planet_rate_photons_s: float = 0.0
    sky_rate_photons_s: float = 0.0
    ring_reflectivity_if: float | None = None
    planet_geometric_albedo: float | None = None
    ring_fill_fraction: float = 0.0
    planet_fill_fraction: float = 0.0
    aperture_area_arcsec2: float = 0.0
    origin: dict = field(default_factory=dict)  # where each reflectance came from
    note: str = ""

    def as_dict(self) -> dict:
        return asdict(self)


def _from_body(body, key: str, band_obj: Band):
    """A per-band value from ``body.photometry[key]`` (a table band -> value, or a number)."""
    phot = getattr(body, "photometry", None) or {}
    if key not in phot:
        return None
    entry = phot[key]
    if isinstance(entry, dict):
        for k, v in entry.items():
            if k == "source":
                continue
            if _bands().get(str(k).strip().upper()) is band_obj:
                return float(v)
        return None
    return float(entry)


def background_rate(band_name, aperture_m, throughput, aperture_radius_arcsec,
                    heliocentric_distance_au, *, body=None, ring_reflectivity_if=None,
                    planet_geometric_albedo=None, ring_fill_fraction=1.0,
                    planet_fill_fraction=0.0, sky_mag_arcsec2=None, central_obstruction=0.0):
    """Detected photon rate (photons/s) of the planet and rings in the photometric aperture.

    Parameters
    ----------
    band_name : str
    aperture_m, throughput, central_obstruction : telescope (see :func:`star_photon_rate`).
    aperture_radius_arcsec : float
        Radius of the photometric aperture on the sky.
    heliocentric_distance_au : float
        Sun-planet distance (AU).
    body : Body, optional
        When its ``photometry`` table (body TOML ``[photometry]``) gives
        ``ring_reflectivity_if`` or ``planet_geometric_albedo`` for the band, those are used;
        the keyword values below are the fallback when the body file has none.
    ring_reflectivity_if, planet_geometric_albedo : float, optional
        Ring I/F and planet geometric albedo in the band.
    ring_fill_fraction, planet_fill_fraction : float
        Fractions of the aperture's area covered by lit ring and by the planet's disk
        (from the sky-plane polygons; default: aperture fully on the rings, none on the disk).
    sky_mag_arcsec2 : float, optional
        Sky background (mag/arcsec^2) to add; not included when omitted.

    Returns
    -------
    Background
        ``evaluated`` is False (rate 0, a note says why) when no reflectance is known for a
        component that covers part of the aperture and no sky brightness was given.

    Body file layout read here (values per band, each table with its ``source``)::

        [photometry.ring_reflectivity_if]
        V = 0.4
        source = "..."
        [photometry.planet_geometric_albedo]
        V = 0.5
        source = "..."

    A plain number instead of a table applies to every band.

    Notes
    -----
    Rate = N0 10^(-0.4 mu) x area_arcsec2 x fill x A x tau per component, mu from
    :func:`surface_brightness_mag_arcsec2` (I/F for the rings, geometric albedo for the disk,
    i.e. zero-phase brightness: fine for Saturn, whose phase angle from Earth stays below
    6.4 deg, but it ignores the rings' opposition surge and their dependence on the opening
    angle).  Scattered light from outside the aperture (seeing halo of the planet) is not
    included.
    """
    b = band(band_name)
    area = collecting_area_m2(aperture_m, central_obstruction)
    tau = _check_throughput(throughput)
    r_ap = float(_positive("photometric aperture radius", aperture_radius_arcsec,
                           "give it in arcsec, e.g. 3"))
    r_au = float(_positive("heliocentric distance", heliocentric_distance_au, "give it in AU"))
    for nm, f in (("ring fill fraction", ring_fill_fraction),
                  ("planet fill fraction", planet_fill_fraction)):
        if not 0.0 <= float(f) <= 1.0:
            raise InputError(f"{nm} {f!r} is outside 0..1")
    if float(ring_fill_fraction) + float(planet_fill_fraction) > 1.0 + 1e-9:
        raise InputError("ring and planet fill fractions add up to more than 1")
    ap_area = math.pi * r_ap ** 2
    origin, missing = {}, []

    def pick(key, caller_value, fill):
        v = _from_body(body, key, b) if body is not None else None
        if v is not None:
            origin[key] = f"body file ({getattr(body, 'name', 'body')} [photometry])"
            return v
        if caller_value is not None:
            origin[key] = "caller"
            return float(caller_value)
        if fill > 0:
            missing.append(key)
        return None

    ring_if = pick("ring_reflectivity_if", ring_reflectivity_if, float(ring_fill_fraction))
    albedo = pick("planet_geometric_albedo", planet_geometric_albedo, float(planet_fill_fraction))

    def rate(mu, fill):
        return b.photon_flux_m2_s * 10.0 ** (-0.4 * mu) * ap_area * fill * area * tau

    ring_rate = planet_rate = sky_rate = 0.0
    if ring_if is not None and ring_if > 0 and ring_fill_fraction > 0:
        ring_rate = float(rate(surface_brightness_mag_arcsec2(b, ring_if, r_au), ring_fill_fraction))
    if albedo is not None and albedo > 0 and planet_fill_fraction > 0:
        planet_rate = float(rate(surface_brightness_mag_arcsec2(b, albedo, r_au), planet_fill_fraction))
    if sky_mag_arcsec2 is not None:
        sky_rate = float(rate(float(sky_mag_arcsec2), 1.0))
        origin["sky"] = "caller"
    if missing:
        note = ("background was not evaluated: no " + " or ".join(missing) + f" for band {b.name} "
                "(add a [photometry] table to the body file or pass the value)")
        return Background(False, 0.0, origin=origin, note=note, aperture_area_arcsec2=ap_area,
                          ring_fill_fraction=float(ring_fill_fraction),
                          planet_fill_fraction=float(planet_fill_fraction))
    note = "zero-phase reflectance model; planet halo outside the aperture not included"
    if sky_mag_arcsec2 is None:
        note += "; sky background not included"
    return Background(True, ring_rate + planet_rate + sky_rate, ring_rate, planet_rate, sky_rate,
                      ring_if, albedo, float(ring_fill_fraction), float(planet_fill_fraction),
                      ap_area, origin, note)


def estimate_band_magnitude(vmag: float, kmag: float, band_name: str) -> float:
    """Rough magnitude in ``band_name`` from V and K: linear in 1/wavelength between them.

    m(lambda) = V + (K - V) (1/lambda_V - 1/lambda) / (1/lambda_V - 1/lambda_K).
    A stand-in for when only V and K are known.  For FGK stars it is good to about 0.15 mag
    (the Sun's R, I, J, H magnitudes come out within 0.11 mag, tests/accuracy); M stars, with
    their molecular bands, can be off by more.  V and K themselves are returned exactly.
    """
    b = band(band_name)
    v = float(_check_mag("V magnitude", vmag))
    k = float(_check_mag("K magnitude", kmag, K_MAG_RANGE))
    if b.name == "V":
        return v
    if b.name == "K":
        return k
    iv, ik = 1.0 / band("V").wavelength_um, 1.0 / band("K").wavelength_um
    x = (iv - 1.0 / b.wavelength_um) / (iv - ik)
    return v + (k - v) * x


# --------------------------------------------------------------------------- noise


def scintillation_sigma(aperture_m, airmass, altitude_m, exposure_s):
    """Relative scintillation noise of a star for one exposure (Young 1967).

    sigma = 0.09 D^(-2/3) X^1.75 exp(-h / 8000 m) (2 t)^(-1/2),
    D the aperture in cm, X the airmass, h the site altitude (m), t the exposure (s).

    Notes
    -----
    Young (1967, AJ 72, 747) in the form of Dravins et al. (1998, PASP 110, 610, part III of
    "Atmospheric intensity scintillation of stars").  A median, for exposures long compared
    with the wind crossing time of the aperture (t >~ 10 ms for a 1-m telescope) and
    apertures larger than the Fresnel zone of the turbulence (D >~ 10 cm); individual nights
    scatter around it by a factor of about 1.5 (Osborn et al. 2015, MNRAS 452, 1707; from
    memory).
    """
    d_cm = _positive("aperture", aperture_m, "give the telescope diameter in metres") * 100.0
    x = np.asarray(airmass, dtype=float)
    if np.any(~np.isfinite(x)) or np.any(x < 1.0 - 1e-9):
        raise InputError(f"airmass {airmass!r} must be >= 1 (1 at the zenith)")
    h = np.asarray(altitude_m, dtype=float)
    if np.any(~np.isfinite(h)) or np.any(h < -500) or np.any(h > 20000):
        raise InputError(f"site altitude {altitude_m!r} m is outside -500..20000 m (20 km covers airborne telescopes)")
    t = _positive("exposure", exposure_s, "give the exposure time in seconds")
    return 0.09 * d_cm ** (-2.0 / 3.0) * x ** 1.75 * np.exp(-h / 8000.0) / np.sqrt(2.0 * t)


SCINT_BACKGROUND_NOTE = ("scintillation applied to star + background (conservative: an "
                         "extended background scintillates less than the star)")


@dataclass(frozen=True)
class SNRTerms:
    """A noise budget: signal and each noise term in electrons for ``samples`` exposures.

    Arrays when any input was an array.  noise^2 = star + background + n_pix (RN^2 + dark t)
    + (sigma_scint S)^2 per exposure, summed over ``samples`` exposures.
    """

    samples: float | np.ndarray  # exposures combined (1 for a single sample)
    exposure_s: float
    star_e: float | np.ndarray
    background_e: float | np.ndarray
    star_shot_noise_e: float | np.ndarray
    background_shot_noise_e: float | np.ndarray
    read_noise_e: float | np.ndarray
    dark_noise_e: float | np.ndarray
    scintillation_noise_e: float | np.ndarray
    total_noise_e: float | np.ndarray
    snr: float | np.ndarray
    scintillation_sigma: float | np.ndarray
    n_pixels: float
    notes: tuple = ()

    def as_dict(self) -> dict:
        """Plain floats/lists (JSON-ready)."""
        out = {}
        for k, v in asdict(self).items():
            if isinstance(v, np.ndarray):
                v = v.tolist()
            elif isinstance(v, np.generic):
                v = v.item()
            elif isinstance(v, tuple):
                v = list(v)
            out[k] = v
        return out

    def dominant_term(self):
        """Name of the largest noise term (per element of the arrays)."""
        names = np.array(["star shot", "background shot", "read", "dark", "scintillation"])
        stack = np.stack(np.broadcast_arrays(
            self.star_shot_noise_e, self.background_shot_noise_e, self.read_noise_e,
            self.dark_noise_e, self.scintillation_noise_e))
        idx = np.argmax(stack, axis=0)
        return str(names[idx]) if np.ndim(idx) == 0 else names[idx]


def _scalar(x):
    a = np.asarray(x, dtype=float)
    return float(a) if a.ndim == 0 else a


def snr_per_sample(star_rate_e_s, background_rate_e_s, exposure_s, *, read_noise_e, n_pixels,
                   scintillation_sigma, dark_e_s=0.0, scintillate_background=True) -> SNRTerms:
    """Signal to noise of the star in one exposure.

    Parameters
    ----------
    star_rate_e_s, background_rate_e_s : float or array
        Detected rates (photo-electrons/s) of the star and of the background in the aperture.
    exposure_s : float
        Exposure time (s) of one sample.
    read_noise_e : float
        Read noise per pixel (electrons rms).
    n_pixels : float
        Pixels in the photometric aperture.
    scintillation_sigma : float or array
        Relative scintillation for this exposure (:func:`scintillation_sigma`).
    dark_e_s : float
        Dark current per pixel (electrons/s).
    scintillate_background : bool
        Apply the scintillation to star + background (default, conservative: an extended
        background scintillates less than a point source) or to the star alone.

    Notes
    -----
    S = R_star t; noise^2 = R_star t + R_bg t + n_pix (RN^2 + dark t) + (sigma (S + B))^2,
    the usual CCD-equation budget (common practice) with Young's scintillation added in
    quadrature.  SNR = S / noise.
    """
    t = float(_positive("exposure", exposure_s, "give the exposure (cadence minus dead time) in s"))
    rs = np.asarray(star_rate_e_s, dtype=float)
    rb = np.asarray(background_rate_e_s, dtype=float)
    if np.any(rs < 0) or np.any(rb < 0):
        raise InputError("photon rates must be >= 0")
    rn = float(read_noise_e)
    dk = float(dark_e_s)
    npix = float(n_pixels)
    if rn < 0 or dk < 0 or npix <= 0:
        raise InputError("read noise and dark current must be >= 0 and the aperture must hold "
                         "at least one pixel")
    sig = np.asarray(scintillation_sigma, dtype=float)
    star = rs * t
    bg = rb * t
    scint = sig * (star + bg if scintillate_background else star)
    read = np.sqrt(npix) * rn
    dark = np.sqrt(npix * dk * t)
    total = np.sqrt(star + bg + read ** 2 + dark ** 2 + scint ** 2)
    with np.errstate(divide="ignore", invalid="ignore"):
        snr = np.where(total > 0, star / np.where(total > 0, total, 1.0), 0.0)
    if scintillate_background:
        notes = (SCINT_BACKGROUND_NOTE,)
    else:
        notes = ("scintillation applied to the star only",)
    return SNRTerms(1.0, t, _scalar(star), _scalar(bg), _scalar(np.sqrt(star)),
                    _scalar(np.sqrt(bg)), _scalar(read + 0 * star), _scalar(dark + 0 * star),
                    _scalar(scint), _scalar(total), _scalar(snr), _scalar(sig), npix, notes)


def snr_per_resolution_element(sample: SNRTerms, resolution_km, radial_velocity_km_s,
                               sampling_interval_s) -> SNRTerms:
    """Signal to noise per radial resolution element.

    N = resolution / (|v| dt) samples fall in one element (v the radial velocity in the ring
    plane, dt the sampling interval); with white noise signal adds as N and every noise term
    as sqrt(N) (Young's scintillation falls as t^(-1/2), so it is white on these scales), so
    SNR_element = SNR_sample sqrt(N).  When N < 1 one sample spans more than an element: the
    cadence sets the resolution (|v| dt) and the per-sample SNR is returned with a note.
    """
    res = _positive("radial resolution", resolution_km, "give it in km")
    dt = float(_positive("sampling interval", sampling_interval_s, "give the cadence in s"))
    v = np.abs(np.asarray(radial_velocity_km_s, dtype=float))
    if np.any(~np.isfinite(v)):
        raise InputError("radial velocity must be finite")
    with np.errstate(divide="ignore"):
        n_raw = np.where(v > 0, res / (np.where(v > 0, v, 1.0) * dt), np.inf)
    notes = list(sample.notes)
    if np.any(n_raw < 1):
        notes.append("a sample spans more than one resolution element: the cadence limits the "
                     "resolution to |v| dt; per-sample SNR given there")
    if np.any(~np.isfinite(n_raw)):
        notes.append("radial velocity 0 (turning point): samples per element unbounded, "
                     "SNR given for 1 sample there")
    n = np.where(np.isfinite(n_raw), np.maximum(n_raw, 1.0), 1.0)
    root = np.sqrt(n)
    return SNRTerms(
        _scalar(n_raw), sample.exposure_s, _scalar(sample.star_e * n), _scalar(sample.background_e * n),
        _scalar(sample.star_shot_noise_e * root), _scalar(sample.background_shot_noise_e * root),
        _scalar(sample.read_noise_e * root), _scalar(sample.dark_noise_e * root),
        _scalar(sample.scintillation_noise_e * root), _scalar(sample.total_noise_e * root),
        _scalar(sample.snr * root), sample.scintillation_sigma, sample.n_pixels, tuple(notes))


def snr_for_telescope(telescope, star_mag, *, airmass=1.0, altitude_m=0.0,
                      background_rate_photons_s=0.0) -> SNRTerms:
    """Per-sample noise budget for a :class:`occplan.telescope.TelescopeProfile`.

    ``star_mag`` is the star's magnitude in the telescope's band (see
    :func:`estimate_band_magnitude` when only V and K are known); the background rate is
    :attr:`Background.rate_photons_s` from :func:`background_rate` (detected photons/s).
    """
    rate = star_photon_rate(star_mag, telescope.band, telescope.aperture_m, telescope.throughput,
                            telescope.central_obstruction)
    sig = scintillation_sigma(telescope.aperture_m, airmass, altitude_m, telescope.exposure_s)
    return snr_per_sample(rate, background_rate_photons_s, telescope.exposure_s,
                          read_noise_e=telescope.read_noise_e, n_pixels=telescope.n_pixels,
                          scintillation_sigma=sig, dark_e_s=telescope.dark_e_s)


def heliocentric_distance_au(planet_km, sun_km) -> np.ndarray:
    """|planet - Sun| in AU from barycentric positions in km ((3,) or (3, N))."""
    return np.linalg.norm(np.asarray(planet_km) - np.asarray(sun_km), axis=0) / AU_KM


# --------------------------------------------------------------------------- ring opacity


NONLINEAR_MODULATION = 0.5  # largest fractional optical-depth swing of a wave (feature_contrast)


def slant_transmission(normal_optical_depth, star_elevation_deg):
    """Fraction of the star's light that passes the ring: exp(-tau / |sin B*|).

    Parameters
    ----------
    normal_optical_depth : float or array
        The ring's normal optical depth tau.
    star_elevation_deg : float or array
        Elevation B* of the star above the ring plane (deg).

    Notes
    -----
    Extinction along the slant path through a thin ring of normal optical depth tau (the
    exp(-tau/mu) law with mu = |sin B*|: common practice).  Diffraction by ring particles
    removes light from the beam as well, so for a telescope that does not collect the
    diffracted lobe this is the transmission that sets the signal (the factor 2 extinction
    paradox does not apply at Earth's distance; common practice).
    """
    tau = np.asarray(normal_optical_depth, dtype=float)
    mu = np.abs(np.sin(np.radians(np.asarray(star_elevation_deg, dtype=float))))
    with np.errstate(divide="ignore", over="ignore"):
        return np.exp(-tau / np.maximum(mu, 1e-12))


def feature_contrast(feature_kind: str, amplitude: float, normal_optical_depth: float,
                     star_elevation_deg: float) -> tuple[float, float]:
    """Slant transmission of the ring and the feature's signal, both as fractions of the
    unocculted star.

    Parameters
    ----------
    feature_kind : str
        'density wave', 'overlap region', 'bending wave', 'edge', 'narrow ring' or
        'corotation' (:data:`occplan.features.FEATURE_KINDS`).
    amplitude : float
        Peak fractional surface-density amplitude (a bending wave's slope), as
        :class:`occplan.features.Feature` gives it.
    normal_optical_depth, star_elevation_deg : float

    Returns
    -------
    (transmission, contrast) : floats
        contrast nan for corotation zones (linear theory gives no profile).

    Notes
    -----
    With T = exp(-tau/mu), mu = |sin B*|:

    - a wave modulating the optical depth by a fraction a (a = min(0.5, amplitude); for a
      bending wave a = min(0.5, slope x cot|B*|), the change of the slant path with the
      ring's local tilt, Shu, Cuzzi & Lissauer 1983, from memory) swings the transmission
      between exp(-tau (1 -+ a) / mu); half of that swing is T sinh(a tau / mu)
      (= T a tau / mu for small a).  The cap 0.5: a nonlinear wave's profile has sharp
      crests and broad troughs that keep about half the mean surface density (Shu, Yuan &
      Lissauer 1985, from memory), so even a strong wave does not clear the ring;
    - an edge or a narrow ring steps the transmission between T and 1: contrast 1 - T.
    """
    b = float(star_elevation_deg)
    tau = float(normal_optical_depth)
    mu = max(abs(math.sin(math.radians(b))), 1e-12)
    t = float(slant_transmission(tau, b))
    if feature_kind in ("edge", "narrow ring"):
        return t, 1.0 - t
    if feature_kind in ("density wave", "overlap region"):
        a = min(NONLINEAR_MODULATION, float(amplitude))
    elif feature_kind == "bending wave":
        a = min(NONLINEAR_MODULATION, float(amplitude) * abs(math.cos(math.radians(b))) / mu)
    else:
        return t, float("nan")
    with np.errstate(over="ignore"):
        return t, float(t * math.sinh(min(a * tau / mu, 700.0)))


FEATURE_SNR_FORMULA = (
    "SNR = c S sqrt(N) / sqrt(T S + B t + n_pix (RN^2 + D t) + (sigma_scint T S)^2): S the "
    "unocculted star's photo-electrons per sample, T = exp(-tau/|sin B*|) the ring's slant "
    "transmission, c the feature's signal as a fraction of S (occplan.photometry."
    "feature_contrast), B the planet and ring light in the aperture, t the exposure, N = "
    "element / (|dr/dt| dt) >= 1 samples per radial element")


def feature_snr(star_rate_e_s, transmission, contrast, background_rate_e_s, exposure_s, *,
                read_noise_e, n_pixels, scintillation_sigma, dark_e_s, element_km,
                radial_velocity_km_s, sampling_interval_s):
    """Signal to noise of a ring feature's signal per radial resolution element (scalars or
    arrays; nan where the contrast is nan).

    Parameters
    ----------
    star_rate_e_s : float
        The unocculted star's detected rate (e/s).
    transmission, contrast : float
        From :func:`feature_contrast`.
    background_rate_e_s : float
        Planet and ring light in the aperture (e/s).
    exposure_s, read_noise_e, n_pixels, scintillation_sigma, dark_e_s :
        As :func:`snr_per_sample`.
    element_km, radial_velocity_km_s, sampling_interval_s : float
        Radial element, |dr/dt| and cadence: N = element / (|v| dt) samples (at least 1)
        per element (:func:`snr_per_resolution_element`).

    Notes
    -----
    :data:`FEATURE_SNR_FORMULA`.  The noise is that of the star seen through the ring (its
    shot noise and scintillation scale with T) plus the background, read and dark noise: the
    usual CCD budget (common practice).  The signal is the feature's swing, c S per sample.
    """
    c = np.asarray(contrast, dtype=float)
    noise = snr_per_sample(np.asarray(star_rate_e_s, dtype=float) * np.asarray(transmission, dtype=float),
                           background_rate_e_s, exposure_s, read_noise_e=read_noise_e,
                           n_pixels=n_pixels, scintillation_sigma=scintillation_sigma,
                           dark_e_s=dark_e_s, scintillate_background=False)
    signal = c * np.asarray(star_rate_e_s, dtype=float) * noise.exposure_s
    total = np.asarray(noise.total_noise_e, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        per_sample = np.where(total > 0, signal / np.where(total > 0, total, 1.0), np.inf)
        v = np.abs(np.asarray(radial_velocity_km_s, dtype=float))
        n = np.where(v > 0, np.asarray(element_km, dtype=float)
                     / (np.where(v > 0, v, 1.0) * float(sampling_interval_s)), 1.0)
    return _scalar(per_sample * np.sqrt(np.maximum(n, 1.0)))
