"""The ``ingest``, ``players`` and ``export`` commands as a user runs them.

Most tests call :func:`streakwise.cli.main` in this process and read what it
printed; a few run the real ``python -m streakwise.cli`` and the installed
``streakwise`` script.  Expected numbers are counted by hand from the golden
CSV files in ``tests/data/ingest/``.
"""

from __future__ import annotations

import csv
import json
import os
import selectors
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import duckdb
import pandas as pd
import pytest

from streakwise.cli import data_commands, main
from streakwise.ingest.store import Store

from conftest import DATA

INGEST = DATA / "ingest"
FORMATS = (".csv", ".jsonl", ".parquet", ".xlsx")

# Counted by hand from each layout's CSV: (rows read, rows stored, skipped,
# attempts, players, sessions) and per player (attempts, makes, sessions).
GOLDEN = {
    "attempts": {
        "counts": (9, 9, 0, 9, 2, 3),
        # p1: rows 2 H, 4 M, 5 FT H, 6 FT M, 7 H in A1; row 10 H in B2.  p2: M, H, M in A1.
        "players": {"p1": (6, 4, 2), "p2": (3, 1, 1)},
    },
    "events": {
        "counts": (11, 7, 4, 7, 2, 3),
        # r1: shot made, layup good (made), free throw made, free throw missed in E1; shot missed in E2.
        # r2: shot missed, shot made in E1.  tipoff, rebound, foul and sub in are skipped.
        "players": {"r1": (5, 3, 2), "r2": (2, 1, 1)},
    },
    "drills": {
        "counts": (4, 4, 0, 16, 2, 4),
        # d1: XXO-OX (3 of 5), OOOX (1 of 4), XXXX (4 of 4); d2: x x o (2 of 3).
        "players": {"d1": (13, 8, 3), "d2": (3, 2, 1)},
    },
    "canonical": {
        "counts": (4, 4, 0, 4, 2, 3),
        # c1: 1, 0 in s1 and true in s2; c2: false in s1.
        "players": {"c1": (3, 2, 2), "c2": (1, 0, 1)},
    },
}


# -- helpers ---------------------------------------------------------------------------


def run(capsys, *argv: str) -> tuple[int, str, str]:
    """Run the CLI in this process; return (exit code, stdout, stderr)."""
    capsys.readouterr()
    try:
        code = main([str(a) for a in argv])
    except SystemExit as exc:  # argparse refuses bad options this way
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


def golden(layout: str, suffix: str = ".csv") -> tuple[Path, list[str]]:
    """The golden file and the --profile option it needs."""
    folder = INGEST / layout
    profile = folder / "profile.toml"
    return folder / f"{layout}{suffix}", (["--profile", str(profile)] if profile.exists() else [])


def contents(store: Path) -> dict | None:
    """Every table's rows (None when there is no store file); compare contents, not bytes."""
    if not store.exists():
        return None
    con = duckdb.connect(str(store), read_only=True)
    try:
        names = [r[0] for r in con.execute("SELECT table_name FROM duckdb_tables() ORDER BY table_name").fetchall()]
        return {name: con.execute(f"SELECT * FROM {name} ORDER BY ALL").fetchall() for name in names}
    finally:
        con.close()


def players_json(capsys, store: Path, *options: str) -> dict[str, dict]:
    code, out, err = run(capsys, "players", "--json", "--store", store, *options)
    assert code == 0, err
    return {row["player"]: row for row in json.loads(out)}


def values(frame: pd.DataFrame) -> list[list]:
    """Rows as plain values, every kind of missing value as None."""
    return [[None if pd.isna(v) else v for v in row] for row in frame.astype(object).itertuples(index=False)]


def write_canonical(path: Path, rows: list[dict]) -> Path:
    pd.DataFrame(rows).to_csv(path, index=False)
    return path


@pytest.fixture
def store(tmp_path) -> Path:
    return tmp_path / "league.duckdb"


@pytest.fixture
def filled(capsys, store) -> Path:
    """A store holding the golden attempt table."""
    path, profile = golden("attempts")
    code, _, err = run(capsys, "ingest", path, *profile, "--store", store)
    assert code == 0, err
    return store


# -- ingest of the golden layouts ------------------------------------------------------


