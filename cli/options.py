"""Options shared by several commands."""

from __future__ import annotations

import argparse

__all__ = ["add_json_option", "add_store_option"]


def add_store_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument(
        "--store",
        metavar="PATH",
        default=None,
        help="the store file (default: $STREAKWISE_STORE, else ./streakwise.duckdb)",
    )


def add_json_option(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="print machine-readable JSON instead of a table")
