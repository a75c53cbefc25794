"""Read a user's file (CSV, Parquet, JSON lines, Excel) into a raw table.

A raw table keeps the file's own columns and values (text from CSV, native
types from Parquet, JSON and Excel) together with the row number of every
record as a person sees it (:mod:`streakwise.ingest.errors` explains the
numbering).  Rows that cannot be read at all (a CSV line with too many or too
few fields, a JSON line that is not an object) are kept aside as problems,
never dropped silently.  Every failure to read becomes an
:class:`~streakwise.ingest.errors.InputError`.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import math
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from .errors import InputError, Problem

__all__ = ["FORMATS", "RawTable", "detect_format", "read_table"]

#: File extensions each format is read from.
FORMATS: dict[str, tuple[str, ...]] = {
    "csv": (".csv", ".txt", ".tsv"),
    "parquet": (".parquet", ".pq"),
    "jsonl": (".jsonl", ".ndjson", ".json"),
    "excel": (".xlsx", ".xlsm"),
}

_BOM = b"\xef\xbb\xbf"


@dataclass(frozen=True)
class RawTable:
    """A file's records, before any mapping to the canonical record.

    Attributes
    ----------
    path : str
        The path as given.
    format : str
        One of :data:`FORMATS`.
    frame : pandas.DataFrame
        One row per readable record, the file's own column names.
    rows : numpy.ndarray
        Row number (as a person sees it) of each record of ``frame``.
    problems : tuple of Problem
        Records that could not be read (they are not in ``frame``).
    content_sha256 : str
        Hash of the file's bytes.
    header_row : int or None
        Row of the header (CSV: 1; Excel: the first row that is not blank);
        ``None`` where the format has no header row.
    """

    path: str
    format: str
    frame: pd.DataFrame
    rows: np.ndarray
    problems: tuple[Problem, ...] = field(default=())
    content_sha256: str = ""
    header_row: int | None = None

    @property
    def records(self) -> int:
        """Records read, including the unreadable ones."""
        return len(self.frame) + len(self.problems)


def detect_format(path: str | Path) -> str:
    """Return the format of ``path`` from its extension."""
    suffix = Path(path).suffix.lower()
    for name, suffixes in FORMATS.items():
        if suffix in suffixes:
            return name
    known = ", ".join(s for group in FORMATS.values() for s in group)
    raise InputError(f"unknown file type {suffix or '(no extension)'!r}; expected one of {known}", path=str(path))


def read_table(path: str | Path, *, delimiter: str | None = None, sheet: str | None = None) -> RawTable:
    """Read ``path`` into a :class:`RawTable`, choosing the reader by extension.

    Parameters
    ----------
    path : str or Path
        The file.
    delimiter : str, optional
        CSV field separator; default ``,`` (``\\t`` for ``.tsv``).
    sheet : str, optional
        Excel sheet name; default the first sheet.

    Raises
    ------
    InputError
        When the file is missing, empty, header-only, not UTF-8, or cannot be
        parsed at all.
    """
    text_path = str(path)
    fmt = detect_format(path)
    try:
        data = Path(path).read_bytes()
    except FileNotFoundError:
        raise InputError("file not found", path=text_path) from None
    except IsADirectoryError:
        raise InputError("is a directory, expected a file", path=text_path) from None
    except OSError as exc:
        raise InputError(f"cannot read file: {exc.strerror or exc}", path=text_path) from None
    if not data.strip():
        raise InputError("file is empty", path=text_path)
    digest = hashlib.sha256(data).hexdigest()
    if fmt == "csv":
        if delimiter is None:
            delimiter = "\t" if text_path.lower().endswith(".tsv") else ","
        table = _read_csv(text_path, data, delimiter)
    elif fmt == "jsonl":
        table = _read_jsonl(text_path, data)
    elif fmt == "parquet":
        table = _read_parquet(text_path, data)
    else:
        table = _read_excel(text_path, data, sheet)
    frame, rows, problems, *header = table
    header_row = header[0] if header else (1 if fmt == "csv" else None)
    if len(frame) == 0 and not problems:
        raise InputError("file has a header but no data rows", path=text_path, row=header_row)
    frame = frame.reset_index(drop=True)
    return RawTable(text_path, fmt, frame, np.asarray(rows, dtype=np.int64), tuple(problems), digest, header_row)


# --------------------------------------------------------------------- text


def _decode(path: str, data: bytes) -> str:
    """Decode UTF-8 (with or without a byte-order mark) or explain the failure."""
    if data.startswith(_BOM):
        data = data[len(_BOM) :]
    try:
        return data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        bad = data[exc.start : exc.start + 1].hex()
        hint = ""
        if data.startswith((b"\xff\xfe", b"\xfe\xff")):
            hint = " (the file looks like UTF-16; save it as UTF-8)"
        else:
            hint = " (the file may be in Latin-1 or Windows-1252; save it as UTF-8)"
        raise InputError(
            f"not valid UTF-8: byte 0x{bad} at offset {exc.start}{hint}",
            path=path,
            row=line,
        ) from None


def _read_csv(path: str, data: bytes, delimiter: str):
    import pyarrow as pa
    import pyarrow.csv as pacsv

    text = _decode(path, data)
    if len(delimiter) != 1:
        raise InputError(f"CSV delimiter must be one character (got {delimiter!r})", path=path)
    # The first record, read as the CSV reader below reads it (a lone \r ends a
    # line too; a quoted name may span lines), from the start of the text only.
    end = text.find("\n")
    head = text[: end + 1] if end >= 0 and '"' not in text[:end] and "\r" not in text[:end] else text[: 1 << 20]
    try:
        header = next(csv.reader(io.StringIO(head, newline=""), delimiter=delimiter), [])
    except csv.Error as exc:
        raise InputError(f"cannot parse the header as CSV: {exc}", path=path, row=1) from None
    names = [h.strip() for h in header]
    if not any(names):
        raise InputError("the first line should be a header naming the columns, but it is empty", path=path, row=1)
    seen: dict[str, int] = {}
    for position, name in enumerate(names, start=1):
        if not name:
            raise InputError(f"header field {position} is empty; every column needs a name", path=path, row=1)
        if name in seen:
            raise InputError(f"column name {name!r} appears twice in the header (fields {seen[name]} and {position})", path=path, row=1, column=name)
        seen[name] = position

    invalid: list[tuple[int | None, int, int, str]] = []

    def on_invalid(row) -> str:
        invalid.append((row.number, row.expected_columns, row.actual_columns, row.text))
        return "skip"

    has_quotes = '"' in text
    body = text.encode("utf-8")
    try:
        table = pacsv.read_csv(
            io.BytesIO(body),
            read_options=pacsv.ReadOptions(use_threads=False, column_names=names, skip_rows=1, block_size=1 << 24),
            parse_options=pacsv.ParseOptions(
                delimiter=delimiter,
                invalid_row_handler=on_invalid,
                newlines_in_values=has_quotes,
                ignore_empty_lines=False,
            ),
            convert_options=pacsv.ConvertOptions(
                column_types={name: pa.string() for name in names},
                strings_can_be_null=False,
                quoted_strings_can_be_null=False,
            ),
        )
    except (pa.ArrowInvalid, pa.ArrowException, ValueError) as exc:
        raise InputError(f"cannot parse as CSV: {_arrow_message(exc)}", path=path) from None

    frame = table.to_pandas()
    frame.columns = names
    n_lines = text.count("\n") + (0 if text.endswith("\n") else 1)
    # pyarrow numbers records from the header (1), which equals the line
    # number unless a quoted value spans lines.
    multiline = has_quotes and any(frame[c].str.contains("\n", regex=False).any() for c in names)
    if multiline:
        starts = _record_start_lines(text, delimiter)
    else:
        starts = np.arange(1, n_lines + 1, dtype=np.int64)
    problems: list[Problem] = []
    bad_records: list[int] = []
    for number, expected, actual, raw in invalid:
        record = number if number is not None else -1
        bad_records.append(record)
        if raw.strip() == "":
            continue  # a blank line: no data, nothing to report
        row = int(starts[record - 1]) if 0 < record <= len(starts) else record
        problems.append(
            Problem(path, row, None, f"expected {expected} fields as in the header, found {actual}")
        )
    good = _good_records(len(starts), bad_records)
    if len(good) != len(frame):  # numbering not as expected: fall back to a full scan
        starts = _record_start_lines(text, delimiter)
        good = _good_records(len(starts), bad_records)
        if len(good) != len(frame):
            good = np.arange(2, len(frame) + 2)
    rows = starts[good - 1] if len(good) and good.max() <= len(starts) else good
    return frame, rows, problems


def _good_records(records: int, bad: list[int]) -> np.ndarray:
    """Record numbers 2..records (1 is the header) that are not in ``bad``."""
    keep = np.ones(records + 1, dtype=bool)
    keep[:2] = False
    bad_array = np.asarray(bad, dtype=np.int64)
    bad_array = bad_array[(bad_array >= 0) & (bad_array <= records)]
    keep[bad_array] = False
    return np.flatnonzero(keep)


def _record_start_lines(text: str, delimiter: str) -> np.ndarray:
    """Line number on which each CSV record starts (slow path for quoted newlines)."""
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    starts = []
    previous_end = 0
    try:
        for _ in reader:
            starts.append(previous_end + 1)
            previous_end = reader.line_num
    except csv.Error:
        pass
    return np.asarray(starts, dtype=np.int64)


def _arrow_message(exc: Exception) -> str:
    text = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
    return text.replace("CSV parse error: ", "")


# -------------------------------------------------------------- JSON lines


def _read_jsonl(path: str, data: bytes):
    text = _decode(path, data)
    lines = text.split("\n")
    records: list[dict] = []
    rows: list[int] = []
    problems: list[Problem] = []
    for number, line in enumerate(lines, start=1):
        stripped = line.strip()
        if not stripped:
            continue
        try:
            value = json.loads(stripped)
        except (json.JSONDecodeError, RecursionError) as exc:
            message = exc.msg if isinstance(exc, json.JSONDecodeError) else "nested too deeply"
            problems.append(Problem(path, number, None, f"not valid JSON: {message}"))
            continue
        if not isinstance(value, dict):
            problems.append(Problem(path, number, None, f"expected a JSON object per line, found {type(value).__name__}"))
            continue
        bad_key = next((k for k, v in value.items() if isinstance(v, (dict, list))), None)
        if bad_key is not None:
            problems.append(Problem(path, number, bad_key, "expected a plain value, found a nested object or list"))
            continue
        records.append(value)
        rows.append(number)
    if not records and not problems:
        raise InputError("file has no JSON records", path=path)
    frame = pd.DataFrame.from_records(records) if records else pd.DataFrame()
    frame = frame.astype(object).where(frame.notna(), None) if len(frame) else frame
    return frame, rows, problems


# ----------------------------------------------------------------- Parquet


def _read_parquet(path: str, data: bytes):
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        table = pq.read_table(io.BytesIO(data))
        table.validate(full=True)  # Parquet text is not checked on reading: invalid UTF-8 fails later otherwise
    except (pa.ArrowException, OSError, ValueError) as exc:
        raise InputError(f"cannot read as Parquet: {_arrow_message(exc)}", path=path) from None
    for position, column in enumerate(table.schema):
        if pa.types.is_nested(column.type):
            raise InputError(f"column holds nested values ({column.type}); expected plain values", path=path, column=column.name)
    try:
        frame = table.to_pandas()
    except (pa.ArrowException, ValueError, OverflowError) as exc:
        raise InputError(f"cannot convert Parquet data: {_arrow_message(exc)}", path=path) from None
    frame.columns = [str(c) for c in frame.columns]
    return frame, np.arange(1, len(frame) + 1), []


# ------------------------------------------------------------------- Excel


def _read_excel(path: str, data: bytes, sheet: str | None):
    import openpyxl

    try:
        book = openpyxl.load_workbook(io.BytesIO(data), read_only=True, data_only=True)
    except (zipfile.BadZipFile, KeyError, ValueError, OSError, TypeError, IndexError, AttributeError) as exc:
        raise InputError(f"cannot open as an Excel workbook: {exc}", path=path) from None
    except Exception as exc:  # openpyxl raises many kinds on corrupt files
        raise InputError(f"cannot open as an Excel workbook: {type(exc).__name__}: {exc}", path=path) from None
    try:
        if sheet is None:
            ws = book.worksheets[0]
        elif sheet in book.sheetnames:
            ws = book[sheet]
        else:
            raise InputError(f"no sheet named {sheet!r} (sheets: {', '.join(book.sheetnames)})", path=path)
        try:
            numbered = [(n, row) for n, row in enumerate(ws.iter_rows(min_row=1, values_only=True), start=1)]
        except Exception as exc:
            raise InputError(f"cannot read sheet {ws.title!r}: {type(exc).__name__}: {exc}", path=path) from None
    finally:
        book.close()
    numbered = [(n, row) for n, row in numbered if not all(_blank(v) for v in row)]
    if not numbered:
        raise InputError("sheet is empty", path=path)
    header_number, header = numbered[0]
    all_rows = numbered
    names = []
    width = len(header)
    while width and _blank(header[width - 1]):
        width -= 1
    for position in range(width):
        value = header[position]
        if _blank(value):
            raise InputError(f"header cell {position + 1} is empty; every column needs a name", path=path, row=header_number)
        names.append(str(value).strip())
    duplicate = next((n for n in names if names.count(n) > 1), None)
    if duplicate:
        raise InputError(f"column name {duplicate!r} appears twice in the header", path=path, row=header_number, column=duplicate)
    records, rows, problems = [], [], []
    for number, values in all_rows[1:]:
        values = list(values)
        if all(_blank(v) for v in values):
            continue
        extra = [v for v in values[width:] if not _blank(v)]
        if extra:
            problems.append(Problem(path, number, None, f"expected {width} cells as in the header, found values beyond column {width}"))
            continue
        values = (values + [None] * width)[:width]
        records.append([_excel_value(v) for v in values])
        rows.append(number)
    frame = pd.DataFrame(records, columns=names, dtype=object) if records else pd.DataFrame(columns=names)
    return frame, rows, problems, header_number


def _blank(value) -> bool:
    return value is None or (isinstance(value, str) and value.strip() == "") or (isinstance(value, float) and math.isnan(value))


def _excel_value(value):
    if isinstance(value, float) and value.is_integer():
        return int(value)
    if isinstance(value, str):
        return value
    return value
