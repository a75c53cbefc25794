"""Behaviour of the ingest path, one feature at a time, on small files written here.

Ordering (timestamps, game clocks counting down or up, overtime), session
splits, the JSON lines and Excel readers' row numbers, outcome words, attempt
types and points, drill rounds, and ``keep_going``.
"""

from __future__ import annotations

import warnings

import openpyxl
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from streakwise.ingest.errors import InputError
from streakwise.ingest.load import SessionMergeWarning, load_file
from streakwise.ingest.profiles import parse_profile


def write(tmp_path, name: str, text: str):
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def profile(text: str):
    return parse_profile(text, source="test.toml")


def load(path, profile_text: str | None = None, **options):
    return load_file(path, profile(profile_text) if profile_text else None, **options)


def refused(path, profile_text: str | None = None, **options) -> str:
    with pytest.raises(InputError) as info:
        load(path, profile_text, **options)
    return str(info.value)


def column(loaded, name: str) -> list:
    return loaded.attempts[name].tolist()


def by_row(loaded, *names: str) -> list[tuple]:
    """(source_row, *names) per attempt, in stored order."""
    frame = loaded.attempts
    return list(zip(frame["source_row"], *(frame[n] for n in names), strict=True))


BASIC = '[columns]\nplayer = "player"\ngame = "game"\nmade = "res"\n'
TIMESTAMPED = BASIC + 'timestamp = "ts"\n'
CLOCKED = BASIC + 'period = "per"\nclock = "clk"\n[order]\nby = "clock"\nperiod_seconds = 600\n'


# -- order: timestamps -----------------------------------------------------------------


class TestTimestampOrder:
    def test_ties_keep_file_order(self, tmp_path):
        path = write(
            tmp_path,
            "t.csv",
            "player,game,ts,res\n"
            "a,g,2025-01-01T10:00:01,1\n"
            "a,g,2025-01-01T10:00:05,0\n"
            "a,g,2025-01-01T10:00:05,1\n"
            "a,g,2025-01-01T10:00:05,0\n"
            "a,g,2025-01-01T10:00:09,1\n",
        )
        loaded = load(path, TIMESTAMPED)
        assert by_row(loaded, "seq", "made") == [(2, 0, True), (3, 1, False), (4, 2, True), (5, 3, False), (6, 4, True)]

    def test_players_interleaved_in_the_file(self, tmp_path):
        path = write(
            tmp_path,
            "t.csv",
            "player,game,ts,res\n"
            "b,g,2025-01-01T10:00:02,0\n"
            "a,g,2025-01-01T10:00:03,1\n"
            "b,g,2025-01-01T10:00:04,1\n"
            "a,g,2025-01-01T10:00:07,0\n",
        )
        loaded = load(path, TIMESTAMPED)
        assert by_row(loaded, "player", "seq") == [(3, "a", 0), (5, "a", 1), (2, "b", 0), (4, "b", 1)]

    def test_time_zones_are_compared_in_utc(self, tmp_path):
        path = write(
            tmp_path,
            "t.csv",
            "player,game,ts,res\na,g,2025-01-01T10:00:00+02:00,1\na,g,2025-01-01T09:30:00+00:00,0\n",
        )
        assert column(load(path, TIMESTAMPED), "made") == [True, False]

    def test_backwards_is_refused(self, tmp_path):
        path = write(tmp_path, "t.csv", "player,game,ts,res\na,g,2025-01-01T10:00:05,1\na,g,2025-01-01T10:00:01,0\n")
        assert refused(path, TIMESTAMPED) == (
            f"{path}:3:ts: order goes backwards: time 2025-01-01 10:00:01 comes after time 2025-01-01 10:00:05 "
            "(row 2) in the same player's session; rows must be in game order"
        )

    def test_unreadable_time(self, tmp_path):
        path = write(tmp_path, "t.csv", "player,game,ts,res\na,g,2025-01-01T10:00:05,1\na,g,yesterday,0\n")
        message = refused(path, TIMESTAMPED)
        assert message.splitlines()[0] == f"{path}:3:ts: expected a date-time like 2025-01-31T19:05:00, found 'yesterday'"

    def test_unreadable_time_is_reported_once(self, tmp_path):
        path = write(tmp_path, "t.csv", "player,game,ts,res\na,g,2025-01-01T10:00:05,1\na,g,yesterday,0\n")
        assert "NaT" not in refused(path, TIMESTAMPED)


# -- order: game clock -----------------------------------------------------------------


