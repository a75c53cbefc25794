"""Tests for streakwise.analysis.streaks.

References:

- exact enumeration of every outcome sequence (all 2**n) against the worked
  examples and the exact values of Miller & Sanjurjo (2018), kept as fractions;
- an exact dynamic programme over (run state, counts), written here
  independently of the module, for n = 100 attempts, where enumeration is out
  of reach;
- a plain-Python reference count (one attempt at a time) for the batched
  kernel;
- statsmodels' ``acf`` for the lag-1 autocorrelation of one session.

Monte Carlo checks use 4 standard errors, each estimated from independent
replicates.
"""

import itertools
from fractions import Fraction

import numpy as np
import pytest
from statsmodels.tsa.stattools import acf

from streakwise.analysis.sequences import PlayerSequences
from streakwise.analysis.streaks import (
    conditional_rates,
    count_runs,
    lag1_correlation,
    longest_run,
    streak_counts,
)

N_SE = 4


# ---------------------------------------------------------------------------
# Independent references
# ---------------------------------------------------------------------------


def all_sequences(n):
    """Every 0/1 sequence of length n, one per row (int8)."""
    return np.array(list(itertools.product([0, 1], repeat=n)), dtype=np.int8)


def reference_counts(x, offsets, max_k):
    """One attempt at a time, in plain Python: the definitions as written."""
    out = {"mm": [0] * max_k, "am": [0] * max_k, "mx": [0] * max_k, "ax": [0] * max_k,
           "runs": 0, "longest": 0}
    for start, stop in zip(offsets[:-1], offsets[1:]):
        game = [int(v) for v in x[start:stop]]
        out["runs"] += 1 + sum(game[t] != game[t - 1] for t in range(1, len(game)))
        run = 0
        for value in game:
            run = run + 1 if value else 0
            out["longest"] = max(out["longest"], run)
        for t in range(len(game)):
            for k in range(1, max_k + 1):
                if t >= k and all(game[t - j] == 1 for j in range(1, k + 1)):
                    out["am"][k - 1] += 1
                    out["mm"][k - 1] += game[t]
                if t >= k and all(game[t - j] == 0 for j in range(1, k + 1)):
                    out["ax"][k - 1] += 1
                    out["mx"][k - 1] += game[t]
    return out


def miller_sanjurjo_dp(n, k):
    """Exact i.i.d. (p = 1/2) expectations of the rate after k makes and of D_k.

    Dynamic programme over the attempts, state = (kind and length, capped at k,
    of the current run; makes after k makes; misses after k makes; whether any
    attempt has followed k misses). Returns
    (E[rate after k makes | defined], E[D_k | both rates defined]); the second
    uses the make/miss symmetry at p = 1/2: the rate after k misses of a
    sequence is 1 - (rate after k makes) of its mirror image.
    """
    size = n + 1
    states = 2 * k + 1  # 0 start, 1..k run of makes, k+1..2k run of misses
    law = np.zeros((states, size, size, 2))
    law[0, 0, 0, 0] = 1.0
    for _ in range(n):
        new = np.zeros_like(law)
        for s in range(states):
            current = law[s]
            after_makes = s == k
            after_misses = s == 2 * k
            to_make = min(s + 1, k) if 1 <= s <= k else 1
            to_miss = min(s + 1, 2 * k) if s > k else k + 1
            if after_makes:
                new[to_make, 1:] += 0.5 * current[:-1]  # a make after k makes
                new[to_miss, :, 1:] += 0.5 * current[:, :-1]  # a miss after k makes
            elif after_misses:
                folded = current.sum(axis=-1)
                new[to_make, :, :, 1] += 0.5 * folded
                new[to_miss, :, :, 1] += 0.5 * folded
            else:
                new[to_make] += 0.5 * current
                new[to_miss] += 0.5 * current
        law = new
    joint = law.sum(axis=0)
    makes = np.arange(size)[:, None]
    attempts = makes + np.arange(size)[None, :]
    rate = np.divide(makes, attempts, out=np.zeros(attempts.shape), where=attempts > 0)
    defined = attempts > 0
    either = joint.sum(axis=-1)
    expected_rate = (either * rate).sum() / either[defined].sum()
    both = joint[..., 1] * defined
    expected_both = (joint[..., 1] * rate).sum() / both.sum()
    return expected_rate, 2 * expected_both - 1


