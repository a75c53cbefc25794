"""``ingest``, ``players`` and ``export``: get logs into the store and look at them."""

from __future__ import annotations

import argparse
import sys

import pandas as pd

from streakwise.ingest.errors import InputError
from streakwise.ingest.load import LoadedFile
from streakwise.ingest.pipeline import check_files, store_files
from streakwise.ingest.profiles import load_profile
from streakwise.ingest.store import Store, resolve_store_path

from .formatting import format_ingest_line, render_table, to_json
from .options import add_json_option, add_store_option

__all__ = ["register"]

#: Files with more rows than this get a progress bar.
PROGRESS_ROWS = 100_000
_BYTES_PER_ROW_GUESS = 50


def register(commands: argparse._SubParsersAction) -> None:
    ingest = commands.add_parser(
        "ingest",
        help="read shot logs into the store",
        description="Read shot logs (CSV, Parquet, JSON lines, Excel) into the store. "
        "A file with any bad row is refused whole unless --keep-going.",
    )
    ingest.add_argument("paths", nargs="+", metavar="PATH", help="files to read")
    ingest.add_argument("--profile", metavar="FILE", help="mapping profile (a TOML file or a shipped profile name); none for the canonical layout player, session, seq, made")
    ingest.add_argument("--keep-going", action="store_true", help="store the good rows of a file with bad rows, recording the bad ones with reasons")
    ingest.add_argument("--replace", action="store_true", help="replace a file ingested before (same name or same content)")
    ingest.add_argument(
        "--sessions",
        metavar="SPLIT",
        help="what a session is: game (default), period, gap:SECONDS (a pause in game time starts a new one), or season",
    )
    ingest.add_argument("--check", action="store_true", help="check the files and report, but store nothing")
    add_store_option(ingest)
    add_json_option(ingest)
    ingest.set_defaults(run=run_ingest)

    players = commands.add_parser("players", help="list players in the store with their attempts and make rate")
    players.add_argument("--season", help="only this season")
    players.add_argument("--team", help="only this team")
    players.add_argument("--attempt-type", help="only this attempt type (e.g. field_goal)")
    add_store_option(players)
    add_json_option(players)
    players.set_defaults(run=run_players)

    export = commands.add_parser("export", help="write a store table to CSV or Parquet")
    export.add_argument("table", metavar="TABLE", help="attempts, sources, rejects or results")
    export.add_argument("--output", "-o", required=True, metavar="PATH", help="output file; .csv or .parquet")
    add_store_option(export)
    export.set_defaults(run=run_export)


def _parse_sessions(value: str | None) -> tuple[str | None, float | None]:
    if value is None:
        return None, None
    if value.startswith("gap:") or value.startswith("gap="):
        try:
            seconds = float(value[4:])
        except ValueError:
            seconds = -1.0
        if not seconds > 0:
            raise InputError(f"--sessions gap needs a positive number of seconds, e.g. gap:120 (got {value!r})", path="--sessions")
        return "gap", seconds
    if value not in ("game", "period", "season"):
        raise InputError(f"--sessions must be game, period, gap:SECONDS or season (got {value!r})", path="--sessions")
    return value, None


class _StageProgress:
    """A progress bar over each big file's stages (read, check, order, finish, store).

    Shown on stderr for files of more than about ``PROGRESS_ROWS`` rows (judged
    from the file size); small files print nothing extra.
    """

    STAGES = ("read", "check", "order", "finish", "store")

    def __init__(self, paths) -> None:
        import os

        self.big = set()
        for path in paths:
            try:
                if os.path.getsize(path) >= PROGRESS_ROWS * _BYTES_PER_ROW_GUESS:
                    self.big.add(str(path))
            except OSError:
                pass
        self.bar = None
        if self.big:
            from tqdm import tqdm

            self.bar = tqdm(total=len(self.big) * len(self.STAGES), unit="step", file=sys.stderr, leave=False)
        self.done: dict[str, int] = {}

    def stage(self, path: str, name: str) -> None:
        if self.bar is None or path not in self.big:
            return
        import os

        step = self.STAGES.index(name) if name in self.STAGES else 0
        previous = self.done.get(path, 0)
        if step > previous:
            self.bar.update(step - previous)
            self.done[path] = step
        self.bar.set_description_str(f"{os.path.basename(path)}: {name}")

    def stored(self, outcome) -> None:
        self.stage(str(outcome.loaded.path), "store")

    def close(self) -> None:
        if self.bar is not None:
            self.bar.update(self.bar.total - self.bar.n)
            self.bar.close()