class TestIngestGolden:
    @pytest.mark.parametrize("suffix", FORMATS)
    @pytest.mark.parametrize("layout", list(GOLDEN))
    def test_accounting_line_and_players(self, capsys, store, layout, suffix):
        path, profile = golden(layout, suffix)
        code, out, err = run(capsys, "ingest", path, *profile, "--store", store)
        assert code == 0, err
        read, stored, skipped, attempts, players, sessions = GOLDEN[layout]["counts"]
        assert out.splitlines()[0] == (
            f"{path}: stored: {read} rows read = {stored} stored + {skipped} skipped + 0 rejected; "
            f"{attempts} attempts by {players} players in {sessions} sessions"
        )
        rows = players_json(capsys, store)
        assert set(rows) == set(GOLDEN[layout]["players"])
        for player, (n, makes, n_sessions) in GOLDEN[layout]["players"].items():
            row = rows[player]
            assert {"player", "attempts", "sessions", "make_rate"} <= set(row)
            assert (row["attempts"], row["makes"], row["sessions"]) == (n, makes, n_sessions)
            assert row["make_rate"] == pytest.approx(makes / n)

    def test_event_log_names_the_skipped_kinds(self, capsys, store):
        path, profile = golden("events")
        code, out, _ = run(capsys, "ingest", path, *profile, "--store", store)
        assert code == 0
        skipped = out.splitlines()[1]
        assert skipped.startswith("  skipped events: ")
        assert sorted(skipped.split(": ", 1)[1].split(", ")) == ["foul 1", "rebound 1", "sub in 1", "tipoff 1"]

    def test_all_layouts_in_one_store(self, capsys, store):
        for layout in GOLDEN:
            path, profile = golden(layout)
            assert run(capsys, "ingest", path, *profile, "--store", store)[0] == 0
        rows = players_json(capsys, store)
        expected = {p: v for layout in GOLDEN.values() for p, v in layout["players"].items()}
        assert {p: (r["attempts"], r["makes"], r["sessions"]) for p, r in rows.items()} == expected
        with Store(store, read_only=True) as opened:
            sources = opened.sources()
        assert sources["layout"].tolist() == ["attempts", "events", "drills", "canonical"]
        assert (sources["rows_read"] == sources["rows_stored"] + sources["skipped"] + sources["rejected"]).all()

    def test_json_summary(self, capsys, store):
        path, profile = golden("events")
        code, out, _ = run(capsys, "ingest", path, *profile, "--store", store, "--json")
        assert code == 0
        (summary,) = json.loads(out)
        assert summary["status"] == "stored"
        assert (summary["rows_read"], summary["rows_stored"], summary["rows_skipped"], summary["rows_rejected"]) == (11, 7, 4, 0)
        assert summary["skipped_kinds"] == {"tipoff": 1, "rebound": 1, "foul": 1, "sub in": 1}

    def test_readable_players_table(self, capsys, filled):
        code, out, _ = run(capsys, "players", "--store", filled)
        assert code == 0
        lines = out.splitlines()
        assert lines[0].split() == ["player", "name", "team", "attempts", "makes", "sessions", "make", "rate"]
        assert lines[2].split() == ["p1", "-", "-", "6", "4", "2", "0.667"]
        assert lines[3].split() == ["p2", "-", "-", "3", "1", "1", "0.333"]

    def test_check_stores_nothing(self, capsys, store):
        path, profile = golden("attempts")
        code, out, _ = run(capsys, "ingest", path, *profile, "--store", store, "--check")
        assert code == 0
        assert "checked (not stored): 9 rows read" in out
        assert not store.exists()


# -- players filters -------------------------------------------------------------------


