"""Benchmark (occplan's speed targets for the network campaign): one event over a 1-degree
world grid (target under 10 s) and one event from 20 stations with the network coverage and
the greedy choice (target under 5 s).  Prints each time and its ratio to the target, measured
side by side in one run.  The event is the demo's Saturn star (invented) at an invented
epoch; the 20 stations are spread over the part of the Earth that sees it.

Run: .venv/bin/python benchmarks/bench_network.py
"""

import time

import numpy as np

from occplan.catalogs import Site
from occplan.ephemeris import StarSpec
from occplan.network import choose_stations, evaluate_network
from occplan.world import world_grid

STAR = StarSpec(36.00676, 11.44189, vmag=9.8, kmag=6.1, name="invented")
WINDOW = ("2028-10-30T01:30Z", "2028-10-30T04:30Z")
TARGETS = {"world grid 1 deg": 10.0, "network 20 stations": 5.0}


def main():
    world_grid("saturn", STAR, WINDOW, resolution_deg=10.0)  # warm-up: kernels, imports
    t0 = time.perf_counter()
    grid = world_grid("saturn", STAR, WINDOW, resolution_deg=1.0, step_s=60.0)
    t_grid = time.perf_counter() - t0
    obs = np.nonzero(grid.observable)[0]
    pick = obs[np.linspace(0, obs.size - 1, 20).astype(int)]
    sites = [Site(f"s{k}", float(grid.lat_deg[i]), float(grid.lon_deg[i]), 0.0)
             for k, i in enumerate(pick)]
    from occplan.astro import window_seconds

    window = window_seconds(WINDOW)
    t0 = time.perf_counter()
    res = evaluate_network("saturn", STAR, sites, window)
    choose_stations(res, 5)
    t_net = time.perf_counter() - t0
    print(f"world grid 1 deg ({grid.lat_deg.size:,} places, {obs.size:,} observable): "
          f"{t_grid:.1f} s, {t_grid / TARGETS['world grid 1 deg']:.2f} x the 10 s target")
    print(f"network of 20 stations (evaluation and greedy choice of 5): {t_net:.1f} s, "
          f"{t_net / TARGETS['network 20 stations']:.2f} x the 5 s target")


if __name__ == "__main__":
    main()
