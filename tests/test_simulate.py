"""Tests for streakwise.analysis.simulate.

Two kinds of reference:

- exact: the closed-form moments are checked against brute-force enumeration of
  every outcome sequence (and every hidden state path) of a 4-attempt chain, with
  the stationary distribution found by solving pi T = pi numerically, to 1e-12;
- Monte Carlo: simulated long-run rates and conditional rates must agree with the
  closed forms within 4 Monte Carlo standard errors. Each standard error is
  estimated from quantities that are independent by construction (one value per
  independent sequence, or per independent batch of sequences), or, where noted,
  from the binomial formula for counts of independent draws.
"""

import itertools

import numpy as np
import pandas as pd
import pytest

from streakwise.analysis.simulate import (
    HiddenStateDraw,
    HiddenStateMoments,
    MarkovDraw,
    MarkovMoments,
    hidden_state_moments,
    make_probability,
    markov_moments,
    simulate_bernoulli,
    simulate_hidden_state,
    simulate_markov,
    simulate_session_lengths,
)
from streakwise.analysis.simulate import _truncated_poisson_pmf

N_SE = 4  # agreement required, in Monte Carlo standard errors


# ---------------------------------------------------------------------------
# Reference helpers (independent of the module's code)
# ---------------------------------------------------------------------------


def _stationary(transition):
    """Stationary row vector of a 2x2 transition matrix, by solving pi T = pi."""
    k = transition.shape[0]
    system = np.vstack([transition.T - np.eye(k), np.ones(k)])
    target = np.r_[np.zeros(k), 1.0]
    pi, *_ = np.linalg.lstsq(system, target, rcond=None)
    return pi


def _enumerate_hidden_state(hot_rate, cold_rate, stay_hot, stay_cold, n):
    """Exact joint law of (outcomes, states) for n attempts of the stationary chain.

    Returns the outcome patterns X (2**n, n), state patterns S (2**n, n; 1 = hot)
    and joint[i, j] = P(X = X[i], S = S[j]).
    """
    # index 0 = hot, 1 = cold
    transition = np.array([[stay_hot, 1 - stay_hot], [1 - stay_cold, stay_cold]])
    pi = _stationary(transition)
    rates = np.array([hot_rate, cold_rate])
    patterns = np.array(list(itertools.product([0, 1], repeat=n)))
    joint = np.zeros((len(patterns), len(patterns)))
    for j, hot_path in enumerate(patterns):
        index = 1 - hot_path  # 0 = hot
        p_states = pi[index[0]]
        for t in range(1, n):
            p_states *= transition[index[t - 1], index[t]]
        r = rates[index]
        for i, x in enumerate(patterns):
            joint[i, j] = p_states * np.prod(np.where(x == 1, r, 1 - r))
    return patterns, patterns, joint


def _enumerate_markov(rate_after_make, rate_after_miss, n):
    """Exact law of the outcome patterns of n attempts of the stationary chain."""
    # index 0 = make, 1 = miss
    transition = np.array(
        [[rate_after_make, 1 - rate_after_make], [rate_after_miss, 1 - rate_after_miss]]
    )
    pi = _stationary(transition)
    patterns = np.array(list(itertools.product([0, 1], repeat=n)))
    prob = np.empty(len(patterns))
    for i, x in enumerate(patterns):
        index = 1 - x
        p = pi[index[0]]
        for t in range(1, n):
            p *= transition[index[t - 1], index[t]]
        prob[i] = p
    return patterns, prob


def _outcome_summaries(patterns, prob, n):
    """Exact E[X_t], P(make | make), P(make | miss) and lag-k correlations."""
    x = patterns
    mean = np.array([prob @ x[:, t] for t in range(n)])
    after_make = []
    after_miss = []
    for t in range(n - 1):
        after_make.append(prob @ (x[:, t] * x[:, t + 1]) / (prob @ x[:, t]))
        after_miss.append(prob @ ((1 - x[:, t]) * x[:, t + 1]) / (prob @ (1 - x[:, t])))
    corr = {}
    for lag in range(1, n):
        values = []
        for t in range(n - lag):
            cov = prob @ (x[:, t] * x[:, t + lag]) - mean[t] * mean[t + lag]
            values.append(cov / np.sqrt(mean[t] * (1 - mean[t]) * mean[t + lag] * (1 - mean[t + lag])))
        corr[lag] = np.array(values)
    return mean, np.array(after_make), np.array(after_miss), corr


