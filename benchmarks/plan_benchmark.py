"""Speed of the study planner (prints figures; not a test).

The planner run of issue 5: one effect size, 1,000 attempts per simulated
season, 1,000 simulated seasons, 2,000 within-game permutations each, every
core test (D_1..D_3 and the longest run by the permutation engine, the
stratified runs test). Target: <= 60 s on 2 cores.

Printed: wall time with the verdict, the per-season cost (wall and CPU
seconds per simulated season), the power table; with ``--variants`` also
the same run on other game layouts (short games take the engine's fully
tabulated path; 20-attempt games its two-halves path; drawn game lengths mix
both) and serially.

Usage: ``python benchmarks/plan_benchmark.py [--workers N] [--variants] [--quick]``.
``--quick`` is a smoke version (200 seasons, 500 permutations).
"""

from __future__ import annotations

import argparse
import os
import platform
import resource
import time

import numpy as np

from streakwise.analysis.permutation import _table
from streakwise.analysis.power import estimate_power

TARGET_S = 60.0


def cpu_seconds():
    own = resource.getrusage(resource.RUSAGE_SELF)
    children = resource.getrusage(resource.RUSAGE_CHILDREN)
    return own.ru_utime + own.ru_stime + children.ru_utime + children.ru_stime


def timed_run(label, *, workers, simulations, permutations, **layout):
    start_cpu = cpu_seconds()
    start = time.perf_counter()
    result = estimate_power("hidden", 0.2, persistence=0.9, rate=0.45, simulations=simulations,
                            permutations=permutations, seed=2024, workers=workers, **layout)
    wall = time.perf_counter() - start
    cpu = cpu_seconds() - start_cpu
    print(f"{label}: {result.attempts[0]:,.0f} attempts per season (mean), {simulations:,} seasons, "
          f"{permutations:,} permutations, {workers} worker(s)")
    print(f"   wall {wall:.2f} s; per season {wall / simulations * 1e3:.2f} ms wall, "
          f"{cpu / simulations * 1e3:.2f} ms CPU (workers' CPU counted after they exit)")
    return wall, result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--workers", type=int, default=2, help="worker processes (default 2)")
    parser.add_argument("--variants", action="store_true", help="also time other game layouts and a serial run")
    parser.add_argument("--quick", action="store_true", help="a small smoke run")
    args = parser.parse_args()
    simulations, permutations = (200, 500) if args.quick else (1000, 2000)

    print(f"python {platform.python_version()}, numpy {np.__version__}, {platform.machine()}, "
          f"{os.cpu_count()} CPUs; hidden state, boost 0.2, stay 0.9, rate 0.45")
    _table(3)  # the arrangement table is built once per process; time it apart
    wall, result = timed_run("planner run (50 games x 20 attempts)", workers=args.workers,
                             simulations=simulations, permutations=permutations,
                             attempts_per_game=20, games=50)
    verdict = "ok" if wall <= TARGET_S else "OVER TARGET"
    print(f"   {verdict} (target <= {TARGET_S:.0f} s on 2 cores)")
    print()
    print(result.summary().split("Caveats:")[0].rstrip())
    if args.variants:
        print()
        timed_run("short games (100 x 10 attempts)", workers=args.workers, simulations=simulations,
                  permutations=permutations, attempts_per_game=10, games=100)
        timed_run("drawn game lengths (Poisson mean 16 on [10, 22], 62 games)", workers=args.workers,
                  simulations=simulations, permutations=permutations,
                  attempts_per_game={"mean": 16.0, "low": 10, "high": 22}, games=62)
        timed_run("serial (50 x 20 attempts)", workers=1, simulations=simulations,
                  permutations=permutations, attempts_per_game=20, games=50)


if __name__ == "__main__":
    main()
