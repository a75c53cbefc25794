"""Tests for streakwise.analysis.permutation (and the result views and figures).

References and tolerances:

- exact enumeration by brute force (itertools over every within-session
  arrangement, statistics recomputed in plain Python) for the exact engine;
- the identity E[rate after a make | n1 makes of n] = (n1 - 1)/(n - 1) under
  the permutation null (CHECKS.md; exchangeability);
- Wald & Wolfowitz's (1940) runs moments and the exact runs and longest-run
  distributions for the random engine;
- ``scipy.stats.permutation_test`` on one session;
- seeded calibration simulations.

Every Monte Carlo tolerance is N_SE = 4 standard errors derived from the number
of draws (a p-value from m draws has SE sqrt(p(1 - p)/m); a mean of m draws has
SE sd/sqrt(m); two independent estimates differ with the root sum of squares).
"""

import itertools
import json
import math

import numpy as np
import pandas as pd
import pytest
from scipy import special, stats

from streakwise.analysis.figures import OKABE_ITO, null_distribution_figure, rates_figure
from streakwise.analysis.permutation import (
    HOT_DIRECTION,
    _Columns,
    _expected_columns,
    _patterns,
    _table,
    arrangement_count,
    permutation_test,
    player_seed_sequence,
)
from streakwise.analysis.runs import longest_run_distribution, runs_distribution, runs_moments
from streakwise.analysis.sequences import PlayerSequences
from streakwise.analysis.simulate import (
    make_probability,
    simulate_bernoulli,
    simulate_markov,
    simulate_session_lengths,
)
from streakwise.analysis.streaks import streak_counts

N_SE = 4
ALPHA = 0.05


# ---------------------------------------------------------------------------
# Helpers (independent of the module)
# ---------------------------------------------------------------------------


def reference_statistics(season):
    """Plain-Python D_1, rates after one make / miss, runs, longest run, lag-1.

    ``season`` is a list of sessions (lists of 0/1).
    """
    mm = am = mx = ax = runs = longest = 0
    numerator = denominator = 0.0
    for game in season:
        runs += 1 + sum(a != b for a, b in zip(game, game[1:]))
        run = 0
        for value in game:
            run = run + 1 if value else 0
            longest = max(longest, run)
        for previous, value in zip(game, game[1:]):
            if previous:
                am += 1
                mm += value
            else:
                ax += 1
                mx += value
        mean = sum(game) / len(game)
        numerator += sum((a - mean) * (b - mean) for a, b in zip(game, game[1:]))
        denominator += sum((a - mean) ** 2 for a in game)
    after_makes = mm / am if am else math.nan
    after_misses = mx / ax if ax else math.nan
    return {
        ("difference", 1): after_makes - after_misses,
        ("after_makes", 1): after_makes,
        ("after_misses", 1): after_misses,
        ("runs", None): runs,
        ("longest_run", None): longest,
        ("lag1", None): numerator / denominator if denominator else math.nan,
    }


def every_arrangement(lengths, makes):
    """Every within-session arrangement of a season (list of sessions)."""
    per_session = []
    for length, made in zip(lengths, makes):
        games = []
        for positions in itertools.combinations(range(length), made):
            game = [0] * length
            for p in positions:
                game[p] = 1
            games.append(game)
        per_session.append(games)
    return [list(season) for season in itertools.product(*per_session)]


def season_of(sessions):
    made = np.concatenate([np.asarray(s, dtype=np.int8) for s in sessions])
    offsets = np.concatenate([[0], np.cumsum([len(s) for s in sessions])])
    return made, offsets


def form_player(rng, n_games=30, sigma=0.6, base=0.45):
    """A shooter with no hot hand whose make probability varies from game to game."""
    lengths = simulate_session_lengths(n_games, mean=15, low=5, high=25, rng=rng)
    offsets = np.concatenate([[0], np.cumsum(lengths)])
    form = rng.normal(0.0, sigma, n_games)
    probability = make_probability(special.logit(base) + np.repeat(form, lengths))
    return simulate_bernoulli(probability, rng=rng).astype(np.int8), offsets


