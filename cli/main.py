"""Entry point: parse the command line, run one command, map errors to exit codes.

Exit codes: 0 ok, 2 bad input (a file, an option, a store in use), 1 an
internal error (a bug: please report it with the traceback printed).
"""

from __future__ import annotations

import argparse
import sys
import traceback
from collections.abc import Sequence

from streakwise.analysis.executors import WorkerLostError
from streakwise.ingest.errors import InputError, StoreInUseError

from . import analyse_commands, data_commands, demo_commands, odds_commands, plan_commands, report_commands, serve_commands, states_commands

__all__ = ["EXIT_BAD_INPUT", "EXIT_INTERNAL", "EXIT_OK", "build_parser", "main"]

EXIT_OK = 0
EXIT_INTERNAL = 1
EXIT_BAD_INPUT = 2

_COMMAND_GROUPS = (data_commands, analyse_commands, demo_commands, odds_commands, plan_commands, report_commands, serve_commands, states_commands)


class _Parser(argparse.ArgumentParser):
    """argparse exits 2 on bad options already; keep its message short."""


def build_parser() -> argparse.ArgumentParser:
    parser = _Parser(
        prog="streakwise",
        description="Tell real shooting streaks from the runs chance alone produces.",
    )
    parser.add_argument("--version", action="version", version=f"%(prog)s {_version()}")
    commands = parser.add_subparsers(dest="command", metavar="COMMAND")
    commands.required = True
    for group in _COMMAND_GROUPS:
        group.register(commands)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    try:
        return int(args.run(args) or EXIT_OK)
    except (InputError, StoreInUseError) as exc:
        print(f"error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except WorkerLostError as exc:
        print(f"error: workers kept dying, so the scan stopped: {exc}", file=sys.stderr)
        print("With --save, the players finished so far are kept: run the same command with --resume.", file=sys.stderr)
        return EXIT_INTERNAL
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return EXIT_OK
    except Exception:  # a bug: say so, with the traceback
        traceback.print_exc()
        print("internal error: this is a bug in streakwise; please report it with the lines above", file=sys.stderr)
        return EXIT_INTERNAL


def _version() -> str:
    from importlib.metadata import PackageNotFoundError, version

    try:
        return version("streakwise")
    except PackageNotFoundError:
        return "unknown"
