"""Tests for the DuckDB store (``streakwise.ingest.store``)."""

from __future__ import annotations

import csv
import pathlib
import subprocess
import sys
import textwrap
import time

import duckdb
import numpy as np
import pandas as pd
import pytest

import streakwise.ingest.store as store_module
from streakwise.ingest.errors import InputError, StoreInUseError
from streakwise.ingest.record import COLUMNS, DTYPES, validate_record
from streakwise.ingest.store import (
    DEFAULT_STORE_NAME,
    IngestSummary,
    SourceInfo,
    Store,
    resolve_store_path,
)

# -- helpers -------------------------------------------------------------------------


def shots(player, session, outcomes, *, source="season1.csv", first_row=2, **extra):
    """A canonical frame: one player's session with the given 0/1 outcomes."""
    n = len(outcomes)
    frame = pd.DataFrame(
        {
            "player": [player] * n,
            "game": [session] * n,
            "session": [session] * n,
            "seq": list(range(n)),
            "made": [bool(o) for o in outcomes],
            "attempt_type": ["field_goal"] * n,
            "source": [source] * n,
            "source_row": list(range(first_row, first_row + n)),
        }
    )
    for name, value in extra.items():
        frame[name] = value
    return frame


def source_info(name="season1.csv", sha="a" * 64, rows_read=None, attempts=None, skipped=0, **kw):
    if rows_read is None:
        rows_read = (0 if attempts is None else len(attempts)) + skipped
    fields = dict(
        path=f"logs/{name}",
        name=name,
        content_sha256=sha,
        layout="attempts",
        profile="",
        profile_sha256="",
        rows_read=rows_read,
        rows_stored=0 if attempts is None else len(attempts),
        skipped=skipped,
    )
    fields.update(kw)
    return SourceInfo(**fields)


def no_rejects():
    return pd.DataFrame({"row": pd.Series([], dtype="Int64"), "column": [], "message": []})


def full_frame():
    """A small canonical frame with an NA in every optional column."""
    frame = pd.DataFrame(
        {
            "player": ["p01", "p01", "p01", "p02", "p02"],
            "player_name": ["Ann Bell", "Ann Bell", None, "Cy Dole", "Cy Dole"],
            "team": ["Owls", None, "Owls", "Hares", "Hares"],
            "season": ["2024", "2024", None, "2024", "2024"],
            "competition": [None, "league", "league", "league", "league"],
            "game": ["G1", "G1", "G1", "G2", "G2"],
            "game_date": pd.to_datetime(["2024-01-05", "2024-01-05", None, "2024-01-07", "2024-01-07"]),
            "game_order": pd.array([1, None, 1, 2, 2], dtype="Int64"),
            "session": ["G1", "G1", "G1", "G2", "G2"],
            "seq": [0, 1, 2, 0, 1],
            "made": [True, False, True, False, True],
            "attempt_type": ["field_goal", "field_goal", "free_throw", "field_goal", "field_goal"],
            "points": pd.array([2, 3, None, 2, 1], dtype="Int64"),
            "distance": [1.5, np.nan, 7.25, 0.5, 4.0],
            "x": [0.1, 0.2, np.nan, 0.4, 0.5],
            "y": [np.nan, 1.2, 1.3, 1.4, 1.5],
            "defender_distance": [1.0, 2.0, 3.0, np.nan, 0.75],
            "period": pd.array([1, 1, 2, None, 4], dtype="Int64"),
            "clock_s": [600.0, 512.5, np.nan, 30.0, 1.0],
            "score_margin": [0.0, -3.0, 2.0, 5.0, np.nan],
            "home": pd.array([True, None, True, False, False], dtype="boolean"),
            "source": ["season1.csv"] * 5,
            "source_row": [2, 3, 4, 5, 6],
        }
    )
    return validate_record(frame)


def table_contents(path):
    """Every table's rows, for comparing a store before and after."""
    con = duckdb.connect(str(path))
    try:
        names = [r[0] for r in con.execute("SELECT table_name FROM duckdb_tables() ORDER BY table_name").fetchall()]
        return {name: con.execute(f"SELECT * FROM {name} ORDER BY ALL").fetchall() for name in names}
    finally:
        con.close()


