"""The ``plan`` command as a user runs it: JSON keys, tables, figures, bad arguments (exit 2)."""

from __future__ import annotations

import json
import re

import pytest

from streakwise.analysis.power import estimate_power
from streakwise.cli import main
from streakwise.cli.plan_commands import parse_effects, parse_games, parse_tests
from streakwise.ingest.errors import InputError

QUICK = ["--attempts-per-game", "10", "--simulations", "30", "--permutations", "100", "--seed", "4"]


def run_json(capsys, argv):
    code = main(argv)
    out, err = capsys.readouterr()
    assert code == 0, err
    return json.loads(out)


def run_error(capsys, argv):
    code = main(argv)
    out, err = capsys.readouterr()
    assert code == 2, (out, err)
    assert out == ""
    return err


class TestParsing:
    def test_effects(self):
        assert parse_effects(["0.1,0.2", "30%"]) == pytest.approx([0.1, 0.2, 0.3])
        assert parse_effects(["0"]) == [0.0]
        with pytest.raises(InputError, match=r"--effect: must be in \[0, 1\) \(got 1\)"):
            parse_effects(["1"])
        with pytest.raises(InputError, match="must be an effect in"):
            parse_effects(["big"])
        with pytest.raises(InputError, match="needs at least one effect"):
            parse_effects([" , "])

    def test_games_and_tests(self):
        assert parse_games("20, 40,80") == [20, 40, 80]
        with pytest.raises(InputError, match="must be at least 1"):
            parse_games("0")
        assert parse_tests("d1,D_2,Runs,longest", 3) == ["D_1", "D_2", "runs", "longest_run"]
        with pytest.raises(InputError, match="unknown test 'D_4'"):
            parse_tests("D_4", 3)


