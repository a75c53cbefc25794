"""Tests for streakwise.analysis.power (the planner).

References and tolerances:

- size: under the null (effect 0) every test is valid at level alpha, so the
  estimated rejection rate must be at most alpha + 3 standard errors, the SE
  taken at the nominal level, sqrt(alpha (1 - alpha) / n_sim);
- the simulated alternatives must reproduce the closed-form stationary moments
  of :func:`hidden_state_moments` and :func:`markov_moments` (Feller, Vol. 1,
  ch. XV; Stone 2012) within 4 standard errors from independent batches of
  seasons;
- the stratified runs test's power under Markov dependence must match a normal
  approximation built from the Wald-Wolfowitz (1940) null moments and the
  Markov chain's exact per-game law of the runs (enumerated), within 3 Monte
  Carlo SE plus 0.02 for the approximation;
- common random numbers: the same seeds give the same seasons for every effect
  size, number of workers and number of simulations, checked exactly.
"""

from __future__ import annotations

import itertools
import json
import math

import numpy as np
import pytest
from scipy import stats

from streakwise.analysis.figures import OKABE_ITO
from streakwise.analysis.power import (
    PlanResult,
    PowerResult,
    _Seasons,
    estimate_power,
    games_needed,
    minimum_detectable_effect,
    power_curve_figure,
)
from streakwise.analysis.simulate import hidden_state_moments, markov_moments

QUICK = dict(simulations=40, permutations=100, attempts_per_game=10, games=12)


def _pooled_moments(made):
    """Make rate, P(make|make) - P(make|miss) and lag-2 autocorrelation over within-game pairs.

    ``made`` is (seasons, games, attempts); every game starts in the stationary
    chain, so every within-game pair is a draw of the stationary pair law.
    """
    x = made.astype(float)
    rate = x.mean()
    before, after = x[..., :-1], x[..., 1:]
    after_make = (before * after).sum() / before.sum()
    after_miss = ((1 - before) * after).sum() / (1 - before).sum()
    centred = x - rate
    lag2 = (centred[..., :-2] * centred[..., 2:]).mean() / (rate * (1 - rate))
    return np.array([rate, after_make - after_miss, lag2])


def _batched(made, batches=20):
    """Estimates and standard errors from independent batches of seasons."""
    parts = np.array([_pooled_moments(part) for part in np.array_split(made, batches)])
    return _pooled_moments(made), parts.std(axis=0, ddof=1) / math.sqrt(batches)


# ---------------------------------------------------------------------------
# The simulated seasons
# ---------------------------------------------------------------------------


