"""Speed of the within-session permutation engine (prints figures; not a test).

(a) One player, 1,200 attempts over 80 games, 10,000 permutations, k = 1..3 plus
    runs and longest run: the engine against ``scipy.stats.permutation_test``
    on the same attempts shuffled across the whole season (scipy cannot
    stratify; same statistics, vectorised) and against a straightforward loop
    that shuffles every game per permutation, in the same run.
    Targets: engine <= 1.5x scipy's time, and >= 30x faster than the loop.
(b) A league of 450 players x ~1,000 attempts, 10,000 permutations, on a
    process pool: wall time and peak RSS (this process and its workers).
    Targets: <= 60 s on 2 cores, <= 1.5 GB.
(c) Engine time over the bare cost of shuffling every attempt of the same
    permutations (the cheapest numpy ways: ``Generator.permuted`` on each game
    block, and argsort of random keys). Target: <= 1x.

Usage: ``python benchmarks/stats_benchmark.py [--quick] [--workers N]``.
``--quick`` runs a small smoke version (fewer permutations and players).
"""

from __future__ import annotations

import argparse
import os
import resource
import subprocess
import sys
import time

import numpy as np
from scipy import stats

from streakwise.analysis.league import league_scan
from streakwise.analysis.permutation import _Plan, _patterns, _statistics, _table, permutation_test
from streakwise.analysis.sequences import PlayerSequences
from streakwise.analysis.simulate import simulate_hidden_state, simulate_session_lengths
from streakwise.analysis.streaks import streak_counts


def best_of(function, repeats):
    """Smallest wall time of ``repeats`` calls (and the last return value)."""
    best, value = float("inf"), None
    for _ in range(repeats):
        start = time.perf_counter()
        value = function()
        best = min(best, time.perf_counter() - start)
    return best, value


def make_player(name, n_games, mean_attempts, seed):
    """A player with game-to-game form and a mild hidden hot state."""
    rng = np.random.default_rng(seed)
    lengths = simulate_session_lengths(n_games, mean=mean_attempts, low=5, high=25, rng=rng)
    offsets = np.concatenate([[0], np.cumsum(lengths)]).astype(np.int64)
    form = rng.normal(0.0, 0.3, size=n_games)
    logit_offset = np.repeat(form, lengths)[None, :]
    draw = simulate_hidden_state(int(offsets[-1]), hot_rate=0.5, cold_rate=0.42, stay_hot=0.9,
                                 stay_cold=0.9, rng=rng, logit_offset=logit_offset)
    made = draw.made[0].astype(np.int8)
    ids = np.array([f"g{i:03d}" for i in range(n_games)])
    return PlayerSequences(name, ids, ids, made, offsets)


def suite(x, axis=-1):
    """D_1..D_3, rate after 1..3 makes and misses, runs and longest run (one session)."""
    x = np.moveaxis(np.asarray(x), axis, -1)
    counts = streak_counts(x, max_k=3)
    with np.errstate(invalid="ignore", divide="ignore"):
        after_makes = counts.makes_after_makes / counts.attempts_after_makes
        after_misses = counts.makes_after_misses / counts.attempts_after_misses
    return np.concatenate([after_makes - after_misses, after_makes, after_misses,
                           counts.runs[..., None], counts.longest_run[..., None]], axis=-1)


def loop_null(player, permutations, seed):
    """The straightforward way: shuffle every game, then count, once per permutation."""
    rng = np.random.default_rng(seed)
    games = [player.session(i).copy() for i in range(len(player))]
    out = np.empty((permutations, 11))
    for j in range(permutations):
        for game in games:
            rng.shuffle(game)
        season = np.concatenate(games)
        counts = streak_counts(season, player.offsets, max_k=3)
        with np.errstate(invalid="ignore", divide="ignore"):
            after_makes = counts.makes_after_makes / counts.attempts_after_makes
            after_misses = counts.makes_after_misses / counts.attempts_after_misses
        out[j] = np.concatenate([after_makes - after_misses, after_makes, after_misses,
                                 [counts.runs, counts.longest_run]])
    return out


