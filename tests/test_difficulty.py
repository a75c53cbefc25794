"""Tests for the difficulty model (analysis.difficulty) and the adjusted tests (analysis.adjusted).

The demo league (seed 7) is built once for the module and its difficulty model
fitted once. Its truth: logit P(make) = player term + game form + sum_k beta_k
(x_k - r_k) with beta_distance = -0.045, beta_defender = 0.07, beta_home = 0.06
and 0 for period and clock. Game form is a random intercept the model leaves
out, which attenuates logistic coefficients by about 1 / sqrt(1 + 0.346
sigma^2) (Zeger, Liang & Albert 1988, Biometrics 44, 1049-1060): the allowance
is that shrinkage at the largest form_sd, on top of 4 standard errors.

Calibration: on simulated null players (varying difficulty and game-to-game
form, no dependence) the share of p-values <= alpha must stay below alpha plus
3 binomial standard errors sqrt(alpha (1 - alpha) / n_players).
"""

from __future__ import annotations

import json
import math
import re
import warnings

import numpy as np
import pandas as pd
import pytest
from scipy import special

from streakwise.analysis.adjusted import (
    AdjustedTestResult,
    difficulty_adjusted_test,
    player_attempts,
)
from streakwise.analysis.difficulty import DifficultyModelWarning, fit_difficulty_model
from streakwise.analysis.difficulty_sim import DifficultyModel, sample_shot_covariates
from streakwise.analysis.sequences import player_sequences
from streakwise.demo_league import build_demo
from streakwise.ingest.store import Store

SEED = 7
N_SE = 4
ALPHA = 0.05


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo_difficulty")
    summary = build_demo(out, seed=SEED)
    with Store(summary.store_path, read_only=True) as store:
        frame = store.attempts(attempt_types=["field_goal"])
    truth = json.loads(summary.truth_path.read_text(encoding="utf-8"))
    with warnings.catch_warnings():
        warnings.simplefilter("error", DifficultyModelWarning)  # the demo fits cleanly
        model = fit_difficulty_model(frame)
    return {"frame": frame, "truth": truth, "model": model}


def simulated_frame(n_players=6, games=20, attempts=12, *, seed=0, form_sd=0.3, columns=("distance", "defender_distance")):
    """Canonical attempts of independent shooters with varying difficulty and game form."""
    rng = np.random.default_rng(seed)
    truth = DifficultyModel({"distance": -0.045, "defender_distance": 0.07}, {"distance": 15.0, "defender_distance": 4.0})
    rows = []
    for i in range(n_players):
        shots = sample_shot_covariates((games, attempts), (0.25, 0.17, 0.23, 0.35), rng=rng)
        eta = (rng.normal(-0.2, 0.15) + rng.normal(0, form_sd, (games, 1))
               + truth.linear_predictor({"distance": shots.distance, "defender_distance": shots.defender_distance}))
        made = rng.random((games, attempts)) < special.expit(eta)
        frame = pd.DataFrame(
            {
                "player": f"p{i:03d}",
                "game": np.repeat([f"g{g:03d}" for g in range(games)], attempts),
                "seq": np.tile(np.arange(attempts), games),
                "made": made.ravel(),
                "distance": shots.distance.ravel(),
                "defender_distance": shots.defender_distance.ravel(),
                "points": shots.points.ravel(),
            }
        )
        frame["session"] = frame["game"]
        rows.append(frame)
    frame = pd.concat(rows, ignore_index=True)
    keep = ["player", "game", "session", "seq", "made", *columns]
    return frame[[c for c in keep if c in frame.columns]]