class TestSimulatedSeasons:
    def test_markov_against_markov_moments(self):
        seasons = _Seasons("markov", 0.45, None, 20, 400, seed=5)
        made, lengths = seasons.made(0.3, 40)
        assert made.shape == (400, 40, 20) and (lengths == 20).all()
        estimate, se = _batched(made)
        # Feller, Vol. 1, ch. XV: stationary rate, rate difference, lag-2 autocorrelation d**2
        m = markov_moments(0.45 + 0.3 * 0.55, 0.45 * 0.7)
        reference = np.array([m.make_rate, m.rate_difference, m.autocorrelation(2)])
        assert m.make_rate == pytest.approx(0.45)
        np.testing.assert_array_less(np.abs(estimate - reference), 4 * se)

    def test_hidden_state_against_hidden_state_moments(self):
        seasons = _Seasons("hidden", 0.45, 0.9, 20, 400, seed=6)
        made, _ = seasons.made(0.4, 40)
        estimate, se = _batched(made)
        # closed-form stationary moments (Stone 2012: outcome dependence = state dependence diluted)
        m = hidden_state_moments(0.65, 0.25, 0.9, 0.9)
        reference = np.array([m.make_rate, m.rate_difference, m.autocorrelation(2)])
        np.testing.assert_array_less(np.abs(estimate - reference), 4 * se)

    @pytest.mark.parametrize("model, persistence", [("hidden", 0.9), ("markov", None)])
    def test_null_is_independent_attempts(self, model, persistence):
        made, _ = _Seasons(model, 0.45, persistence, 15, 300, seed=7).made(0.0, 40)
        estimate, se = _batched(made)
        np.testing.assert_array_less(np.abs(estimate - [0.45, 0.0, 0.0]), 4 * se)

    def test_common_random_numbers_are_monotone_couplings(self):
        seasons = _Seasons("hidden", 0.5, 0.8, 12, 60, seed=8)
        low, _ = seasons.made(0.1, 20)
        high, _ = seasons.made(0.3, 20)
        hot = np.concatenate([b[1] for b in seasons.blocks], axis=1)[:, :20]
        # a larger boost only adds makes in hot states and removes them in cold ones
        assert not (low & ~high & hot).any()
        assert not (high & ~low & ~hot).any()
        # markov: a larger effect copies the previous outcome more often
        seasons = _Seasons("markov", 0.5, None, 12, 60, seed=8)
        a, _ = seasons.made(0.0, 20)
        b, _ = seasons.made(0.5, 20)
        switches = lambda m: (m[..., 1:] != m[..., :-1]).sum()  # noqa: E731
        assert switches(b) < switches(a)
        assert (a[..., 0] == b[..., 0]).all()  # the first attempt of a game is always fresh

    def test_seasons_do_not_depend_on_how_many_are_simulated(self):
        small, _ = _Seasons("hidden", 0.45, 0.9, 10, 30, seed=9).made(0.2, 25)
        large, _ = _Seasons("hidden", 0.45, 0.9, 10, 130, seed=9).made(0.2, 45)
        np.testing.assert_array_equal(small, large[:30, :25])

    def test_game_lengths(self):
        seasons = _Seasons("markov", 0.45, None, (8, 12, 20), 50, seed=1)
        made, lengths = seasons.made(0.1, 30)
        assert set(np.unique(lengths)) == {8, 12, 20}
        x, offsets = seasons.season(made, lengths, 3)
        np.testing.assert_array_equal(np.diff(offsets), lengths[3])
        assert x.size == lengths[3].sum()
        poisson = _Seasons("markov", 0.45, None, {"mean": 15.0, "low": 10, "high": 22}, 50, seed=1)
        _, lengths = poisson.made(0.1, 40)
        assert lengths.min() >= 10 and lengths.max() <= 22
        assert abs(lengths.mean() - 15.0) < 4 * lengths.std() / math.sqrt(lengths.size)

    def test_persistence_one_keeps_the_state_all_game(self):
        seasons = _Seasons("hidden", 0.5, 1.0, 10, 50, seed=2)
        seasons.grow(20)
        hot = seasons.blocks[0][1]
        assert ((hot == hot[..., :1]).all())
        assert 0.3 < hot[..., 0].mean() < 0.7


# ---------------------------------------------------------------------------
# estimate_power
# ---------------------------------------------------------------------------


