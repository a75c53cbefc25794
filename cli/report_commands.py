"""``report``: write a self-contained HTML briefing on one player or on the league.

The player briefing runs the player's within-game permutation test; the league
briefing reads a scan saved in the store with the same settings and seed
(``streakwise analyse --save``) and runs one when none matches. The store is
only read: nothing is saved.
"""

from __future__ import annotations

import argparse
import os
import pathlib
import sys

from streakwise.ingest.errors import InputError
from streakwise.ingest.record import FIELD_GOAL
from streakwise.ingest.store import Store, resolve_store_path

from . import analyse_commands
from .analyse_commands import RESULT_KIND, scan_settings
from .formatting import format_count, to_json
from .options import add_json_option, add_store_option

__all__ = ["check_output_path", "register"]


def register(commands: argparse._SubParsersAction) -> None:
    parser = commands.add_parser(
        "report",
        help="write an HTML briefing on a player or the league",
        description="Write a self-contained HTML briefing (figures, numbers, a reading in plain words, "
        "cautions and where the numbers came from) that opens without a network and prints. "
        "--player runs that player's within-game permutation test; --league reads the scan saved "
        "in the store with the same settings and seed (streakwise analyse --save), or runs one.",
    )
    which = parser.add_mutually_exclusive_group(required=True)
    which.add_argument("--player", metavar="ID", help="a briefing on this player")
    which.add_argument("--league", action="store_true", help="a briefing on every player of the league")
    parser.add_argument("--output", "-o", required=True, metavar="FILE.html", help="the HTML file to write (its folder must exist)")
    parser.add_argument("--season", action="append", metavar="SEASON", help="only this season (repeatable)")
    parser.add_argument("--team", action="append", metavar="TEAM", help="only this team (repeatable)")
    parser.add_argument("--attempt-type", metavar="TYPE", help="attempt type (default field_goal where present, else all)")
    parser.add_argument("--max-k", type=int, default=3, metavar="K", help="longest streak length k (1-8, default 3)")
    parser.add_argument("--permutations", type=int, default=10_000, metavar="N", help="within-game permutations per player (default 10,000)")
    parser.add_argument("--seed", type=int, metavar="N", help="seed of the tests; a league scan saved with this seed and the same settings is reused "
                        "(default: the seed of the latest saved scan with these settings, else a fresh one, printed)")
    parser.add_argument("--min-attempts", type=int, default=100, metavar="N", help="league: test players with at least N attempts (default 100)")
    parser.add_argument("--workers", type=int, default=1, metavar="N", help="league: worker processes when a scan has to run (default 1)")
    parser.add_argument("--title", metavar="TEXT", help="heading of the briefing (default: the player's name, or 'League streak briefing')")
    add_store_option(parser)
    add_json_option(parser)
    parser.set_defaults(run=run_report)


def check_output_path(output: str) -> pathlib.Path:
    """The output file as a path: it must end in ``.html`` and its folder must exist."""
    path = pathlib.Path(output)
    if path.suffix.lower() != ".html":
        raise InputError(f"the briefing is an HTML file: --output must end in .html (got {output!r})", path="--output")
    if path.is_dir():
        raise InputError(f"--output {output!r} is a folder; give a file name ending in .html", path="--output")
    folder = path.parent if str(path.parent) else pathlib.Path(".")
    if not folder.is_dir():
        raise InputError(f"the folder {str(folder)!r} of --output does not exist; create it first", path="--output")
    return path


def _check_args(args: argparse.Namespace) -> pathlib.Path:
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
    if args.player is not None and not args.player.strip():
        raise InputError("--player needs a player id", path="--player")
    return check_output_path(args.output)


def _settings_args(args: argparse.Namespace) -> argparse.Namespace:
    """The options that key a saved league scan, as ``analyse`` would have them."""
    return argparse.Namespace(player=None, season=args.season, team=args.team, max_k=args.max_k,
                              permutations=args.permutations, min_attempts=args.min_attempts,
                              alternative="hot")


def _attempt_type(args: argparse.Namespace, store: Store) -> str | None:
    """``--attempt-type``, else field goals when the chosen seasons and teams have any, else all."""
    if args.attempt_type is not None:
        return args.attempt_type
    present = store.players(season=args.season, team=args.team, attempt_type=FIELD_GOAL)
    return FIELD_GOAL if not present.empty else None


def _filters_text(args: argparse.Namespace, attempt_type: str | None) -> str:
    parts = [f"of type {attempt_type}" if attempt_type else ""]
    if args.season:
        parts.append(f"in season {', '.join(args.season)}")
    if args.team:
        parts.append(f"for team {', '.join(args.team)}")
    return " ".join(p for p in parts if p)


def _write(path: pathlib.Path, text: str) -> int:
    """Write ``text`` to ``path`` through a temporary file, so a reader never sees half a file."""
    data = text.encode("utf-8")
    temporary = path.with_name(f".{path.name}.{os.getpid()}.tmp")
    try:
        temporary.write_bytes(data)
        os.replace(temporary, path)
    except OSError as exc:
        temporary.unlink(missing_ok=True)
        raise InputError(f"cannot write {str(path)!r}: {exc.strerror or exc}", path="--output") from exc
    return len(data)


