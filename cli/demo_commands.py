"""``demo``: build the invented demo league, ingest it, and say what to run next."""

from __future__ import annotations

import argparse
import shlex

from streakwise.demo_league import DEFAULT_SEED, DemoSummary, build_demo

from .formatting import format_count, render_table, to_json
from .options import add_json_option

__all__ = ["format_demo_summary", "next_commands", "register", "summary_record"]

_DEFAULT_OUT = "demo"


def register(commands: argparse._SubParsersAction) -> None:
    demo = commands.add_parser(
        "demo",
        help="build the invented demo league (files with known truth) and its store",
        description="Write an invented league with known truth as an event log (CSV), an attempt table "
        "(Parquet) and drill sheets (Excel), ingest them through the shipped profiles into "
        "DIR/streakwise.duckdb (replacing an earlier demo store), and print the next commands. "
        "The same seed gives byte-identical files.",
    )
    demo.add_argument("--out", metavar="DIR", default=_DEFAULT_OUT, help=f"folder for the files and the store (default: ./{_DEFAULT_OUT})")
    demo.add_argument("--seed", metavar="N", type=int, default=DEFAULT_SEED, help=f"seed of the league (default: {DEFAULT_SEED})")
    add_json_option(demo)
    demo.set_defaults(run=run_demo)


def run_demo(args: argparse.Namespace) -> int:
    summary = build_demo(args.out, seed=args.seed)
    if args.json:
        print(to_json(summary_record(summary)))
    else:
        print(format_demo_summary(summary))
    return 0


def next_commands(summary: DemoSummary) -> list[str]:
    """The commands to run next on the demo store, ready to paste."""
    store = shlex.quote(str(summary.store_path))
    first_season = next(iter(summary.games))
    export = shlex.quote(str(summary.out_dir / "attempts.csv"))
    return [
        f"streakwise players --store {store}",
        f"streakwise players --store {store} --season {first_season} --attempt-type field_goal",
        f"streakwise export attempts --output {export} --store {store}",
    ]


def summary_record(summary: DemoSummary) -> dict:
    """The summary as stable, JSON-ready keys."""
    return {
        "league": summary.league,
        "invented": True,
        "seed": summary.seed,
        "out_dir": str(summary.out_dir),
        "store": str(summary.store_path),
        "truth": str(summary.truth_path),
        "teams": summary.teams,
        "players": summary.players,
        "games": dict(summary.games),
        "practice_players": summary.practice_players,
        "practice_rounds": summary.practice_rounds,
        "player_types": dict(summary.kind_counts),
        "sources": [
            {
                "path": str(source.path),
                "layout": source.layout,
                "profile": source.profile,
                "rows_read": source.rows_read,
                "rows_stored": source.rows_stored,
                "attempts": source.attempts,
                "rows_skipped": source.skipped,
                "rows_rejected": source.rejected,
            }
            for source in summary.sources
        ],
        "seconds": round(summary.seconds, 2),
        "next_commands": next_commands(summary),
    }


def format_demo_summary(summary: DemoSummary) -> str:
    """The readable summary of ``streakwise demo`` (pure: no I/O)."""
    seasons = ", ".join(f"{format_count(n)} in {season}" for season, n in summary.games.items())
    total_games = sum(summary.games.values())
    rows = [
        {
            "layout": source.layout,
            "file": str(source.path),
            "rows read": source.rows_read,
            "attempts": source.attempts,
            "skipped": source.skipped,
            "rejected": source.rejected,
        }
        for source in summary.sources
    ]
    table = render_table(
        rows,
        [("layout", "layout"), ("file", "file"), ("rows read", "rows read"), ("attempts", "attempts"),
         ("skipped", "skipped"), ("rejected", "rejected")],
    )
    lines = [
        f"Built the demo league {summary.league!r} (seed {summary.seed}). It is invented: "
        "its teams, players and games are made up.",
        f"  {summary.teams} teams, {format_count(summary.players)} players, {format_count(total_games)} games "
        f"({seasons}); a practice study of {summary.practice_players} players "
        f"({format_count(summary.practice_rounds)} rounds).",
        f"  The truth (every player's type and parameters) is in {summary.truth_path}; no analysis reads it.",
        "",
        *("  " + line for line in table.splitlines()),
        "",
        "  Skipped rows are the event log's other events (rebounds, fouls, substitutions, ...).",
        f"  Store: {summary.store_path} (built in {summary.seconds:.1f} s).",
        "",
        "Next:",
        *("  " + command for command in next_commands(summary)),
    ]
    return "\n".join(lines)