def mc_p_tolerance(p, *draws):
    """N_SE standard errors of the difference of independent MC p-values."""
    p = min(max(p, 1.0 / max(draws)), 1.0 - 1.0 / max(draws))
    return N_SE * math.sqrt(sum(p * (1 - p) / m for m in draws)) + sum(1.0 / (m + 1) for m in draws)


# ---------------------------------------------------------------------------
# Seeds and counts
# ---------------------------------------------------------------------------


class TestPlayerSeedSequence:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`seed` must be a non-negative integer \(got -1\)"):
            player_seed_sequence(-1, "a")
        with pytest.raises(ValueError, match=r"`seed` must be a non-negative integer \(got 1.5\)"):
            player_seed_sequence(1.5, "a")
        with pytest.raises(ValueError, match=r"`player` must be a string or None \(got 5\)"):
            player_seed_sequence(1, 5)

    def test_stable_and_player_specific(self):
        # a stable hash (SHA-256), not Python's salted hash(): a literal regression value
        assert player_seed_sequence(7, "p01").generate_state(2).tolist() == [2496138419, 3177170994]
        a = player_seed_sequence(7, "p01").generate_state(4)
        b = player_seed_sequence(7, "p02").generate_state(4)
        c = player_seed_sequence(8, "p01").generate_state(4)
        assert not np.array_equal(a, b) and not np.array_equal(a, c)


class TestArrangementCount:
    def test_input_validation(self):
        with pytest.raises(ValueError, match="`makes` must be from 0 to the session length"):
            arrangement_count([3], [4])
        with pytest.raises(ValueError, match="`lengths` and `makes` must be integer arrays"):
            arrangement_count([3, 4], [1])

    def test_product_of_binomials(self):
        assert arrangement_count([4, 5], [2, 1]) == 30
        assert arrangement_count([18] * 80, [9] * 80) == math.comb(18, 9) ** 80


# ---------------------------------------------------------------------------
# The engine
# ---------------------------------------------------------------------------


