"""Input files read safely and checked against a schema.

Every input file goes through :func:`input_file` (it must be a regular file, not a folder or
a device, under a size limit, UTF-8 text; a byte-order mark is dropped) and then, for the TOML
and JSON layouts occplan defines, through :func:`validate`, which names the file, the key and
what is expected in one line (:class:`occplan.errors.DataFileError`).

The schemas are hand-written rather than given to a validation library: the layouts are
small, the checks need physical ranges (radii > 0, finite numbers) and the messages must be
one line with the key path and advice ("did you mean 'viscosity_cm2_s'?"), which a generic
validator's messages are not; and it keeps the dependency list short.

Limits (documented in DEVELOPERS.md, "Input limits"): a TOML file at most
:data:`MAX_TOML_BYTES`, a JSON find result at most :data:`MAX_JSON_BYTES`, a catalog header
at most :data:`MAX_CATALOG_COLUMNS` columns and :data:`MAX_HEADER_BYTES` bytes.
"""

from __future__ import annotations

import difflib
import json
import math
import os
import stat
import tomllib
from pathlib import Path

from .errors import DataFileError

# Settings files are a few kB; 4 MB is a thousand times the largest shipped one.
MAX_TOML_BYTES = 4 * 2**20
# A find result of a season (a million stars, tens of thousands of events with their zone
# records) is tens of MB; 1 GB of JSON already needs several GB of memory to parse.
MAX_JSON_BYTES = 2**30
# A Gaia-style catalog has a few dozen columns; the whole Gaia DR3 source table has 152.
MAX_CATALOG_COLUMNS = 1000
MAX_HEADER_BYTES = 2**20
BANDS = ("V", "R", "I", "J", "H", "K")


# --------------------------------------------------------------------------- files


def check_input_path(path: str | Path, what: str) -> Path:
    """``path`` as a Path if it is a regular file; else a one-line error saying what it is.

    Raises
    ------
    DataFileError
        Not found, a folder, or not a regular file (a device such as /dev/null, a pipe).
    """
    p = Path(path)
    if str(path).strip() == "":
        raise DataFileError(f"the {what} file name is empty; give a file")
    try:
        mode = os.stat(p).st_mode
    except FileNotFoundError:
        raise DataFileError(f"{what} file {str(p)!r} not found") from None
    except OSError as exc:
        raise DataFileError(f"{what} file {str(p)!r} cannot be read: "
                            f"{exc.strerror or exc}") from None
    if stat.S_ISDIR(mode):
        raise DataFileError(f"{what} file {str(p)!r} is a folder; give a file inside it")
    if not stat.S_ISREG(mode):
        raise DataFileError(f"{what} file {str(p)!r} is not a regular file (a device or a "
                            "pipe); give a file")
    return p


def input_text(path: str | Path, what: str, max_bytes: int = MAX_TOML_BYTES) -> str:
    """The text of an input file: a regular file of at most ``max_bytes``, UTF-8 (a leading
    byte-order mark is dropped).

    Raises
    ------
    DataFileError
    """
    p = check_input_path(path, what)
    size = p.stat().st_size
    if size > max_bytes:
        raise DataFileError(f"{what} file {str(p)!r} is {size:,} bytes, over occplan's limit of "
                            f"{max_bytes:,} bytes for it; is it the right file?")
    try:
        data = p.read_bytes()
    except OSError as exc:
        raise DataFileError(f"{what} file {str(p)!r} cannot be read: {exc.strerror or exc}") from None
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise DataFileError(f"{what} file {str(p)!r} is not UTF-8 text (byte 0x{data[exc.start]:02x} "
                            f"at offset {exc.start}); save it as UTF-8") from None
    return text.removeprefix("\ufeff")


def read_toml(path: str | Path, what: str) -> dict:
    """A TOML input file as a dict (see :func:`input_text` for the checks)."""
    text = input_text(path, what)
    return parse_toml(text, f"{what} file {str(path)!r}")


def parse_toml(text: str, where: str) -> dict:
    try:
        return tomllib.loads(text.removeprefix("\ufeff"))
    except tomllib.TOMLDecodeError as exc:
        raise DataFileError(f"{where} is not valid TOML: {exc}") from None


def read_json(path: str | Path, what: str, max_bytes: int = MAX_JSON_BYTES):
    text = input_text(path, what, max_bytes)
    try:
        return json.loads(text)
    except json.JSONDecodeError as exc:
        raise DataFileError(f"{what} file {str(path)!r} is not valid JSON: {exc}") from None
    except RecursionError:
        raise DataFileError(f"{what} file {str(path)!r} nests too deeply to be an occplan "
                            "file") from None


