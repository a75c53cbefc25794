"""Attempt tables: one row per attempt, columns named by a profile.

:func:`map_attempts` turns the mapped columns of a raw table into canonical
fields (without ``session`` and ``seq``, which :mod:`.sessions` assigns),
recording every bad cell.  The event-log adapter filters its rows to attempts
and then uses the same mapping; the canonical layout is an attempt table
whose columns carry the canonical names.
"""

from __future__ import annotations

import difflib

import numpy as np
import pandas as pd

from .errors import InputError, Problem
from .fields import RowProblems, parse_clock, parse_date, parse_flag, parse_number, parse_text, parse_timestamp
from .profiles import CANONICAL_PROFILE, Profile
from .readers import RawTable
from .record import FREE_THROW

__all__ = ["CANONICAL_REQUIRED", "canonical_profile_for", "check_columns", "map_attempts"]

#: Columns a file in the canonical layout must have.
CANONICAL_REQUIRED = ("player", "session", "seq", "made")

_CANONICAL_OPTIONAL = (
    "player_name",
    "team",
    "season",
    "competition",
    "game",
    "game_date",
    "game_order",
    "attempt_type",
    "points",
    "distance",
    "x",
    "y",
    "defender_distance",
    "period",
    "score_margin",
    "home",
)


def canonical_profile_for(raw: RawTable) -> Profile:
    """The built-in profile for a file in the canonical layout."""
    from dataclasses import replace

    columns = {name: name for name in CANONICAL_REQUIRED + _CANONICAL_OPTIONAL if name in raw.frame.columns}
    if "clock_s" in raw.frame.columns:
        columns["clock"] = "clock_s"
    for name in CANONICAL_REQUIRED:
        columns.setdefault(name, name)  # missing ones are reported by check_columns
    return replace(CANONICAL_PROFILE, columns=columns, order_by="seq")


def check_columns(raw: RawTable, profile: Profile, extra: dict[str, str] | None = None) -> None:
    """Raise if a column the profile names is not in the file, suggesting the closest."""
    wanted = dict(profile.columns)
    if extra:
        wanted.update(extra)
    present = [str(c) for c in raw.frame.columns]
    header_row = raw.header_row
    problems = []
    for field, column in wanted.items():
        if column in present:
            continue
        close = difflib.get_close_matches(column, present, n=1, cutoff=0.6)
        if not close:
            lowered = {p.lower(): p for p in present}
            if column.lower() in lowered:
                close = [lowered[column.lower()]]
        hint = f"; did you mean {close[0]!r}?" if close else ""
        role = "" if field == column else f" (for {field})"
        listing = ", ".join(present[:30]) + (" ..." if len(present) > 30 else "")
        problems.append(
            Problem(raw.path, header_row, column, f"column {column!r}{role} not found{hint} (columns in the file: {listing})")
        )
    if problems:
        raise InputError(problems=problems)