@pytest.fixture
def store_path(tmp_path):
    return tmp_path / "test.duckdb"


@pytest.fixture
def store(store_path):
    with Store(store_path) as opened:
        yield opened


# -- resolve_store_path --------------------------------------------------------------


class TestResolveStorePath:
    def test_option_wins(self, monkeypatch, tmp_path):
        monkeypatch.setenv("STREAKWISE_STORE", str(tmp_path / "env.duckdb"))
        assert resolve_store_path(tmp_path / "option.duckdb") == tmp_path / "option.duckdb"
        assert resolve_store_path("plain.duckdb") == pathlib.Path("plain.duckdb")

    def test_environment_when_no_option(self, monkeypatch, tmp_path):
        monkeypatch.setenv("STREAKWISE_STORE", str(tmp_path / "env.duckdb"))
        assert resolve_store_path(None) == tmp_path / "env.duckdb"

    def test_default(self, monkeypatch):
        monkeypatch.delenv("STREAKWISE_STORE", raising=False)
        assert str(resolve_store_path(None)) == DEFAULT_STORE_NAME == "streakwise.duckdb"

    def test_empty_environment_is_ignored(self, monkeypatch):
        monkeypatch.setenv("STREAKWISE_STORE", "")
        assert str(resolve_store_path(None)) == DEFAULT_STORE_NAME


# -- opening -------------------------------------------------------------------------


class TestOpen:
    def test_creates_file_and_tables(self, store_path):
        assert not store_path.exists()
        with Store(store_path) as store:
            assert store.path == store_path
            assert store.table_names() == ("attempts", "sources", "rejects", "results")
            assert store.attempts().empty
            assert store.sources().empty
        assert store_path.exists()
        tables = table_contents(store_path)
        assert set(tables) == {"attempts", "sources", "rejects", "meta", "results"}
        assert tables["results"] == []
        assert ("schema_version", "1") in tables["meta"]

    def test_closed_store_refuses_work(self, store_path):
        store = Store(store_path)
        store.close()
        store.close()  # twice is fine
        with pytest.raises(RuntimeError, match="the store is closed"):
            store.attempts()

    def test_read_only_missing_file(self, store_path):
        with pytest.raises(InputError, match="store not found") as info:
            Store(store_path, read_only=True)
        assert info.value.path == str(store_path)
        assert not store_path.exists()

    def test_read_only_reads(self, store_path):
        with Store(store_path) as store:
            store.add_source(source_info(attempts=full_frame()), full_frame(), no_rejects())
        with Store(store_path, read_only=True) as store:
            pd.testing.assert_frame_equal(store.attempts(), full_frame())
            with pytest.raises(InputError, match="opened read-only"):
                store.add_source(source_info(sha="b" * 64, attempts=full_frame()), full_frame(), no_rejects())

    def test_other_duckdb_file_is_refused(self, store_path):
        con = duckdb.connect(str(store_path))
        con.execute("CREATE TABLE something (a INTEGER)")
        con.close()
        with pytest.raises(InputError, match=r"not a streakwise store \(it holds other tables: something\)"):
            Store(store_path)

    def test_not_a_database(self, tmp_path):
        path = tmp_path / "notes.duckdb"
        path.write_text("hello\n" * 1000)
        with pytest.raises(InputError, match="cannot open the store"):
            Store(path)

    def test_missing_folder(self, tmp_path):
        with pytest.raises(InputError, match="does not exist"):
            Store(tmp_path / "nowhere" / "s.duckdb")