# --------------------------------------------------------------------------- schemas
#
# A schema is a callable check(value, key, where) that raises DataFileError; the builders
# below make them.  ``key`` is the dotted path of the value in the file (rings[3].inner_km).


def _fail(where: str, key: str, value, expected: str):
    shown = repr(value)
    if len(shown) > 40:
        shown = shown[:37] + "..."
    raise DataFileError(f"{where}: {key} = {shown}: expected {expected}")


def number(lo: float | None = None, hi: float | None = None, lo_open: bool = False,
           hi_open: bool = False):
    """A finite int or float (not a boolean) in [lo, hi] (open ends if asked)."""
    parts = []
    if lo is not None:
        parts.append(f"{'>' if lo_open else '>='} {lo:g}")
    if hi is not None:
        parts.append(f"{'<' if hi_open else '<='} {hi:g}")
    expected = "a finite number" + (" " + " and ".join(parts) if parts else "")

    def check(value, key, where):
        if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value):
            _fail(where, key, value, expected)
        if lo is not None and (value <= lo if lo_open else value < lo):
            _fail(where, key, value, expected)
        if hi is not None and (value >= hi if hi_open else value > hi):
            _fail(where, key, value, expected)

    check.expected = expected
    return check


def integer(lo: int | None = None):
    expected = "an integer" + (f" >= {lo}" if lo is not None else "")

    def check(value, key, where):
        if isinstance(value, bool) or not isinstance(value, int) or (lo is not None and value < lo):
            _fail(where, key, value, expected)

    check.expected = expected
    return check


def string(nonempty: bool = False):
    expected = "a non-empty text string" if nonempty else "a text string"

    def check(value, key, where):
        if not isinstance(value, str) or (nonempty and not value.strip()):
            _fail(where, key, value, expected)

    check.expected = expected
    return check


def one_of(*checks, expected: str):
    def check(value, key, where):
        for c in checks:
            try:
                c(value, key, where)
                return
            except DataFileError:
                pass
        _fail(where, key, value, expected)

    check.expected = expected
    return check


def nothing(value, key, where):
    if value is not None:
        _fail(where, key, value, "null")


nothing.expected = "null"


def array(item, min_items: int = 0, max_items: int | None = None):
    expected = ("a list" + (f" of at least {min_items}" if min_items else "")
                + f" ({item.expected} each)")

    def check(value, key, where):
        if not isinstance(value, list) or len(value) < min_items or (
                max_items is not None and len(value) > max_items):
            _fail(where, key, value, expected)
        for i, v in enumerate(value):
            label = f"{key}[{i + 1}]"
            if isinstance(v, dict) and isinstance(v.get("name"), str):
                label += f" ({v['name']})"
            item(v, label, where)

    check.expected = expected
    return check


def table(fields: dict, required: tuple = (), other=None, what: str = "a table"):
    """A TOML table / JSON object with the given fields; ``other`` checks keys not in
    ``fields`` (default: an unknown key is an error, with the closest known key suggested)."""
    expected = what

    def check(value, key, where):
        if not isinstance(value, dict):
            _fail(where, key or "(the file)", value, expected)
        for name in required:
            if name not in value:
                raise DataFileError(f"{where}: missing key {_join(key, name)!r} ("
                                    f"{fields[name].expected})")
        for name, v in value.items():
            if name in fields:
                fields[name](v, _join(key, name), where)
            elif other is not None:
                other(v, _join(key, name), where)
            else:
                close = difflib.get_close_matches(str(name), list(fields), n=1)
                hint = (f"did you mean {close[0]!r}?" if close else
                        "known keys: " + ", ".join(sorted(fields)))
                raise DataFileError(f"{where}: unknown key {_join(key, name)!r}; {hint}")

    check.expected = expected
    return check


def _join(key: str, name: str) -> str:
    return f"{key}.{name}" if key else str(name)


def validate(data, schema, where: str) -> None:
    """Check ``data`` against ``schema``; one-line :class:`DataFileError` naming ``where``
    (the file), the key and what is expected."""
    schema(data, "", where)


# --------------------------------------------------------------------------- layouts

_TEXT = string()
_ANY_NUMBER = number()
_POSITIVE = number(0.0, lo_open=True)
_NONNEGATIVE = number(0.0)
_RADIUS_KM = number(0.0, lo_open=True)
_PER_BAND = one_of(number(0.0), table({b: number(0.0) for b in BANDS} | {"source": _TEXT},
                                      what="a table of bands V R I J H K"),
                   expected="a number >= 0 or a table of bands V R I J H K with numbers >= 0")

