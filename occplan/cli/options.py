"""Options shared by several commands, defined once so they mean the same everywhere.

Also :func:`user_errors`, which turns :class:`occplan.errors.OccplanError` into one line on
stderr and exit code 2 (so typer's CliRunner sees the same behaviour as the console script).
"""

from __future__ import annotations

import functools
import math
import sys
import warnings
from enum import StrEnum
from pathlib import Path
from typing import Annotated, Optional

import typer

from ..errors import OccplanError


def lazy(name: str):
    """The module ``name``, executed on first attribute access (the standard library's
    ``importlib.util.LazyLoader``): command modules import the library this way, so that
    ``occplan --help`` loads neither numpy nor scipy."""
    import importlib.util

    if name in sys.modules:
        return sys.modules[name]
    spec = importlib.util.find_spec(name)
    loader = importlib.util.LazyLoader(spec.loader)
    spec.loader = loader
    module = importlib.util.module_from_spec(spec)
    sys.modules[name] = module
    loader.exec_module(module)
    return module

# --- choices (the help lists them; typer refuses anything else in one line) ------------------


class OutputFormat(StrEnum):
    table = "table"
    csv = "csv"
    ecsv = "ecsv"
    json = "json"


class BandName(StrEnum):
    V = "V"
    R = "R"
    I = "I"  # noqa: E741 - the photometric band's name
    J = "J"
    H = "H"
    K = "K"


class LuminosityChoice(StrEnum):
    auto = "auto"
    dwarf = "dwarf"
    giant = "giant"


# --- body -----------------------------------------------------------------------------------
Body = Annotated[str, typer.Option("--body", help="Ringed body: saturn, uranus, neptune, jupiter, or a body TOML file.")]

# --- star -----------------------------------------------------------------------------------
Star = Annotated[Optional[str], typer.Option("--star", help='Star position "RA DEC": sexagesimal ("01 23 45.6 +04 05 06") or degrees ("20.94 4.08"), ICRS at --star-epoch.')]
PmRa = Annotated[float, typer.Option("--pm-ra", help="Proper motion in RA, mu_alpha* = mu_alpha cos(dec), mas/yr.")]
PmDec = Annotated[float, typer.Option("--pm-dec", help="Proper motion in Dec, mas/yr.")]
Parallax = Annotated[float, typer.Option("--parallax", help="Parallax, mas.")]
Rv = Annotated[float, typer.Option("--rv", help="Radial velocity, km/s.")]
StarEpoch = Annotated[str, typer.Option("--star-epoch", help="Catalogue epoch of the position: Julian year (2016.0) or ISO date.")]
Vmag = Annotated[Optional[float], typer.Option("--vmag", help="Star V magnitude.")]
Kmag = Annotated[Optional[float], typer.Option("--kmag", help="Star K magnitude.")]
Catalog = Annotated[Optional[Path], typer.Option("--catalog", help="Star catalog (CSV, ECSV or VOTable, Gaia-style columns).")]
StarId = Annotated[Optional[str], typer.Option("--star-id", help="source_id of the star in --catalog.")]

# --- observer -------------------------------------------------------------------------------
Site = Annotated[Optional[str], typer.Option("--site", help="Site name from --sites.")]
Sites = Annotated[Optional[Path], typer.Option("--sites", help="Sites TOML file: one sites table per site, with name, lat_deg, lon_deg, height_m and optionally telescope (a profile path).")]
Lat = Annotated[Optional[float], typer.Option("--lat", help="Geodetic latitude, deg (north positive, WGS84).")]
Lon = Annotated[Optional[float], typer.Option("--lon", help="Longitude, deg (east positive, WGS84).")]
Height = Annotated[float, typer.Option("--height", help="Height above the WGS84 ellipsoid, m.")]
Geocentre = Annotated[bool, typer.Option("--geocentre", help="Observe from the Earth's centre.")]
ObserverId = Annotated[Optional[int], typer.Option("--observer-id", help="NAIF id of an observer held by a --kernel (a spacecraft).")]

# --- window ---------------------------------------------------------------------------------
Start = Annotated[Optional[str], typer.Option("--start", help="Window start, UTC ISO 8601 (2027-03-01T04:00:00Z).")]
End = Annotated[Optional[str], typer.Option("--end", help="Window end, UTC ISO 8601.")]
Step = Annotated[float, typer.Option("--step", help="Sample step, s.")]

# --- ephemeris and corrections --------------------------------------------------------------
Kernel = Annotated[Optional[list[Path]], typer.Option("--kernel", help="Extra SPK kernel (repeatable): a planet-centre or spacecraft kernel.")]
NoDeflection = Annotated[bool, typer.Option("--no-deflection", help="Switch off the light deflection by the planet (for comparisons).")]
Barycentre = Annotated[bool, typer.Option("--barycentre", help="Use the system barycentre as planet centre, uncorrected (for comparisons).")]

