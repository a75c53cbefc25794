"""Bad input gives exact ``file:row:column: message`` errors; nothing is lost.

The files live in ``tests/data/ingest/bad/``.  Paths in the messages are as
given (the tests run from ``tests/data/ingest``).
"""

from __future__ import annotations

import pytest

from streakwise.ingest.errors import InputError
from streakwise.ingest.load import load_file
from streakwise.ingest.profiles import load_profile

from conftest import DATA

CASES = [
    (
        "misspelled_column.csv",
        None,
        "bad/misspelled_column.csv:1:session: column 'session' not found; did you mean 'sesion'? "
        "(columns in the file: player, sesion, seq, made)",
    ),
    (
        "unknown_outcome.csv",
        None,
        "bad/unknown_outcome.csv:3:made: unknown outcome 'maybe'; expected 'made', 'make', '1', 'true', 'h', 'hit', "
        "'in', 'x', ... for made or 'missed', 'miss', '0', 'false', 'm', 'out', 'o', 'no', ... for missed",
    ),
    ("duplicate_seq.csv", None, "bad/duplicate_seq.csv:4:seq: duplicate attempt: same player, session and seq as row 3"),
    ("header_only.csv", None, "bad/header_only.csv:1: file has a header but no data rows"),
    ("empty.csv", None, "bad/empty.csv: file is empty"),
    (
        "latin1.csv",
        None,
        "bad/latin1.csv:2: not valid UTF-8: byte 0xe9 at offset 27 (the file may be in Latin-1 or Windows-1252; save it as UTF-8)",
    ),
    (
        "utf16.csv",
        None,
        "bad/utf16.csv:1: not valid UTF-8: byte 0xff at offset 0 (the file looks like UTF-16; save it as UTF-8)",
    ),
    (
        "ragged.csv",
        None,
        "bad/ragged.csv:3: expected 4 fields as in the header, found 5\n"
        "bad/ragged.csv:4: expected 4 fields as in the header, found 3",
    ),
    (
        "mixed_types.csv",
        None,
        "bad/mixed_types.csv:3:distance: expected a number, found 'far'\n"
        "bad/mixed_types.csv:4:distance: impossible value -4: must be at least 0",
    ),
    (
        "clock_backwards.csv",
        "clock_profile.toml",
        "bad/clock_backwards.csv:3:left: order goes backwards: period 1 clock 6:10 comes after period 1 clock 5:00 "
        "(row 2) in the same player's session; rows must be in game order\n"
        "bad/clock_backwards.csv:4:left: impossible game clock 13:05: beyond the 12:00 period",
    ),
    (
        "duplicate_event.csv",
        "duplicate_event.toml",
        "bad/duplicate_event.csv:4:no: duplicate event: game 'E1' already has event 2 at row 3",
    ),
    (
        "drill_symbol.csv",
        "drill_profile.toml",
        "bad/drill_symbol.csv:2:results: unknown symbol 'Z' (attempt 4); expected X for a make, O for a miss, "
        "separators ' ,;|/-_.'",
    ),
]


@pytest.fixture(autouse=True)
def _in_data(monkeypatch):
    monkeypatch.chdir(DATA / "ingest")


@pytest.mark.parametrize(("name", "profile", "message"), CASES, ids=[c[0] for c in CASES])
def test_exact_message(name, profile, message):
    with pytest.raises(InputError) as info:
        load_file(f"bad/{name}", load_profile(f"bad/{profile}") if profile else None)
    assert str(info.value) == message
    first = info.value.problems[0]
    assert (info.value.path, info.value.row, info.value.column) == (first.path, first.row, first.column)


def test_error_carries_place():
    with pytest.raises(InputError) as info:
        load_file("bad/mixed_types.csv")
    assert (info.value.path, info.value.row, info.value.column) == ("bad/mixed_types.csv", 3, "distance")
    assert len(info.value.problems) == 2


def test_utf8_with_bom_is_fine():
    loaded = load_file("bad/utf8_bom.csv")
    assert loaded.attempts["player"].tolist() == ["José"]


@pytest.mark.parametrize(("name", "profile"), [(c[0], c[1]) for c in CASES if c[0] not in ("header_only.csv", "empty.csv", "latin1.csv", "utf16.csv", "misspelled_column.csv")])
def test_keep_going_accounts_for_every_row(name, profile):
    loaded = load_file(f"bad/{name}", load_profile(f"bad/{profile}") if profile else None, keep_going=True)
    assert loaded.rows_rejected >= 1
    assert loaded.rows_read == loaded.rows_stored + loaded.rows_skipped + loaded.rows_rejected
    assert set(loaded.rejects["row"].dropna()) <= set(range(1, 100))
    assert not set(loaded.attempts["source_row"]) & set(loaded.rejects["row"].dropna().astype(int))


def test_unknown_extension(tmp_path):
    path = tmp_path / "log.docx"
    path.write_text("x")
    with pytest.raises(InputError, match=r"log.docx: unknown file type '.docx'; expected one of .csv"):
        load_file(path)


def test_missing_file():
    with pytest.raises(InputError, match=r"^bad/nope.csv: file not found$"):
        load_file("bad/nope.csv")


class TestProfileErrors:
    def test_misspelled_key(self, tmp_path):
        path = tmp_path / "p.toml"
        path.write_text('layout = "attempts"\n[columns]\nplyer = "x"\ngame = "g"\nmade = "m"\n')
        with pytest.raises(InputError, match=r"p.toml::columns.plyer: unknown key 'plyer'; did you mean 'player'\?"):
            load_profile(path)

    def test_outcome_in_both_lists(self, tmp_path):
        path = tmp_path / "p.toml"
        path.write_text('[columns]\nplayer = "p"\ngame = "g"\nmade = "m"\n[outcomes]\nmade = ["Y"]\nmissed = ["y"]\n')
        with pytest.raises(InputError, match=r"'y' is listed as both made and missed"):
            load_profile(path)

    def test_bad_toml(self, tmp_path):
        path = tmp_path / "p.toml"
        path.write_text("layout = \n")
        with pytest.raises(InputError, match=r"p.toml: not valid TOML"):
            load_profile(path)
