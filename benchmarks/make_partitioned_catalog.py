"""Write a synthetic star catalog as HEALPix-partitioned Parquet (invented stars).

Run: python benchmarks/make_partitioned_catalog.py OUT_DIR [--stars 200000] [--level 5]
     [--near 2000] [--body saturn] [--start 2027-01-01] [--days 365] [--seed 1]
     [--chunk 10000000]

Stars are spread uniformly over the whole sky, plus ``--near`` stars placed within 0.3
outer-ring radii of the planet's geocentric path over the window (so that a search finds
candidates).  ``source_id`` follows Gaia's convention: the nested level-12 HEALPix pixel
times 2**35 plus a running number, so ``source_id // 2**35`` is the pixel.  Files go to
``OUT_DIR/healpix_level=L/pixel=K/part-C.parquet``; empty pixels have no folder.  A catalog
larger than ``--chunk`` stars is generated and written one chunk C at a time, so memory stays
bounded (each pixel folder then holds one file per chunk).  Seeded: the same arguments write
the same catalog.
"""

from __future__ import annotations

import argparse
from pathlib import Path

import numpy as np


def synthetic_stars(n_sky: int, n_near: int, body_name: str, start: str, days: float,
                    seed: int, first_number: int = 0):
    """Columns (dict of arrays) of the invented catalog, sorted by source_id (running numbers
    from ``first_number``, so chunks of one catalog have distinct ids)."""
    import astropy.units as u
    from astropy_healpix import HEALPix

    from occplan.bodies import get_body
    from occplan.ephemeris import get_ephemeris, parse_utc, tdb_s_of
    from occplan.search import planet_path

    rng = np.random.default_rng(seed)
    ra = rng.uniform(0.0, 360.0, n_sky)
    dec = np.degrees(np.arcsin(rng.uniform(-1.0, 1.0, n_sky)))
    if n_near:
        body, eph = get_body(body_name), get_ephemeris()
        t0 = tdb_s_of(parse_utc(start))
        path = planet_path(eph, body, t0, t0 + days * 86400.0, 3600.0, body.outer_ring_km)
        k = rng.integers(0, path.tdb_s.size, n_near)
        p = path.unit[k]
        east = np.cross([0.0, 0.0, 1.0], p)
        east /= np.linalg.norm(east, axis=1)[:, None]
        north = np.cross(p, east)
        off = rng.uniform(-0.3, 0.3, (n_near, 2)) * (body.outer_ring_km / path.distance_km[k])[:, None]
        v = p + off[:, :1] * east + off[:, 1:] * north
        v /= np.linalg.norm(v, axis=1)[:, None]
        ra = np.r_[ra, np.degrees(np.arctan2(v[:, 1], v[:, 0])) % 360.0]
        dec = np.r_[dec, np.degrees(np.arcsin(v[:, 2]))]
    n = ra.size
    hp = HEALPix(nside=2 ** 12, order="nested")
    pix12 = hp.lonlat_to_healpix(ra * u.deg, dec * u.deg).astype(np.int64)
    order = np.argsort(pix12, kind="stable")
    ra, dec, pix12 = ra[order], dec[order], pix12[order]
    return {
        "source_id": pix12 * 2 ** 35 + first_number + np.arange(n, dtype=np.int64),
        "ra": ra, "dec": dec,
        # no proper motion: the near stars stay on the path whatever the catalog epoch
        "pmra": np.zeros(n), "pmdec": np.zeros(n),
        "parallax": rng.uniform(0.0, 1.0, n),
        "ref_epoch": np.full(n, 2016.0),
        "vmag": rng.uniform(9.0, 17.0, n),
    }


def write_partitioned(out_dir, columns: dict, level: int, part: int = 0) -> int:
    """Write the columns as healpix_level=L/pixel=K/part-PART.parquet; returns the number of
    files."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    pix = columns["source_id"] // 2 ** 35 // 4 ** (12 - level)
    cuts = np.r_[0, np.nonzero(np.diff(pix))[0] + 1, pix.size]
    table = pa.table(columns)
    for lo, hi in zip(cuts[:-1], cuts[1:]):
        d = Path(out_dir) / f"healpix_level={level}" / f"pixel={int(pix[lo])}"
        d.mkdir(parents=True, exist_ok=True)
        pq.write_table(table.slice(lo, hi - lo), d / f"part-{part}.parquet")
    return len(cuts) - 1


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("out")
    ap.add_argument("--stars", type=int, default=200_000)
    ap.add_argument("--near", type=int, default=2_000)
    ap.add_argument("--level", type=int, default=5)
    ap.add_argument("--body", default="saturn")
    ap.add_argument("--start", default="2027-01-01")
    ap.add_argument("--days", type=float, default=365.0)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--chunk", type=int, default=10_000_000)
    a = ap.parse_args()
    stars, files = write_chunked(a.out, a.stars, a.near, a.level, a.body, a.start, a.days,
                                 a.seed, a.chunk)
    print(f"{stars} stars in {files} files under {a.out}")


def write_chunked(out_dir, n_sky: int, n_near: int, level: int, body: str, start: str,
                  days: float, seed: int, chunk: int = 10_000_000) -> tuple[int, int]:
    """The catalog written ``chunk`` stars at a time (the near stars with the first chunk):
    (stars, files)."""
    stars = files = 0
    for k, lo in enumerate(range(0, max(n_sky, 1), chunk)):
        cols = synthetic_stars(min(chunk, n_sky - lo), n_near if k == 0 else 0, body, start,
                               days, seed + k, first_number=stars)
        files += write_partitioned(out_dir, cols, level, part=k)
        stars += cols["ra"].size
    return stars, files


if __name__ == "__main__":
    main()
