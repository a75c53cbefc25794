"""``streakwise report``: files written, exit codes, and reuse of a saved league scan."""

from __future__ import annotations

import json

import pytest

import streakwise.analysis
from streakwise.cli import main
from test_briefing import Page, write_canonical

SEED = "31"
SETTINGS = ("--permutations", "300", "--seed", SEED, "--min-attempts", "100")


@pytest.fixture(scope="module")
def store(tmp_path_factory):
    folder = tmp_path_factory.mktemp("report")
    csv = write_canonical(folder / "attempts.csv")
    path = folder / "store.duckdb"
    assert main(["ingest", str(csv), "--store", str(path)]) == 0
    return str(path)


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def briefing_data(path):
    page = Page(path.read_text(encoding="utf-8"))
    assert page.errors == []
    return page.json_block


class TestPlayerReport:
    def test_writes_a_briefing(self, store, tmp_path, capsys):
        output = tmp_path / "a.html"
        code, out, err = run(capsys, "report", "--player", "a", "--output", str(output), "--store", store, *SETTINGS)
        assert code == 0, err
        assert out.startswith(f"wrote {output}") and "briefing on a (182 attempts, seed 31)" in out
        data = briefing_data(output)
        assert (data["player"], data["seed"], data["permutations"], data["attempt_type"]) == ("a", 31, 300, "field_goal")
        assert data["result"]["attempts"] == 182
        assert not list(tmp_path.glob(".*.tmp"))  # written through a temporary file, which is gone

    def test_json_summary_and_fresh_seed(self, store, tmp_path, capsys):
        output = tmp_path / "b.html"
        code, out, err = run(capsys, "report", "--player", "b", "--output", str(output), "--store", store,
                             "--permutations", "100", "--attempt-type", "free_throw", "--json")
        assert code == 0, err
        summary = json.loads(out)
        assert summary["output"] == str(output) and summary["bytes"] == output.stat().st_size
        assert (summary["kind"], summary["attempts"], summary["attempt_type"]) == ("player", 14, "free_throw")
        assert f"give --seed {summary['seed']} to repeat" in err
        assert briefing_data(output)["seed"] == summary["seed"]

    def test_q_values_from_a_saved_scan(self, store, tmp_path, capsys):
        code, _, err = run(capsys, "analyse", "--store", store, *SETTINGS, "--save")
        assert code == 0, err
        code, out, err = run(capsys, "report", "--player", "a", "--output", str(tmp_path / "a.html"),
                             "--store", store, *SETTINGS, "--json")
        assert code == 0, err
        assert json.loads(out)["q_values_from_saved_scan"] is True
        code, saved, _ = run(capsys, "analyse", "--store", store, *SETTINGS, "--json")
        entry = next(p for p in json.loads(saved)["players"] if p["player"] == "a")
        assert briefing_data(tmp_path / "a.html")["result"]["streak"] == entry["streak"]

    @pytest.mark.parametrize(
        ("argv", "message"),
        [
            (("--player", "zz"), "unknown player 'zz'"),
            (("--player", "a", "--season", "1999"), "player 'a' has no attempts"),
            (("--player", "a", "--attempt-type", "dunk"), "player 'a' has no attempts of type dunk"),
            (("--player", "a", "--permutations", "0"), "--permutations must be at least 1"),
            (("--player", "a", "--seed", "-1"), "--seed must be a non-negative"),
            (("--player", "a", "--max-k", "9"), "--max-k must be between 1 and 8"),
        ],
    )
    def test_bad_input_exits_2(self, store, tmp_path, capsys, argv, message):
        output = tmp_path / "x.html"
        code, _, err = run(capsys, "report", *argv, "--output", str(output), "--store", store)
        assert code == 2
        assert message in err
        assert not output.exists()


class TestOutput:
    @pytest.mark.parametrize(
        ("name", "message"),
        [
            ("briefing.pdf", "--output must end in .html"),
            ("briefing", "--output must end in .html"),
            ("missing/briefing.html", "does not exist; create it first"),
        ],
    )
    def test_bad_output_exits_2(self, store, tmp_path, capsys, name, message):
        code, _, err = run(capsys, "report", "--league", "--output", str(tmp_path / name), "--store", store)
        assert code == 2 and message in err

    def test_output_is_a_folder(self, store, tmp_path, capsys):
        folder = tmp_path / "out.html"
        folder.mkdir()
        code, _, err = run(capsys, "report", "--league", "--output", str(folder), "--store", store)
        assert code == 2 and "is a folder" in err

    def test_missing_store_exits_2(self, tmp_path, capsys):
        code, _, err = run(capsys, "report", "--league", "--output", str(tmp_path / "l.html"),
                           "--store", str(tmp_path / "none.duckdb"))
        assert code == 2 and err.startswith("error:")

    def test_player_or_league_is_required(self, tmp_path, capsys):
        with pytest.raises(SystemExit) as exc:
            main(["report", "--output", str(tmp_path / "l.html")])
        assert exc.value.code == 2