class TestEstimatePower:
    @pytest.mark.parametrize("kwargs, message", [
        (dict(model="hmm"), "`model` must be one of 'hidden', 'markov'"),
        (dict(effects=1.0), r"`effects` must be in \[0, 1\)"),
        (dict(effects=-0.1), r"`effects` must be in \[0, 1\)"),
        (dict(effects=[]), "`effects` must not be empty"),
        (dict(effects=0.7, rate=0.3), "the largest boost is 0.6"),
        (dict(persistence=1.5), r"`persistence` must be in \[0, 1\]"),
        (dict(model="markov", persistence=0.9), "goes with model='hidden'"),
        (dict(rate=0.0), r"`rate` must be in \(0, 1\)"),
        (dict(games=0), "`games` must be an integer >= 1"),
        (dict(attempts_per_game=0), "`attempts_per_game` must be an integer >= 1"),
        (dict(attempts_per_game={"mean": 30, "low": 10, "high": 20}), "`mean` must be strictly between"),
        (dict(attempts_per_game="15"), "`attempts_per_game` must be an integer, a list"),
        (dict(simulations=0), "`simulations` must be an integer >= 1"),
        (dict(alpha=1.0), "`alpha` must be strictly between 0 and 1"),
        (dict(alternative="cold"), "`alternative` must be one of 'hot', 'two-sided'"),
        (dict(seed=-1), "`seed` must be None or a non-negative integer"),
        (dict(workers=0), "`workers` must be an integer >= 1"),
        (dict(progress=3), "`progress` must be callable"),
    ])
    def test_input_validation(self, kwargs, message):
        with pytest.raises(ValueError, match=message):
            estimate_power(**{**QUICK, **kwargs})

    @pytest.mark.parametrize("model, persistence", [("hidden", 0.9), ("markov", None)])
    def test_size_under_the_null(self, model, persistence):
        n, alpha = 300, 0.05
        res = estimate_power(model, 0.0, persistence=persistence, attempts_per_game=15, games=20,
                             simulations=n, permutations=200, alpha=alpha, seed=31)
        bound = alpha + 3 * math.sqrt(alpha * (1 - alpha) / n)
        assert res.power.shape == (1, 1, 5)
        np.testing.assert_array_less(res.power[0, 0], bound)
        assert (res.share_defined[0, 0, [0, 3, 4]] == 1).all()

    def test_monotone_in_effect_with_common_random_numbers(self):
        res = estimate_power("hidden", [0.0, 0.15, 0.3, 0.45, 0.6], persistence=0.9, rate=0.5,
                             attempts_per_game=15, games=30, simulations=150, permutations=200,
                             seed=4, max_k=2)
        power, se = res.power[:, 0, :], res.power_se[:, 0, :]
        for t in range(3):  # D_1, D_2, runs
            drops = power[:-1, t] - power[1:, t]
            assert (drops <= 2 * np.maximum(se[1:, t], 1 / res.simulations)).all(), res.tests[t]
            assert power[-1, t] > power[0, t] + 0.3
        np.testing.assert_allclose(res.rate_differences,
                                   hidden_state_moments(0.5 + np.array(res.effects) / 2,
                                                        0.5 - np.array(res.effects) / 2, 0.9, 0.9
                                                        ).rate_difference)

    def test_against_normal_approximation_of_the_runs_test(self):
        # Wald & Wolfowitz (1940) null moments per game, E0 = 1 + 2 n1 n0 / L and
        # V0 = 2 n1 n0 (2 n1 n0 - L) / (L^2 (L - 1)), against the runs a stationary
        # Markov chain makes (its law per game enumerated over all 2^L sequences);
        # over G independent games T = sum(R - E0) is approximately normal, and
        # the normal-method runs test (over 1000 attempts) rejects when
        # T <= z_alpha sqrt(sum V0).
        rate, length, games, alpha = 0.5, 10, 150, 0.05

        def approximate_power(d):
            p1, p0 = rate + d * (1 - rate), rate * (1 - d)
            x = np.array(list(itertools.product([0, 1], repeat=length)))
            prob = np.where(x[:, 0] == 1, rate, 1 - rate)
            for t in range(1, length):
                p = np.where(x[:, t - 1] == 1, p1, p0)
                prob = prob * np.where(x[:, t] == 1, p, 1 - p)
            n1 = x.sum(axis=1)
            n0 = length - n1
            runs = 1 + (x[:, 1:] != x[:, :-1]).sum(axis=1)
            e0 = 1 + 2 * n1 * n0 / length
            v0 = 2 * n1 * n0 * (2 * n1 * n0 - length) / (length**2 * (length - 1))
            mean = prob @ (runs - e0)
            variance = prob @ (runs - e0 - mean) ** 2
            z = stats.norm.ppf(alpha)
            return stats.norm.cdf((z * math.sqrt(games * (prob @ v0)) - games * mean)
                                  / math.sqrt(games * variance))

        effects = [0.05, 0.08]
        n = 400
        res = estimate_power("markov", effects, rate=rate, attempts_per_game=length, games=games,
                             simulations=n, permutations=50, alpha=alpha, max_k=1, seed=21)
        runs = res.tests.index("runs")
        for i, d in enumerate(effects):
            expected = approximate_power(d)
            assert 0.4 < expected < 0.9  # informative points, not 0 or 1
            se = math.sqrt(expected * (1 - expected) / n)
            assert abs(res.power[i, 0, runs] - expected) < 3 * se + 0.02

    def test_huge_effect_is_found(self):
        res = estimate_power("markov", 0.6, attempts_per_game=15, games=30, simulations=60,
                             permutations=200, seed=12)
        assert res.power_at(0.6, test="D_1")[0] == 1.0
        assert res.power_at(0.6, test="runs")[0] == 1.0

    def test_identical_serial_and_on_two_workers(self):
        settings = dict(model="hidden", effects=[0.0, 0.3], persistence=0.85, attempts_per_game=[8, 12, 20],
                        games=15, simulations=50, permutations=150, seed=77)
        serial = estimate_power(**settings, workers=1)
        pooled = estimate_power(**settings, workers=2)
        np.testing.assert_array_equal(serial.p_values, pooled.p_values)
        np.testing.assert_array_equal(serial.corrected, pooled.corrected)

    def test_more_simulations_extend_the_same_seasons(self):
        few = estimate_power("markov", [0.1, 0.2], **{**QUICK, "simulations": 30}, seed=5)
        many = estimate_power("markov", [0.2, 0.1], **{**QUICK, "simulations": 70}, seed=5)
        np.testing.assert_array_equal(few.p_values, many.p_values[:, :, :30])
        assert few.effects == (0.1, 0.2)

    def test_progress(self):
        calls = []
        estimate_power("markov", [0.0, 0.1], **QUICK, seed=1, progress=lambda d, n: calls.append((d, n)))
        assert calls[0] == (0, 80) and calls[-1] == (80, 80)
        assert [d for d, _ in calls] == sorted(d for d, _ in calls)

    def test_views(self):
        res = estimate_power("hidden", [0.0, 0.2], **{**QUICK, "games": [6, 12]}, seed=3)
        assert isinstance(res, PowerResult)
        frame = res.to_frame()
        assert len(frame) == 2 * 2 * 5
        assert {"effect", "rate_difference", "games", "attempts", "test", "power", "power_se",
                "share_defined", "mean_corrected", "seed"} <= set(frame.columns)
        row = frame[(frame.effect == 0.2) & (frame.games == 12) & (frame.test == "D_1")].iloc[0]
        power, se = res.power_at(0.2, 12, "D_1")
        assert row.power == power and row.power_se == pytest.approx(math.sqrt(power * (1 - power) / 40))
        assert row.attempts == 120
        payload = json.loads(json.dumps(res.to_dict()))
        assert {"model", "rate", "persistence", "attempts_per_game", "alpha", "simulations",
                "permutations", "seed", "tests", "rows", "caveats"} <= set(payload)
        text = res.summary()
        assert "Caveats:" in text and "1-3 percentage points" in text and "assumed model" in text
        assert "seed 3" in text
        with pytest.raises(KeyError, match="was not evaluated"):
            res.power_at(0.5, 12)


