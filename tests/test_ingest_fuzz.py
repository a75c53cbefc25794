"""Random bytes, random tables and random profiles never raise anything but InputError.

Whatever a user points streakwise at, :func:`load_file` either returns a
:class:`LoadedFile` whose counts add up (rows read = stored + skipped +
rejected) or raises the project's own :class:`InputError`; and
:func:`parse_profile` either returns a profile or raises ``InputError``.
The examples are derandomised so every run tests the same inputs.
"""

from __future__ import annotations

import csv
import io
import json
import math
import warnings
from pathlib import Path

import openpyxl
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

from streakwise.ingest.errors import InputError
from streakwise.ingest.load import LoadedFile, SessionMergeWarning, load_file
from streakwise.ingest.profiles import Profile, load_profile, parse_profile
from streakwise.ingest.record import COLUMNS, DTYPES

from conftest import DATA

FUZZ = settings(
    max_examples=150,
    deadline=None,
    derandomize=True,
    database=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.function_scoped_fixture, HealthCheck.data_too_large],
)

SUFFIXES = [".csv", ".jsonl", ".parquet", ".xlsx"]

# A profile that maps the canonical names, so random tables reach the attempt
# mapping, the clock and the session split; and the golden profiles.
CANONICAL_NAMES = ["player", "session", "seq", "made", "game", "attempt_type", "distance", "period"]
MAPPING_PROFILE = parse_profile(
    """
name = "fuzz"
layout = "attempts"
[columns]
player = "player"
game = "game"
made = "made"
period = "period"
clock = "clock"
attempt_type = "attempt_type"
distance = "distance"
[attempt_types]
field_goal = ["fg", "2pt"]
free_throw = ["ft"]
[order]
by = "clock"
period_seconds = 600
overtime_seconds = 300
""",
    source="fuzz.toml",
)
GOLDEN_PROFILES = {layout: load_profile(DATA / "ingest" / layout / "profile.toml") for layout in ("attempts", "events", "drills")}


def check_loaded(loaded: LoadedFile) -> None:
    """What every successful load promises."""
    assert isinstance(loaded, LoadedFile)
    assert loaded.rows_read == loaded.rows_stored + loaded.rows_skipped + loaded.rows_rejected
    assert min(loaded.rows_read, loaded.rows_stored, loaded.rows_skipped, loaded.rows_rejected) >= 0
    assert list(loaded.attempts.columns) == list(COLUMNS)
    assert {c: str(t) for c, t in loaded.attempts.dtypes.items()} == DTYPES
    if loaded.layout != "drills":
        assert len(loaded.attempts) == loaded.rows_stored
    assert list(loaded.rejects.columns) == ["row", "column", "message"]
    assert loaded.rejects["message"].notna().all()
    if loaded.rows_rejected:
        assert len(loaded.rejects) >= 1


