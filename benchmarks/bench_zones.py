"""Benchmark (occplan's speed target): a body's whole feature catalogue, target under 0.5 s.

Times, side by side in one run, for Saturn (every satellite, order <= 3, m <= 200): the
resonance terms (occplan.resonances.find_resonances) and the features derived from them
(occplan.features.derive_features).  Prints the ratio to the target.

Run: .venv/bin/python benchmarks/bench_zones.py
"""

import time

from occplan.bodies import get_body
from occplan.features import derive_features, load_settings
from occplan.resonances import find_resonances

TARGET_S = 0.5


def best_of(n, fn):
    best, out = float("inf"), None
    for _ in range(n):
        t0 = time.perf_counter()
        out = fn()
        best = min(best, time.perf_counter() - t0)
    return best, out


def main():
    body = get_body("saturn")
    find_resonances(body, max_order=3, max_m=20)  # warm-up: imports and caches
    near = load_settings().edge_distance_km  # the terms the feature catalogue can use
    t_terms, res = best_of(3, lambda: find_resonances(body, max_order=3, max_m=200,
                                                      near_rings_km=near))
    t_feat, feats = best_of(3, lambda: derive_features(body, res))
    total = t_terms + t_feat
    print(f"saturn: {len(res)} resonance terms in {t_terms:.3f} s, {len(feats)} features from "
          f"them in {t_feat:.3f} s; catalogue {total:.3f} s = {total / TARGET_S:.1f} x the "
          f"{TARGET_S} s target (best of 3)")


if __name__ == "__main__":
    main()
