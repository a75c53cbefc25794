"""Tidy attempts to per-(player, session) 0/1 arrays ordered by seq."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from streakwise.analysis.sequences import player_sequences, session_arrays
from streakwise.ingest.load import load_file
from streakwise.ingest.profiles import load_profile

from conftest import DATA


def frame(rows):
    return pd.DataFrame(rows, columns=["player", "game", "session", "seq", "made", "attempt_type"])


class TestPlayerSequences:
    def test_validation(self):
        with pytest.raises(ValueError, match=r"needs columns player, session, seq, made \(missing seq\)"):
            player_sequences(pd.DataFrame({"player": [], "session": [], "made": []}))
        with pytest.raises(ValueError, match="'made' has missing values"):
            player_sequences(pd.DataFrame({"player": ["a"], "session": ["s"], "seq": [0], "made": pd.array([None], dtype="boolean")}))

    def test_orders_by_seq_and_keeps_sessions_apart(self):
        f = frame(
            [
                ("a", "g2", "g2", 1, False, "field_goal"),
                ("a", "g1", "g1", 1, True, "field_goal"),
                ("a", "g1", "g1", 0, False, "field_goal"),
                ("b", "g1", "g1", 0, True, "field_goal"),
                ("a", "g2", "g2", 0, True, "field_goal"),
            ]
        )
        seqs = player_sequences(f)
        a = seqs["a"]
        assert a.sessions.tolist() == ["g1", "g2"]
        assert a.made.dtype == np.int8
        assert a.made.tolist() == [0, 1, 1, 0]
        assert a.offsets.tolist() == [0, 2, 4]
        assert a.lengths.tolist() == [2, 2]
        assert a.makes.tolist() == [1, 1]
        assert [s.tolist() for s in a] == [[0, 1], [1, 0]]
        assert seqs["b"].made.tolist() == [1]

    def test_attempt_types_are_not_mixed(self):
        f = frame(
            [
                ("a", "g1", "g1", 0, True, "field_goal"),
                ("a", "g1", "g1", 1, False, "free_throw"),
                ("a", "g1", "g1", 2, False, "free_throw"),
                ("a", "g1", "g1", 3, True, "field_goal"),
            ]
        )
        assert player_sequences(f, attempt_type="field_goal")["a"].made.tolist() == [1, 1]
        assert player_sequences(f, attempt_type="free_throw")["a"].made.tolist() == [0, 0]
        assert player_sequences(f, attempt_type="field_goal", players=["zz"]) == {}

    def test_season_order_by_date(self):
        f = frame([("a", "late", "late", 0, True, "field_goal"), ("a", "early", "early", 0, False, "field_goal")])
        f["game_date"] = pd.to_datetime(["2026-02-01", "2026-01-01"])
        assert player_sequences(f)["a"].sessions.tolist() == ["early", "late"]

    def test_golden_event_log(self):
        folder = DATA / "ingest" / "events"
        attempts = load_file(folder / "events.csv", load_profile(folder / "profile.toml")).attempts
        arrays = session_arrays(attempts)
        # expected.csv of the event-log golden case, read by hand
        assert {k: v.tolist() for k, v in arrays.items()} == {
            ("r1", "E1"): [1, 1, 1, 0],
            ("r1", "E2"): [0],
            ("r2", "E1"): [0, 1],
        }
        free = session_arrays(attempts, attempt_type="free_throw")
        assert {k: v.tolist() for k, v in free.items()} == {("r1", "E1"): [1, 0]}