def _per_sequence_mean_and_se(values):
    """Mean over all attempts, with its SE from the spread of per-sequence means.

    Sequences are drawn independently, so their means are i.i.d.; attempts inside
    a sequence are correlated, so the spread across sequences (not a binomial
    formula over attempts) gives the standard error.
    """
    per_sequence = values.mean(axis=1)
    return per_sequence.mean(), per_sequence.std(ddof=1) / np.sqrt(len(per_sequence))


def _difference_by_batch(made, n_batches):
    """P(make | make) - P(make | miss), estimated per independent batch of sequences.

    Returns the mean of the batch estimates and its SE (batch spread / sqrt(B)).
    Each batch estimate is a ratio of sums with O(1 / transitions) bias; with
    thousands of transitions per batch that bias is about two orders of magnitude
    below the standard error.
    """
    n_sequences, n_attempts = made.shape
    batches = made.reshape(n_batches, n_sequences // n_batches, n_attempts)
    prev, nxt = batches[:, :, :-1], batches[:, :, 1:]
    after_make = (prev & nxt).sum(axis=(1, 2)) / prev.sum(axis=(1, 2))
    after_miss = (~prev & nxt).sum(axis=(1, 2)) / (~prev).sum(axis=(1, 2))
    difference = after_make - after_miss
    return difference.mean(), difference.std(ddof=1) / np.sqrt(n_batches)


def _pattern_frequencies(values):
    """Counts of each 0/1 row pattern, ordered as itertools.product([0, 1])."""
    n = values.shape[1]
    codes = values.astype(np.int64) @ (2 ** np.arange(n - 1, -1, -1))
    return np.bincount(codes, minlength=2**n)


HIDDEN_CASES = [
    # hot_rate, cold_rate, stay_hot, stay_cold
    (0.7, 0.3, 0.9, 0.8),
    (0.2, 0.9, 0.3, 0.6),  # "hot" worse than "cold", anti-persistent states
    (0.55, 0.45, 1.0, 0.5),  # hot is absorbing: stationary chain always hot
    (0.6, 0.6, 0.7, 0.7),  # equal rates: no dependence
    (1.0, 0.0, 0.95, 0.85),  # outcomes reveal the state
    (0.5, 0.1, 0.0, 0.0),  # states alternate
    (0.48, 0.41, 0.97, 0.93),
]

MARKOV_CASES = [
    # rate_after_make, rate_after_miss
    (0.6, 0.4),
    (0.3, 0.7),
    (0.0, 1.0),  # outcomes alternate
    (0.5, 0.5),  # independent
    (0.93, 0.12),
]


# ---------------------------------------------------------------------------
# simulate_hidden_state
# ---------------------------------------------------------------------------


class TestSimulateHiddenState:
    params = dict(hot_rate=0.7, cold_rate=0.3, stay_hot=0.9, stay_cold=0.8)

    @pytest.mark.parametrize(
        "kwargs, match",
        [
            (dict(stay_hot=1.2), r"`stay_hot` must be in \[0, 1\] \(got 1.2\)"),
            (dict(stay_cold=-0.1), r"`stay_cold` must be in \[0, 1\] \(got -0.1\)"),
            (dict(hot_rate=np.nan), r"`hot_rate` must be in \[0, 1\] \(got nan\)"),
            (dict(cold_rate="0.3"), r"`cold_rate` must be a number in \[0, 1\]"),
            (dict(n_sequences=-1), r"`n_sequences` must be an integer >= 0 \(got -1\)"),
            (dict(n_sequences=2.5), r"`n_sequences` must be an integer >= 0 \(got 2.5\)"),
            (dict(start="warm"), r"`start` must be one of 'stationary', 'hot', 'cold' \(got 'warm'\)"),
            (dict(stay_hot=1.0, stay_cold=1.0), r"stationary start is undefined"),
            (dict(logit_offset=np.zeros(3)), r"`logit_offset` must broadcast to"),
            (dict(logit_offset=np.inf), r"`logit_offset` must be finite \(got inf\)"),
            (dict(logit_offset="a"), r"`logit_offset` must be real numbers"),
        ],
    )
    def test_input_validation(self, kwargs, match):
        arguments = dict(self.params, n_sequences=4) | kwargs
        with pytest.raises(ValueError, match=match):
            simulate_hidden_state(10, **arguments)

    @pytest.mark.parametrize("n_attempts", [-1, 1.5, True])
    def test_n_attempts_validation(self, n_attempts):
        with pytest.raises(ValueError, match=r"`n_attempts` must be an integer >= 0"):
            simulate_hidden_state(n_attempts, **self.params)

    def test_shapes_and_dtypes(self):
        draw = simulate_hidden_state(12, n_sequences=5, rng=1, **self.params)
        assert isinstance(draw, HiddenStateDraw)
        assert draw.made.shape == draw.hot.shape == draw.probability.shape == (5, 12)
        assert draw.made.dtype == bool and draw.hot.dtype == bool
        assert draw.probability.dtype == np.float64
        np.testing.assert_array_equal(draw.probability, np.where(draw.hot, 0.7, 0.3))
        with pytest.raises(AttributeError):
            draw.made = None  # frozen

    @pytest.mark.parametrize("shape", [(0, 5), (3, 0), (0, 0)])
    def test_empty(self, shape):
        draw = simulate_hidden_state(shape[1], n_sequences=shape[0], rng=0, **self.params)
        assert draw.made.shape == draw.hot.shape == draw.probability.shape == shape

    def test_reproducible(self):
        first = simulate_hidden_state(30, n_sequences=50, rng=42, **self.params)
        again = simulate_hidden_state(30, n_sequences=50, rng=42, **self.params)
        other = simulate_hidden_state(30, n_sequences=50, rng=43, **self.params)
        for name in ("made", "hot", "probability"):
            np.testing.assert_array_equal(getattr(first, name), getattr(again, name))
        assert not np.array_equal(first.made, other.made)
        assert not np.array_equal(first.hot, other.hot)
        # a Generator is used as given: two calls continue one stream
        generator = np.random.default_rng(42)
        from_generator = simulate_hidden_state(30, n_sequences=50, rng=generator, **self.params)
        np.testing.assert_array_equal(from_generator.made, first.made)
        next_draw = simulate_hidden_state(30, n_sequences=50, rng=generator, **self.params)
        assert not np.array_equal(next_draw.made, first.made)

    def test_deterministic_paths(self):
        # stay probability 0: the state alternates every attempt
        draw = simulate_hidden_state(
            7, hot_rate=1.0, cold_rate=0.0, stay_hot=0.0, stay_cold=0.0,
            n_sequences=3, start="hot", rng=0,
        )
        expected = np.tile([True, False, True, False, True, False, True], (3, 1))
        np.testing.assert_array_equal(draw.hot, expected)
        np.testing.assert_array_equal(draw.made, expected)
        # stay probability 1: the start state never changes (any start is legal)
        draw = simulate_hidden_state(
            9, hot_rate=0.5, cold_rate=0.5, stay_hot=1.0, stay_cold=1.0,
            n_sequences=4, start="cold", rng=0,
        )
        assert not draw.hot.any()

    def test_start_state_decay(self):
        # P(hot at t | hot at 0) = pi + (1 - pi) * lambda**t. At a fixed t the
        # indicators of independent sequences are i.i.d. Bernoulli, so the
        # binomial formula gives the standard error of their mean exactly.
        n = 40_000
        draw = simulate_hidden_state(12, n_sequences=n, start="hot", rng=11, **self.params)
        assert draw.hot[:, 0].all()
        m = hidden_state_moments(**self.params)
        for t in (1, 3, 11):
            expected = m.hot_share + (1 - m.hot_share) * m.persistence**t
            se = np.sqrt(expected * (1 - expected) / n)
            assert abs(draw.hot[:, t].mean() - expected) < N_SE * se
        cold = simulate_hidden_state(3, n_sequences=10, start="cold", rng=1, **self.params)
        assert not cold.hot[:, 0].any()

    def test_long_run_matches_closed_forms(self):
        n_sequences, n_attempts = 20_000, 20
        draw = simulate_hidden_state(n_attempts, n_sequences=n_sequences, rng=2024, **self.params)
        m = hidden_state_moments(**self.params)

        rate, rate_se = _per_sequence_mean_and_se(draw.made)
        assert abs(rate - m.make_rate) < N_SE * rate_se

        share, share_se = _per_sequence_mean_and_se(draw.hot)
        assert abs(share - m.hot_share) < N_SE * share_se

        difference, difference_se = _difference_by_batch(draw.made, n_batches=40)
        assert abs(difference - m.rate_difference) < N_SE * difference_se
        # the check has power: the effect is many standard errors from zero
        assert m.rate_difference > 10 * difference_se

    def test_joint_law_matches_enumeration(self):
        # Every 4-attempt outcome pattern (and state pattern) of independent
        # sequences is counted; each count is Binomial(n, q) with q the exact
        # enumerated probability, so its SE is sqrt(q (1 - q) / n).
        n = 200_000
        h, c, a, b = HIDDEN_CASES[1]
        draw = simulate_hidden_state(
            4, hot_rate=h, cold_rate=c, stay_hot=a, stay_cold=b, n_sequences=n, rng=5
        )
        outcome_patterns, state_patterns, joint = _enumerate_hidden_state(h, c, a, b, 4)
        for observed, exact in (
            (_pattern_frequencies(draw.made) / n, joint.sum(axis=1)),
            (_pattern_frequencies(draw.hot) / n, joint.sum(axis=0)),
        ):
            se = np.sqrt(exact * (1 - exact) / n)
            assert np.all(np.abs(observed - exact) < N_SE * se)

    def test_logit_offset(self):
        n_sequences, n_attempts = 4_000, 15
        offset = np.linspace(-1.5, 1.5, n_attempts)  # broadcasts over sequences
        draw = simulate_hidden_state(
            n_attempts, n_sequences=n_sequences, rng=9, logit_offset=offset, **self.params
        )
        rate = np.where(draw.hot, 0.7, 0.3)
        expected = 1 / (1 + np.exp(-(np.log(rate / (1 - rate)) + offset)))
        np.testing.assert_allclose(draw.probability, expected, rtol=1e-12)
        # Given the probabilities the makes are independent Bernoulli draws, so
        # the SE of mean(made - probability) is sqrt(sum p (1 - p)) / N.
        p = draw.probability
        se = np.sqrt((p * (1 - p)).sum()) / p.size
        assert abs((draw.made - p).mean()) < N_SE * se

    def test_logit_offset_per_sequence_and_extreme_rates(self):
        skill = np.array([[-20.0], [0.0], [20.0]])
        draw = simulate_hidden_state(
            6, hot_rate=1.0, cold_rate=0.0, stay_hot=0.5, stay_cold=0.5,
            n_sequences=3, rng=3, logit_offset=skill,
        )
        # rates of exactly 0 and 1 stay 0 and 1 whatever the offset
        np.testing.assert_array_equal(draw.probability, draw.hot.astype(float))
        np.testing.assert_array_equal(draw.made, draw.hot)

    def test_to_frame(self):
        draw = simulate_hidden_state(3, n_sequences=2, rng=0, **self.params)
        frame = draw.to_frame()
        assert list(frame.columns) == ["sequence", "seq", "made", "hot", "probability"]
        assert len(frame) == 6
        assert frame["seq"].tolist() == [0, 1, 2, 0, 1, 2]
        np.testing.assert_array_equal(frame["made"].to_numpy(), draw.made.ravel())


# ---------------------------------------------------------------------------
# simulate_markov
# ---------------------------------------------------------------------------


class TestSimulateMarkov:
    params = dict(rate_after_make=0.6, rate_after_miss=0.45)

    @pytest.mark.parametrize(
        "kwargs, match",
        [
            (dict(rate_after_make=1.5), r"`rate_after_make` must be in \[0, 1\] \(got 1.5\)"),
            (dict(rate_after_miss=-0.2), r"`rate_after_miss` must be in \[0, 1\] \(got -0.2\)"),
            (dict(first_rate=2), r"`first_rate` must be in \[0, 1\] \(got 2\)"),
            (dict(n_sequences=-3), r"`n_sequences` must be an integer >= 0 \(got -3\)"),
            (
                dict(rate_after_make=1.0, rate_after_miss=0.0),
                r"stationary make rate is undefined .* give `first_rate`",
            ),
        ],
    )
    def test_input_validation(self, kwargs, match):
        with pytest.raises(ValueError, match=match):
            simulate_markov(10, **(self.params | kwargs))

    def test_n_attempts_validation(self):
        with pytest.raises(ValueError, match=r"`n_attempts` must be an integer >= 0 \(got -1\)"):
            simulate_markov(-1, **self.params)

    def test_shapes_dtypes_and_probabilities(self):
        draw = simulate_markov(10, n_sequences=6, first_rate=0.25, rng=0, **self.params)
        assert isinstance(draw, MarkovDraw)
        assert draw.made.shape == draw.probability.shape == (6, 10)
        assert draw.made.dtype == bool and draw.probability.dtype == np.float64
        np.testing.assert_array_equal(draw.probability[:, 0], 0.25)
        np.testing.assert_array_equal(
            draw.probability[:, 1:], np.where(draw.made[:, :-1], 0.6, 0.45)
        )
        assert simulate_markov(0, n_sequences=3, rng=0, **self.params).made.shape == (3, 0)

    def test_reproducible(self):
        first = simulate_markov(25, n_sequences=40, rng=7, **self.params)
        again = simulate_markov(25, n_sequences=40, rng=7, **self.params)
        other = simulate_markov(25, n_sequences=40, rng=8, **self.params)
        np.testing.assert_array_equal(first.made, again.made)
        np.testing.assert_array_equal(first.probability, again.probability)
        assert not np.array_equal(first.made, other.made)

    def test_deterministic_chains(self):
        # made forever after a make, with the first attempt certain
        draw = simulate_markov(
            8, rate_after_make=1.0, rate_after_miss=0.0, first_rate=1.0, n_sequences=3, rng=0
        )
        assert draw.made.all()
        # outcomes alternate
        draw = simulate_markov(
            5, rate_after_make=0.0, rate_after_miss=1.0, first_rate=0.0, n_sequences=2, rng=0
        )
        np.testing.assert_array_equal(draw.made, np.tile([False, True, False, True, False], (2, 1)))

    def test_long_run_matches_closed_forms(self):
        n_sequences, n_attempts = 20_000, 20
        draw = simulate_markov(n_attempts, n_sequences=n_sequences, rng=99, **self.params)
        m = markov_moments(**self.params)
        rate, rate_se = _per_sequence_mean_and_se(draw.made)
        assert abs(rate - m.make_rate) < N_SE * rate_se
        difference, difference_se = _difference_by_batch(draw.made, n_batches=40)
        assert abs(difference - m.rate_difference) < N_SE * difference_se
        assert m.rate_difference > 10 * difference_se

    def test_first_rate_decay(self):
        # P(make at t) = mu + (first - mu) (p1 - p0)**t; at a fixed t the outcomes
        # of independent sequences are i.i.d. Bernoulli (binomial SE is exact).
        n = 40_000
        draw = simulate_markov(6, n_sequences=n, first_rate=0.1, rng=4, **self.params)
        mu = markov_moments(**self.params).make_rate
        for t in range(6):
            expected = mu + (0.1 - mu) * 0.15**t
            se = np.sqrt(expected * (1 - expected) / n)
            assert abs(draw.made[:, t].mean() - expected) < N_SE * se

    def test_joint_law_matches_enumeration(self):
        # pattern counts of independent sequences are Binomial(n, q): exact SE
        n = 200_000
        p1, p0 = MARKOV_CASES[4]
        draw = simulate_markov(4, rate_after_make=p1, rate_after_miss=p0, n_sequences=n, rng=6)
        _, exact = _enumerate_markov(p1, p0, 4)
        observed = _pattern_frequencies(draw.made) / n
        se = np.sqrt(exact * (1 - exact) / n)
        assert np.all(np.abs(observed - exact) < N_SE * se)

    def test_to_frame(self):
        frame = simulate_markov(4, n_sequences=3, rng=0, **self.params).to_frame()
        assert list(frame.columns) == ["sequence", "seq", "made", "probability"]
        assert len(frame) == 12


# ---------------------------------------------------------------------------
# simulate_bernoulli
# ---------------------------------------------------------------------------


class TestSimulateBernoulli:
    @pytest.mark.parametrize(
        "probability, match",
        [
            (1.5, r"`probability` must be in \[0, 1\] \(got 1.5\)"),
            ([0.2, -0.1], r"`probability` must be in \[0, 1\] \(got -0.1\)"),
            ([0.2, np.nan], r"`probability` must be in \[0, 1\] \(got nan\)"),
            ("high", r"`probability` must be numbers in \[0, 1\]"),
        ],
    )
    def test_input_validation(self, probability, match):
        with pytest.raises(ValueError, match=match):
            simulate_bernoulli(probability)

    def test_shapes_and_dtypes(self):
        p = np.full((4, 3, 5), 0.5)
        made = simulate_bernoulli(p, rng=0)
        assert made.shape == (4, 3, 5) and made.dtype == bool
        assert simulate_bernoulli(0.5, rng=0).shape == ()
        assert simulate_bernoulli([], rng=0).shape == (0,)

    def test_certain_outcomes(self):
        made = simulate_bernoulli(np.array([[0.0, 1.0] * 50] * 20), rng=1)
        assert not made[:, 0::2].any() and made[:, 1::2].all()

    def test_reproducible(self):
        p = np.linspace(0.1, 0.9, 200)
        np.testing.assert_array_equal(simulate_bernoulli(p, rng=5), simulate_bernoulli(p, rng=5))
        assert not np.array_equal(simulate_bernoulli(p, rng=5), simulate_bernoulli(p, rng=6))

    def test_rates_match_probabilities(self):
        # each column has its own probability; makes are independent, so the
        # binomial formula sqrt(p (1 - p) / n) is the exact SE of a column's mean
        n = 50_000
        p = np.array([0.05, 0.3, 0.5, 0.77, 0.99])
        made = simulate_bernoulli(np.broadcast_to(p, (n, p.size)), rng=12)
        se = np.sqrt(p * (1 - p) / n)
        assert np.all(np.abs(made.mean(axis=0) - p) < N_SE * se)


# ---------------------------------------------------------------------------
# make_probability
# ---------------------------------------------------------------------------


class TestMakeProbability:
    @pytest.mark.parametrize(
        "value, match",
        [
            ([0.0, np.nan], r"`linear_predictor` must not contain NaN"),
            ("steep", r"`linear_predictor` must be real numbers"),
        ],
    )
    def test_input_validation(self, value, match):
        with pytest.raises(ValueError, match=match):
            make_probability(value)

    def test_known_values(self):
        np.testing.assert_allclose(
            make_probability([0.0, np.log(3.0), -np.log(3.0), -np.inf, np.inf]),
            [0.5, 0.75, 0.25, 0.0, 1.0],
            rtol=1e-15, atol=1e-15,
        )
        assert isinstance(make_probability(0.0), float)

    def test_matches_logistic_formula(self):
        eta = np.random.default_rng(0).normal(0, 3, size=(7, 11))
        p = make_probability(eta)
        assert p.shape == (7, 11)
        np.testing.assert_allclose(p, 1 / (1 + np.exp(-eta)), rtol=1e-13)
        # extreme values do not overflow
        assert make_probability(-800.0) == 0.0 and make_probability(800.0) == 1.0


# ---------------------------------------------------------------------------
# simulate_session_lengths
# ---------------------------------------------------------------------------


class TestSimulateSessionLengths:
    @pytest.mark.parametrize(
        "kwargs, match",
        [
            (dict(mean=25), r"`mean` must be strictly between `low` = 10 and `high` = 22 \(got 25.0\)"),
            (dict(mean=10), r"`mean` must be strictly between"),
            (dict(mean="16"), r"`mean` must be a number \(got '16'\)"),
            (dict(low=0), r"`low` must be an integer >= 1 \(got 0\)"),
            (dict(high=8), r"`high` must be >= `low` = 10 \(got 8\)"),
            (dict(low=12, high=12), r"`mean` must equal `low` = `high` = 12"),
        ],
    )
    def test_input_validation(self, kwargs, match):
        arguments = dict(mean=16, low=10, high=22) | kwargs
        with pytest.raises(ValueError, match=match):
            simulate_session_lengths(100, **arguments)

    def test_n_sessions_validation(self):
        with pytest.raises(ValueError, match=r"`n_sessions` must be an integer >= 0 \(got -5\)"):
            simulate_session_lengths(-5, mean=16, low=10, high=22)

    def test_bounds_dtype_and_mean(self):
        n = 20_000
        lengths = simulate_session_lengths(n, mean=16, low=10, high=22, rng=8)
        assert lengths.shape == (n,) and lengths.dtype == np.int64
        assert lengths.min() >= 10 and lengths.max() <= 22
        # games are drawn independently: SE of the mean = sample sd / sqrt(n)
        se = lengths.std(ddof=1) / np.sqrt(n)
        assert abs(lengths.mean() - 16) < N_SE * se
        # both ends of the range occur (no piling up and no empty tail)
        assert (lengths == 10).any() and (lengths == 22).any()

    def test_asymmetric_mean(self):
        n = 20_000
        lengths = simulate_session_lengths(n, mean=6.5, low=5, high=30, rng=21)
        se = lengths.std(ddof=1) / np.sqrt(n)
        assert abs(lengths.mean() - 6.5) < N_SE * se

    def test_single_length_and_empty(self):
        np.testing.assert_array_equal(simulate_session_lengths(4, mean=12, low=12, high=12, rng=0), [12] * 4)
        assert simulate_session_lengths(0, mean=16, low=10, high=22, rng=0).shape == (0,)

    def test_reproducible(self):
        a = simulate_session_lengths(500, mean=16, low=10, high=22, rng=1)
        b = simulate_session_lengths(500, mean=16, low=10, high=22, rng=1)
        c = simulate_session_lengths(500, mean=16, low=10, high=22, rng=2)
        np.testing.assert_array_equal(a, b)
        assert not np.array_equal(a, c)

    @pytest.mark.parametrize("mean, low, high", [(16, 10, 22), (6.5, 5, 30), (29.9, 5, 30), (1.01, 1, 3)])
    def test_truncated_poisson_probabilities(self, mean, low, high):
        # exact: the probabilities have the requested mean, and consecutive ratios
        # k P(k) / P(k - 1) all equal the same lambda (the Poisson shape)
        support, pmf = _truncated_poisson_pmf(float(mean), low, high)
        np.testing.assert_array_equal(support, np.arange(low, high + 1))
        assert abs(pmf.sum() - 1) < 1e-12
        assert abs(pmf @ support - mean) < 1e-9
        lam = support[1:] * pmf[1:] / pmf[:-1]
        np.testing.assert_allclose(lam, lam[0], rtol=1e-9)


# ---------------------------------------------------------------------------
# hidden_state_moments
# ---------------------------------------------------------------------------


class TestHiddenStateMoments:
    @pytest.mark.parametrize(
        "kwargs, match",
        [
            (dict(stay_hot=1.2), r"`stay_hot` must be in \[0, 1\] \(got 1.2\)"),
            (dict(hot_rate=[0.5, -0.5]), r"`hot_rate` must be in \[0, 1\] \(got -0.5\)"),
            (dict(cold_rate=np.nan), r"`cold_rate` must be in \[0, 1\] \(got nan\)"),
            (dict(stay_hot=1.0, stay_cold=1.0), r"stationary chain is undefined"),
            (dict(hot_rate=[0.5, 0.6], cold_rate=[0.1, 0.2, 0.3]), r"must broadcast together"),
        ],
    )
    def test_input_validation(self, kwargs, match):
        arguments = dict(hot_rate=0.6, cold_rate=0.4, stay_hot=0.9, stay_cold=0.9) | kwargs
        with pytest.raises(ValueError, match=match):
            hidden_state_moments(**arguments)

    @pytest.mark.parametrize("case", HIDDEN_CASES)
    def test_against_exact_enumeration(self, case):
        # Outside check: all 2**4 outcome sequences x 2**4 state paths of the
        # stationary chain, stationary law from solving pi T = pi.
        h, c, a, b = case
        n = 4
        outcome_patterns, state_patterns, joint = _enumerate_hidden_state(h, c, a, b, n)
        m = hidden_state_moments(h, c, a, b)
        prob = joint.sum(axis=1)
        hot_share = np.array([joint.sum(axis=0) @ state_patterns[:, t] for t in range(n)])
        np.testing.assert_allclose(hot_share, m.hot_share, rtol=0, atol=1e-12)
        mean, after_make, after_miss, corr = _outcome_summaries(outcome_patterns, prob, n)
        np.testing.assert_allclose(mean, m.make_rate, rtol=0, atol=1e-12)
        np.testing.assert_allclose(after_make, m.rate_after_make, rtol=0, atol=1e-12)
        np.testing.assert_allclose(after_miss, m.rate_after_miss, rtol=0, atol=1e-12)
        np.testing.assert_allclose(after_make - after_miss, m.rate_difference, rtol=0, atol=1e-12)
        for lag in (1, 2, 3):
            np.testing.assert_allclose(corr[lag], m.autocorrelation(lag), rtol=0, atol=1e-12)
        np.testing.assert_allclose(corr[1], m.lag1_autocorrelation, rtol=0, atol=1e-12)

    def test_hand_computed_values(self):
        # pi_h = pi_c = 1/2, lambda = 0.8: gamma_1 = 1/4 * 0.04 * 0.8 = 0.008,
        # variance 1/4, so the difference and the correlation are both 0.032
        m = hidden_state_moments(0.6, 0.4, stay_hot=0.9, stay_cold=0.9)
        assert isinstance(m, HiddenStateMoments)
        assert m.make_rate == pytest.approx(0.5, abs=1e-15)
        assert m.hot_share == pytest.approx(0.5, abs=1e-15)
        assert m.rate_after_make == pytest.approx(0.516, abs=1e-15)
        assert m.rate_after_miss == pytest.approx(0.484, abs=1e-15)
        assert m.rate_difference == pytest.approx(0.032, abs=1e-15)
        assert m.autocorrelation(3) == pytest.approx(0.032 * 0.64, abs=1e-15)
        assert isinstance(m.make_rate, float)

    def test_degenerate_rates(self):
        never = hidden_state_moments(0.0, 0.0, 0.9, 0.5)
        assert never.make_rate == 0.0
        assert np.isnan(never.rate_after_make) and np.isnan(never.lag1_autocorrelation)
        assert never.rate_after_miss == 0.0
        always = hidden_state_moments(1.0, 1.0, 0.9, 0.5)
        assert always.rate_after_make == 1.0 and np.isnan(always.rate_after_miss)

    def test_broadcasting(self):
        stay = np.array([[0.5], [0.8], [0.95]])
        hot = np.array([0.55, 0.6, 0.7])
        m = hidden_state_moments(hot, 0.4, stay, 0.9)
        assert m.rate_difference.shape == (3, 3)
        for i, j in itertools.product(range(3), range(3)):
            single = hidden_state_moments(hot[j], 0.4, stay[i, 0], 0.9)
            assert m.rate_difference[i, j] == single.rate_difference
            assert m.make_rate[i, j] == single.make_rate
        frame = m.to_frame()
        assert len(frame) == 9 and "rate_difference" in frame.columns
        with pytest.raises(ValueError, match=r"`lag` must be an integer >= 1 \(got 0\)"):
            m.autocorrelation(0)


# ---------------------------------------------------------------------------
# markov_moments
# ---------------------------------------------------------------------------


class TestMarkovMoments:
    @pytest.mark.parametrize(
        "kwargs, match",
        [
            (dict(rate_after_make=1.1), r"`rate_after_make` must be in \[0, 1\] \(got 1.1\)"),
            (dict(rate_after_miss=[0.2, np.nan]), r"`rate_after_miss` must be in \[0, 1\] \(got nan\)"),
            (dict(rate_after_make=1.0, rate_after_miss=0.0), r"stationary make rate is undefined"),
            (dict(rate_after_make=[0.1, 0.2], rate_after_miss=[0.1, 0.2, 0.3]), r"must broadcast together"),
        ],
    )
    def test_input_validation(self, kwargs, match):
        with pytest.raises(ValueError, match=match):
            markov_moments(**(dict(rate_after_make=0.6, rate_after_miss=0.4) | kwargs))

    @pytest.mark.parametrize("case", MARKOV_CASES)
    def test_against_exact_enumeration(self, case):
        # Outside check: all 2**4 outcome sequences of the stationary chain
        p1, p0 = case
        n = 4
        patterns, prob = _enumerate_markov(p1, p0, n)
        m = markov_moments(p1, p0)
        assert isinstance(m, MarkovMoments)
        mean, after_make, after_miss, corr = _outcome_summaries(patterns, prob, n)
        np.testing.assert_allclose(mean, m.make_rate, rtol=0, atol=1e-12)
        np.testing.assert_allclose(after_make, m.rate_after_make, rtol=0, atol=1e-12)
        np.testing.assert_allclose(after_miss, m.rate_after_miss, rtol=0, atol=1e-12)
        np.testing.assert_allclose(after_make - after_miss, m.rate_difference, rtol=0, atol=1e-12)
        for lag in (1, 2, 3):
            np.testing.assert_allclose(corr[lag], m.autocorrelation(lag), rtol=0, atol=1e-12)

    def test_absorbing_chain(self):
        # after a make always a make: the stationary chain always makes
        m = markov_moments(1.0, 0.5)
        assert m.make_rate == 1.0
        assert m.rate_difference == 0.5
        assert np.isnan(m.lag1_autocorrelation) and np.isnan(m.autocorrelation(2))

    def test_broadcasting_and_frame(self):
        m = markov_moments([0.5, 0.6, 0.7], 0.5)
        np.testing.assert_allclose(m.make_rate, [0.5, 0.5 / 0.9, 0.5 / 0.8], rtol=1e-15)
        np.testing.assert_allclose(m.rate_difference, [0.0, 0.1, 0.2], atol=1e-15)
        frame = m.to_frame()
        assert isinstance(frame, pd.DataFrame)
        assert list(frame.columns) == [
            "rate_after_make", "rate_after_miss", "make_rate", "rate_difference",
            "lag1_autocorrelation",
        ]
        assert len(frame) == 3
