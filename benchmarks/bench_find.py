"""Benchmark: the catalog search on generated catalogs (ratios printed, nothing asserted).

Run: python benchmarks/bench_find.py [--sizes 1e5,1e6] [--big] [--seed 1] [--skip-dask]

One thread (set below, before numpy loads).  Reports, for Saturn over 2027:
  1. stars generated on the fly (invented: a band of +-1.5 deg around the path, about
     20,000 stars per square degree at 1e6) and streamed in chunks: time per size, stars
     per second, peak memory (RSS high-water mark); ``--big`` adds 1e7;
  2. the same 1e6 stars over 5 years against 1 year (ratio);
  3. partition pruning: the fraction of HEALPix pixels the path can reach at levels 5-8,
     and a generated partitioned catalog on disk (benchmarks/make_partitioned_catalog.py)
     searched with pruning;
  4. the Dask engine on 2 local worker processes against the in-process engine on that
     catalog (same candidates, time ratio).
Targets (docs/find_at_scale.md): 1e6 under 10 s, 1e7 under 100 s and 2 GB, 5 years at most
2x one year, pruning under 2 % of partitions.
"""

import os

for _v in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS", "NUMEXPR_NUM_THREADS"):
    os.environ[_v] = "1"

import argparse  # noqa: E402
import resource  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402

from occplan.bodies import get_body  # noqa: E402
from occplan.catalogs import StarTable  # noqa: E402
from occplan.ephemeris import get_ephemeris, parse_utc, tdb_s_of  # noqa: E402
from occplan.search import planet_path, search_candidates, search_radius_rad  # noqa: E402

START = "2027-01-01T00:00:00Z"
YEAR_S = 365.25 * 86400.0


def generated(n, track, seed, size=250_000):
    """StarTable chunks of invented stars near the path (never all in memory)."""
    rng = np.random.default_rng(seed)
    for lo in range(0, n, size):
        m = min(size, n - lo)
        k = rng.integers(0, track.tdb_s.size, m)
        u = track.unit[k]
        east = np.cross([0.0, 0.0, 1.0], u)
        east /= np.linalg.norm(east, axis=1)[:, None]
        north = np.cross(u, east)
        off = np.radians(rng.uniform(-1.5, 1.5, (m, 2)))
        v = u + off[:, :1] * east + off[:, 1:] * north
        v /= np.linalg.norm(v, axis=1)[:, None]
        nan = np.full(m, np.nan)
        yield StarTable(
            source_id=np.arange(lo, lo + m).astype(str).astype(object),
            ra_deg=np.degrees(np.arctan2(v[:, 1], v[:, 0])) % 360.0,
            dec_deg=np.degrees(np.arcsin(v[:, 2])), pm_ra_mas_yr=rng.normal(0, 6, m),
            pm_dec_mas_yr=rng.normal(0, 6, m), parallax_mas=rng.uniform(0, 1.5, m),
            rv_km_s=np.zeros(m), epoch_jd_tt=np.full(m, 2457389.0), vmag=nan, kmag=nan,
            gmag=nan)


