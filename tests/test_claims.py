"""Tests of streakwise.analysis.claims: claims over games, players and seasons."""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest

from streakwise.analysis.claims import (
    CAUTION,
    ClaimResult,
    check_game_streak_claim,
    check_run_claim,
    check_window_claim,
)
from streakwise.analysis.odds import combine_sessions, run_probability, window_probability



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


def chance(event, weights):
    return sum((w for e, w in zip(event, weights, strict=True) if e), Fraction(0))


# A tiny season: three games of 3, 2 and 4 attempts (2**9 joint sequences).
GAMES = (3, 2, 4)
BOUNDS = np.cumsum((0, *GAMES))


def per_game(seqs, function):
    return [function(seqs[:, BOUNDS[g] : BOUNDS[g + 1]]) for g in range(len(GAMES))]


class TestCheckRunClaim:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`rate` must be in \[0, 1\] \(got 1.5\)"):
            check_run_claim(5, 1.5, [10])
        with pytest.raises(ValueError, match="`game_attempts` must list at least one game"):
            check_run_claim(5, 0.5, [])
        with pytest.raises(ValueError, match=r"`league_players` must be an integer >= 1 \(got 0\)"):
            check_run_claim(5, 0.5, [10], league_players=0)
        with pytest.raises(ValueError, match=r"`game_attempts` must be an integer >= 0 \(got -3\)"):
            check_run_claim(5, 0.5, [10, -3])

    def test_against_brute_force(self):
        p, r = Fraction(1, 2), 2
        seqs = all_sequences(sum(GAMES))
        weights = weights_fixed(seqs, p)
        hits = per_game(seqs, lambda s: longest(s, 1) >= r)
        result = check_run_claim(r, p, GAMES)
        assert result.exact
        assert result.probability_player == float(chance(np.logical_or.reduce(hits), weights))
        expected_games = sum((w * sum(int(h[i]) for h in hits) for i, w in enumerate(weights)), Fraction(0))
        assert result.expected_player == float(expected_games)
        across = check_run_claim(r, p, GAMES, across_games=True)
        assert across.probability_player == float(chance(longest(seqs, 1) >= r, weights))
        assert across.occurrence == "season" and across.expected_player == across.probability_player

    def test_misses(self):
        p = Fraction(3, 10)
        seqs = all_sequences(sum(GAMES))
        hits = per_game(seqs, lambda s: longest(s, 0) >= 3)
        result = check_run_claim(3, p, GAMES, misses=True)
        assert result.probability_player == float(chance(np.logical_or.reduce(hits), weights_fixed(seqs, p)))
        assert result.claim == "3 or more misses in a row"

    def test_league_and_seasons(self):
        games = [15] * 82
        result = check_run_claim(9, 0.45, games, league_players=150, seasons=3)
        season = combine_sessions([run_probability(15, 9, 0.45).probability] * 82, players=150, seasons=3)
        assert result.probability_player == pytest.approx(season.probability_season, rel=1e-12)
        assert result.probability_league == pytest.approx(1 - (1 - season.probability_season) ** 150, rel=1e-9)
        assert result.probability_player_span == pytest.approx(1 - (1 - season.probability_season) ** 3, rel=1e-9)
        assert result.expected_league == pytest.approx(150 * season.expected_season, rel=1e-12)
        assert result.expected_league_span == pytest.approx(450 * season.expected_season, rel=1e-12)
        assert result.seasons_per_occurrence == pytest.approx(1 / season.expected_season)
        # separate runs: at least as many as games with a run
        assert result.expected_streaks_player >= result.expected_player

    def test_sentence_and_caution(self):
        result = check_run_claim(9, 0.45, [15] * 82, league_players=150)
        assert isinstance(result, ClaimResult)
        assert result.sentence.startswith("A 45% shooter taking 15 shots a game over 82 games would, by chance alone,")
        assert "once every 3.7 seasons" in result.sentence
        assert "across a league of 150 such players" in result.sentence
        assert result.caution == CAUTION and "not betting advice" in result.caution
        assert "chance" in result.caution.lower()
        assert result.to_dict()["sentence"] == result.sentence
        assert "Caveats" in result.summary()
        assert result.to_frame().shape[0] == 1

    def test_sentence_for_common_and_impossible_runs(self):
        common = check_run_claim(4, 0.5, [16] * 40, league_players=10)
        assert "games a season" in common.sentence
        impossible = check_run_claim(20, 0.5, [10] * 5)
        assert impossible.probability_player == 0.0
        assert "could not" in impossible.sentence


class TestCheckWindowClaim:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`at_least` must be at most `window` \(4\) \(got 5\)"):
            check_window_claim(4, 5, 0.5, [10])

    def test_against_brute_force(self):
        p = Fraction(2, 5)
        seqs = all_sequences(sum(GAMES))
        weights = weights_fixed(seqs, p)
        hits = per_game(seqs, lambda s: window_max(s, 3) >= 2)
        result = check_window_claim(3, 2, p, GAMES)
        assert result.exact
        assert result.probability_player == float(chance(np.logical_or.reduce(hits), weights))
        across = check_window_claim(3, 2, p, GAMES, across_games=True)
        assert across.probability_player == float(chance(window_max(seqs, 3) >= 2, weights))

    def test_matches_window_probability(self):
        result = check_window_claim(10, 8, 0.47, [14, 16, 18, 9], league_players=30)
        per_game = [window_probability(n, 10, 8, 0.47).probability for n in (14, 16, 18, 9)]
        assert result.probability_player == pytest.approx(1 - np.prod([1 - q for q in per_game]), rel=1e-12)
        assert result.expected_player == pytest.approx(sum(per_game), rel=1e-12)
        assert "at least 8 makes in 10 straight attempts" in result.sentence


class TestCheckGameStreakClaim:
    def test_input_validation(self):
        with pytest.raises(ValueError, match=r"`games_in_a_row` must be an integer >= 1 \(got 0\)"):
            check_game_streak_claim(3, 0, 0.5, [10])

    def test_against_brute_force(self):
        # at least 2 makes in each of 2 consecutive games
        p = Fraction(1, 2)
        seqs = all_sequences(sum(GAMES))
        weights = weights_fixed(seqs, p)
        good = per_game(seqs, lambda s: s.sum(axis=1) >= 2)
        event = (good[0] & good[1]) | (good[1] & good[2])
        result = check_game_streak_claim(2, 2, p, GAMES)
        assert result.exact and result.occurrence == "season"
        assert result.probability_player == float(chance(event, weights))
        starts = (good[0] & good[1]).astype(int) + (~good[0] & good[1] & good[2]).astype(int)
        expected = sum((s * w for s, w in zip(starts, weights, strict=True)), Fraction(0))
        assert result.expected_streaks_player == pytest.approx(float(expected), rel=1e-12)

    def test_sentence(self):
        result = check_game_streak_claim(10, 5, 0.47, [17] * 82, league_players=150)
        assert "make at least 10 shots in each of 5 straight games" in result.sentence
        assert math.isclose(result.expected_player, result.probability_player)