# eccentric ring edges (occplan.ring_orbits, which checks the values again)
_ORBIT_MODES = array(table({
    "m": integer(), "amplitude_km": _ANY_NUMBER, "phase_deg": _ANY_NUMBER,
    "pattern_speed_deg_day": _ANY_NUMBER, "source": _TEXT,
}, required=("m", "amplitude_km", "phase_deg", "pattern_speed_deg_day")))
_EDGE_ORBIT = table({
    "a_km": _RADIUS_KM, "e": number(0.0, 1.0, hi_open=True), "periapse_deg": _ANY_NUMBER,
    "periapse_rate_deg_day": _ANY_NUMBER, "inclination_deg": number(0.0, 180.0),
    "node_deg": _ANY_NUMBER, "node_rate_deg_day": _ANY_NUMBER, "modes": _ORBIT_MODES,
    "rms_km": _NONNEGATIVE,
})

BODY_SCHEMA = table({
    "name": string(nonempty=True),
    "naif_id": integer(),
    "barycentre_naif_id": integer(),
    "source": _TEXT,
    "gravity": table({
        "gm_km3_s2": _POSITIVE, "reference_radius_km": _RADIUS_KM,
        "zonal_j": array(_ANY_NUMBER), "source": _TEXT,
    }, required=("gm_km3_s2", "reference_radius_km", "zonal_j")),
    "shape": table({
        "equatorial_radius_km": _RADIUS_KM, "polar_radius_km": _RADIUS_KM, "source": _TEXT,
    }, required=("equatorial_radius_km", "polar_radius_km")),
    "pole": table({
        "ra_deg": _ANY_NUMBER, "dec_deg": number(-90.0, 90.0),
        "ra_rate_deg_century": _ANY_NUMBER, "dec_rate_deg_century": _ANY_NUMBER,
        "terms": array(table({
            "angle0_deg": _ANY_NUMBER, "angle_rate_deg_century": _ANY_NUMBER,
            "ra_sin_deg": _ANY_NUMBER, "dec_cos_deg": _ANY_NUMBER,
        }, required=("angle0_deg", "angle_rate_deg_century"))),
        "source": _TEXT,
    }, required=("ra_deg", "dec_deg")),
    "photometry": table({
        "planet_geometric_albedo": _PER_BAND, "ring_reflectivity_if": _PER_BAND,
        "source": _TEXT,
    }),
    "rings": array(table({
        "name": string(nonempty=True), "inner_km": _RADIUS_KM, "outer_km": _RADIUS_KM,
        "surface_density_g_cm2": _POSITIVE, "viscosity_cm2_s": _POSITIVE,
        "optical_depth": _NONNEGATIVE, "edge_inner_a_km": _RADIUS_KM,
        "edge_outer_a_km": _RADIUS_KM, "source": _TEXT,
        # eccentric ring edges (occplan.ring_orbits, which checks the values again)
        "orbit": table({
            "epoch_jd_tdb": _ANY_NUMBER, "a_km": _RADIUS_KM, "e": number(0.0, 1.0, hi_open=True),
            "periapse_deg": _ANY_NUMBER, "periapse_rate_deg_day": _ANY_NUMBER,
            "inclination_deg": number(0.0, 180.0), "node_deg": _ANY_NUMBER,
            "node_rate_deg_day": _ANY_NUMBER, "inner_a_km": _RADIUS_KM,
            "inner_e": number(0.0, 1.0, hi_open=True), "outer_a_km": _RADIUS_KM,
            "outer_e": number(0.0, 1.0, hi_open=True), "source": _TEXT,
            "longitude_reference": string(nonempty=True), "phase_sigma_deg": _NONNEGATIVE,
            "rms_km": _NONNEGATIVE, "modes": _ORBIT_MODES,
            "inner": _EDGE_ORBIT, "outer": _EDGE_ORBIT,
        }, required=("epoch_jd_tdb", "a_km", "e", "periapse_deg")),
    }, required=("name", "inner_km", "outer_km", "surface_density_g_cm2")), min_items=1),
    "gaps": array(table({
        "name": string(nonempty=True), "inner_km": _RADIUS_KM, "outer_km": _RADIUS_KM,
        "source": _TEXT,
    }, required=("name", "inner_km", "outer_km"))),
    "satellites": array(table({
        "name": string(nonempty=True), "naif_id": integer(), "gm_km3_s2": _NONNEGATIVE,
        "a_km": _RADIUS_KM, "e": number(0.0, 1.0, hi_open=True), "i_deg": number(0.0, 180.0),
        "mean_motion_deg_day": _POSITIVE, "source": _TEXT,
        "apsidal_rate_deg_day": _ANY_NUMBER, "nodal_rate_deg_day": _ANY_NUMBER,
        # co-orbital configurations (Janus/Epimetheus): dated orbits
        "configurations_source": _TEXT,
        "configurations": array(table({
            "start_jd_tdb": _ANY_NUMBER, "end_jd_tdb": _ANY_NUMBER, "a_km": _RADIUS_KM,
            "mean_motion_deg_day": _POSITIVE,
        }, required=("start_jd_tdb", "end_jd_tdb", "a_km", "mean_motion_deg_day"))),
        "mean_elements": table({
            "epoch_jd_tdb": _ANY_NUMBER, "a_km": _RADIUS_KM, "e": number(0.0, 1.0, hi_open=True),
            "inclination_deg": number(0.0, 180.0), "ascending_node_deg": _ANY_NUMBER,
            "argument_of_periapsis_deg": _ANY_NUMBER, "mean_anomaly_deg": _ANY_NUMBER,
            "mean_motion_deg_day": _POSITIVE, "periapsis_rate_deg_day": _ANY_NUMBER,
            "node_rate_deg_day": _ANY_NUMBER, "laplace_ra_deg": _ANY_NUMBER,
            "laplace_dec_deg": number(-90.0, 90.0), "source": _TEXT,
        }, required=("epoch_jd_tdb", "a_km", "e", "inclination_deg", "ascending_node_deg",
                     "argument_of_periapsis_deg", "mean_anomaly_deg", "mean_motion_deg_day",
                     "periapsis_rate_deg_day", "node_rate_deg_day", "laplace_ra_deg",
                     "laplace_dec_deg")),
    }, required=("name", "gm_km3_s2", "a_km", "mean_motion_deg_day"))),
}, required=("name", "naif_id", "barycentre_naif_id", "gravity", "shape", "pole", "rings"),
    what="a TOML table")