def bare_shuffles(player, permutations, seed, how):
    """Shuffle every attempt of ``permutations`` seasons, game by game, nothing else."""
    rng = np.random.default_rng(seed)
    lengths = player.lengths
    for length in np.unique(lengths):
        chosen = np.flatnonzero(lengths == length)
        block = np.stack([player.session(i) for i in chosen])
        for start in range(0, permutations, 4096):
            size = min(4096, permutations - start)
            if how == "permuted":
                rng.permuted(np.broadcast_to(block, (size, *block.shape)), axis=-1)
            else:
                keys = rng.random((size, *block.shape))
                np.take_along_axis(np.broadcast_to(block, keys.shape), np.argsort(keys, axis=-1), -1)


def null_only(player, permutations, seed, batch=4096):
    """Just the engine's null draws of every statistic (no p-values or intervals)."""
    rng = np.random.default_rng(seed)
    plan = _Plan(player.made, player.offsets, 3)
    for start in range(0, permutations, batch):
        size = min(batch, permutations - start)
        sums, longest, lag1 = plan.draw(size, rng)
        _statistics(sums, longest, lag1, plan.lag1_denominator, plan.cols)


def peak_rss_mb():
    """Peak RSS (MB) of this process and of its largest finished child.

    This process: ``VmHWM`` from /proc when there is one (``ru_maxrss`` also
    counts the peak of the process that started us, as it survives ``exec``).
    Children: ``ru_maxrss`` of the largest worker, which includes the pages it
    shares with this process after the fork, so the sum is an upper bound.
    """
    own = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    try:
        with open("/proc/self/status") as status:
            for line in status:
                if line.startswith("VmHWM:"):
                    own = int(line.split()[1]) / 1024
    except OSError:
        pass
    children = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
    return own, children


