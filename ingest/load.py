"""From a file and a profile to canonical attempts, rejects and counts.

:func:`load_file` is what ``streakwise ingest`` runs for each file before the
store takes the result.  By default a file with any bad row is refused whole
(:class:`~streakwise.ingest.errors.InputError` listing every problem); with
``keep_going`` the good rows are kept and each bad row becomes a reject with
its reasons.  The counts always add up: rows read = rows stored + rows skipped
(non-attempt events) + rows rejected.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from .attempts import CANONICAL_REQUIRED, canonical_profile_for, check_columns, map_attempts
from .drills import expand_drills
from .errors import InputError, Problem
from .events import select_attempt_events
from .fields import RowProblems
from .profiles import Profile
from .readers import read_table
from .record import COLUMNS, validate_record
from .sessions import assign_sessions, number_attempts

__all__ = ["LoadedFile", "SessionMergeWarning", "load_file"]


class SessionMergeWarning(UserWarning):
    """Sessions span games: within-session shuffles then mix form across games."""


@dataclass(frozen=True)
class LoadedFile:
    """The outcome of reading one file.

    Attributes
    ----------
    path, name : the file as given, and its name (the ``source`` column).
    layout, profile : how it was read.
    attempts : canonical attempt record (validated).
    rejects : one row per problem (row, column, message) of rejected rows.
    rows_read : records in the file (header not counted).
    rows_stored, rows_skipped, rows_rejected : how they were used; they add
        up to ``rows_read``.
    skipped_kinds : skipped events counted by kind (event logs).
    notes : warnings worth showing to the user.
    """

    path: str
    name: str
    layout: str
    profile: Profile
    content_sha256: str
    attempts: pd.DataFrame
    rejects: pd.DataFrame
    rows_read: int
    rows_stored: int
    rows_skipped: int
    rows_rejected: int
    skipped_kinds: dict[str, int] = field(default_factory=dict)
    notes: tuple[str, ...] = ()


def load_file(
    path: str | Path,
    profile: Profile | None = None,
    *,
    sessions: str | None = None,
    gap_seconds: float | None = None,
    keep_going: bool = False,
    on_stage: Callable[[str], None] | None = None,
) -> LoadedFile:
    """Read ``path`` with ``profile`` (the canonical layout when ``None``).

    Parameters
    ----------
    path : str or Path
        A CSV, Parquet, JSON lines or Excel file.
    profile : Profile, optional
        Column mapping; ``None`` for a file in the canonical layout.
    sessions : {"game", "period", "gap", "season"}, optional
        Override the profile's session split.
    gap_seconds : float, optional
        Pause in game time that starts a new session (with ``sessions="gap"``).
    keep_going : bool
        Keep the good rows of a file with bad rows (default: refuse the file).
    on_stage : callable, optional
        Called with each stage's name as it starts (``"read"``, ``"check"``,
        ``"order"``, ``"finish"``), for progress bars.

    Raises
    ------
    InputError
        With every problem found (``file:row:column: message``).
    """
    path = str(path)
    stage = on_stage or (lambda name: None)
    if sessions is not None:
        if sessions not in ("game", "period", "gap", "season"):
            raise InputError(f"sessions must be one of game, period, gap, season (got {sessions!r})", path=path)
        if sessions == "gap" and not gap_seconds:
            raise InputError("splitting sessions by a gap needs a gap in seconds (e.g. gap:120)", path=path)
    stage("read")
    raw = read_table(path, delimiter=profile.delimiter if profile else None, sheet=profile.sheet if profile else None)
    if profile is None:
        missing = [c for c in CANONICAL_REQUIRED if c not in raw.frame.columns]
        profile = canonical_profile_for(raw)
        if missing:
            check_columns(raw, profile)  # raises, suggesting the closest names
    else:
        extra = {"kind": profile.event_kind_column} if profile.layout == "events" else None
        check_columns(raw, profile, extra)
    if sessions is not None:
        profile = profile.with_sessions(sessions, gap_seconds)
    notes: list[str] = []
    if profile.session_split == "season":
        message = (
            f"{path}: sessions merge each player's season into one: within-session shuffles then "
            "mix form across games, which alone makes makes follow makes more often"
        )
        warnings.warn(message, SessionMergeWarning, stacklevel=2)
        notes.append(message)

    stage("check")
    frame, rows = raw.frame, raw.rows
    skipped: dict[str, int] = {}
    unreadable = list(raw.problems)
    if profile.layout == "events":
        frame, rows, skipped, event_problems = select_attempt_events(frame, rows, profile, path)
        unreadable += event_problems
    rows_skipped = int(sum(skipped.values()))
    problems = RowProblems(path, rows)

    if profile.layout == "drills":
        attempts = expand_drills(frame.reset_index(drop=True), profile, problems)
        _check_drill_duplicates(attempts, problems)
        layout = "drills"
    else:
        frame = frame.reset_index(drop=True)
        kind = {}
        if profile.layout == "events":
            kind = {"made": frame["_kind_made"], "attempt_type": frame["_kind_type"], "points": frame["_kind_points"]}
        attempts = map_attempts(frame, profile, problems, **kind)
        if profile.layout == "events":
            duplicate = frame["_duplicate"]
            problems.add(duplicate.notna().to_numpy(), profile.columns.get("index"), duplicate.to_numpy(dtype=object))
        attempts["_position"] = np.arange(len(attempts))
        stage("order")
        attempts = assign_sessions(attempts, profile, problems, path=path, layout=profile.layout)
        layout = profile.layout

    bad_rows = problems.bad()
    if (bad_rows.any() or unreadable) and not keep_going:
        raise InputError(problems=sorted(unreadable + problems.problems(), key=lambda p: (p.row or 0, p.column or "")))

    stage("finish")
    keep = ~bad_rows[attempts["_position"].to_numpy()] if len(attempts) else np.zeros(0, dtype=bool)
    attempts = attempts.loc[keep].copy()
    if profile.layout == "drills":
        attempts = attempts.sort_values(["player", "session", "seq"], kind="stable")
    else:
        attempts = number_attempts(attempts, profile, path)
    attempts["source"] = Path(path).name
    attempts["source_row"] = rows[attempts["_position"].to_numpy()] if len(attempts) else np.zeros(0, dtype=np.int64)
    canonical = validate_record(attempts[[c for c in COLUMNS if c in attempts.columns]], path=path)

    reject_frame = problems.frame()[["row", "column", "message"]]
    if unreadable:
        extra = pd.DataFrame({"row": [p.row for p in unreadable], "column": [p.column for p in unreadable], "message": [p.message for p in unreadable]})
        reject_frame = pd.concat([extra, reject_frame], ignore_index=True).sort_values("row", kind="stable").reset_index(drop=True)
    reject_frame = reject_frame.astype({"row": "Int64", "column": "string", "message": "string"})
    rows_rejected = int(bad_rows.sum()) + len(unreadable)
    rows_stored = int(len(frame) - bad_rows.sum())
    if rows_rejected and len(canonical):
        notes.append(
            f"{path}: {rows_rejected} row{'s' if rows_rejected != 1 else ''} rejected; the sessions they belonged "
            "to are stored without them, so those sequences have gaps"
        )
    return LoadedFile(
        path=path,
        name=Path(path).name,
        layout=layout,
        profile=profile,
        content_sha256=raw.content_sha256,
        attempts=canonical,
        rejects=reject_frame,
        rows_read=raw.records,
        rows_stored=rows_stored,
        rows_skipped=rows_skipped,
        rows_rejected=rows_rejected,
        skipped_kinds=skipped,
        notes=tuple(notes),
    )


def _check_drill_duplicates(attempts: pd.DataFrame, problems: RowProblems) -> None:
    """Two rows of a drill sheet naming the same player, day, spot and round."""
    firsts = attempts[attempts["seq"] == 0]
    dup = firsts.duplicated(subset=["player", "session"], keep="first")
    if dup.any():
        mask = np.zeros(len(problems.rows), dtype=bool)
        mask[firsts.loc[dup, "_position"].to_numpy()] = True
        problems.add(mask, None, "duplicate round: the same player, day, spot and round appear on an earlier row")
