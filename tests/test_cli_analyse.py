"""``streakwise analyse`` on a file and on the store: JSON keys, seeds, saving, errors."""

from __future__ import annotations

import json

import numpy as np
import pytest

from streakwise.analysis.simulate import simulate_hidden_state
from streakwise.cli import main
from streakwise.ingest.store import Store

STREAK_KEYS = {
    "k",
    "after_makes",
    "after_misses",
    "difference",
    "null_mean",
    "corrected",
    "null_band",
    "interval",
    "share_defined",
    "p_value",
    "p_value_se",
    "q_value",
}


def write_canonical(path, players=("a", "b"), games=12, attempts=14, seed=1):
    """A small canonical file; player 'a' has a strong hidden hot state, 'b' is steady."""
    rng = np.random.default_rng(seed)
    lines = ["player,session,seq,made,game,attempt_type,season"]
    for player in players:
        if player == "a":
            made = simulate_hidden_state(attempts, hot_rate=0.85, cold_rate=0.15, stay_hot=0.9, stay_cold=0.9, n_sequences=games, rng=rng).made
        else:
            made = rng.random((games, attempts)) < 0.5
        for g in range(games):
            for s in range(attempts):
                lines.append(f"{player},g{g},{s},{int(made[g, s])},g{g},field_goal,2030")
    path.write_text("\n".join(lines) + "\n")
    return path


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


class TestAnalyseInput:
    def test_json_keys_and_reproducible(self, tmp_path, capsys):
        path = write_canonical(tmp_path / "c.csv")
        args = ("analyse", "--input", str(path), "--permutations", "300", "--seed", "11", "--min-attempts", "10", "--json")
        code, out, err = run(capsys, *args)
        assert code == 0, err
        first = json.loads(out)
        assert set(first) >= {"seed", "permutations", "players", "league"}
        assert (first["seed"], first["permutations"]) == (11, 300)
        player = first["players"][0]
        assert set(player) >= {"player", "attempts", "sessions", "make_rate", "streak", "runs", "longest_run", "lag1", "wald_wolfowitz"}
        assert [s["k"] for s in player["streak"]] == [1, 2, 3]
        assert set(player["streak"][0]) >= STREAK_KEYS
        assert set(player["streak"][0]["after_makes"]) >= {"makes", "attempts", "rate"}
        assert set(player["runs"]) >= {"observed", "null_mean", "p_value"}
        assert set(player["wald_wolfowitz"]) >= {"z", "p_value"}
        assert set(first["league"][0]) >= {"k", "players", "corrected_mean", "p_value"}
        assert (player["attempts"], player["sessions"]) == (12 * 14, 12)
        code, out, _ = run(capsys, *args)
        assert json.loads(out) == first
        # the same players on two workers give the same answer (per-player streams)
        code, out, _ = run(capsys, *args, "--workers", "2")
        assert json.loads(out) == first

    def test_player_result_does_not_depend_on_other_players(self, tmp_path, capsys):
        path = write_canonical(tmp_path / "c.csv")
        base = ("analyse", "--input", str(path), "--permutations", "200", "--seed", "5", "--min-attempts", "10", "--json")
        _, both, _ = run(capsys, *base)
        _, alone, _ = run(capsys, *base, "--player", "a")
        a_both = next(p for p in json.loads(both)["players"] if p["player"] == "a")
        a_alone = json.loads(alone)["players"][0]
        for key in ("difference", "null_mean", "corrected", "p_value"):
            assert [s[key] for s in a_both["streak"]] == [s[key] for s in a_alone["streak"]]

    def test_streaky_player_stands_out(self, tmp_path, capsys):
        path = write_canonical(tmp_path / "c.csv", games=30)
        _, out, _ = run(capsys, "analyse", "--input", str(path), "--permutations", "400", "--seed", "2", "--min-attempts", "10", "--json")
        players = {p["player"]: p for p in json.loads(out)["players"]}
        # hot 0.85 vs cold 0.15, staying 0.9: far beyond chance at k = 1
        assert players["a"]["streak"][0]["p_value"] < 0.01
        assert players["a"]["streak"][0]["corrected"] > 0.1

    def test_undefined_statistic_is_null_with_a_reason(self, tmp_path, capsys):
        path = tmp_path / "u.csv"
        rows = ["player,session,seq,made"] + [f"p,g{g},{s},1" for g in range(3) for s in range(4)]
        path.write_text("\n".join(rows) + "\n")
        with pytest.warns(RuntimeWarning, match="every session is all makes or all misses"):
            code, out, err = run(capsys, "analyse", "--input", str(path), "--permutations", "50", "--seed", "1", "--min-attempts", "1", "--json")
        assert code == 0, err
        streak = json.loads(out)["players"][0]["streak"][0]
        assert streak["after_misses"]["rate"] is None
        assert streak["p_value"] is None
        assert streak["reason"]

    def test_readable_table(self, tmp_path, capsys):
        path = write_canonical(tmp_path / "c.csv")
        code, out, _ = run(capsys, "analyse", "--input", str(path), "--permutations", "100", "--seed", "1", "--min-attempts", "10")
        assert code == 0
        assert "D_1 corr" in out and "Caveats" in out and "Chance alone produces many streaks" in out