class TestLeagueReport:
    def test_runs_a_scan_when_none_is_saved(self, store, tmp_path, capsys):
        output = tmp_path / "league.html"
        argv = ("--permutations", "200", "--seed", "77", "--min-attempts", "100")
        code, out, err = run(capsys, "report", "--league", "--output", str(output), "--store", store, *argv, "--json")
        assert code == 0, err
        summary = json.loads(out)
        assert summary["saved_scan_used"] is False and summary["players"] == 2
        assert "running a league scan" in err
        # the fresh scan is the one `analyse` gives with the same settings and seed
        code, scanned, _ = run(capsys, "analyse", "--store", store, *argv, "--json")
        assert briefing_data(output)["scan"] == json.loads(scanned)

    def test_reuses_the_saved_scan(self, store, tmp_path, capsys, monkeypatch):
        code, _, err = run(capsys, "analyse", "--store", store, *SETTINGS, "--save")
        assert code == 0, err
        code, saved, _ = run(capsys, "analyse", "--store", store, *SETTINGS, "--json")

        def no_scan(*args, **kwargs):
            raise AssertionError("the saved scan should have been used")

        monkeypatch.setattr(streakwise.analysis, "league_scan", no_scan)
        output = tmp_path / "league.html"
        code, out, err = run(capsys, "report", "--league", "--output", str(output), "--store", store, *SETTINGS, "--json")
        assert code == 0, err
        assert json.loads(out)["saved_scan_used"] is True
        assert "using the league scan saved in the store" in err
        data = briefing_data(output)
        assert data["scan"] == json.loads(saved)
        assert data["settings"]["seed"] == int(SEED) and data["settings"]["attempt_type"] == "field_goal"
        # other settings do not match the saved scan: it is not reused
        code, _, err = run(capsys, "report", "--league", "--output", str(output), "--store", store,
                           *SETTINGS, "--max-k", "2")
        assert code == 1 and "the saved scan should have been used" in err

    def test_without_seed_the_latest_saved_scan_is_used(self, store, tmp_path, capsys, monkeypatch):
        from streakwise.cli import analyse_commands
        from streakwise.ingest.store import Store

        code, _, err = run(capsys, "analyse", "--store", store, *SETTINGS, "--save")
        assert code == 0, err
        settings = {"players": None, "seasons": None, "teams": None, "attempt_type": "field_goal", "max_k": 3,
                    "permutations": 300, "seed": None, "min_attempts": 100, "alternative": "hot"}
        # `analyse --save` records the latest seed under RUN_KIND; stand in for it here
        monkeypatch.setattr(analyse_commands, "RUN_KIND", "report_test_latest_seed", raising=False)
        with Store(store) as writable:
            writable.save_result("report_test_latest_seed", settings, {"seed": int(SEED)})
        without_seed = ("--permutations", "300", "--min-attempts", "100", "--json")
        code, out, err = run(capsys, "report", "--league", "--output", str(tmp_path / "l.html"), "--store", store,
                             *without_seed)
        assert code == 0, err
        summary = json.loads(out)
        assert (summary["seed"], summary["seed_from"], summary["saved_scan_used"]) == (int(SEED), "saved", True)
        assert "give --seed" not in err
        code, out, err = run(capsys, "report", "--player", "a", "--output", str(tmp_path / "a.html"), "--store", store,
                             *without_seed)
        assert code == 0, err
        summary = json.loads(out)
        assert (summary["seed"], summary["q_values_from_saved_scan"]) == (int(SEED), True)
        # nothing recorded for these settings: a fresh seed, printed
        code, out, err = run(capsys, "report", "--league", "--output", str(tmp_path / "l.html"), "--store", store,
                             "--permutations", "50", "--min-attempts", "100", "--json")
        assert code == 0, err
        summary = json.loads(out)
        assert summary["seed_from"] == "fresh" and f"give --seed {summary['seed']}" in err

    def test_no_attempts_exits_2(self, store, tmp_path, capsys):
        code, _, err = run(capsys, "report", "--league", "--output", str(tmp_path / "l.html"), "--store", store,
                           "--attempt-type", "dunk", "--seed", "1")
        assert code == 2 and "no attempts of type dunk" in err