def exact_iid_average(n, k, statistic, p=Fraction(1, 2)):
    """E[statistic | defined] over i.i.d. sequences, exactly, from the module's counts."""
    x = all_sequences(n)
    counts = streak_counts(x, max_k=k)
    total = weight = Fraction(0)
    for i in range(len(x)):
        mm, am = int(counts.makes_after_makes[i, k - 1]), int(counts.attempts_after_makes[i, k - 1])
        mx, ax = int(counts.makes_after_misses[i, k - 1]), int(counts.attempts_after_misses[i, k - 1])
        value = statistic(mm, am, mx, ax)
        if value is None:
            continue
        makes = int(x[i].sum())
        w = p**makes * (1 - p) ** (n - makes)
        total += w * value
        weight += w
    return total / weight


def rate_after_makes(mm, am, mx, ax):
    return Fraction(mm, am) if am else None


def difference(mm, am, mx, ax):
    return Fraction(mm, am) - Fraction(mx, ax) if am and ax else None


# ---------------------------------------------------------------------------
# streak_counts
# ---------------------------------------------------------------------------


class TestStreakCounts:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`x` must hold only 0 \(miss\) and 1 \(make\) \(got 2\)"):
            streak_counts([0, 1, 2])
        with pytest.raises(ValueError, match="`x` must have the attempts on its last axis"):
            streak_counts(1)
        with pytest.raises(ValueError, match=r"`x` must hold 0/1 outcomes \(got dtype <U1\)"):
            streak_counts(["a", "b"])
        with pytest.raises(ValueError, match="`offsets` must start at 0 and end at the number of attempts 4"):
            streak_counts([1, 0, 1, 1], [0, 2, 5])
        with pytest.raises(ValueError, match="`offsets` must be strictly increasing"):
            streak_counts([1, 0, 1, 1], [0, 2, 2, 4])
        with pytest.raises(ValueError, match="`offsets` must be a 1-D integer array"):
            streak_counts([1, 0, 1, 1], [0.0, 4.0])
        with pytest.raises(ValueError, match=r"`max_k` must be an integer from 1 to 8 \(got 9\)"):
            streak_counts([1, 0], max_k=9)
        with pytest.raises(ValueError, match=r"`max_k` must be an integer \(got 2.0\)"):
            streak_counts([1, 0], max_k=2.0)
        with pytest.raises(ValueError, match=r"`per_session` must be True or False \(got 'yes'\)"):
            streak_counts([1, 0], per_session="yes")

    def test_windows_overlap(self):
        # five makes then a miss: attempts 4, 5 and 6 all follow three makes
        c = streak_counts([1, 1, 1, 1, 1, 0], max_k=3)
        assert c.attempts_after_makes.tolist() == [5, 4, 3]
        assert c.makes_after_makes.tolist() == [4, 3, 2]

    def test_streaks_never_cross_sessions(self):
        x = [1, 1, 1, 1, 1, 1]
        one = streak_counts(x, [0, 6], max_k=3)
        two = streak_counts(x, [0, 3, 6], max_k=3)
        assert one.attempts_after_makes.tolist() == [5, 4, 3]
        assert two.attempts_after_makes.tolist() == [4, 2, 0]
        assert int(two.runs) == 2 and int(two.longest_run) == 3

    def test_hand_count(self):
        c = streak_counts([1, 1, 1, 0, 1, 1, 0, 0], [0, 5, 8], max_k=2)
        assert c.makes_after_makes.tolist() == [2, 1]
        assert c.attempts_after_makes.tolist() == [4, 2]
        assert c.makes_after_misses.tolist() == [1, 0]
        assert c.attempts_after_misses.tolist() == [2, 0]
        assert (int(c.runs), int(c.longest_run), int(c.makes), int(c.attempts)) == (5, 3, 5, 8)

    def test_against_plain_python_reference(self):
        rng = np.random.default_rng(1)
        for _ in range(40):
            lengths = rng.integers(1, 12, size=rng.integers(1, 6))
            offsets = np.concatenate([[0], np.cumsum(lengths)])
            x = (rng.random(offsets[-1]) < rng.uniform(0.2, 0.8)).astype(np.int8)
            c = streak_counts(x, offsets, max_k=4)
            ref = reference_counts(x, offsets, 4)
            assert c.makes_after_makes.tolist() == ref["mm"]
            assert c.attempts_after_makes.tolist() == ref["am"]
            assert c.makes_after_misses.tolist() == ref["mx"]
            assert c.attempts_after_misses.tolist() == ref["ax"]
            assert int(c.runs) == ref["runs"] and int(c.longest_run) == ref["longest"]

    def test_batch_equals_one_at_a_time(self):
        rng = np.random.default_rng(2)
        offsets = np.array([0, 7, 9, 20])
        batch = (rng.random((3, 5, 20)) < 0.5).astype(np.int8)
        together = streak_counts(batch, offsets, max_k=3)
        for i, j in itertools.product(range(3), range(5)):
            alone = streak_counts(batch[i, j], offsets, max_k=3)
            for name in ("makes_after_makes", "attempts_after_makes", "makes_after_misses",
                         "attempts_after_misses", "runs", "longest_run", "lag1_numerator"):
                np.testing.assert_allclose(getattr(together, name)[i, j], getattr(alone, name))

    def test_per_session_adds_up(self):
        rng = np.random.default_rng(3)
        offsets = np.array([0, 4, 15, 16, 30])
        x = (rng.random(30) < 0.5).astype(np.int8)
        per = streak_counts(x, offsets, max_k=2, per_session=True)
        total = streak_counts(x, offsets, max_k=2)
        assert per.attempts_after_makes.shape == (4, 2)
        np.testing.assert_array_equal(per.attempts_after_makes.sum(axis=0), total.attempts_after_makes)
        assert int(per.runs.sum()) == int(total.runs)
        assert int(per.longest_run.max()) == int(total.longest_run)
        assert per.lag1_numerator.sum() == pytest.approx(float(total.lag1_numerator), abs=1e-12)

    def test_player_sequences_input(self):
        made = np.array([1, 0, 1, 1, 1], dtype=np.int8)
        seqs = PlayerSequences("a", np.array(["g1", "g2"]), np.array(["g1", "g2"]), made,
                               np.array([0, 2, 5]))
        assert int(streak_counts(seqs).runs) == 3