class TestLock:
    CHILD = textwrap.dedent(
        """
        import sys
        from streakwise.ingest.errors import StoreInUseError
        from streakwise.ingest.store import Store
        try:
            with Store(sys.argv[1], read_only=sys.argv[2] == "ro"):
                pass
        except StoreInUseError as exc:
            print(exc)
            sys.exit(3)
        print("opened")
        """
    )

    def run_child(self, path, mode):
        return subprocess.run(
            [sys.executable, "-c", self.CHILD, str(path), mode], capture_output=True, text=True, timeout=120
        )

    @pytest.mark.parametrize("mode", ["rw", "ro"])
    def test_second_process_is_told_the_store_is_in_use(self, store_path, mode):
        with Store(store_path):
            child = self.run_child(store_path, mode)
        assert child.returncode == 3, child.stderr
        assert "store in use by another streakwise process" in child.stdout
        assert str(store_path) in child.stdout
        assert "held by PID" in child.stdout
        assert "Traceback" not in child.stderr

    def test_released_after_close(self, store_path):
        with Store(store_path):
            pass
        child = self.run_child(store_path, "rw")
        assert child.returncode == 0, child.stderr
        assert child.stdout.strip() == "opened"

    def test_error_type_in_this_process(self, store_path):
        with Store(store_path):
            with pytest.raises(StoreInUseError, match="store in use"):
                Store(store_path, read_only=True)


# -- add_source and attempts ---------------------------------------------------------


class TestRoundTrip:
    def test_every_dtype_and_na_survives(self, store):
        frame = full_frame()
        summary = store.add_source(source_info(attempts=frame), frame, no_rejects())
        assert summary == IngestSummary(
            source_id=1,
            path="logs/season1.csv",
            rows_read=5,
            rows_stored=5,
            attempts=5,
            skipped=0,
            rejected=0,
            status="stored",
            replaced_source_ids=(),
        )
        out = store.attempts()
        assert tuple(out.columns) == COLUMNS
        assert {name: str(dtype) for name, dtype in out.dtypes.items()} == DTYPES
        pd.testing.assert_frame_equal(out, frame)

    def test_input_is_validated_first(self, store):
        # Missing optional columns are filled in; dtypes are made canonical.
        frame = shots("p01", "G1", [1, 0, 1])
        store.add_source(source_info(attempts=frame), frame, no_rejects())
        pd.testing.assert_frame_equal(store.attempts(), validate_record(frame))

    def test_bad_record_writes_nothing(self, store):
        frame = shots("p01", "G1", [1, 0, 1])
        frame.loc[1, "seq"] = 5
        with pytest.raises(InputError, match="seq must number"):
            store.add_source(source_info(attempts=frame), frame, no_rejects())
        assert store.sources().empty and store.attempts().empty

    def test_filters_and_order(self, store):
        frame = pd.concat(
            [
                shots("p02", "G2", [1, 1], season="2023", team="Hares", first_row=2),
                shots("p01", "G3", [0], season="2024", team="Owls", first_row=4),
                shots("p01", "G1", [1, 0], season="2023", team="Owls", first_row=5),
            ],
            ignore_index=True,
        )
        frame.loc[4, "attempt_type"] = "free_throw"
        frame.loc[4, "seq"] = 0
        frame.loc[3, "seq"] = 0
        frame.loc[4, "session"] = "G1ft"
        store.add_source(source_info(attempts=frame), frame, no_rejects())
        out = store.attempts()
        assert list(zip(out["player"], out["session"], out["seq"], strict=True)) == [
            ("p01", "G1", 0),
            ("p01", "G1ft", 0),
            ("p01", "G3", 0),
            ("p02", "G2", 0),
            ("p02", "G2", 1),
        ]
        assert out.index.equals(pd.RangeIndex(5))
        assert list(store.attempts(players="p02")["player"]) == ["p02", "p02"]
        assert list(store.attempts(seasons=["2024"])["session"]) == ["G3"]
        assert list(store.attempts(teams=["Owls"], attempt_types="field_goal")["session"]) == ["G1", "G3"]
        assert store.attempts(players=[]).empty
        with pytest.raises(TypeError, match="`players` must be a string or a sequence of strings"):
            store.attempts(players=[1])


