"""League scans on 1 and 2 local workers and on a 2-worker Dask cluster (prints figures; not a test).

In one run, on the same synthetic league (players of ~1,000 attempts over 67
games, the engine's default 10,000 permutations and 2,000 bootstrap resamples):

1. the scan in this process, on a local pool of 2 worker processes, and on a
   ``distributed.LocalCluster`` of 2 single-threaded worker processes (bound
   to 127.0.0.1, files in a temporary folder); the JSON of the three must be
   identical;
2. speed-up over this process, and the overhead per task: the round trip of
   an empty task on the pool and on the cluster, the extra worker time per
   task in the scan itself, and the CPU time of one player's test in this
   process and in the workers (which another busy process on the machine
   does not distort, unlike wall times: the load average is printed);
3. the cost of keeping a finished player in the store (``--save``), per
   player, at 10,000 and 100,000 permutations;
4. a worked estimate from the measured cost of one player of 1,000 attempts
   at 100,000 permutations: twenty seasons of a full league (450 players x 20
   seasons x ~1,000 attempts) on N = 2, 16 and 64 workers.

Usage: ``python benchmarks/scale_benchmark.py [--quick] [--players N]``.
"""

from __future__ import annotations

import argparse
import json
import logging
import os
import pathlib
import sys
import tempfile
import time
from functools import partial

import numpy as np

from streakwise.analysis import league as league_module
from streakwise.analysis.executors import _task_bounds, encode_task_output, map_tasks, usable_cores
from streakwise.analysis.league import _scan_player, league_scan

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parent))
from stats_benchmark import make_player  # noqa: E402  (same folder; not a package)

RESAMPLES = 2000  # the scan's default bootstrap resamples per player


def best_of(function, repeats):
    """Smallest wall time of ``repeats`` calls, and the last value."""
    best, value = float("inf"), None
    for _ in range(repeats):
        start = time.perf_counter()
        value = function()
        best = min(best, time.perf_counter() - start)
    return best, value


def as_json(scan):
    return json.dumps(scan.to_dict())


def nothing(item):
    """An empty task: measures the executor's own cost."""
    return item


def player_cpu(sequences, settings):
    """CPU seconds of one player's test, wherever it runs: (this thread, the whole process)."""
    thread, process = time.thread_time(), time.process_time()
    _scan_player(sequences, settings)
    return time.thread_time() - thread, time.process_time() - process


def cpu_per_player(players, settings, spec):
    """Median CPU seconds per player's test on ``spec``: (the test's thread, its whole process)."""
    scan_settings = dict(max_k=3, permutations=settings["permutations"], alternative="hot",
                         seed=settings["rng"], batch=4096, confidence_level=0.95, resamples=RESAMPLES)
    times = np.array(map_tasks(partial(player_cpu, settings=scan_settings), players, executor_spec=spec))
    return tuple(np.median(times, axis=0).tolist())


def empty_task_overhead(spec, tasks):
    """Wall time per empty task (one item each), warm executor."""
    map_tasks(nothing, list(range(8)), executor_spec=spec)
    wall, _ = best_of(lambda: map_tasks(nothing, list(range(tasks)), executor_spec=spec), 2)
    return wall / tasks


def checkpoint_cost(player, permutations, count):
    """Seconds to keep ``count`` finished players in a fresh store, one after another, as ``--save`` does.

    Returns the cumulative seconds after each player and the bytes of one
    player's null draws.
    """
    from streakwise.ingest.store import Store

    settings = dict(max_k=3, permutations=permutations, alternative="hot", seed=1, batch=4096,
                    confidence_level=0.95, resamples=RESAMPLES)
    part = _scan_player(player, settings)
    cumulative, total = [], 0.0
    with tempfile.TemporaryDirectory() as folder, Store(pathlib.Path(folder) / "s.duckdb") as store:
        for i in range(count):
            start = time.perf_counter()
            store.save_result("league_scan_partial", {**settings, "player": f"p{i}"},
                              {"player": player.player, "part": encode_task_output(part)})
            total += time.perf_counter() - start
            cumulative.append(total)
    return cumulative, part[1].nbytes


def extrapolate(cumulative, n):
    """Total seconds for ``n`` players: a*k + b*k**2 through the measured totals at k/2 and k players."""
    k, m = len(cumulative), len(cumulative) // 2
    whole, half = cumulative[k - 1], cumulative[m - 1]
    b = max(0.0, (whole - half * k / m) / (k * k - m * k))
    a = max(0.0, (half - b * m * m) / m)
    return a * n + b * n * n


