"""Benchmark: search a synthetic 1,000,000-star catalog over one year for one planet.

Run: python benchmarks/bench_find.py [--stars 1000000] [--brute 10000] [--seed 1]
Builds a seeded synthetic catalog (invented stars: a band of +-1.5 deg around Saturn's 2027
geocentric path, so the density near the path is like a deep survey's near the ecliptic,
about 20,000 stars per square degree), writes it as CSV, and times
  1. reading the CSV (occplan.catalogs.read_catalog_table),
  2. the search (k-d tree prefilter + exact geocentric closest approaches),
on one core (target: under 60 s in all).  In the same run a brute-force scan of a subset
(no prefilter: each star's exact geocentric direction through skyfield every hour of the
year, the same threshold, the same refinement) checks that the fast search finds the same
candidates in that subset, and the per-star speed ratio is printed.
"""

from __future__ import annotations

import argparse
import os
import tempfile
import time
import warnings

import numpy as np

from occplan.bodies import get_body
from occplan.catalogs import read_catalog_table
from occplan.ephemeris import Observer, get_ephemeris, parse_utc, tdb_s_of, time_from_tdb_s
from occplan.geometry import Corrections
from occplan.search import (DEFAULT_MARGIN_KM, EARTH_RADIUS_KM, _runs, planet_path,
                            refine_candidate, search_candidates)

START, END = "2027-01-01T00:00:00Z", "2028-01-01T00:00:00Z"


def synthetic_catalog(path, n, seed, body, eph, t0, t1):
    rng = np.random.default_rng(seed)
    track = planet_path(eph, body, t0, t1, 86400.0, body.outer_ring_km)
    k = rng.integers(0, track.tdb_s.size, n)
    u = track.unit[k]
    east = np.cross([0.0, 0.0, 1.0], u)
    east /= np.linalg.norm(east, axis=1)[:, None]
    north = np.cross(u, east)
    off = np.radians(rng.uniform(-1.5, 1.5, (n, 2)))
    v = u + off[:, :1] * east + off[:, 1:] * north
    v /= np.linalg.norm(v, axis=1)[:, None]
    ra = np.degrees(np.arctan2(v[:, 1], v[:, 0])) % 360.0
    dec = np.degrees(np.arcsin(v[:, 2]))
    pmra, pmdec = rng.normal(0, 6, n), rng.normal(0, 6, n)
    plx = rng.uniform(0.0, 1.5, n)
    vmag = rng.uniform(9, 17, n)
    with open(path, "w") as fh:
        fh.write("source_id,ra,dec,pmra,pmdec,parallax,radial_velocity,ref_epoch,vmag,kmag\n")
        ids = np.arange(1, n + 1) + 10**12
        block = np.column_stack([ids, ra, dec, pmra, pmdec, plx, vmag])
        lines = (f"{int(r[0])},{r[1]:.9f},{r[2]:.9f},{r[3]:.4f},{r[4]:.4f},{r[5]:.4f},,2016.0,"
                 f"{r[6]:.3f},{r[6] - 2.5:.3f}\n" for r in block)
        fh.writelines(lines)


def brute_force(body, table, window, margin_km, eph):
    """No prefilter: every star's exact geocentric direction every hour, then the same refinement."""
    t0, t1 = window
    pad = 2 * 86400.0
    nodes = np.arange(t0 - pad, t1 + pad + 1.0, 3600.0)
    path = planet_path(eph, body, nodes[0], nodes[-1], 3600.0, body.outer_ring_km
                       + EARTH_RADIUS_KM + margin_km)
    when = time_from_tdb_s(path.tdb_s)
    geo = Observer.geocentre()
    theta = path.theta_nodes_rad
    half = 0.5 * np.maximum(np.r_[path.step_rad, 0.0], np.r_[0.0, path.step_rad])
    corr = Corrections()
    found = []
    for i in range(len(table)):
        star = table.star(i)
        s = eph.star_direction(star, geo, when).T  # exact, parallax from the Earth
        near = np.linalg.norm(path.unit - s, axis=1) <= theta + half + 1e-9
        for first, last in _runs(near):
            a = path.tdb_s[max(first - 1, 0)]
            b = path.tdb_s[min(last + 1, path.tdb_s.size - 1)]
            found += refine_candidate(eph, body, star, i, a, b, (t0, t1), corr, margin_km)
    return found


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--stars", type=int, default=1_000_000)
    ap.add_argument("--brute", type=int, default=10_000)
    ap.add_argument("--seed", type=int, default=1)
    args = ap.parse_args()
    warnings.simplefilter("ignore")
    os.environ.setdefault("OMP_NUM_THREADS", "1")
    eph, body = get_ephemeris(), get_body("saturn")
    t0, t1 = tdb_s_of(parse_utc(START)), tdb_s_of(parse_utc(END))

    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "synthetic.csv")
        tic = time.perf_counter()
        synthetic_catalog(path, args.stars, args.seed, body, eph, t0, t1)
        print(f"synthetic catalog: {args.stars} stars written in {time.perf_counter() - tic:.1f} s "
              "(not part of the timing)")
        tic = time.perf_counter()
        table = read_catalog_table(path)
        t_read = time.perf_counter() - tic
    tic = time.perf_counter()
    cands, skipped, info = search_candidates(body, table, (t0, t1), progress=False)
    t_search = time.perf_counter() - tic
    total = t_read + t_search
    print(f"read CSV: {t_read:.1f} s; search: {t_search:.1f} s ({info['prefiltered']} prefiltered, "
          f"{info['screened']} screened, "
          f"{len(cands)} candidates, {len(skipped)} skipped); total {total:.1f} s "
          f"(target < 60 s): {'PASS' if total < 60 else 'FAIL'}")

    n_b = min(args.brute, len(table))
    sub = table.subset(np.arange(n_b))
    tic = time.perf_counter()
    ref = brute_force(body, sub, (t0, t1), DEFAULT_MARGIN_KM, eph)
    t_brute = time.perf_counter() - tic
    fast_sub = sorted((c.star_id, round(c.closest_approach_s, 1)) for c in cands if c.row < n_b)
    brute_sub = sorted((c.star_id, round(c.closest_approach_s, 1)) for c in ref)
    same = [a[0] for a in fast_sub] == [b[0] for b in brute_sub] and all(
        abs(a[1] - b[1]) < 1.0 for a, b in zip(fast_sub, brute_sub))
    per_fast = t_search / len(table)
    per_brute = t_brute / n_b
    print(f"brute force on the first {n_b} stars: {t_brute:.1f} s, {len(ref)} candidates; "
          f"fast search found the same ones: {same}")
    print(f"per star: search {per_fast * 1e6:.2f} us, brute force {per_brute * 1e3:.2f} ms; "
          f"speed ratio {per_brute / per_fast:.0f}x")


if __name__ == "__main__":
    main()