class TestIdempotency:
    def test_same_content_twice_is_already_stored(self, store):
        frame = shots("p01", "G1", [1, 0, 1])
        rejects = pd.DataFrame({"row": [6], "column": ["made"], "message": ["expected 0 or 1 (got 'x')"]})
        info = source_info(attempts=frame, rows_read=5, skipped=1)
        first = store.add_source(info, frame, rejects)
        assert first.status == "stored" and first.rejected == 1
        before_sources = store.sources()
        before_version = store.data_version()
        again = store.add_source(info, frame, rejects)
        assert again == IngestSummary(
            source_id=None,
            path="logs/season1.csv",
            rows_read=5,
            rows_stored=3,
            attempts=3,
            skipped=1,
            rejected=1,
            status="already_stored",
            replaced_source_ids=(),
        )
        pd.testing.assert_frame_equal(store.sources(), before_sources)
        assert len(store.attempts()) == 3
        assert len(store.rejects()) == 1
        assert store.data_version() == before_version

    def test_replace_removes_same_content_and_same_name(self, store):
        first = shots("p01", "G1", [1, 0, 1])
        store.add_source(source_info(sha="1" * 64, attempts=first), first, no_rejects())
        other = shots("p09", "G1", [0], source="other.csv")
        store.add_source(source_info(name="other.csv", sha="2" * 64, attempts=other), other, no_rejects())
        rejects = pd.DataFrame({"row": [9], "column": [None], "message": ["not a shot"]})
        # An edited copy of season1.csv: same name, new content, the same session.
        edited = shots("p01", "G1", [0, 0])
        info = source_info(sha="3" * 64, attempts=edited, rows_read=3)
        summary = store.add_source(info, edited, rejects, replace=True)
        assert summary.status == "replaced"
        assert summary.replaced_source_ids == (1,)
        assert summary.source_id == 3
        assert summary.rows_read == summary.attempts + summary.skipped + summary.rejected
        sources = store.sources()
        assert list(sources["source_id"]) == [2, 3]
        assert list(sources["name"]) == ["other.csv", "season1.csv"]
        out = store.attempts()
        assert list(out["player"]) == ["p01", "p01", "p09"]
        assert list(out["made"]) == [False, False, False]
        assert store.rejects()["source_id"].tolist() == [3]

    def test_replace_same_content_under_another_name(self, store):
        frame = shots("p01", "G1", [1])
        store.add_source(source_info(sha="1" * 64, attempts=frame), frame, no_rejects())
        copy = source_info(name="copy.csv", sha="1" * 64, attempts=frame)
        summary = store.add_source(copy, frame, no_rejects(), replace=True)
        assert summary.status == "replaced" and summary.replaced_source_ids == (1,)
        assert store.sources()["name"].tolist() == ["copy.csv"]

    def test_replace_with_nothing_to_replace_is_stored(self, store):
        frame = shots("p01", "G1", [1])
        summary = store.add_source(source_info(attempts=frame), frame, no_rejects(), replace=True)
        assert summary.status == "stored" and summary.replaced_source_ids == ()

    def test_find_source(self, store):
        assert store.find_source("1" * 64) is None
        frame = shots("p01", "G1", [1])
        store.add_source(source_info(sha="1" * 64, attempts=frame), frame, no_rejects())
        found = store.find_source("1" * 64)
        assert found["source_id"] == 1
        assert found["name"] == "season1.csv"
        assert found["path"] == "logs/season1.csv"
        assert found["attempts"] == 1