class TestPlayersFilters:
    ROWS = [
        {"player": "a", "session": "g1", "seq": 0, "made": 1, "season": "2024", "team": "Owls", "attempt_type": "field_goal"},
        {"player": "a", "session": "g1", "seq": 1, "made": 0, "season": "2024", "team": "Owls", "attempt_type": "free_throw"},
        {"player": "a", "session": "g2", "seq": 0, "made": 1, "season": "2025", "team": "Owls", "attempt_type": "field_goal"},
        {"player": "b", "session": "g1", "seq": 0, "made": 0, "season": "2024", "team": "Hares", "attempt_type": "field_goal"},
        {"player": "b", "session": "g3", "seq": 0, "made": 1, "season": "2025", "team": "Hares", "attempt_type": "field_goal"},
        {"player": "b", "session": "g3", "seq": 1, "made": 1, "season": "2025", "team": "Hares", "attempt_type": "free_throw"},
    ]

    @pytest.fixture
    def league(self, capsys, tmp_path, store):
        path = write_canonical(tmp_path / "league.csv", self.ROWS)
        assert run(capsys, "ingest", path, "--store", store)[0] == 0
        return store

    @pytest.mark.parametrize(
        ("options", "expected"),
        [
            ([], {"a": (3, 2, 2), "b": (3, 2, 2)}),
            (["--season", "2024"], {"a": (2, 1, 1), "b": (1, 0, 1)}),
            (["--team", "Hares"], {"b": (3, 2, 2)}),
            (["--attempt-type", "free_throw"], {"a": (1, 0, 1), "b": (1, 1, 1)}),
            (["--season", "2025", "--attempt-type", "field_goal"], {"a": (1, 1, 1), "b": (1, 1, 1)}),
            (["--team", "Owls", "--season", "2030"], {}),
        ],
    )
    def test_filters(self, capsys, league, options, expected):
        rows = players_json(capsys, league, *options)
        assert {p: (r["attempts"], r["makes"], r["sessions"]) for p, r in rows.items()} == expected
        for player, (n, makes, _) in expected.items():
            assert rows[player]["make_rate"] == pytest.approx(makes / n)

    def test_team_is_shown(self, capsys, league):
        rows = players_json(capsys, league)
        assert (rows["a"]["team"], rows["b"]["team"]) == ("Owls", "Hares")

    def test_no_match_in_a_table(self, capsys, league):
        code, out, _ = run(capsys, "players", "--store", league, "--team", "Nobody")
        assert (code, out.strip()) == (0, "(no players match)")

    def test_missing_store_is_bad_input(self, capsys, tmp_path):
        code, out, err = run(capsys, "players", "--store", tmp_path / "none.duckdb")
        assert code == 2
        assert "store not found" in err
        assert not (tmp_path / "none.duckdb").exists()


# -- refused files ---------------------------------------------------------------------


class TestRefused:
    @pytest.fixture(autouse=True)
    def _in_data(self, monkeypatch):
        monkeypatch.chdir(INGEST)  # paths in messages are as given: bad/...

    @pytest.mark.parametrize(
        ("name", "profile", "lines"),
        [
            (
                "mixed_types.csv",
                None,
                [
                    "bad/mixed_types.csv:3:distance: expected a number, found 'far'",
                    "bad/mixed_types.csv:4:distance: impossible value -4: must be at least 0",
                ],
            ),
            ("duplicate_seq.csv", None, ["bad/duplicate_seq.csv:4:seq: duplicate attempt: same player, session and seq as row 3"]),
            ("header_only.csv", None, ["bad/header_only.csv:1: file has a header but no data rows"]),
            (
                "duplicate_event.csv",
                "bad/duplicate_event.toml",
                ["bad/duplicate_event.csv:4:no: duplicate event: game 'E1' already has event 2 at row 3"],
            ),
        ],
    )
    def test_exit_2_exact_message_store_unchanged(self, capsys, filled, name, profile, lines):
        before = contents(filled)
        options = ["--profile", profile] if profile else []
        code, out, err = run(capsys, "ingest", f"bad/{name}", *options, "--store", filled)
        assert code == 2
        assert out == ""
        err_lines = err.splitlines()
        assert err_lines[0] == f"error: {lines[0]}"
        assert err_lines[1 : len(lines)] == lines[1:]
        assert "nothing was stored" in err
        assert "Traceback" not in err
        assert contents(filled) == before

    def test_refused_file_creates_no_store(self, capsys, tmp_path):
        store = tmp_path / "new.duckdb"
        code, _, _ = run(capsys, "ingest", "bad/mixed_types.csv", "--store", store)
        assert code == 2
        assert not store.exists()

    def test_one_bad_file_refuses_the_batch(self, capsys, filled):
        before = contents(filled)
        good, _ = golden("canonical")
        code, out, err = run(capsys, "ingest", good, "bad/unknown_outcome.csv", "bad/ragged.csv", "--store", filled)
        assert code == 2
        assert "bad/unknown_outcome.csv:3:made: unknown outcome 'maybe'" in err
        assert "bad/ragged.csv:3: expected 4 fields as in the header, found 5" in err
        assert "refused 2 of 3 files" in err
        assert contents(filled) == before

    def test_unknown_profile(self, capsys, store):
        code, _, err = run(capsys, "ingest", "bad/ragged.csv", "--profile", "no-such-profile", "--store", store)
        assert code == 2
        assert "no-such-profile: profile not found" in err

    def test_two_files_with_the_same_session_store_nothing(self, capsys, tmp_path, filled):
        before = contents(filled)
        first = write_canonical(tmp_path / "first.csv", [{"player": "z", "session": "g9", "seq": 0, "made": 1}])
        second = write_canonical(tmp_path / "second.csv", [{"player": "z", "session": "g9", "seq": 0, "made": 0}])
        code, out, err = run(capsys, "ingest", first, second, "--store", filled)
        assert code == 2
        assert f"{second}:2:session: session 'g9' of player 'z'" in err
        assert "Traceback" not in err
        assert contents(filled) == before

    def test_session_already_stored_from_another_file(self, capsys, tmp_path, filled):
        before = contents(filled)
        again = write_canonical(tmp_path / "again.csv", [{"player": "p1", "session": "A1", "seq": 0, "made": 1}])
        code, out, err = run(capsys, "ingest", again, "--store", filled)
        assert code == 2
        assert f"{again}:2:session: session 'A1' of player 'p1' is already stored from 'attempts.csv'" in err
        assert contents(filled) == before

    def test_clash_with_the_store_says_what_was_stored(self, capsys, tmp_path, filled):
        fresh = write_canonical(tmp_path / "fresh.csv", [{"player": "y", "session": "g1", "seq": 0, "made": 1}])
        again = write_canonical(tmp_path / "again.csv", [{"player": "p1", "session": "A1", "seq": 0, "made": 1}])
        code, out, err = run(capsys, "ingest", fresh, again, "--store", filled)
        assert code == 2
        assert out.startswith(f"{fresh}: stored: 1 rows read")
        assert f"{again}:2:session: session 'A1' of player 'p1' is already stored" in err
        assert f"stored 1 of 2 files before this error; {again} and any files after it were not stored." in err
        assert set(players_json(capsys, filled)) == {"p1", "p2", "y"}