class TestClockOrder:
    def test_counting_down(self, tmp_path):
        path = write(tmp_path, "c.csv", "player,game,per,clk,res\na,g,1,9:00,1\na,g,1,8:30,0\na,g,2,9:59,1\n")
        loaded = load(path, CLOCKED)
        assert by_row(loaded, "seq", "clock_s") == [(2, 0, 540.0), (3, 1, 510.0), (4, 2, 599.0)]

    def test_counting_up(self, tmp_path):
        path = write(
            tmp_path,
            "c.csv",
            "player,game,per,clk,res\na,g,1,0:30,1\na,g,1,5:10.5,0\na,g,1,5:10.5,1\na,g,2,1:00,0\n",
        )
        loaded = load(path, CLOCKED.replace('by = "clock"', 'by = "clock"\nclock = "up"'))
        assert by_row(loaded, "seq", "clock_s", "made") == [
            (2, 0, 30.0, True),
            (3, 1, 310.5, False),
            (4, 2, 310.5, True),  # a tie keeps file order
            (5, 3, 60.0, False),
        ]

    def test_counting_up_backwards_is_refused(self, tmp_path):
        path = write(tmp_path, "c.csv", "player,game,per,clk,res\na,g,1,5:00,1\na,g,1,4:00,0\n")
        message = refused(path, CLOCKED.replace('by = "clock"', 'by = "clock"\nclock = "up"'))
        assert message == (
            f"{path}:3:clk: order goes backwards: period 1 clock 4:00 comes after period 1 clock 5:00 (row 2) "
            "in the same player's session; rows must be in game order"
        )

    def test_clock_formats(self, tmp_path):
        path = write(
            tmp_path,
            "c.csv",
            "player,game,per,clk,res\na,g,1,590,1\na,g,1,300.5,0\na,g,1,5:00.2,1\na,g,1,4:59,0\na,g,1,0:00:30,1\na,g,1,0:03.25,0\n",
        )
        assert column(load(path, CLOCKED), "clock_s") == pytest.approx([590.0, 300.5, 300.2, 299.0, 30.0, 3.25])

    def test_numeric_clock_from_native_files(self, tmp_path):
        path = tmp_path / "c.parquet"
        pd.DataFrame({"player": ["a", "a"], "game": ["g", "g"], "per": [1, 1], "clk": [540.5, 12.0], "res": [1, 0]}).to_parquet(path)
        assert column(load(path, CLOCKED), "clock_s") == [540.5, 12.0]

    def test_bad_clocks(self, tmp_path):
        path = write(tmp_path, "c.csv", "player,game,per,clk,res\na,g,1,10:75,1\na,g,1,soon,1\na,g,1,-5,0\na,g,1,10:01,0\n")
        assert refused(path, CLOCKED).splitlines() == [
            f"{path}:2:clk: expected a game clock like 7:45, 7:45.3 or seconds, found '10:75'",
            f"{path}:3:clk: expected a game clock like 7:45, 7:45.3 or seconds, found 'soon'",
            f"{path}:4:clk: impossible game clock: negative",
            f"{path}:5:clk: impossible game clock 10:01: beyond the 10:00 period",
        ]

    def test_overtime_length(self, tmp_path):
        text = CLOCKED.replace("period_seconds = 600", "period_seconds = 720\novertime_seconds = 300\nregular_periods = 4")
        good = write(tmp_path, "ot.csv", "player,game,per,clk,res\na,g,4,11:59,1\na,g,5,5:00,0\na,g,6,4:59.5,1\n")
        assert by_row(load(good, text), "period", "clock_s") == [(2, 4, 719.0), (3, 5, 300.0), (4, 6, 299.5)]
        bad = write(tmp_path, "ot_bad.csv", "player,game,per,clk,res\na,g,4,12:00,1\na,g,5,5:01,0\n")
        assert refused(bad, text) == f"{bad}:3:clk: impossible game clock 5:01: beyond the 5:00 period"

    def test_overtime_defaults_to_the_period_length(self, tmp_path):
        path = write(tmp_path, "ot.csv", "player,game,per,clk,res\na,g,5,9:59,1\n")
        assert column(load(path, CLOCKED), "clock_s") == [599.0]

    def test_regular_periods(self, tmp_path):
        text = CLOCKED.replace("period_seconds = 600", "period_seconds = 1200\novertime_seconds = 300\nregular_periods = 2")
        path = write(tmp_path, "halves.csv", "player,game,per,clk,res\na,g,2,19:00,1\na,g,3,19:00,0\n")
        assert refused(path, text) == f"{path}:3:clk: impossible game clock 19:00: beyond the 5:00 period"


# -- sessions --------------------------------------------------------------------------

