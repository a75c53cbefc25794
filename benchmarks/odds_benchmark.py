"""Speed of the streak-odds computations (printed figures, not a test).

Measures, in this process (best of several repeats, wall clock):

1. ``run_probability`` for n = 1,000,000 attempts and a run of r = 20 at a
   fixed rate (matrix powers of the 22-state run chain; target <= 100 ms), and
   the exact rational recurrence at n = 20,000 for comparison;
2. ``window_probability`` with the exact chain for Y = 16 over 1,000 attempts
   (target <= 2 s), for the largest chain (X = 9, C(16, 8) = 12,870 states)
   and for thresholds whose answer is far from 0 and 1;
3. Monte Carlo of equal precision, timed in the same run. "Equal precision"
   is defined two ways, both reported:

   * a standard error of 1e-4 (four reliable decimals): the Monte Carlo draws
     needed are m = P (1 - P) / 1e-4**2 at the exact P; a batch of draws is
     timed with the library's own Monte Carlo and the time scaled to m;
   * a standard error equal to the exact chain's stated rounding bound
     (``error_bound``): the same scaling, reported in years.

   The ratio is the Monte Carlo time over the exact chain's time.

Usage: ``python benchmarks/odds_benchmark.py [--mc-batch N] [--repeats K]``
"""

from __future__ import annotations

import argparse
import platform
import time
from fractions import Fraction

import numpy as np

from streakwise.analysis.odds import run_probability, window_probability

RUN_TARGET_S = 0.100
WINDOW_TARGET_S = 2.0
MC_STANDARD_ERROR = 1e-4
SECONDS_PER_YEAR = 365.25 * 24 * 3600


def best_time(function, repeats):
    best = float("inf")
    result = None
    for _ in range(repeats):
        start = time.perf_counter()
        result = function()
        best = min(best, time.perf_counter() - start)
    return best, result


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--mc-batch", type=int, default=20_000, help="Monte Carlo sequences timed per case (default 20,000)")
    parser.add_argument("--repeats", type=int, default=5, help="repeats per timing; the best is kept (default 5)")
    args = parser.parse_args()

    print(f"python {platform.python_version()}, numpy {np.__version__}, {platform.machine()}")
    print()

    print("1. Run of at least r makes in n attempts (fixed rate)")
    seconds, result = best_time(lambda: run_probability(1_000_000, 20, 0.5), max(args.repeats, 20))
    verdict = "ok" if seconds <= RUN_TARGET_S else "OVER TARGET"
    print(
        f"   n = 1,000,000, r = 20, p = 0.5: {seconds * 1e3:.3f} ms ({verdict}; target <= {RUN_TARGET_S * 1e3:.0f} ms); "
        f"P = {result.probability:.12f}, method {result.method}, error bound {result.error_bound:.1e}"
    )
    seconds, result = best_time(lambda: run_probability(1_000_000, 20, 0.45, kind="either"), max(args.repeats, 20))
    print(f"   n = 1,000,000, r = 20, p = 0.45, either kind: {seconds * 1e3:.3f} ms; P = {result.probability:.12f}")
    seconds, result = best_time(lambda: run_probability(20_000, 20, Fraction(1, 2)), 3)
    print(f"   exact rational, n = 20,000, r = 20, p = 1/2: {seconds * 1e3:.1f} ms; P = {result.probability:.12f} (exact)")
    print()

    print("2. Exact window chain, Y = 16 over 1,000 attempts (target <= 2 s)")
    cases = [(9, 0.5), (12, 0.45), (13, 0.45), (14, 0.5), (14, 0.45)]
    exact_times = {}
    for at_least, rate in cases:
        seconds, result = best_time(lambda: window_probability(1_000, 16, at_least, rate, method="exact"), args.repeats)
        exact_times[(at_least, rate)] = (seconds, result)
        verdict = "ok" if seconds <= WINDOW_TARGET_S else "OVER TARGET"
        print(
            f"   X = {at_least:2d}, p = {rate}: {seconds * 1e3:8.1f} ms ({verdict}), {result.states:6,} states; "
            f"P = {result.probability:.12f}, error bound {result.error_bound:.1e}"
        )
    print()

    print(f"3. Monte Carlo of equal precision ({args.mc_batch:,} sequences timed per case, best of 2, scaled)")
    window_probability(1_000, 16, 14, 0.5, method="monte_carlo", samples=2_000, rng=1)  # warm-up
    for at_least, rate in [(13, 0.45), (14, 0.5), (14, 0.45)]:
        exact_seconds, exact = exact_times[(at_least, rate)]
        batch_seconds, mc = best_time(
            lambda: window_probability(1_000, 16, at_least, rate, method="monte_carlo", samples=args.mc_batch, rng=2024), 2
        )
        per_draw = batch_seconds / args.mc_batch
        variance = exact.probability * (1 - exact.probability)
        draws = variance / MC_STANDARD_ERROR**2
        mc_seconds = draws * per_draw
        draws_at_bound = variance / exact.error_bound**2
        years_at_bound = draws_at_bound * per_draw / SECONDS_PER_YEAR
        agree = abs(mc.probability - exact.probability) / mc.standard_error
        print(
            f"   X = {at_least}, p = {rate}: P = {exact.probability:.6f}; batch estimate {mc.probability:.4f} "
            f"(SE {mc.standard_error:.4f}, {agree:.1f} SE from exact)"
        )
        print(
            f"      SE 1e-4 needs {draws:,.0f} draws: {mc_seconds:.1f} s by Monte Carlo vs {exact_seconds * 1e3:.1f} ms exact "
            f"-> exact is {mc_seconds / exact_seconds:,.0f}x faster"
        )
        print(
            f"      SE equal to the exact bound ({exact.error_bound:.1e}) needs {draws_at_bound:.1e} draws: "
            f"about {years_at_bound:.1e} years of Monte Carlo"
        )


if __name__ == "__main__":
    main()
