"""Tests for streakwise.analysis.hotstate: the two-state hot/cold model.

Reference values: the forward-backward posterior and likelihood against brute
force over every hidden path of tiny sequences (Rabiner 1989, Proc. IEEE
77(2), eq. 17-27, computed directly from their definitions). Recovery on long
sequences drawn by simulate_hidden_state: every parameter within 4 standard
errors (observed information). Calibration on null players with varying
difficulty and game-to-game form: rejections at most alpha + 3 binomial
standard errors.
"""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest
from scipy import special, stats

from streakwise.analysis import hotstate
from streakwise.analysis.difficulty_sim import DifficultyModel, sample_shot_covariates
from streakwise.analysis.hotstate import HotStateResult, fit_hot_state, hot_state_posterior
from streakwise.analysis.simulate import simulate_hidden_state

N_SE = 4
ALPHA = 0.05
Z95 = stats.norm.ppf(0.975)


def brute_force(made, offsets, hot_rate, cold_rate, stay_hot, stay_cold, logit_offset=None):
    """Posterior P(hot) and log-likelihood by summing over every hidden path."""
    made = np.asarray(made)
    offset = np.zeros(len(made)) if logit_offset is None else np.asarray(logit_offset, dtype=float)
    pi_hot = (1 - stay_cold) / (2 - stay_hot - stay_cold)
    posterior, log_likelihood = [], 0.0
    for start, end in zip(offsets[:-1], offsets[1:], strict=True):
        if end == start:
            continue
        x, o = made[start:end], offset[start:end]
        total, hot_mass = 0.0, np.zeros(end - start)
        for path in itertools.product((0, 1), repeat=end - start):
            prob = pi_hot if path[0] else 1 - pi_hot
            for t, state in enumerate(path):
                if t:
                    stay = stay_hot if path[t - 1] else stay_cold
                    prob *= stay if state == path[t - 1] else 1 - stay
                rate = special.expit(special.logit(hot_rate if state else cold_rate) + o[t])
                prob *= rate if x[t] else 1 - rate
            total += prob
            hot_mass += prob * np.array(path)
        posterior.append(hot_mass / total)
        log_likelihood += math.log(total)
    return np.concatenate(posterior), log_likelihood


def auc(score, label):
    """Area under the ROC curve (Mann-Whitney) and its Hanley-McNeil standard error."""
    ranks = stats.rankdata(score)
    n1, n0 = int(label.sum()), int((~label).sum())
    area = (ranks[label].sum() - n1 * (n1 + 1) / 2) / (n1 * n0)
    q1, q2 = area / (2 - area), 2 * area**2 / (1 + area)
    se = math.sqrt((area * (1 - area) + (n1 - 1) * (q1 - area**2) + (n0 - 1) * (q2 - area**2)) / (n1 * n0))
    return area, se


def logit_se(interval):
    low, high = special.logit(np.asarray(interval))
    return (high - low) / (2 * Z95)


class TestHotStatePosterior:
    def test_validation(self):
        with pytest.raises(ValueError, match="`stay_hot` must be strictly between 0 and 1 \\(got 1.0\\)"):
            hot_state_posterior([1, 0], hot_rate=0.6, cold_rate=0.4, stay_hot=1.0, stay_cold=0.9)
        with pytest.raises(ValueError, match="`made` must be a 1-d array of 0/1 outcomes"):
            hot_state_posterior([1, 2], hot_rate=0.6, cold_rate=0.4, stay_hot=0.9, stay_cold=0.9)

    @pytest.mark.parametrize("with_offset", [False, True])
    def test_against_brute_force(self, with_offset):
        made = [1, 1, 0, 1, 0, 0, 0, 1, 1, 1, 0]
        offsets = np.array([0, 3, 3, 7, 11])  # an empty session too
        offset = np.linspace(-0.6, 0.7, len(made)) if with_offset else None
        params = dict(hot_rate=0.7, cold_rate=0.35, stay_hot=0.85, stay_cold=0.75)
        posterior, log_likelihood = hot_state_posterior(made, offsets, logit_offset=offset, **params)
        expected, expected_ll = brute_force(made, offsets, logit_offset=offset, **params)
        np.testing.assert_allclose(posterior, expected, atol=1e-12)
        assert log_likelihood == pytest.approx(expected_ll, abs=1e-10)