# ---------------------------------------------------------------------------
# Searches
# ---------------------------------------------------------------------------


class TestMinimumDetectableEffect:
    def test_brackets_the_target_crossing(self):
        settings = dict(attempts_per_game=12, simulations=120, permutations=150, seed=17)
        plan = minimum_detectable_effect("markov", games=25, high=0.4, resolution=0.02,
                                         tests=["D_1", "runs"], **settings)
        assert isinstance(plan, PlanResult)
        for answer in plan.answers:
            assert answer.found
            assert answer.power_low < 0.8 <= answer.power_high
            assert answer.high - answer.low == pytest.approx(0.02)
            assert answer.low <= answer.estimate <= answer.high
        # an independent run at the bracket's ends sees the same seasons (common random numbers)
        d1 = plan.answer("D_1")
        check = estimate_power("markov", [d1.low, d1.high], games=25, **settings)
        assert check.power_at(d1.low, test="D_1")[0] == d1.power_low
        assert check.power_at(d1.high, test="D_1")[0] == d1.power_high
        assert len(plan.evaluations.effects) <= 2 + 2 * math.ceil(math.log2(20))
        frame = plan.to_frame()
        assert list(frame["test"]) == ["D_1", "runs"] and frame["found"].all()

    def test_bounds(self):
        plan = minimum_detectable_effect("markov", games=5, high=0.1, resolution=0.05, tests=["D_2"],
                                         attempts_per_game=10, simulations=40, permutations=100,
                                         seed=2)
        answer = plan.answer("D_2")
        assert not answer.found and answer.high is None and "raise the bound" in answer.reason
        plan = minimum_detectable_effect("markov", games=30, low=0.5, high=0.6, resolution=0.1,
                                         tests=["D_1"], attempts_per_game=15, simulations=40,
                                         permutations=100, seed=2)
        answer = plan.answer("D_1")
        assert not answer.found and answer.low is None and "lower bound" in answer.reason
        assert "Caveats:" in plan.summary()

    @pytest.mark.parametrize("kwargs, message", [
        (dict(low=0.3, high=0.2), "`high` must be above `low`"),
        (dict(resolution=0.0), r"`resolution` must be in \(0, high - low\]"),
        (dict(target_power=1.0), "`target_power` must be strictly between 0 and 1"),
        (dict(tests=["D_9"]), "`tests` must be one of"),
        (dict(high=0.95), "the largest boost is 0.9"),
    ])
    def test_input_validation(self, kwargs, message):
        with pytest.raises(ValueError, match=message):
            minimum_detectable_effect("hidden", **{**QUICK, **kwargs})


