"""Star catalogs and site files in.

Sites: a TOML file with ``[[sites]]`` tables (``name``, ``lat_deg``, ``lon_deg``,
``height_m``, optional ``telescope`` = path of a telescope TOML profile, optional
``min_altitude_deg``).

Star catalogs: CSV, ECSV or VOTable with Gaia-style columns (:func:`read_catalog_table`,
:func:`read_catalog`, :func:`catalog_star`); rows that cannot be used are skipped and listed in
a :class:`CatalogReport`, never silently used.
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
# A star catalog is a CSV, ECSV or VOTable file with Gaia-style column names (or a column map
# from those names to the file's own).  Units are Gaia's: ra, dec in deg (ICRS at ref_epoch),
# pmra = mu_alpha* = mu_alpha cos(dec) and pmdec in mas/yr, parallax in mas, radial_velocity in
# km/s, ref_epoch a Julian year (TCB in Gaia; the difference to TT is irrelevant at mas).

CATALOG_COLUMNS = ("source_id", "ra", "dec", "pmra", "pmdec", "parallax", "radial_velocity",
                   "ref_epoch", "vmag", "kmag", "phot_g_mean_mag")
REQUIRED_COLUMNS = ("source_id", "ra", "dec", "pmra", "pmdec", "parallax")
# Other spellings of the magnitude columns found in common catalogs (2MASS calls K "ks_m").
MAGNITUDE_ALIASES = {"vmag": ("vmag", "v_mag", "v"), "kmag": ("kmag", "k_mag", "ks_m", "ksmag", "k")}
DEFAULT_REF_EPOCH_YR = 2016.0  # Gaia DR3 epoch (common practice: the catalogue's own epoch)
CATALOG_FORMATS = {".csv": "ascii.csv", ".ecsv": "ascii.ecsv", ".vot": "votable",
                   ".xml": "votable", ".votable": "votable"}


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


@dataclass
class StarTable:
    """A star catalog as plain arrays (deg, mas/yr, mas, km/s, TT Julian dates): the search
    works on these; :meth:`star` builds one :class:`occplan.ephemeris.StarSpec`."""

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

    def __len__(self) -> int:
        return int(self.ra_deg.size)

    def star(self, i: int):
        from .ephemeris import StarSpec

        def mag(a):
            return None if not np.isfinite(a[i]) else float(a[i])

        extra = {"source_id": str(self.source_id[i])}
        if np.isfinite(self.gmag[i]):
            extra["phot_g_mean_mag"] = float(self.gmag[i])
        return StarSpec(ra_deg=float(self.ra_deg[i]), dec_deg=float(self.dec_deg[i]),
                        pm_ra_mas_yr=float(self.pm_ra_mas_yr[i]),
                        pm_dec_mas_yr=float(self.pm_dec_mas_yr[i]),
                        parallax_mas=float(self.parallax_mas[i]), rv_km_s=float(self.rv_km_s[i]),
                        epoch_jd_tt=float(self.epoch_jd_tt[i]), name=str(self.source_id[i]),
                        vmag=mag(self.vmag), kmag=mag(self.kmag), extra=extra)

    def stars(self) -> list:
        return [self.star(i) for i in range(len(self))]

    def subset(self, index) -> "StarTable":
        idx = np.asarray(index)
        kw = {f: getattr(self, f)[idx] for f in ("source_id", "ra_deg", "dec_deg", "pm_ra_mas_yr",
                                                   "pm_dec_mas_yr", "parallax_mas", "rv_km_s",
                                                   "epoch_jd_tt", "vmag", "kmag", "gmag")}
        return StarTable(**kw, report=self.report)

    @classmethod
    def from_stars(cls, stars) -> "StarTable":
        """A StarTable from StarSpecs (source_id = name, or the row number)."""
        def col(get):
            return np.array([get(s) for s in stars], dtype=float)

        return cls(
            source_id=np.array([s.name or str(i + 1) for i, s in enumerate(stars)], dtype=object),
            ra_deg=col(lambda s: s.ra_deg), dec_deg=col(lambda s: s.dec_deg),
            pm_ra_mas_yr=col(lambda s: s.pm_ra_mas_yr), pm_dec_mas_yr=col(lambda s: s.pm_dec_mas_yr),
            parallax_mas=col(lambda s: s.parallax_mas), rv_km_s=col(lambda s: s.rv_km_s),
            epoch_jd_tt=col(lambda s: s.epoch_jd_tt),
            vmag=col(lambda s: np.nan if s.vmag is None else s.vmag),
            kmag=col(lambda s: np.nan if s.kmag is None else s.kmag),
            gmag=col(lambda s: s.extra.get("phot_g_mean_mag", np.nan)),
            report=CatalogReport(path="(in memory)", rows_read=len(stars), stars=len(stars)))


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

    fmt = CATALOG_FORMATS.get(path.suffix.lower())
    if fmt is None:
        raise DataFileError(f"catalog {str(path)!r}: unknown file type {path.suffix!r}; use "
                            ".csv, .ecsv or a VOTable (.vot, .xml)")
    check_input_path(path, "catalog")
    if fmt != "votable":
        _check_header(path)
    try:
        import warnings

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # VOTable / unit-parsing chatter; errors still raise
            return Table.read(str(path), format=fmt)
    except Exception as exc:  # astropy raises many types for malformed files
        first = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise DataFileError(f"catalog {str(path)!r} cannot be read as {fmt} ({first})") from None


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
            s = str(v).strip()
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


def read_catalog_table(path: str | Path, column_map: dict | None = None,
                       allow_no_motion: bool = False) -> StarTable:
    """Read a star catalog into arrays (see :class:`StarTable`).

    Parameters
    ----------
    path : str or Path
        CSV, ECSV or VOTable file with Gaia-style columns: ``source_id``, ``ra``, ``dec``,
        ``pmra``, ``pmdec``, ``parallax`` (required), ``radial_velocity``, ``ref_epoch``
        (Julian year; default 2016.0), ``vmag``, ``kmag``, ``phot_g_mean_mag`` (optional).
    column_map : dict, optional
        occplan name -> the file's column name, e.g. ``{"ra": "RA_ICRS"}``.
    allow_no_motion : bool
        Keep rows without proper motion or parallax (a two-parameter solution), using zero
        for the missing values; they are listed in the report's notes.  Off by default:
        1 mas of unknown parallax is about 7,000 km at Saturn.

    Notes
    -----
    Rows without a position (or, by default, without proper motion and parallax) are skipped
    and listed in the report, never silently used; a repeated ``source_id`` keeps the first
    row.  A negative parallax (allowed by Gaia's noise) is used as 0 and counted in the notes.
    A missing radial velocity is 0 (its effect over a decade is far below a mas for the
    distant stars of occultation work).  Unparsable numbers and missing columns raise
    :class:`DataFileError`.
    """
    from .schema import check_input_path

    p = check_input_path(path, "catalog")
    table = _read_table(p)
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
    if n == 0:
        raise DataFileError(f"catalog {str(p)!r} has no rows")

    ids_col = table[column_name("source_id")]
    id_mask = np.asarray(np.ma.getmaskarray(ids_col)) if hasattr(ids_col, "mask") else np.zeros(n, bool)
    ids = np.array([str(v).strip() for v in np.ma.getdata(ids_col)], dtype=object)
    ids[id_mask] = ""

    def numbers(key, default=np.nan):
        name = column_name(key)
        return _numbers(table, name, p) if name is not None else np.full(n, default)

    ra, dec = numbers("ra"), numbers("dec")
    pmra, pmdec, plx = numbers("pmra"), numbers("pmdec"), numbers("parallax")
    rv = numbers("radial_velocity", 0.0)
    epoch = numbers("ref_epoch", DEFAULT_REF_EPOCH_YR)
    if column_name("ref_epoch") is None:
        report.notes.append(f"no ref_epoch column: positions taken at J{DEFAULT_REF_EPOCH_YR}")
    vmag, kmag, gmag = numbers("vmag"), numbers("kmag"), numbers("phot_g_mean_mag")

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
    if idx.size == 0:
        raise DataFileError(f"catalog {str(p)!r}: no usable star ({report.summary()})")
    return StarTable(
        source_id=ids[idx], ra_deg=ra[idx], dec_deg=dec[idx], pm_ra_mas_yr=pmra[idx],
        pm_dec_mas_yr=pmdec[idx], parallax_mas=plx[idx], rv_km_s=rv[idx],
        epoch_jd_tt=2451545.0 + (epoch[idx] - 2000.0) * 365.25,
        vmag=vmag[idx], kmag=kmag[idx], gmag=gmag[idx], report=report)


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
