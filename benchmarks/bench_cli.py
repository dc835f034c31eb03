"""Benchmark: the command line as a user meets it (ratios printed, nothing asserted).

Run: python benchmarks/bench_cli.py [--demo-runs 2] [--skip-demo]

Times, each in a fresh process, side by side in this run:
  1. ``occplan --help`` (target under 0.3 s: the command modules load the library lazily);
  2. ``occplan demo`` into a temporary folder (target under 30 s on a 2-core machine; the
     demo shares its per-event work among every core, occplan.parallel);
  3. ``python -c pass`` and ``python -c "import numpy"``: the floor any Python tool pays.
Best and worst of the runs are printed: on a shared machine the load varies.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HELP_TARGET_S = 0.3
DEMO_TARGET_S = 30.0


def timed(cmd, cwd=None) -> float:
    tic = time.perf_counter()
    subprocess.run(cmd, cwd=cwd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    return time.perf_counter() - tic


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--demo-runs", type=int, default=2)
    ap.add_argument("--skip-demo", action="store_true")
    a = ap.parse_args()
    exe = [sys.executable, "-m", "occplan.cli.main"]
    timed(exe + ["--help"])  # warm the file cache
    floor = min(timed([sys.executable, "-c", "pass"]) for _ in range(5))
    numpy = min(timed([sys.executable, "-c", "import numpy"]) for _ in range(5))
    helps = [timed(exe + ["--help"]) for _ in range(5)]
    print(f"python -c pass: {floor:.3f} s; import numpy: {numpy:.3f} s")
    print(f"occplan --help: best {min(helps):.3f} s, worst {max(helps):.3f} s = "
          f"{min(helps) / HELP_TARGET_S:.2f}-{max(helps) / HELP_TARGET_S:.2f} x the "
          f"{HELP_TARGET_S} s target")
    if a.skip_demo:
        return
    demos = []
    for _ in range(max(a.demo_runs, 1)):
        with tempfile.TemporaryDirectory() as tmp:
            demos.append(timed(exe + ["demo", "--out", str(Path(tmp) / "out")]))
    print(f"occplan demo: best {min(demos):.1f} s, worst {max(demos):.1f} s = "
          f"{min(demos) / DEMO_TARGET_S:.2f}-{max(demos) / DEMO_TARGET_S:.2f} x the "
          f"{DEMO_TARGET_S:g} s target")


if __name__ == "__main__":
    main()
