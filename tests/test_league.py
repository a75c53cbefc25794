"""Tests for streakwise.analysis.league.

References: the worked example of Benjamini & Hochberg (1995) (15 p-values, FDR
0.05: four rejections where Bonferroni makes three); statsmodels'
``multipletests``; seeded league simulations for the pooled test.
"""

import json
import math

import numpy as np
import pytest
from scipy import special
from statsmodels.stats.multitest import multipletests

from streakwise.analysis.league import benjamini_hochberg, league_scan
from streakwise.analysis.permutation import permutation_test
from streakwise.analysis.sequences import PlayerSequences
from streakwise.analysis.simulate import (
    make_probability,
    simulate_bernoulli,
    simulate_markov,
    simulate_session_lengths,
)

ALPHA = 0.05


def null_player(name, seed, n_games=20, sigma=0.4):
    rng = np.random.default_rng(seed)
    lengths = simulate_session_lengths(n_games, mean=12, low=5, high=22, rng=rng)
    offsets = np.concatenate([[0], np.cumsum(lengths)]).astype(np.int64)
    form = rng.normal(0.0, sigma, n_games)
    made = simulate_bernoulli(make_probability(special.logit(0.45) + np.repeat(form, lengths)),
                              rng=rng).astype(np.int8)
    ids = np.array([f"{name}-g{i}" for i in range(n_games)])
    return PlayerSequences(name, ids, ids, made, offsets)


def streaky_player(name, seed, n_games=30):
    draw = simulate_markov(12, rate_after_make=0.7, rate_after_miss=0.3, n_sequences=n_games, rng=seed)
    made = draw.made.astype(np.int8).ravel()
    ids = np.array([f"{name}-g{i}" for i in range(n_games)])
    return PlayerSequences(name, ids, ids, made, np.arange(0, made.size + 1, 12))


class TestBenjaminiHochberg:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`p_values` must be numbers in \[0, 1\] or None \(got 1.5\)"):
            benjamini_hochberg([0.1, 1.5])
        with pytest.raises(ValueError, match=r"`p_values` must be numbers in \[0, 1\] or None \(got 'a'\)"):
            benjamini_hochberg(["a"])

    def test_against_benjamini_hochberg_1995(self):
        # Benjamini & Hochberg (1995), JRSS B 57(1): the 15 p-values of their
        # example; at FDR 0.05 the procedure rejects the four smallest
        p = [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240,
             0.4262, 0.5719, 0.6528, 0.7590, 1.0000]
        q = benjamini_hochberg(p)
        assert [v <= 0.05 for v in q] == [True] * 4 + [False] * 11
        # Bonferroni would reject three
        assert sum(v * len(p) <= 0.05 for v in p) == 3

    def test_against_statsmodels_in_callers_order_with_gaps(self):
        p = [0.3, None, 0.001, 0.04, float("nan"), 0.02]
        q = benjamini_hochberg(p)
        expected = multipletests([0.3, 0.001, 0.04, 0.02], method="fdr_bh")[1]
        assert q[1] is None and q[4] is None
        np.testing.assert_allclose([q[0], q[2], q[3], q[5]], expected)

    def test_empty(self):
        assert benjamini_hochberg([]) == []
        assert benjamini_hochberg([None]) == [None]


@pytest.fixture(scope="module")
def league():
    players = [null_player(f"n{i}", 100 + i) for i in range(8)]
    players += [streaky_player(f"s{i}", 200 + i) for i in range(2)]
    players.append(null_player("short", 300, n_games=4))  # under min_attempts
    return players


@pytest.fixture(scope="module")
def scan(league):
    return league_scan(league, permutations=999, rng=77, max_k=2, resamples=200)


