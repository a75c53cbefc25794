"""Tests for streakwise.demo_league: the invented league with known truth.

The league is built once per module (seed 7) through the real ingest path.
Statistical checks compare simulations with closed forms within 4 Monte Carlo
standard errors; every standard error is computed from independent batches
(or independent draws), never guessed.
"""

from __future__ import annotations

import hashlib
import importlib
import json
import zipfile

import numpy as np
import pandas as pd
import pytest
from scipy import special

from streakwise.analysis.difficulty_sim import simulate_outcome_dependent
from streakwise.analysis.simulate import hidden_state_moments, markov_moments, simulate_hidden_state
from streakwise.cli.main import main
from streakwise.demo_league import build_demo, build_scenario, demo_files, write_demo_files
from streakwise.demo_league.games import play_season
from streakwise.demo_league.scenario import _COLD_DROP, _STREAKY_GAP, SEASONS
from streakwise.ingest.errors import InputError
from streakwise.ingest.pipeline import ingest_paths
from streakwise.ingest.profiles import load_profile
from streakwise.ingest.store import Store

from conftest import DATA

SEED = 7
N_SE = 4
DATA_FILES = ("events", "attempts", "drills", "truth")


def _sha256(path):
    return hashlib.sha256(path.read_bytes()).hexdigest()