SPLIT_LOG = (
    "player,game,per,clk,res\n"
    "a,g1,1,9:00,1\n"
    "a,g1,1,8:00,0\n"
    "a,g1,2,9:30,1\n"
    "a,g1,2,2:00,1\n"
    "b,g1,1,7:00,0\n"
    "a,g2,1,5:00,1\n"
)


class TestSessions:
    def test_game_by_default(self, tmp_path):
        loaded = load(write(tmp_path, "s.csv", SPLIT_LOG), CLOCKED)
        assert by_row(loaded, "player", "session", "seq") == [
            (2, "a", "g1", 0), (3, "a", "g1", 1), (4, "a", "g1", 2), (5, "a", "g1", 3), (7, "a", "g2", 0), (6, "b", "g1", 0)
        ]
        assert column(loaded, "game") == column(loaded, "session")

    def test_period(self, tmp_path):
        loaded = load(write(tmp_path, "s.csv", SPLIT_LOG), CLOCKED, sessions="period")
        assert by_row(loaded, "game", "session", "seq") == [
            (2, "g1", "g1/P1", 0), (3, "g1", "g1/P1", 1), (4, "g1", "g1/P2", 0), (5, "g1", "g1/P2", 1), (7, "g2", "g2/P1", 0), (6, "g1", "g1/P1", 0)
        ]

    def test_period_from_the_profile(self, tmp_path):
        loaded = load(write(tmp_path, "s.csv", SPLIT_LOG), CLOCKED + '[sessions]\nsplit = "period"\n')
        assert sorted(set(column(loaded, "session"))) == ["g1/P1", "g1/P2", "g2/P1"]

    def test_gap_with_periods_and_clock(self, tmp_path):
        # a in g1: 1:00 and 2:00 into the game, then 10:30 (period 2 starts at 10:00) and 18:00.
        loaded = load(write(tmp_path, "s.csv", SPLIT_LOG), CLOCKED, sessions="gap", gap_seconds=300)
        assert by_row(loaded, "session", "seq") == [
            (2, "g1/S1", 0), (3, "g1/S1", 1), (4, "g1/S2", 0), (5, "g1/S3", 0), (7, "g2/S1", 0), (6, "g1/S1", 0)
        ]
        wide = load(write(tmp_path, "s.csv", SPLIT_LOG), CLOCKED, sessions="gap", gap_seconds=600)
        assert column(wide, "session")[:4] == ["g1/S1", "g1/S1", "g1/S1", "g1/S1"]

    def test_gap_counts_overtime_and_a_clock_counting_up(self, tmp_path):
        text = CLOCKED.replace('by = "clock"', 'by = "clock"\nclock = "up"').replace(
            "period_seconds = 600", "period_seconds = 600\novertime_seconds = 120\nregular_periods = 2"
        )
        # elapsed: 9:50 (period 1 at 9:50), 20:00 + 0:10 = 20:10 (first overtime), 22:00 + 1:00 = 23:00 (second)
        path = write(tmp_path, "s.csv", "player,game,per,clk,res\na,g,1,9:50,1\na,g,3,0:10,0\na,g,4,1:00,1\n")
        assert column(load(path, text, sessions="gap", gap_seconds=170), "session") == ["g/S1", "g/S2", "g/S2"]
        assert column(load(path, text, sessions="gap", gap_seconds=169), "session") == ["g/S1", "g/S2", "g/S3"]

    def test_gap_with_timestamps(self, tmp_path):
        path = write(
            tmp_path,
            "s.csv",
            "player,game,ts,res\n"
            "a,g,2025-01-01T10:00:00,1\n"
            "a,g,2025-01-01T10:03:00,0\n"
            "a,g,2025-01-01T10:03:30,0\n"
            "b,g,2025-01-01T10:01:00,1\n",
        )
        loaded = load(path, TIMESTAMPED, sessions="gap", gap_seconds=120)
        assert by_row(loaded, "player", "session", "seq") == [(2, "a", "g/S1", 0), (3, "a", "g/S2", 0), (4, "a", "g/S2", 1), (5, "b", "g/S1", 0)]

    def test_gap_needs_seconds(self, tmp_path):
        path = write(tmp_path, "s.csv", SPLIT_LOG)
        assert "needs a gap in seconds" in refused(path, CLOCKED, sessions="gap")

    def test_gap_needs_game_time(self, tmp_path):
        path = write(tmp_path, "s.csv", "player,game,res\na,g,1\n")
        assert "needs a game clock or timestamps" in refused(path, BASIC, sessions="gap", gap_seconds=60)

    def test_unknown_split(self, tmp_path):
        path = write(tmp_path, "s.csv", SPLIT_LOG)
        assert "sessions must be one of game, period, gap, season (got 'week')" in refused(path, CLOCKED, sessions="week")

    def test_season_warns_and_merges(self, tmp_path):
        path = write(
            tmp_path,
            "s.csv",
            "player,game,ts,res,yr\n"
            "a,g1,2025-01-03T19:00:00,1,2025\n"
            "a,g1,2025-01-03T19:04:00,0,2025\n"
            "a,g2,2025-01-05T19:00:00,1,2025\n"
            "a,g3,2026-01-05T19:00:00,0,2026\n",
        )
        with pytest.warns(SessionMergeWarning, match="mix form across games"):
            loaded = load(path, TIMESTAMPED + 'season = "yr"\n', sessions="season")
        assert by_row(loaded, "game", "session", "seq") == [(2, "g1", "2025", 0), (3, "g1", "2025", 1), (4, "g2", "2025", 2), (5, "g3", "2026", 0)]
        assert any("mix form across games" in note for note in loaded.notes)

    def test_season_without_a_season_column(self, tmp_path):
        path = write(tmp_path, "s.csv", "player,game,ts,res\na,g1,2025-01-03T19:00:00,1\na,g2,2025-01-05T19:00:00,0\n")
        with pytest.warns(SessionMergeWarning):
            loaded = load(path, TIMESTAMPED, sessions="season")
        assert len(set(column(loaded, "session"))) == 1
        assert column(loaded, "seq") == [0, 1]

    def test_no_warning_for_games(self, tmp_path):
        path = write(tmp_path, "s.csv", SPLIT_LOG)
        with warnings.catch_warnings():
            warnings.simplefilter("error", SessionMergeWarning)
            load(path, CLOCKED)

    def test_season_with_a_game_clock(self, tmp_path):
        path = write(tmp_path, "s.csv", SPLIT_LOG)
        with pytest.warns(SessionMergeWarning):
            loaded = load(path, CLOCKED, sessions="season")
        assert by_row(loaded, "player", "seq")[:5] == [(2, "a", 0), (3, "a", 1), (4, "a", 2), (5, "a", 3), (7, "a", 4)]