def fit_warned(frame, match, **kwargs):
    """Fit, recording the model's warnings; one of them must match ``match``."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", DifficultyModelWarning)
        model = fit_difficulty_model(frame, **kwargs)
    messages = [str(w.message) for w in caught if issubclass(w.category, DifficultyModelWarning)]
    assert any(re.search(match, m) for m in messages), messages
    assert list(model.warnings) == messages
    return model


def fit_quietly(frame, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DifficultyModelWarning)
        return fit_difficulty_model(frame, **kwargs)


# ---------------------------------------------------------------------------
# The difficulty model
# ---------------------------------------------------------------------------


class TestFitDifficultyModel:
    def test_validation(self):
        frame = simulated_frame(1, 3, 5)
        with pytest.raises(ValueError, match="`frame` needs the columns player and made"):
            fit_difficulty_model(frame.drop(columns="made"))
        with pytest.raises(ValueError, match="`engine` must be one of 'logit', 'glm' \\(got 'probit'\\)"):
            fit_difficulty_model(frame, engine="probit")
        with pytest.raises(ValueError, match="`splines` must name numeric covariates"):
            fit_difficulty_model(frame, splines=("points",))
        with pytest.raises(ValueError, match="`covariates` must be among"):
            fit_difficulty_model(frame, covariates=("height",))
        with pytest.raises(ValueError, match="`spline_df` must be an integer from 3 to 10"):
            fit_difficulty_model(frame, spline_df=2)

    def test_recovers_the_demo_coefficients(self, demo):
        model, truth = demo["model"], demo["truth"]
        beta = truth["make_model"]["difficulty"]["coefficients"]
        largest_sd = max(p["form_sd"] for p in truth["players"])
        shrink = 1.0 - 1.0 / math.sqrt(1.0 + 0.346 * largest_sd**2)
        table = model.coefficients.set_index("term")
        # distance is a spline: its average slope against the (linear) truth
        slope, se = model.average_slope("distance")
        assert abs(slope - beta["distance"]) < N_SE * se + shrink * abs(beta["distance"])
        for name in ("defender_distance", "home", "period", "clock_s"):
            estimate, se = table.loc[name, "estimate"], table.loc[name, "se"]
            assert abs(estimate - beta[name]) < N_SE * se + shrink * abs(beta[name]), name
        # points carry no effect of their own in the demo (3 points iff 23 ft or more)
        row = table.loc["C(points)[T.3]"]
        assert abs(row["estimate"]) < N_SE * row["se"]

    def test_fit_quality_on_the_demo(self, demo):
        model = demo["model"]
        assert model.warnings == ()
        assert model.missing_covariates == ()
        assert model.log_loss < model.base_log_loss
        assert len(model.calibration) == 10
        calibration = model.calibration
        assert (calibration["difference"].abs() < N_SE * calibration["se"]).all()
        assert len(model.fitted_probability) == len(demo["frame"])
        assert model.n_players == demo["frame"]["player"].nunique()

    def test_logit_and_glm_agree(self, demo):
        frame = demo["frame"]
        chosen = sorted(frame["player"].unique())[:10]
        subset = frame[frame["player"].isin(chosen)]
        logit = fit_quietly(subset, engine="logit")
        glm = fit_quietly(subset, engine="glm")
        np.testing.assert_allclose(logit.coefficients["estimate"], glm.coefficients["estimate"], atol=1e-6)
        np.testing.assert_allclose(logit.coefficients["se"], glm.coefficients["se"], rtol=1e-4)
        np.testing.assert_allclose(logit.fitted_probability, glm.fitted_probability, atol=1e-7)

    def test_warns_about_missing_covariates(self):
        frame = simulated_frame(columns=("distance",))
        model = fit_warned(frame, "covariates missing from the data: points, defender_distance")
        assert "defender_distance" in model.missing_covariates and model.covariates == ("distance",)
        assert any("missing" in w for w in model.warnings)

    def test_warns_without_covariates(self):
        frame = simulated_frame(columns=())
        model = fit_warned(frame, "no shot covariates")
        assert model.covariates == ()
        assert len(model.fitted_probability) == len(frame)

    def test_warns_on_poor_calibration(self):
        # a step in distance fitted as a straight line: the extreme deciles are off
        rng = np.random.default_rng(1)
        n = 8000
        distance = rng.uniform(1, 27, n)
        made = rng.random(n) < np.where(distance < 5, 0.95, 0.35)
        frame = pd.DataFrame({"player": rng.choice(["a", "b"], n), "made": made, "distance": distance})
        fit_warned(frame, "poor calibration: in decile", splines=())

    def test_warns_when_covariates_say_little(self):
        rng = np.random.default_rng(2)
        n = 4000
        frame = pd.DataFrame({"player": rng.choice(["a", "b"], n), "made": rng.random(n) < 0.45,
                              "clock_s": rng.uniform(0, 720, n)})
        fit_warned(frame, "barely beats the base rate")

    def test_fitted_probability_follows_the_frame(self):
        frame = simulated_frame(3, 10, 8, seed=3)
        model = fit_quietly(frame)
        shuffled = frame.sample(frac=1.0, random_state=4)
        again = fit_quietly(shuffled)
        np.testing.assert_allclose(again.fitted().reindex(frame.index).to_numpy(), model.fitted_probability,
                                   atol=1e-8)

    def test_imputes_partly_missing_covariates(self):
        frame = simulated_frame(3, 10, 8, seed=5)
        frame.loc[frame.index[:17], "defender_distance"] = np.nan
        model = fit_warned(frame, "defender_distance is missing on 17 of 240 attempts")
        assert model.imputed_covariates == ("defender_distance",)
        assert "defender_distance_missing" in set(model.coefficients["term"])
        assert np.isfinite(model.fitted_probability).all()

    def test_average_slope_of_a_linear_term_is_its_coefficient(self):
        model = fit_quietly(simulated_frame(3, 10, 8, seed=6))
        slope, se = model.average_slope("defender_distance")
        row = model.coefficients.set_index("term").loc["defender_distance"]
        assert slope == pytest.approx(row["estimate"], rel=1e-6)
        assert se == pytest.approx(row["se"], rel=1e-6)
        with pytest.raises(ValueError, match="`covariate` must be a numeric covariate of the model"):
            model.average_slope("points")

    def test_pools_players_it_cannot_fit(self):
        frame = simulated_frame(3, 10, 8, seed=7)
        extra = pd.DataFrame({"player": "never", "game": "g000", "session": "g000", "seq": [0, 1, 2], "made": False,
                              "distance": [5.0, 10.0, 20.0], "defender_distance": 4.0})
        model = fit_quietly(pd.concat([frame, extra], ignore_index=True))
        assert model.pooled_players == ("never",)

    def test_views(self):
        model = fit_quietly(simulated_frame(3, 10, 8, seed=8))
        frame = model.to_frame()
        assert list(frame.columns) == ["term", "estimate", "se", "z", "p_value"]
        text = model.summary()
        assert "calibration by decile" in text and "Caveats:" in text and "average slope" in text


# ---------------------------------------------------------------------------
# From a frame to one player's arrays
# ---------------------------------------------------------------------------


class TestPlayerAttempts:
    def test_same_order_as_player_sequences(self, demo):
        frame = demo["frame"]
        sequences = player_sequences(frame, players=["P001"])["P001"]
        attempts = player_attempts(frame, "P001", demo["model"])
        assert np.array_equal(attempts.made, sequences.made)
        assert np.array_equal(attempts.offsets, sequences.offsets)
        assert np.array_equal(attempts.sessions, sequences.sessions)
        fitted = demo["model"].fitted()
        np.testing.assert_allclose(attempts.probability, fitted.loc[attempts.index].to_numpy())

    def test_unknown_player(self, demo):
        with pytest.raises(ValueError, match="player 'nobody' has no attempts in the frame"):
            player_attempts(demo["frame"], "nobody")


# ---------------------------------------------------------------------------
# The adjusted tests
# ---------------------------------------------------------------------------


class TestDifficultyAdjustedTest:
    def test_validation(self):
        with pytest.raises(ValueError, match="`made` must be a 1-d array of 0/1 outcomes"):
            difficulty_adjusted_test([0, 2], [0.5, 0.5])
        with pytest.raises(ValueError, match=r"`probability` must hold one value per attempt \(2; got 3\)"):
            difficulty_adjusted_test([0, 1], [0.5, 0.5, 0.5])
        with pytest.raises(ValueError, match="`draws` must be an integer >= 1"):
            difficulty_adjusted_test([0, 1], [0.5, 0.5], draws=0)
        with pytest.raises(ValueError, match=r"`games` must give the game of each session \(1; got shape \(2,\)\)"):
            difficulty_adjusted_test([0, 1], [0.5, 0.5], games=["a", "b"])

    def test_layout_and_seeds(self):
        frame = simulated_frame(1, 12, 10, seed=9)
        model = fit_quietly(frame)
        a = player_attempts(frame, "p000", model)
        kwargs = dict(games=a.games, distance=a.distance, draws=99, permutations=99, rng=5)
        first = difficulty_adjusted_test(a.made, a.probability, a.offsets, player="p000", **kwargs)
        again = difficulty_adjusted_test(a.made, a.probability, a.offsets, player="p000", **kwargs)
        other = difficulty_adjusted_test(a.made, a.probability, a.offsets, player="p001", **kwargs)
        assert isinstance(first, AdjustedTestResult) and first.seed == 5
        assert first.to_dict() == again.to_dict()
        assert first.residual_test(1).null_mean != other.residual_test(1).null_mean  # its own stream
        record = first.to_dict()
        assert [t["k"] for t in record["difficulty_adjusted"]] == [1, 2, 3]
        assert {"k", "difference", "null_mean", "corrected", "p_value"} <= set(record["difficulty_adjusted"][0])
        assert {"k", "estimate", "se", "p_value_resampled"} <= set(record["streak_coefficient"])
        assert {"k", "difference", "p_value"} <= set(record["shot_selection"])
        test = first.residual_test(1)
        assert test.corrected == pytest.approx(test.difference - test.null_mean)
        assert list(first.to_frame()["test"]) == ["residual_difference"] * 3 + ["streak_coefficient", "shot_selection"]
        assert "Caveats:" in first.summary()

    def test_undefined_statistic_has_a_reason(self):
        # every attempt a miss in a game of 2: nothing follows a make
        result = difficulty_adjusted_test([0, 0, 0, 0], [0.4, 0.5, 0.4, 0.5], [0, 2, 4], draws=9, permutations=9, rng=1)
        test = result.residual_test(1)
        assert test.difference is None and test.p_value is None and "no attempt follows 1 makes" in test.reason

    def test_shot_selection_players_on_the_demo(self, demo):
        """Raw rates show the masked (selection) effect; the adjusted ones show the true effect.

        Selection-only players (truth: no hot hand, longer and tighter attempts after a make)
        look cold in raw rates and not after adjustment; the selection player with a real hot
        state looks ordinary raw and hot after adjustment.
        """
        frame, model = demo["frame"], demo["model"]
        selection = [p for p in demo["truth"]["players"] if p["kind"] == "shot_selection"]
        assert len(selection) == 3
        for player in selection:
            a = player_attempts(frame, player["id"], model)
            kwargs = dict(games=a.games, distance=a.distance, player=a.player, draws=999, permutations=999, rng=SEED)
            adjusted = difficulty_adjusted_test(a.made, a.probability, a.offsets, **kwargs)
            # "raw": one probability for every attempt, so the null is the within-game permutation
            raw = difficulty_adjusted_test(a.made, np.full(a.attempts, a.made.mean()), a.offsets, **kwargs)
            chosen = adjusted.shot_selection
            # the check finds the harder attempts after a make, by about the true distance shift
            assert chosen.p_value < 0.01 and chosen.difference < 0
            assert any("shot selection" in w for w in adjusted.warnings)
            after_make = np.r_[False, a.made[:-1] == 1] & (np.arange(a.attempts) - np.repeat(a.offsets[:-1], np.diff(a.offsets)) >= 1)
            after_miss = np.r_[False, a.made[:-1] == 0] & (np.arange(a.attempts) - np.repeat(a.offsets[:-1], np.diff(a.offsets)) >= 1)
            welch = math.sqrt(a.distance[after_make].var(ddof=1) / after_make.sum()
                              + a.distance[after_miss].var(ddof=1) / after_miss.sum())
            assert abs(chosen.distance_difference - player["distance_shift"]) < N_SE * welch
            raw1, adjusted1 = raw.residual_test(1), adjusted.residual_test(1)
            if player["dependence"] == "none":
                # raw: the selection effect (expected probability after makes minus after misses)
                assert raw1.corrected < 0 and abs(raw1.corrected - chosen.difference) < N_SE * raw1.se
                assert raw1.p_value > 0.5
                # adjusted: no hot hand, as in the truth
                assert abs(adjusted1.corrected) < N_SE * adjusted1.se
            else:
                # a real hot state, masked raw and found once difficulty is accounted for
                assert raw1.p_value > ALPHA
                assert adjusted1.p_value < 0.01 and adjusted1.corrected > raw1.corrected + 2 * adjusted1.se
                assert adjusted.streak_coefficient.p_value_resampled < 0.01

    def test_calibration_on_null_players(self):
        """Null players: difficulty varies, form varies from game to game, no dependence.

        The pooled difficulty model is fitted on all of them (as on real data), so the
        fitted probabilities are estimates, not the truth.
        """
        n_players = 200
        frame = simulated_frame(n_players, 16, 10, seed=11)
        model = fit_quietly(frame)
        rejections = np.zeros(4)
        for player in sorted(frame["player"].unique()):
            a = player_attempts(frame, player, model)
            result = difficulty_adjusted_test(a.made, a.probability, a.offsets, games=a.games, player=player,
                                              draws=99, permutations=9, rng=12)
            values = [result.residual_test(k).p_value for k in (1, 2, 3)] + [result.streak_coefficient.p_value_resampled]
            rejections += [v is not None and v <= ALPHA for v in values]
        limit = ALPHA + 3 * math.sqrt(ALPHA * (1 - ALPHA) / n_players)
        assert (rejections / n_players <= limit).all(), rejections / n_players
