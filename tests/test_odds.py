"""Tests of streakwise.analysis.odds: reference values, brute force, Monte Carlo.

Brute force enumerates every one of the 2**n make/miss sequences and weighs
each by its exact (Fraction) probability, so the exact functions must match it
exactly. Monte Carlo checks use a seeded generator and a tolerance of four
standard errors of a binomial proportion, sqrt(P (1 - P) / m) at the exact P:
a correct method fails such a check with probability about 6e-5.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest

from streakwise.analysis.odds import (
    OKABE_ITO,
    LongestRunOddsResult,
    OpportunityResult,
    RunProbabilityResult,
    WindowProbabilityResult,
    combine_sessions,
    expected_attempts_until_run,
    expected_run_count,
    expected_window_count,
    longest_run_figure,
    longest_run_odds,
    run_probability,
    run_probability_given_makes,
    run_probability_per_attempt,
    window_probability,
)

HALF = Fraction(1, 2)
KINDS = ("makes", "misses", "either")


# ---------------------------------------------------------------------------
# Brute force
# ---------------------------------------------------------------------------


def all_sequences(n):
    """Every 0/1 sequence of length n, one per row (1 = make)."""
    codes = np.arange(2**n)
    return ((codes[:, None] >> np.arange(n)[::-1]) & 1).astype(np.int64)


def longest(seqs, value):
    best = np.zeros(len(seqs), dtype=np.int64)
    current = np.zeros(len(seqs), dtype=np.int64)
    for j in range(seqs.shape[1]):
        current = np.where(seqs[:, j] == value, current + 1, 0)
        best = np.maximum(best, current)
    return best


def longest_of(seqs, kind):
    if kind == "makes":
        return longest(seqs, 1)
    if kind == "misses":
        return longest(seqs, 0)
    return np.maximum(longest(seqs, 1), longest(seqs, 0))


def run_count(seqs, value, run):
    """Number of maximal runs of ``value`` with length >= run, per sequence."""
    counts = np.zeros(len(seqs), dtype=np.int64)
    current = np.zeros(len(seqs), dtype=np.int64)
    for j in range(seqs.shape[1]):
        current = np.where(seqs[:, j] == value, current + 1, 0)
        counts += current == run
    return counts


def window_max(seqs, window):
    if seqs.shape[1] < window:
        return np.zeros(len(seqs), dtype=np.int64)
    sums = np.concatenate((np.zeros((len(seqs), 1), dtype=np.int64), np.cumsum(seqs, axis=1)), axis=1)
    return (sums[:, window:] - sums[:, :-window]).max(axis=1)


def weights_fixed(seqs, p):
    makes = seqs.sum(axis=1)
    n = seqs.shape[1]
    table = [p**m * (1 - p) ** (n - m) for m in range(n + 1)]
    return [table[m] for m in makes]


def weights_per_attempt(seqs, rates):
    out = []
    for row in seqs:
        w = Fraction(1)
        for made, p in zip(row, rates, strict=True):
            w *= p if made else 1 - p
        out.append(w)
    return out


def chance(event, weights):
    return sum((w for e, w in zip(event, weights, strict=True) if e), Fraction(0))


# ---------------------------------------------------------------------------
# run_probability
# ---------------------------------------------------------------------------


class TestRunProbability:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`rate` must be in \[0, 1\] \(got 1.2\)"):
            run_probability(10, 3, 1.2)
        with pytest.raises(ValueError, match=r"`rate` must be in \[0, 1\] \(got -1/2\)"):
            run_probability(10, 3, Fraction(-1, 2))
        with pytest.raises(ValueError, match=r"`run` must be an integer >= 1 \(got 0\)"):
            run_probability(10, 0, 0.5)
        with pytest.raises(ValueError, match=r"`attempts` must be an integer \(got 'ten'\)"):
            run_probability("ten", 3, 0.5)
        with pytest.raises(ValueError, match=r"`kind` must be one of 'makes', 'misses', 'either' \(got 'both'\)"):
            run_probability(10, 3, 0.5, kind="both")
        with pytest.raises(ValueError, match=r"`exact=True` needs `rate` as a fractions.Fraction"):
            run_probability(10, 3, 0.45, exact=True)
        with pytest.raises(ValueError, match=r"`rate` must be in \[0, 1\] \(got nan\)"):
            run_probability(10, 3, float("nan"))

    def test_against_feller(self):
        # Feller, W., An Introduction to Probability Theory and Its Applications,
        # Vol. 1, ch. XIII (recurrent events; success runs), p = 1/2.
        assert run_probability(50, 5, 0.5).probability == pytest.approx(0.551875, abs=1e-6)
        assert run_probability(100, 5, 0.5).probability == pytest.approx(0.810110, abs=1e-6)
        assert run_probability(50, 5, HALF).probability == pytest.approx(0.551875, abs=1e-6)
        assert run_probability(100, 5, HALF).probability == pytest.approx(0.810110, abs=1e-6)
        assert run_probability(20, 5, HALF).fraction == Fraction(32751, 131072)
        assert run_probability(10, 4, HALF).fraction == Fraction(251, 1024)

    def test_either_kind_against_feller(self):
        # Feller, Vol. 1, ch. XIII: runs of either kind, p = 1/2.
        assert run_probability(100, 5, 0.5, kind="either").probability == pytest.approx(0.971690, abs=1e-6)
        assert run_probability(100, 5, HALF, kind="either").probability == pytest.approx(0.971690, abs=1e-6)
        assert run_probability(9, 3, HALF, kind="either").fraction == Fraction(201, 256)

    @pytest.mark.parametrize("kind", KINDS)
    def test_against_brute_force(self, kind):
        p = Fraction(2, 5)
        for n in range(0, 11):
            seqs = all_sequences(n)
            weights = weights_fixed(seqs, p)
            lengths = longest_of(seqs, kind)
            for r in range(1, n + 2):
                expected = chance(lengths >= r, weights)
                exact = run_probability(n, r, p, kind=kind)
                assert exact.exact and exact.fraction == expected, (n, r)
                floating = run_probability(n, r, p, kind=kind, exact=False)
                assert abs(floating.probability - float(expected)) <= floating.error_bound + 1e-300

    def test_float_error_bound_holds_at_scale(self):
        p = Fraction(9, 20)
        for n, r, kind in ((5_000, 9, "makes"), (3_000, 12, "misses"), (2_000, 8, "either")):
            exact = run_probability(n, r, p, kind=kind).fraction
            floating = run_probability(n, r, float(p), kind=kind)
            assert floating.method == "matrix_power" and not floating.exact
            assert abs(floating.probability - float(exact)) <= floating.error_bound
            assert floating.error_bound < 1e-9

    def test_million_attempts(self):
        result = run_probability(10**6, 20, 0.5)
        assert 0 < result.probability < 1
        assert result.error_bound < 1e-8
        # expected runs of 20 in 10**6 attempts is about 0.48: P is a little below
        assert result.probability == pytest.approx(1 - math.exp(-expected_run_count(10**6, 20, 0.5)), rel=1e-3)

    def test_edges(self):
        assert run_probability(5, 6, 0.5).probability == 0.0
        assert run_probability(0, 1, 0.5).probability == 0.0
        assert run_probability(5, 5, 1.0).probability == 1.0
        assert run_probability(5, 1, 0.0).probability == 0.0
        assert run_probability(5, 2, 0.0, kind="misses").probability == 1.0
        assert run_probability(3, 1, HALF, kind="either").fraction == 1

    def test_result_views(self):
        result = run_probability(20, 5, HALF)
        assert isinstance(result, RunProbabilityResult)
        frame = result.to_frame()
        assert {"probability", "method", "exact", "error_bound"} <= set(frame.columns)
        assert result.to_dict()["exact_fraction"] == "32751/131072"
        text = result.summary()
        assert "32751/131072" in text and "Nothing here is betting advice." in text


# ---------------------------------------------------------------------------
# run_probability_per_attempt
# ---------------------------------------------------------------------------


class TestRunProbabilityPerAttempt:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`rates` must hold probabilities in \[0, 1\] \(got 1.5 at position 1\)"):
            run_probability_per_attempt([0.5, 1.5], 1)
        with pytest.raises(ValueError, match="one-dimensional"):
            run_probability_per_attempt([[0.5]], 1)
        with pytest.raises(ValueError, match="`exact=True` needs `rates`"):
            run_probability_per_attempt([0.5, 0.5], 1, exact=True)

    @pytest.mark.parametrize("kind", KINDS)
    def test_against_brute_force(self, kind):
        rng = np.random.default_rng(11)
        for n in range(1, 9):
            rates = [Fraction(int(k), 10) for k in rng.integers(1, 10, size=n)]
            seqs = all_sequences(n)
            weights = weights_per_attempt(seqs, rates)
            lengths = longest_of(seqs, kind)
            for r in range(1, n + 1):
                expected = chance(lengths >= r, weights)
                result = run_probability_per_attempt(rates, r, kind=kind)
                assert result.exact and result.fraction == expected
                floating = run_probability_per_attempt(np.array([float(x) for x in rates]), r, kind=kind)
                assert abs(floating.probability - float(expected)) <= floating.error_bound + 1e-300

    def test_constant_rates_match_fixed_rate(self):
        for kind in KINDS:
            fixed = run_probability(40, 4, Fraction(3, 5), kind=kind).fraction
            assert run_probability_per_attempt([Fraction(3, 5)] * 40, 4, kind=kind).fraction == fixed

    def test_against_monte_carlo(self):
        rng = np.random.default_rng(2024)
        rates = rng.uniform(0.25, 0.75, size=60)
        exact = run_probability_per_attempt(rates, 5).probability
        samples = 200_000
        made = rng.random((samples, 60)) < rates
        hits = longest(made.astype(np.int64), 1) >= 5
        estimate = hits.mean()
        standard_error = math.sqrt(exact * (1 - exact) / samples)
        assert abs(estimate - exact) <= 4 * standard_error


# ---------------------------------------------------------------------------
# run_probability_given_makes
# ---------------------------------------------------------------------------


class TestRunProbabilityGivenMakes:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`makes` must be at most `attempts` \(10\) \(got 11\)"):
            run_probability_given_makes(10, 3, 11)
        with pytest.raises(ValueError, match=r"`makes` must be an integer >= 0 \(got -1\)"):
            run_probability_given_makes(10, 3, -1)

    @pytest.mark.parametrize("kind", KINDS)
    def test_against_brute_force(self, kind):
        for n in range(0, 13):
            seqs = all_sequences(n)
            makes = seqs.sum(axis=1)
            lengths = longest_of(seqs, kind)
            for m in range(n + 1):
                rows = makes == m
                for r in range(1, n + 2):
                    expected = Fraction(int(np.count_nonzero(lengths[rows] >= r)), int(np.count_nonzero(rows)))
                    result = run_probability_given_makes(n, r, m, kind=kind)
                    assert result.exact and result.fraction == expected, (n, m, r)

    def test_larger_case_against_forward_count(self):
        # 60 attempts, 30 makes: brute force is out of reach; count the
        # arrangements with a plain dynamic program over (makes used, run length)
        n, m, r = 60, 30, 6
        table = {(0, 0): 1}
        for _ in range(n):
            new = {}
            for (used, run), ways in table.items():
                if used < m and run + 1 < r:
                    new[(used + 1, run + 1)] = new.get((used + 1, run + 1), 0) + ways
                new[(used, 0)] = new.get((used, 0), 0) + ways
            table = new
        free = sum(ways for (used, _), ways in table.items() if used == m)
        assert run_probability_given_makes(n, r, m).fraction == 1 - Fraction(free, math.comb(n, m))


# ---------------------------------------------------------------------------
# longest_run_odds and expected_attempts_until_run
# ---------------------------------------------------------------------------


class TestLongestRunOdds:
    def test_input_validation(self):
        with pytest.raises(ValueError, match="give exactly one of `rate`, `rates`, `makes` \\(got rate, makes\\)"):
            longest_run_odds(10, 0.5, makes=3)
        with pytest.raises(ValueError, match="give exactly one of"):
            longest_run_odds(10)
        with pytest.raises(ValueError, match=r"`attempts` must equal len\(rates\) = 2 \(got 3\)"):
            longest_run_odds(3, rates=[0.5, 0.5])

    def test_against_oeis_a119706(self):
        # OEIS A119706: total length of longest runs of heads over all 2^n
        # sequences; n = 20 gives 3910398, i.e. mean 3910398 / 2^20.
        result = longest_run_odds(20, HALF)
        assert result.exact
        assert result.mean_fraction == Fraction(3910398, 2**20)
        assert result.mean == pytest.approx(3.729246, abs=1e-6)

    def test_against_schilling_approximation(self):
        # Schilling (1990), The longest run of heads, College Math. J. 21(3):
        # the mean longest run of a fair coin is about log2(n) - 2/3 (an
        # approximation with a small oscillating error, not an exact value).
        result = longest_run_odds(10_000, 0.5)
        assert result.mean == pytest.approx(math.log2(10_000) - 2 / 3, abs=0.01)

    @pytest.mark.parametrize("kind", KINDS)
    def test_against_brute_force(self, kind):
        p = Fraction(3, 7)
        rates = [Fraction(k, 9) for k in (2, 7, 4, 5, 1, 8, 3, 6, 5)]
        for n in range(0, 10):
            seqs = all_sequences(n)
            lengths = longest_of(seqs, kind)
            for model, weights, result in (
                ("fixed", weights_fixed(seqs, p), longest_run_odds(n, p, kind=kind)),
                ("per_attempt", weights_per_attempt(seqs, rates[:n]), longest_run_odds(rates=rates[:n], kind=kind)),
            ):
                assert result.exact, model
                expected = [chance(lengths == length, weights) for length in range(n + 1)]
                assert list(result.fractions) == expected, (model, n)
                assert result.mean_fraction == sum((length * e for length, e in enumerate(expected)), Fraction(0))
            makes = seqs.sum(axis=1)
            for m in range(n + 1):
                rows = makes == m
                result = longest_run_odds(n, makes=m, kind=kind)
                total = int(np.count_nonzero(rows))
                expected = [Fraction(int(np.count_nonzero(lengths[rows] == length)), total) for length in range(n + 1)]
                assert list(result.fractions) == expected

    @pytest.mark.parametrize(("rate", "kind"), [(Fraction(9, 20), "makes"), (Fraction(9, 10), "makes"), (Fraction(1, 4), "misses"), (Fraction(9, 20), "either"), (Fraction(9, 10), "either")])
    def test_float_within_bound_of_exact(self, rate, kind):
        exact = longest_run_odds(300, rate, kind=kind)
        floating = longest_run_odds(300, float(rate), kind=kind)
        assert exact.exact and not floating.exact
        assert np.max(np.abs(floating.at_least - exact.at_least)) <= floating.error_bound + 1e-300
        assert abs(floating.mean - exact.mean) <= floating.mean_error_bound
        assert floating.probabilities.sum() == pytest.approx(1.0, abs=1e-12)

    def test_per_attempt_float_within_bound(self):
        rates = [Fraction(k % 7 + 2, 10) for k in range(40)]
        exact = longest_run_odds(rates=rates)
        floating = longest_run_odds(rates=np.array([float(x) for x in rates]))
        assert np.max(np.abs(floating.at_least - exact.at_least)) <= floating.error_bound + 1e-300

    def test_views(self):
        result = longest_run_odds(12, HALF)
        assert isinstance(result, LongestRunOddsResult)
        frame = result.to_frame()
        assert list(frame.columns) == ["length", "probability", "at_least_probability"]
        assert frame["probability"].sum() == pytest.approx(1.0)
        assert result.probability_at_least(4) == pytest.approx(run_probability(12, 4, HALF).probability)
        assert result.probability_at_least(13) == 0.0
        assert "mean" in result.summary()


class TestExpectedAttemptsUntilRun:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`rate` must be above 0"):
            expected_attempts_until_run(3, 0.0)
        with pytest.raises(ValueError, match=r"`run` must be an integer >= 1 \(got 0\)"):
            expected_attempts_until_run(0, 0.5)

    def test_against_feller(self):
        # Feller, Vol. 1, ch. XIII: expected trials until the first run of r
        # successes, (1 - p^r) / ((1 - p) p^r): 62 for r = 5, 14 for r = 3.
        assert expected_attempts_until_run(5, HALF) == 62
        assert expected_attempts_until_run(3, HALF) == 14
        assert expected_attempts_until_run(5, 0.5) == pytest.approx(62.0, rel=1e-15)
        assert expected_attempts_until_run(4, 1.0) == 4.0

    def test_against_run_probabilities(self):
        # E[T] = sum_n P(T > n) = sum_n P(no run in n attempts); the terms come
        # from run_probability, itself checked by brute force for small n
        p, r = Fraction(3, 5), 3
        for n in range(0, 10):
            seqs = all_sequences(n)
            assert 1 - run_probability(n, r, p).fraction == chance(longest(seqs, 1) < r, weights_fixed(seqs, p))
        series = sum(1 - run_probability(n, r, float(p)).probability for n in range(0, 400))
        assert series == pytest.approx(float(expected_attempts_until_run(r, p)), rel=1e-9)


# ---------------------------------------------------------------------------
# window_probability
# ---------------------------------------------------------------------------


class TestWindowProbability:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`at_least` must be at most `window` \(5\) \(got 6\)"):
            window_probability(20, 5, 6, 0.5)
        with pytest.raises(ValueError, match=r"`method` must be one of 'auto', 'exact', 'naus', 'monte_carlo' \(got 'fast'\)"):
            window_probability(20, 5, 4, 0.5, method="fast")
        with pytest.raises(ValueError, match=r"`rate` must be in \[0, 1\] \(got 2\)"):
            window_probability(20, 5, 4, 2)
        with pytest.raises(ValueError, match="`method='naus'` needs one fixed `rate`"):
            window_probability(3, 2, 1, [0.5, 0.5, 0.5], method="naus")
        with pytest.raises(ValueError, match="must have `attempts` = 3 entries"):
            window_probability(3, 2, 1, [0.5, 0.5])
        with pytest.raises(ValueError, match="the exact window chain would need 145,422,675 states"):
            window_probability(100, 30, 15, 0.5, method="exact")
        with pytest.raises(ValueError, match=r"the Naus approximation needs `attempts` >= 2 x `window` = 20 \(got 15\)"):
            window_probability(15, 10, 8, 0.5, method="naus")

    def test_against_enumeration_reference(self):
        # CHECKS.md window case, exact by enumeration of all 2^14 sequences:
        # n = 14, Y = 5, X = 4, p = 1/2 gives 0.603515625.
        result = window_probability(14, 5, 4, HALF)
        assert result.exact and result.fraction == Fraction(309, 512)
        assert float(result.fraction) == 0.603515625
        seqs = all_sequences(14)
        assert np.count_nonzero(window_max(seqs, 5) >= 4) / 2**14 == 0.603515625

    def test_run_case_against_feller(self):
        # X = Y is the run question (Feller, Vol. 1, ch. XIII): n = 100,
        # X = Y = 10, p = 1/2 gives 0.0441372.
        result = window_probability(100, 10, 10, 0.5)
        assert result.probability == pytest.approx(0.0441372, abs=1e-7)
        assert result.probability == pytest.approx(run_probability(100, 10, 0.5).probability, abs=1e-14)
        for n in range(1, 40, 3):
            for y in range(1, min(n, 8) + 1):
                assert window_probability(n, y, y, Fraction(2, 5)).fraction == run_probability(n, y, Fraction(2, 5)).fraction

    def test_against_brute_force(self):
        p = Fraction(2, 5)
        rng = np.random.default_rng(5)
        for n in range(1, 12):
            seqs = all_sequences(n)
            weights = weights_fixed(seqs, p)
            rates = [Fraction(int(k), 8) for k in rng.integers(1, 8, size=n)]
            weights_varying = weights_per_attempt(seqs, rates)
            for y in range(1, n + 1):
                best = window_max(seqs, y)
                for x in range(1, y + 1):
                    expected = chance(best >= x, weights)
                    result = window_probability(n, y, x, p)
                    assert result.exact and result.fraction == expected, (n, y, x)
                    floating = window_probability(n, y, x, float(p))
                    assert abs(floating.probability - float(expected)) <= floating.error_bound + 1e-300
                    varying = window_probability(n, y, x, rates)
                    assert varying.fraction == chance(best >= x, weights_varying), (n, y, x)

    def test_fewer_attempts_than_window(self):
        assert window_probability(4, 5, 3, 0.5).probability == 0.0

    def test_float_chain_within_bound_of_exact(self):
        exact = window_probability(60, 9, 6, Fraction(9, 20))
        floating = window_probability(60, 9, 6, 0.45)
        assert exact.exact and floating.method == "exact_chain" and not floating.exact
        assert abs(floating.probability - float(exact.fraction)) <= floating.error_bound

    def test_naus_exact_at_two_and_three_windows(self):
        # Naus (1982), JASA 77(377): Q2 and Q3 are exact no-window
        # probabilities for 2Y and 3Y trials.
        for y, x, p in ((8, 5, 0.5), (10, 7, 0.45), (12, 6, 0.3), (9, 9, 0.5), (10, 3, 0.1)):
            for n in (2 * y, 3 * y):
                exact = window_probability(n, y, x, p, method="exact").probability
                assert window_probability(n, y, x, p, method="naus").probability == pytest.approx(exact, abs=1e-12)

    def test_naus_close_to_exact_chain(self):
        # Naus (1982) approximation against the exact chain on long sequences
        for n, y, x, p in ((1000, 16, 14, 0.45), (1000, 16, 12, 0.5), (300, 12, 9, 0.45)):
            exact = window_probability(n, y, x, p, method="exact").probability
            assert window_probability(n, y, x, p, method="naus").probability == pytest.approx(exact, abs=5e-4)

    def test_approximation_regime_against_monte_carlo(self):
        # Y = 30 is beyond the exact chain (C(30, 21) states): auto uses the
        # Naus (1982) approximation; check it by Monte Carlo.
        auto = window_probability(600, 30, 22, 0.45)
        assert auto.method == "naus_approximation" and auto.error_bound is None
        samples = 40_000
        mc = window_probability(600, 30, 22, 0.45, method="monte_carlo", samples=samples, rng=7)
        assert mc.method == "monte_carlo" and mc.seed == 7
        standard_error = math.sqrt(auto.probability * (1 - auto.probability) / samples)
        assert abs(mc.probability - auto.probability) <= 4 * standard_error
        assert mc.standard_error == pytest.approx(standard_error, rel=0.05)

    def test_monte_carlo_against_exact(self):
        samples = 50_000
        exact = window_probability(200, 8, 7, 0.5).probability
        mc = window_probability(200, 8, 7, 0.5, method="monte_carlo", samples=samples, rng=3)
        assert abs(mc.probability - exact) <= 4 * math.sqrt(exact * (1 - exact) / samples)
        again = window_probability(200, 8, 7, 0.5, method="monte_carlo", samples=samples, rng=3)
        assert again.probability == mc.probability

    def test_per_attempt_beyond_exact_uses_monte_carlo(self):
        rates = np.full(100, 0.5)
        result = window_probability(100, 40, 25, rates, samples=2_000, rng=1)
        assert result.method == "monte_carlo" and result.standard_error > 0

    def test_views(self):
        result = window_probability(14, 5, 4, HALF)
        assert isinstance(result, WindowProbabilityResult)
        assert {"probability", "method", "exact", "states"} <= set(result.to_frame().columns)
        assert result.to_dict()["exact_fraction"] == "309/512"
        assert "Caveats" in result.summary()


# ---------------------------------------------------------------------------
# expected counts
# ---------------------------------------------------------------------------


class TestExpectedCounts:
    @pytest.mark.parametrize("kind", KINDS)
    def test_run_count_against_brute_force(self, kind):
        p = Fraction(3, 8)
        for n in range(0, 11):
            seqs = all_sequences(n)
            weights = weights_fixed(seqs, p)
            for r in range(1, n + 2):
                counts = np.zeros(len(seqs), dtype=np.int64)
                if kind in ("makes", "either"):
                    counts += run_count(seqs, 1, r)
                if kind in ("misses", "either"):
                    counts += run_count(seqs, 0, r)
                expected = sum((c * w for c, w in zip(counts, weights, strict=True)), Fraction(0))
                assert expected_run_count(n, r, p, kind=kind) == expected

    def test_window_count_against_brute_force(self):
        p = Fraction(3, 8)
        for n in range(1, 11):
            seqs = all_sequences(n)
            weights = weights_fixed(seqs, p)
            sums = np.concatenate((np.zeros((len(seqs), 1), dtype=np.int64), np.cumsum(seqs, axis=1)), axis=1)
            for y in range(1, n + 1):
                windows = sums[:, y:] - sums[:, :-y]
                for x in range(1, y + 1):
                    good = windows >= x
                    starts = good[:, 0].astype(np.int64) + (good[:, 1:] & ~good[:, :-1]).sum(axis=1)
                    expected = sum((s * w for s, w in zip(starts, weights, strict=True)), Fraction(0))
                    assert expected_window_count(n, y, x, p) == expected


# ---------------------------------------------------------------------------
# combine_sessions
# ---------------------------------------------------------------------------


class TestCombineSessions:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`session_probabilities` must be in \[0, 1\] \(got 1.5\)"):
            combine_sessions([0.5, 1.5])
        with pytest.raises(ValueError, match=r"`players` must be an integer >= 1 \(got 0\)"):
            combine_sessions([0.5], players=0)

    def test_against_brute_force_two_sessions(self):
        # a season of two games (4 and 5 attempts), runs of 3 inside games
        p, r = Fraction(2, 5), 3
        sizes = (4, 5)
        per_game = [run_probability(n, r, p).fraction for n in sizes]
        result = combine_sessions(per_game)
        seqs = all_sequences(sum(sizes))
        weights = weights_fixed(seqs, p)
        first = longest(seqs[:, :4], 1) >= r
        second = longest(seqs[:, 4:], 1) >= r
        assert result.fraction_season == chance(first | second, weights)
        expected_games = sum((w * (int(a) + int(b)) for a, b, w in zip(first, second, weights, strict=True)), Fraction(0))
        assert result.fraction_expected_season == expected_games
        assert result.probability_season == float(result.fraction_season)

        # a league of two such players: the league's season is four independent games
        league = combine_sessions(per_game, players=2)
        assert league.probability_league_season == pytest.approx(float(combine_sessions(per_game * 2).fraction_season), rel=1e-13)
        assert league.expected_league_season == pytest.approx(2 * float(expected_games), rel=1e-13)
        over = combine_sessions(per_game, players=2, seasons=3)
        assert over.probability_league_span == pytest.approx(float(combine_sessions(per_game * 6).fraction_season), rel=1e-13)
        assert over.probability_player_span == pytest.approx(float(combine_sessions(per_game * 3).fraction_season), rel=1e-13)
        assert over.seasons_per_occurrence == pytest.approx(1 / float(expected_games))
        assert over.league_seasons_per_occurrence == pytest.approx(1 / (2 * float(expected_games)))

    def test_tiny_probabilities_keep_digits(self):
        result = combine_sessions([1e-20] * 10, players=1000)
        assert result.probability_season == pytest.approx(1e-19, rel=1e-12)
        assert result.probability_league_season == pytest.approx(1e-16, rel=1e-12)

    def test_impossible_and_certain(self):
        never = combine_sessions([0.0, 0.0])
        assert never.probability_season == 0.0 and math.isinf(never.seasons_per_occurrence)
        assert combine_sessions([1.0, 0.2]).probability_league_season == 1.0

    def test_views(self):
        result = combine_sessions([0.1, 0.2], players=10, seasons=2)
        assert isinstance(result, OpportunityResult)
        assert {"probability_season", "expected_league_season"} <= set(result.to_frame().columns)
        assert "League of 10" in result.summary()


# ---------------------------------------------------------------------------
# figure
# ---------------------------------------------------------------------------


class TestLongestRunFigure:
    def test_marks_observed_run_in_safe_colours(self):
        figure = longest_run_figure(longest_run_odds(200, 0.45), observed=8)
        colours = set(figure.data[0].marker.color)
        assert colours <= set(OKABE_ITO.values())
        assert OKABE_ITO["orange"] in colours and OKABE_ITO["bluish_green"] in colours
        assert any("observed 8" in a.text for a in figure.layout.annotations)

    def test_input_validation(self):
        with pytest.raises(ValueError, match="`distribution` must be a LongestRunOddsResult"):
            longest_run_figure(0.5)