# -- readers: JSON lines and Excel row numbers -----------------------------------------


class TestJsonLines:
    TEXT = (
        '{"player": "a", "session": "s", "seq": 0, "made": 1}\n'
        "[1, 2]\n"
        '{"player": "a", "session": "s", "seq": 1, "made": {"value": 1}}\n'
        "\n"
        '{"player": "a", "session": "s", "seq": 1, "made": 0}\n'
        "not json\n"
        '{"player": "a", "session": "s", "seq": 2, "made": true, "distance": null}\n'
    )

    def test_problems_name_their_lines(self, tmp_path):
        path = write(tmp_path, "j.jsonl", self.TEXT)
        assert refused(path).splitlines() == [
            f"{path}:2: expected a JSON object per line, found list",
            f"{path}:3:made: expected a plain value, found a nested object or list",
            f"{path}:6: not valid JSON: Expecting value",
        ]

    def test_keep_going_keeps_the_objects(self, tmp_path):
        loaded = load(write(tmp_path, "j.jsonl", self.TEXT), keep_going=True)
        assert by_row(loaded, "seq", "made") == [(1, 0, True), (5, 1, False), (7, 2, True)]
        assert loaded.rejects["row"].tolist() == [2, 3, 6]
        assert (loaded.rows_read, loaded.rows_stored, loaded.rows_rejected) == (6, 3, 3)

    def test_nothing_but_blank_lines(self, tmp_path):
        path = write(tmp_path, "j.jsonl", "\n\n  \n")
        assert refused(path) == f"{path}: file is empty"


