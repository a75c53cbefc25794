"""``analyse``: is each player streakier than chance? (within-game permutation tests)."""

from __future__ import annotations

import argparse
import sys

from streakwise.analysis import league_scan, player_sequences
from streakwise.ingest.errors import InputError
from streakwise.ingest.load import load_file
from streakwise.ingest.profiles import load_profile
from streakwise.ingest.record import FIELD_GOAL
from streakwise.ingest.store import Store, resolve_store_path

from .formatting import to_json
from .options import add_json_option, add_store_option

__all__ = ["register", "scan_settings"]

RESULT_KIND = "league_scan"


def register(commands: argparse._SubParsersAction) -> None:
    parser = commands.add_parser(
        "analyse",
        help="test players for streakiness against within-game shuffles",
        description="Compare each player's hit rates after streaks with what the same makes shuffled inside "
        "each game give (bias-corrected), with runs and longest-run tests, q-values across players "
        "and a pooled league test.",
    )
    parser.add_argument("--input", metavar="FILE", help="analyse this file (canonical layout, or with --profile) instead of the store")
    parser.add_argument("--profile", metavar="FILE", help="mapping profile for --input")
    parser.add_argument("--player", action="append", metavar="ID", help="only this player (repeat for more)")
    parser.add_argument("--season", action="append", metavar="SEASON", help="only this season (repeatable)")
    parser.add_argument("--team", action="append", metavar="TEAM", help="only this team (repeatable)")
    parser.add_argument("--attempt-type", metavar="TYPE", help="attempt type to analyse (default field_goal where present, else all)")
    parser.add_argument("--max-k", type=int, default=3, metavar="K", help="longest streak length k for rates after k makes/misses (1-8, default 3)")
    parser.add_argument("--permutations", type=int, default=10_000, metavar="N", help="within-game permutations per player (default 10,000)")
    parser.add_argument("--seed", type=int, metavar="N", help="seed for every random result (default: a fresh one, printed)")
    parser.add_argument("--min-attempts", type=int, default=100, metavar="N", help="test players with at least N attempts (default 100)")
    parser.add_argument("--alternative", choices=("hot", "cold", "two-sided"), default="hot", help="direction of the test (default hot)")
    parser.add_argument("--workers", type=int, default=1, metavar="N", help="worker processes (default 1; results do not depend on it)")
    parser.add_argument("--save", action="store_true", help="save the scan in the store (keyed by data version, settings and seed)")
    add_store_option(parser)
    add_json_option(parser)
    parser.set_defaults(run=run_analyse)


def scan_settings(args: argparse.Namespace, attempt_type: str | None, seed: int) -> dict:
    """Everything that decides a scan's result (the key of a saved scan)."""
    return {
        "players": sorted(args.player) if args.player else None,
        "seasons": sorted(args.season) if args.season else None,
        "teams": sorted(args.team) if args.team else None,
        "attempt_type": attempt_type,
        "max_k": args.max_k,
        "permutations": args.permutations,
        "seed": seed,
        "min_attempts": args.min_attempts,
        "alternative": args.alternative,
    }


def _check_args(args: argparse.Namespace) -> None:
    if not 1 <= args.max_k <= 8:
        raise InputError(f"--max-k must be between 1 and 8 (got {args.max_k})", path="--max-k")
    if args.permutations < 1:
        raise InputError(f"--permutations must be at least 1 (got {args.permutations})", path="--permutations")
    if args.min_attempts < 1:
        raise InputError(f"--min-attempts must be at least 1 (got {args.min_attempts})", path="--min-attempts")
    if args.workers < 1:
        raise InputError(f"--workers must be at least 1 (got {args.workers})", path="--workers")
    if args.seed is not None and args.seed < 0:
        raise InputError(f"--seed must be a non-negative whole number (got {args.seed})", path="--seed")
    if args.input and args.save:
        raise InputError("--save keeps a scan of the store; it cannot be used with --input", path="--save")
    if args.profile and not args.input:
        raise InputError("--profile goes with --input", path="--profile")


def _filter(frame, column: str, values):
    if not values:
        return frame
    if column not in frame.columns or frame[column].isna().all():
        raise InputError(f"cannot filter by {column}: the data has no {column} values", path=f"--{column}")
    return frame[frame[column].isin(values)]


def _attempts(args: argparse.Namespace, store: Store | None):
    if store is None:
        loaded = load_file(args.input, load_profile(args.profile) if args.profile else None)
        frame = loaded.attempts
        frame = _filter(frame, "player", args.player)
        frame = _filter(frame, "season", args.season)
        frame = _filter(frame, "team", args.team)
    else:
        frame = store.attempts(players=args.player, seasons=args.season, teams=args.team)
    attempt_type = args.attempt_type
    if attempt_type is None:
        present = set(frame["attempt_type"].dropna().unique())
        attempt_type = FIELD_GOAL if FIELD_GOAL in present else None
    if attempt_type is not None:
        frame = frame[frame["attempt_type"] == attempt_type]
    if frame.empty:
        what = f" of type {attempt_type}" if attempt_type else ""
        raise InputError(f"no attempts{what} match the filters", path=args.input or "--store")
    return frame, attempt_type


def run_analyse(args: argparse.Namespace) -> int:
    _check_args(args)
    import numpy as np

    seed = args.seed if args.seed is not None else int(np.random.SeedSequence().generate_state(1)[0])
    store = None if args.input else Store(resolve_store_path(args.store), read_only=not args.save)
    try:
        frame, attempt_type = _attempts(args, store)
        sequences = player_sequences(frame)
        missing = sorted(set(args.player or ()) - set(sequences))
        if missing:
            raise InputError(f"no attempts for player {', '.join(map(repr, missing))}", path="--player")
        settings = scan_settings(args, attempt_type, seed)
        bar = _progress_bar(len(sequences))
        try:
            result = league_scan(
                [sequences[name] for name in sorted(sequences)],
                min_attempts=args.min_attempts,
                max_k=args.max_k,
                permutations=args.permutations,
                alternative=args.alternative,
                rng=seed,
                workers=args.workers,
                progress=None if bar is None else (lambda done: bar.update(done - bar.n)),
            )
        finally:
            if bar is not None:
                bar.close()
        payload = result.to_dict()
        payload["attempt_type"] = attempt_type
        if store is not None and args.save:
            key = store.save_result(RESULT_KIND, settings, payload)
            print(f"saved the scan in {store.path} (key {key[:12]})", file=sys.stderr)
    finally:
        if store is not None:
            store.close()
    if args.json:
        print(to_json(payload))
    else:
        print(f"attempt type: {attempt_type or 'all'}")
        print(result.summary())
    return 0


def _progress_bar(total: int):
    if total < 2 or not sys.stderr.isatty():
        return None
    from tqdm import tqdm

    return tqdm(total=total, unit="player", file=sys.stderr, leave=False, desc="analysing")