def local_cluster(folder, workers, mmap_threshold=None):
    """A LocalCluster on 127.0.0.1; ``mmap_threshold`` sets MALLOC_MMAP_THRESHOLD_ in its workers."""
    import dask
    from distributed import LocalCluster

    environ = dask.config.get("distributed.nanny.pre-spawn-environ", default={}) or {}
    if mmap_threshold is not None:
        environ = {**environ, "MALLOC_MMAP_THRESHOLD_": mmap_threshold}
    with dask.config.set({"distributed.nanny.pre-spawn-environ": environ}):
        return LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                            dashboard_address="127.0.0.1:0", local_directory=folder,
                            silence_logs=logging.ERROR)


def fmt_duration(seconds):
    if seconds < 120:
        return f"{seconds:.0f} s"
    if seconds < 2 * 3600:
        return f"{seconds / 60:.1f} min"
    return f"{seconds / 3600:.1f} h"


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="a small smoke run")
    parser.add_argument("--players", type=int, help="players in the league (default 120; 24 with --quick)")
    args = parser.parse_args(argv)
    n_players = args.players or (24 if args.quick else 120)
    permutations = 2_000 if args.quick else 10_000
    workers = 2

    print(f"python {sys.version.split()[0]}, numpy {np.__version__}, cores usable {usable_cores()}, "
          f"load average {os.getloadavg()[0]:.1f}")
    players = [make_player(f"p{i:03d}", 67, 15, seed=100 + i) for i in range(n_players)]
    attempts = sum(p.attempts for p in players)
    weights = [p.attempts * (permutations + RESAMPLES) for p in players]
    tasks = len(_task_bounds(len(players), weights, league_module.TASK_WEIGHT))
    print(f"league: {n_players} players, {attempts} attempts ({attempts / n_players:.0f} per player), "
          f"{permutations} permutations + {RESAMPLES} bootstrap resamples per player, "
          f"{tasks} tasks ({n_players / tasks:.1f} players per task)")
    settings = dict(permutations=permutations, rng=2024, min_attempts=100)

    # 1. in this process ---------------------------------------------------------
    league_scan(players[:1], **settings)  # build the arrangement tables once
    serial, serial_scan = best_of(lambda: league_scan(players, **settings), 2)
    print(f"\n1 worker (this process):    {serial:7.2f} s   ({1000 * serial / n_players:.1f} ms per player)")

    # 2. local pool ----------------------------------------------------------------
    start = time.perf_counter()
    pool_scan = league_scan(players, workers=workers, **settings)
    pool_cold = time.perf_counter() - start
    pool, pool_scan = best_of(lambda: league_scan(players, workers=workers, **settings), 2)
    print(f"{workers} local workers:            {pool:7.2f} s   speed-up {serial / pool:.2f}x "
          f"(first pool of the process {pool_cold:.2f} s: starts the worker server once)")

    # 3. Dask LocalCluster ---------------------------------------------------------------
    from distributed import Client

    with tempfile.TemporaryDirectory() as folder:
        start = time.perf_counter()
        cluster = local_cluster(folder, workers)
        cluster_start = time.perf_counter() - start
        try:
            with Client(cluster.scheduler_address, set_as_default=False) as client:
                start = time.perf_counter()
                dask_scan = league_scan(players, cluster=cluster.scheduler_address, **settings)
                dask_cold = time.perf_counter() - start
                dask, dask_scan = best_of(
                    lambda: league_scan(players, cluster=cluster.scheduler_address, **settings), 2)
                dask_connected, _ = best_of(lambda: league_scan(players, cluster=client, **settings), 2)
                print(f"{workers}-worker Dask LocalCluster:  {dask:7.2f} s   speed-up {serial / dask:.2f}x "
                      f"(connecting each time; {dask_connected:.2f} s on a connected client; cluster start "
                      f"{cluster_start:.1f} s, first scan {dask_cold:.2f} s: workers import the package)")
                empty_dask = empty_task_overhead(client, 400)
                cpu_dask = cpu_per_player(players, settings, client)
        finally:
            cluster.close()
        cluster = local_cluster(folder, workers, mmap_threshold=32 * 2**20)
        try:
            with Client(cluster.scheduler_address, set_as_default=False) as client:
                cpu_per_player(players[:4], settings, client)  # workers import the package
                cpu_tuned = cpu_per_player(players, settings, client)
        finally:
            cluster.close()
    empty_pool = empty_task_overhead(workers, 2000)
    cpu_here = cpu_per_player(players, settings, 1)
    cpu_pool = cpu_per_player(players, settings, workers)

    same = as_json(serial_scan) == as_json(pool_scan) == as_json(dask_scan)
    print(f"JSON identical in this process, on the pool and on the cluster: {same}")

    print(f"(load average now {os.getloadavg()[0]:.1f} on {usable_cores()} cores: wall-clock speed-ups "
          "need idle cores)")
    print("\noverhead per task:")
    print(f"  empty task round trip: pool {1000 * empty_pool:.2f} ms, Dask {1000 * empty_dask:.2f} ms "
          f"(a task of this league is ~{1000 * serial / tasks:.0f} ms of work)")
    for name, wall in (("pool", pool), ("Dask", dask)):
        extra = (workers * wall - serial) / tasks
        print(f"  in the scan, {name}: {1000 * extra:+.1f} ms of worker wall time per task over this "
              f"process (efficiency {serial / (workers * wall):.0%})")
    print("  CPU time of one player's test (median; the test's thread / its whole process):")
    for name, (thread, process) in (("this process", cpu_here), ("pool workers", cpu_pool),
                                    ("Dask workers", cpu_dask), ("Dask, tuned", cpu_tuned)):
        print(f"    {name:<13} {1000 * thread:6.1f} ms / {1000 * process:6.1f} ms")
    print("    (Dask's nanny starts workers with MALLOC_TRIM_THRESHOLD_ set, which sends every large "
          "numpy temporary to mmap; 'tuned' adds MALLOC_MMAP_THRESHOLD_=32 MiB)")

    # 4. checkpoints ---------------------------------------------------------------------------
    print("\nkeeping each finished player in the store (--save, for --resume), players one after another:")
    saves = {}
    for draws, count in ((10_000, 60 if args.quick else 450), (100_000, 30 if args.quick else 90)):
        cumulative, nbytes = checkpoint_cost(players[0], draws, count)
        first = cumulative[9] / 10
        last = (cumulative[-1] - cumulative[-11]) / 10
        saves[draws] = extrapolate(cumulative, 450)
        print(f"  {draws:>7} permutations ({nbytes / 1e6:.2f} MB of null draws each): {count} players "
              f"{cumulative[-1]:.1f} s; first ten {1000 * first:.0f} ms each, last ten {1000 * last:.0f} ms "
              f"each; 450 players ~{fmt_duration(saves[draws])} (fitted a*n + b*n^2)")
    print("  (the store rewrites its results table at every automatic checkpoint, so the cost per player "
          "grows with what is already kept)")

    # 5. worked estimate -----------------------------------------------------------------------------
    big = dict(max_k=3, permutations=100_000, alternative="hot", seed=1, batch=4096, confidence_level=0.95,
               resamples=RESAMPLES)
    one = min(players, key=lambda p: abs(p.attempts - 1000))
    start = time.process_time()
    _scan_player(one, big)
    per_player = time.process_time() - start
    seasons, league_players = 20, 450
    units = seasons * league_players
    cpu = units * per_player
    null_bytes = 100_000 * 3 * 8
    print(f"\nworked estimate: {league_players} players x {seasons} seasons x ~1,000 attempts, "
          f"100,000 permutations")
    print(f"  measured: one player of {one.attempts} attempts, 100,000 permutations + {RESAMPLES} "
          f"resamples: {per_player:.2f} CPU s")
    print(f"  work: {units:,} player-seasons x {per_player:.2f} s = {cpu / 3600:.2f} CPU-hours "
          f"(cost grows with attempts x permutations: twenty scans of one season, or one scan of "
          f"{league_players} players x 20,000 attempts, is the same work)")
    network = units * null_bytes / 110e6
    dask_factor = cpu_tuned[1] / cpu_here[1]
    print(f"  Dask workers used {cpu_dask[1] / cpu_here[1]:.1f}x this process's CPU per player as started, "
          f"{dask_factor:.1f}x with MALLOC_MMAP_THRESHOLD_ set (measured above); results coming back: "
          f"{units:,} x {null_bytes / 1e6:.1f} MB of null draws = {units * null_bytes / 1e9:.1f} GB, "
          f"{fmt_duration(network)} over 1 Gbit/s")
    print("  N workers, one core each: compute = work x Dask factor / N + one round trip per task; "
          "the wall time is at least the transfer")
    for n in (2, 16, 64):
        compute = units * (per_player * dask_factor + empty_dask) / n
        bound = "transfer" if network > compute else "compute"
        print(f"    N = {n:>2}: compute {fmt_duration(compute):>8}, wall ~{fmt_duration(max(compute, network)):>8} "
              f"({bound}-bound; {units / n:,.0f} player-seasons per worker)")
    writes = seasons * saves[100_000]
    print(f"  with --save this process also keeps every player for --resume: ~{fmt_duration(saves[100_000])} "
          f"per season of {league_players} players (fitted above), {fmt_duration(writes)} for twenty, "
          "while the workers run: beyond a few workers the store's writes set the pace")
    print(f"  memory in this process: each tested player's null draws for the pooled test, "
          f"{league_players} x {null_bytes / 1e6:.1f} MB = {league_players * null_bytes / 1e9:.2f} GB per "
          f"scan of {league_players} players (scan season by season, not {units:,} player-seasons at once); "
          "each task holds one player's arrays")


if __name__ == "__main__":
    main()