class TestDuplicateSessions:
    def test_session_from_another_file_is_refused(self, store):
        season1 = pd.concat([shots("p04", "G16", [1, 0]), shots("p04", "G17", [1, 1], first_row=4)], ignore_index=True)
        store.add_source(source_info(sha="1" * 64, attempts=season1), season1, no_rejects())
        before = store.sources(), store.attempts(), store.rejects(), store.data_version()

        season2 = pd.concat(
            [
                shots("p07", "G17", [1], source="season2.csv"),
                shots("p04", "G17", [0, 1, 1], source="season2.csv", first_row=3),
            ],
            ignore_index=True,
        )
        rejects = pd.DataFrame({"row": [6], "column": ["made"], "message": ["bad"]})
        info = source_info(name="season2.csv", sha="2" * 64, attempts=season2, rows_read=5)
        with pytest.raises(InputError) as raised:
            store.add_source(info, season2, rejects)
        error = raised.value
        assert str(error) == (
            "logs/season2.csv:3:session: session 'G17' of player 'p04' is already stored from "
            "'season1.csv' (source 1); use --replace to replace a file you ingested before"
        )
        assert (error.path, error.row, error.column) == ("logs/season2.csv", 3, "session")
        after = store.sources(), store.attempts(), store.rejects(), store.data_version()
        for old, new in zip(before[:3], after[:3], strict=True):
            pd.testing.assert_frame_equal(old, new)
        assert before[3] == after[3]

    def test_replace_lets_the_same_file_come_back(self, store):
        frame = shots("p04", "G17", [1, 1])
        store.add_source(source_info(sha="1" * 64, attempts=frame), frame, no_rejects())
        frame2 = shots("p04", "G17", [0, 1])
        summary = store.add_source(source_info(sha="2" * 64, attempts=frame2), frame2, no_rejects(), replace=True)
        assert summary.status == "replaced"
        assert store.attempts()["made"].tolist() == [False, True]

    def test_replace_does_not_excuse_a_clash_with_a_third_file(self, store):
        a = shots("p04", "G17", [1])
        store.add_source(source_info(name="a.csv", sha="1" * 64, attempts=a), a, no_rejects())
        b = shots("p05", "G17", [1])
        store.add_source(source_info(name="b.csv", sha="2" * 64, attempts=b), b, no_rejects())
        new_b = pd.concat([shots("p05", "G17", [0]), shots("p04", "G17", [0], first_row=3)], ignore_index=True)
        with pytest.raises(InputError, match=r"player 'p04' is already stored from 'a.csv' \(source 1\)"):
            store.add_source(source_info(name="b.csv", sha="3" * 64, attempts=new_b), new_b, no_rejects(), replace=True)
        # The rolled-back replacement left b.csv in place.
        assert store.sources()["name"].tolist() == ["a.csv", "b.csv"]
        assert len(store.attempts()) == 2


class TestAtomicity:
    def test_failure_midway_leaves_every_table_as_it_was(self, store_path, monkeypatch):
        first = shots("p01", "G1", [1, 0])
        with Store(store_path) as store:
            store.add_source(source_info(sha="1" * 64, attempts=first), first, no_rejects())
        before = table_contents(store_path)

        def fail(*args, **kwargs):
            raise RuntimeError("disk full (simulated)")

        # Rejects are written after the source row and the attempts.
        monkeypatch.setattr(Store, "_insert_rejects", fail)
        second = shots("p02", "G1", [1, 1, 1])
        rejects = pd.DataFrame({"row": [5], "column": ["made"], "message": ["bad"]})
        with Store(store_path) as store:
            with pytest.raises(RuntimeError, match="simulated"):
                info = source_info(name="s2.csv", sha="2" * 64, attempts=second, rows_read=4)
                store.add_source(info, second, rejects)
            # A replacement that fails also keeps the files it would have replaced.
            with pytest.raises(RuntimeError, match="simulated"):
                store.add_source(source_info(sha="3" * 64, attempts=first), first, rejects.iloc[:0], replace=True)
        assert table_contents(store_path) == before

        monkeypatch.undo()
        with Store(store_path) as store:
            summary = store.add_source(
                source_info(name="s2.csv", sha="2" * 64, attempts=second, rows_read=4), second, rejects
            )
            assert summary.status == "stored"
            assert len(store.attempts()) == 5


