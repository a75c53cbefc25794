"""Tests for streakwise.analysis.conditional: conditional Bernoulli sampling.

Reference values come from exact enumeration of every outcome pattern of a
tiny game: under independent Bernoulli(p_i) conditional on m makes, a pattern
x has probability prod(w_i ** x_i) / sum over patterns, w_i = p_i / (1 - p_i)
(Chen, Dempster & Liu 1994, Biometrika 81(3), 457-469). Monte Carlo checks
use 4 binomial standard errors.
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from scipy import special

from streakwise.analysis.conditional import (
    conditional_inclusion_probabilities,
    player_generator,
    sample_conditional_bernoulli,
)

N_SE = 4


def exact_patterns(p, makes):
    """Every 0/1 pattern with ``makes`` ones and its conditional probability."""
    p = np.asarray(p, dtype=float)
    odds = p / (1 - p)
    patterns = np.array([c for c in itertools.product((0, 1), repeat=len(p)) if sum(c) == makes])
    weight = np.prod(np.where(patterns == 1, odds, 1.0), axis=1)
    return patterns, weight / weight.sum()


class TestPlayerGenerator:
    def test_validation(self):
        with pytest.raises(ValueError, match="`seed` must be a non-negative integer"):
            player_generator(-1, "a")
        with pytest.raises(ValueError, match="`player` must be a string or None"):
            player_generator(1, 3)

    def test_streams_depend_only_on_seed_player_purpose(self):
        a = player_generator(11, "P001", "conditional").random(4)
        assert np.array_equal(a, player_generator(11, "P001", "conditional").random(4))
        assert not np.array_equal(a, player_generator(11, "P002", "conditional").random(4))
        assert not np.array_equal(a, player_generator(11, "P001", "hot_state").random(4))
        assert not np.array_equal(a, player_generator(12, "P001", "conditional").random(4))


class TestSampleConditionalBernoulli:
    def test_validation(self):
        with pytest.raises(ValueError, match=r"`probability` must be in \[0, 1\] \(got 1.5\)"):
            sample_conditional_bernoulli([0.5, 1.5], [1])
        with pytest.raises(ValueError, match="`makes` must be between 0 and the session's attempts"):
            sample_conditional_bernoulli([0.5, 0.5], [3])
        with pytest.raises(ValueError, match="`makes` must hold one integer per session"):
            sample_conditional_bernoulli([0.5, 0.5, 0.5], [1], [0, 1, 3])
        with pytest.raises(ValueError, match="`offsets` must start at 0 and end at the number of attempts 3"):
            sample_conditional_bernoulli([0.5, 0.5, 0.5], [1, 1], [0, 1, 2])
        with pytest.raises(ValueError, match="`n_draws` must be an integer >= 0"):
            sample_conditional_bernoulli([0.5], [1], n_draws=-1)
        with pytest.raises(ValueError, match="session 0: 3 makes are impossible"):
            sample_conditional_bernoulli([0.0, 0.5, 0.5], [3])

    def test_keeps_every_sessions_makes(self):
        rng = np.random.default_rng(1)
        p = rng.uniform(0.05, 0.95, 40)
        offsets = [0, 7, 7, 20, 33, 40]  # an empty session too
        makes = [3, 0, 13, 5, 2]
        x = sample_conditional_bernoulli(p, makes, offsets, n_draws=500, rng=2)
        assert x.dtype == np.int8 and x.shape == (500, 40)
        sums = np.add.reduceat(x, [0, 7, 20, 33], axis=1)
        assert (sums == np.array([3, 13, 5, 2])).all()

    def test_forced_outcomes(self):
        x = sample_conditional_bernoulli([1.0, 0.0, 0.5, 0.5], [2], n_draws=200, rng=3)
        assert (x[:, 0] == 1).all() and (x[:, 1] == 0).all()
        assert (x[:, 2] + x[:, 3] == 1).all()

    def test_against_exact_enumeration(self):
        # a tiny game (5 attempts, 2 makes) and a second game (4 attempts, 3 makes): the
        # frequency of every pattern matches its exact conditional probability
        p1, p2 = np.array([0.2, 0.55, 0.8, 0.35, 0.6]), np.array([0.9, 0.3, 0.5, 0.7])
        n = 60_000
        x = sample_conditional_bernoulli(np.r_[p1, p2], [2, 3], [0, 5, 9], n_draws=n, rng=4)
        for block, p, makes in ((x[:, :5], p1, 2), (x[:, 5:], p2, 3)):
            patterns, exact = exact_patterns(p, makes)
            codes = block @ (1 << np.arange(block.shape[1]))
            observed = np.array([(codes == c).mean() for c in patterns @ (1 << np.arange(block.shape[1]))])
            se = np.sqrt(exact * (1 - exact) / n)
            assert np.all(np.abs(observed - exact) < N_SE * se), (observed, exact)

    def test_equal_probabilities_is_a_permutation(self):
        # equal p in a game: every arrangement of the makes equally likely (C(6, 2) = 15)
        n = 30_000
        x = sample_conditional_bernoulli(np.full(6, 0.3), [2], n_draws=n, rng=5)
        codes = x @ (1 << np.arange(6))
        counts = np.unique(codes, return_counts=True)[1]
        assert len(counts) == 15
        se = np.sqrt((1 / 15) * (14 / 15) / n)
        assert np.all(np.abs(counts / n - 1 / 15) < N_SE * se)

    def test_batches_do_not_change_the_draws(self):
        p = np.random.default_rng(6).uniform(0.2, 0.8, 30)
        a = sample_conditional_bernoulli(p, [4, 9], [0, 12, 30], n_draws=50, rng=7)
        b = sample_conditional_bernoulli(p, [4, 9], [0, 12, 30], n_draws=50, rng=7, batch=50)
        assert np.array_equal(a, b)


class TestConditionalInclusionProbabilities:
    def test_against_exact_enumeration(self):
        p = np.array([0.2, 0.55, 0.8, 0.35, 0.6])
        patterns, exact = exact_patterns(p, 2)
        expected = exact @ patterns
        np.testing.assert_allclose(conditional_inclusion_probabilities(p, [2]), expected, atol=1e-12)

    def test_form_cancels(self):
        # a common log-odds shift of a game (its form) leaves the conditional law unchanged
        p = np.array([0.2, 0.55, 0.8, 0.35, 0.6, 0.45])
        shifted = special.expit(special.logit(p) + 0.9)
        np.testing.assert_allclose(
            conditional_inclusion_probabilities(p, [3]), conditional_inclusion_probabilities(shifted, [3]), atol=1e-12
        )

    def test_draws_average_to_them(self):
        rng = np.random.default_rng(8)
        p = rng.uniform(0.1, 0.9, 25)
        pi = conditional_inclusion_probabilities(p, [4, 6], [0, 11, 25])
        assert pi[:11].sum() == pytest.approx(4) and pi[11:].sum() == pytest.approx(6)
        n = 20_000
        mean = sample_conditional_bernoulli(p, [4, 6], [0, 11, 25], n_draws=n, rng=9).mean(axis=0)
        assert np.all(np.abs(mean - pi) < N_SE * np.sqrt(pi * (1 - pi) / n) + 1e-12)

    def test_long_session_does_not_underflow(self):
        rng = np.random.default_rng(10)
        p = rng.uniform(0.02, 0.98, 3000)
        makes = int(round(p.sum()))
        pi = conditional_inclusion_probabilities(p, [makes])
        assert np.isfinite(pi).all() and pi.sum() == pytest.approx(makes, rel=1e-9)
        x = sample_conditional_bernoulli(p, [makes], n_draws=3, rng=11)
        assert (x.sum(axis=1) == makes).all()
