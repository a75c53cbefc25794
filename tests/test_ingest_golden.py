"""Every adapter reads its golden files, in every format, to the expected record.

Inputs live in ``tests/data/ingest/<layout>/`` (the CSV is written by hand;
``convert.py`` writes the same table as Parquet, JSON lines and Excel) with
the expected canonical output in ``expected.csv``, also written by hand.
Row numbers are as a person sees them: CSV and Excel count the header as
row 1; JSON lines and Parquet number records from 1.
"""

from __future__ import annotations

import pandas as pd
import pytest

from streakwise.ingest.load import load_file
from streakwise.ingest.profiles import load_profile
from streakwise.ingest.record import COLUMNS, DTYPES

from conftest import DATA

LAYOUTS = {
    "attempts": "attempts",
    "events": "events",
    "drills": "drills",
    "canonical": "canonical",
}
FORMATS = {".csv": 0, ".xlsx": 0, ".jsonl": -1, ".parquet": -1}  # source_row offset from the CSV's


def _expected(layout: str, offset: int) -> pd.DataFrame:
    raw = pd.read_csv(DATA / "ingest" / layout / "expected.csv", dtype=str, keep_default_na=False)
    out = {}
    for name in COLUMNS:
        dtype = DTYPES[name]
        if name not in raw.columns:
            continue
        values = raw[name].replace("", None)
        if dtype == "bool":
            out[name] = values.map({"True": True, "False": False}).astype(bool)
        elif dtype == "boolean":
            out[name] = values.map({"True": True, "False": False, None: pd.NA}).astype("boolean")
        elif dtype.startswith("datetime"):
            out[name] = pd.to_datetime(values).astype(dtype)
        elif dtype in ("int64", "Int64", "float64"):
            out[name] = pd.to_numeric(values).astype(dtype if dtype != "int64" else "int64")
        else:
            out[name] = values.astype(dtype)
    frame = pd.DataFrame(out)
    frame["source_row"] = frame["source_row"] + offset
    return frame


@pytest.mark.parametrize("suffix", list(FORMATS))
@pytest.mark.parametrize("layout", list(LAYOUTS))
def test_golden(layout: str, suffix: str) -> None:
    folder = DATA / "ingest" / layout
    path = folder / f"{LAYOUTS[layout]}{suffix}"
    profile_path = folder / "profile.toml"
    profile = load_profile(profile_path) if profile_path.exists() else None
    loaded = load_file(path, profile)
    expected = _expected(layout, FORMATS[suffix])
    got = loaded.attempts
    assert list(got.columns) == list(COLUMNS)
    assert (got["source"] == path.name).all()
    pd.testing.assert_frame_equal(got[list(expected.columns)].reset_index(drop=True), expected, check_exact=False, rtol=1e-12)
    others = [c for c in COLUMNS if c not in expected.columns and c not in ("source",)]
    for name in others:
        assert got[name].isna().all(), f"{name} should be empty"
    assert loaded.rows_rejected == 0
    assert loaded.rows_read == loaded.rows_stored + loaded.rows_skipped + loaded.rows_rejected


def test_event_log_counts_skipped_kinds() -> None:
    folder = DATA / "ingest" / "events"
    loaded = load_file(folder / "events.csv", load_profile(folder / "profile.toml"))
    assert loaded.skipped_kinds == {"tipoff": 1, "rebound": 1, "foul": 1, "sub in": 1}
    assert (loaded.rows_read, loaded.rows_stored, loaded.rows_skipped) == (11, 7, 4)


def test_drill_rows_count_as_rows_not_attempts() -> None:
    folder = DATA / "ingest" / "drills"
    loaded = load_file(folder / "drills.csv", load_profile(folder / "profile.toml"))
    assert (loaded.rows_read, loaded.rows_stored, len(loaded.attempts)) == (4, 4, 16)