class TestExcel:
    def workbook(self, path, rows):
        book = openpyxl.Workbook()
        sheet = book.active
        for row in rows:
            sheet.append(row)
        book.save(path)
        return path

    def test_row_numbers_as_excel_shows_them(self, tmp_path):
        path = self.workbook(
            tmp_path / "x.xlsx",
            [[], [], ["player", "session", "seq", "made"], ["a", "s", 0, "yes"], [], ["a", "s", 1, "maybe"], ["a", "s", 2, "no"]],
        )
        message = refused(path)
        assert message.startswith(f"{path}:6:made: unknown outcome 'maybe'")
        loaded = load(path, keep_going=True)
        assert by_row(loaded, "made") == [(4, True), (7, False)]
        assert loaded.rejects["row"].tolist() == [6]

    def test_header_in_a_later_row_misses_a_column(self, tmp_path):
        path = self.workbook(tmp_path / "x.xlsx", [[], ["player", "sesion", "seq", "made"], ["a", "s", 0, 1]])
        assert refused(path).startswith(f"{path}:2:session: column 'session' not found; did you mean 'sesion'?")

    def test_header_only_after_blank_rows(self, tmp_path):
        path = self.workbook(tmp_path / "x.xlsx", [[], [], ["player", "session", "seq", "made"]])
        assert refused(path) == f"{path}:3: file has a header but no data rows"

    def test_cells_beyond_the_header(self, tmp_path):
        path = self.workbook(tmp_path / "x.xlsx", [["player", "session", "seq", "made"], ["a", "s", 0, 1, "extra"], ["a", "s", 1, 0]])
        assert refused(path) == f"{path}:2: expected 4 cells as in the header, found values beyond column 4"

    def test_named_sheet(self, tmp_path):
        book = openpyxl.Workbook()
        book.active.append(["nothing"])
        data = book.create_sheet("shots")
        for row in (["who", "match", "result"], ["a", "g", "in"]):
            data.append(row)
        path = tmp_path / "x.xlsx"
        book.save(path)
        text = '[columns]\nplayer = "who"\ngame = "match"\nmade = "result"\n[file]\nsheet = "shots"\n'
        assert by_row(load(path, text), "made") == [(2, True)]
        assert "no sheet named 'other'" in refused(path, text.replace('"shots"', '"other"'))


# -- outcomes --------------------------------------------------------------------------


class TestOutcomeWords:
    @pytest.mark.parametrize(
        ("made", "missed"),
        [("1", "0"), ("made", "missed"), ("H", "M"), ("in", "out"), ("X", "O"), ("true", "false"), ("TRUE", "False"), ("Make", "MISS"), ("1.0", "0.0")],
    )
    def test_default_words(self, tmp_path, made, missed):
        path = write(tmp_path, "o.csv", f"player,session,seq,made\na,s,0,{made}\na,s,1,{missed}\na,s,2, {made} \n")
        assert column(load(path), "made") == [True, False, True]

    @pytest.mark.parametrize(
        ("made", "missed", "values"),
        [
            ('["1"]', '["0"]', ("1", "0")),
            ("[1]", "[0]", ("1", "0")),
            ('["made"]', '["missed"]', ("MADE", "missed")),
            ('["H"]', '["M"]', ("h", "M")),
            ('["in"]', '["out"]', ("IN", "out")),
            ('["X"]', '["O"]', ("x", "O")),
            ("[true]", "[false]", ("true", "False")),
            ('["swish", "bank"]', '["brick"]', ("Bank", "brick")),
        ],
    )
    def test_profile_lists(self, tmp_path, made, missed, values):
        path = write(tmp_path, "o.csv", f"player,game,res\na,g,{values[0]}\na,g,{values[1]}\n")
        assert column(load(path, BASIC + f"[outcomes]\nmade = {made}\nmissed = {missed}\n"), "made") == [True, False]

    def test_profile_lists_replace_the_defaults(self, tmp_path):
        path = write(tmp_path, "o.csv", "player,game,res\na,g,swish\na,g,1\n")
        message = refused(path, BASIC + '[outcomes]\nmade = ["swish"]\nmissed = ["brick"]\n')
        assert message == f"{path}:3:res: unknown outcome '1'; expected 'swish' for made or 'brick' for missed"

    def test_native_booleans_and_numbers(self, tmp_path):
        jsonl = write(
            tmp_path,
            "o.jsonl",
            '{"player": "a", "session": "s", "seq": 0, "made": true}\n'
            '{"player": "a", "session": "s", "seq": 1, "made": false}\n'
            '{"player": "a", "session": "s", "seq": 2, "made": 1}\n',
        )
        assert column(load(jsonl), "made") == [True, False, True]
        for values in ([True, False], [1.0, 0.0], [1, 0]):
            path = tmp_path / "o.parquet"
            pd.DataFrame({"player": ["a", "a"], "session": ["s", "s"], "seq": [0, 1], "made": values}).to_parquet(path)
            assert column(load(path), "made") == [True, False]

    def test_missing_outcome(self, tmp_path):
        path = write(tmp_path, "o.csv", "player,game,res\na,g,\n")
        assert refused(path, BASIC) == f"{path}:2:res: outcome is missing"

    def test_a_word_in_both_lists_is_refused(self):
        with pytest.raises(InputError, match="'y' is listed as both made and missed"):
            profile(BASIC + '[outcomes]\nmade = ["Y"]\nmissed = ["y"]\n')


# -- attempt types and points ----------------------------------------------------------

TYPED = BASIC + 'attempt_type = "kind"\n[attempt_types]\nfield_goal = ["2PT", "3pt", "Dunk"]\nfree_throw = ["FT"]\n'


