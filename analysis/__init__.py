"""Pure statistics on make/miss arrays: no files, no database, no dashboard.

Modules: ``sequences`` (tidy attempts to per-session arrays), ``simulate``
and ``difficulty_sim`` (streak models and difficulty sampling, shared by the
demo league and the planner), ``odds`` (exact streak probabilities) and
``claims`` (checking a streak claim against chance), ``power`` (the study
planner: power of each test, minimum detectable effect, games needed),
``difficulty`` (shot-difficulty model), ``conditional`` (conditional Bernoulli
sampling), ``adjusted`` (difficulty-adjusted tests and the shot-selection
check), ``hotstate`` (two-state hidden Markov model), ``shrinkage``
(empirical Bayes), ``executors`` (per-player tasks in this process, on a local
pool or on a Dask cluster, results in order and independent of the workers), ``streaks`` (rates after
k makes or misses, runs, longest run, lag-1 correlation on batches),
``permutation`` (the within-session permutation engine), ``runs``
(Wald–Wolfowitz and longest-run distributions), ``league`` (scans with
Benjamini–Hochberg q-values and a pooled test), ``results`` and ``figures``.
"""

from .adjusted import (
    AdjustedTestResult,
    PlayerAttempts,
    ResidualTest,
    ShotSelectionTest,
    StreakCoefficient,
    difficulty_adjusted_test,
    player_attempts,
)
from .claims import ClaimResult, check_game_streak_claim, check_run_claim, check_window_claim
from .conditional import conditional_inclusion_probabilities, player_generator, sample_conditional_bernoulli
from .difficulty import DifficultyModelResult, DifficultyModelWarning, fit_difficulty_model
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
from .executors import ExecutorSpec, WorkerLostError, decode_task_output, encode_task_output, map_tasks, usable_cores
from .figures import OKABE_ITO, null_distribution_figure, rates_figure
from .hotstate import HotStateResult, fit_hot_state, hot_state_posterior
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
from .runs import (
    longest_run_distribution,
    runs_distribution,
    runs_moments,
    runs_test,
    season_longest_run_distribution,
    serial_correlation,
)
from .sequences import PlayerSequences, player_sequences, session_arrays
from .shrinkage import ShrinkageResult, shrink_effects, shrink_scan_effects
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
    "AdjustedTestResult",
    "CAVEATS",
    "ClaimResult",
    "ConditionalRates",
    "DifficultyModel",
    "DifficultyModelResult",
    "DifficultyModelWarning",
    "ExecutorSpec",
    "HOT_DIRECTION",
    "HiddenStateDraw",
    "HiddenStateMoments",
    "HotStateResult",
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
    "PlayerAttempts",
    "PlayerScanResult",
    "PlayerSequences",
    "PowerResult",
    "ResidualTest",
    "RunProbabilityResult",
    "RunsTestResult",
    "SerialCorrelationResult",
    "ShotCovariates",
    "ShotSelectionTest",
    "ShrinkageResult",
    "StatisticTest",
    "StreakCoefficient",
    "StreakCounts",
    "StreakTestResult",
    "WindowProbabilityResult",
    "WorkerLostError",
    "arrangement_count",
    "benjamini_hochberg",
    "check_game_streak_claim",
    "check_run_claim",
    "check_window_claim",
    "combine_sessions",
    "conditional_inclusion_probabilities",
    "conditional_rates",
    "count_runs",
    "decode_task_output",
    "difficulty_adjusted_test",
    "encode_task_output",
    "estimate_power",
    "expected_attempts_until_run",
    "expected_run_count",
    "expected_window_count",
    "fit_difficulty_model",
    "fit_hot_state",
    "games_needed",
    "hidden_state_moments",
    "hot_state_posterior",
    "lag1_correlation",
    "league_scan",
    "longest_run",
    "longest_run_distribution",
    "longest_run_figure",
    "longest_run_odds",
    "make_probability",
    "map_tasks",
    "markov_moments",
    "minimum_detectable_effect",
    "null_distribution_figure",
    "permutation_test",
    "player_attempts",
    "player_generator",
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
    "sample_conditional_bernoulli",
    "sample_shot_covariates",
    "season_longest_run_distribution",
    "serial_correlation",
    "session_arrays",
    "shrink_effects",
    "shrink_scan_effects",
    "simulate_bernoulli",
    "simulate_hidden_state",
    "simulate_markov",
    "simulate_outcome_dependent",
    "simulate_session_lengths",
    "streak_counts",
    "usable_cores",
    "window_probability",
]