class TestAnalyseStore:
    @pytest.fixture
    def store(self, tmp_path, capsys):
        path = write_canonical(tmp_path / "c.csv")
        store = tmp_path / "s.duckdb"
        assert main(["ingest", str(path), "--store", str(store)]) == 0
        capsys.readouterr()
        return store

    def test_save_keys_by_settings_and_data(self, store, capsys):
        args = ("analyse", "--store", str(store), "--permutations", "100", "--seed", "4", "--min-attempts", "10", "--save", "--json")
        code, out, err = run(capsys, *args)
        assert code == 0, err
        assert "saved the scan" in err
        payload = json.loads(out)
        with Store(store, read_only=True) as s:
            settings = {
                "players": None, "seasons": None, "teams": None, "attempt_type": "field_goal", "max_k": 3,
                "permutations": 100, "seed": 4, "min_attempts": 10, "alternative": "hot",
            }
            assert s.load_result("league_scan", settings) == json.loads(json.dumps(payload))
            assert s.load_result("league_scan", {**settings, "seed": 5}) is None
        run(capsys, *args)  # saving again replaces, never duplicates
        import duckdb

        con = duckdb.connect(str(store), read_only=True)
        assert con.execute("SELECT count(*) FROM results WHERE kind = 'league_scan'").fetchone()[0] == 1
        con.close()

    def test_filters(self, store, capsys):
        code, out, _ = run(capsys, "analyse", "--store", str(store), "--season", "2030", "--player", "b", "--permutations", "50", "--seed", "1", "--min-attempts", "10", "--json")
        assert code == 0
        assert [p["player"] for p in json.loads(out)["players"]] == ["b"]

    @pytest.mark.parametrize(
        ("extra", "message"),
        [
            (("--max-k", "9"), "--max-k must be between 1 and 8"),
            (("--permutations", "0"), "--permutations must be at least 1"),
            (("--player", "nobody"), "no attempts"),
            (("--attempt-type", "free_throw"), "no attempts of type free_throw match the filters"),
        ],
    )
    def test_bad_arguments_exit_2(self, store, capsys, extra, message):
        code, _, err = run(capsys, "analyse", "--store", str(store), "--seed", "1", *extra)
        assert code == 2
        assert message in err

    def test_save_with_input_is_refused(self, tmp_path, capsys):
        path = write_canonical(tmp_path / "c.csv")
        code, _, err = run(capsys, "analyse", "--input", str(path), "--save")
        assert code == 2 and "--save keeps a scan of the store" in err


class TestAnalyseDifficulty:
    def test_blocks_in_json(self, tmp_path, capsys):
        rng = np.random.default_rng(8)
        lines = ["player,session,seq,made,game,attempt_type,distance"]
        for player in ("a", "b", "c", "d"):
            for g in range(12):
                distance = rng.uniform(2, 27, 12)
                made = rng.random(12) < 1 / (1 + np.exp(0.05 * (distance - 15)))
                lines += [f"{player},g{g},{s},{int(made[s])},g{g},field_goal,{distance[s]:.1f}" for s in range(12)]
        path = tmp_path / "d.csv"
        path.write_text("\n".join(lines) + "\n")
        args = ("analyse", "--input", str(path), "--difficulty", "--draws", "30", "--permutations", "50", "--seed", "3",
                "--min-attempts", "10", "--workers", "1", "--json")
        code, out, err = run(capsys, *args)
        assert code == 0, err
        assert "covariates missing from the data" in err  # distance only: the model says so
        payload = json.loads(out)
        assert set(payload["difficulty_model"]) >= {"covariates", "log_loss", "base_log_loss", "warnings"}
        player = payload["players"][0]
        assert [d["k"] for d in player["difficulty_adjusted"]] == [1, 2, 3]
        assert set(player["difficulty_adjusted"][0]) >= {"k", "difference", "null_mean", "corrected", "p_value"}
        assert set(player["streak_coefficient"]) >= {"k", "estimate", "se", "p_value_resampled"}
        assert set(player["shot_selection"]) >= {"k", "difference", "p_value"}
        assert [s["k"] for s in player["shrunk"]] == [1, 2, 3]
        assert all(set(s) >= {"k", "estimate", "interval"} for s in player["shrunk"])
        code, again, _ = run(capsys, *args)
        assert json.loads(again) == payload

    def test_bad_draws(self, tmp_path, capsys):
        path = write_canonical(tmp_path / "c.csv")
        code, _, err = run(capsys, "analyse", "--input", str(path), "--difficulty", "--draws", "0")
        assert code == 2 and "--draws must be at least 1" in err