class TestPlanCommand:
    def test_power_json(self, capsys):
        payload = run_json(capsys, ["plan", "--model", "markov", "--effect", "0,0.3", "--games", "12",
                                    *QUICK, "--json"])
        assert {"model", "rate", "persistence", "attempts_per_game", "alpha", "alternative",
                "simulations", "permutations", "method", "max_k", "seed", "tests", "rows",
                "caveats"} <= set(payload)
        assert payload["seed"] == 4 and payload["persistence"] is None
        assert payload["tests"] == ["D_1", "D_2", "D_3", "runs", "longest_run"]
        assert len(payload["rows"]) == 2 * 5
        row = payload["rows"][0]
        assert set(row) == {"model", "effect", "rate_difference", "games", "attempts", "test", "power",
                            "power_se", "share_defined", "mean_corrected"}
        # the command is a thin shell: the library gives the same numbers
        res = estimate_power("markov", [0.0, 0.3], attempts_per_game=10, games=12, simulations=30,
                             permutations=100, seed=4)
        assert [r["power"] for r in payload["rows"]] == [r["power"] for r in res.rows()]

    def test_table(self, capsys):
        code = main(["plan", "--effect", "0.2", "--persistence", "0.85", "--games", "6,12", *QUICK])
        out, _ = capsys.readouterr()
        assert code == 0
        assert "stay probability 0.85" in out and "longest_run" in out
        assert "Caveats:" in out and "1-3 percentage points" in out

    def test_find_mde_json(self, capsys):
        payload = run_json(capsys, ["plan", "--model", "markov", "--find", "mde", "--games", "12",
                                    "--max-effect", "0.4", "--resolution", "0.05", "--tests", "d1",
                                    *QUICK, "--json"])
        assert {"find", "target_power", "effect", "games", "bounds", "resolution", "answers",
                "evaluations"} <= set(payload)
        assert payload["find"] == "mde" and payload["games"] == 12
        answer = payload["answers"][0]
        assert {"test", "found", "low", "high", "power_low", "power_high", "power_se_low",
                "power_se_high", "estimate", "attempts_low", "attempts_high", "attempts_estimate",
                "reason"} == set(answer)
        assert answer["test"] == "D_1"

    def test_find_games_table_and_figure(self, capsys, tmp_path):
        path = tmp_path / "curve.html"
        code = main(["plan", "--model", "markov", "--find", "games", "--effect", "0.3", "--max-games", "40",
                     "--tests", "D_1", *QUICK, "--figure", str(path)])
        out, err = capsys.readouterr()
        assert code == 0, err
        assert "Games needed for 80% power" in out and "D_1" in out
        assert path.exists() and "plotly" in path.read_text()[:5000].lower()
        assert f"written to {path}" in err

    def test_same_seed_same_answer(self, capsys):
        argv = ["plan", "--effect", "0.3", "--games", "8", *QUICK, "--json"]
        assert run_json(capsys, argv) == run_json(capsys, argv)

    @pytest.mark.parametrize("extra, message", [
        (["--effect", "1.0"], r"--effect: must be in \[0, 1\)"),
        (["--effect", "-0.1"], "--effect: must be an effect in"),
        (["--effect", "abc"], "--effect: must be an effect in"),
        (["--effect", "0.2", "--persistence", "1.5"], r"--persistence: must be in \[0, 1\]"),
        (["--effect", "0.2", "--persistence", "-0.1"], "--persistence"),
        (["--effect", "0.2", "--games", "0"], "--games: must be at least 1"),
        (["--effect", "0.2", "--games", "x"], "--games: must be whole numbers"),
        (["--effect", "0.2", "--rate", "0"], "--rate: must be strictly between 0 and 1"),
        (["--effect", "0.2", "--rate", "1.2"], "--rate"),
        (["--effect", "0.2", "--simulations", "0"], "--simulations: must be at least 1"),
        (["--effect", "0.2", "--permutations", "0"], "--permutations: must be at least 1"),
        (["--effect", "0.2", "--alpha", "1"], "--alpha: must be strictly between 0 and 1"),
        (["--effect", "0.2", "--workers", "0"], "--workers: must be at least 1"),
        (["--effect", "0.2", "--max-k", "9"], "--max-k: must be between 1 and 8"),
        (["--effect", "0.2", "--seed", "-3"], "--seed: must be a non-negative"),
        (["--effect", "0.2", "--attempts-per-game", "0"], "--attempts-per-game: must be at least 1"),
        (["--effect", "0.2", "--figure", "out.png"], r"--figure: must end in .html or .json"),
        (["--effect", "0.95"], "the largest boost is 0.9"),
        (["--model", "markov", "--effect", "0.2", "--persistence", "0.9"], "--persistence: goes with --model hidden"),
        ([], "give --effect E"),
        (["--effect", "0.2", "--tests", "d1"], "--tests: chooses the tests of a search"),
        (["--find", "mde", "--effect", "0.2"], "--find mde searches the effect"),
        (["--find", "mde", "--target-power", "1"], "--target-power: must be strictly between 0 and 1"),
        (["--find", "mde", "--resolution", "0"], "--resolution: must be above 0"),
        (["--find", "mde", "--tests", "D_7"], "unknown test 'D_7'"),
        (["--find", "games"], "--find games needs one --effect"),
        (["--find", "games", "--effect", "0.1,0.2"], "--find games needs one --effect"),
        (["--find", "games", "--effect", "0.1", "--games", "20"], "--find games searches the number of games"),
        (["--find", "games", "--effect", "0.1", "--max-games", "1"], "--max-games: must be at least 2"),
    ])
    def test_bad_arguments_exit_2(self, capsys, extra, message):
        err = run_error(capsys, ["plan", *extra])
        assert err.startswith("error: ")
        assert re.search(message, err), err

    def test_unknown_model_exits_2(self, capsys):
        with pytest.raises(SystemExit) as excinfo:
            main(["plan", "--model", "streaky", "--effect", "0.1"])
        assert excinfo.value.code == 2