def _seed(args: argparse.Namespace, store: Store, attempt_type: str | None) -> tuple[int, str]:
    """``--seed``; else the seed of the latest league scan saved with these settings; else a fresh one."""
    if args.seed is not None:
        return args.seed, "given"
    # `analyse --save` records the latest scan's seed under RUN_KIND (when it has one)
    run_kind = getattr(analyse_commands, "RUN_KIND", None)
    if run_kind is not None:
        latest = store.load_result(run_kind, scan_settings(_settings_args(args), attempt_type, None))
        if latest is not None and isinstance(latest.get("seed"), int):
            return int(latest["seed"]), "saved"
    import numpy as np

    return int(np.random.SeedSequence().generate_state(1)[0]), "fresh"


def run_report(args: argparse.Namespace) -> int:
    output = _check_args(args)
    if args.league:
        summary = _league_report(args, output)
    else:
        summary = _player_report(args, output)
    seed = summary["seed"]
    if summary["seed_from"] == "fresh":
        print(f"seed {seed} (give --seed {seed} to repeat this briefing)", file=sys.stderr)
    if args.json:
        print(to_json(summary))
    else:
        print(f"wrote {summary['output']} ({format_count(summary['bytes'] // 1024)} KB): {summary['what']}")
    return 0


def _player_report(args: argparse.Namespace, output: pathlib.Path) -> dict:
    from streakwise.dashboard.briefing import player_briefing_html

    with Store(resolve_store_path(args.store), read_only=True) as store:
        attempt_type = _attempt_type(args, store)
        known = store.players(attempt_type=None)
        if args.player not in set(known["player"].astype(str)):
            raise InputError(f"unknown player {args.player!r}: no attempts by this player in the store", path="--player")
        frame = store.attempts(players=[args.player], seasons=args.season, teams=args.team,
                               attempt_types=[attempt_type] if attempt_type else None)
        if frame.empty:
            raise InputError(f"player {args.player!r} has no attempts {_filters_text(args, attempt_type)}".rstrip(),
                             path="--player")
        data_version = store.data_version()
        seed, seed_from = _seed(args, store, attempt_type)
        scan = store.load_result(RESULT_KIND, scan_settings(_settings_args(args), attempt_type, seed))
    if scan is not None and not any(str(p.get("player")) == args.player for p in scan.get("players", ())):
        scan = None
    html = player_briefing_html(frame, args.player, attempt_type=attempt_type, permutations=args.permutations,
                                seed=seed, max_k=args.max_k, title=args.title, scan=scan,
                                data_version=data_version)
    size = _write(output, html)
    return {
        "output": str(output), "bytes": size, "kind": "player", "player": args.player,
        "attempts": len(frame), "attempt_type": attempt_type, "seed": seed, "seed_from": seed_from,
        "permutations": args.permutations, "data_version": data_version,
        "q_values_from_saved_scan": scan is not None,
        "what": f"briefing on {args.player} ({format_count(len(frame))} attempts, seed {seed})"
                + ("; q-values from the saved league scan" if scan is not None else ""),
    }


def _league_report(args: argparse.Namespace, output: pathlib.Path) -> dict:
    from streakwise.dashboard.briefing import league_briefing_html

    with Store(resolve_store_path(args.store), read_only=True) as store:
        attempt_type = _attempt_type(args, store)
        seed, seed_from = _seed(args, store, attempt_type)
        settings = scan_settings(_settings_args(args), attempt_type, seed)
        scan = store.load_result(RESULT_KIND, settings)
        players_table = store.players(season=args.season, team=args.team, attempt_type=attempt_type)
        data_version = store.data_version()
        frame = None
        if scan is None:
            frame = store.attempts(seasons=args.season, teams=args.team,
                                   attempt_types=[attempt_type] if attempt_type else None)
    reused = scan is not None
    if reused:
        print("using the league scan saved in the store with these settings and seed", file=sys.stderr)
    else:
        if frame.empty:
            raise InputError(f"no attempts {_filters_text(args, attempt_type)} in the store".replace("  ", " "),
                             path="--store")
        why = "none saved with these settings" + (" and seed" if args.seed is not None else "")
        print(f"running a league scan ({why}; `streakwise analyse --save` keeps one for next time)",
              file=sys.stderr)
        scan = _run_scan(frame, args, seed)
        scan["attempt_type"] = attempt_type
    html = league_briefing_html(scan, players_table, title=args.title, data_version=data_version,
                                settings=settings)
    size = _write(output, html)
    return {
        "output": str(output), "bytes": size, "kind": "league", "players": len(scan["players"]),
        "attempt_type": attempt_type, "seed": seed, "seed_from": seed_from, "permutations": args.permutations,
        "data_version": data_version, "saved_scan_used": reused,
        "what": f"league briefing on {format_count(len(scan['players']))} players (seed {seed}, "
                + ("saved scan" if reused else "fresh scan") + ")",
    }


def _run_scan(frame, args: argparse.Namespace, seed: int) -> dict:
    from streakwise.analysis import league_scan, player_sequences

    sequences = player_sequences(frame)
    bar = None
    if len(sequences) > 1 and sys.stderr.isatty():
        from tqdm import tqdm

        bar = tqdm(total=len(sequences), unit="player", file=sys.stderr, leave=False, desc="analysing")
    try:
        result = league_scan(
            [sequences[name] for name in sorted(sequences)], min_attempts=args.min_attempts,
            max_k=args.max_k, permutations=args.permutations, alternative="hot", rng=seed,
            workers=args.workers, progress=None if bar is None else (lambda done: bar.update(done - bar.n)))
    finally:
        if bar is not None:
            bar.close()
    return result.to_dict()