class TestLeagueScan:
    def test_input_validation(self, league):
        with pytest.raises(ValueError, match=r"`players` must hold PlayerSequences \(got 3\)"):
            league_scan([3])
        with pytest.raises(ValueError, match="`players` holds player 'n0' twice"):
            league_scan([league[0], league[0]])
        with pytest.raises(ValueError, match=r"`rng` must be None or a non-negative integer seed for a league scan"):
            league_scan(league[:1], rng=np.random.default_rng(1))
        with pytest.raises(ValueError, match=r"`alternative` must be one of 'hot', 'cold', 'two-sided' \(got 'hto'\)"):
            league_scan(league[:1], alternative="hto")
        with pytest.raises(ValueError, match=r"`workers` must be an integer >= 1 \(got 0\)"):
            league_scan(league[:1], workers=0)
        with pytest.raises(ValueError, match=r"`progress` must be callable or None \(got 'bar'\)"):
            league_scan(league[:1], progress="bar")
        with pytest.raises(ValueError, match=r"`min_attempts` must be an integer >= 1 \(got 0\)"):
            league_scan(league[:1], min_attempts=0)

    def test_skips_short_players(self, scan):
        assert [p for p, _ in scan.skipped] == ["short"]
        assert "fewer than min_attempts=100" in scan.skipped[0][1]
        assert [p.player for p in scan.players] == [f"n{i}" for i in range(8)] + ["s0", "s1"]

    def test_player_results_do_not_depend_on_the_other_players(self, league, scan):
        alone = league_scan([league[3]], permutations=999, rng=77, max_k=2, resamples=200)
        direct = permutation_test(league[3], rng=77, permutations=999, max_k=2, method="random",
                                  resamples=200)
        for k in (1, 2):
            a = alone.players[0].result.test("difference", k)
            b = scan.player("n3").result.test("difference", k)
            c = direct.test("difference", k)
            assert a.p_value == b.p_value == c.p_value
            assert a.null_mean == b.null_mean == c.null_mean
            assert a.interval == b.interval == c.interval

    def test_process_pool_gives_identical_results(self, league, scan):
        counts = []
        pooled = league_scan(league, permutations=999, rng=77, max_k=2, resamples=200, workers=2,
                             progress=counts.append)
        assert pooled.to_dict() == scan.to_dict()
        for a, b in zip(pooled.league, scan.league):
            np.testing.assert_array_equal(a.null_distribution, b.null_distribution)
        assert counts[0] == 1 and counts[-1] == len(league)
        assert counts == sorted(counts)

    def test_q_values(self, scan):
        for k in (1, 2):
            p = [item.result.test("difference", k).p_value for item in scan.players]
            expected = multipletests(p, method="fdr_bh")[1]
            np.testing.assert_allclose([item.q_values[k - 1] for item in scan.players], expected)

    def test_streaky_players_stand_out(self, scan):
        # rate after a make 0.7 vs 0.3 after a miss, 360 attempts
        for name in ("s0", "s1"):
            assert scan.player(name).result.test("difference", 1).p_value <= 0.01
        assert scan.league[0].p_value <= 0.01

    def test_pooled_test_definition(self, scan):
        test = scan.league[0]
        corrected = [item.result.test("difference", 1).corrected for item in scan.players]
        assert test.players == len(scan.players)
        assert test.corrected_mean == pytest.approx(np.mean(corrected), abs=1e-12)
        null = test.null_distribution
        # the pooled null is centred: its mean is the mean of the players' centred draws
        assert abs(null.mean()) <= 4 * null.std() / math.sqrt(null.size)
        b = np.count_nonzero(null >= test.corrected_mean - 1e-12)
        assert test.p_value == pytest.approx((b + 1) / (null.size + 1))

    def test_null_league_is_not_rejected(self):
        players = [null_player(f"z{i}", 500 + i) for i in range(12)]
        scan = league_scan(players, permutations=499, rng=5, max_k=1, resamples=0)
        # one pooled test at alpha; seeded, and its p-value is well inside (0.05, 1]
        assert scan.league[0].p_value > ALPHA

    def test_views(self, scan):
        frame = scan.to_frame()
        assert "q_value" in frame and len(frame) == len(scan.players) * (3 * 2 + 3)
        assert frame.loc[frame["statistic"] != "difference", "q_value"].isna().all()
        assert list(scan.league_frame()["k"]) == [1, 2]
        data = scan.to_dict()
        assert set(data) == {"seed", "permutations", "players", "league"}
        assert data["seed"] == 77 and data["permutations"] == 999
        assert set(data["league"][0]) == {"k", "players", "corrected_mean", "p_value", "reason"}
        assert data["players"][0]["streak"][0]["q_value"] == scan.players[0].q_values[0]
        json.dumps(data)
        text = scan.summary()
        assert "Pooled league test, D_1" in text and "4. Many players were tested" in text

    def test_empty_league(self):
        scan = league_scan([null_player("short", 1, n_games=3)], permutations=50, rng=1)
        assert scan.players == () and scan.league[0].p_value is None
        assert scan.league[0].reason == "D_1 is undefined for every scanned player"
        assert scan.to_frame().empty