# -- keep going ------------------------------------------------------------------------


class TestKeepGoing:
    @pytest.fixture(autouse=True)
    def _in_data(self, monkeypatch):
        monkeypatch.chdir(INGEST)

    @pytest.mark.parametrize(
        ("name", "profile", "read", "stored", "skipped", "rejected_rows"),
        [
            ("mixed_types.csv", None, 3, 1, 0, {3, 4}),
            ("ragged.csv", None, 3, 1, 0, {3, 4}),
            ("unknown_outcome.csv", None, 2, 1, 0, {3}),
            ("clock_backwards.csv", "bad/clock_profile.toml", 3, 1, 0, {3, 4}),
            ("duplicate_event.csv", "bad/duplicate_event.toml", 3, 1, 1, {4}),
            ("drill_symbol.csv", "bad/drill_profile.toml", 1, 0, 0, {2}),
        ],
    )
    def test_rejects_are_stored_with_reasons(self, capsys, store, name, profile, read, stored, skipped, rejected_rows):
        options = ["--profile", profile] if profile else []
        code, out, err = run(capsys, "ingest", f"bad/{name}", *options, "--keep-going", "--store", store)
        assert code == 0, err
        rejected = len(rejected_rows)
        assert f"{read} rows read = {stored} stored + {skipped} skipped + {rejected} rejected" in out
        assert "rejected rows" in out
        with Store(store, read_only=True) as opened:
            sources, rejects, attempts = opened.sources(), opened.rejects(), opened.attempts()
        (source,) = sources.itertuples()
        assert (source.rows_read, source.rows_stored, source.skipped, source.rejected) == (read, stored, skipped, rejected)
        assert source.rows_read == source.rows_stored + source.skipped + source.rejected
        assert set(rejects["row"].dropna().astype(int)) == rejected_rows
        assert rejects["message"].str.len().min() > 10
        assert (rejects["source"] == name).all()
        assert not set(attempts["source_row"]) & rejected_rows

    def test_reasons_in_the_output(self, capsys, store):
        code, out, _ = run(capsys, "ingest", "bad/mixed_types.csv", "--keep-going", "--store", store)
        assert code == 0
        assert "    bad/mixed_types.csv:3:distance: expected a number, found 'far'" in out.splitlines()
        assert "    bad/mixed_types.csv:4:distance: impossible value -4: must be at least 0" in out.splitlines()

    def test_a_file_with_no_good_rows_is_not_refused(self, capsys, store):
        code, out, _ = run(capsys, "ingest", "bad/drill_symbol.csv", "--profile", "bad/drill_profile.toml", "--keep-going", "--store", store)
        assert code == 0
        assert "0 attempts by 0 players in 0 sessions" in out

    def test_unreadable_file_is_still_refused(self, capsys, store):
        code, _, err = run(capsys, "ingest", "bad/latin1.csv", "--keep-going", "--store", store)
        assert code == 2
        assert "bad/latin1.csv:2: not valid UTF-8" in err
        assert not store.exists()


# -- the same file again ---------------------------------------------------------------