# --- output ---------------------------------------------------------------------------------
Format = Annotated[OutputFormat, typer.Option("--format", help="Output format.")]
Jobs = Annotated[int, typer.Option("--jobs", metavar="N", min=0, help="Processes for the per-event work (tracks, evaluations, scores; 0: one per core; Linux; the results do not depend on it).")]
Out = Annotated[Optional[Path], typer.Option("--out", help="Write the output to this file instead of stdout.")]
Overwrite = Annotated[bool, typer.Option("--overwrite", help="Allow --out to replace an existing file.")]

FORMATS = ("table", "csv", "ecsv", "json")


def _option_names(func) -> dict:
    """Parameter name -> its command-line spelling (``pm_ra`` -> ``--pm-ra``), from the
    typer.Option declarations in the function's annotations."""
    import typing

    names = {}
    try:
        hints = typing.get_type_hints(func, include_extras=True)
    except Exception:  # unresolvable annotations: fall back to the parameter names
        return names
    for name, hint in hints.items():
        for meta in getattr(hint, "__metadata__", ()):
            decls = [d for d in (getattr(meta, "param_decls", None) or ()) if d.startswith("--")]
            if decls:
                names[name] = decls[0]
    return names


def check_finite_options(values: dict, names: dict | None = None) -> None:
    """Refuse NaN or infinite numbers in any numeric option, naming the option.

    ``names`` maps parameter names to their options (default: ``--`` + the name with dashes).

    Raises
    ------
    InputError
    """
    from ..errors import InputError

    for name, value in values.items():
        items = value if isinstance(value, (list, tuple)) else [value]
        for v in items:
            if isinstance(v, float) and not math.isfinite(v):
                option = (names or {}).get(name, "--" + name.replace("_", "-"))
                raise InputError(f"{option} {v} is not a finite number; give a plain number")


def user_errors(func):
    """Decorator for command functions: user errors become one stderr line and exit 2."""

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with warnings.catch_warnings():
            try:
                check_finite_options(kwargs, _option_names(func))
                return func(*args, **kwargs)
            except OccplanError as exc:
                print(f"occplan: error: {exc}", file=sys.stderr)
                raise typer.Exit(2) from None

    return wrapper


def plain(value):
    """An option's plain value (an enum choice as its text; None stays None)."""
    return None if value is None else (value.value if isinstance(value, StrEnum) else value)

# --- telescope and evaluation ----------------------------------------------------------------
Telescope = Annotated[Optional[Path], typer.Option("--telescope", help="Telescope/camera TOML profile (aperture_m, throughput, read_noise_e, cadence_s, band, ...); default: a generic 1-m fast CMOS.")]
Cadence = Annotated[Optional[float], typer.Option("--cadence", help="Camera sampling interval, s (overrides the profile).")]
Band = Annotated[Optional[BandName], typer.Option("--band", help="Photometric band (overrides the profile; the profile's camera must work in it).")]
Aperture = Annotated[Optional[float], typer.Option("--aperture", help="Telescope aperture diameter, m (overrides the profile).")]
SamplesPerWavelength = Annotated[Optional[float], typer.Option("--samples-per-wavelength", help="Samples per shortest wavelength for the required cadence (default 4; 2 is the Nyquist bound).")]
MaxOrder = Annotated[int, typer.Option("--max-order", help="Highest resonance order considered (1..3).")]
Sigma = Annotated[Optional[float], typer.Option("--sigma", help="Ring surface density, g/cm^2, everywhere (overrides the body file's region values).")]
LuminosityClass = Annotated[LuminosityChoice, typer.Option("--luminosity-class", help="Star's class for the diameter relation (auto: from the parallax when significant, else from V-K).")]
StarErrorMas = Annotated[Optional[float], typer.Option("--star-error-mas", help="1-sigma error of the star's position at the event epoch, mas (default: the catalogue's Gaia errors, when given).")]
PlanetErrorKm = Annotated[Optional[float], typer.Option("--planet-error-km", help="1-sigma error of the planet's ephemeris position in the sky plane, km (default: occplan/data/ephemeris_uncertainty.toml).")]
PoleErrorDeg = Annotated[Optional[float], typer.Option("--pole-error-deg", help="1-sigma error of the ring-plane pole, deg (default: occplan/data/ephemeris_uncertainty.toml).")]
MinSnr = Annotated[float, typer.Option("--min-snr", help="Minimum SNR per resolution element for a zone to count as resolvable.")]