class TestAttemptTypes:
    def test_mapping_ignores_case(self, tmp_path):
        path = write(tmp_path, "t.csv", "player,game,res,kind\na,g,1,2pt\na,g,0,ft\na,g,1,DUNK\na,g,1,3PT\n")
        assert column(load(path, TYPED), "attempt_type") == ["field_goal", "free_throw", "field_goal", "field_goal"]

    def test_unknown_and_missing_types(self, tmp_path):
        path = write(tmp_path, "t.csv", "player,game,res,kind\na,g,1,2PT\na,g,1,hook\na,g,1,\n")
        assert refused(path, TYPED).splitlines() == [
            f"{path}:3:kind: unknown attempt type 'hook'; expected one of 2pt, 3pt, dunk, ft",
            f"{path}:4:kind: attempt type is missing",
        ]

    def test_free_text_without_a_mapping(self, tmp_path):
        path = write(tmp_path, "t.csv", "player,game,res,kind\na,g,1,serve\na,g,0,second serve\n")
        assert column(load(path, BASIC + 'attempt_type = "kind"\n'), "attempt_type") == ["serve", "second serve"]

    def test_default_without_a_column(self, tmp_path):
        path = write(tmp_path, "t.csv", "player,game,res\na,g,1\n")
        assert column(load(path, BASIC), "attempt_type") == ["field_goal"]
        assert column(load(path, BASIC + '[attempt_types]\ndefault = "penalty"\n'), "attempt_type") == ["penalty"]
        assert column(load(path, BASIC + '[fixed]\nattempt_type = "putt"\n'), "attempt_type") == ["putt"]


class TestPoints:
    def test_free_throws_default_to_one(self, tmp_path):
        path = write(tmp_path, "p.csv", "player,game,res,kind,pts\na,g,1,2PT,2\na,g,0,FT,\na,g,1,FT,2\na,g,1,3pt,\n")
        loaded = load(path, TYPED.replace('attempt_type = "kind"\n', 'attempt_type = "kind"\npoints = "pts"\n'))
        assert column(loaded, "points") == [2, 1, 2, pd.NA]

    def test_free_throws_without_a_points_column(self, tmp_path):
        path = write(tmp_path, "p.csv", "player,game,res,kind\na,g,1,FT\na,g,1,2PT\n")
        assert column(load(path, TYPED), "points") == [1, pd.NA]

    def test_event_kind_points(self, tmp_path):
        path = write(tmp_path, "e.csv", "game,no,who,event,outcome\ng,1,a,dunk,\ng,2,a,three,made\ng,3,a,ft,missed\ng,4,a,rebound,\n")
        text = (
            'layout = "events"\n[columns]\nplayer = "who"\ngame = "game"\nindex = "no"\nmade = "outcome"\n'
            '[events]\nkind = "event"\nattempts = { dunk = { type = "field_goal", made = true, points = 2 }, '
            'three = { type = "field_goal", points = 3 }, ft = "free_throw" }\n'
        )
        loaded = load(path, text)
        assert by_row(loaded, "attempt_type", "made", "points") == [
            (2, "field_goal", True, 2),
            (3, "field_goal", True, 3),
            (4, "free_throw", False, 1),
        ]
        assert loaded.skipped_kinds == {"rebound": 1}

    def test_impossible_points(self, tmp_path):
        path = write(tmp_path, "p.csv", "player,game,res,pts\na,g,1,11\na,g,1,-1\na,g,1,2.5\n")
        assert refused(path, BASIC + 'points = "pts"\n').splitlines() == [
            f"{path}:2:pts: impossible value 11: must be at most 10",
            f"{path}:3:pts: impossible value -1: must be at least 0",
            f"{path}:4:pts: expected a whole number, found 2.5",
        ]


# -- drills ----------------------------------------------------------------------------

DRILLS = 'layout = "drills"\n[columns]\nplayer = "who"\ndate = "day"\nspot = "spot"\nshots = "s"\n'


