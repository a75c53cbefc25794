"""Event logs: one row per game event of every kind and every player.

The profile's ``[events]`` table names the column holding each event's kind
and lists the kinds that are attempts, each with its attempt type and, where
the kind itself says it, the outcome and the points.  Every other event
(rebounds, fouls, substitutions, ...) is skipped and counted by kind.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .errors import Problem
from .fields import parse_text
from .profiles import Profile

__all__ = ["select_attempt_events"]


def select_attempt_events(raw_frame: pd.DataFrame, rows: np.ndarray, profile: Profile, path: str):
    """Split an event log into attempt rows and skipped events.

    Returns
    -------
    attempts : DataFrame
        The attempt rows (file order), with ``_kind_type``, ``_kind_made`` and
        ``_kind_points`` from the kind table.
    attempt_rows : ndarray
        Their source row numbers.
    skipped : dict
        Count of skipped events by kind (``"(no kind)"`` for empty cells).
    problems : list of Problem
        Non-attempt rows that repeat an earlier event number (rejected, not
        skipped); attempt rows that do carry the message in ``_duplicate``.
    """
    kinds = parse_text(raw_frame[profile.event_kind_column]).str.lower()
    table = profile.event_kinds
    is_attempt = kinds.isin(list(table)).fillna(False).to_numpy(dtype=bool)
    duplicate = _duplicate_events(raw_frame, rows, profile)
    problems = [
        Problem(path, int(rows[i]), profile.columns.get("index"), duplicate[i])
        for i in np.flatnonzero(~is_attempt & pd.notna(duplicate))
    ]
    skipped_kinds = kinds[~is_attempt & pd.isna(duplicate)].fillna("(no kind)")
    skipped = {str(k): int(v) for k, v in skipped_kinds.value_counts(sort=True).items()}
    needed = list(dict.fromkeys(profile.columns.values()))
    attempts = raw_frame.loc[is_attempt, needed].copy()  # only the mapped columns travel on
    chosen = kinds[is_attempt]
    attempts["_kind_type"] = chosen.map({k: v.attempt_type for k, v in table.items()}).astype("string")
    attempts["_kind_made"] = chosen.map({k: v.made for k, v in table.items() if v.made is not None}).astype("boolean")
    attempts["_kind_points"] = chosen.map({k: v.points for k, v in table.items() if v.points is not None}).astype("Int64")
    attempts["_duplicate"] = duplicate[is_attempt]
    return attempts, rows[is_attempt], skipped, problems


def _duplicate_events(raw_frame: pd.DataFrame, rows: np.ndarray, profile: Profile) -> np.ndarray:
    """Message for each row repeating an earlier (game, event number), else None."""
    out = np.full(len(raw_frame), None, dtype=object)
    if "index" not in profile.columns or "game" not in profile.columns:
        return out
    games = parse_text(raw_frame[profile.columns["game"]])
    indices = parse_text(raw_frame[profile.columns["index"]])
    present = (games.notna() & indices.notna()).to_numpy()
    game_codes, _ = pd.factorize(games)
    index_codes, _ = pd.factorize(indices)
    combined = game_codes.astype(np.int64) * (int(index_codes.max(initial=0)) + 2) + index_codes
    duplicate = pd.Series(combined).duplicated(keep="first").to_numpy() & present
    if duplicate.any():
        positions = pd.Series(np.arange(len(games)))
        first = positions.groupby(combined).transform("min").to_numpy()
        for position in np.flatnonzero(duplicate):
            game, index = games.iloc[position], indices.iloc[position]
            out[position] = f"duplicate event: game {game!r} already has event {index} at row {rows[int(first[position])]}"
    return out
