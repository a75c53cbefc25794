"""``streakwise states`` as a user runs it: a tiny canonical CSV, and a store."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from streakwise.analysis.simulate import simulate_hidden_state
from streakwise.cli import main
from streakwise.cli.states_commands import hot_strip
from streakwise.ingest.load import load_file
from streakwise.ingest.pipeline import store_files
from streakwise.ingest.store import Store

ATTEMPT_KEYS = {"session", "seq", "made", "hot_probability"}


@pytest.fixture
def canonical_csv(tmp_path):
    """Two players, 12 games of 10 field goals each, with a distance column."""
    rows = []
    rng = np.random.default_rng(1)
    for player, seed in (("ana", 2), ("bo", 3)):
        draw = simulate_hidden_state(10, hot_rate=0.65, cold_rate=0.3, stay_hot=0.9, stay_cold=0.9, n_sequences=12,
                                     rng=seed)
        for g in range(12):
            for t in range(10):
                rows.append({"player": player, "session": f"game{g + 1:02d}", "seq": t,
                             "made": int(draw.made[g, t]), "attempt_type": "field_goal",
                             "distance": round(float(rng.uniform(1, 27)), 1)})
    path = tmp_path / "shots.csv"
    pd.DataFrame(rows).to_csv(path, index=False)
    return path


def run(capsys, argv, code=0):
    result = main(argv)
    out, err = capsys.readouterr()
    assert result == code, (out, err)
    return out, err


class TestStatesCommand:
    def test_json_keys(self, capsys, canonical_csv):
        out, _ = run(capsys, ["states", "--player", "ana", "--input", str(canonical_csv), "--seed", "5",
                              "--permutations", "9", "--json"])
        record = json.loads(out)
        assert {"player", "hot_rate", "cold_rate", "stay_hot", "stay_cold", "p_value", "attempts"} <= set(record)
        assert record["player"] == "ana" and record["seed"] == 5 and record["permutations"] == 9
        assert len(record["attempts"]) == 120
        assert all(set(a) == ATTEMPT_KEYS for a in record["attempts"])
        assert record["attempts"][10]["session"] == "game02" and record["attempts"][10]["seq"] == 0
        assert 0 < record["p_value"] <= 1 and record["hot_rate"] >= record["cold_rate"]
        assert any("licensed practitioners" in c for c in record["cautions"])
        # the same seed, the same answer
        again, _ = run(capsys, ["states", "--player", "ana", "--input", str(canonical_csv), "--seed", "5",
                                "--permutations", "9", "--json"])
        assert json.loads(again) == record

    def test_text(self, capsys, canonical_csv):
        out, err = run(capsys, ["states", "--player", "bo", "--input", str(canonical_csv), "--permutations", "9"])
        assert "hot rate" in out and "stay cold" in out and "p = " in out
        assert "game01" in out and "Cautions:" in out and "licensed practitioners" in out
        assert "seed " in err  # a fresh seed is printed so the result can be repeated

    def test_difficulty_says_what_is_missing(self, capsys, canonical_csv):
        out, _ = run(capsys, ["states", "--player", "ana", "--input", str(canonical_csv), "--seed", "1",
                              "--permutations", "0", "--difficulty", "--json"])
        record = json.loads(out)
        assert record["with_difficulty"] is True and record["p_value"] is None
        assert record["difficulty_covariates"] == ["distance"]
        assert "defender_distance" in record["difficulty_missing_covariates"]
        assert any("covariates missing from the data" in note for note in record["notes"])

    def test_on_a_store(self, capsys, canonical_csv, tmp_path):
        store_path = tmp_path / "streakwise.duckdb"
        with Store(store_path) as store:
            store_files(store, [load_file(canonical_csv)])
        out, _ = run(capsys, ["states", "--player", "bo", "--store", str(store_path), "--seed", "2",
                              "--permutations", "9", "--json"])
        assert json.loads(out)["player"] == "bo"

    def test_bad_input(self, capsys, canonical_csv):
        _, err = run(capsys, ["states", "--player", "nobody", "--input", str(canonical_csv)], code=2)
        assert "no attempts of type field_goal for player 'nobody'" in err
        _, err = run(capsys, ["states", "--player", "ana", "--input", str(canonical_csv), "--attempt-type",
                              "free_throw"], code=2)
        assert "no attempts of type 'free_throw'" in err
        _, err = run(capsys, ["states", "--player", "ana", "--input", str(canonical_csv), "--permutations", "-1"],
                     code=2)
        assert "--permutations" in err


def test_hot_strip():
    assert hot_strip([1, 0, 1], [0.05, 0.5, 0.999]) == ("X.X", "059")