class TestGamesNeeded:
    def test_brackets_the_target_crossing(self):
        settings = dict(attempts_per_game=10, simulations=100, permutations=150, seed=23)
        plan = games_needed("markov", 0.25, tests=["D_1"], max_games=120, tolerance=0.1, **settings)
        answer = plan.answer("D_1")
        assert answer.found and answer.power_low < 0.8 <= answer.power_high
        assert answer.high - answer.low <= max(1, math.floor(0.1 * answer.high))
        assert answer.attempts_high == 10 * answer.high
        check = estimate_power("markov", 0.25, games=[answer.low, answer.high], **settings)
        assert check.power_at(0.25, answer.low, "D_1")[0] == answer.power_low
        assert check.power_at(0.25, answer.high, "D_1")[0] == answer.power_high
        payload = json.loads(json.dumps(plan.to_dict()))
        assert payload["find"] == "games" and payload["answers"][0]["test"] == "D_1"

    @pytest.mark.parametrize("kwargs, message", [
        (dict(max_games=1), "`max_games` must be an integer >= 2"),
        (dict(tolerance=1.0), r"`tolerance` must be in \[0, 1\)"),
        (dict(effect=1.0), r"`effect` must be in \[0, 1\)"),
    ])
    def test_input_validation(self, kwargs, message):
        settings = {**QUICK, **kwargs}
        settings.pop("games")
        with pytest.raises(ValueError, match=message):
            games_needed("markov", **settings)


# ---------------------------------------------------------------------------
# Figures
# ---------------------------------------------------------------------------


class TestPowerCurveFigure:
    def test_curves(self):
        res = estimate_power("markov", [0.0, 0.2], **{**QUICK, "games": [6, 12]}, seed=3)
        fig = power_curve_figure(res, tests=["D_1", "runs"])
        assert [t.name for t in fig.data] == ["D_1, 6 games", "D_1, 12 games", "runs, 6 games",
                                              "runs, 12 games"]
        assert fig.data[0].line.color == OKABE_ITO["blue"] and fig.data[2].line.color == OKABE_ITO["orange"]
        np.testing.assert_allclose(fig.data[1].error_y.array, 1.96 * res.power_se[:, 1, 0])
        by_attempts = power_curve_figure(res, against="attempts", target_power=0.8)
        assert len(by_attempts.data) == 10
        np.testing.assert_allclose(by_attempts.data[0].x, res.attempts)
        assert len(by_attempts.layout.shapes) == 2  # alpha and the target

    def test_plan_and_validation(self):
        plan = minimum_detectable_effect("markov", tests=["D_1"], high=0.3, resolution=0.1, **QUICK, seed=1)
        fig = power_curve_figure(plan)
        assert len(fig.data) == 5 and len(fig.layout.shapes) == 2
        with pytest.raises(ValueError, match="must be a PowerResult or PlanResult"):
            power_curve_figure("power")
        with pytest.raises(ValueError, match="`against` must be one of"):
            power_curve_figure(plan, against="games")
