"""Speed of the hot-state model (printed figures, not a test).

One player with 1,200 attempts over 80 games (game lengths 10-20), drawn from
the hidden hot/cold model: the EM fit (4 starts) plus 99 within-game
permutation refits for the p-value, with and without a difficulty offset
(the offset's null redraws games by conditional Bernoulli sampling). Wall
clock and CPU time, best of ``--repeats``.

Usage: ``python benchmarks/hotstate_benchmark.py [--permutations N] [--repeats K]``
"""

from __future__ import annotations

import argparse
import platform
import time

import numpy as np

from streakwise.analysis.hotstate import fit_hot_state
from streakwise.analysis.simulate import simulate_hidden_state

ATTEMPTS, GAMES = 1200, 80


def player(seed: int = 3):
    """(made, offsets, logit offsets) of one simulated player."""
    rng = np.random.default_rng(seed)
    lengths = rng.integers(10, 21, GAMES)
    lengths = np.floor(lengths * ATTEMPTS / lengths.sum()).astype(int)
    lengths[-1] += ATTEMPTS - lengths.sum()
    offsets = np.r_[0, np.cumsum(lengths)]
    difficulty = rng.normal(0.0, 0.5, (GAMES, int(lengths.max())))
    draw = simulate_hidden_state(int(lengths.max()), hot_rate=0.62, cold_rate=0.28, stay_hot=0.91, stay_cold=0.92,
                                 n_sequences=GAMES, rng=rng, logit_offset=difficulty)
    made = np.concatenate([draw.made[g, :n] for g, n in enumerate(lengths)]).astype(np.int8)
    offset = np.concatenate([difficulty[g, :n] for g, n in enumerate(lengths)])
    return made, offsets, offset


def timed(function, repeats: int):
    best_wall = best_cpu = float("inf")
    result = None
    for _ in range(repeats):
        wall, cpu = time.perf_counter(), time.process_time()
        result = function()
        best_wall = min(best_wall, time.perf_counter() - wall)
        best_cpu = min(best_cpu, time.process_time() - cpu)
    return result, best_wall, best_cpu


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--permutations", type=int, default=99)
    parser.add_argument("--repeats", type=int, default=2)
    args = parser.parse_args()
    made, offsets, offset = player()
    print(f"python {platform.python_version()}, numpy {np.__version__}, {platform.machine()}")
    print(f"one player: {len(made):,} attempts in {len(offsets) - 1} games; EM (4 starts) + "
          f"{args.permutations} null refits")
    for label, logit_offset in (("no offset (within-game permutations)", None),
                                ("difficulty offset (conditional Bernoulli draws)", offset)):
        result, wall, cpu = timed(
            lambda o=logit_offset: fit_hot_state(made, offsets, logit_offset=o, permutations=args.permutations,
                                                 rng=1, player="bench"),
            args.repeats,
        )
        print(f"  {label:<50} {wall:6.2f} s wall, {cpu:6.2f} s cpu   "
              f"(hot {result.hot_rate:.3f}, cold {result.cold_rate:.3f}, stays {result.stay_hot:.3f}/"
              f"{result.stay_cold:.3f}, p {result.p_value:.3f})")


if __name__ == "__main__":
    main()