def league_part(n_players, permutations, workers):
    """(b), run in a fresh process so that its peak RSS is the league's own."""
    players = [make_player(f"p{i:03d}", 67, 15, seed=100 + i) for i in range(n_players)]
    attempts = sum(p.attempts for p in players)
    print(f"\n(b) league: {n_players} players, {attempts} attempts "
          f"({attempts / n_players:.0f} per player), {permutations} permutations, "
          f"{workers} worker(s), fresh process")
    done = []
    start = time.perf_counter()
    scan = league_scan(players, permutations=permutations, rng=2024, workers=workers,
                       progress=done.append)
    wall = time.perf_counter() - start
    own, children = peak_rss_mb()
    print(f"  wall time {wall:.1f} s   (target <= 60 s on 2 cores); progress calls {len(done)}")
    print(f"  peak RSS: main process {own:.0f} MB, largest worker {children:.0f} MB (shares its "
          f"imports with the main process), main + {workers} workers <= "
          f"{own + workers * children:.0f} MB   (target <= 1.5 GB)")
    if workers > 1:
        check = players[: min(5, n_players)]
        serial = league_scan(check, permutations=permutations, rng=2024, workers=1)
        same = all(a.result.to_dict() == scan.player(a.player).result.to_dict() for a in serial.players)
        print(f"  serial and pool results identical for the first {len(check)} players: {same}")
    for test in scan.league:
        print(f"  pooled D_{test.k}: mean corrected {test.corrected_mean:+.4f} over {test.players} "
              f"players, p {test.p_value:.4f}")


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small smoke run")
    parser.add_argument("--workers", type=int, default=min(2, os.cpu_count() or 1))
    parser.add_argument("--league-only", action="store_true", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    permutations = 1_000 if args.quick else 10_000
    loop_permutations = 200 if args.quick else 1_000
    n_players = 12 if args.quick else 450
    repeats = 3
    if args.league_only:
        league_part(n_players, permutations, args.workers)
        return

    print(f"python {sys.version.split()[0]}, numpy {np.__version__}, cpus {os.cpu_count()}, "
          f"workers {args.workers}, permutations {permutations}")
    start = time.perf_counter()
    _patterns(), _table(3)
    print(f"arrangement tables (lengths 1-18, k <= 3), built once per process: "
          f"{time.perf_counter() - start:.3f} s")

    # (a) --------------------------------------------------------------------
    player = make_player("bench", 80, 15, seed=1)
    while player.attempts != 1200:  # exactly 1,200 attempts over 80 games
        lengths = player.lengths.copy()
        lengths[np.argmax(lengths) if player.attempts > 1200 else np.argmin(lengths)] += (
            -1 if player.attempts > 1200 else 1)
        offsets = np.concatenate([[0], np.cumsum(lengths)])
        made = np.resize(player.made, offsets[-1]).astype(np.int8)
        player = PlayerSequences("bench", player.sessions, player.games, made, offsets)
    long_games = int((player.lengths > 18).sum())
    print(f"\n(a) one player: {player.attempts} attempts, {len(player)} games "
          f"({long_games} longer than 18 attempts)")

    engine, result = best_of(lambda: permutation_test(
        player, permutations=permutations, rng=1, keep_null=False), repeats)
    engine_no_intervals, _ = best_of(lambda: permutation_test(
        player, permutations=permutations, rng=1, keep_null=False, resamples=0), repeats)
    engine_null, _ = best_of(lambda: null_only(player, permutations, 1), repeats)
    scipy_time, scipy_result = best_of(lambda: stats.permutation_test(
        (player.made,), suite, permutation_type="pairings", vectorized=True,
        n_resamples=permutations, alternative="greater", rng=np.random.default_rng(1)), repeats)
    loop_time, _ = best_of(lambda: loop_null(player, loop_permutations, 1), 1)
    loop_time *= permutations / loop_permutations
    print(f"  engine (all {3 * 3 + 3} statistics, p-values, null summaries, "
          f"2000 bootstrap resamples): {engine:.3f} s")
    print(f"  engine without the bootstrap intervals:            {engine_no_intervals:.3f} s")
    print(f"  engine null draws only (no p-values, no intervals):  {engine_null:.3f} s")
    print(f"  scipy.stats.permutation_test, unstratified, vectorised: {scipy_time:.3f} s")
    print(f"  per-game shuffle loop (timed on {loop_permutations}, scaled): {loop_time:.2f} s")
    print(f"  engine / scipy = {engine / scipy_time:.2f}x   (target <= 1.5x)")
    print(f"  loop / engine  = {loop_time / engine:.0f}x full test, {loop_time / engine_null:.0f}x "
          f"null draws against null draws   (target >= 30x)")
    print(f"  D_1 observed {result.test('difference', 1).observed:+.4f}: within-game null mean "
          f"{result.test('difference', 1).null_mean:+.4f}, season-wide (scipy) null mean "
          f"{float(np.nanmean(scipy_result.null_distribution[:, 0])):+.4f}")

    # (c) --------------------------------------------------------------------
    permuted, _ = best_of(lambda: bare_shuffles(player, permutations, 1, "permuted"), repeats)
    argsorted, _ = best_of(lambda: bare_shuffles(player, permutations, 1, "argsort"), repeats)
    bare = min(permuted, argsorted)
    print(f"\n(c) bare shuffling of every attempt, {permutations} seasons: permuted {permuted:.3f} s, "
          f"argsort {argsorted:.3f} s")
    print(f"  engine / bare = {engine_null / bare:.2f}x null draws, {engine_no_intervals / bare:.2f}x "
          f"test without intervals, {engine / bare:.2f}x full test   (target <= 1x)")

    # (b) --------------------------------------------------------------------
    command = [sys.executable, os.path.abspath(__file__), "--league-only", "--workers", str(args.workers)]
    if args.quick:
        command.append("--quick")
    sys.stdout.flush()
    subprocess.run(command, check=True)


if __name__ == "__main__":
    main()