@pytest.fixture(scope="module")
def league(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo")
    summary = build_demo(out, seed=SEED)
    paths = demo_files(out, build_scenario(SEED))
    with Store(summary.store_path, read_only=True) as store:
        attempts = store.attempts()
        sources = store.sources()
        rejects = store.rejects()
    return {
        "summary": summary,
        "paths": paths,
        "hashes": {name: _sha256(paths[name]) for name in DATA_FILES},
        "scenario": build_scenario(SEED),
        "attempts": attempts,
        "sources": sources,
        "rejects": rejects,
    }


def _sequences(frame):
    """'0101...' per (player, game, attempt_type), from attempts in seq order."""
    text = np.where(frame["made"].to_numpy(dtype=bool), "1", "0")
    keyed = frame.assign(_bit=text)
    return keyed.groupby(["player", "game", "attempt_type"], sort=True)["_bit"].agg("".join)


# ---------------------------------------------------------------------------
# Public surface
# ---------------------------------------------------------------------------


def test_all_is_sorted_and_importable():
    for name in ("streakwise.demo_league", "streakwise.analysis.difficulty_sim", "streakwise.demo_league.scenario"):
        module = importlib.import_module(name)
        assert list(module.__all__) == sorted(module.__all__), name
        for item in module.__all__:
            assert hasattr(module, item), (name, item)


# ---------------------------------------------------------------------------
# Determinism
# ---------------------------------------------------------------------------


class TestDeterminism:
    def test_same_seed_same_bytes(self, league, tmp_path):
        paths = write_demo_files(build_scenario(SEED), tmp_path)
        assert {name: _sha256(paths[name]) for name in DATA_FILES} == league["hashes"]

    def test_other_seed_other_league(self, league):
        other = build_scenario(SEED + 1).to_truth()
        assert other != league["scenario"].to_truth()
        assert [p["kind"] for p in other["players"]] != [p["kind"] for p in league["scenario"].to_truth()["players"]]

    def test_excel_carries_no_clock_time(self, league):
        with zipfile.ZipFile(league["paths"]["drills"]) as book:
            assert {info.date_time for info in book.infolist()} == {(2032, 7, 1, 12, 0, 0)}
            core = book.read("docProps/core.xml").decode()
        assert core.count("2032-07-01T12:00:00Z") == 2  # created and modified

    def test_bad_seed(self, tmp_path):
        with pytest.raises(InputError, match="seed must be a whole number >= 0"):
            build_demo(tmp_path, seed=-1)


# ---------------------------------------------------------------------------
# Ingest: zero rejects, counts add up, data as drawn
# ---------------------------------------------------------------------------


class TestIngest:
    def test_zero_rejects_and_accounting(self, league):
        sources, attempts = league["sources"], league["attempts"]
        assert len(sources) == 3
        assert league["rejects"].empty
        assert (sources["rejected"] == 0).all()
        assert (sources["rows_read"] == sources["rows_stored"] + sources["skipped"] + sources["rejected"]).all()
        stored = attempts.groupby("source").size()
        for row in sources.itertuples(index=False):
            assert stored[row.name] == row.attempts
        by_layout = sources.set_index("layout")
        assert by_layout.loc["attempts", "skipped"] == 0
        assert by_layout.loc["events", "skipped"] > by_layout.loc["events", "attempts"]  # all kinds of events
        assert by_layout.loc["events", "rows_stored"] == by_layout.loc["events", "attempts"]
        study = league["scenario"].practice
        assert by_layout.loc["drills", "attempts"] == by_layout.loc["drills", "rows_stored"] * study.attempts_per_round
        assert {s.attempts for s in league["summary"].sources} == set(sources["attempts"])

    def test_profiles_are_shipped_and_used(self, league):
        assert set(league["sources"]["profile"]) == {"demo-events", "demo-attempts", "demo-drills"}
        scenario = league["scenario"]
        events, table, drills = (load_profile(n) for n in ("demo-events", "demo-attempts", "demo-drills"))
        assert events.fixed == {"season": SEASONS[0], "competition": scenario.name}
        assert table.fixed == {"competition": scenario.name}
        assert drills.fixed == {"season": scenario.practice.season, "competition": scenario.practice.name}
        assert drills.sheet == "rounds"

    @pytest.mark.parametrize("season_index", [0, 1])
    def test_stored_sequences_are_the_drawn_ones(self, league, season_index):
        season = SEASONS[season_index]
        drawn = play_season(league["scenario"], season_index, with_events=False).attempts
        stored = league["attempts"]
        stored = stored[stored["season"] == season]
        assert len(stored) == len(drawn)
        assert _sequences(stored).to_dict() == _sequences(drawn).to_dict()

    def test_event_log_interleaves_every_kind(self, league):
        log = pd.read_csv(league["paths"]["events"], dtype=str, keep_default_na=False)
        kinds = set(log["action"])
        assert {"try-2", "try-3", "line-try", "board", "whistle", "giveaway", "swap-in", "swap-out", "feed"} <= kinds
        assert log["remaining"].str.fullmatch(r"\d{1,2}:\d\d").all()
        # free throws come in trips of 1, 2 or 3 by one player, right after a whistle
        is_throw = (log["action"] == "line-try").to_numpy()
        same_shooter = (log["who"] == log["who"].shift()).to_numpy() & (log["match"] == log["match"].shift()).to_numpy()
        starts = is_throw & ~(np.r_[False, is_throw[:-1]] & same_shooter)
        trip = np.cumsum(starts)[is_throw]
        sizes = pd.Series(trip).value_counts()
        assert set(sizes.unique()) == {1, 2, 3}
        assert (sizes == 2).sum() > (sizes == 3).sum() > 0
        assert (log["action"].shift().to_numpy()[starts] == "whistle").all()


# ---------------------------------------------------------------------------
# Volumes and rates
# ---------------------------------------------------------------------------


class TestVolumes:
    def test_games_and_teams(self, league):
        scenario = league["scenario"]
        assert len(scenario.teams) == 12 and len(scenario.players) == 144
        for season in SEASONS:
            games = scenario.season_games(season)
            per_team = pd.Series([g.home for g in games] + [g.away for g in games]).value_counts()
            assert per_team.between(70, 82).all()
            assert len({g.id for g in games}) == len(games)
            dates = pd.Series([g.date for g in games] + [g.date for g in games])
            teams = pd.Series([g.home for g in games] + [g.away for g in games])
            assert not pd.DataFrame({"d": dates, "t": teams}).duplicated().any()  # one game a day

    def test_attempts_per_player(self, league):
        fg = league["attempts"]
        fg = fg[fg["attempt_type"] == "field_goal"]
        roles = {p.id: p.role for p in league["scenario"].players}
        per_game = fg.groupby(["player", "game"]).size().rename("n").reset_index()
        per_game["role"] = per_game["player"].map(roles)
        starters = per_game[per_game["role"] == "starter"]["n"]
        assert starters.between(10, 22).all()
        assert per_game[per_game["role"] != "starter"]["n"].max() <= 12
        season = fg.groupby(["season", "player"]).size().rename("n").reset_index()
        rotation = season[season["player"].map(roles).isin(["starter", "bench"])]
        assert rotation.groupby("season")["n"].median().min() >= 300

    def test_make_rates(self, league):
        games = league["attempts"]
        games = games[games["season"].isin(SEASONS)]
        rates = games.groupby(["season", "attempt_type"])["made"].mean()
        for season in SEASONS:
            assert 0.40 <= rates[(season, "field_goal")] <= 0.52
            assert 0.70 <= rates[(season, "free_throw")] <= 0.85

    def test_covariates_on_every_attempt(self, league):
        games = league["attempts"]
        games = games[games["season"].isin(SEASONS)]
        for column in ("distance", "points", "period", "clock_s", "score_margin", "home", "game_date"):
            assert games[column].notna().all(), column
        fg = games[games["attempt_type"] == "field_goal"]
        assert fg["defender_distance"].notna().all()
        three = fg["distance"].to_numpy() >= league["scenario"].three_point_distance
        assert (fg["points"].to_numpy() == np.where(three, 3, 2)).all()
        ft = games[games["attempt_type"] == "free_throw"]
        assert (ft["points"] == 1).all() and (ft["distance"] == league["scenario"].free_throw_distance).all()
        assert games["period"].between(1, 4).all() and games["clock_s"].between(0, 720).all()


# ---------------------------------------------------------------------------
# Truth
# ---------------------------------------------------------------------------


class TestTruth:
    def test_truth_file_is_the_scenario(self, league):
        written = json.loads(league["paths"]["truth"].read_text(encoding="utf-8"))
        assert written == json.loads(json.dumps(league["scenario"].to_truth()))
        assert league["paths"]["truth"].parent != league["paths"]["events"].parent
        assert "truth.json" not in set(league["sources"]["name"])

    def test_truth_matches_scenario_parameters(self, league):
        truth = json.loads(league["paths"]["truth"].read_text(encoding="utf-8"))
        scenario = league["scenario"]
        by_id = {p["id"]: p for p in truth["players"]}
        for player in scenario.players:
            entry = by_id[player.id]
            for name in ("kind", "dependence", "skill", "hot_rate", "cold_rate", "stay_hot", "stay_cold",
                         "after_make_shift", "distance_shift", "defender_shift", "form_sd", "ft_logit"):
                assert entry[name] == getattr(player, name), (player.id, name)
        assert truth["make_model"]["difficulty"]["coefficients"] == dict(scenario.difficulty.coefficients)
        assert truth["kind_counts"] == {
            "steady": 126, "streaky": 4, "small_effect": 6, "shot_selection": 3, "cold_spells": 2,
            "free_throw_specialist": 3,
        }

    def test_types_have_their_documented_effects(self, league):
        players = league["scenario"].players
        for p in players:
            if p.kind == "streaky" or (p.kind == "shot_selection" and p.dependence == "hidden_state"):
                assert _STREAKY_GAP[0] <= p.hot_rate - p.cold_rate <= _STREAKY_GAP[1]
                assert min(p.stay_hot, p.stay_cold) >= 0.9
                assert p.role == "starter"
            if p.kind == "small_effect":
                difference = special.expit(p.skill + p.after_make_shift) - special.expit(p.skill)
                assert 0.01 <= difference <= 0.03
            if p.kind == "shot_selection":
                assert p.distance_shift > 0 and p.defender_shift < 0
            if p.kind == "cold_spells":
                assert _COLD_DROP[0] <= p.hot_rate - p.cold_rate <= _COLD_DROP[1]
                assert p.stay_hot > p.stay_cold >= 0.9  # the usual state is the persistent one
            if p.kind == "free_throw_specialist":
                assert special.expit(p.ft_logit) >= 0.90
            if p.kind == "steady":
                assert p.dependence == "none" and p.distance_shift == 0
        selection = [p for p in players if p.kind == "shot_selection"]
        assert sum(p.dependence == "hidden_state" for p in selection) == 1


# ---------------------------------------------------------------------------
# The simulators as the scenario uses them, against their closed forms
# ---------------------------------------------------------------------------


def _lag1_difference(made):
    """P(make | make) - P(make | miss), pooled over the rows of ``made``."""
    previous, current = made[:, :-1], made[:, 1:]
    return (previous & current).sum() / previous.sum() - (~previous & current).sum() / (~previous).sum()


def _batch_estimates(draw_batch, n_batches):
    """Mean and standard error of a statistic from independent batches."""
    values = np.array([draw_batch(b) for b in range(n_batches)])
    return values.mean(axis=0), values.std(axis=0, ddof=1) / np.sqrt(n_batches)


class TestClosedForms:
    @pytest.mark.parametrize("kind", ["streaky", "cold_spells", "shot_selection"])
    def test_hidden_state_players(self, league, kind):
        players = [p for p in league["scenario"].players if p.kind == kind and p.dependence == "hidden_state"]
        assert players
        for player in players:
            moments = hidden_state_moments(player.hot_rate, player.cold_rate, player.stay_hot, player.stay_cold)
            rng = np.random.default_rng([SEED, 1])

            def batch(_):
                made = simulate_hidden_state(
                    400, hot_rate=player.hot_rate, cold_rate=player.cold_rate, stay_hot=player.stay_hot,
                    stay_cold=player.stay_cold, n_sequences=50, rng=rng,
                ).made
                return np.array([made.mean(), _lag1_difference(made)])

            mean, se = _batch_estimates(batch, 40)
            assert abs(mean[0] - moments.make_rate) < N_SE * se[0]
            assert abs(mean[1] - moments.rate_difference) < N_SE * se[1]
            assert moments.rate_difference == pytest.approx(player.reference_moments()["rate_difference"])

    def test_small_effect_players(self, league):
        players = [p for p in league["scenario"].players if p.kind == "small_effect"]
        for player in players:
            p0 = special.expit(player.skill)
            p1 = special.expit(player.skill + player.after_make_shift)
            moments = markov_moments(p1, p0)
            rng = np.random.default_rng([SEED, 2])
            eta = np.full((50, 400), player.skill)

            def batch(_):
                made = simulate_outcome_dependent(eta, eta + player.after_make_shift, rng=rng).made
                # the chain starts at rate_after_miss; its pull decays as (p1 - p0)**t
                return np.array([made[:, 10:].mean(), _lag1_difference(made)])

            mean, se = _batch_estimates(batch, 40)
            assert abs(mean[0] - moments.make_rate) < N_SE * se[0]
            assert abs(mean[1] - moments.rate_difference) < N_SE * se[1]
            assert 0.01 <= moments.rate_difference <= 0.03

    def test_shot_selection_in_the_stored_data(self, league):
        """After a make, selection players' attempts are distance_shift feet longer."""
        fg = league["attempts"]
        fg = fg[(fg["attempt_type"] == "field_goal") & fg["season"].isin(SEASONS)]
        for player in (p for p in league["scenario"].players if p.kind == "shot_selection"):
            mine = fg[fg["player"] == player.id].sort_values(["session", "seq"])
            previous = mine.groupby("session")["made"].shift(1)
            after_make = mine["distance"][previous == True]  # noqa: E712
            after_miss = mine["distance"][previous == False]  # noqa: E712
            difference = after_make.mean() - after_miss.mean()
            # independent attempts given their branch: Welch standard error
            se = np.sqrt(after_make.var() / len(after_make) + after_miss.var() / len(after_miss))
            assert abs(difference - player.distance_shift) < N_SE * se

    def test_difficulty_model_is_recoverable(self, league):
        """A logistic fit with player intercepts finds the documented coefficients.

        Game form is a random intercept left out of the fit, which attenuates a
        marginal logistic coefficient by about 1 / sqrt(1 + 0.346 sigma^2)
        (Zeger, Liang & Albert 1988, Biometrics 44, 1049-1060); the allowance
        below adds that shrinkage at the largest form_sd to 4 standard errors.
        """
        import statsmodels.api as sm

        scenario = league["scenario"]
        chosen = [p for p in scenario.players if p.kind == "steady" and p.role == "starter"][:15]
        fg = league["attempts"]
        fg = fg[(fg["attempt_type"] == "field_goal") & fg["season"].isin(SEASONS) & fg["player"].isin([p.id for p in chosen])]
        design = pd.get_dummies(fg["player"], dtype=float)
        reference = scenario.difficulty.reference
        for name in ("distance", "defender_distance", "score_margin", "clock_s"):
            design[name] = fg[name].to_numpy(dtype=float) - reference[name]
        design["home"] = fg["home"].to_numpy(dtype=float)
        fit = sm.GLM(fg["made"].to_numpy(dtype=float), design, family=sm.families.Binomial()).fit()
        largest_sd = max(p.form_sd for p in chosen)
        shrink = 1.0 - 1.0 / np.sqrt(1.0 + 0.346 * largest_sd**2)
        for name in ("distance", "defender_distance", "home", "score_margin", "clock_s"):
            beta = scenario.difficulty.coefficients[name]
            assert abs(fit.params[name] - beta) < N_SE * fit.bse[name] + shrink * abs(beta), name


# ---------------------------------------------------------------------------
# The store and the command line
# ---------------------------------------------------------------------------


class TestStoreAndCommand:
    def test_refuses_a_store_with_other_data(self, tmp_path):
        store_path = tmp_path / "streakwise.duckdb"
        with Store(store_path) as store:
            golden = DATA / "ingest" / "attempts"
            ingest_paths(store, [golden / "attempts.csv"], load_profile(golden / "profile.toml"))
        before = store_path.read_bytes()
        with pytest.raises(InputError, match="holds data that is not the demo's"):
            build_demo(tmp_path, seed=SEED)
        assert store_path.read_bytes() == before
        assert not (tmp_path / "logs").exists()

    def test_command(self, league, tmp_path, capsys):
        out = tmp_path / "cli demo"  # a space: the printed commands quote it
        assert main(["demo", "--out", str(out), "--seed", str(SEED)]) == 0
        printed = capsys.readouterr().out
        assert f"streakwise players --store '{out / 'streakwise.duckdb'}'" in printed
        assert "invented" in printed and league["scenario"].name in printed
        paths = demo_files(out, league["scenario"])
        assert {name: _sha256(paths[name]) for name in DATA_FILES} == league["hashes"]
        # a second run replaces the demo store instead of piling sources up
        assert main(["demo", "--out", str(out), "--seed", str(SEED), "--json"]) == 0
        record = json.loads(capsys.readouterr().out)
        assert record["invented"] is True and record["seed"] == SEED
        assert [s["rows_rejected"] for s in record["sources"]] == [0, 0, 0]
        with Store(out / "streakwise.duckdb", read_only=True) as store:
            assert len(store.sources()) == 3

    def test_command_bad_seed(self, tmp_path, capsys):
        assert main(["demo", "--out", str(tmp_path), "--seed", "-2"]) == 2
        assert "seed" in capsys.readouterr().err
