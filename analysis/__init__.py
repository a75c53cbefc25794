"""Pure statistics on make/miss arrays: no files, no database, no dashboard.

Modules: ``sequences`` (tidy attempts to per-session arrays), ``simulate``
and ``difficulty_sim`` (streak models and difficulty sampling, shared by the
demo league and the planner), ``odds`` (exact streak probabilities) and
``claims`` (checking a streak claim against chance), ``power`` (the study
planner: power of each test, minimum detectable effect, games needed), ``streaks`` (rates after
k makes or misses, runs, longest run, lag-1 correlation on batches),
``permutation`` (the within-session permutation engine), ``runs``
(Wald–Wolfowitz and longest-run distributions), ``league`` (scans with
Benjamini–Hochberg q-values and a pooled test), ``results`` and ``figures``.
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
from .figures import OKABE_ITO, null_distribution_figure, rates_figure
from .league import benjamini_hochberg, league_scan
from .permutation import HOT_DIRECTION, arrangement_count, permutation_test, player_seed_sequence
from .power import (
    PLAN_CAVEATS,
    PlanAnswer,
    PlanResult,
    PowerResult,
    estimate_power,
    games_needed,
    minimum_detectable_effect,
    power_curve_figure,
)
from .results import (
    CAVEATS,
    ConditionalRates,
    LeagueScanResult,
    LeagueTestResult,
    PlayerScanResult,
    RunsTestResult,
    SerialCorrelationResult,
    StatisticTest,
    StreakCounts,
    StreakTestResult,
)
from .runs import longest_run_distribution, runs_distribution, runs_moments, runs_test, serial_correlation
from .sequences import PlayerSequences, player_sequences, session_arrays
from .streaks import conditional_rates, count_runs, lag1_correlation, longest_run, streak_counts
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
    "CAVEATS",
    "ClaimResult",
    "ConditionalRates",
    "DifficultyModel",
    "HOT_DIRECTION",
    "HiddenStateDraw",
    "HiddenStateMoments",
    "LeagueScanResult",
    "LeagueTestResult",
    "LongestRunOddsResult",
    "MarkovDraw",
    "MarkovMoments",
    "OKABE_ITO",
    "OpportunityResult",
    "OutcomeDependentDraw",
    "PLAN_CAVEATS",
    "PlanAnswer",
    "PlanResult",
    "PlayerScanResult",
    "PlayerSequences",
    "PowerResult",
    "RunProbabilityResult",
    "RunsTestResult",
    "SerialCorrelationResult",
    "ShotCovariates",
    "StatisticTest",
    "StreakCounts",
    "StreakTestResult",
    "WindowProbabilityResult",
    "arrangement_count",
    "benjamini_hochberg",
    "check_game_streak_claim",
    "check_run_claim",
    "check_window_claim",
    "combine_sessions",
    "conditional_rates",
    "count_runs",
    "estimate_power",
    "expected_attempts_until_run",
    "expected_run_count",
    "expected_window_count",
    "games_needed",
    "hidden_state_moments",
    "lag1_correlation",
    "league_scan",
    "longest_run",
    "longest_run_distribution",
    "longest_run_figure",
    "longest_run_odds",
    "make_probability",
    "markov_moments",
    "minimum_detectable_effect",
    "null_distribution_figure",
    "permutation_test",
    "player_seed_sequence",
    "player_sequences",
    "power_curve_figure",
    "rates_figure",
    "run_probability",
    "run_probability_given_makes",
    "run_probability_per_attempt",
    "runs_distribution",
    "runs_moments",
    "runs_test",
    "sample_shot_covariates",
    "serial_correlation",
    "session_arrays",
    "simulate_bernoulli",
    "simulate_hidden_state",
    "simulate_markov",
    "simulate_outcome_dependent",
    "simulate_session_lengths",
    "streak_counts",
    "window_probability",
]
