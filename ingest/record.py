"""The canonical attempt record: one row per attempt, any sport.

Every adapter returns a frame with exactly :data:`COLUMNS`, in that order,
with the dtypes of :data:`DTYPES`.  :func:`validate_record` checks a frame
against the contract and returns it with the canonical column order and
dtypes; it raises :class:`~streakwise.ingest.errors.InputError` naming the
source row and column of the first problems.

Column meanings (see DESIGN.md "Canonical shot record"):

``player``            stable player id
``player_name``       display name (optional)
``team``, ``season``, ``competition``  optional grouping keys
``game``              game (or practice day) id
``game_date``         date of the game (optional; orders games in a season)
``game_order``        order of the game in the season (optional)
``session``           the unit inside which attempts are exchangeable under
                      "no hot hand": the game by default
``seq``               0-based order of the attempt within the player's session
``made``              outcome
``attempt_type``      ``field_goal`` / ``free_throw`` for basketball, free text
                      for other sports
``points``            value of the attempt (1, 2, 3) where it has one
``distance``, ``x``, ``y``, ``defender_distance``, ``period``, ``clock_s``,
``score_margin``, ``home``  optional covariates (``clock_s`` is the game
                      clock as read, in seconds)
``source``, ``source_row``  provenance: file name and row number in it
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from .errors import InputError, Problem

__all__ = [
    "COLUMNS",
    "COVARIATES",
    "DTYPES",
    "FIELD_GOAL",
    "FREE_THROW",
    "REQUIRED",
    "empty_record",
    "validate_record",
]

FIELD_GOAL = "field_goal"
FREE_THROW = "free_throw"

#: Canonical columns and their pandas dtypes, in canonical order.
DTYPES: dict[str, str] = {
    "player": "string",
    "player_name": "string",
    "team": "string",
    "season": "string",
    "competition": "string",
    "game": "string",
    "game_date": "datetime64[us]",
    "game_order": "Int64",
    "session": "string",
    "seq": "int64",
    "made": "bool",
    "attempt_type": "string",
    "points": "Int64",
    "distance": "float64",
    "x": "float64",
    "y": "float64",
    "defender_distance": "float64",
    "period": "Int64",
    "clock_s": "float64",
    "score_margin": "float64",
    "home": "boolean",
    "source": "string",
    "source_row": "int64",
}

COLUMNS: tuple[str, ...] = tuple(DTYPES)

#: Columns that must be present and never missing.
REQUIRED: tuple[str, ...] = ("player", "game", "session", "seq", "made", "attempt_type", "source", "source_row")

#: Optional covariates for the difficulty model.
COVARIATES: tuple[str, ...] = (
    "distance",
    "x",
    "y",
    "defender_distance",
    "period",
    "clock_s",
    "score_margin",
    "home",
)


def empty_record() -> pd.DataFrame:
    """Return an empty frame with the canonical columns and dtypes."""
    return pd.DataFrame({name: pd.Series([], dtype=dtype) for name, dtype in DTYPES.items()})


def validate_record(frame: pd.DataFrame, *, path: str = "<record>") -> pd.DataFrame:
    """Check ``frame`` against the canonical contract.

    Missing optional columns are added (all missing); required columns must
    be present and complete; ``seq`` must number each (player, session) from
    0 without gaps or repeats.  Returns a new frame in canonical order with
    canonical dtypes.

    Raises
    ------
    InputError
        Naming the source file, row and column of each problem found.
    """
    problems: list[Problem] = []
    unknown = [c for c in frame.columns if c not in DTYPES]
    if unknown:
        problems.append(Problem(path, None, unknown[0], f"not a canonical column (expected one of {', '.join(COLUMNS)})"))
    missing = [c for c in REQUIRED if c not in frame.columns]
    for name in missing:
        problems.append(Problem(path, None, name, "required canonical column is missing"))
    if problems:
        raise InputError(problems=problems)

    frame = frame.reset_index(drop=True)
    out = {}
    n = len(frame)
    for name, dtype in DTYPES.items():
        if name in frame.columns:
            column = frame[name]
            try:
                out[name] = column.astype(dtype) if str(column.dtype) != dtype else column
            except (TypeError, ValueError) as exc:
                raise InputError(f"cannot hold dtype {dtype}: {exc}", path=path, column=name) from exc
        else:
            out[name] = _missing_column(dtype, n)
    result = pd.DataFrame(out, index=pd.RangeIndex(n))

    rows = result["source_row"].to_numpy() if n else []
    for name in REQUIRED:
        bad = result[name].isna().to_numpy()
        if bad.any():
            first = int(bad.argmax())
            problems.append(Problem(path, int(rows[first]), name, "required value is missing"))
    if problems:
        raise InputError(problems=problems)

    if n:
        wrong_position = _first_bad_seq(result)
        if wrong_position is not None:
            first = result.iloc[wrong_position]
            problems.append(
                Problem(
                    str(first["source"]),
                    int(first["source_row"]),
                    "seq",
                    f"seq must number the attempts of player {first['player']!r} in session "
                    f"{first['session']!r} as 0, 1, 2, ... without gaps or repeats",
                )
            )
        if problems:
            raise InputError(problems=problems)
    return result


def _missing_column(dtype: str, n: int) -> pd.Series:
    """An all-missing column of ``dtype`` (a scalar broadcast: no per-row objects)."""
    index = pd.RangeIndex(n)
    if dtype == "bool":
        return pd.Series(np.zeros(n, dtype=bool), index=index)
    if dtype.startswith("datetime64"):
        return pd.Series(np.full(n, np.datetime64("NaT"), dtype=dtype), index=index)
    if dtype == "float64":
        return pd.Series(np.full(n, np.nan), index=index)
    return pd.Series(pd.NA, index=index, dtype=dtype)


def _first_bad_seq(frame: pd.DataFrame) -> int | None:
    """Position of an attempt whose ``seq`` breaks 0, 1, 2, ... in its session, else None.

    Linear when the frame is already ordered by (player, session, seq), as
    the adapters and the store produce it; otherwise it sorts first.
    """
    player = frame["player"].to_numpy(dtype=object)
    session = frame["session"].to_numpy(dtype=object)
    seq = frame["seq"].to_numpy(dtype=np.int64)
    same = np.zeros(len(frame), dtype=bool)
    same[1:] = (player[1:] == player[:-1]) & (session[1:] == session[:-1])
    expected = np.zeros(len(frame), dtype=np.int64)
    expected[1:] = seq[:-1] + 1
    good = np.where(same, seq == expected, seq == 0)
    if good.all():
        # consecutive runs are right; a session split over two runs would repeat keys
        starts = ~same
        keys = pd.DataFrame({"player": player[starts], "session": session[starts]})
        if not keys.duplicated().any():
            return None
    order = frame.sort_values(["player", "session", "seq"], kind="stable")
    expected_sorted = order.groupby(["player", "session"], sort=False, observed=True).cumcount().to_numpy()
    wrong = order["seq"].to_numpy() != expected_sorted
    if not wrong.any():
        return None
    return int(frame.index.get_loc(order.index[int(wrong.argmax())]))