class TestDrills:
    def test_rounds_counted_per_player_day_and_spot(self, tmp_path):
        path = write(
            tmp_path,
            "d.csv",
            "who,day,spot,s\n"
            "d1,2026-03-02,corner,XXO\n"
            "d1,2026-03-02,corner,OX\n"
            "d1,2026-03-02,wing,X\n"
            "d2,2026-03-02,corner,O\n"
            "d1,2026-03-03,corner,XX\n",
        )
        loaded = load(path, DRILLS)
        sessions = loaded.attempts.groupby("session", sort=True)["source_row"].first().to_dict()
        assert sessions == {
            "2026-03-02/corner/r1": 2,
            "2026-03-02/corner/r2": 3,
            "2026-03-02/wing/r1": 4,
            "2026-03-03/corner/r1": 6,
        }
        assert loaded.attempts.loc[loaded.attempts["player"] == "d2", "session"].tolist() == ["2026-03-02/corner/r1"]
        assert (loaded.rows_read, loaded.rows_stored, len(loaded.attempts)) == (5, 5, 9)

    def test_rounds_given(self, tmp_path):
        path = write(tmp_path, "d.csv", "who,day,spot,r,s\nd1,2026-03-02,corner,2,XXO\nd1,2026-03-02,corner,1,OX\n")
        loaded = load(path, DRILLS + 'round = "r"\n')
        assert by_row(loaded, "session", "seq", "made") == [
            (3, "2026-03-02/corner/r1", 0, False),
            (3, "2026-03-02/corner/r1", 1, True),
            (2, "2026-03-02/corner/r2", 0, True),
            (2, "2026-03-02/corner/r2", 1, True),
            (2, "2026-03-02/corner/r2", 2, False),
        ]

    def test_round_given_twice(self, tmp_path):
        path = write(tmp_path, "d.csv", "who,day,spot,r,s\nd1,2026-03-02,corner,1,XXO\nd1,2026-03-02,corner,1,OX\n")
        assert refused(path, DRILLS + 'round = "r"\n') == (
            f"{path}:3: duplicate round: the same player, day, spot and round appear on an earlier row"
        )

    def test_symbols_separators_and_case(self, tmp_path):
        path = write(tmp_path, "d.csv", "who,day,s\nd1,2026-03-02,X|o;1 0/h-m\n")
        text = 'layout = "drills"\n[columns]\nplayer = "who"\ndate = "day"\nshots = "s"\n'
        assert column(load(path, text), "made") == [True, False, True, False, True, False]

    def test_empty_and_unknown_symbols(self, tmp_path):
        path = write(tmp_path, "d.csv", "who,day,s\nd1,2026-03-02,XXO\nd1,2026-03-02,\nd1,2026-03-02,XQ\n")
        text = 'layout = "drills"\n[columns]\nplayer = "who"\ndate = "day"\nshots = "s"\n[drills]\nmade = "X"\nmissed = "O"\n'
        assert refused(path, text).splitlines() == [
            f"{path}:3:s: no attempts: the shots cell is empty",
            f"{path}:4:s: unknown symbol 'Q' (attempt 2); expected X for a make, O for a miss, separators ' ,;|/-_.'",
        ]
        loaded = load(path, text, keep_going=True)
        assert (loaded.rows_read, loaded.rows_stored, loaded.rows_rejected, len(loaded.attempts)) == (3, 1, 2, 3)

    def test_without_a_date(self, tmp_path):
        path = write(tmp_path, "d.csv", "who,s\nd1,XO\nd1,OO\n")
        loaded = load(path, 'layout = "drills"\n[columns]\nplayer = "who"\nshots = "s"\n')
        assert sorted(set(column(loaded, "session"))) == ["practice/-/r1", "practice/-/r2"]


# -- keep going ------------------------------------------------------------------------


class TestKeepGoing:
    def test_drops_exactly_the_bad_rows(self, tmp_path):
        path = write(
            tmp_path,
            "k.csv",
            "player,game,per,clk,res,dist\n"
            "a,g,1,9:00,1,3\n"
            "a,g,1,8:00,maybe,4\n"  # bad outcome
            "a,g,1,7:00,0,-2\n"  # impossible distance
            "a,g,1,6:00,1,5\n"
            "a,g,1,6:30,0,5\n"  # clock goes backwards
            "a,g,1,5:00,1\n"  # ragged
            "b,g,1,4:00,0,1\n"
            "b,g,1,3:00,1,far\n",  # bad distance
        )
        text = CLOCKED.replace('clock = "clk"\n', 'clock = "clk"\ndistance = "dist"\n')
        loaded = load(path, text, keep_going=True)
        assert set(loaded.rejects["row"]) == {3, 4, 6, 7, 9}
        assert by_row(loaded, "player", "seq") == [(2, "a", 0), (5, "a", 1), (8, "b", 0)]
        assert (loaded.rows_read, loaded.rows_stored, loaded.rows_rejected) == (8, 3, 5)
        with pytest.raises(InputError) as info:
            load(path, text)
        assert sorted({p.row for p in info.value.problems}) == [3, 4, 6, 7, 9]

    def test_several_problems_on_one_row_count_once(self, tmp_path):
        path = write(tmp_path, "k.csv", "player,session,seq,made,distance\na,s,0,1,1\na,s,1,maybe,far\n")
        loaded = load(path, keep_going=True)
        assert len(loaded.rejects) == 2
        assert (loaded.rows_read, loaded.rows_stored, loaded.rows_rejected) == (2, 1, 1)


