"""The ``odds`` and ``claim`` commands as a user runs them."""

from __future__ import annotations

import json
from fractions import Fraction

import pytest

from streakwise.analysis.claims import check_run_claim
from streakwise.analysis.odds import run_probability
from streakwise.cli import main
from streakwise.cli.odds_commands import game_attempts_from_store, parse_attempt_list, parse_rate
from streakwise.ingest.errors import InputError
from streakwise.ingest.load import load_file
from streakwise.ingest.pipeline import store_files
from streakwise.ingest.store import Store


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
    def test_rates(self):
        assert parse_rate("0.45") == Fraction(9, 20)
        assert parse_rate("45%") == Fraction(9, 20)
        assert parse_rate("9/20") == Fraction(9, 20)
        with pytest.raises(InputError, match=r"--rate: must be in \[0, 1\] \(got 1.2\)"):
            parse_rate("1.2")
        with pytest.raises(InputError, match="must be a rate such as 0.47, 47% or 47/100"):
            parse_rate("fast")

    def test_attempt_lists(self):
        assert parse_attempt_list("15", 3) == (15, 15, 15)
        assert parse_attempt_list("12,15,9", None) == (12, 15, 9)
        assert parse_attempt_list("12", None) == (12,)
        with pytest.raises(InputError, match="lists 2 games but --games says 3"):
            parse_attempt_list("12,15", 3)
        with pytest.raises(InputError, match="must be whole numbers"):
            parse_attempt_list("12,x", None)


class TestOddsCommand:
    def test_run_json(self, capsys):
        payload = run_json(capsys, ["odds", "--attempts", "20", "--run", "5", "--rate", "0.5", "--json"])
        assert {"probability", "method"} <= set(payload)
        # Feller, Vol. 1, ch. XIII: a run of 5 heads in 20 tosses, 32751/131072
        assert payload["exact_fraction"] == "32751/131072"
        assert payload["exact"] is True
        # Feller, Vol. 1, ch. XIII: expected tosses until 5 heads in a row, 62
        assert payload["expected_attempts_until_first_run"] == 62

    def test_either_json(self, capsys):
        payload = run_json(capsys, ["odds", "--attempts", "100", "--run", "5", "--rate", "1/2", "--either", "--json"])
        # Feller, Vol. 1, ch. XIII: a run of 5 of either kind in 100 tosses
        assert payload["probability"] == pytest.approx(0.971690, abs=1e-6)
        assert payload["kind"] == "either"

    def test_large_run_uses_floats(self, capsys):
        payload = run_json(capsys, ["odds", "-n", "1000000", "-r", "20", "-p", "0.5", "--json"])
        assert payload["method"] == "matrix_power" and payload["exact"] is False
        assert payload["error_bound"] < 1e-8

    def test_given_makes_json(self, capsys):
        payload = run_json(capsys, ["odds", "--attempts", "10", "--run", "4", "--given-makes", "5", "--json"])
        assert {"probability", "method"} <= set(payload)
        assert payload["method"] == "combinatorial" and payload["exact_fraction"] == "1/7"

    def test_window_json(self, capsys):
        payload = run_json(
            capsys, ["odds", "--attempts", "14", "--window", "5", "--at-least", "4", "--rate", "0.5", "--json"]
        )
        assert {"probability", "method"} <= set(payload)
        # CHECKS.md window case (exact enumeration of 2^14 sequences): 0.603515625
        assert payload["probability"] == 0.603515625
        assert payload["method"] == "exact_chain"

    def test_distribution(self, capsys):
        payload = run_json(capsys, ["odds", "-n", "20", "-r", "5", "-p", "1/2", "--distribution", "--json"])
        # OEIS A119706: mean longest run of heads in 20 tosses, 3910398 / 2^20
        assert payload["longest_run"]["exact_mean"] == str(Fraction(3910398, 2**20))

    def test_text(self, capsys):
        assert main(["odds", "-n", "300", "-r", "8", "-p", "0.47"]) == 0
        out = capsys.readouterr().out
        assert "Chance of a run of at least 8 makes in 300 attempts" in out
        assert "betting advice" in out

    @pytest.mark.parametrize(
        ("argv", "message"),
        [
            (["--attempts", "10", "--run", "3", "--rate", "1.2"], r"--rate: must be in [0, 1] (got 1.2)"),
            (["--attempts", "10", "--run", "3", "--rate", "-0.1"], "--rate: must be in [0, 1]"),
            (["--attempts", "10", "--run", "11", "--rate", "0.5"], "--run: a run of 11 cannot fit in 10 attempts"),
            (["--attempts", "10", "--run", "0", "--rate", "0.5"], "--run: must be at least 1"),
            (["--attempts", "10", "--run", "3", "--given-makes", "11"], "--given-makes: must be between 0 and --attempts"),
            (["--attempts", "10", "--run", "3"], "give exactly one of --rate P or --given-makes M"),
            (["--attempts", "10", "--run", "3", "--rate", "0.5", "--given-makes", "4"], "give exactly one of"),
            (["--attempts", "20", "--window", "5", "--at-least", "6", "--rate", "0.5"], "--at-least: cannot exceed --window (5)"),
            (["--attempts", "4", "--window", "5", "--at-least", "3", "--rate", "0.5"], "--window: a stretch of 5 cannot fit"),
            (["--attempts", "20", "--window", "5", "--rate", "0.5"], "--window needs --at-least"),
            (["--attempts", "20", "--window", "5", "--at-least", "3", "--given-makes", "4", "--rate", "0.5"], "--given-makes: goes with --run"),
            (["--attempts", "20", "--rate", "0.5"], "give either --run R or --window Y --at-least X"),
            (["--attempts", "0", "--run", "1", "--rate", "0.5"], "--attempts: must be at least 1"),
        ],
    )
    def test_bad_arguments_exit_2(self, capsys, argv, message):
        err = run_error(capsys, ["odds", *argv, "--json"])
        assert message in err


