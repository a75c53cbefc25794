"""Vectorised parsing of one column of a raw table, recording bad cells.

Each parser takes a pandas Series of whatever the file held (text from CSV,
native values from Parquet, JSON and Excel) and returns canonical values,
adding one problem per bad cell to a :class:`RowProblems`.  No Python loop
runs over the rows except to format messages for bad cells.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from .errors import Problem

__all__ = [
    "RowProblems",
    "parse_clock",
    "parse_date",
    "parse_flag",
    "parse_number",
    "parse_text",
    "parse_timestamp",
]


class RowProblems:
    """Problems found in the rows of one table, kept as arrays.

    Parameters
    ----------
    path : str
        The file, for messages.
    rows : numpy.ndarray
        The source row number of each position of the table.
    """

    def __init__(self, path: str, rows: np.ndarray) -> None:
        self.path = path
        self.rows = np.asarray(rows, dtype=np.int64)
        self._positions: list[np.ndarray] = []
        self._columns: list[np.ndarray] = []
        self._messages: list[np.ndarray] = []

    def add(self, mask, column: str | None, message) -> None:
        """Record ``message`` (text, or one text per flagged row) for rows in ``mask``."""
        mask = np.asarray(mask, dtype=bool)
        if not mask.any():
            return
        positions = np.flatnonzero(mask)
        if isinstance(message, str):
            messages = np.full(len(positions), message, dtype=object)
        else:
            messages = np.asarray(message, dtype=object)
            if len(messages) == len(mask):
                messages = messages[positions]
        self._positions.append(positions)
        self._columns.append(np.full(len(positions), column, dtype=object))
        self._messages.append(messages)

    def bad(self) -> np.ndarray:
        """Boolean mask of rows with at least one problem."""
        mask = np.zeros(len(self.rows), dtype=bool)
        for positions in self._positions:
            mask[positions] = True
        return mask

    def __len__(self) -> int:
        return int(sum(len(p) for p in self._positions))

    def frame(self) -> pd.DataFrame:
        """Problems as a frame (position, row, column, message) in row order."""
        if not self._positions:
            return pd.DataFrame({"position": np.array([], dtype=np.int64), "row": np.array([], dtype=np.int64), "column": [], "message": []})
        positions = np.concatenate(self._positions)
        out = pd.DataFrame(
            {
                "position": positions,
                "row": self.rows[positions],
                "column": np.concatenate(self._columns),
                "message": np.concatenate(self._messages),
            }
        )
        return out.sort_values(["row", "position"], kind="stable").reset_index(drop=True)

    def problems(self) -> list[Problem]:
        table = self.frame()
        return [
            Problem(self.path, int(r), c if isinstance(c, str) else None, str(m))
            for r, c, m in zip(table["row"], table["column"], table["message"], strict=True)
        ]


def _as_text(series: pd.Series) -> pd.Series:
    """Values as stripped text, missing as NA (integral floats print as integers)."""
    if pd.api.types.is_bool_dtype(series.dtype):
        out = series.map({True: "true", False: "false"}).astype("string")
    elif pd.api.types.is_float_dtype(series.dtype):
        values = series.to_numpy(dtype=float, na_value=np.nan)
        integral = np.isfinite(values) & (np.floor(values) == values) & (np.abs(values) < 2**53)
        text = series.astype("string")
        if integral.any():
            text = text.where(~integral, pd.Series(values, index=series.index).where(integral, 0).astype(np.int64).astype("string"))
        out = text
    elif pd.api.types.is_integer_dtype(series.dtype) or pd.api.types.is_string_dtype(series.dtype):
        out = series.astype("string")
    else:  # object: mixed values from JSON or Excel
        out = series.map(_cell_text, na_action="ignore").astype("string")
    out = out.str.strip()
    return out.mask(out == "")


def _cell_text(value) -> str | None:
    if value is None:
        return None
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, float):
        if value != value:
            return None
        if value.is_integer() and abs(value) < 2**53:
            return str(int(value))
    if hasattr(value, "isoformat"):
        return value.isoformat()
    return str(value)


_NUMBER = r"^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$"


def _arrow(text: pd.Series) -> pa.ChunkedArray:
    """The Arrow strings behind a string Series (no copy when Arrow-backed)."""
    array = text.array
    if hasattr(array, "__arrow_array__"):
        converted = array.__arrow_array__()
    else:
        converted = pa.array(text.to_numpy(dtype=object, na_value=None), type=pa.string())
    if isinstance(converted, pa.Array):
        converted = pa.chunked_array([converted], type=converted.type)
    if converted.type != pa.string():
        converted = converted.cast(pa.string())
    return converted


def _floats(strings: pa.ChunkedArray, pattern: str = _NUMBER) -> tuple[np.ndarray, np.ndarray]:
    """(values, valid) for Arrow strings: NaN and False where not a plain number."""
    valid = pc.fill_null(pc.match_substring_regex(strings, pattern), False)
    kept = pc.if_else(valid, strings, pa.scalar(None, pa.string()))
    values = pc.cast(kept, pa.float64()).to_numpy(zero_copy_only=False)
    return np.asarray(values, dtype=np.float64), valid.to_numpy(zero_copy_only=False)


def parse_text(series: pd.Series) -> pd.Series:
    """Text values (string dtype), missing as NA."""
    return _as_text(series)


def parse_number(
    series: pd.Series,
    column: str,
    problems: RowProblems,
    *,
    integer: bool = False,
    minimum: float | None = None,
    maximum: float | None = None,
    what: str = "a number",
) -> pd.Series:
    """Numbers as float64 (or Int64 with ``integer``); NA where missing or bad."""
    if pd.api.types.is_bool_dtype(series.dtype):
        problems.add(series.notna().to_numpy(), column, f"expected {what}, found true/false")
        values = pd.Series(np.nan, index=series.index)
    elif pd.api.types.is_numeric_dtype(series.dtype):
        values = series.astype("float64")
    else:
        text = _as_text(series)
        numbers, valid = _floats(_arrow(text))
        bad = text.notna().to_numpy() & ~valid
        if bad.any():
            problems.add(bad, column, [f"expected {what}, found {v!r}" for v in text[bad]])
        values = pd.Series(numbers, index=series.index, dtype="float64")
    array = values.to_numpy(dtype=float, na_value=np.nan)
    infinite = np.isinf(array)
    if infinite.any():
        problems.add(infinite, column, f"expected {what}, found an infinite value")
        array = np.where(infinite, np.nan, array)
    if integer:
        fractional = np.isfinite(array) & (np.floor(array) != array)
        if fractional.any():
            problems.add(fractional, column, [f"expected a whole number, found {v:g}" for v in array[fractional]])
            array = np.where(fractional, np.nan, array)
        huge = np.isfinite(array) & (np.abs(array) >= 2.0**63)  # beyond int64: the cast below would wrap it
        if huge.any():
            problems.add(huge, column, [f"impossible value {v:g}: too large for a whole number" for v in array[huge]])
            array = np.where(huge, np.nan, array)
    if minimum is not None:
        low = np.isfinite(array) & (array < minimum)
        if low.any():
            problems.add(low, column, [f"impossible value {v:g}: must be at least {minimum:g}" for v in array[low]])
            array = np.where(low, np.nan, array)
    if maximum is not None:
        high = np.isfinite(array) & (array > maximum)
        if high.any():
            problems.add(high, column, [f"impossible value {v:g}: must be at most {maximum:g}" for v in array[high]])
            array = np.where(high, np.nan, array)
    if integer:
        out = pd.Series(pd.array(np.where(np.isnan(array), 0, array).astype(np.int64), dtype="Int64"), index=series.index)
        return out.mask(np.isnan(array))
    return pd.Series(array, index=series.index, dtype="float64")


def parse_flag(
    series: pd.Series,
    column: str,
    problems: RowProblems,
    *,
    true_words: tuple[str, ...],
    false_words: tuple[str, ...],
    what: str,
    true_label: str = "made",
    false_label: str = "missed",
) -> pd.Series:
    """Two-valued field (an outcome, home/away) as nullable boolean."""
    if pd.api.types.is_bool_dtype(series.dtype):
        return series.astype("boolean")
    text = _as_text(series).str.lower()
    lookup = {w: True for w in true_words} | {w: False for w in false_words}
    mapped = text.map(lookup)
    bad = (text.notna() & mapped.isna()).to_numpy()
    if bad.any():
        expected = f"{_listing(true_words)} for {true_label} or {_listing(false_words)} for {false_label}"
        originals = _as_text(series)[bad]
        problems.add(bad, column, [f"unknown {what} {v!r}; expected {expected}" for v in originals])
    return mapped.astype("boolean")


def _listing(words: tuple[str, ...], limit: int = 8) -> str:
    shown = ", ".join(repr(w) for w in words[:limit])
    return shown + (", ..." if len(words) > limit else "")


_CLOCK = r"^(?:(?P<h>\d+):)?(?P<m>\d+):(?P<s>\d{1,2}(?:\.\d*)?)$"


def parse_clock(series: pd.Series, column: str, problems: RowProblems) -> pd.Series:
    """Game clock as seconds: ``M:SS``, ``M:SS.s``, ``H:MM:SS`` or plain seconds."""
    if pd.api.types.is_numeric_dtype(series.dtype) and not pd.api.types.is_bool_dtype(series.dtype):
        return parse_number(series, column, problems, minimum=0, what="a game clock")
    text = _as_text(series)
    strings = _arrow(text)
    parts = pc.extract_regex(strings, _CLOCK)
    matched = parts.is_valid().to_numpy(zero_copy_only=False)
    if isinstance(parts, pa.ChunkedArray):
        parts = parts.combine_chunks()
    if len(parts):
        fields = {name: parts.field(name) for name in ("h", "m", "s")}
        def number(field: pa.Array) -> np.ndarray:
            # entries of unmatched rows (and an absent hour) hold "": read as 0, masked below
            filled = pc.if_else(pc.fill_null(pc.equal(field, ""), True), "0", field)
            return np.asarray(pc.cast(filled, pa.float64()).to_numpy(zero_copy_only=False), float)

        hours, minutes, seconds = (number(fields[name]) for name in ("h", "m", "s"))
        clocked = hours * 3600 + minutes * 60 + seconds
    else:
        seconds = clocked = np.zeros(0)
    plain, plain_valid = _floats(strings)
    array = np.where(matched, clocked, np.where(plain_valid, plain, np.nan))
    bad_seconds = matched & (np.nan_to_num(np.asarray(seconds, float), nan=0.0) >= 60)
    bad = (text.notna().to_numpy() & ~matched & ~plain_valid) | bad_seconds
    values = pd.Series(array, index=series.index, dtype="float64")
    if bad.any():
        problems.add(bad, column, [f"expected a game clock like 7:45, 7:45.3 or seconds, found {v!r}" for v in text[bad]])
        values = values.where(~bad)
    negative = (values < 0).fillna(False).to_numpy()
    if negative.any():
        problems.add(negative, column, "impossible game clock: negative")
        values = values.where(~negative)
    return values


def parse_timestamp(series: pd.Series, column: str, problems: RowProblems) -> pd.Series:
    """Date-times (ISO 8601 text or native), as datetime64[us]."""
    if pd.api.types.is_datetime64_any_dtype(series.dtype):
        values = series
        if getattr(values.dt, "tz", None) is not None:
            values = values.dt.tz_convert("UTC").dt.tz_localize(None)
        return values.astype("datetime64[us]")
    text = _as_text(series)
    values = pd.to_datetime(text, errors="coerce", format="ISO8601", utc=True)
    bad = (text.notna() & values.isna()).to_numpy()
    if bad.any():
        problems.add(bad, column, [f"expected a date-time like 2025-01-31T19:05:00, found {v!r}" for v in text[bad]])
    return values.dt.tz_localize(None).astype("datetime64[us]")


def parse_date(series: pd.Series, column: str, problems: RowProblems) -> pd.Series:
    """Dates (time of day dropped), as datetime64[us]."""
    return parse_timestamp(series, column, problems).dt.normalize()