# ---------------------------------------------------------------------------
# conditional_rates
# ---------------------------------------------------------------------------


class TestConditionalRates:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`max_k` must be an integer from 1 to 8 \(got 0\)"):
            conditional_rates([1, 0, 1], max_k=0)
        with pytest.raises(ValueError, match=r"`x` must hold only 0 \(miss\) and 1 \(make\) \(got nan\)"):
            conditional_rates([1.0, np.nan])

    def test_undefined_rates_are_nan(self):
        r = conditional_rates([1, 1, 1, 1], max_k=2)
        assert r.after_makes.tolist() == [1.0, 1.0]
        assert np.isnan(r.after_misses).all() and np.isnan(r.difference).all()

    def test_pooled_is_a_ratio_of_sums_and_session_average_differs(self):
        # session 1 (1 1 0): after a make 1 of 2; session 2 (1 0 1 0 1 0): 0 of 3
        x = [1, 1, 0, 1, 0, 1, 0, 1, 0]
        r = conditional_rates(x, [0, 3, 9], max_k=1)
        assert r.makes_after_makes[0] == 1 and r.attempts_after_makes[0] == 5
        assert r.after_makes[0] == pytest.approx(1 / 5)
        # the per-session rates 1/2 and 0/3, averaged
        assert r.session_average_after_makes[0] == pytest.approx((1 / 2 + 0 / 3) / 2)
        assert r.make_rate == pytest.approx(5 / 9)

    def test_against_miller_sanjurjo_worked_examples(self):
        # Miller & Sanjurjo (2018), Econometrica 86(6): worked examples, fair
        # i.i.d. attempts, expected rate after a make over sequences where defined
        assert exact_iid_average(3, 1, rate_after_makes) == Fraction(5, 12)
        assert exact_iid_average(4, 1, rate_after_makes) == Fraction(17, 42)

    @pytest.mark.parametrize("n", [10, 12, 14])
    @pytest.mark.parametrize("k", [1, 2, 3])
    def test_exact_enumeration_agrees_with_the_dynamic_programme(self, n, k):
        # the DP (independent code) and the module's counts over all 2**n sequences
        expected_rate, expected_difference = miller_sanjurjo_dp(n, k)
        assert float(exact_iid_average(n, k, rate_after_makes)) == pytest.approx(expected_rate, abs=1e-12)
        assert float(exact_iid_average(n, k, difference)) == pytest.approx(expected_difference, abs=1e-12)

    def test_against_miller_sanjurjo_n100_k3(self):
        # Miller & Sanjurjo (2018), Econometrica 86(6): 100 fair attempts, k = 3:
        # expected rate after three makes ~0.46 (exact 0.460323) and expected
        # D_3 ~ -0.08 (exact -0.079386), by the exact DP
        expected_rate, expected_difference = miller_sanjurjo_dp(100, 3)
        assert expected_rate == pytest.approx(0.460323, abs=1e-6)
        assert expected_difference == pytest.approx(-0.079386, abs=1e-6)

    def test_monte_carlo_n100_k3_agrees_with_exact(self):
        # the module's rates on simulated fair sequences, within 4 standard errors
        # (SE from 20 independent blocks of 5,000 sequences)
        rng = np.random.default_rng(100)
        rate_means, difference_means = [], []
        for _ in range(20):
            x = rng.random((5000, 100)) < 0.5
            r = conditional_rates(x, max_k=3)
            rate_means.append(np.nanmean(r.after_makes[:, 2]))
            d = r.difference[:, 2]
            difference_means.append(np.nanmean(d))
        for values, target in ((rate_means, 0.460323), (difference_means, -0.079386)):
            mean = np.mean(values)
            se = np.std(values, ddof=1) / np.sqrt(len(values))
            assert abs(mean - target) < N_SE * se

    @pytest.mark.parametrize("n", [3, 5, 8, 11])
    @pytest.mark.parametrize("p", [Fraction(1, 2), Fraction(3, 10)])
    def test_expected_d1_iid_identity(self, n, p):
        # CHECKS.md identity (exchangeability): under i.i.d. attempts the expected
        # D_1, where defined, is -1/(n - 1) for every p; exact enumeration
        assert exact_iid_average(n, 1, difference, p) == Fraction(-1, n - 1)

    def test_batched_rates_shape(self):
        x = np.random.default_rng(4).random((6, 40)) < 0.5
        r = conditional_rates(x, np.arange(0, 41, 10), max_k=3)
        assert r.after_makes.shape == (6, 3) and r.make_rate.shape == (6,)
        frame = r.to_frame()
        assert list(frame.columns[:4]) == ["sequence", "k", "attempts", "makes"]
        assert len(frame) == 18

    def test_views(self):
        r = conditional_rates([1, 1, 0, 1, 0, 0, 1, 1, 1, 0], [0, 5, 10], max_k=2)
        frame = r.to_frame()
        assert frame["k"].tolist() == [1, 2]
        assert {"after_makes", "after_misses", "difference", "session_average_difference"} <= set(frame)
        text = r.summary()
        assert "1. Chance alone produces many streaks" in text
        assert "2. Small samples mislead" in text and "3. Streakiness is not a cause" in text