class TestCounts:
    def test_counts_must_add_up(self, store):
        frame = shots("p01", "G1", [1, 0])
        with pytest.raises(ValueError, match=r"counts do not add up: rows_read is 7"):
            store.add_source(source_info(attempts=frame, rows_read=7), frame, no_rejects())
        assert store.sources().empty

    def test_rejected_counts_distinct_rows(self, store):
        frame = shots("p01", "G1", [1])
        rejects = pd.DataFrame(
            {
                "row": pd.array([3, 3, 4, None], dtype="Int64"),
                "column": ["made", "player", None, None],
                "message": ["bad made", "missing player", "not a shot", "file-wide note"],
            }
        )
        summary = store.add_source(source_info(attempts=frame, rows_read=3), frame, rejects)
        assert summary.rejected == 2
        out = store.rejects()
        assert list(out.columns) == ["source_id", "source", "row", "column", "message"]
        assert out["row"].isna().sum() == 1
        assert out["source"].tolist() == ["season1.csv"] * 4
        assert str(out["row"].dtype) == "Int64"

    def test_bad_layout(self, store):
        frame = shots("p01", "G1", [1])
        with pytest.raises(ValueError, match=r"`info.layout` must be one of 'attempts', 'events'"):
            store.add_source(source_info(attempts=frame, layout="boxscore"), frame, no_rejects())


# -- sources, players, data_version --------------------------------------------------


class TestSources:
    def test_columns_and_values(self, store):
        frame = shots("p01", "G1", [1, 0])
        store.add_source(
            source_info(attempts=frame, layout="events", profile="club", profile_sha256="f" * 64, skipped=4),
            frame,
            no_rejects(),
        )
        sources = store.sources()
        assert list(sources.columns) == [
            "source_id",
            "path",
            "name",
            "content_sha256",
            "layout",
            "profile",
            "profile_sha256",
            "rows_read",
            "rows_stored",
            "attempts",
            "skipped",
            "rejected",
            "ingested_at",
            "streakwise_version",
        ]
        row = sources.iloc[0]
        assert (row["layout"], row["profile"], row["rows_read"], row["skipped"]) == ("events", "club", 6, 4)
        assert str(sources["ingested_at"].dtype) == "datetime64[us]"
        now = pd.Timestamp.now(tz="UTC").tz_localize(None)
        assert abs(now - row["ingested_at"]) < pd.Timedelta(minutes=5)


class TestPlayers:
    @pytest.fixture
    def league(self, store):
        frame = pd.concat(
            [
                shots("p01", "G1", [1, 1, 0], player_name="Ann Bell", team="Owls", season="2023"),
                shots("p01", "G2", [0, 1], player_name="Ann Bell", team="Owls", season="2024", first_row=5),
                shots("p01", "G3", [1], player_name="A. Bell", team="Hares", season="2024", first_row=7),
                shots("p02", "G1", [0, 0], player_name="Cy Dole", team="Hares", season="2023", first_row=8),
                shots("p03", "G4", [1], season="2024", first_row=10),
            ],
            ignore_index=True,
        )
        frame.loc[frame["player"] == "p02", "attempt_type"] = "free_throw"
        store.add_source(source_info(attempts=frame), frame, no_rejects())
        return store

    def test_aggregates(self, league):
        out = league.players()
        expected = pd.DataFrame(
            {
                "player": pd.array(["p01", "p02", "p03"], dtype="string"),
                "player_name": pd.array(["Ann Bell", "Cy Dole", None], dtype="string"),
                "team": pd.array(["Owls / Hares", "Hares", None], dtype="string"),
                "attempts": np.array([6, 2, 1], dtype="int64"),
                "makes": np.array([4, 0, 1], dtype="int64"),
                "sessions": np.array([3, 1, 1], dtype="int64"),
                "make_rate": [4 / 6, 0.0, 1.0],
            }
        )
        pd.testing.assert_frame_equal(out, expected)

    def test_filters(self, league):
        out = league.players(season="2024")
        assert out["player"].tolist() == ["p01", "p03"]
        assert out["attempts"].tolist() == [3, 1]
        assert out["team"].tolist()[0] == "Owls / Hares"
        owls = league.players(team="Owls")
        assert owls["player"].tolist() == ["p01"]
        assert (owls["team"].tolist(), owls["attempts"].tolist(), owls["sessions"].tolist()) == (["Owls"], [5], [2])
        free_throws = league.players(attempt_type="free_throw")
        assert free_throws["player"].tolist() == ["p02"]
        assert free_throws["make_rate"].tolist() == [0.0]
        assert league.players(season=["2023", "2024"], attempt_type="field_goal")["player"].tolist() == ["p01", "p03"]
        assert league.players(team="Nobody").empty

    def test_empty_store(self, store):
        out = store.players()
        assert out.empty
        assert list(out.columns) == ["player", "player_name", "team", "attempts", "makes", "sessions", "make_rate"]