def peak_mb():
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def timed(body, source, window, **kw):
    tic = time.perf_counter()
    cands, skipped, info = search_candidates(body, source, window, progress=False, **kw)
    return time.perf_counter() - tic, cands, info


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="1e5,1e6")
    ap.add_argument("--big", action="store_true", help="also 1e7 stars")
    ap.add_argument("--part-stars", type=float, default=1e6)
    ap.add_argument("--part-level", type=int, default=5)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--skip-dask", action="store_true")
    a = ap.parse_args()
    warnings.simplefilter("ignore")
    eph, body = get_ephemeris(), get_body("saturn")
    t0 = tdb_s_of(parse_utc(START))
    year = (t0, t0 + YEAR_S)
    track = planet_path(eph, body, t0, t0 + YEAR_S, 86400.0, body.outer_ring_km)
    sizes = [int(float(s)) for s in a.sizes.split(",")] + ([10_000_000] if a.big else [])
    times = {}
    for n in sizes:
        dt, cands, info = timed(body, generated(n, track, a.seed), year)
        times[n] = dt
        print(f"{n:>10,} stars, 1 year: {dt:6.1f} s ({n / dt:,.0f} stars/s; {info['prefiltered']} "
              f"prefiltered, {info['screened']} screened, {len(cands)} candidates); "
              f"peak RSS so far {peak_mb():,.0f} MB", flush=True)
    n = 1_000_000 if 1_000_000 in times else sizes[0]
    dt5, cands5, _ = timed(body, generated(n, track, a.seed), (t0, t0 + 5 * YEAR_S))
    print(f"{n:,} stars, 5 years: {dt5:.1f} s = {dt5 / times[n]:.2f} x one year "
          f"({len(cands5)} candidates)", flush=True)

    # partition pruning: fraction of pixels the year's path can reach
    from occplan.partitions import DEFAULT_EPOCH_YR, ParquetCatalog, reachable_pixels
    from occplan.search import years_from_epoch

    path = planet_path(eph, body, t0 - 2 * 86400.0, t0 + YEAR_S + 2 * 86400.0, 3600.0,
                       body.outer_ring_km + 7378.137)
    from occplan.partitions import MAX_PARALLAX_MAS, MAX_PROPER_MOTION_MAS_YR
    yrs = years_from_epoch(DEFAULT_EPOCH_YR, path.tdb_s[0], path.tdb_s[-1])
    radius = search_radius_rad(path) + np.radians(
        (MAX_PROPER_MOTION_MAS_YR * yrs + MAX_PARALLAX_MAS) / 3.6e6)
    for level in (5, 6, 7, 8):
        pix = reachable_pixels(path.unit, radius, level)
        print(f"HEALPix level {level} ({12 * 4 ** level:,} pixels): one year of Saturn reaches "
              f"{pix.size} = {100 * pix.size / (12 * 4 ** level):.3f} %", flush=True)

    with tempfile.TemporaryDirectory() as tmp:
        sys.path.insert(0, str(Path(__file__).parent))
        from make_partitioned_catalog import write_chunked

        tic = time.perf_counter()
        n_rows, files = write_chunked(tmp, int(a.part_stars), 3000, a.part_level, "saturn",
                                      START, 365.0, a.seed)
        print(f"partitioned catalog: {n_rows:,} stars in {files:,} files "
              f"(level {a.part_level}) written in {time.perf_counter() - tic:.0f} s", flush=True)
        dt_p, cands_p, info = timed(body, ParquetCatalog(tmp), year)
        part = info["partitions"]
        print(f"pruned search: {dt_p:.1f} s, read {part['partitions_read']} of "
              f"{part['partitions']} partitions ({100 * part['partitions_read'] / part['partitions']:.2f} %), "
              f"{part['rows_read']:,} of {n_rows:,} rows; {len(cands_p)} candidates",
              flush=True)
        if not a.skip_dask:
            from occplan.dask_engine import client_for

            client, cluster = client_for(None, 2, True)
            try:
                search_candidates(body, ParquetCatalog(tmp), (t0, t0 + 86400.0), engine="dask",
                                  scheduler=client.scheduler.address)  # workers warm up
                dt_d, cands_d, _ = timed(body, ParquetCatalog(tmp), year, engine="dask",
                                         scheduler=client.scheduler.address)
            finally:
                client.close()
                cluster.close()
            same = sorted(c.star_id for c in cands_d) == sorted(c.star_id for c in cands_p)
            print(f"Dask engine, 2 local workers: {dt_d:.1f} s vs in-process {dt_p:.1f} s "
                  f"(in-process / dask = {dt_p / dt_d:.2f}); same candidates: {same}", flush=True)
    print(f"peak RSS {peak_mb():,.0f} MB")


if __name__ == "__main__":
    main()