def map_attempts(
    raw_frame: pd.DataFrame,
    profile: Profile,
    problems: RowProblems,
    *,
    made: pd.Series | None = None,
    attempt_type: pd.Series | None = None,
    points: pd.Series | None = None,
) -> pd.DataFrame:
    """Canonical fields and order keys from the profile's columns.

    Parameters
    ----------
    raw_frame : DataFrame
        The file's rows (already filtered to attempts for an event log).
    profile : Profile
        Which column is which field.
    problems : RowProblems
        Receives every bad cell.
    made, attempt_type, points : Series, optional
        Values fixed by the event kind (NA where the columns decide).

    Returns
    -------
    DataFrame
        Canonical fields present in the file, plus the order keys
        ``_index``, ``_clock``, ``_timestamp``, ``_seq`` and ``_session``
        where mapped.
    """
    cols = profile.columns
    out: dict[str, pd.Series] = {}

    def source(field: str) -> pd.Series | None:
        name = cols.get(field)
        return raw_frame[name] if name is not None else None

    def required_text(field: str) -> pd.Series:
        values = parse_text(source(field))
        missing = values.isna().to_numpy()
        problems.add(missing, cols[field], f"{field} is missing")
        return values

    out["player"] = required_text("player")
    if "game" in cols:
        out["game"] = required_text("game")
    for field in ("player_name", "team", "season", "competition"):
        if field in profile.fixed:
            out[field] = pd.Series(profile.fixed[field], index=raw_frame.index, dtype="string")
        elif field in cols:
            out[field] = parse_text(source(field))
    if "game_date" in cols:
        out["game_date"] = parse_date(source("game_date"), cols["game_date"], problems)
    if "game_order" in cols:
        out["game_order"] = parse_number(source("game_order"), cols["game_order"], problems, integer=True, minimum=0, what="a game number")
    if "session" in cols and profile.layout != "canonical":
        out["_session"] = required_text("session")
    elif profile.layout == "canonical":
        out["_session"] = required_text("session")

    # Outcome: from the event kind where it says, else from the column.
    if "made" in cols:
        from_column = parse_flag(
            source("made"), cols["made"], problems, true_words=profile.made_words, false_words=profile.missed_words, what="outcome"
        )
    else:
        from_column = pd.Series(pd.NA, index=raw_frame.index, dtype="boolean")
    outcome = from_column if made is None else made.astype("boolean").fillna(from_column)
    missing = outcome.isna().to_numpy().copy()
    if made is not None:
        missing &= made.isna().to_numpy()
    if "made" in cols:
        text = parse_text(source("made"))
        missing_cell = missing & text.isna().to_numpy()
        problems.add(missing_cell, cols["made"], "outcome is missing")
    out["made"] = outcome

    # Attempt type.
    if attempt_type is not None:
        out["attempt_type"] = attempt_type.astype("string")
    elif "attempt_type" in cols:
        text = parse_text(source("attempt_type"))
        if profile.attempt_types:
            mapped = text.str.lower().map(profile.attempt_types).astype("string")
            unknown = (text.notna() & mapped.isna()).to_numpy()
            if unknown.any():
                known = ", ".join(sorted(set(profile.attempt_types)))
                problems.add(unknown, cols["attempt_type"], [f"unknown attempt type {v!r}; expected one of {known}" for v in text[unknown]])
            typed = mapped
        else:
            typed = text
        missing = typed.isna().to_numpy() & text.isna().to_numpy()
        problems.add(missing, cols["attempt_type"], "attempt type is missing")
        out["attempt_type"] = typed
    else:
        constant = profile.fixed.get("attempt_type", profile.default_attempt_type)
        out["attempt_type"] = pd.Series(constant, index=raw_frame.index, dtype="string")

    # Points: the column, else the event kind, else 1 for free throws.
    point_values = pd.Series(pd.NA, index=raw_frame.index, dtype="Int64")
    if "points" in cols:
        point_values = parse_number(source("points"), cols["points"], problems, integer=True, minimum=0, maximum=10, what="points")
    if points is not None:
        point_values = point_values.fillna(points.astype("Int64"))
    free_throw = (out["attempt_type"] == FREE_THROW).fillna(False).to_numpy()
    if free_throw.any():
        point_values = point_values.mask(free_throw & point_values.isna().to_numpy(), 1)
    out["points"] = point_values

    for field, minimum in (("distance", 0.0), ("defender_distance", 0.0), ("x", None), ("y", None), ("score_margin", None)):
        if field in cols:
            out[field] = parse_number(source(field), cols[field], problems, minimum=minimum)
    if "period" in cols:
        out["period"] = parse_number(source("period"), cols["period"], problems, integer=True, minimum=1, maximum=99, what="a period number")
    if "clock" in cols:
        clock = parse_clock(source("clock"), cols["clock"], problems)
        if profile.period_seconds is not None:
            length = pd.Series(profile.period_seconds, index=raw_frame.index, dtype="float64")
            if "period" in out:
                overtime = (out["period"] > profile.regular_periods).fillna(False).to_numpy()
                length = length.mask(overtime, profile.overtime_seconds or profile.period_seconds)
            beyond = (clock > length).fillna(False).to_numpy()
            if beyond.any():
                problems.add(
                    beyond,
                    cols["clock"],
                    [f"impossible game clock {_show_clock(c)}: beyond the {_show_clock(l)} period" for c, l in zip(clock[beyond], length[beyond])],
                )
                clock = clock.where(~beyond)
        out["clock_s"] = clock
    if "home" in cols:
        out["home"] = parse_flag(source("home"), cols["home"], problems, true_words=profile.home_words, false_words=profile.away_words, what="home/away value", true_label="home", false_label="away")
    if "index" in cols:
        out["_index"] = parse_number(source("index"), cols["index"], problems, what="an event number")
    if "timestamp" in cols:
        out["_timestamp"] = parse_timestamp(source("timestamp"), cols["timestamp"], problems)
    if profile.layout == "canonical" or "seq" in cols:
        out["_seq"] = parse_number(source("seq"), cols["seq"], problems, integer=True, minimum=0, what="a sequence number")
    frame = pd.DataFrame(out, index=raw_frame.index)
    if "game" not in frame:
        frame["game"] = frame["_session"] if "_session" in frame else pd.Series(pd.NA, index=raw_frame.index, dtype="string")
    return frame


def _show_clock(seconds: float) -> str:
    minutes, rest = divmod(float(seconds), 60.0)
    return f"{int(minutes)}:{rest:04.1f}" if rest != int(rest) else f"{int(minutes)}:{int(rest):02d}"
