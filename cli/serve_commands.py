"""``serve``: open the dashboard on a store, in the browser."""

from __future__ import annotations

import argparse

from streakwise.ingest.errors import InputError
from streakwise.ingest.store import resolve_store_path

from .options import add_store_option

__all__ = ["register", "run_serve"]


def register(commands: argparse._SubParsersAction) -> None:
    parser = commands.add_parser(
        "serve",
        help="open the dashboard on a store (prints the address)",
        description="Serve the dashboard on a production WSGI server (waitress), on this machine only unless "
        "--host says otherwise. The server holds the store while it runs.",
    )
    add_store_option(parser)
    parser.add_argument("--host", default="127.0.0.1", help="address to listen on (default 127.0.0.1: this machine only)")
    parser.add_argument("--port", type=int, default=8050, help="port (default 8050; 0 picks a free one)")
    parser.add_argument("--debug", action="store_true", help="Dash's development server with debug pages (never on a shared machine)")
    parser.add_argument("--permutations", type=int, default=2000, metavar="N",
                        help="within-game permutations per player (default 2,000)")
    parser.add_argument("--seed", type=int, default=None, metavar="N", help="seed of every test (default 2031)")
    parser.add_argument("--workers", type=int, default=1, metavar="N",
                        help="processes for league scans (default 1: a thread of the server)")
    parser.add_argument("--upload-limit-mb", type=int, default=50, metavar="MB", help="largest file the data view accepts (default 50)")
    parser.set_defaults(run=run_serve)


def _check(args: argparse.Namespace) -> None:
    if not 0 <= args.port <= 65535:
        raise InputError(f"must be between 0 and 65535 (got {args.port})", path="--port")
    for value, option, low in ((args.permutations, "--permutations", 1), (args.workers, "--workers", 1),
                               (args.upload_limit_mb, "--upload-limit-mb", 1)):
        if value < low:
            raise InputError(f"must be at least {low} (got {value})", path=option)
    if args.seed is not None and args.seed < 0:
        raise InputError(f"must be a non-negative whole number (got {args.seed})", path="--seed")


def run_serve(args: argparse.Namespace) -> int:
    _check(args)
    from streakwise.dashboard.serve import serve
    from streakwise.dashboard.service import DEFAULT_SEED, DashboardSettings

    settings = DashboardSettings(
        permutations=args.permutations,
        seed=DEFAULT_SEED if args.seed is None else args.seed,
        workers=args.workers,
        upload_limit_bytes=args.upload_limit_mb * 1024 * 1024,
    )
    serve(resolve_store_path(args.store), host=args.host, port=args.port, debug=args.debug, settings=settings)
    return 0