class TestDataVersion:
    def test_changes_with_attempts_only(self, store):
        empty = store.data_version()
        frame = shots("p01", "G1", [1])
        info = source_info(sha="1" * 64, attempts=frame)
        store.add_source(info, frame, no_rejects())
        one = store.data_version()
        assert one != empty
        assert store.add_source(info, frame, no_rejects()).status == "already_stored"
        assert store.data_version() == one
        store.add_source(info, frame, no_rejects(), replace=True)
        replaced = store.data_version()
        assert replaced not in (empty, one)

    def test_kept_across_reopen(self, store_path):
        with Store(store_path) as store:
            frame = shots("p01", "G1", [1])
            store.add_source(source_info(attempts=frame), frame, no_rejects())
            version = store.data_version()
        with Store(store_path, read_only=True) as store:
            assert store.data_version() == version


class TestLatestResult:
    def test_matching_subset_newest_wins_stale_ignored(self, store):
        frame = shots("p01", "G1", [1, 0, 1])
        store.add_source(source_info(sha="1" * 64, attempts=frame), frame, no_rejects())
        base = {"players": None, "seasons": ["2024"], "permutations": 100, "seed": 7}
        assert store.latest_result("difficulty_scan", base) is None

        store.save_result("difficulty_scan", {**base, "draws": 50}, {"run": "stale"})
        other = frame.assign(player="p02")
        store.add_source(source_info(name="season2.csv", sha="2" * 64, attempts=other), other, no_rejects())
        # saved for older data: never read back
        assert store.latest_result("difficulty_scan", base) is None

        store.save_result("difficulty_scan", {**base, "draws": 50}, {"run": "older"})
        time.sleep(0.01)
        store.save_result("difficulty_scan", {**base, "draws": 200}, {"run": "newer"})
        store.save_result("difficulty_scan", {**base, "seed": 8, "draws": 300}, {"run": "other seed"})
        store.save_result("league_scan", base, {"run": "other kind"})

        assert store.latest_result("difficulty_scan", base) == {"run": "newer"}
        assert store.latest_result("difficulty_scan", {**base, "seasons": ("2024",)}) == {"run": "newer"}
        assert store.latest_result("difficulty_scan", {**base, "draws": 50}) == {"run": "older"}
        assert store.latest_result("difficulty_scan", {**base, "seed": 8}) == {"run": "other seed"}
        assert store.latest_result("difficulty_scan", {**base, "seed": 9}) is None
        assert store.latest_result("difficulty_scan", {"missing": None}) is None
        assert store.latest_result("league_scan", {"seed": 7}) == {"run": "other kind"}


# -- export --------------------------------------------------------------------------


