"""Partitioned star catalogs: Parquet files or folders, read only where the planet can reach.

A catalog is a Parquet file or a folder of them (any depth) with Gaia-style columns
(``source_id``, ``ra``, ``dec``, ``pmra``, ``pmdec``, ``parallax``, optional
``radial_velocity``, ``ref_epoch``, ``vmag``, ``kmag``, ``phot_g_mean_mag``).  It is cut
into **pieces** (a file, or some of its row groups) that are read and searched one at a
time, so memory stays bounded whatever the catalog's size.  Pieces are skipped when they
carry HEALPix indices that the planet's path cannot reach:

- **folders** ``healpix_level=N/pixel=K/`` (hive style, nested scheme): the piece holds
  the stars of pixel K at level N;
- **Gaia ``source_id``** (any file): ``source_id // 2**35`` is the nested level-12 pixel
  (Gaia DR3 documentation, the ``source_id`` datamodel entry), so the min/max statistics
  of ``source_id`` in each row group give a range of level-12 pixels.

The reachable pixels (:func:`reachable_pixels`) are those within the search radius of the
path (the prefilter's circle plus half a node step) widened by the largest motion a star can
have between the catalog's epoch and the window: ``MAX_PROPER_MOTION_MAS_YR`` times the
years from ``ref_epoch_yr`` (J2016.0, Gaia DR3's epoch, unless told) plus a parallax of
``MAX_PARALLAX_MAS``.  The circle around each path node is sampled on a square grid a
third of a pixel apart and every sampled pixel's eight neighbours are added, so no pixel
that meets the circle is missed.
"""

from __future__ import annotations

import dataclasses
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from .errors import DataFileError, InputError

GAIA_LEVEL = 12
GAIA_SHIFT = 35  # source_id // 2**35 is the nested level-12 pixel (Gaia DR3 documentation)
MAX_PROPER_MOTION_MAS_YR = 10_400.0  # Barnard's star, 10.39 arcsec/yr (from memory)
MAX_PARALLAX_MAS = 1_000.0  # above Proxima Centauri's 768 mas (from memory)
DEFAULT_EPOCH_YR = 2016.0  # Gaia DR3
_LEVEL_RE = re.compile(r"healpix_level=(\d+)")
_PIXEL_RE = re.compile(r"pixel=(\d+)")
COLUMNS = ("source_id", "ra", "dec", "pmra", "pmdec", "parallax", "radial_velocity",
           "ref_epoch", "vmag", "kmag", "phot_g_mean_mag")


def is_partitioned(path) -> bool:
    """True for a Parquet file or a folder (read by :class:`ParquetCatalog`)."""
    p = Path(path)
    return p.is_dir() or p.suffix.lower() in (".parquet", ".pq")


@dataclass(frozen=True)
class Piece:
    """A unit of work: one Parquet file, or some of its row groups."""

    path: str
    row_groups: tuple | None = None  # None: the whole file
    level: int | None = None
    pixel: int | None = None
    rows: int | None = 0  # None: not yet read (a folder partition not selected)


