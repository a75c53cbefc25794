"""Ingest speed and memory on a 1,000,000-row event log (printed figures, not a test).

Generates an event log (every event kind of every player interleaved, game
clock counting down), then measures, each in a fresh child process so peak
memory is its own:

* ``ingest``: what ``streakwise ingest`` does: read, validate, order, build
  the canonical record and store it in a fresh DuckDB file;
* ``floor``: the bare floor: pandas reads the same CSV and DuckDB inserts the
  frame, with no validation.

Targets (issue 2): >= 200,000 rows/s, <= 1 GB peak RSS, <= 3x the floor.

Usage: ``python benchmarks/ingest_benchmark.py [--rows N] [--keep DIR]``
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

PROFILE = """
name = "benchmark-events"
layout = "events"

[columns]
game = "game_ref"
index = "event_no"
period = "quarter"
clock = "clock"
player = "actor"
team = "side"
made = "result"
distance = "feet"

[events]
kind = "action"
attempts = { "jumper" = "field_goal", "layup" = "field_goal", "three" = { type = "field_goal", points = 3 }, "free throw" = "free_throw" }

[outcomes]
made = ["good"]
missed = ["no"]

[order]
by = "index"
period_seconds = 720
"""

KINDS = np.array(["jumper", "layup", "three", "free throw", "rebound", "foul", "substitution", "turnover", "timeout"])
KIND_WEIGHTS = np.array([0.16, 0.08, 0.10, 0.08, 0.22, 0.10, 0.12, 0.08, 0.06])


def generate(path: Path, rows: int, seed: int = 1) -> None:
    """Write an event log of ``rows`` rows (vectorised; ~250 events a game)."""
    rng = np.random.default_rng(seed)
    per_game = 250
    games = -(-rows // per_game)
    game_index = np.repeat(np.arange(games), per_game)[:rows]
    event_no = (np.arange(rows) - game_index * per_game) + 1
    fraction = (event_no - 1) / per_game
    quarter = (fraction * 4).astype(int) + 1
    seconds_left = np.floor(720 - (fraction * 4 - (quarter - 1)) * 720).astype(int)
    seconds_left = np.clip(seconds_left, 0, 720)
    kinds = rng.choice(len(KINDS), size=rows, p=KIND_WEIGHTS / KIND_WEIGHTS.sum())
    team = rng.integers(0, 2, size=rows)
    slot = rng.integers(0, 10, size=rows)
    home = game_index % 30
    away = (game_index * 7 + 11) % 30
    team_id = np.where(team == 0, home, away)
    player = team_id * 15 + slot
    attempt = kinds <= 3
    made = rng.random(rows) < np.where(kinds == 3, 0.76, 0.46)
    result = np.where(attempt, np.where(made, "good", "no"), "")
    feet = np.where(attempt & (kinds != 3), np.round(rng.uniform(1, 28, size=rows), 1).astype(str), "")
    feet = np.where(kinds == 3, "15", feet)
    clock = np.char.add(np.char.add((seconds_left // 60).astype(str), ":"), np.char.zfill((seconds_left % 60).astype(str), 2))
    columns = {
        "game_ref": np.char.add("B-", game_index.astype(str)),
        "event_no": event_no.astype(str),
        "quarter": quarter.astype(str),
        "clock": clock,
        "actor": np.char.add("pl", player.astype(str)),
        "side": np.char.add("club", team_id.astype(str)),
        "action": KINDS[kinds],
        "result": result,
        "feet": feet,
    }
    with open(path, "w", encoding="utf-8") as out:
        out.write(",".join(columns) + "\n")
        block = 200_000
        for start in range(0, rows, block):
            parts = [columns[c][start : start + block] for c in columns]
            lines = parts[0]
            for part in parts[1:]:
                lines = np.char.add(np.char.add(lines, ","), part)
            out.write("\n".join(lines.tolist()) + "\n")


def _peak_mb() -> float:
    """Peak resident memory of this process (VmHWM: reset by exec, unlike ru_maxrss)."""
    try:
        with open("/proc/self/status", encoding="ascii") as status:
            for line in status:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) / 1024.0
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


def stage_ingest(csv_path: str, profile_path: str, store_path: str) -> dict:
    from streakwise.ingest import Store, ingest_paths, load_profile

    start = time.perf_counter()
    profile = load_profile(profile_path)
    with Store(store_path) as store:
        outcome = ingest_paths(store, [csv_path], profile)[0]
    seconds = time.perf_counter() - start
    return {
        "seconds": seconds,
        "peak_mb": _peak_mb(),
        "rows_read": outcome.loaded.rows_read,
        "attempts": len(outcome.loaded.attempts),
        "skipped": outcome.loaded.rows_skipped,
        "rejected": outcome.loaded.rows_rejected,
    }


def stage_floor(csv_path: str, store_path: str) -> dict:
    import duckdb
    import pandas as pd

    start = time.perf_counter()
    frame = pd.read_csv(csv_path)
    con = duckdb.connect(store_path)
    con.register("frame", frame)
    con.execute("CREATE TABLE events AS SELECT * FROM frame")
    con.close()
    seconds = time.perf_counter() - start
    return {"seconds": seconds, "peak_mb": _peak_mb(), "rows_read": len(frame)}


def _child(stage: str, *args: str) -> dict:
    out = subprocess.run([sys.executable, __file__, "--stage", stage, *args], check=True, capture_output=True, text=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--keep", help="folder to keep the generated files in")
    parser.add_argument("--repeat", type=int, default=2, help="runs of each stage (best is reported)")
    parser.add_argument("--stage", help=argparse.SUPPRESS)
    parser.add_argument("args", nargs="*", help=argparse.SUPPRESS)
    ns = parser.parse_args()
    if ns.stage == "ingest":
        print(json.dumps(stage_ingest(*ns.args)))
        return
    if ns.stage == "floor":
        print(json.dumps(stage_floor(*ns.args)))
        return

    folder = Path(ns.keep) if ns.keep else Path(tempfile.mkdtemp(prefix="streakwise-bench-"))
    folder.mkdir(parents=True, exist_ok=True)
    csv_path = folder / "events.csv"
    profile_path = folder / "events.toml"
    profile_path.write_text(PROFILE, encoding="utf-8")
    start = time.perf_counter()
    generate(csv_path, ns.rows)
    print(f"generated {ns.rows:,} event rows ({csv_path.stat().st_size / 1e6:.0f} MB) in {time.perf_counter() - start:.1f} s")

    ingest_runs, floor_runs = [], []
    for run in range(ns.repeat):
        for name, runs, args in (
            ("floor", floor_runs, (str(csv_path), str(folder / f"floor{run}.duckdb"))),
            ("ingest", ingest_runs, (str(csv_path), str(profile_path), str(folder / f"store{run}.duckdb"))),
        ):
            for suffix in ("", ".wal"):
                Path(args[-1] + suffix).unlink(missing_ok=True)
            runs.append(_child(name, *args))
    ingest = min(ingest_runs, key=lambda r: r["seconds"])
    floor = min(floor_runs, key=lambda r: r["seconds"])
    rate = ingest["rows_read"] / ingest["seconds"]
    ratio = ingest["seconds"] / floor["seconds"]
    peak = max(r["peak_mb"] for r in ingest_runs)
    print(f"rows read: {ingest['rows_read']:,} = {ingest['attempts']:,} attempts + {ingest['skipped']:,} skipped + {ingest['rejected']:,} rejected")
    print(f"ingest (read, validate, order, store): {ingest['seconds']:.2f} s  -> {rate:,.0f} rows/s   [target >= 200,000]")
    print(f"peak RSS of the ingest process: {peak:,.0f} MB   [target <= 1,024]")
    print(f"floor (pandas.read_csv + DuckDB insert, no validation): {floor['seconds']:.2f} s, peak {floor['peak_mb']:,.0f} MB")
    print(f"ingest / floor: {ratio:.2f}x   [target <= 3x]")
    print(f"runs: ingest {[round(r['seconds'], 2) for r in ingest_runs]}, floor {[round(r['seconds'], 2) for r in floor_runs]}")
    if not ns.keep:
        import shutil

        shutil.rmtree(folder, ignore_errors=True)


if __name__ == "__main__":
    os.environ.setdefault("PYTHONHASHSEED", "0")
    main()
