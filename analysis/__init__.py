"""Pure statistics on make/miss arrays: no files, no database, no dashboard.

Modules: ``sequences`` (tidy attempts to per-session arrays), ``simulate``
and ``difficulty_sim`` (streak models and difficulty sampling, shared by the
demo league and the planner), ``odds`` (exact streak probabilities) and
``claims`` (checking a streak claim against chance).
"""

from .claims import ClaimResult, check_game_streak_claim, check_run_claim, check_window_claim
from .difficulty_sim import DifficultyModel, OutcomeDependentDraw, ShotCovariates, sample_shot_covariates, simulate_outcome_dependent
from .odds import (
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
from .sequences import PlayerSequences, player_sequences, session_arrays
from .simulate import (
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

__all__ = [
    "ClaimResult",
    "DifficultyModel",
    "HiddenStateDraw",
    "HiddenStateMoments",
    "LongestRunOddsResult",
    "MarkovDraw",
    "MarkovMoments",
    "OpportunityResult",
    "OutcomeDependentDraw",
    "PlayerSequences",
    "RunProbabilityResult",
    "ShotCovariates",
    "WindowProbabilityResult",
    "check_game_streak_claim",
    "check_run_claim",
    "check_window_claim",
    "combine_sessions",
    "expected_attempts_until_run",
    "expected_run_count",
    "expected_window_count",
    "hidden_state_moments",
    "longest_run_figure",
    "longest_run_odds",
    "make_probability",
    "markov_moments",
    "player_sequences",
    "run_probability",
    "run_probability_given_makes",
    "run_probability_per_attempt",
    "sample_shot_covariates",
    "session_arrays",
    "simulate_bernoulli",
    "simulate_hidden_state",
    "simulate_markov",
    "simulate_outcome_dependent",
    "simulate_session_lengths",
    "window_probability",
]