# -- readers: fixed here ---------------------------------------------------------------


class TestReaderEdges:
    def test_carriage_returns_end_lines(self, tmp_path):
        path = tmp_path / "cr.csv"
        path.write_bytes(b"player,session,seq,made\ra,s,0,1\rb,s,0,0\r")
        assert by_row(load(path), "player") == [(2, "a"), (3, "b")]

    def test_header_the_csv_reader_cannot_parse(self, tmp_path):
        path = tmp_path / "h.csv"
        path.write_bytes(b'"player' + b"x" * 200_000 + b"\n")
        assert refused(path).startswith(f"{path}:1: cannot parse the header as CSV")

    def test_parquet_with_invalid_text(self, tmp_path):
        path = tmp_path / "bad.parquet"
        text = pa.array([b"ok", b"\xc1\x32"], type=pa.binary()).view(pa.string())
        pq.write_table(pa.table({"player": text, "session": ["s", "s"], "seq": [0, 1], "made": [1, 0]}), path)
        assert refused(path).startswith(f"{path}: cannot read as Parquet:")

    def test_whole_numbers_too_large(self, tmp_path):
        path = write(tmp_path, "n.csv", "player,session,seq,made,game_order\na,s,0,1,1e19\na,s,1,0,3\n")
        assert refused(path) == f"{path}:2:game_order: impossible value 1e+19: too large for a whole number"
        loaded = load(path, keep_going=True)
        assert column(loaded, "game_order") == [3]


# -- missing keys and unreadable rows never crash the ordering ------------------------


class TestSessionsBugs:
    @pytest.mark.parametrize(
        ("text", "profile_text", "row", "message"),
        [
            ("player,session,seq,made\na,s,0,1\n,s,1,0\n", None, 3, "player is missing"),
            ("player,game,per,clk,res\na,g1,1,9:00,1\na,,1,8:00,0\n", CLOCKED, 3, "game is missing"),
        ],
    )
    def test_missing_key_cell_is_an_input_error(self, tmp_path, text, profile_text, row, message):
        path = write(tmp_path, "k.csv", text)
        with pytest.raises(InputError) as info:
            load(path, profile_text)
        assert (info.value.row, info.value.reason) == (row, message)
        loaded = load(path, profile_text, keep_going=True)
        assert loaded.rejects["row"].tolist() == [row]

    def test_every_row_unreadable(self, tmp_path):
        path = write(tmp_path, "r.csv", "player,session,seq,made\na,s\n")
        assert refused(path) == f"{path}:2: expected 4 fields as in the header, found 2"
        loaded = load(path, keep_going=True)
        assert (loaded.rows_read, loaded.rows_stored, loaded.rows_rejected) == (1, 0, 1)


# -- profiles: values of the wrong kind are refused where they are written -------------


class TestProfileValues:
    @pytest.mark.parametrize(
        ("extra", "place", "message"),
        [
            ("[file]\ndelimiter = 5\n", "file.delimiter", 'expected one character, like "," or ";" (got 5)'),
            ('[file]\ndelimiter = ";;"\n', "file.delimiter", "expected one character"),
            ("[file]\nsheet = 3\n", "file.sheet", "expected a sheet name (text), got 3"),
            ("[fixed]\nteam = [1, 2]\n", "fixed.team", "expected a plain value (text or a number), got [1, 2]"),
            ("[order]\nregular_periods = true\n", "order.regular_periods", "expected a whole number >= 1 (got True)"),
            ("[order]\nperiod_seconds = -1\n", "order.period_seconds", "expected a positive number of seconds (got -1)"),
            ('[order]\nby = "time"\n', "order.by", "must be one of index, clock, timestamp, file, seq (got 'time')"),
            ('[sessions]\nsplit = "gap"\n', "sessions.gap_seconds", 'split = "gap" needs gap_seconds'),
        ],
    )
    def test_refused_with_the_key(self, extra, place, message):
        with pytest.raises(InputError) as info:
            parse_profile(BASIC + extra, source="p.toml")
        assert (info.value.path, info.value.column) == ("p.toml", place)
        assert message in info.value.reason

    def test_tab_delimiter(self, tmp_path):
        path = write(tmp_path, "t.txt", "player\tgame\tres\na\tg\t1\n")
        assert column(load(path, BASIC + '[file]\ndelimiter = "\\t"\n'), "made") == [True]

    def test_fixed_numbers_become_text(self, tmp_path):
        path = write(tmp_path, "t.csv", "player,game,res\na,g,1\n")
        assert column(load(path, BASIC + "[fixed]\nseason = 2025\n"), "season") == ["2025"]
