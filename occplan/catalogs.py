"""Star catalogs and site files in.

Sites: a TOML file with ``[[sites]]`` tables (``name``, ``lat_deg``, ``lon_deg``,
``height_m``, optional ``telescope`` = path of a telescope TOML profile, optional
``min_altitude_deg``).

Star catalogs: CSV (also gzip), ECSV, VOTable, FITS or Parquet with Gaia-style columns
(:func:`read_catalog_table`, :func:`read_catalog`, :func:`catalog_star`), units read and
converted, V and K from Gaia photometry where no measured value is given
(:mod:`occplan.gaia_photometry`); rows that cannot be used are skipped and listed in a
:class:`CatalogReport`, never silently used.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .errors import DataFileError, InputError, UnknownNameError

SITE_KEYS = {"name", "lat_deg", "lon_deg", "height_m", "telescope", "min_altitude_deg", "note"}


@dataclass(frozen=True)
class Site:
    name: str
    lat_deg: float
    lon_deg: float
    height_m: float = 0.0
    telescope: str | None = None
    min_altitude_deg: float | None = None
    note: str = ""

    def observer(self):
        from .ephemeris import Observer

        return Observer.site(self.name, self.lat_deg, self.lon_deg, self.height_m)


def read_toml(path: str | Path, what: str) -> dict:
    from .schema import read_toml as _read

    return _read(path, what)


def load_sites(path: str | Path) -> list[Site]:
    """All sites of a sites TOML file; telescope paths are resolved relative to the file."""
    from .schema import SITES_SCHEMA, validate

    data = read_toml(path, "sites")
    if not isinstance(data.get("sites"), list) or not data["sites"]:
        raise DataFileError(f"sites file {str(path)!r} has no [[sites]] tables")
    validate(data, SITES_SCHEMA, f"sites file {str(path)!r}")
    out = []
    for row in data["sites"]:
        tel = row.get("telescope")
        if tel is not None and not Path(tel).is_absolute():
            tel = str(Path(path).parent / tel)
        site = Site(str(row["name"]), float(row["lat_deg"]), float(row["lon_deg"]),
                    float(row.get("height_m", 0.0)), tel,
                    None if row.get("min_altitude_deg") is None else float(row["min_altitude_deg"]),
                    str(row.get("note", "")))
        site.observer()  # range checks
        out.append(site)
    return out


def find_site(path: str | Path, name: str) -> Site:
    sites = load_sites(path)
    for s in sites:
        if s.name.lower() == str(name).lower():
            return s
    raise UnknownNameError(f"no site {name!r} in {path}; known: {', '.join(s.name for s in sites)}")


def check_magnitude(value, what: str):
    if value is None:
        return None
    v = float(value)
    if not -2.0 <= v <= 25.0:
        raise InputError(f"{what} magnitude {v} is outside -2..25")
    return v


# --------------------------------------------------------------------------- star catalogs
#
# A star catalog is a table with Gaia-style column names (or a column map from those names to
# the file's own): CSV (also gzip-compressed), ECSV, VOTable, FITS or Parquet, all read by
# astropy's Table (Parquet through pyarrow).  Every column's unit is read and converted with
# astropy units to occplan's: ra, dec in deg (ICRS at ref_epoch), pmra = mu_alpha* =
# mu_alpha cos(dec) and pmdec in mas/yr, parallax and its error in mas, radial_velocity in
# km/s, ref_epoch a Julian year (TCB in Gaia; the difference to TT is irrelevant at mas),
# magnitudes in mag.  A column without a unit (CSV has none) is taken in these units, and the
# report says so; a unit that cannot be converted is an error.

CATALOG_COLUMNS = ("source_id", "ra", "dec", "pmra", "pmdec", "parallax", "parallax_error",
                   "radial_velocity", "ref_epoch", "vmag", "rmag", "imag", "jmag", "hmag", "kmag",
                   "phot_g_mean_mag", "phot_bp_mean_mag", "phot_rp_mean_mag", "bp_rp",
                   "ra_error", "dec_error", "pmra_error", "pmdec_error", "ra_dec_corr",
                   "ra_pmra_corr", "ra_pmdec_corr", "dec_pmra_corr", "dec_pmdec_corr",
                   "pmra_pmdec_corr")
# Gaia astrometric errors (read into StarSpec.errors for occplan.uncertainty)
ERROR_COLUMNS = ("ra_error", "dec_error", "pmra_error", "pmdec_error", "ra_dec_corr",
                 "ra_pmra_corr", "ra_pmdec_corr", "dec_pmra_corr", "dec_pmdec_corr",
                 "pmra_pmdec_corr")
REQUIRED_COLUMNS = ("source_id", "ra", "dec", "pmra", "pmdec", "parallax")
# Other spellings of the magnitude columns found in common catalogs (2MASS: j_m, h_m, ks_m).
MAGNITUDE_ALIASES = {"vmag": ("vmag", "v_mag", "v"), "rmag": ("rmag", "r_mag"),
                     "imag": ("imag", "i_mag"), "jmag": ("jmag", "j_mag", "j_m"),
                     "hmag": ("hmag", "h_mag", "h_m"),
                     "kmag": ("kmag", "k_mag", "ks_m", "ksmag", "k")}
# occplan's unit of each column: the default for a column without one (Gaia's units).
COLUMN_UNITS = {"ra": "deg", "dec": "deg", "pmra": "mas / yr", "pmdec": "mas / yr",
                "parallax": "mas", "parallax_error": "mas", "radial_velocity": "km / s",
                "ref_epoch": "yr", **{k: "mag" for k in ("vmag", "rmag", "imag", "jmag", "hmag",
                                                         "kmag", "phot_g_mean_mag",
                                                         "phot_bp_mean_mag", "phot_rp_mean_mag",
                                                         "bp_rp")}}
COLUMN_UNITS.update({"ra_error": "mas", "dec_error": "mas", "pmra_error": "mas / yr",
                     "pmdec_error": "mas / yr",
                     **{k: "" for k in ERROR_COLUMNS if k.endswith("_corr")}})
# band -> occplan column of a measured magnitude
BAND_COLUMNS = {"V": "vmag", "R": "rmag", "I": "imag", "J": "jmag", "H": "hmag", "K": "kmag"}
DEFAULT_REF_EPOCH_YR = 2016.0  # Gaia DR3 epoch (common practice: the catalogue's own epoch)
CATALOG_FORMATS = {".csv": "ascii.csv", ".ecsv": "ascii.ecsv", ".vot": "votable",
                   ".xml": "votable", ".votable": "votable", ".fits": "fits", ".fit": "fits",
                   ".fts": "fits", ".parquet": "parquet", ".pq": "parquet"}
COMPRESSED_SUFFIXES = (".gz", ".bz2", ".xz")


@dataclass
class CatalogReport:
    """What happened while reading a catalog: rows read, stars kept, rows skipped and why."""

    path: str
    rows_read: int = 0
    stars: int = 0
    skipped: list = None  # (row number (1-based data row), source_id, reason)
    notes: list = None

    def __post_init__(self):
        self.skipped = [] if self.skipped is None else self.skipped
        self.notes = [] if self.notes is None else self.notes

    def summary(self) -> str:
        text = f"catalog {self.path}: {self.rows_read} rows, {self.stars} stars used"
        if self.skipped:
            reasons: dict = {}
            for _, _, why in self.skipped:
                reasons[why] = reasons.get(why, 0) + 1
            text += "; skipped " + "; ".join(f"{n} ({why})" for why, n in sorted(reasons.items()))
        return text

    def describe(self) -> dict:
        return {"path": self.path, "rows_read": self.rows_read, "stars": self.stars,
                "skipped": [{"row": r, "source_id": s, "reason": why} for r, s, why in self.skipped],
                "notes": list(self.notes)}


_ARRAY_FIELDS = ("source_id", "ra_deg", "dec_deg", "pm_ra_mas_yr", "pm_dec_mas_yr", "parallax_mas",
                 "rv_km_s", "epoch_jd_tt", "vmag", "kmag", "gmag", "parallax_error_mas", "bp_rp")


@dataclass
class StarTable:
    """A star catalog as plain arrays (deg, mas/yr, mas, km/s, TT Julian dates, mag): the
    search works on these; :meth:`star` builds one :class:`occplan.ephemeris.StarSpec`.

    ``vmag`` and ``kmag`` are the best known V and K (measured, else from Gaia G and BP-RP);
    ``magnitudes`` maps each band V, R, I, J, H, K to arrays ``mag``, ``sigma`` (nan for a
    measured value) and ``source`` (what the value is), see :mod:`occplan.gaia_photometry`.
    """

    source_id: np.ndarray  # str
    ra_deg: np.ndarray
    dec_deg: np.ndarray
    pm_ra_mas_yr: np.ndarray
    pm_dec_mas_yr: np.ndarray
    parallax_mas: np.ndarray
    rv_km_s: np.ndarray
    epoch_jd_tt: np.ndarray
    vmag: np.ndarray  # nan when unknown
    kmag: np.ndarray
    gmag: np.ndarray
    report: CatalogReport = None
    parallax_error_mas: np.ndarray = None  # nan when unknown
    bp_rp: np.ndarray = None
    magnitudes: dict = None
    errors: dict = None  # Gaia astrometric errors and correlations (ERROR_COLUMNS): arrays

    def __post_init__(self):
        n = len(self.ra_deg)
        if self.parallax_error_mas is None:
            self.parallax_error_mas = np.full(n, np.nan)
        if self.bp_rp is None:
            self.bp_rp = np.full(n, np.nan)
        if self.magnitudes is None:
            self.magnitudes = {}
            for band, arr in (("V", self.vmag), ("K", self.kmag)):
                src = np.full(n, "", dtype=object)
                src[np.isfinite(arr)] = f"given {band}"
                self.magnitudes[band] = {"mag": np.asarray(arr, dtype=float),
                                         "sigma": np.full(n, np.nan), "source": src}

    def __len__(self) -> int:
        return int(self.ra_deg.size)

    def star(self, i: int):
        from .ephemeris import StarSpec

        def mag(a):
            return None if not np.isfinite(a[i]) else float(a[i])

        extra = {"source_id": str(self.source_id[i])}
        if np.isfinite(self.gmag[i]):
            extra["phot_g_mean_mag"] = float(self.gmag[i])
        if np.isfinite(self.bp_rp[i]):
            extra["bp_rp"] = float(self.bp_rp[i])
        if np.isfinite(self.parallax_error_mas[i]):
            extra["parallax_error_mas"] = float(self.parallax_error_mas[i])
        phot = {}
        for band, cols in self.magnitudes.items():
            if np.isfinite(cols["mag"][i]):
                s = cols["sigma"][i]
                phot[band] = {"mag": float(cols["mag"][i]), "sigma": float(s) if np.isfinite(s) else None,
                              "source": str(cols["source"][i])}
        if phot:
            extra["photometry"] = phot
        errors = {k: float(v[i]) for k, v in (self.errors or {}).items() if np.isfinite(v[i])}
        if np.isfinite(self.parallax_error_mas[i]):
            errors["parallax_error"] = float(self.parallax_error_mas[i])
        return StarSpec(errors=errors, ra_deg=float(self.ra_deg[i]), dec_deg=float(self.dec_deg[i]),
                        pm_ra_mas_yr=float(self.pm_ra_mas_yr[i]),
                        pm_dec_mas_yr=float(self.pm_dec_mas_yr[i]),
                        parallax_mas=float(self.parallax_mas[i]), rv_km_s=float(self.rv_km_s[i]),
                        epoch_jd_tt=float(self.epoch_jd_tt[i]), name=str(self.source_id[i]),
                        vmag=mag(self.vmag), kmag=mag(self.kmag), extra=extra)

    def stars(self) -> list:
        return [self.star(i) for i in range(len(self))]

    def subset(self, index) -> "StarTable":
        idx = np.asarray(index)
        kw = {f: getattr(self, f)[idx] for f in _ARRAY_FIELDS}
        mags = {b: {k: v[idx] for k, v in cols.items()} for b, cols in self.magnitudes.items()}
        errors = {k: v[idx] for k, v in (self.errors or {}).items()}
        return StarTable(**kw, report=self.report, magnitudes=mags, errors=errors)

    @classmethod
    def from_stars(cls, stars) -> "StarTable":
        """A StarTable from StarSpecs (source_id = name, or the row number)."""
        def col(get):
            return np.array([get(s) for s in stars], dtype=float)

        def phot(s, band, key):
            v = ((s.extra.get("photometry") or {}).get(band) or {}).get(key)
            return np.nan if v is None else v

        n = len(stars)
        mags = {}
        for band in BAND_COLUMNS:
            mag = col(lambda s, b=band: phot(s, b, "mag"))
            if band == "V":
                mag = np.where(np.isfinite(mag), mag, col(lambda s: np.nan if s.vmag is None else s.vmag))
            if band == "K":
                mag = np.where(np.isfinite(mag), mag, col(lambda s: np.nan if s.kmag is None else s.kmag))
            if not np.isfinite(mag).any():
                continue
            src = np.array([(s.extra.get("photometry") or {}).get(band, {}).get("source") or
                            (f"given {band}" if np.isfinite(m) else "") for s, m in zip(stars, mag)],
                           dtype=object)
            mags[band] = {"mag": mag, "sigma": col(lambda s, b=band: phot(s, b, "sigma")), "source": src}
        return cls(
            source_id=np.array([s.name or str(i + 1) for i, s in enumerate(stars)], dtype=object),
            ra_deg=col(lambda s: s.ra_deg), dec_deg=col(lambda s: s.dec_deg),
            pm_ra_mas_yr=col(lambda s: s.pm_ra_mas_yr), pm_dec_mas_yr=col(lambda s: s.pm_dec_mas_yr),
            parallax_mas=col(lambda s: s.parallax_mas), rv_km_s=col(lambda s: s.rv_km_s),
            epoch_jd_tt=col(lambda s: s.epoch_jd_tt),
            vmag=col(lambda s: np.nan if s.vmag is None else s.vmag),
            kmag=col(lambda s: np.nan if s.kmag is None else s.kmag),
            gmag=col(lambda s: s.extra.get("phot_g_mean_mag", np.nan)),
            report=CatalogReport(path="(in memory)", rows_read=n, stars=n),
            parallax_error_mas=col(lambda s: s.extra.get("parallax_error_mas", np.nan)),
            bp_rp=col(lambda s: s.extra.get("bp_rp", np.nan)), magnitudes=mags,
            errors={k: col(lambda s, k=k: (s.errors or {}).get(k, np.nan)) for k in ERROR_COLUMNS
                    if any(k in (s.errors or {}) for s in stars)})


def catalog_format(path: Path) -> str:
    """astropy's format name for a catalog file, from its suffix (a .gz, .bz2, .xz is looked
    through: astropy decompresses)."""
    name = path.name.lower()
    for comp in COMPRESSED_SUFFIXES:
        if name.endswith(comp):
            name = name[: -len(comp)]
            break
    fmt = CATALOG_FORMATS.get(Path(name).suffix)
    if fmt is None:
        raise DataFileError(f"catalog {str(path)!r}: unknown file type {path.suffix!r}; use .csv "
                            "(or .csv.gz), .ecsv, a VOTable (.vot, .xml), FITS (.fits) or .parquet")
    if fmt == "parquet" and name != path.name.lower():
        raise DataFileError(f"catalog {str(path)!r}: a compressed Parquet file is not supported "
                            "(Parquet compresses itself); decompress it")
    return fmt


def _check_header(path: Path) -> None:
    """Refuse a CSV or ECSV whose column header is absurdly wide before astropy parses it
    (a million columns took gigabytes): at most MAX_CATALOG_COLUMNS columns and
    MAX_HEADER_BYTES bytes in the header line (occplan.schema)."""
    from .schema import MAX_CATALOG_COLUMNS, MAX_HEADER_BYTES

    with open(path, "rb") as fh:
        while True:
            line = fh.readline(MAX_HEADER_BYTES + 1)
            if not line:
                return
            if len(line) > MAX_HEADER_BYTES:
                raise DataFileError(f"catalog {str(path)!r}: a header line is longer than "
                                    f"{MAX_HEADER_BYTES:,} bytes, over occplan's limit; give a "
                                    f"catalog with at most {MAX_CATALOG_COLUMNS} columns")
            text = line.decode("utf-8", "replace").removeprefix("\ufeff").strip()
            if text and not text.startswith("#"):
                break
    sep = "," if path.suffix.lower() == ".csv" else None
    n = len(text.split(sep))
    if n > MAX_CATALOG_COLUMNS:
        raise DataFileError(f"catalog {str(path)!r} has {n:,} columns, over occplan's limit of "
                            f"{MAX_CATALOG_COLUMNS}; keep the columns occplan reads "
                            f"({', '.join(CATALOG_COLUMNS)})")


def _read_table(path: Path):
    from astropy.table import Table

    from .schema import check_input_path

    fmt = catalog_format(path)
    check_input_path(path, "catalog")
    if fmt in ("ascii.csv", "ascii.ecsv") and not path.name.lower().endswith(COMPRESSED_SUFFIXES):
        _check_header(path)
    try:
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # VOTable / unit-parsing chatter; errors still raise
            table = _read_parquet(path) if fmt == "parquet" else Table.read(str(path), format=fmt)
    except ImportError as exc:
        raise DataFileError(f"catalog {str(path)!r}: reading {fmt} needs a package that is not "
                            f"installed ({exc}); install pyarrow for Parquet") from None
    except Exception as exc:  # astropy raises many types for malformed files
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise DataFileError(f"catalog {str(path)!r} cannot be read as {fmt} ({first})") from None
    # A UTF-8 byte-order mark (spreadsheet exports) sticks to the first column's name.
    for name in list(table.colnames):
        clean = name.lstrip("\ufeff").strip()
        if clean != name and clean not in table.colnames:
            table.rename_column(name, clean)
    return table


def _read_parquet(path: Path):
    """A Parquet file as an astropy Table through pyarrow (astropy's own reader wants pandas);
    units from astropy's ``table_meta_yaml`` header when the file has one."""
    import pyarrow.parquet as pq
    from astropy.table import MaskedColumn, Table
    from astropy.table.meta import get_header_from_yaml

    pa_table = pq.read_table(str(path))
    units = {}
    meta = pa_table.schema.metadata or {}
    if b"table_meta_yaml" in meta:
        header = get_header_from_yaml(meta[b"table_meta_yaml"].decode("utf-8").splitlines())
        units = {c["name"]: c.get("unit") for c in header.get("datatype", [])}
    table = Table()
    for name in pa_table.column_names:
        chunked = pa_table.column(name)
        values = chunked.to_numpy()
        mask = chunked.is_null().to_numpy() if chunked.null_count else None
        if mask is not None and values.dtype.kind == "f":
            values = np.where(mask, np.nan, values)
        table[name] = MaskedColumn(values, mask=mask, unit=units.get(name)) if mask is not None else values
        if units.get(name) and mask is None:
            table[name].unit = units[name]
    return table


def _numbers(table, name: str, path: Path) -> np.ndarray:
    """A column as float64 with nan where missing; an unparsable entry is an error."""
    col = table[name]
    mask = np.zeros(len(col), dtype=bool)
    if hasattr(col, "mask"):
        mask = np.asarray(np.ma.getmaskarray(col))
    data = np.ma.getdata(col) if hasattr(col, "mask") else np.asarray(col)
    if data.dtype.kind in "iuf":
        out = np.asarray(data, dtype=float)
    elif data.dtype.kind == "b":
        raise DataFileError(f"catalog {str(path)!r}: column {name!r} holds true/false, not numbers")
    else:
        out = np.full(len(col), np.nan)
        for i, v in enumerate(data):
            if mask[i]:
                continue
            s = (v.decode("utf-8", "replace") if isinstance(v, bytes) else str(v)).strip()
            if s == "" or s.lower() in ("nan", "null", "none", "--"):
                mask[i] = True
                continue
            try:
                out[i] = float(s)
            except ValueError:
                raise DataFileError(f"catalog {str(path)!r}, data row {i + 1}: column {name!r} "
                                    f"value {s!r} is not a number") from None
    out[mask] = np.nan
    return out


def _unit_factor(table, name: str, key: str, path: Path):
    """Factor from the column's own unit to occplan's (None: the column has no unit)."""
    import astropy.units as u

    unit = getattr(table[name], "unit", None)
    if unit is None or (isinstance(unit, str) and not unit.strip()):
        return None
    if isinstance(unit, str):
        unit = u.Unit(unit, parse_strict="silent")
    if isinstance(unit, u.UnrecognizedUnit):
        raise DataFileError(f"catalog {str(path)!r}: column {name!r} has unit {str(unit)!r}, "
                            f"which astropy cannot read; give it in {COLUMN_UNITS[key]}")
    want = COLUMN_UNITS[key]
    if want == "mag":
        # magnitudes: 'mag' (astropy's) or dimensionless; nothing to convert
        if unit == u.mag or unit == u.dimensionless_unscaled:
            return 1.0
        raise DataFileError(f"catalog {str(path)!r}: column {name!r} has unit {unit.to_string()!r}, "
                            "not a magnitude (mag)")
    try:
        return float(unit.to(u.Unit(want)))
    except u.UnitConversionError:
        raise DataFileError(f"catalog {str(path)!r}: column {name!r} has unit {unit.to_string()!r}, "
                            f"which cannot be converted to {want}") from None


def read_catalog_table(path: str | Path, column_map: dict | None = None,
                       allow_no_motion: bool = False) -> StarTable:
    """Read a star catalog into arrays (see :class:`StarTable`).

    Parameters
    ----------
    path : str or Path
        CSV (also ``.csv.gz``), ECSV, VOTable (``.vot``, ``.xml``), FITS table (``.fits``) or
        Parquet file with Gaia-style columns: ``source_id``, ``ra``, ``dec``, ``pmra``,
        ``pmdec``, ``parallax`` (required), ``parallax_error``, ``radial_velocity``,
        ``ref_epoch`` (Julian year; default 2016.0), Gaia photometry ``phot_g_mean_mag``,
        ``phot_bp_mean_mag``, ``phot_rp_mean_mag``, ``bp_rp``, and measured magnitudes
        ``vmag``, ``kmag`` (also 2MASS ``j_m``, ``h_m``, ``ks_m``; ``rmag``, ``imag``).
    column_map : dict, optional
        occplan name -> the file's column name, e.g. ``{"ra": "RA_ICRS"}``.
    allow_no_motion : bool
        Keep rows without proper motion or parallax (a two-parameter solution), using zero
        for the missing values; they are listed in the report's notes.  Off by default:
        1 mas of unknown parallax is about 7,000 km at Saturn.

    Notes
    -----
    Units: each column's unit (ECSV, VOTable, FITS, Parquet written by astropy) is converted
    with astropy units to deg, mas/yr, mas, km/s, yr, mag; a column without a unit is taken
    in those units (a note lists them); a unit that does not convert raises
    :class:`DataFileError`.

    Magnitudes: V, R, I, J, H, K are the measured ones where the catalog has them, else
    derived from G and BP-RP by the Gaia DR3 colour transformations
    (:mod:`occplan.gaia_photometry`, scatter carried as the uncertainty, colour range
    enforced); ``StarTable.magnitudes`` and each StarSpec's ``extra['photometry']`` say which.

    Rows without a position (or, by default, without proper motion and parallax) are skipped
    and listed in the report, never silently used; a repeated ``source_id`` keeps the first
    row.  A negative parallax (allowed by Gaia's noise) is used as 0 and counted in the notes.
    A missing radial velocity is 0 (its effect over a decade is far below a mas for the
    distant stars of occultation work).  Unparsable numbers and missing columns raise
    :class:`DataFileError`.
    """
    from .schema import check_input_path

    p = check_input_path(path, "catalog")
    return star_table(_read_table(p), column_map, allow_no_motion, where=str(p))


def star_table(table, column_map: dict | None = None, allow_no_motion: bool = False,
               where: str = "(table)", empty_ok: bool = False) -> StarTable:
    """A catalog already in memory (an astropy Table, or any mapping of column names to
    arrays) as a :class:`StarTable`, with every rule of :func:`read_catalog_table`: units,
    Gaia photometry, astrometric errors, skipped rows.  The one path every reader takes
    (files, partitioned Parquet pieces).  ``empty_ok``: a piece with no usable star gives an
    empty table instead of an error."""
    from astropy.table import Table

    from .gaia_photometry import best_magnitude, relations

    if not isinstance(table, Table):
        table = Table(dict(table))
    p = where
    for name in table.colnames:  # a UTF-8 byte-order mark read as part of the first name
        if name.startswith("\ufeff"):
            table.rename_column(name, name.removeprefix("\ufeff"))
    cmap = {k: v for k, v in (column_map or {}).items()}
    unknown = set(cmap) - set(CATALOG_COLUMNS)
    if unknown:
        raise InputError(f"column map: unknown occplan column(s) {', '.join(sorted(unknown))}; "
                         f"known: {', '.join(CATALOG_COLUMNS)}")
    names = {c.lower(): c for c in table.colnames}

    def column_name(key):
        if key in cmap:
            if cmap[key] not in table.colnames:
                raise DataFileError(f"catalog {str(p)!r}: mapped column {cmap[key]!r} (for "
                                    f"{key}) not found; columns are {', '.join(table.colnames)}")
            return cmap[key]
        for alias in MAGNITUDE_ALIASES.get(key, (key,)):
            if alias in names:
                return names[alias]
        return None

    missing = [k for k in REQUIRED_COLUMNS if column_name(k) is None]
    if missing:
        raise DataFileError(f"catalog {str(p)!r} lacks column(s) {', '.join(missing)}; it has "
                            f"{', '.join(table.colnames) or 'none'} (map yours with --column "
                            "NAME=COLUMN)")
    n = len(table)
    report = CatalogReport(path=str(p), rows_read=n)
    if n == 0 and not empty_ok:
        raise DataFileError(f"catalog {str(p)!r} has no rows")

    ids_col = table[column_name("source_id")]
    id_mask = np.asarray(np.ma.getmaskarray(ids_col)) if hasattr(ids_col, "mask") else np.zeros(n, bool)
    raw = np.ma.getdata(ids_col)
    if np.asarray(raw).dtype.kind in "iu":  # integer ids (Gaia source_id): no per-row work
        ids = np.asarray(raw).astype(str).astype(object)
    else:
        ids = np.array([(v.decode("utf-8", "replace") if isinstance(v, bytes) else str(v)).strip()
                        for v in raw], dtype=object)
    ids[id_mask] = ""

    no_unit = []

    def numbers(key, default=np.nan):
        name = column_name(key)
        if name is None:
            return np.full(n, default)
        values = _numbers(table, name, p)
        factor = _unit_factor(table, name, key, p)
        if factor is None:
            no_unit.append(f"{name} ({COLUMN_UNITS[key]})")
            return values
        return values * factor

    ra, dec = numbers("ra"), numbers("dec")
    pmra, pmdec, plx = numbers("pmra"), numbers("pmdec"), numbers("parallax")
    plx_err = numbers("parallax_error")
    errors = {k: numbers(k) for k in ERROR_COLUMNS if column_name(k) is not None}
    rv = numbers("radial_velocity", 0.0)
    epoch = numbers("ref_epoch", DEFAULT_REF_EPOCH_YR)
    if column_name("ref_epoch") is None:
        report.notes.append(f"no ref_epoch column: positions taken at J{DEFAULT_REF_EPOCH_YR}")
    gmag, bp, rp, bprp = (numbers(k) for k in ("phot_g_mean_mag", "phot_bp_mean_mag",
                                                "phot_rp_mean_mag", "bp_rp"))
    colour = np.where(np.isfinite(bprp), bprp, bp - rp)
    magnitudes = {}
    for band, key in BAND_COLUMNS.items():
        name = column_name(key)
        mag, sig, src, counts = best_magnitude(band, numbers(key), f"catalog column {name}",
                                               gmag, colour)
        magnitudes[band] = {"mag": mag, "sigma": sig, "source": src}
        rel = relations()[band]
        if counts["derived"]:
            report.notes.append(f"{band} from Gaia G and BP-RP for {counts['derived']} star(s) "
                                f"(Riello et al. 2021; sigma {rel.sigma_mag:.3f} mag)")
        if counts["outside_range"]:
            report.notes.append(f"{counts['outside_range']} star(s) with BP-RP outside "
                                f"{rel.colour_range[0]}..{rel.colour_range[1]}: no {band} from Gaia")
    if no_unit:
        report.notes.append("no unit in the file for " + ", ".join(no_unit) + ": taken in those units")

    keep = np.ones(n, dtype=bool)

    def skip(mask, reason):
        for i in np.nonzero(mask & keep)[0]:
            report.skipped.append((int(i) + 1, ids[i], reason))
        keep[mask] = False

    skip(ids == "", "no source_id")
    skip(~np.isfinite(ra) | ~np.isfinite(dec), "no position")
    skip(np.isfinite(ra) & ((ra < 0) | (ra >= 360)) | np.isfinite(dec) & (np.abs(dec) > 90),
         "position out of range")
    no_motion = ~np.isfinite(pmra) | ~np.isfinite(pmdec) | ~np.isfinite(plx)
    if allow_no_motion:
        used = no_motion & keep
        if used.any():
            report.notes.append(f"{int(used.sum())} star(s) without proper motion or parallax "
                                "used with zero motion (positions uncertain): "
                                + ", ".join(ids[used][:10]) + (" ..." if used.sum() > 10 else ""))
        pmra, pmdec, plx = (np.where(np.isfinite(a), a, 0.0) for a in (pmra, pmdec, plx))
    else:
        skip(no_motion, "no proper motion or parallax (pass --allow-no-motion to use it)")
    skip(~np.isfinite(epoch) | (epoch < 1000) | (epoch > 3000), "bad ref_epoch")
    # repeated source_id: keep the first row
    _, first = np.unique(ids, return_index=True)
    dup = np.ones(n, dtype=bool)
    dup[first] = False
    skip(dup, "repeated source_id (first row kept)")
    neg = keep & (plx < 0)
    if neg.any():
        report.notes.append(f"{int(neg.sum())} negative parallax(es) used as 0")
    plx = np.where(plx < 0, 0.0, plx)
    rv = np.where(np.isfinite(rv), rv, 0.0)

    idx = np.nonzero(keep)[0]
    report.skipped.sort(key=lambda item: item[0])
    report.stars = int(idx.size)
    if idx.size == 0 and not empty_ok:
        raise DataFileError(f"catalog {str(p)!r}: no usable star ({report.summary()})")
    return StarTable(
        source_id=ids[idx], ra_deg=ra[idx], dec_deg=dec[idx], pm_ra_mas_yr=pmra[idx],
        pm_dec_mas_yr=pmdec[idx], parallax_mas=plx[idx], rv_km_s=rv[idx],
        epoch_jd_tt=2451545.0 + (epoch[idx] - 2000.0) * 365.25,
        vmag=magnitudes["V"]["mag"][idx], kmag=magnitudes["K"]["mag"][idx], gmag=gmag[idx],
        report=report, parallax_error_mas=plx_err[idx], bp_rp=colour[idx],
        errors={k: v[idx] for k, v in errors.items()},
        magnitudes={b: {k: v[idx] for k, v in cols.items()} for b, cols in magnitudes.items()})


def read_catalog(path: str | Path, column_map: dict | None = None,
                 allow_no_motion: bool = False):
    """Stars of a catalog as StarSpecs, and the report of skipped rows.

    Returns
    -------
    (list of occplan.ephemeris.StarSpec, CatalogReport)
        See :func:`read_catalog_table` for columns, units and the skipping rules.
    """
    table = read_catalog_table(path, column_map, allow_no_motion)
    return table.stars(), table.report


def catalog_star(path: str | Path, star_id, column_map: dict | None = None):
    """The star with ``source_id == star_id`` in a catalog (raises if absent or skipped)."""
    table = read_catalog_table(path, column_map)
    key = str(star_id).strip()
    hit = np.nonzero(table.source_id == key)[0]
    if hit.size:
        return table.star(int(hit[0]))
    why = [r for _, s, r in table.report.skipped if s == key]
    if why:
        raise DataFileError(f"star {key} in {path} is not usable: {why[0]}")
    raise UnknownNameError(f"no star with source_id {key} in {path}")
