"""Benchmark (DESIGN.md sec. 10): every resonance of order <= 3 and m <= 200 for every
satellite of Saturn over its rings, target under 2 s.

Run: /work/venv/bin/python benchmarks/bench_zones.py
"""

import time

from occplan.bodies import get_body
from occplan.resonances import find_resonances


def main():
    body = get_body("saturn")
    find_resonances(body, max_order=3, max_m=20)  # warm-up: imports and caches
    best = float("inf")
    for _ in range(3):
        t0 = time.perf_counter()
        res = find_resonances(body, max_order=3, max_m=200)
        best = min(best, time.perf_counter() - t0)
    print(f"saturn zones: {len(res)} resonances (order <= 3, m <= 200, "
          f"{len(body.satellites)} satellites, {body.inner_ring_km:.0f}-{body.outer_ring_km:.0f} km) "
          f"in {best:.3f} s (best of 3; target < 2 s)")


if __name__ == "__main__":
    main()