def load_or_refuse(path: Path, profile: Profile | None, **options) -> None:
    """The property: a LoadedFile that adds up, or InputError, nothing else."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", SessionMergeWarning)
        warnings.filterwarnings("error", category=RuntimeWarning, module=r"streakwise\..*")  # e.g. a float cast that wraps
        try:
            loaded = load_file(path, profile, **options)
        except InputError as exc:
            assert exc.problems, "an InputError must carry its problems"
            assert str(exc)
            return
    check_loaded(loaded)


# ------------------------------------------------------------------ bytes


def _golden_bytes(suffix: str) -> bytes:
    return (DATA / "ingest" / "attempts" / f"attempts{suffix}").read_bytes()


@st.composite
def mutated(draw, original: bytes) -> bytes:
    """A real file of the format with a few bytes changed, cut or inserted."""
    data = bytearray(original)
    for _ in range(draw(st.integers(1, 6))):
        if not data:
            break
        position = draw(st.integers(0, len(data) - 1))
        action = draw(st.sampled_from(["flip", "cut", "insert"]))
        if action == "flip":
            data[position] = draw(st.integers(0, 255))
        elif action == "cut":
            del data[position : position + draw(st.integers(1, 64))]
        else:
            data[position:position] = draw(st.binary(min_size=1, max_size=16))
    return bytes(data)


def byte_strategy(suffix: str):
    magic = {".parquet": b"PAR1", ".xlsx": b"PK\x03\x04"}.get(suffix, b"")
    plain = st.binary(max_size=400)
    framed = st.binary(max_size=200).map(lambda b: magic + b + magic)
    return st.one_of(plain, framed, mutated(_golden_bytes(suffix)))


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_random_bytes_load_or_raise_input_error(tmp_path, suffix):
    path = tmp_path / f"random{suffix}"

    @FUZZ
    @given(data=byte_strategy(suffix), keep_going=st.booleans(), with_profile=st.booleans())
    def check(data, keep_going, with_profile):
        path.write_bytes(data)
        load_or_refuse(path, GOLDEN_PROFILES["attempts"] if with_profile else None, keep_going=keep_going)

    check()


# ----------------------------------------------------------------- tables

JUNK = st.one_of(
    st.none(),
    st.text(max_size=8),
    st.integers(-10**12, 10**12),
    st.floats(allow_nan=True, allow_infinity=True),
    st.booleans(),
    st.sampled_from(["", " ", "NaN", "inf", "-0", "1e400", "=1+1", "\ufeff", "a\nb", '"', "2025-13-45"]),
)
RELEVANT = {
    "player": st.sampled_from(["p1", "p2", "p3", "", None]),
    "session": st.sampled_from(["s1", "s2", "g1", None]),
    "game": st.sampled_from(["g1", "g2", None]),
    "seq": st.one_of(st.integers(-1, 6), st.sampled_from([1.5, "2", "x"])),
    "made": st.sampled_from(["1", "0", 1, 0, True, False, "made", "missed", "H", "M", "in", "out", "X", "O", "maybe", None]),
    "attempt_type": st.sampled_from(["fg", "ft", "2pt", "FT", "field_goal", "hook", None]),
    "distance": st.one_of(st.floats(-5, 40), st.sampled_from(["far", -1, None])),
    "period": st.one_of(st.integers(-1, 7), st.sampled_from([1.5, "OT", None])),
    "clock": st.sampled_from(["11:30", "9:59.5", "0:03", "540", 300, 12.5, "10:75", "-1", "1:02:03", "soon", None]),
}


def cell(name: str):
    relevant = RELEVANT.get(name)
    return st.one_of(relevant, relevant, relevant, JUNK) if relevant is not None else JUNK


@st.composite
def tables(draw):
    """(column names, rows) with cells fitting their column most of the time; rows may be ragged."""
    names = draw(
        st.lists(
            st.one_of(st.sampled_from(CANONICAL_NAMES + ["clock"]), st.text(max_size=6)),
            min_size=1,
            max_size=7,
        )
    )
    if draw(st.booleans()):  # often a usable table: the required columns first
        names = ["player", "session", "seq", "made", "game", "period", "clock"][: draw(st.integers(4, 7))] + names[:2]
    n_rows = draw(st.integers(0, 8))
    ragged = draw(st.integers(0, 3)) == 0
    rows = []
    for _ in range(n_rows):
        row = [draw(cell(name)) for name in names]
        if ragged and draw(st.booleans()):
            if draw(st.booleans()):
                row = row[: draw(st.integers(0, len(row)))]
            else:
                row = row + [draw(JUNK) for _ in range(draw(st.integers(1, 2)))]
        rows.append(row)
    return names, rows


def _text(value) -> str:
    if value is None:
        return ""
    if isinstance(value, float) and value.is_integer() and abs(value) < 1e15:
        return str(int(value))
    return str(value)


def write_csv(path: Path, names, rows) -> None:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(names)
    for row in rows:
        writer.writerow([_text(v) for v in row])
    path.write_text(buffer.getvalue(), encoding="utf-8")


def write_jsonl(path: Path, names, rows) -> None:
    lines = []
    for row in rows:
        lines.append(json.dumps(dict(zip(names, row))))  # a short row drops keys; extra cells drop
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def _column(values):
    present = [v for v in values if v is not None]
    kinds = {type(v) for v in present}
    if kinds <= {int} or kinds <= {float} or kinds <= {int, float} or kinds <= {bool} or kinds <= {str}:
        try:
            return pa.array(values)
        except (pa.ArrowException, OverflowError):
            pass
    return pa.array([None if v is None else _text(v) for v in values], type=pa.string())


def write_parquet(path: Path, names, rows) -> None:
    width = len(names)
    square = [(list(r) + [None] * width)[:width] for r in rows]
    arrays = [_column([r[i] for r in square]) for i in range(width)]
    pq.write_table(pa.Table.from_arrays(arrays, names=[str(n) for n in names]), path)


def _excel_cell(value):
    if isinstance(value, str):
        return ILLEGAL_CHARACTERS_RE.sub("", value)
    if isinstance(value, float) and not math.isfinite(value):
        return str(value)
    if isinstance(value, int) and not isinstance(value, bool) and abs(value) > 2**53:
        return str(value)
    return value


def write_excel(path: Path, names, rows) -> None:
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append([_excel_cell(n) for n in names])
    for row in rows:
        sheet.append([_excel_cell(v) for v in row])
    book.save(path)


WRITERS = {".csv": write_csv, ".jsonl": write_jsonl, ".parquet": write_parquet, ".xlsx": write_excel}


@pytest.mark.parametrize("suffix", SUFFIXES)
def test_random_tables_load_or_raise_input_error(tmp_path, suffix):
    path = tmp_path / f"table{suffix}"

    @FUZZ
    @given(
        table=tables(),
        profile=st.sampled_from([None, MAPPING_PROFILE, GOLDEN_PROFILES["drills"]]),
        sessions=st.sampled_from([None, None, "period", "gap", "season"]),
    )
    def check(table, profile, sessions):
        names, rows = table
        WRITERS[suffix](path, names, rows)
        options = {"sessions": sessions, "gap_seconds": 120.0 if sessions == "gap" else None}
        load_or_refuse(path, profile, **options)
        load_or_refuse(path, profile, keep_going=True, **options)

    check()


def test_random_tables_cover_stored_rows(tmp_path):
    """Not vacuous: a share of the random tables is actually stored."""
    names = ["player", "session", "seq", "made"]
    rows = [["p1", "s1", 0, "1"], ["p1", "s1", 1, "maybe"], ["p1", "s1", 2, "0"]]
    for suffix, writer in WRITERS.items():
        path = tmp_path / f"small{suffix}"
        writer(path, names, rows)
        loaded = load_file(path, keep_going=True)
        assert (loaded.rows_read, loaded.rows_stored, loaded.rows_rejected) == (3, 2, 1)


# --------------------------------------------------------------- profiles

PROFILE_KEYS = {
    "": ["name", "layout", "description"],
    "columns": ["player", "game", "made", "period", "clock", "index", "timestamp", "shots", "date", "round", "plyer"],
    "outcomes": ["made", "missed"],
    "order": ["by", "clock", "period_seconds", "overtime_seconds", "regular_periods"],
    "attempt_types": ["field_goal", "free_throw", "default"],
    "events": ["kind", "attempts"],
    "drills": ["made", "missed", "separators", "attempt_type"],
    "sessions": ["split", "gap_seconds"],
    "file": ["delimiter", "sheet"],
    "fixed": ["team", "season", "attempt_type", "coach"],
    "home": ["home", "away"],
}
TOML_SCALARS = st.one_of(
    st.sampled_from(
        ["attempts", "events", "drills", "canonical", "clock", "index", "down", "up", "game", "period", "gap",
         "season", "player", "made", "X", "O", ",", ";", "\t", "\n", '"', "", "field_goal", "shot", "data", "Sheet1",
         "shooter", "gm", "res", "qtr", "clock", "H", "M"]
    ),
    st.text(max_size=6),
    st.integers(-3, 1000),
    st.floats(allow_nan=True, allow_infinity=True),
    st.booleans(),
)
TOML_VALUES = st.recursive(
    TOML_SCALARS,
    lambda inner: st.one_of(
        st.lists(inner, max_size=3), st.dictionaries(st.sampled_from(["type", "made", "points", "shot", "free throw", "x"]), inner, max_size=3)
    ),
    max_leaves=6,
)


def _toml(value) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value)  # JSON strings are TOML basic strings, except a few escapes
    if isinstance(value, list):
        return "[" + ", ".join(_toml(v) for v in value) + "]"
    return "{" + ", ".join(f"{json.dumps(str(k))} = {_toml(v)}" for k, v in value.items()) + "}"


# Valid profiles for each golden file, to be changed a little: most random
# profiles then parse, and the changed key is what gets tested.
BASE_PROFILES = {
    "attempts": {
        "": {"layout": "attempts"},
        "columns": {"player": "shooter", "game": "gm", "made": "res", "period": "qtr", "clock": "clock"},
        "outcomes": {"made": ["H"], "missed": ["M"]},
        "order": {"by": "clock", "period_seconds": 720},
    },
    "events": {
        "": {"layout": "events"},
        "columns": {"player": "actor", "game": "match", "made": "outcome", "index": "no", "period": "per", "clock": "clk"},
        "events": {"kind": "event", "attempts": {"shot": "field_goal", "free throw": "free_throw"}},
    },
    "drills": {
        "": {"layout": "drills"},
        "columns": {"player": "shooter", "date": "day", "shots": "results"},
        "drills": {"made": "X", "missed": "O", "separators": " -"},
    },
}


def _profile_toml(tables: dict) -> str:
    lines = [f"{json.dumps(k)} = {_toml(v)}" for k, v in tables.get("", {}).items()]  # top-level keys first
    for table, entries in tables.items():
        if table:
            lines.append(f"[{table}]")
            lines.extend(f"{json.dumps(str(k))} = {_toml(v)}" for k, v in entries.items())
    return "\n".join(lines) + "\n"


@st.composite
def profile_texts(draw):
    kind = draw(st.integers(0, 5))
    if kind == 0:
        return draw(st.text(max_size=120))
    if kind <= 2:  # random keys and values
        tables = {table: draw(st.dictionaries(st.sampled_from(keys), TOML_VALUES, max_size=4)) for table, keys in PROFILE_KEYS.items() if draw(st.booleans())}
    else:  # a valid profile with a few keys changed, added or removed
        base = draw(st.sampled_from(sorted(BASE_PROFILES)))
        tables = {table: dict(entries) for table, entries in BASE_PROFILES[base].items()}
        for _ in range(draw(st.integers(1, 2))):
            table = draw(st.sampled_from(sorted(PROFILE_KEYS)))
            key = draw(st.sampled_from(PROFILE_KEYS[table]))
            if draw(st.integers(0, 4)) == 0:
                tables.get(table, {}).pop(key, None)
            else:
                tables.setdefault(table, {})[key] = draw(st.one_of(TOML_SCALARS, TOML_VALUES))
    text = _profile_toml(tables)
    if kind == 1:  # damage it a little
        position = draw(st.integers(0, len(text)))
        text = text[:position] + draw(st.text(max_size=4)) + text[position:]
    return text


@settings(FUZZ, max_examples=250)
@given(text=profile_texts(), suffix=st.sampled_from([".csv", ".xlsx"]), keep_going=st.booleans())
def test_random_profiles_parse_or_raise_input_error(text, suffix, keep_going):
    try:
        profile = parse_profile(text, source="random.toml")
    except InputError as exc:
        assert str(exc).startswith("random.toml")
        return
    assert isinstance(profile, Profile)
    # A profile that parses must also be usable (or refused with InputError) on a real file.
    layout = profile.layout if profile.layout in GOLDEN_PROFILES else "attempts"
    load_or_refuse(DATA / "ingest" / layout / f"{layout}{suffix}", profile, keep_going=keep_going)


def test_random_profiles_mostly_parse():
    """Not vacuous: the changed valid profiles often parse and load."""
    parsed = 0
    for text in (_profile_toml(base) for base in BASE_PROFILES.values()):
        parse_profile(text, source="base.toml")
        parsed += 1
    assert parsed == len(BASE_PROFILES)