def reachable_pixels(unit, radius_rad: float, level: int) -> np.ndarray:
    """Sorted nested HEALPix pixels at ``level`` within ``radius_rad`` of any of the unit
    vectors ``unit`` (N, 3) and of the path between them (module docstring)."""
    from astropy_healpix import HEALPix
    import astropy.units as u

    hp = HEALPix(nside=2 ** level, order="nested")
    res = hp.pixel_resolution.to_value(u.rad)
    spacing = res / 3.0
    unit = np.asarray(unit, dtype=float)
    # densify the path so that consecutive points are at most `spacing` apart
    step = np.linalg.norm(np.diff(unit, axis=0), axis=1)
    sub = np.maximum(np.ceil(step / spacing).astype(int), 1)
    k = np.repeat(np.arange(step.size), sub)
    tau = (np.arange(k.size) - np.repeat(np.cumsum(sub) - sub, sub)) / np.repeat(sub, sub)
    pts = np.vstack([unit[k] * (1 - tau[:, None]) + unit[k + 1] * tau[:, None], unit[-1:]])
    pts /= np.linalg.norm(pts, axis=1)[:, None]
    n_side = int(math.ceil((radius_rad + spacing) / spacing))
    g = np.arange(-n_side, n_side + 1) * spacing
    gx, gy = np.meshgrid(g, g)
    disc = np.hypot(gx, gy) <= radius_rad + spacing
    gx, gy = gx[disc], gy[disc]
    east = np.cross([0.0, 0.0, 1.0], pts)
    east /= np.maximum(np.linalg.norm(east, axis=1), 1e-15)[:, None]
    north = np.cross(pts, east)
    out = set()
    block = max(1, 2_000_000 // gx.size)
    for lo in range(0, len(pts), block):  # blocks of path points bound the memory
        p, e, nn = pts[lo:lo + block], east[lo:lo + block], north[lo:lo + block]
        v = p[:, None, :] + gx[None, :, None] * e[:, None, :] + gy[None, :, None] * nn[:, None, :]
        v = v.reshape(-1, 3)
        lon = np.arctan2(v[:, 1], v[:, 0])
        lat = np.arcsin(np.clip(v[:, 2] / np.linalg.norm(v, axis=1), -1, 1))
        out.update(np.unique(hp.lonlat_to_healpix(lon * u.rad, lat * u.rad)).tolist())
    pix = np.array(sorted(out), dtype=np.int64)
    neigh = hp.neighbours(pix).ravel()
    return np.unique(np.r_[pix, neigh[neigh >= 0]])


class ParquetCatalog:
    """A Parquet file or folder of them, searched piece by piece (module docstring)."""

    def __init__(self, path, column_map: dict | None = None, allow_no_motion: bool = False,
                 ref_epoch_yr: float = DEFAULT_EPOCH_YR):
        p = Path(path)
        if not p.exists():
            raise DataFileError(f"catalog {str(p)!r} not found")
        files = sorted(str(f) for f in p.rglob("*.parquet")) if p.is_dir() else [str(p)]
        if not files:
            raise DataFileError(f"catalog folder {str(p)!r} holds no .parquet file")
        self.path, self.column_map = str(p), dict(column_map or {})
        unknown = set(self.column_map) - set(COLUMNS)
        if unknown:
            raise InputError(f"column map: unknown occplan column(s) {', '.join(sorted(unknown))}")
        self.allow_no_motion, self.ref_epoch_yr = allow_no_motion, float(ref_epoch_yr)
        self.pieces = []
        sid = self.column_map.get("source_id", "source_id")
        for f in files:
            rel = str(Path(f).relative_to(p)) if p.is_dir() else Path(f).name
            lv, px = _LEVEL_RE.search(rel), _PIXEL_RE.search(rel)
            if lv and px:  # the folder names the pixel: the file is opened only if selected
                self.pieces.append(Piece(f, None, int(lv.group(1)), int(px.group(1)), None))
                continue
            meta = _metadata(f)
            names = meta.schema.names
            col = names.index(sid) if sid in names else None
            for g in range(meta.num_row_groups):
                rg = meta.row_group(g)
                st = rg.column(col).statistics if col is not None else None
                if st is not None and st.has_min_max and isinstance(st.min, int):
                    lo, hi = st.min >> GAIA_SHIFT, st.max >> GAIA_SHIFT
                    self.pieces.append(Piece(f, (g,), GAIA_LEVEL, (lo, hi), rg.num_rows))
                else:
                    self.pieces.append(Piece(f, (g,), None, None, rg.num_rows))
        self.info = {"partitions": len(self.pieces), "partitions_read": len(self.pieces)}

    @property
    def rows(self) -> int | None:
        """Rows in the whole catalog, when known without opening every file (None for folder
        partitions, whose files are opened only when the path reaches them)."""
        if any(pc.rows is None for pc in self.pieces):
            return None
        return int(sum(pc.rows for pc in self.pieces))

    def select(self, path_unit, radius_rad: float, years_from_epoch: float) -> list[Piece]:
        """The pieces the path can reach (all pieces without HEALPix indices)."""
        allowance = (MAX_PROPER_MOTION_MAS_YR * abs(years_from_epoch) + MAX_PARALLAX_MAS)
        radius = radius_rad + math.radians(allowance / 3.6e6)
        levels = sorted({pc.level for pc in self.pieces if pc.level is not None})
        reach = {lv: reachable_pixels(path_unit, radius, lv) for lv in levels}
        out = []
        for pc in self.pieces:
            if pc.level is None:
                out.append(pc)
                continue
            pix = reach[pc.level]
            if isinstance(pc.pixel, tuple):  # a range of Gaia level-12 pixels
                lo, hi = pc.pixel
                hit = np.searchsorted(pix, hi, side="right") > np.searchsorted(pix, lo)
            else:
                i = np.searchsorted(pix, pc.pixel)
                hit = i < pix.size and pix[i] == pc.pixel
            if hit:
                out.append(pc if pc.rows is not None
                           else dataclasses.replace(pc, rows=_metadata(pc.path).num_rows))
        self.info = {"partitions": len(self.pieces), "partitions_read": len(out),
                     "rows": self.rows,
                     "rows_read": int(sum(pc.rows for pc in out)),
                     "pruning": ("HEALPix pixels within the search radius plus "
                                 f"{allowance / 1e3:.0f} arcsec of star motion"
                                 if levels else "none (no HEALPix index)")}
        return out

    def read(self, piece: Piece, chunk_rows: int = 250_000):
        """StarTable chunks of one piece."""
        yield from read_piece(piece, self.column_map, self.allow_no_motion, chunk_rows)


def _metadata(path: str):
    """A Parquet file's footer (row groups, schema, statistics); DataFileError if unreadable."""
    return _open(path).metadata


def _open(path: str):
    import pyarrow.parquet as pq

    try:
        return pq.ParquetFile(path)
    except Exception as exc:  # pyarrow raises several types for a bad file
        raise DataFileError(f"catalog {path!r} cannot be read as Parquet ({exc})") from None


def read_piece(piece: Piece, column_map: dict, allow_no_motion: bool, chunk_rows: int = 250_000):
    """StarTable chunks of one :class:`Piece` (a free function: Dask workers call it)."""
    f = _open(piece.path)
    names = set(f.schema_arrow.names)
    want = [column_map.get(k, k) for k in COLUMNS if column_map.get(k, k) in names]
    missing = [k for k in COLUMNS[:6] if column_map.get(k, k) not in names]
    if missing:
        raise DataFileError(f"catalog {piece.path!r} lacks column(s) {', '.join(missing)} "
                            "(map yours with --column NAME=COLUMN)")
    for batch in f.iter_batches(batch_size=chunk_rows, row_groups=piece.row_groups,
                                columns=want):
        yield _stars(batch, column_map, allow_no_motion)


def _stars(batch, column_map, allow_no_motion):
    """A pyarrow RecordBatch as a StarTable through :func:`occplan.catalogs.star_table`, the
    one path every catalog takes (units at their documented defaults, Gaia photometry,
    astrometric errors, the same skip rules)."""
    from astropy.table import Table

    from .catalogs import star_table

    cols = {name: batch.column(i).to_numpy(zero_copy_only=False)
            for i, name in enumerate(batch.schema.names)}
    return star_table(Table(cols), column_map, allow_no_motion, where="(parquet piece)",
                      empty_ok=True)
