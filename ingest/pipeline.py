"""Read files and keep them in the store: what ``streakwise ingest`` runs.

:func:`check_files` reads every file first (a refused file stops the whole
batch before anything is stored); :func:`store_files` then adds each file in
its own transaction.  :func:`ingest_paths` does both.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path

from .errors import InputError
from .load import LoadedFile, SessionMergeWarning, load_file
from .profiles import Profile
from .store import IngestSummary, SourceInfo, Store

__all__ = ["FileOutcome", "check_files", "ingest_paths", "source_info", "store_files"]


@dataclass(frozen=True)
class FileOutcome:
    """One file's reading and what the store did with it."""

    loaded: LoadedFile
    stored: IngestSummary | None  # None when only checked


def source_info(loaded: LoadedFile) -> SourceInfo:
    """The store's description of a loaded file."""
    return SourceInfo(
        path=loaded.path,
        name=loaded.name,
        content_sha256=loaded.content_sha256,
        layout=loaded.layout,
        profile=loaded.profile.name,
        profile_sha256=loaded.profile.sha256,
        rows_read=loaded.rows_read,
        rows_stored=loaded.rows_stored,
        skipped=loaded.rows_skipped,
    )


def check_files(
    paths: Sequence[str | Path],
    profile: Profile | None = None,
    *,
    sessions: str | None = None,
    gap_seconds: float | None = None,
    keep_going: bool = False,
    on_file: Callable[[str], None] | None = None,
) -> list[LoadedFile]:
    """Load every file; raise one InputError holding every refused file's problems."""
    loaded: list[LoadedFile] = []
    problems = []
    for path in paths:
        if on_file is not None:
            on_file(str(path))
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", SessionMergeWarning)  # carried in LoadedFile.notes
                loaded.append(load_file(path, profile, sessions=sessions, gap_seconds=gap_seconds, keep_going=keep_going))
        except InputError as exc:
            problems.extend(exc.problems)
    if problems:
        raise InputError(problems=problems)
    return loaded


def store_files(store: Store, loaded: Sequence[LoadedFile], *, replace: bool = False) -> list[FileOutcome]:
    """Add each loaded file to ``store`` (one transaction per file)."""
    return [FileOutcome(item, store.add_source(source_info(item), item.attempts, item.rejects, replace=replace)) for item in loaded]


def ingest_paths(
    store: Store,
    paths: Sequence[str | Path],
    profile: Profile | None = None,
    *,
    sessions: str | None = None,
    gap_seconds: float | None = None,
    keep_going: bool = False,
    replace: bool = False,
) -> list[FileOutcome]:
    """Check every file, then store them; nothing is stored if any file is refused."""
    loaded = check_files(paths, profile, sessions=sessions, gap_seconds=gap_seconds, keep_going=keep_going)
    return store_files(store, loaded, replace=replace)