class TestSameFileAgain:
    def test_already_in_the_store(self, capsys, filled):
        before = contents(filled)
        path, profile = golden("attempts")
        code, out, _ = run(capsys, "ingest", path, *profile, "--store", filled)
        assert code == 0
        assert out.strip() == f"{path}: already in the store (same content); nothing added. Use --replace to load it again."
        assert contents(filled) == before

    def test_same_content_under_another_name(self, capsys, tmp_path, filled):
        before = contents(filled)
        path, profile = golden("attempts")
        copy = tmp_path / "copy.csv"
        copy.write_bytes(path.read_bytes())
        code, out, _ = run(capsys, "ingest", copy, *profile, "--store", filled)
        assert code == 0
        assert "already in the store" in out
        assert contents(filled) == before

    def test_replace(self, capsys, filled):
        with Store(filled, read_only=True) as opened:
            attempts_before = opened.attempts()
        path, profile = golden("attempts")
        code, out, _ = run(capsys, "ingest", path, *profile, "--store", filled, "--replace")
        assert code == 0
        assert out.startswith(f"{path}: replaced: 9 rows read")
        with Store(filled, read_only=True) as opened:
            pd.testing.assert_frame_equal(opened.attempts(), attempts_before)
            assert opened.sources()["source_id"].tolist() == [2]
        rows = players_json(capsys, filled)
        assert (rows["p1"]["attempts"], rows["p2"]["attempts"]) == (6, 3)

    def test_replace_a_changed_file_of_the_same_name(self, capsys, tmp_path, store):
        log = tmp_path / "log.csv"
        write_canonical(log, [{"player": "a", "session": "g", "seq": 0, "made": 1}])
        assert run(capsys, "ingest", log, "--store", store)[0] == 0
        write_canonical(log, [{"player": "a", "session": "g", "seq": i, "made": i % 2} for i in range(3)])
        code, _, err = run(capsys, "ingest", log, "--store", store)
        assert code == 2  # the session is stored from the earlier version
        assert "use --replace" in err
        code, out, _ = run(capsys, "ingest", log, "--store", store, "--replace")
        assert code == 0 and ": replaced:" in out
        assert players_json(capsys, store)["a"]["attempts"] == 3


# -- export ----------------------------------------------------------------------------