def _summary(loaded: LoadedFile, status: str) -> dict:
    attempts = loaded.attempts
    rejects = loaded.rejects
    return {
        "path": loaded.path,
        "status": status,
        "layout": loaded.layout,
        "profile": loaded.profile.name,
        "rows_read": loaded.rows_read,
        "rows_stored": loaded.rows_stored,
        "rows_skipped": loaded.rows_skipped,
        "rows_rejected": loaded.rows_rejected,
        "attempts": int(len(attempts)),
        "players": int(attempts["player"].nunique()),
        "sessions": int(attempts[["player", "session"]].drop_duplicates().shape[0]),
        "skipped_kinds": loaded.skipped_kinds,
        "rejects": [
            {"row": None if pd.isna(r) else int(r), "column": None if pd.isna(c) else str(c), "message": str(m)}
            for r, c, m in zip(rejects["row"], rejects["column"], rejects["message"], strict=True)
        ][:1000],
        "notes": list(loaded.notes),
    }


def run_ingest(args: argparse.Namespace) -> int:
    split, gap = _parse_sessions(args.sessions)
    profile = load_profile(args.profile) if args.profile else None
    progress = _StageProgress(args.paths)
    try:
        loaded = check_files(
            args.paths, profile, sessions=split, gap_seconds=gap, keep_going=args.keep_going, on_stage=progress.stage
        )
    except InputError as exc:
        progress.close()
        files = sorted({p.path for p in exc.problems})
        print(f"error: {exc}", file=sys.stderr)
        print(
            f"refused {len(files)} of {len(args.paths)} file{'s' if len(args.paths) != 1 else ''} "
            f"({len(exc.problems)} problem{'s' if len(exc.problems) != 1 else ''}); nothing was stored. "
            "Fix the rows above, or use --keep-going to store the good rows and record the bad ones.",
            file=sys.stderr,
        )
        return 2
    if args.check:
        progress.close()
        results = [_summary(item, "checked") for item in loaded]
    else:
        stored = []
        try:
            with Store(resolve_store_path(args.store)) as store:
                def on_stored(outcome) -> None:
                    stored.append(outcome)
                    progress.stored(outcome)

                store_files(store, loaded, replace=args.replace, on_stored=on_stored)
        except InputError as exc:
            # A file clashing with the store is found while storing: say which files went in before it.
            _print_results([_summary(o.loaded, o.stored.status) for o in stored], args.json)
            print(f"error: {exc}", file=sys.stderr)
            print(
                f"stored {len(stored)} of {len(loaded)} file{'s' if len(loaded) != 1 else ''} before this error; "
                f"{exc.path} and any files after it were not stored.",
                file=sys.stderr,
            )
            return 2
        finally:
            progress.close()
        results = [_summary(o.loaded, o.stored.status) for o in stored]
    _print_results(results, args.json)
    return 0


def _print_results(results: list[dict], as_json: bool) -> None:
    if as_json:
        print(to_json(results))
    else:
        for result in results:
            print(format_ingest_line(result))
            for note in result["notes"]:
                print(f"  note: {note}")
            if result["rows_rejected"]:
                print("  rejected rows (all of them: `streakwise export rejects --output rejects.csv`):")
                for reject in result["rejects"][:10]:
                    place = ":".join(str(p) for p in (result["path"], reject["row"], reject["column"]) if p is not None)
                    print(f"    {place}: {reject['message']}")


def run_players(args: argparse.Namespace) -> int:
    path = resolve_store_path(args.store)
    with Store(path, read_only=True) as store:
        table = store.players(season=args.season, team=args.team, attempt_type=args.attempt_type)
    rows = [
        {
            "player": str(r.player),
            "player_name": None if pd.isna(r.player_name) else str(r.player_name),
            "team": None if pd.isna(r.team) else str(r.team),
            "attempts": int(r.attempts),
            "makes": int(r.makes),
            "sessions": int(r.sessions),
            "make_rate": float(r.make_rate),
        }
        for r in table.itertuples(index=False)
    ]
    if args.json:
        print(to_json(rows))
    else:
        print(
            render_table(
                rows,
                [("player", "player"), ("player_name", "name"), ("team", "team"), ("attempts", "attempts"), ("makes", "makes"), ("sessions", "sessions"), ("make_rate", "make rate")],
                empty="(no players match)",
            )
        )
    return 0


def run_export(args: argparse.Namespace) -> int:
    path = resolve_store_path(args.store)
    with Store(path, read_only=True) as store:
        written = store.export(args.table, args.output)
    print(f"wrote {written:,} rows of {args.table} to {args.output}")
    return 0
