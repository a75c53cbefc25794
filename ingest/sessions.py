"""Order attempts inside sessions and number them.

The order key is the profile's ``order.by``: an event index, period + game
clock (counting down or up), a timestamp, an explicit ``seq``, or the file
order.  Ties keep file order (free throws share a clock time).  Inside one
player's session the key must not go backwards in file order, and an event
index or ``seq`` must not repeat; both are reported per row.

Sessions are games by default.  ``period`` splits a game into its periods,
``gap`` starts a new session after a pause longer than ``gap_seconds`` of game
time, and ``season`` merges a player's whole season into one session (which
mixes form across games: the caller warns).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .errors import InputError
from .fields import RowProblems
from .profiles import Profile

__all__ = ["assign_sessions", "order_key_columns", "resolve_order"]


def resolve_order(profile: Profile, frame: pd.DataFrame) -> str:
    """The order key in force: the profile's choice, else the best available."""
    if profile.order_by is not None:
        return profile.order_by
    if "_seq" in frame:
        return "seq"
    if "_index" in frame:
        return "index"
    if "clock_s" in frame and "period" in frame:
        return "clock"
    if "_timestamp" in frame:
        return "timestamp"
    return "file"


def order_key_columns(order: str, frame: pd.DataFrame, profile: Profile, path: str) -> list[str]:
    """Add the sortable key columns for ``order`` to ``frame``; return their names."""
    if order == "file":
        return []
    if order == "seq":
        _need(frame, "_seq", "seq", path)
        return ["_seq"]
    if order == "index":
        _need(frame, "_index", "index", path)
        return ["_index"]
    if order == "timestamp":
        _need(frame, "_timestamp", "timestamp", path)
        return ["_timestamp"]
    if order == "clock":
        _need(frame, "clock_s", "clock", path)
        _need(frame, "period", "period", path)
        clock = frame["clock_s"].to_numpy(dtype=float, na_value=np.nan)
        frame["_clock_key"] = -clock if profile.clock_direction == "down" else clock
        frame["_period_key"] = frame["period"].astype("float64")
        return ["_period_key", "_clock_key"]
    raise InputError(f"unknown order {order!r}", path=path)


def _need(frame: pd.DataFrame, column: str, field: str, path: str) -> None:
    if column not in frame:
        raise InputError(f"ordering by {field} needs the profile to name a {field!r} column", path=path, column=f"columns.{field}")


def _elapsed(frame: pd.DataFrame, profile: Profile, order: str, path: str) -> np.ndarray:
    """Game time in seconds from the start of the game (for gap sessions)."""
    if order == "timestamp":
        stamps = frame["_timestamp"].astype("datetime64[us]").to_numpy()
        return (stamps - stamps.min()).astype("timedelta64[us]").astype(np.float64) / 1e6 if len(stamps) else np.array([])
    if order != "clock":
        raise InputError("splitting sessions by a gap in game time needs a game clock or timestamps", path=path, column="sessions.split")
    if profile.period_seconds is None:
        raise InputError("splitting sessions by a gap needs order.period_seconds in the profile", path=path, column="order.period_seconds")
    period = frame["period"].to_numpy(dtype=float, na_value=np.nan)
    clock = frame["clock_s"].to_numpy(dtype=float, na_value=np.nan)
    regular = profile.regular_periods
    overtime = profile.overtime_seconds or profile.period_seconds
    start = np.where(period <= regular, (period - 1) * profile.period_seconds, regular * profile.period_seconds + (period - 1 - regular) * overtime)
    length = np.where(period <= regular, profile.period_seconds, overtime)
    into = length - clock if profile.clock_direction == "down" else clock
    return start + into