class TestClaimCommand:
    def test_given_numbers(self, capsys):
        payload = run_json(
            capsys,
            ["claim", "--run", "9", "--rate", "0.45", "--attempts", "15", "--games", "82", "--league-players", "150", "--json"],
        )
        expected = check_run_claim(9, Fraction(9, 20), [15] * 82, league_players=150)
        assert payload["probability_player"] == pytest.approx(expected.probability_player)
        assert payload["probability_league"] == pytest.approx(expected.probability_league)
        assert payload["expected_league"] == pytest.approx(expected.expected_league)
        for key in ("probability", "method", "sentence", "caution", "expected_player", "expected_league"):
            assert key in payload
        assert payload["sentence"].startswith("A 45% shooter")
        assert "not betting advice" in payload["caution"]

    def test_window_and_game_streak(self, capsys):
        window = run_json(capsys, ["claim", "--window", "10", "--at-least", "9", "--rate", "0.5", "--attempts", "12,16,20", "--json"])
        assert window["claim_kind"] == "window" and window["games"] == 3
        streak = run_json(
            capsys,
            ["claim", "--each-game", "8", "--games-in-a-row", "3", "--rate", "0.5", "--attempts", "16", "--games", "30", "--json"],
        )
        assert streak["claim_kind"] == "each_game" and streak["occurrence"] == "season"

    def test_across_games(self, capsys):
        payload = run_json(
            capsys, ["claim", "--run", "12", "--rate", "0.5", "--attempts", "10", "--games", "4", "--across-games", "--json"]
        )
        assert payload["probability"] == pytest.approx(run_probability(40, 12, 0.5).probability)

    def test_text(self, capsys):
        assert main(["claim", "--run", "6", "--misses", "--rate", "0.5", "--attempts", "15", "--games", "10", "--league-players", "20"]) == 0
        out = capsys.readouterr().out
        assert "6 or more misses in a row" in out and "Caveats" in out

    @pytest.mark.parametrize(
        ("argv", "message"),
        [
            (["--run", "5", "--rate", "1.5", "--attempts", "10"], "--rate: must be in [0, 1]"),
            (["--run", "5", "--window", "6", "--at-least", "3", "--rate", "0.5", "--attempts", "10"], "give one claim"),
            (["--run", "12", "--rate", "0.5", "--attempts", "10", "--games", "5"], "add --across-games"),
            (["--window", "5", "--at-least", "6", "--rate", "0.5", "--attempts", "10"], "--at-least: cannot exceed --window"),
            (["--each-game", "3", "--rate", "0.5", "--attempts", "10"], "--each-game needs --games-in-a-row"),
            (["--each-game", "3", "--games-in-a-row", "6", "--rate", "0.5", "--attempts", "10", "--games", "5"], "the season has 5 games"),
            (["--run", "5", "--rate", "0.5"], "give --player ID, or --rate P with --attempts N"),
            (["--run", "5", "--rate", "0.5", "--attempts", "10", "--league-players", "0"], "--league-players: must be at least 1"),
        ],
    )
    def test_bad_arguments_exit_2(self, capsys, argv, message):
        err = run_error(capsys, ["claim", *argv, "--json"])
        assert message in err


