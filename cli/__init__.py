"""The ``streakwise`` command line: thin commands over ``ingest`` and ``analysis``."""

from .main import build_parser, main

__all__ = ["build_parser", "main"]