class TestExport:
    @pytest.fixture
    def spreadsheet_traps(self, capsys, tmp_path, filled):
        path = write_canonical(
            tmp_path / "names.csv",
            [
                {"player": "q1", "session": "g1", "seq": 0, "made": 1, "player_name": "=HYPERLINK(\"x\")", "team": "-3", "distance": 2.5, "score_margin": -4},
                {"player": "q2", "session": "g1", "seq": 0, "made": 0, "player_name": "@home", "team": "+Owls", "distance": 0.0, "score_margin": 3},
            ],
        )
        assert run(capsys, "ingest", path, "--store", filled)[0] == 0
        return filled

    @pytest.mark.parametrize("table", ["attempts", "sources", "rejects"])
    @pytest.mark.parametrize("suffix", [".csv", ".parquet"])
    def test_round_trip(self, capsys, tmp_path, filled, table, suffix):
        code, _, err = run(capsys, "ingest", INGEST / "bad" / "mixed_types.csv", "--keep-going", "--store", filled)
        assert code == 0, err  # now every table has rows
        output = tmp_path / f"{table}{suffix}"
        code, out, _ = run(capsys, "export", table, "--output", output, "--store", filled)
        assert code == 0
        with Store(filled, read_only=True) as opened:
            expected = getattr(opened, table)()
        n = len(expected)
        assert n >= 2
        assert out.strip() == f"wrote {n:,} rows of {table} to {output}"
        if suffix == ".parquet":
            back = pd.read_parquet(output)
            assert values(back[list(expected.columns)]) == values(expected)
        else:
            back = pd.read_csv(output, keep_default_na=False, dtype=str)
            assert len(back) == n
            assert set(expected.columns) <= set(back.columns)
            for name in ("player", "session", "source", "message", "name", "layout"):
                if name in expected.columns:
                    assert back[name].tolist() == expected[name].fillna("").tolist()

    def test_attempts_parquet_ingests_again_to_the_same_record(self, capsys, tmp_path, filled):
        output = tmp_path / "attempts.parquet"
        assert run(capsys, "export", "attempts", "-o", output, "--store", filled)[0] == 0
        other = tmp_path / "other.duckdb"
        code, out, err = run(capsys, "ingest", output, "--store", other)
        assert code == 0, err
        with Store(filled, read_only=True) as a, Store(other, read_only=True) as b:
            first, second = a.attempts(), b.attempts()
        same = [c for c in first.columns if c not in ("source", "source_row")]
        pd.testing.assert_frame_equal(first[same], second[same])

    def test_csv_escapes_formulas_numbers_stay(self, capsys, tmp_path, spreadsheet_traps):
        output = tmp_path / "attempts.csv"
        assert run(capsys, "export", "attempts", "--output", output, "--store", spreadsheet_traps)[0] == 0
        with output.open(newline="", encoding="utf-8") as handle:
            rows = {r["player"]: r for r in csv.DictReader(handle)}
        assert rows["q1"]["player_name"] == "'=HYPERLINK(\"x\")"
        assert rows["q2"]["player_name"] == "'@home"
        assert rows["q2"]["team"] == "'+Owls"
        assert rows["q1"]["team"] == "-3"  # a number written as text is safe and stays readable
        assert rows["q1"]["score_margin"] == "-4.0"
        assert rows["q1"]["distance"] == "2.5"
        text = output.read_text(encoding="utf-8")
        assert ",=HYPERLINK" not in text and ",@home" not in text

    def test_parquet_keeps_text_as_it_is(self, capsys, tmp_path, spreadsheet_traps):
        output = tmp_path / "attempts.parquet"
        assert run(capsys, "export", "attempts", "--output", output, "--store", spreadsheet_traps)[0] == 0
        back = pd.read_parquet(output).set_index("player")
        assert back.loc["q1", "player_name"] == "=HYPERLINK(\"x\")"
        assert back.loc["q2", "team"] == "+Owls"

    def test_rejects_csv(self, capsys, tmp_path, store, monkeypatch):
        monkeypatch.chdir(INGEST)
        assert run(capsys, "ingest", "bad/mixed_types.csv", "--keep-going", "--store", store)[0] == 0
        output = tmp_path / "rejects.csv"
        assert run(capsys, "export", "rejects", "-o", output, "--store", store)[0] == 0
        with output.open(newline="") as handle:
            rows = list(csv.DictReader(handle))
        assert [(r["row"], r["column"], r["message"]) for r in rows] == [
            ("3", "distance", "expected a number, found 'far'"),
            ("4", "distance", "impossible value -4: must be at least 0"),
        ]

    def test_bad_table(self, capsys, tmp_path, filled):
        code, out, err = run(capsys, "export", "players", "--output", tmp_path / "p.csv", "--store", filled)
        assert code == 2
        assert "unknown table 'players' (expected one of attempts, sources, rejects, results)" in err
        assert not (tmp_path / "p.csv").exists()

    def test_bad_extension(self, capsys, tmp_path, filled):
        code, _, err = run(capsys, "export", "attempts", "--output", tmp_path / "a.xlsx", "--store", filled)
        assert code == 2
        assert "cannot tell the export format from the extension '.xlsx' (expected .csv or .parquet)" in err
        assert not (tmp_path / "a.xlsx").exists()

    def test_missing_output_folder(self, capsys, tmp_path, filled):
        code, _, err = run(capsys, "export", "attempts", "--output", tmp_path / "no" / "a.csv", "--store", filled)
        assert code == 2
        assert "does not exist" in err

    def test_output_is_required(self, capsys, filled):
        code, _, err = run(capsys, "export", "attempts", "--store", filled)
        assert code == 2
        assert "--output" in err


# -- which store -----------------------------------------------------------------------


class TestStorePrecedence:
    @pytest.fixture
    def workdir(self, tmp_path, monkeypatch):
        folder = tmp_path / "work"
        folder.mkdir()
        monkeypatch.chdir(folder)
        return folder

    def ingest(self, capsys, *options):
        path, profile = golden("canonical")
        code, _, err = run(capsys, "ingest", path, *profile, *options)
        assert code == 0, err

    def test_option_over_environment(self, capsys, workdir, tmp_path, monkeypatch):
        monkeypatch.setenv("STREAKWISE_STORE", str(tmp_path / "env.duckdb"))
        self.ingest(capsys, "--store", "option.duckdb")
        assert (workdir / "option.duckdb").exists()
        assert not (tmp_path / "env.duckdb").exists()
        assert not (workdir / "streakwise.duckdb").exists()

    def test_environment_over_default(self, capsys, workdir, tmp_path, monkeypatch):
        monkeypatch.setenv("STREAKWISE_STORE", str(tmp_path / "env.duckdb"))
        self.ingest(capsys)
        assert (tmp_path / "env.duckdb").exists()
        assert not (workdir / "streakwise.duckdb").exists()
        assert set(players_json(capsys, tmp_path / "env.duckdb")) == {"c1", "c2"}
        code, out, _ = run(capsys, "players", "--json")
        assert code == 0 and {r["player"] for r in json.loads(out)} == {"c1", "c2"}

    def test_default_in_the_working_folder(self, capsys, workdir, monkeypatch):
        monkeypatch.delenv("STREAKWISE_STORE", raising=False)
        self.ingest(capsys)
        assert (workdir / "streakwise.duckdb").exists()
        code, out, _ = run(capsys, "players", "--json")
        assert code == 0 and len(json.loads(out)) == 2

    def test_empty_environment_means_default(self, capsys, workdir, monkeypatch):
        monkeypatch.setenv("STREAKWISE_STORE", "")
        self.ingest(capsys)
        assert (workdir / "streakwise.duckdb").exists()