@pytest.fixture
def tiny_store(tmp_path):
    """Two players; ann has 3 games (5, 4 and 6 field goals) plus free throws."""
    rows = ["player,session,seq,made,game,attempt_type"]
    ann = {"g1": "11011", "g2": "0111", "g3": "111110"}
    for game, shots in ann.items():
        for seq, made in enumerate(shots):
            rows.append(f"ann,{game},{seq},{made},{game},field_goal")
    for seq, made in enumerate("1101"):
        rows.append(f"ann,g1ft,{seq},{made},g1,free_throw")
    for seq, made in enumerate("0101"):
        rows.append(f"bo,g1,{seq},{made},g1,field_goal")
    source = tmp_path / "tiny.csv"
    source.write_text("\n".join(rows) + "\n")
    path = tmp_path / "tiny.duckdb"
    with Store(path) as store:
        store_files(store, [load_file(source)])
    return path


class TestClaimFromStore:
    def test_player_rate_and_games(self, capsys, tiny_store):
        payload = run_json(capsys, ["claim", "--player", "ann", "--run", "5", "--store", str(tiny_store), "--league-players", "30", "--json"])
        # ann's field goals: 12 makes in 15 attempts (4 + 3 + 5), games of 5, 4, 6
        assert payload["rate"] == pytest.approx(12 / 15)
        assert payload["games"] == 3 and payload["attempts"] == 15
        expected = check_run_claim(5, Fraction(12, 15), [5, 4, 6], league_players=30)
        assert payload["probability_player"] == pytest.approx(expected.probability_player, rel=1e-12)
        assert payload["shooter"]["player"] == "ann" and payload["shooter"]["makes"] == 12
        assert any("stored data" in note for note in payload["notes"])

    def test_attempt_type(self, capsys, tiny_store):
        payload = run_json(
            capsys,
            ["claim", "--player", "ann", "--run", "3", "--attempt-type", "free_throw", "--store", str(tiny_store), "--json"],
        )
        assert payload["rate"] == pytest.approx(3 / 4) and payload["games"] == 1

    def test_unknown_player_and_missing_store(self, capsys, tiny_store, tmp_path):
        err = run_error(capsys, ["claim", "--player", "zed", "--run", "3", "--store", str(tiny_store)])
        assert "no field_goal attempts for player 'zed'" in err
        err = run_error(capsys, ["claim", "--player", "ann", "--run", "3", "--store", str(tmp_path / "none.duckdb")])
        assert "store not found" in err
        err = run_error(capsys, ["claim", "--player", "ann", "--rate", "0.5", "--run", "3", "--store", str(tiny_store)])
        assert "give --player or the shooter's numbers, not both" in err

    def test_games_in_order(self, tiny_store):
        with Store(tiny_store, read_only=True) as store:
            frame = store.attempts(players=["ann"], attempt_types=["field_goal"])
        assert game_attempts_from_store(frame) == (12, 15, (5, 4, 6))