class TestFitHotState:
    def test_validation(self):
        with pytest.raises(ValueError, match="`made` must hold at least 2 attempts"):
            fit_hot_state([1])
        with pytest.raises(ValueError, match="`n_starts` must be at most 8"):
            fit_hot_state([1, 0, 1], n_starts=9)
        with pytest.raises(ValueError, match="`interval` must be one of 'information', 'bootstrap'"):
            fit_hot_state([1, 0, 1], interval="wald")
        with pytest.raises(ValueError, match=r"`logit_offset` must hold one value per attempt \(3; got shape \(2,\)\)"):
            fit_hot_state([1, 0, 1], logit_offset=[0.1, 0.2])
        with pytest.raises(ValueError, match="`permutations` must be an integer >= 0"):
            fit_hot_state([1, 0, 1], permutations=-1)

    def test_em_never_decreases_the_likelihood(self):
        draw = simulate_hidden_state(15, hot_rate=0.6, cold_rate=0.35, stay_hot=0.9, stay_cold=0.9, n_sequences=40, rng=1)
        made = draw.made.ravel().astype(int)
        offsets = np.arange(0, 601, 15)
        offset = np.random.default_rng(2).normal(0, 0.5, 600)
        for logit_offset in (None, offset):
            data = hotstate._Data(made, offsets, logit_offset)
            starts = (np.array([[-1.2, 0.9], [-0.3, 0.3]]), np.array([[0.6, 0.6], [0.95, 0.95]]))
            for accelerate in (False, True):
                *_, history = hotstate._run_em(np.repeat(data.x[None], 2, axis=0), data, starts[0], starts[1],
                                               200, 1e-9, accelerate=accelerate)
                for column in history.T:
                    values = column[~np.isnan(column)]
                    assert len(values) > 3
                    assert np.all(np.diff(values) >= -1e-9 * np.abs(values[1:])), (logit_offset is None, accelerate)
            result = fit_hot_state(made, offsets, logit_offset=logit_offset, permutations=0, rng=3)
            trace = np.array(result.log_likelihood_trace)
            assert np.all(np.diff(trace) >= -1e-9 * np.abs(trace[1:]))
            assert result.log_likelihood == pytest.approx(trace[-1])
            assert result.log_likelihood >= result.log_likelihood_one_state

    def test_recovers_the_parameters_on_long_sequences(self):
        truth = dict(hot_rate=0.62, cold_rate=0.30, stay_hot=0.92, stay_cold=0.90)
        draw = simulate_hidden_state(40, n_sequences=500, rng=4, **truth)
        made = draw.made.ravel().astype(int)
        offsets = np.arange(0, made.size + 1, 40)
        result = fit_hot_state(made, offsets, permutations=0, rng=5)
        for name, value in truth.items():
            estimate = getattr(result, name)
            se = logit_se(result.intervals[name])
            assert abs(special.logit(estimate) - special.logit(value)) < N_SE * se, (name, estimate, value)
        # the posterior tracks the hidden state about as well as the true parameters would
        hot = draw.hot.ravel()
        oracle, _ = hot_state_posterior(made, offsets, **truth)
        fitted_auc, se = auc(result.hot_probability, hot)
        oracle_auc, _ = auc(oracle, hot)
        assert oracle_auc > 0.5 + N_SE * se
        assert fitted_auc > oracle_auc - N_SE * se

    def test_recovers_the_state_effects_on_top_of_an_offset(self):
        truth = dict(hot_rate=0.6, cold_rate=0.3, stay_hot=0.9, stay_cold=0.9)
        rng = np.random.default_rng(6)
        offset = rng.normal(0.0, 0.6, (400, 30))
        draw = simulate_hidden_state(30, n_sequences=400, rng=7, logit_offset=offset, **truth)
        made = draw.made.ravel().astype(int)
        result = fit_hot_state(made, np.arange(0, made.size + 1, 30), logit_offset=offset.ravel(), permutations=0,
                               rng=8)
        assert result.with_difficulty
        for name, value in (("hot_effect", truth["hot_rate"]), ("cold_effect", truth["cold_rate"])):
            rate_name = name.replace("effect", "rate")
            # the rate interval is the effect's Wald interval mapped through a monotone function,
            # so the effect's standard error comes from a fit without the averaging
            low, high = result.intervals[rate_name]
            assert low < result.__getattribute__(rate_name) < high
            assert abs(getattr(result, name) - special.logit(value)) < 0.25, (name, getattr(result, name))
        for name in ("stay_hot", "stay_cold"):
            se = logit_se(result.intervals[name])
            assert abs(special.logit(getattr(result, name)) - special.logit(truth[name])) < N_SE * se

    def test_layout(self):
        draw = simulate_hidden_state(12, hot_rate=0.65, cold_rate=0.3, stay_hot=0.9, stay_cold=0.9, n_sequences=20,
                                     rng=9)
        made = draw.made.ravel().astype(int)
        sessions = np.array([f"g{i:02d}" for i in range(20)])
        result = fit_hot_state(made, np.arange(0, 241, 12), sessions=sessions, player="a", permutations=19, rng=10)
        assert isinstance(result, HotStateResult)
        assert result.hot_rate > result.cold_rate
        record = result.to_dict()
        assert list(record)[:7] == ["player", "hot_rate", "cold_rate", "stay_hot", "stay_cold", "p_value", "attempts"]
        assert set(record["attempts"][0]) == {"session", "seq", "made", "hot_probability"}
        assert record["attempts"][12] == {"session": "g01", "seq": 0, "made": bool(made[12]),
                                          "hot_probability": float(result.hot_probability[12])}
        assert len(record["attempts"]) == 240 and record["permutations"] == 19 and record["seed"] == 10
        assert 1 / 20 <= result.p_value <= 1
        frame = result.to_frame()
        assert list(frame.columns) == ["player", "session", "seq", "made", "hot_probability"]
        again = fit_hot_state(made, np.arange(0, 241, 12), sessions=sessions, player="a", permutations=19, rng=10)
        assert again.to_dict() == record
        assert "Caveats:" in result.summary()

    def test_bootstrap_intervals(self):
        draw = simulate_hidden_state(20, hot_rate=0.65, cold_rate=0.3, stay_hot=0.9, stay_cold=0.9, n_sequences=40,
                                     rng=11)
        result = fit_hot_state(draw.made.ravel().astype(int), np.arange(0, 801, 20), permutations=0,
                               interval="bootstrap", resamples=29, rng=12)
        assert result.interval_method == "bootstrap"
        for name in ("hot_rate", "cold_rate", "stay_hot", "stay_cold"):
            low, high = result.intervals[name]
            assert 0 <= low <= high <= 1

    def test_calibration_on_null_players(self):
        """Null players: varying difficulty and game-to-game form, no dependence inside games.

        Attempts' covariates are drawn independently, so a game's attempts are exchangeable
        and the within-game permutation test is exact for any statistic computed the same
        way on every draw: with 9 permutations P(p <= 0.1) = 1/10 under the null. A light
        fit (one start, 60 EM steps) keeps the test fast; it checks the null, not EM.
        """
        n_players, alpha = 200, 0.10
        rng = np.random.default_rng(13)
        model = DifficultyModel({"distance": -0.045, "defender_distance": 0.07},
                                {"distance": 15.0, "defender_distance": 4.0})
        games, attempts = 10, 12
        offsets = np.arange(0, games * attempts + 1, attempts)
        rejected = 0
        for i in range(n_players):
            shots = sample_shot_covariates((games, attempts), (0.25, 0.17, 0.23, 0.35), rng=rng)
            eta = (rng.normal(-0.2, 0.15) + rng.normal(0, 0.3, (games, 1))
                   + model.linear_predictor({"distance": shots.distance, "defender_distance": shots.defender_distance}))
            made = (rng.random((games, attempts)) < special.expit(eta)).astype(int).ravel()
            result = fit_hot_state(made, offsets, player=f"n{i}", permutations=9, n_starts=1, max_iter=60, rng=14)
            rejected += result.p_value <= alpha
        limit = alpha + 3 * math.sqrt(alpha * (1 - alpha) / n_players)
        assert rejected / n_players <= limit, rejected
