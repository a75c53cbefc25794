"""Tests for streakwise.analysis.runs.

References: the exact runs example and Walpole et al.'s Table A.18 as quoted in
CHECKS.md; Wald & Wolfowitz's (1940) mean and variance; statsmodels'
``runstest_1samp`` (without continuity correction) and ``acf``; Feller's
success-run probabilities and OEIS A119706 for the longest run; and brute-force
enumeration of every arrangement.
"""

import itertools
import math
from fractions import Fraction

import numpy as np
import pytest
from statsmodels.sandbox.stats.runs import runstest_1samp
from statsmodels.tsa.stattools import acf

from streakwise.analysis.runs import (
    longest_run_distribution,
    runs_distribution,
    runs_moments,
    runs_test,
    serial_correlation,
)


def arrangements(length, makes):
    """Every arrangement of `makes` makes in `length` attempts (brute force)."""
    for positions in itertools.combinations(range(length), makes):
        x = [0] * length
        for p in positions:
            x[p] = 1
        yield x


def runs_of(x):
    return 1 + sum(a != b for a, b in zip(x, x[1:]))


def longest_of(x):
    return max((len(list(g)) for v, g in itertools.groupby(x) if v == 1), default=0)


class TestRunsDistribution:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`makes` must be from 0 to the session length \(got 7 makes in 5"):
            runs_distribution(5, 7)
        with pytest.raises(ValueError, match=r"`lengths` must be >= 1 \(got 0\)"):
            runs_distribution([0], [0])
        with pytest.raises(ValueError, match="`lengths` and `makes` must have the same length"):
            runs_distribution([3, 4], [1])
        with pytest.raises(ValueError, match="`lengths` must be an integer or a 1-D array of integers"):
            runs_distribution(3.5, 1)

    def test_against_exact_example(self):
        # CHECKS.md, standard exact-test documentation: x = 1 1 1 1 0 0 0 0 1 1
        # (6 makes, 4 misses), R = 3 runs: P(R <= 3) = 0.04761905
        pmf = runs_distribution(10, 6)
        assert pmf[:4].sum() == pytest.approx(0.04761905, abs=5e-9)

    def test_against_walpole_table_a18(self):
        # Walpole, Myers, Myers & Ye, Table A.18: P(V <= v*) for (n1, n2) = (5, 5),
        # v* = 2..10 (three decimals)
        table = [0.008, 0.040, 0.167, 0.357, 0.643, 0.833, 0.960, 0.992, 1.000]
        cdf = np.cumsum(runs_distribution(10, 5))
        np.testing.assert_allclose(cdf[2:11], table, atol=5e-4)

    @pytest.mark.parametrize("length,makes", [(6, 2), (9, 4), (11, 6), (12, 1), (7, 7)])
    def test_against_brute_force(self, length, makes):
        counts = np.bincount([runs_of(x) for x in arrangements(length, makes)], minlength=length + 1)
        np.testing.assert_allclose(runs_distribution(length, makes), counts / counts.sum(), atol=1e-15)

    def test_sessions_convolve(self):
        # two sessions: brute force over the product of their arrangements
        totals = [runs_of(a) + runs_of(b) for a in arrangements(5, 2) for b in arrangements(6, 3)]
        counts = np.bincount(totals)
        pmf = runs_distribution([5, 6], [2, 3])
        np.testing.assert_allclose(pmf[: counts.size], counts / counts.sum(), atol=1e-15)
        assert pmf[counts.size :].sum() == pytest.approx(0.0, abs=1e-15)


class TestRunsMoments:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`makes` must be from 0 to the session length"):
            runs_moments([4], [-1])

    @pytest.mark.parametrize("n1,n0", [(6, 4), (5, 5), (1, 9), (12, 3)])
    def test_against_wald_wolfowitz(self, n1, n0):
        # Wald & Wolfowitz (1940): mean 1 + 2 n1 n0 / n,
        # variance 2 n1 n0 (2 n1 n0 - n) / (n^2 (n - 1)); checked on the exact pmf
        n = n1 + n0
        mean, variance = runs_moments(n, n1)
        assert mean == pytest.approx(1 + 2 * n1 * n0 / n, abs=1e-12)
        assert variance == pytest.approx(2 * n1 * n0 * (2 * n1 * n0 - n) / (n**2 * (n - 1)), abs=1e-12)
        pmf = runs_distribution(n, n1)
        r = np.arange(pmf.size)
        assert (r * pmf).sum() == pytest.approx(mean, abs=1e-12)
        assert ((r - mean) ** 2 * pmf).sum() == pytest.approx(variance, abs=1e-12)

    def test_sessions_add(self):
        mean, variance = runs_moments([10, 4, 3], [6, 0, 2])
        parts = [runs_moments(n, m) for n, m in ((10, 6), (4, 0), (3, 2))]
        assert mean == pytest.approx(sum(p[0] for p in parts))
        assert variance == pytest.approx(sum(p[1] for p in parts))


class TestRunsTest:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`alternative` must be one of 'hot', 'cold', 'two-sided' \(got 'hto'\)"):
            runs_test([1, 0, 1], alternative="hto")
        with pytest.raises(ValueError, match=r"`method` must be one of 'auto', 'exact', 'normal' \(got 'fast'\)"):
            runs_test([1, 0, 1], method="fast")
        with pytest.raises(ValueError, match=r"`x` must be one season \(1-D\)"):
            runs_test(np.ones((2, 4)))

    def test_against_exact_example(self):
        # CHECKS.md: P(R <= 3) = 0.04761905; the two-sided p is twice the smaller
        # tail here (DESIGN.md), 0.0952381, not the documentation's 0.07142857
        x = [1, 1, 1, 1, 0, 0, 0, 0, 1, 1]
        hot = runs_test(x)
        assert (hot.runs, hot.method) == (3, "exact")
        assert hot.p_value == pytest.approx(0.04761905, abs=5e-9)
        assert runs_test(x, alternative="two-sided").p_value == pytest.approx(0.0952381, abs=5e-8)
        # P(R >= 3) = 1 - P(R = 2) = 1 - 2/C(10, 6)
        assert runs_test(x, alternative="cold").p_value == pytest.approx(1 - 2 / 210, abs=1e-12)

    def test_against_statsmodels_runstest(self):
        # statsmodels runstest_1samp(correction=False): same z and two-sided p
        rng = np.random.default_rng(7)
        for n in (30, 80, 400):
            x = (rng.random(n) < 0.45).astype(float)
            z_sm, p_sm = runstest_1samp(x, cutoff=0.5, correction=False)
            res = runs_test(x, alternative="two-sided", method="normal")
            assert res.z == pytest.approx(z_sm, abs=1e-10)
            assert res.p_value == pytest.approx(p_sm, abs=1e-10)

    def test_stratified_sums_sessions(self):
        x = [1, 1, 0, 0, 1, 0, 1, 1, 1, 0, 0, 1]
        offsets = [0, 5, 12]
        res = runs_test(x, offsets, method="normal")
        mean, variance = runs_moments([5, 7], [3, 4])
        assert res.runs == runs_of(x[:5]) + runs_of(x[5:])
        assert res.expected == pytest.approx(mean) and res.variance == pytest.approx(variance)
        assert res.z == pytest.approx((res.runs - mean) / math.sqrt(variance))
        exact = runs_test(x, offsets, method="exact")
        assert exact.p_value == pytest.approx(runs_distribution([5, 7], [3, 4])[: res.runs + 1].sum())

    def test_exact_and_normal_agree_for_large_samples(self):
        rng = np.random.default_rng(8)
        x = (rng.random(900) < 0.5).astype(int)
        offsets = np.arange(0, 901, 30)
        exact = runs_test(x, offsets, method="exact")
        normal = runs_test(x, offsets, method="normal")
        # the normal approximation's error at n = 900 is well under 0.02
        assert exact.p_value == pytest.approx(normal.p_value, abs=0.02)

    def test_degenerate_sessions_have_no_p_value(self):
        res = runs_test([1, 1, 0, 0], [0, 2, 4])
        assert res.p_value is None and res.z is None
        assert "cannot vary" in res.reason

    def test_views(self):
        res = runs_test([1, 1, 1, 1, 0, 0, 0, 0, 1, 1])
        assert res.to_frame().loc[0, "runs"] == 3
        assert set(res.to_dict()) == {"z", "p_value", "reason"}
        assert "1. Chance alone produces many streaks" in res.summary()


class TestLongestRunDistribution:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`makes` must be from 0 to `length` = 4 \(got 5\)"):
            longest_run_distribution(4, 5)
        with pytest.raises(ValueError, match=r"`length` must be an integer >= 1 \(got 0\)"):
            longest_run_distribution(0, 0)

    @pytest.mark.parametrize("length,makes", [(1, 1), (5, 0), (8, 3), (10, 6), (12, 9), (13, 13)])
    def test_against_brute_force(self, length, makes):
        counts = np.bincount([longest_of(x) for x in arrangements(length, makes)], minlength=makes + 1)
        np.testing.assert_allclose(longest_run_distribution(length, makes), counts / counts.sum(), atol=1e-15)

    def _tail_fair(self, n, r):
        """P(a run of >= r makes in n fair attempts), mixing over the number of makes."""
        total = Fraction(0)
        for makes in range(n + 1):
            pmf = longest_run_distribution(n, makes)
            total += Fraction(math.comb(n, makes), 2**n) * Fraction(float(pmf[r:].sum()))
        return float(total)

    def test_against_feller_success_runs(self):
        # Feller, Vol. 1, ch. XIII (success runs), fair attempts, exact values:
        # a run of >= 4 makes in 10 attempts: 251/1024; >= 5 in 20: 32751/131072;
        # >= 5 in 50: 0.551875
        assert self._tail_fair(10, 4) == pytest.approx(251 / 1024, abs=1e-12)
        assert self._tail_fair(20, 5) == pytest.approx(32751 / 131072, abs=1e-12)
        assert self._tail_fair(50, 5) == pytest.approx(0.551875, abs=5e-7)

    def test_against_oeis_a119706(self):
        # OEIS A119706: expected longest run of successes in 20 fair trials is
        # 3910398 / 2**20 = 3.729246...
        n = 20
        expected = sum(
            math.comb(n, m) / 2**n * float((np.arange(m + 1) * longest_run_distribution(n, m)).sum())
            for m in range(n + 1))
        assert expected == pytest.approx(3910398 / 2**20, abs=1e-12)


class TestSerialCorrelation:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`max_lag` must be an integer >= 1 \(got 0\)"):
            serial_correlation([1, 0, 1], max_lag=0)
        with pytest.raises(ValueError, match=r"`alternative` must be one of 'hot', 'cold', 'two-sided' \(got 'up'\)"):
            serial_correlation([1, 0, 1], alternative="up")

    def test_against_statsmodels_acf(self):
        # one session: the usual sample autocorrelations (statsmodels acf)
        x = (np.random.default_rng(9).random(50) < 0.5).astype(float)
        res = serial_correlation(x, max_lag=3)
        np.testing.assert_allclose(res.correlation, acf(x, nlags=3)[1:], atol=1e-12)
        assert res.pairs.tolist() == [49, 48, 47]

    def test_naive_z_and_direction(self):
        x = [1, 1, 1, 0, 0, 0, 1, 1, 1, 0, 0, 0]
        res = serial_correlation(x, [0, 6, 12], alternative="hot")
        r = float(res.correlation[0])
        assert r > 0
        assert float(res.z[0]) == pytest.approx(r * math.sqrt(10))
        cold = serial_correlation(x, [0, 6, 12], alternative="cold")
        assert float(res.p_value[0]) + float(cold.p_value[0]) == pytest.approx(1.0)
        assert "1. Chance alone" in res.summary() and list(res.to_frame().columns)[:3] == [
            "lag", "correlation", "pairs"]


class TestSeasonLongestRunDistribution:
    def test_validation(self):
        from streakwise.analysis.runs import season_longest_run_distribution

        with pytest.raises(ValueError, match="0 <= makes <= attempts"):
            season_longest_run_distribution([3], [4])
        with pytest.raises(ValueError, match="of the same length"):
            season_longest_run_distribution([3, 4], [1])

    def test_against_enumeration(self):
        # exact: every arrangement of each game's makes equally likely, games independent
        import itertools

        from streakwise.analysis.runs import season_longest_run_distribution

        games = [(5, 3), (4, 2), (3, 1)]
        arrangements = [
            [a for a in itertools.product((0, 1), repeat=n) if sum(a) == m] for n, m in games
        ]
        counts = np.zeros(4)
        for combo in itertools.product(*arrangements):
            longest = 0
            for a in combo:
                run = 0
                for v in a:
                    run = run + 1 if v else 0
                    longest = max(longest, run)
            counts[longest] += 1
        np.testing.assert_allclose(season_longest_run_distribution([5, 4, 3], [3, 2, 1]), counts / counts.sum(), atol=1e-12)