class TestExport:
    @pytest.fixture
    def filled(self, store):
        frame = pd.concat(
            [
                shots("p01", "G1", [1, 0], player_name="=SUM(A1)", team="-3", distance=-3.5, score_margin=-4.0),
                shots("p02", "G1", [1], player_name="+2.5", team="@home", first_row=4, distance=2.0, score_margin=3.0),
                shots("p03", "G1", [0], player_name="\tTab", team="-", first_row=5, distance=1.0, score_margin=0.0),
                shots("p04", "G1", [0], player_name="+1 555 0100", team="Plain", first_row=6),
            ],
            ignore_index=True,
        )
        rejects = pd.DataFrame({"row": [7], "column": ["made"], "message": ["=cmd|' /C calc'!A0"]})
        store.add_source(source_info(attempts=frame, rows_read=6), frame, rejects)
        return store

    def test_csv_escapes_formulas_only(self, filled, tmp_path):
        output = tmp_path / "attempts.csv"
        assert filled.export("attempts", output) == 5
        with output.open(newline="") as handle:
            rows = list(csv.DictReader(handle))
        assert len(rows) == 5
        assert [r["player_name"] for r in rows] == ["'=SUM(A1)", "'=SUM(A1)", "+2.5", "'\tTab", "'+1 555 0100"]
        assert [r["team"] for r in rows] == ["-3", "-3", "'@home", "'-", "Plain"]
        assert [r["distance"] for r in rows[:3]] == ["-3.5", "-3.5", "2.0"]
        assert [r["score_margin"] for r in rows[:2]] == ["-4.0", "-4.0"]
        assert rows[0]["made"] == "true"
        assert rows[0]["source_id"] == "1"
        assert rows[0]["season"] == ""

    def test_csv_rejects(self, filled, tmp_path):
        output = tmp_path / "rejects.CSV"
        assert filled.export("rejects", output) == 1
        with output.open(newline="") as handle:
            rows = list(csv.DictReader(handle))
        assert rows == [
            {"source_id": "1", "source": "season1.csv", "row": "7", "column": "made", "message": "'=cmd|' /C calc'!A0"}
        ]

    def test_parquet_keeps_types_and_text(self, filled, tmp_path):
        output = tmp_path / "attempts.parquet"
        assert filled.export("attempts", output) == 5
        back = pd.read_parquet(output)
        assert back["player_name"].tolist()[0] == "=SUM(A1)"
        assert back["made"].dtype == bool
        assert back["distance"].tolist()[0] == -3.5
        assert str(back["game_date"].dtype).startswith("datetime64")
        sources = tmp_path / "sources.parquet"
        assert filled.export("sources", sources) == 1
        assert pd.read_parquet(sources)["rows_read"].tolist() == [6]

    def test_empty_results_table(self, filled, tmp_path):
        output = tmp_path / "results.csv"
        assert filled.export("results", output) == 0
        assert output.read_text().strip() == "key,kind,created_at,settings,payload"

    def test_bad_table(self, store, tmp_path):
        with pytest.raises(
            InputError, match=r"unknown table 'meta' \(expected one of attempts, sources, rejects, results\)"
        ):
            store.export("meta", tmp_path / "meta.csv")

    def test_bad_extension(self, store, tmp_path):
        with pytest.raises(InputError, match=r"extension '.xlsx' \(expected .csv or .parquet\)"):
            store.export("attempts", tmp_path / "attempts.xlsx")
        assert not (tmp_path / "attempts.xlsx").exists()

    def test_missing_folder(self, store, tmp_path):
        with pytest.raises(InputError, match="does not exist"):
            store.export("attempts", tmp_path / "nowhere" / "attempts.csv")


@pytest.mark.slow
def test_insert_a_million_attempts_quickly(store, monkeypatch):
    """A million attempts go in as one bulk insert (no per-row Python work)."""
    n = 1_000_000
    rng = np.random.default_rng(7)
    session = np.char.add("G", (np.arange(n) // 20).astype(str))
    frame = validate_record(
        pd.DataFrame(
            {
                "player": "p01",
                "game": session,
                "session": session,
                "seq": np.arange(n) % 20,
                "made": rng.random(n) < 0.45,
                "attempt_type": "field_goal",
                "source": "big.csv",
                "source_row": np.arange(n) + 2,
            }
        )
    )
    # Time the store's own work: the frame is already a valid record.
    monkeypatch.setattr(store_module, "validate_record", lambda frame, path: frame)
    started = time.perf_counter()
    summary = store.add_source(source_info(name="big.csv", attempts=frame), frame, no_rejects())
    seconds = time.perf_counter() - started
    assert summary.attempts == n
    assert store.players()["attempts"].tolist() == [n]
    assert seconds < 5  # about half a second here; generous for busy test machines