# -- a store held by another process ---------------------------------------------------

HOLDER = textwrap.dedent(
    """
    import sys, time
    from streakwise.ingest.store import Store
    store = Store(sys.argv[1])
    print("ready", flush=True)
    time.sleep(120)
    """
)


@pytest.fixture
def held_store(filled):
    """The filled store, held open by another process until the test ends."""
    holder = subprocess.Popen(
        [sys.executable, "-c", HOLDER, str(filled)], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True
    )
    try:
        selector = selectors.DefaultSelector()
        selector.register(holder.stdout, selectors.EVENT_READ)
        deadline = time.monotonic() + 60
        line = ""
        while time.monotonic() < deadline and holder.poll() is None:
            if selector.select(timeout=0.5):
                line = holder.stdout.readline()
                break
        selector.close()
        assert line.strip() == "ready", holder.stderr.read() if holder.poll() is not None else "holder not ready"
        yield filled
    finally:
        holder.kill()
        holder.wait(timeout=30)
        holder.stdout.close()
        holder.stderr.close()


class TestStoreInUse:
    @pytest.mark.parametrize("command", [["players"], ["players", "--json"], ["export", "attempts", "-o", "{tmp}/a.csv"]])
    def test_readers_are_told(self, capsys, tmp_path, held_store, command):
        argv = [part.replace("{tmp}", str(tmp_path)) for part in command]
        code, out, err = run(capsys, *argv, "--store", held_store)
        assert code == 2
        assert "store in use by another streakwise process" in err
        assert str(held_store) in err
        assert "Traceback" not in err and out == ""

    def test_ingest_is_told(self, capsys, held_store):
        path, profile = golden("canonical")
        code, out, err = run(capsys, "ingest", path, *profile, "--store", held_store)
        assert code == 2
        assert "store in use by another streakwise process" in err
        assert "Traceback" not in err


# -- sessions --------------------------------------------------------------------------