# ---------------------------------------------------------------------------
# lag1_correlation, count_runs, longest_run
# ---------------------------------------------------------------------------


class TestLag1Correlation:
    def test_input_validation(self):
        with pytest.raises(ValueError, match="`offsets` must start at 0"):
            lag1_correlation([1, 0, 1], [1, 3])

    def test_against_statsmodels_acf(self):
        # one session: the usual sample autocorrelation (statsmodels acf, lag 1)
        rng = np.random.default_rng(5)
        for _ in range(10):
            x = (rng.random(int(rng.integers(5, 60))) < 0.4).astype(float)
            if x.min() == x.max():
                continue
            assert float(lag1_correlation(x)) == pytest.approx(acf(x, nlags=1)[1], abs=1e-12)

    def test_pooled_within_sessions(self):
        rng = np.random.default_rng(6)
        x = (rng.random(30) < 0.5).astype(float)
        offsets = [0, 10, 30]
        numerator = denominator = 0.0
        for a, b in zip(offsets[:-1], offsets[1:]):
            centred = x[a:b] - x[a:b].mean()
            numerator += (centred[:-1] * centred[1:]).sum()
            denominator += (centred**2).sum()
        assert float(lag1_correlation(x, offsets)) == pytest.approx(numerator / denominator, abs=1e-12)

    def test_undefined_when_no_session_varies(self):
        assert np.isnan(lag1_correlation([1, 1, 0, 0], [0, 2, 4]))


class TestCountRuns:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`x` must hold only 0 \(miss\) and 1 \(make\)"):
            count_runs([1, -1])

    def test_examples(self):
        # CHECKS.md runs example: 1 1 1 1 0 0 0 0 1 1 has R = 3
        assert int(count_runs([1, 1, 1, 1, 0, 0, 0, 0, 1, 1])) == 3
        assert int(count_runs([1, 1, 0, 0, 1, 1], [0, 3, 6])) == 4
        assert count_runs(np.ones((4, 6)), [0, 2, 6]).tolist() == [2, 2, 2, 2]


class TestLongestRun:
    def test_input_validation(self):
        with pytest.raises(ValueError, match="`offsets` must be strictly increasing"):
            longest_run([1, 1], [0, 0, 2])

    def test_examples(self):
        assert int(longest_run([0, 0, 0])) == 0
        assert int(longest_run([1, 1, 1, 0, 1, 1])) == 3
        assert int(longest_run([1, 1, 1, 0, 1, 1], [0, 2, 6])) == 2

    def test_against_brute_force(self):
        x = all_sequences(10)
        expected = [max((len(list(g)) for v, g in itertools.groupby(row) if v == 1), default=0)
                    for row in x.tolist()]
        assert longest_run(x).tolist() == expected
