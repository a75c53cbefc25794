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

import pandas as pd

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
    on_stage: Callable[[str, str], None] | None = None,
) -> list[LoadedFile]:
    """Load every file; raise one InputError holding every refused file's problems.

    ``on_file(path)`` is called as each file starts and ``on_stage(path,
    stage)`` as each of its stages starts (see :func:`load_file`).
    """
    loaded: list[LoadedFile] = []
    problems = []
    for path in paths:
        if on_file is not None:
            on_file(str(path))
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", SessionMergeWarning)  # carried in LoadedFile.notes
                stage = None if on_stage is None else (lambda name, _path=str(path): on_stage(_path, name))
                loaded.append(
                    load_file(path, profile, sessions=sessions, gap_seconds=gap_seconds, keep_going=keep_going, on_stage=stage)
                )
        except InputError as exc:
            problems.extend(exc.problems)
    if problems:
        raise InputError(problems=problems)
    return loaded


def store_files(
    store: Store,
    loaded: Sequence[LoadedFile],
    *,
    replace: bool = False,
    on_stored: Callable[[FileOutcome], None] | None = None,
) -> list[FileOutcome]:
    """Add each loaded file to ``store`` (one transaction per file).

    Files of one batch that share a player's session are refused before
    anything is stored (the store would refuse the second after keeping the
    first).  ``on_stored(outcome)`` is called as each file is committed, so a
    caller knows which files are in the store when a later one is refused.
    """
    _check_batch_sessions(loaded)
    outcomes = []
    for item in loaded:
        outcome = FileOutcome(item, store.add_source(source_info(item), item.attempts, item.rejects, replace=replace))
        outcomes.append(outcome)
        if on_stored is not None:
            on_stored(outcome)
    return outcomes


def _check_batch_sessions(loaded: Sequence[LoadedFile]) -> None:
    """Raise if two files of the batch hold the same (player, session)."""
    distinct: dict[str, LoadedFile] = {}
    for item in loaded:  # the same content twice is "already stored" (or replaced), not a clash
        distinct.setdefault(item.content_sha256, item)
    files = list(distinct.values())
    if len(files) < 2:
        return
    keys = pd.concat(
        [
            item.attempts[["player", "session", "source_row"]].drop_duplicates(["player", "session"]).assign(_file=number)
            for number, item in enumerate(files)
        ],
        ignore_index=True,
    )
    clash = keys.duplicated(["player", "session"], keep="first").to_numpy()
    if clash.any():
        second = keys.iloc[int(clash.argmax())]
        first = keys[(keys["player"] == second["player"]) & (keys["session"] == second["session"])].iloc[0]
        raise InputError(
            f"session {second['session']!r} of player {second['player']!r} is also in {files[int(first['_file'])].name!r} "
            f"(row {int(first['source_row'])}), given earlier in this ingest; a player's session must come from one file",
            path=files[int(second["_file"])].path,
            row=int(second["source_row"]),
            column="session",
        )


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