SITE_SCHEMA = table({
    "name": string(nonempty=True), "lat_deg": number(-90.0, 90.0),
    "lon_deg": number(-360.0, 360.0), "height_m": number(-500.0, 1.0e5),
    "telescope": string(nonempty=True), "min_altitude_deg": number(-90.0, 90.0),
    "note": _TEXT,
}, required=("name", "lat_deg", "lon_deg"))

SITES_SCHEMA = table({"sites": array(SITE_SCHEMA, min_items=1)},
                     required=("sites",), other=lambda v, k, w: None, what="a TOML table")

_OPT_TEXT = one_of(_TEXT, nothing, expected="a text string or null")
_OPT_NUMBER = one_of(number(), nothing, expected="a finite number or null")

FIND_RESULT_SCHEMA = table({
    "meta": table({
        "body": string(nonempty=True), "body_file": _OPT_TEXT,
        "start_utc": _TEXT, "end_utc": _TEXT,
        "observers": array(table({"name": _OPT_TEXT}, other=lambda v, k, w: None,
                                 what="an object")),
        "corrections": table({}, other=lambda v, k, w: None, what="an object"),
    }, required=("body",), other=lambda v, k, w: None, what="an object"),
    "rows": array(table({
        "star_id": one_of(string(nonempty=True), integer(), expected="a text or integer id"),
        "site": _OPT_TEXT, "closest_approach_utc": _OPT_TEXT,
        "crossing_start_utc": _OPT_TEXT, "crossing_end_utc": _OPT_TEXT,
        "score": _OPT_NUMBER, "potential_score": _OPT_NUMBER,
        "min_ring_radius_km": _OPT_NUMBER,
        "zones": one_of(array(table({}, other=lambda v, k, w: None, what="an object")), nothing,
                        expected="a list of zone records (objects) or null"),
    }, required=("star_id",), other=lambda v, k, w: None, what="an object (one event)")),
}, required=("meta", "rows"), other=lambda v, k, w: None,
    what="an object with 'meta' and 'rows' (written by occplan find --format json)")


def check_find_result(path: str | Path) -> None:
    """Refuse a find result whose JSON does not have the layout `occplan find` writes (rows
    of the wrong type); other formats are left to their reader."""
    p = check_input_path(path, "find result")
    if p.suffix.lower() != ".json":
        return
    data = read_json(p, "find result")
    if not isinstance(data, dict) or "rows" not in data or "meta" not in data:
        raise DataFileError(f"find result {str(p)!r} is not an occplan find JSON (an object "
                            "with 'meta' and 'rows', written by occplan find --format json)")
    validate(data, FIND_RESULT_SCHEMA, f"find result {str(p)!r}")
