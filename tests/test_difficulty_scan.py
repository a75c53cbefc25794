"""difficulty_scan: one difficulty model for the league, adjusted tests per player, shrinkage."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from streakwise.analysis.adjusted import difficulty_scan
from streakwise.analysis.difficulty import DifficultyModelWarning

# The synthetic league has distance only: the model says so every time (checked once below).
pytestmark = pytest.mark.filterwarnings("ignore::streakwise.analysis.difficulty.DifficultyModelWarning")


def league(players=4, games=20, attempts=12, seed=3):
    rng = np.random.default_rng(seed)
    rows = []
    for p in range(players):
        for g in range(games):
            distance = rng.uniform(2, 27, attempts)
            prob = 1 / (1 + np.exp(-(0.2 - 0.05 * (distance - 15))))
            made = rng.random(attempts) < prob
            for s in range(attempts):
                rows.append((f"p{p}", f"g{g}", f"g{g}", s, bool(made[s]), "field_goal", float(distance[s])))
    return pd.DataFrame(rows, columns=["player", "game", "session", "seq", "made", "attempt_type", "distance"])


class TestDifficultyScan:
    def test_warns_about_missing_covariates(self):
        with pytest.warns(DifficultyModelWarning, match="covariates missing from the data"):
            difficulty_scan(league(players=3, games=5), min_attempts=10, draws=10, permutations=10, rng=1)

    def test_validation(self):
        with pytest.raises(ValueError, match="`rng` must be an integer seed"):
            difficulty_scan(league(players=1, games=2), rng=None)

    def test_blocks_and_reproducible(self):
        frame = league()
        first = difficulty_scan(frame, min_attempts=50, draws=40, permutations=40, rng=9)
        again = difficulty_scan(frame, min_attempts=50, draws=40, permutations=40, rng=9)
        assert sorted(first.players) == ["p0", "p1", "p2", "p3"]
        block = first.player_dict("p1")
        assert set(block) >= {"difficulty_adjusted", "streak_coefficient", "shot_selection", "shrunk"}
        assert [d["k"] for d in block["difficulty_adjusted"]] == [1, 2, 3]
        assert set(block["difficulty_adjusted"][0]) >= {"k", "difference", "null_mean", "corrected", "p_value"}
        assert set(block["streak_coefficient"]) >= {"k", "estimate", "se", "p_value_resampled"}
        assert set(block["shot_selection"]) >= {"k", "difference", "p_value"}
        assert [s["k"] for s in block["shrunk"]] == [1, 2, 3]
        assert block == again.player_dict("p1")
        # a player's result does not depend on which others were tested
        alone = difficulty_scan(frame, players=["p1"], min_attempts=50, draws=40, permutations=40, rng=9)
        assert alone.player_dict("p1")["difficulty_adjusted"] == block["difficulty_adjusted"]

    def test_shrunk_estimate_lies_between_estimate_and_league_mean(self):
        result = difficulty_scan(league(players=5), min_attempts=50, draws=40, permutations=40, rng=2)
        shrinkage = result.shrunk[1]
        low = np.minimum(shrinkage.estimate, shrinkage.league_mean) - 1e-12
        high = np.maximum(shrinkage.estimate, shrinkage.league_mean) + 1e-12
        assert np.all((shrinkage.shrunk >= low) & (shrinkage.shrunk <= high))

    def test_skips_small_players_with_a_reason(self):
        result = difficulty_scan(league(players=3, games=5), min_attempts=100, draws=20, permutations=20, rng=1)
        assert result.players == {}
        assert result.skipped["p0"] == "60 attempts, fewer than the minimum of 100"
