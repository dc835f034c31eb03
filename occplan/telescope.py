"""Telescope profiles: the instrument a candidate event is evaluated for.

A profile is a small TOML file (``occplan/data/telescope_default.toml`` is the default and the
template); a user file may give any subset of its keys, the rest come from the default.
Keys (units in the names): name, aperture_m, central_obstruction (fraction of the diameter),
throughput (optics x filter x quantum efficiency, 0..1], read_noise_e (per pixel, rms),
dark_e_s (per pixel), pixel_scale_arcsec, aperture_radius_arcsec (photometric aperture),
cadence_s (sampling interval), dead_time_s (readout gap in each sample), band,
samples_per_wavelength (4 by default; 2 is the Nyquist bound), and an optional ``[source]``
table of strings saying where each value comes from.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import asdict, dataclass, field, fields, replace
from importlib import resources
from pathlib import Path

from .errors import DataFileError, InputError


@dataclass(frozen=True)
class TelescopeProfile:
    """A telescope and camera (frozen; use :func:`load_telescope` with overrides to change)."""

    name: str
    aperture_m: float
    central_obstruction: float
    throughput: float
    read_noise_e: float
    dark_e_s: float
    pixel_scale_arcsec: float
    aperture_radius_arcsec: float
    cadence_s: float
    dead_time_s: float
    band: str
    samples_per_wavelength: float
    seeing_fwhm_arcsec: float = 1.5
    frame_width_px: float = 256.0
    frame_height_px: float = 256.0
    bits_per_pixel: float = 16.0
    bands: tuple | None = None  # the bands the camera works in (None: not stated)
    sources: dict = field(default_factory=dict, compare=False, hash=False)
    path: str = ""

    @property
    def exposure_s(self) -> float:
        """Integration time per sample: cadence minus dead time."""
        return self.cadence_s - self.dead_time_s

    @property
    def n_pixels(self) -> float:
        """Pixels inside the photometric aperture: pi r^2 / pixel_scale^2."""
        return math.pi * self.aperture_radius_arcsec ** 2 / self.pixel_scale_arcsec ** 2

    @property
    def collecting_area_m2(self) -> float:
        """Clear area pi/4 D^2 (1 - eps^2)."""
        return math.pi / 4.0 * self.aperture_m ** 2 * (1.0 - self.central_obstruction ** 2)

    def describe(self) -> dict:
        d = asdict(self)
        d.pop("sources")
        d.update(exposure_s=self.exposure_s, n_pixels=self.n_pixels,
                 collecting_area_m2=self.collecting_area_m2)
        return d


_NUMERIC = ("aperture_m", "central_obstruction", "throughput", "read_noise_e", "dark_e_s",
            "pixel_scale_arcsec", "aperture_radius_arcsec", "cadence_s", "dead_time_s",
            "samples_per_wavelength", "seeing_fwhm_arcsec", "frame_width_px", "frame_height_px",
            "bits_per_pixel")
ALLOWED_KEYS = ("name",) + _NUMERIC + ("band", "bands", "source")


def _read_toml(text: str, where: str) -> dict:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise DataFileError(f"telescope file {where} is not valid TOML: {exc}") from None


def _check_keys(data: dict, where: str) -> None:
    for key in data:
        if key not in ALLOWED_KEYS:
            raise DataFileError(f"telescope file {where}: unknown key {key!r}; allowed keys are "
                                f"{', '.join(ALLOWED_KEYS)}")


INFRARED_BANDS = ("J", "H", "K")

# Larger than any telescope built or planned (the largest are about 40 m; common practice).
MAX_APERTURE_M = 100.0


def _validate(p: TelescopeProfile) -> TelescopeProfile:
    from .photometry import band

    def bad(key, rule):
        raise InputError(f"telescope {key} = {getattr(p, key)!r} is invalid: {rule}")

    for key in _NUMERIC:
        v = getattr(p, key)
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
            bad(key, "give a finite number")
    if not 0 < p.aperture_m <= MAX_APERTURE_M:
        bad("aperture_m", f"the aperture diameter must be > 0 and at most {MAX_APERTURE_M:g} m")
    if not 0 <= p.central_obstruction < 1:
        bad("central_obstruction", "give the secondary's diameter as a fraction in [0, 1)")
    if not 0 < p.throughput <= 1:
        bad("throughput", "give the detected fraction of photons in (0, 1]")
    for key in ("read_noise_e", "dark_e_s", "dead_time_s"):
        if getattr(p, key) < 0:
            bad(key, "must be >= 0")
    for key in ("pixel_scale_arcsec", "aperture_radius_arcsec"):
        if getattr(p, key) <= 0:
            bad(key, "must be > 0 arcsec")
    if p.cadence_s <= 0:
        bad("cadence_s", "the sampling interval must be > 0 s")
    if p.dead_time_s >= p.cadence_s:
        bad("dead_time_s", f"must be shorter than the cadence ({p.cadence_s} s)")
    if p.samples_per_wavelength < 2:
        bad("samples_per_wavelength", "must be >= 2 (2 is the Nyquist bound)")
    for key in ("frame_width_px", "frame_height_px", "bits_per_pixel"):
        if not 1 <= getattr(p, key) <= 1e5:
            bad(key, "must be between 1 and 100,000")
    if p.seeing_fwhm_arcsec <= 0:
        bad("seeing_fwhm_arcsec", "the seeing FWHM must be > 0 arcsec")
    if p.aperture_radius_arcsec < p.pixel_scale_arcsec / 2:
        bad("aperture_radius_arcsec", "the photometric aperture must cover at least one pixel")
    band(p.band)  # UnknownNameError listing the known bands
    if p.bands is not None:
        for b in p.bands:
            band(b)
        if p.band not in p.bands:
            raise InputError(
                f"telescope band {p.band!r} is not one the camera of {p.name!r} works in "
                f"({', '.join(p.bands)}): its read noise, dark current and throughput belong "
                f"to that detector; give a profile for a camera that works in {p.band} "
                "(--telescope FILE)")
    return p


def _build(data: dict, sources: dict, path: str) -> TelescopeProfile:
    kwargs = {}
    for f in fields(TelescopeProfile):
        if f.name in ("sources", "path"):
            continue
        kwargs[f.name] = data[f.name]
    for key in _NUMERIC:
        v = kwargs[key]
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise InputError(f"telescope {key} = {v!r} is invalid: give a number")
        kwargs[key] = float(v)
    kwargs["name"] = str(kwargs["name"])
    kwargs["band"] = str(kwargs["band"])
    bands = kwargs.get("bands")
    if bands is not None:
        if isinstance(bands, str) or not isinstance(bands, (list, tuple)) or \
                not all(isinstance(b, str) for b in bands) or not bands:
            raise InputError(f"telescope bands = {bands!r} is invalid: give a list of band names "
                             "such as [\"V\", \"R\", \"I\"]")
        kwargs["bands"] = tuple(str(b) for b in bands)
    return _validate(TelescopeProfile(**kwargs, sources=sources, path=path))


def default_telescope_path() -> str:
    return str(resources.files("occplan") / "data" / "telescope_default.toml")


def load_telescope(path: str | Path | None = None, **overrides) -> TelescopeProfile:
    """A telescope profile from the default file, a user TOML file, and keyword overrides.

    Parameters
    ----------
    path : str or Path, optional
        A TOML file with any subset of the keys of ``telescope_default.toml``; missing keys
        keep the default values.
    **overrides
        Values that replace those of the file (e.g. ``aperture_m=2.0, band="K"``); ``None``
        values are ignored, so command-line options can be passed straight through.  Without
        a file, ``band`` J, H or K selects the default infrared profile
        (``telescope_default_ir.toml``): a silicon camera does not see those bands.  A profile
        that lists its camera's ``bands`` refuses any other band.

    Raises
    ------
    DataFileError
        File missing, not TOML, or with a key that is not a profile key.
    InputError
        A value out of range (aperture <= 0, throughput outside (0, 1], ...) or an unknown
        override name.
    UnknownNameError
        An unknown band.
    """
    default = "telescope_default.toml"
    if path is None and str(overrides.get("band") or "") in INFRARED_BANDS:
        default = "telescope_default_ir.toml"  # a silicon camera does not see J, H, K
    res = resources.files("occplan") / "data" / default
    data = _read_toml(res.read_text(encoding="utf-8"), f"occplan/data/{default}")
    sources = dict(data.pop("source", {}))
    where = ""
    if path is not None:
        p = Path(path)
        where = str(p)
        from .schema import input_text

        user = _read_toml(input_text(p, "telescope"), repr(where))
        _check_keys(user, repr(where))
        user_sources = user.pop("source", {})
        if not isinstance(user_sources, dict):
            user_sources = {"file": str(user_sources)}
        for key in user:
            sources[key] = user_sources.get(key, f"user file {where}")
        if "bands" not in user:  # the default camera's bands say nothing of this one
            data["bands"] = None
            sources["bands"] = f"not stated in {where}"
        data.update(user)
    for key, value in overrides.items():
        if value is None:
            continue
        if key not in ALLOWED_KEYS or key == "source":
            raise InputError(f"unknown telescope setting {key!r}; allowed: "
                             f"{', '.join(k for k in ALLOWED_KEYS if k != 'source')}")
        data[key] = value
        sources[key] = "override"
    if overrides.get("band") is not None and data.get("bands") is None:
        sources["band"] = ("override: the read noise, dark current and throughput are still the "
                           "profile's (its camera's bands are not stated)")
    return _build(data, sources, where)


def with_overrides(profile: TelescopeProfile, **overrides) -> TelescopeProfile:
    """A copy of ``profile`` with some values replaced (validated; ``None`` ignored)."""
    changes = {k: v for k, v in overrides.items() if v is not None}
    if "bands" in changes:
        changes["bands"] = tuple(changes["bands"])
    for key in changes:
        if key not in ALLOWED_KEYS or key == "source":
            raise InputError(f"unknown telescope setting {key!r}")
    for key in _NUMERIC:
        if key in changes:
            v = changes[key]
            if isinstance(v, bool) or not isinstance(v, (int, float)):
                raise InputError(f"telescope {key} = {v!r} is invalid: give a number")
            changes[key] = float(v)
    return _validate(replace(profile, **changes))