class TestSessions:
    def test_period(self, capsys, store):
        path, profile = golden("attempts")
        code, out, _ = run(capsys, "ingest", path, *profile, "--sessions", "period", "--store", store)
        assert code == 0
        assert "9 attempts by 2 players in 6 sessions" in out
        # p1: A1 periods 1 and 2, B2 period 1; p2: A1 periods 1, 4 and 5.
        rows = players_json(capsys, store)
        assert (rows["p1"]["sessions"], rows["p2"]["sessions"]) == (3, 3)
        with Store(store, read_only=True) as opened:
            sessions = sorted(set(opened.attempts(players="p1")["session"]))
        assert sessions == ["A1/P1", "A1/P2", "B2/P1"]

    def test_gap(self, capsys, store):
        path, profile = golden("attempts")
        code, out, _ = run(capsys, "ingest", path, *profile, "--sessions", "gap:60", "--store", store)
        assert code == 0
        # p1 in A1: 0:30 into the game, then 1:44.5 (a gap of 74.5 s), then 12:00 (period 2 start);
        # p2 in A1: 0:58, then 47:57 (period 4), 48:01 (overtime, 4 s later).
        rows = players_json(capsys, store)
        assert (rows["p1"]["sessions"], rows["p2"]["sessions"]) == (4, 2)

    def test_season_warns_about_mixing_form(self, capsys, tmp_path, store):
        log = tmp_path / "season.csv"
        log.write_text(
            "player,game,when,result,season\n"
            "a,g1,2025-01-03T19:00:00,1,2025\n"
            "a,g1,2025-01-03T19:04:00,0,2025\n"
            "b,g1,2025-01-03T19:05:00,1,2025\n"
            "a,g2,2025-01-05T19:00:00,1,2025\n"
        )
        profile = tmp_path / "season.toml"
        profile.write_text('[columns]\nplayer = "player"\ngame = "game"\nmade = "result"\ntimestamp = "when"\nseason = "season"\n')
        code, out, _ = run(capsys, "ingest", log, "--profile", profile, "--sessions", "season", "--store", store)
        assert code == 0
        assert "note:" in out and "mix form across games" in out
        rows = players_json(capsys, store)
        assert (rows["a"]["sessions"], rows["a"]["attempts"], rows["b"]["sessions"]) == (1, 3, 1)

    def test_season_with_a_game_clock(self, capsys, store):
        path, profile = golden("attempts")
        code, out, err = run(capsys, "ingest", path, *profile, "--sessions", "season", "--store", store)
        assert code == 0, err
        rows = players_json(capsys, store)
        assert (rows["p1"]["sessions"], rows["p1"]["attempts"]) == (1, 6)

    @pytest.mark.parametrize(
        ("value", "message"),
        [
            ("weekly", "--sessions must be game, period, gap:SECONDS or season (got 'weekly')"),
            ("gap:0", "--sessions gap needs a positive number of seconds, e.g. gap:120 (got 'gap:0')"),
            ("gap:soon", "--sessions gap needs a positive number of seconds"),
            ("gap:", "--sessions gap needs a positive number of seconds"),
        ],
    )
    def test_bad_value(self, capsys, store, value, message):
        path, profile = golden("attempts")
        code, out, err = run(capsys, "ingest", path, *profile, "--sessions", value, "--store", store)
        assert code == 2
        assert message in err
        assert "Traceback" not in err
        assert not store.exists()

    def test_gap_needs_a_clock(self, capsys, store):
        path, profile = golden("events")  # ordered by event number: no game time to measure a gap
        code, _, err = run(capsys, "ingest", path, *profile, "--sessions", "gap:120", "--store", store)
        assert code == 2
        assert "needs a game clock or timestamps" in err


# -- exit codes ------------------------------------------------------------------------


class TestExitCodes:
    def test_internal_error(self, capsys, monkeypatch, filled):
        def broken(args):
            raise RuntimeError("boom")

        monkeypatch.setattr(data_commands, "run_players", broken)
        code, out, err = run(capsys, "players", "--store", filled)
        assert code == 1
        assert "internal error" in err
        assert "RuntimeError: boom" in err

    def test_unknown_command(self, capsys):
        code, _, err = run(capsys, "dance")
        assert code == 2
        assert "invalid choice" in err

    def test_no_command(self, capsys):
        code, _, err = run(capsys)
        assert code == 2


# -- real processes --------------------------------------------------------------------


def _environment() -> dict[str, str]:
    env = dict(os.environ)
    env.pop("STREAKWISE_STORE", None)
    return env


def test_python_m_help():
    result = subprocess.run(
        [sys.executable, "-m", "streakwise.cli", "--help"], capture_output=True, text=True, timeout=120, env=_environment()
    )
    assert result.returncode == 0, result.stderr
    assert "usage: streakwise" in result.stdout
    for command in ("ingest", "players", "export"):
        assert command in result.stdout


def test_console_script_end_to_end(tmp_path):
    script = Path(sys.executable).parent / "streakwise"
    assert script.exists(), f"no console script next to {sys.executable}"
    store = tmp_path / "s.duckdb"
    path, profile = golden("drills", ".xlsx")
    ingest = subprocess.run(
        [str(script), "ingest", str(path), *profile, "--store", str(store)], capture_output=True, text=True, timeout=120, env=_environment()
    )
    assert ingest.returncode == 0, ingest.stderr
    assert "4 rows read = 4 stored + 0 skipped + 0 rejected; 16 attempts" in ingest.stdout
    players = subprocess.run(
        [str(script), "players", "--json", "--store", str(store)], capture_output=True, text=True, timeout=120, env=_environment()
    )
    assert players.returncode == 0, players.stderr
    assert {r["player"]: r["attempts"] for r in json.loads(players.stdout)} == {"d1": 13, "d2": 3}


def test_python_m_refused_file(tmp_path):
    store = tmp_path / "s.duckdb"
    result = subprocess.run(
        [sys.executable, "-m", "streakwise.cli", "ingest", "bad/ragged.csv", "--store", str(store)],
        capture_output=True,
        text=True,
        timeout=120,
        cwd=INGEST,
        env=_environment(),
    )
    assert result.returncode == 2
    assert "bad/ragged.csv:3: expected 4 fields as in the header, found 5" in result.stderr
    assert "Traceback" not in result.stderr
    assert not store.exists()