def assign_sessions(frame: pd.DataFrame, profile: Profile, problems: RowProblems, *, path: str, layout: str) -> pd.DataFrame:
    """Add ``session`` and ``seq``; report duplicates and backwards order.

    ``frame`` holds one row per attempt in file order with the column
    ``_position`` (file position) and the order keys of :func:`map_attempts`.
    Rows with problems are still ordered, so later rows' messages are right;
    the caller drops them (and renumbers ``seq``) or refuses the file.
    """
    order = resolve_order(profile, frame)
    keys = order_key_columns(order, frame, profile, path)
    for key in keys:
        missing = frame[key].isna().to_numpy()
        column = profile.columns.get({"_seq": "seq", "_index": "index", "_timestamp": "timestamp", "_clock_key": "clock", "_period_key": "period"}[key])
        # cells that were present but unreadable already have a problem
        problems.add(missing & ~problems.bad(), column, f"missing, needed to order the attempts ({order})")

    split = profile.session_split
    if "_session" in frame:
        base = frame["_session"]
    elif split == "season":
        base = frame["season"].fillna("all") if "season" in frame else pd.Series("all", index=frame.index, dtype="string")
    else:
        base = frame["game"]
    if split == "period" and "_session" not in frame:
        if "period" not in frame:
            raise InputError("splitting sessions by period needs a 'period' column", path=path, column="columns.period")
        base = base + "/P" + frame["period"].astype("string")
    frame["session"] = base.astype("string")

    group_keys = ["player", "session"]
    # A season-long session holds many games: order is judged inside each game.
    check_keys = group_keys + (["game"] if split == "season" and "_session" not in frame else [])
    if split == "season" and "_session" not in frame:
        frame["_game_rank"] = _game_rank(frame)
    # Backwards order and duplicates, judged in file order within each group.
    if keys and len(frame):
        by_file = frame.sort_values(check_keys + ["_position"], kind="stable")
        same_group = _same_as_previous(by_file, check_keys)
        backwards = np.zeros(len(by_file), dtype=bool)
        equal = same_group.copy()
        decided = np.zeros(len(by_file), dtype=bool)
        for key in keys:
            values = by_file[key]
            if pd.api.types.is_datetime64_any_dtype(values.dtype):
                stamps = values.to_numpy(dtype="datetime64[us]")
                values = np.where(np.isnat(stamps), np.nan, stamps.astype(np.int64).astype(float))
            else:
                values = values.to_numpy(dtype=float, na_value=np.nan)
            previous = np.full_like(values, np.nan)
            previous[1:] = values[:-1]
            less = (values < previous) & same_group & ~decided
            more = (values > previous) & same_group & ~decided
            backwards |= less
            decided |= less | more
            equal &= ~(less | more) & ~np.isnan(values) & ~np.isnan(previous)
        if backwards.any() and order != "seq":  # an explicit seq orders by itself
            positions = by_file["_position"].to_numpy()
            rows = problems.rows
            prev_rows = np.empty(len(by_file), dtype=np.int64)
            prev_rows[1:] = rows[positions[:-1]]
            mask = np.zeros(len(frame), dtype=bool)
            messages = np.empty(len(frame), dtype=object)
            column = profile.columns.get({"seq": "seq", "index": "index", "timestamp": "timestamp", "clock": "clock"}[order])
            for i in np.flatnonzero(backwards):
                mask[positions[i]] = True
                here = _describe(frame, positions[i], order)
                before = _describe(frame, positions[i - 1], order)
                messages[positions[i]] = (
                    f"order goes backwards: {here} comes after {before} (row {prev_rows[i]}) "
                    "in the same player's session; rows must be in game order"
                )
            problems.add(mask, column, messages)
        if order in ("index", "seq") and equal.any():
            positions = by_file["_position"].to_numpy()
            rows = problems.rows
            mask = np.zeros(len(frame), dtype=bool)
            messages = np.empty(len(frame), dtype=object)
            for i in np.flatnonzero(equal):
                mask[positions[i]] = True
                where = "game" if "game" in check_keys else "session"
                messages[positions[i]] = f"duplicate attempt: same player, {where} and {order} as row {rows[positions[i - 1]]}"
            problems.add(mask, profile.columns.get(order), messages)
    if split == "gap" and "_session" not in frame:
        elapsed = _elapsed(frame, profile, order, path)
        frame["_elapsed"] = elapsed
        ordered = frame.sort_values(group_keys + keys + ["_position"], kind="stable")
        gap = ordered.groupby(group_keys, sort=False)["_elapsed"].diff().to_numpy()
        new = np.nan_to_num(gap, nan=0.0) > float(profile.session_gap_seconds)
        ordered["_part"] = pd.Series(new.astype(np.int64), index=ordered.index).groupby([ordered["player"], ordered["session"]], sort=False).cumsum() + 1
        frame["session"] = (frame["session"] + "/S" + ordered["_part"].reindex(frame.index).astype("string")).astype("string")

    return frame


def _same_as_previous(frame: pd.DataFrame, keys: list[str]) -> np.ndarray:
    """True where a row has the same values of ``keys`` as the row before (missing never matches)."""
    same = np.zeros(len(frame), dtype=bool)
    if len(frame) < 2:
        return same
    same[1:] = True
    for key in keys:
        codes, _ = pd.factorize(frame[key], use_na_sentinel=True)
        same[1:] &= (codes[1:] == codes[:-1]) & (codes[1:] >= 0)
    return same


def _game_rank(frame: pd.DataFrame) -> np.ndarray:
    """Order of each row's game in the season: by date, then game number, then first appearance."""
    firsts = frame.groupby("game", sort=False, dropna=False)["_position"].transform("min")
    table = pd.DataFrame({"first": firsts.to_numpy()})
    order = ["first"]
    if "game_order" in frame:
        table.insert(0, "game_order", frame["game_order"].to_numpy(dtype=float, na_value=np.nan))
        order.insert(0, "game_order")
    if "game_date" in frame:
        table.insert(0, "game_date", frame["game_date"].to_numpy())
        order.insert(0, "game_date")
    ranked = table.drop_duplicates().sort_values(order, kind="stable", na_position="last")
    ranked["rank"] = np.arange(len(ranked))
    return table.merge(ranked, on=list(table.columns), how="left")["rank"].to_numpy()


def _describe(frame: pd.DataFrame, position: int, order: str) -> str:
    """The order key of one row, as a person reads it."""
    row = frame.iloc[position]
    if order == "clock":
        seconds = float(row["clock_s"])
        minutes, rest = divmod(seconds, 60.0)
        clock = f"{int(minutes)}:{rest:04.1f}" if rest != int(rest) else f"{int(minutes)}:{int(rest):02d}"
        return f"period {row['period']} clock {clock}"
    if order == "index":
        return f"event {row['_index']:g}"
    if order == "timestamp":
        return f"time {row['_timestamp']}"
    return f"seq {row['_seq']}"


def number_attempts(frame: pd.DataFrame, profile: Profile, path: str) -> pd.DataFrame:
    """Sort by (player, session, order key, file position) and number ``seq``."""
    order = resolve_order(profile, frame)
    keys = order_key_columns(order, frame, profile, path) if order != "file" else []
    if "_game_rank" in frame:
        keys = ["_game_rank"] + keys
    ordered = frame.sort_values(["player", "session"] + keys + ["_position"], kind="stable")
    ordered["seq"] = ordered.groupby(["player", "session"], sort=False).cumcount().astype(np.int64)
    return ordered