class TestPermutationTest:
    def test_input_validation(self):
        x = [1, 0, 1, 1, 0, 0]
        cases = [
            (dict(alternative="hto"), r"`alternative` must be one of 'hot', 'cold', 'two-sided' \(got 'hto'\)"),
            (dict(method="fast"), r"`method` must be one of 'auto', 'exact', 'random' \(got 'fast'\)"),
            (dict(permutations=0), r"`permutations` must be an integer >= 1 \(got 0\)"),
            (dict(batch=0), r"`batch` must be an integer >= 1 \(got 0\)"),
            (dict(rng=-3), r"`rng` must be None, a non-negative integer seed or a numpy Generator \(got -3\)"),
            (dict(rng="seed"), r"`rng` must be None, a non-negative integer seed or a numpy Generator"),
            (dict(confidence_level=1.5), r"`confidence_level` must be a number strictly between 0 and 1 \(got 1.5\)"),
            (dict(resamples=-1), r"`resamples` must be an integer >= 0 \(got -1\)"),
            (dict(keep_null="yes"), r"`keep_null` must be True or False \(got 'yes'\)"),
            (dict(max_k=9), r"`max_k` must be an integer from 1 to 8 \(got 9\)"),
            (dict(player=5), r"`player` must be a string or None \(got 5\)"),
        ]
        for kwargs, message in cases:
            with pytest.raises(ValueError, match=message):
                permutation_test(x, **kwargs)
        with pytest.raises(ValueError, match=r"`x` must be one season \(1-D\) for a test \(got shape \(2, 3\)\)"):
            permutation_test(np.ones((2, 3)))
        with pytest.raises(ValueError, match="`x` has no attempts"):
            permutation_test(np.zeros(0, dtype=int))
        with pytest.raises(ValueError, match="exact enumeration would need"):
            permutation_test(np.r_[np.ones(20), np.zeros(20)].astype(int), method="exact")

    @pytest.mark.parametrize("n,n1", [(6, 3), (10, 4), (12, 7), (14, 2), (14, 1)])
    def test_identity_rate_after_a_make(self, n, n1):
        # CHECKS.md identity (exchangeability): with n1 makes in n attempts, every
        # arrangement equally likely, E[rate after a make] = (n1 - 1)/(n - 1)
        x = np.r_[np.ones(n1), np.zeros(n - n1)].astype(int)
        res = permutation_test(x, rng=0, resamples=0)
        assert res.method == "exact" and res.permutations == math.comb(n, n1)
        assert res.test("after_makes", 1).null_mean == pytest.approx((n1 - 1) / (n - 1), abs=1e-12)

    def test_exact_null_against_brute_force(self):
        sessions = [[1, 1, 0, 0, 1], [0, 1, 1, 1, 0, 0], [1, 0, 0, 1]]
        made, offsets = season_of(sessions)
        res = permutation_test(made, offsets, max_k=1, rng=0, resamples=0)
        seasons = every_arrangement([5, 6, 4], [3, 3, 2])
        assert res.method == "exact" and res.permutations == len(seasons) == 10 * 20 * 6
        observed = reference_statistics(sessions)
        for key, test in ((k, res.test(*k)) for k in observed):
            values = np.array([reference_statistics(s)[key] for s in seasons], dtype=float)
            defined = values[~np.isnan(values)]
            np.testing.assert_allclose(np.sort(test.null_distribution), np.sort(defined), atol=1e-12)
            assert test.share_defined == pytest.approx(defined.size / values.size)
            assert test.observed == pytest.approx(observed[key], abs=1e-12)
            tol = 1e-12 + 1e-12 * abs(observed[key])
            greater = np.mean(defined >= observed[key] - tol)
            less = np.mean(defined <= observed[key] + tol)
            hot, cold = (greater, less) if HOT_DIRECTION[key[0]] == "greater" else (less, greater)
            assert test.p_hot == pytest.approx(hot, abs=1e-12)  # p = b / N
            assert test.p_cold == pytest.approx(cold, abs=1e-12)
            assert test.p_value == pytest.approx(hot, abs=1e-12)
            assert test.p_value_se == 0.0
            assert test.null_mean == pytest.approx(defined.mean(), abs=1e-12)
            np.testing.assert_allclose(test.null_band, np.quantile(defined, [0.025, 0.975]), atol=1e-12)
            assert test.corrected == pytest.approx(test.observed - test.null_mean, abs=1e-12)

    def test_exact_and_random_engines_agree(self):
        made, offsets = season_of([[1, 1, 1, 0, 0, 0, 1], [0, 1, 1, 0, 0, 0], [1, 1, 0, 0, 0]])
        exact = permutation_test(made, offsets, rng=1, resamples=0)
        m = 40_000
        random = permutation_test(made, offsets, rng=1, method="random", permutations=m, resamples=0)
        assert exact.method == "exact" and exact.permutations == 35 * 15 * 10
        assert random.method == "random"
        for e, r in zip(exact.tests, random.tests):
            if e.p_value is None:
                assert r.p_value is None
                continue
            defined = r.share_defined * m
            # the exact p is the truth; the random one is within N_SE of it
            assert abs(r.p_value - e.p_value) <= mc_p_tolerance(e.p_value, defined), e.statistic
            sd = float(np.std(e.null_distribution))
            assert abs(r.null_mean - e.null_mean) <= N_SE * sd / math.sqrt(defined) + 1e-12
            assert r.share_defined == pytest.approx(e.share_defined, abs=N_SE * math.sqrt(0.25 / m))

    @pytest.mark.parametrize("length,makes", [(15, 6), (30, 13), (35, 30), (80, 33)])
    def test_random_engine_against_exact_distributions(self, length, makes):
        # one session of each drawing method (table, two halves, shuffles): the
        # null of the runs and of the longest run against their exact laws,
        # and the identity for the rate after a make, within N_SE
        x = np.r_[np.ones(makes), np.zeros(length - makes)].astype(int)
        m = 60_000
        res = permutation_test(x, rng=3, method="random", permutations=m, resamples=0)
        for statistic, pmf in (("runs", runs_distribution(length, makes)),
                               ("longest_run", longest_run_distribution(length, makes))):
            draws = res.test(statistic).null_distribution.astype(int)
            frequency = np.bincount(draws, minlength=pmf.size) / m
            se = np.sqrt(pmf * (1 - pmf) / m)
            assert np.all(np.abs(frequency[: pmf.size] - pmf) <= N_SE * se + 1e-12), statistic
        after = res.test("after_makes", 1)
        sd = float(np.std(after.null_distribution))
        assert abs(after.null_mean - (makes - 1) / (length - 1)) <= N_SE * sd / math.sqrt(m)

    def test_mixed_season_runs_moments(self):
        # sessions of all three drawing methods together: summed runs have the
        # Wald-Wolfowitz mean and variance (sums over sessions)
        rng = np.random.default_rng(4)
        lengths = [5, 12, 18, 19, 25, 36, 40, 70]
        sessions = [(rng.random(n) < 0.45).astype(int).tolist() for n in lengths]
        sessions[2] = [1] * 18  # a session with a single arrangement
        made, offsets = season_of(sessions)
        m = 40_000
        res = permutation_test(made, offsets, rng=5, permutations=m, resamples=0)
        mean, variance = runs_moments(np.diff(offsets), [sum(s) for s in sessions])
        runs = res.test("runs").null_distribution
        assert abs(runs.mean() - mean) <= N_SE * math.sqrt(variance / m)
        # the sample variance's SE is about variance * sqrt(2 / (m - 1)) (near-normal sums)
        assert abs(runs.var() - variance) <= N_SE * variance * math.sqrt(2 / (m - 1))
        assert res.test("after_makes", 1).share_defined == 1.0

    @pytest.mark.parametrize("length", [14, 30])
    def test_against_scipy_permutation_test(self, length):
        # scipy.stats.permutation_test with permutation_type='pairings' and one
        # sample permutes the order of that sample: the within-session null of
        # one session. Same statistic (D_1, written here in plain numpy), same
        # null; both are Monte Carlo estimates with m draws, so p-values differ
        # by at most N_SE * sqrt(2 p (1 - p) / m) (+ the 1/(m+1) corrections)
        # and null means by N_SE * sd * sqrt(2 / m).
        rng = np.random.default_rng(length)
        x = np.r_[np.ones(length // 2), np.zeros(length - length // 2)]
        x = rng.permutation(x)
        x[: 4] = 1  # a little streak at the start

        def d1(sample, axis=-1):
            sample = np.moveaxis(sample, axis, -1)
            previous, current = sample[..., :-1], sample[..., 1:]
            after_makes = (previous * current).sum(-1) / previous.sum(-1)
            after_misses = ((1 - previous) * current).sum(-1) / (1 - previous).sum(-1)
            return after_makes - after_misses

        m = 20_000
        theirs = stats.permutation_test((x,), d1, permutation_type="pairings", vectorized=True,
                                        n_resamples=m, alternative="greater",
                                        rng=np.random.default_rng(1))
        ours = permutation_test(x.astype(int), rng=1, method="random", permutations=m, resamples=0)
        d = ours.test("difference", 1)
        assert d.observed == pytest.approx(float(theirs.statistic), abs=1e-12)
        assert abs(d.p_value - theirs.pvalue) <= mc_p_tolerance(theirs.pvalue, m, m)
        sd = float(np.std(theirs.null_distribution))
        assert abs(d.null_mean - float(np.mean(theirs.null_distribution))) <= N_SE * sd * math.sqrt(2 / m)

    def test_pooled_null_mean_is_not_the_average_of_session_means(self):
        # DESIGN.md: the pooled statistic is a ratio of sums; its null mean comes
        # from the permutation null itself (here exact), not from averaging the
        # sessions' exact means (m - 1)/(L - 1)
        sessions = [[1, 1, 0, 1, 1, 1], [0, 1, 0, 0, 0, 0, 1, 0]]
        made, offsets = season_of(sessions)
        res = permutation_test(made, offsets, rng=0, resamples=0, max_k=1)
        seasons = every_arrangement([6, 8], [5, 2])
        pooled = np.mean([reference_statistics(s)[("after_makes", 1)] for s in seasons])
        average = (4 / 5 + 1 / 7) / 2
        after = res.test("after_makes", 1)
        assert after.null_mean == pytest.approx(pooled, abs=1e-12)
        assert abs(after.null_mean - average) > 0.05

    def test_alternatives_and_two_sided(self):
        made, offsets = season_of([[1, 1, 1, 1, 0, 0, 0, 0, 1, 1], [0, 0, 1, 1, 1, 0, 0]])
        hot = permutation_test(made, offsets, rng=0, resamples=0, alternative="hot")
        cold = permutation_test(made, offsets, rng=0, resamples=0, alternative="cold")
        both = permutation_test(made, offsets, rng=0, resamples=0, alternative="two-sided")
        for h, c, b in zip(hot.tests, cold.tests, both.tests):
            if h.p_value is None:
                continue
            assert h.p_value == h.p_hot and c.p_value == c.p_cold == h.p_cold
            assert b.p_value == pytest.approx(min(1.0, 2 * min(h.p_hot, h.p_cold)))
        runs = hot.test("runs")  # hot = fewer runs
        assert runs.p_hot == pytest.approx(np.mean(runs.null_distribution <= runs.observed))
        misses = hot.test("after_misses", 1)  # hot = lower rate after misses
        assert misses.p_hot == pytest.approx(np.mean(misses.null_distribution <= misses.observed + 1e-12))

    def test_random_p_value_is_never_zero(self):
        made = np.r_[np.ones(30), np.zeros(30)].astype(int)  # as streaky as it gets
        res = permutation_test(made, rng=2, permutations=999, resamples=0)
        d = res.test("difference", 1)
        assert d.p_value == pytest.approx(1 / 1000)
        assert d.p_value_se == pytest.approx(math.sqrt(d.p_value * (1 - d.p_value) / 999))

    def test_undefined_statistics(self):
        # no session has two misses in a row: "after 2 misses" is undefined on the
        # observed season, but defined on the arrangements of session 1 whose two
        # misses are adjacent and not last (session 2 has one miss only)
        made, offsets = season_of([[1, 0, 1, 1, 0, 1, 1], [1, 1, 0, 1, 1]])
        res = permutation_test(made, offsets, rng=0, resamples=200, max_k=2)
        test = res.test("after_misses", 2)
        assert test.observed is None and test.p_value is None and test.interval is None
        assert test.reason.startswith("observed value undefined: no attempt followed 2 misses")

        def follows_two_misses(game):
            return any(game[t] == game[t + 1] == 0 for t in range(len(game) - 2))

        seasons = every_arrangement([7, 5], [5, 4])
        share = np.mean([follows_two_misses(s[0]) or follows_two_misses(s[1]) for s in seasons])
        assert share == pytest.approx(5 / 21)
        assert test.share_defined == pytest.approx(share)
        assert test.null_mean is not None
        assert res.test("difference", 2).reason.startswith("observed value undefined")
        assert res.test("after_makes", 2).share_defined == 1.0

    def test_degenerate_season_warns(self):
        made, offsets = season_of([[1, 1, 1], [0, 0], [1]])
        with pytest.warns(RuntimeWarning, match="the permutation null is a single arrangement"):
            res = permutation_test(made, offsets, rng=0, resamples=0)
        assert res.test("runs").p_value == 1.0
        assert res.test("lag1").reason.startswith("observed value undefined: every session is all makes")

    def test_seeds(self):
        made, offsets = form_player(np.random.default_rng(6))
        a = permutation_test(made, offsets, player="p1", rng=11, permutations=300)
        b = permutation_test(made, offsets, player="p1", rng=11, permutations=300)
        c = permutation_test(made, offsets, player="p2", rng=11, permutations=300)
        assert a.seed == 11
        d1 = lambda r: r.test("difference", 1)  # noqa: E731
        np.testing.assert_array_equal(d1(a).null_distribution, d1(b).null_distribution)
        assert d1(a).interval == d1(b).interval
        assert not np.array_equal(d1(a).null_distribution, d1(c).null_distribution)
        fresh = permutation_test(made, offsets, player="p1", rng=None, permutations=300)
        again = permutation_test(made, offsets, player="p1", rng=fresh.seed, permutations=300)
        assert isinstance(fresh.seed, int)
        np.testing.assert_array_equal(d1(fresh).null_distribution, d1(again).null_distribution)
        generator = permutation_test(made, offsets, rng=np.random.default_rng(1), permutations=300)
        assert generator.seed is None
        # the player id of a PlayerSequences selects the stream
        seqs = PlayerSequences("p1", np.arange(len(offsets) - 1), np.arange(len(offsets) - 1),
                               made, offsets)
        np.testing.assert_array_equal(
            d1(permutation_test(seqs, rng=11, permutations=300)).null_distribution,
            d1(a).null_distribution)

    def test_batch_and_keep_null(self):
        made, offsets = form_player(np.random.default_rng(7))
        small = permutation_test(made, offsets, rng=1, permutations=250, batch=7, keep_null=False)
        assert small.permutations == 250 and small.batch == 7
        assert all(t.null_distribution is None for t in small.tests)

    def test_intervals(self):
        made, offsets = form_player(np.random.default_rng(8), n_games=60)
        res = permutation_test(made, offsets, rng=3, permutations=2000, resamples=1000)
        for test in res.tests:
            if test.statistic == "longest_run":  # no valid bootstrap interval for a maximum
                assert test.interval is None and test.reason.startswith("no interval")
                continue
            low, high = test.interval
            assert low < test.corrected < high
        none = permutation_test(made, offsets, rng=3, permutations=200, resamples=0)
        assert all(t.interval is None for t in none.tests)

    def test_expected_counts_are_the_exact_permutation_means(self):
        # the closed-form means behind the intervals equal the means over every
        # arrangement (tables) for every count
        cols = _Columns(3)
        patterns = _patterns()
        table = _table(3)
        for length in (3, 7, 12):
            for makes in range(length + 1):
                start = patterns.base[length] + patterns.starts[length, makes]
                rows = table[start : start + math.comb(length, makes), : cols.width - 1].astype(float)
                expected = _expected_columns(np.array([length]), np.array([makes]), cols)[0]
                expected[cols.ends] = rows[:, cols.ends].mean()  # not a summed statistic
                np.testing.assert_allclose(rows.mean(axis=0), expected, atol=1e-12)

    def test_tables_match_streak_counts(self):
        cols = _Columns(4)
        patterns = _patterns()
        table = _table(4)
        for length in (1, 2, 9, 13):
            start = patterns.base[length]
            masks = patterns.masks[start : start + 2**length]
            x = ((masks[:, None] >> np.arange(length, dtype=np.uint64)) & np.uint64(1)).astype(np.int8)
            c = streak_counts(x, max_k=4)
            rows = table[start : start + 2**length]
            np.testing.assert_array_equal(rows[:, cols.makes_after_makes], c.makes_after_makes)
            np.testing.assert_array_equal(rows[:, cols.attempts_after_makes], c.attempts_after_makes)
            np.testing.assert_array_equal(rows[:, cols.makes_after_misses], c.makes_after_misses)
            np.testing.assert_array_equal(rows[:, cols.attempts_after_misses], c.attempts_after_misses)
            np.testing.assert_array_equal(rows[:, cols.runs], c.runs)
            np.testing.assert_array_equal(rows[:, cols.longest], c.longest_run)
            assert (np.diff(np.bitwise_count(masks).astype(int)) >= 0).all()  # sorted by makes


@pytest.fixture(scope="module")
def result():
    made, offsets = form_player(np.random.default_rng(9))
    return permutation_test(made, offsets, player="p9", rng=4, permutations=500)


class TestResultViews:
    def test_to_frame(self, result):
        frame = result.to_frame()
        assert list(frame.columns) == [
            "player", "statistic", "k", "observed", "null_mean", "corrected", "null_band_low",
            "null_band_high", "interval_low", "interval_high", "share_defined", "p_value",
            "p_value_se", "p_hot", "p_cold", "hot_direction", "reason", "alternative", "method",
            "permutations", "seed"]
        assert frame["statistic"].tolist()[:3] == ["difference", "after_makes", "after_misses"]
        assert len(frame) == 3 * 3 + 3 and pd.isna(frame.loc[9, "k"])

    def test_to_dict_layout(self, result):
        # issue 4, item 7: the player entry's keys (plus a "reason" where a value
        # can be undefined)
        entry = result.to_dict()
        assert set(entry) == {"player", "attempts", "sessions", "make_rate", "streak", "runs",
                              "longest_run", "lag1", "wald_wolfowitz"}
        streak = entry["streak"][0]
        assert set(streak) == {"k", "after_makes", "after_misses", "difference", "null_mean",
                               "corrected", "null_band", "interval", "share_defined", "p_value",
                               "p_value_se", "q_value", "reason"}
        assert set(streak["after_makes"]) == {"makes", "attempts", "rate", "reason"}
        for key in ("runs", "longest_run", "lag1"):
            assert set(entry[key]) == {"observed", "null_mean", "p_value", "reason"}
        assert set(entry["wald_wolfowitz"]) == {"z", "p_value", "reason"}
        assert [s["k"] for s in entry["streak"]] == [1, 2, 3]
        json.dumps(entry)  # plain Python types only

    def test_to_dict_undefined_is_null_with_reason(self):
        made, offsets = season_of([[1, 0, 1, 1, 0, 1, 1], [1, 1, 0, 1, 1]])
        entry = permutation_test(made, offsets, rng=0, max_k=2).to_dict()
        k2 = entry["streak"][1]
        assert k2["after_misses"]["rate"] is None
        assert k2["after_misses"]["reason"] == "no attempt followed 2 misses"
        assert k2["difference"] is None and k2["p_value"] is None and k2["reason"]

    def test_summary_has_numbered_caveats(self, result):
        text = result.summary()
        assert "Streak test for p9" in text
        assert "1. Chance alone produces many streaks" in text
        assert "2. Small samples mislead" in text
        assert "3. Streakiness is not a cause" in text
        assert "not a confidence" in text


class TestRatesFigure:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`result` must be a StreakTestResult \(got 3\)"):
            rates_figure(3)

    def test_figure(self):
        made, offsets = form_player(np.random.default_rng(10))
        res = permutation_test(made, offsets, rng=1, permutations=300, max_k=4)
        fig = rates_figure(res)
        assert [t.name for t in fig.data] == [
            "after k makes", "null after k makes", "after k misses", "null after k misses"]
        assert list(fig.data[0].y) == pytest.approx([res.test("after_makes", k).observed for k in range(1, 5)])
        assert list(fig.data[1].y) == pytest.approx([res.test("after_makes", k).null_mean for k in range(1, 5)])
        colours = {t.marker.color for t in fig.data}
        assert colours <= set(OKABE_ITO.values())
        assert not colours & {"red", "blue", "#FF0000", "#0000FF"}


class TestNullDistributionFigure:
    def test_input_validation(self):
        made, offsets = form_player(np.random.default_rng(11))
        res = permutation_test(made, offsets, rng=1, permutations=200)
        with pytest.raises(ValueError, match=r"`statistic` must be one of 'difference', .* \(got 'D1'\)"):
            null_distribution_figure(res, "D1")
        with pytest.raises(ValueError, match=r"`k` must be None for statistic 'runs' \(got 1\)"):
            null_distribution_figure(res, "runs", 1)
        with pytest.raises(ValueError, match=r"`k` must be an integer from 1 to 3 \(got 4\)"):
            null_distribution_figure(res, "difference", 4)
        bare = permutation_test(made, offsets, rng=1, permutations=200, keep_null=False)
        with pytest.raises(ValueError, match="run the test with keep_null=True"):
            null_distribution_figure(bare)

    def test_figure(self):
        made, offsets = form_player(np.random.default_rng(12))
        res = permutation_test(made, offsets, rng=1, permutations=400)
        fig = null_distribution_figure(res, "difference", 2)
        assert fig.data[0].type == "histogram"
        np.testing.assert_array_equal(fig.data[0].x, res.test("difference", 2).null_distribution)
        lines = [s for s in fig.layout.shapes if s.type == "line"]
        assert any(s.x0 == pytest.approx(res.test("difference", 2).observed) for s in lines)


# ---------------------------------------------------------------------------
# Calibration
# ---------------------------------------------------------------------------


N_CALIBRATION_PLAYERS = 1000


@pytest.fixture(scope="module")
def players():
    """Null shooters with game-to-game form (seeded)."""
    rng = np.random.default_rng(20240)
    return [form_player(rng) for _ in range(N_CALIBRATION_PLAYERS)]


@pytest.mark.slow
class TestCalibration:
    """Null shooters whose form varies from game to game (logit SD 0.6 per game).

    Within-game shuffles keep each game's makes, so the test is valid however
    form varies: the rejection rate at alpha is at most alpha + 3 SE (SE the
    binomial standard error of a rejection rate of alpha over the simulated
    players; the test is discrete, so it may be conservative) and at least
    alpha / 3. Shuffling across the whole season is not valid there: form makes
    makes follow makes, and the rejection rate is far above alpha.
    """

    N_PLAYERS = N_CALIBRATION_PLAYERS
    N_SEASON = 300

    def test_within_game_shuffles_are_calibrated(self, players):
        rejected = {}
        for i, (made, offsets) in enumerate(players):
            res = permutation_test(made, offsets, player=f"n{i}", rng=1, permutations=199,
                                   resamples=0, keep_null=False)
            for test in res.tests:
                rejected.setdefault((test.statistic, test.k), []).append(
                    test.p_value is not None and test.p_value <= ALPHA)
        se = math.sqrt(ALPHA * (1 - ALPHA) / self.N_PLAYERS)
        for key in (("difference", 1), ("difference", 2), ("after_makes", 1), ("runs", None),
                    ("lag1", None)):
            rate = float(np.mean(rejected[key]))
            assert ALPHA / 3 <= rate <= ALPHA + 3 * se, (key, rate)
        # the longest run is very discrete: conservative, but never liberal
        assert float(np.mean(rejected[("longest_run", None)])) <= ALPHA + 3 * se

    def test_season_wide_shuffles_are_not_calibrated(self, players):
        rejected = []
        for i, (made, offsets) in enumerate(players[: self.N_SEASON]):
            res = permutation_test(made, None, player=f"n{i}", rng=1, permutations=199,
                                   resamples=0, keep_null=False)  # one season-long session
            rejected.append(res.test("difference", 1).p_value <= ALPHA)
        rate = float(np.mean(rejected))
        se_rate = math.sqrt(rate * (1 - rate) / self.N_SEASON)
        se_alpha = math.sqrt(ALPHA * (1 - ALPHA) / self.N_SEASON)
        # inflation clearly beyond Monte Carlo error on both sides
        assert rate - 3 * se_rate > ALPHA + 3 * se_alpha, rate

    def test_power_against_a_streaky_shooter(self):
        # a shooter whose rate after a make is 0.55 and after a miss 0.40: the
        # within-game test of D_1 finds it in most seasons of 900 attempts
        hits = 0
        for i in range(40):
            draw = simulate_markov(15, rate_after_make=0.55, rate_after_miss=0.40, n_sequences=60,
                                   rng=1000 + i)
            made = draw.made.astype(np.int8).ravel()
            res = permutation_test(made, np.arange(0, made.size + 1, 15), player=f"s{i}", rng=1,
                                   permutations=199, resamples=0, keep_null=False)
            hits += res.test("difference", 1).p_value <= ALPHA
        assert hits / 40 >= 0.6
