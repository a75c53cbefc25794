"""Result containers of the streak statistics, with three views each.

Frozen dataclasses: attributes for code, ``to_frame()`` for a tidy DataFrame
with stable snake_case columns, ``summary()`` for text with numbered caveats,
and (for the test results) ``to_dict()`` for the stable JSON layout the command
line prints. Nothing is rounded except in ``summary()``. An undefined value is
``None`` (NaN in frames) and comes with a ``reason``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ._values import json_number as _number


__all__ = [
    "CAVEATS",
    "ConditionalRates",
    "LeagueScanResult",
    "LeagueTestResult",
    "PlayerScanResult",
    "RunsTestResult",
    "SerialCorrelationResult",
    "StatisticTest",
    "StreakCounts",
    "StreakTestResult",
]

CAVEATS = (
    "Chance alone produces many streaks: long runs of makes and hot stretches are "
    "expected from a shooter with no hot hand. Judge a streak against the "
    "permutation null, not against intuition.",
    "Small samples mislead: rates after streaks rest on few attempts and are biased "
    "downward in short sequences. Read the corrected effect with its interval; a "
    "large p-value is not evidence that there is no effect (such tests have little "
    "power).",
    "Streakiness is not a cause: a streaky pattern can come from shot selection, "
    "defence, opponents or game situation. These tests say whether the order of "
    "makes and misses is unusual, not why.",
)

LEAGUE_CAVEAT = (
    "Many players were tested: some small p-values are expected by chance alone. "
    "Use the q-values (Benjamini-Hochberg) to pick players out."
)


def _pair(values):
    if values is None:
        return None
    low, high = values
    if _number(low) is None or _number(high) is None:
        return None
    return [float(low), float(high)]


def _show(value, digits=3):
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "-"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    return f"{value:.{digits}f}"


def _show_p(value):
    if value is None:
        return "-"
    return "<0.0001" if value < 1e-4 else f"{value:.4f}"


def _caveat_lines(extra=()):
    lines = ["Caveats:"]
    for i, text in enumerate((*CAVEATS, *extra), start=1):
        lines.append(f"  {i}. {text}")
    return lines


# ---------------------------------------------------------------------------
# Counts and rates
# ---------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class StreakCounts:
    """Sufficient counts of the streak statistics (see ``streak_counts``).

    Arrays have the batch shape of the input (plus a session axis when counted
    per session); the four ``*_after_*`` arrays have a last axis for
    k = 1..``max_k``.
    """

    max_k: int
    attempts: np.ndarray
    makes: np.ndarray
    sessions: np.ndarray
    makes_after_makes: np.ndarray
    attempts_after_makes: np.ndarray
    makes_after_misses: np.ndarray
    attempts_after_misses: np.ndarray
    runs: np.ndarray
    longest_run: np.ndarray
    lag1_numerator: np.ndarray
    lag1_denominator: np.ndarray


@dataclass(frozen=True, eq=False)
class ConditionalRates:
    """Hit rates after k makes and after k misses (see ``conditional_rates``).

    Attributes
    ----------
    k : ndarray of int
        1..max_k.
    attempts, makes : ndarray of int
        Totals (batch shape).
    make_rate : ndarray of float
    makes_after_makes, attempts_after_makes, makes_after_misses, attempts_after_misses : ndarray of int
        Pooled counts, last axis k.
    after_makes, after_misses, difference : ndarray of float
        Pooled rates and ``D_k``; NaN where undefined.
    session_average_after_makes, session_average_after_misses, session_average_difference : ndarray of float
        Per-session rates averaged over the sessions where they are defined
        (the early-study estimator, for comparison).
    """

    k: np.ndarray
    attempts: np.ndarray
    makes: np.ndarray
    make_rate: np.ndarray
    makes_after_makes: np.ndarray
    attempts_after_makes: np.ndarray
    makes_after_misses: np.ndarray
    attempts_after_misses: np.ndarray
    after_makes: np.ndarray
    after_misses: np.ndarray
    difference: np.ndarray
    session_average_after_makes: np.ndarray
    session_average_after_misses: np.ndarray
    session_average_difference: np.ndarray

    _PER_K = (
        "makes_after_makes",
        "attempts_after_makes",
        "after_makes",
        "makes_after_misses",
        "attempts_after_misses",
        "after_misses",
        "difference",
        "session_average_after_makes",
        "session_average_after_misses",
        "session_average_difference",
    )

    def to_frame(self):
        """One row per k (and per sequence of a batch, in column ``sequence``)."""
        n_k = len(self.k)
        batch = np.asarray(self.after_makes).shape[:-1]
        n_batch = int(np.prod(batch)) if batch else 1
        columns = {}
        if batch:
            columns["sequence"] = np.repeat(np.arange(n_batch), n_k)
        columns["k"] = np.tile(self.k, n_batch)
        for name in ("attempts", "makes", "make_rate"):
            columns[name] = np.repeat(np.ravel(getattr(self, name)), n_k)
        for name in self._PER_K:
            columns[name] = np.ravel(getattr(self, name))
        return pd.DataFrame(columns)

    def summary(self):
        """The rates as text, with numbered caveats (unbatched rates only)."""
        if np.ndim(self.make_rate):
            raise ValueError("summary() needs the rates of one season, not a batch")
        lines = [
            f"Attempts {int(self.attempts)}, makes {int(self.makes)}, make rate {_show(float(self.make_rate))}",
            " k  after k makes        after k misses       D_k     per-session D_k",
        ]
        for i, k in enumerate(self.k):
            lines.append(
                f"{int(k):2d}  {int(self.makes_after_makes[i]):4d}/{int(self.attempts_after_makes[i]):<4d} "
                f"{_show(float(self.after_makes[i])):>6}   "
                f"{int(self.makes_after_misses[i]):4d}/{int(self.attempts_after_misses[i]):<4d} "
                f"{_show(float(self.after_misses[i])):>6}   {_show(float(self.difference[i])):>6}  "
                f"{_show(float(self.session_average_difference[i])):>6}"
            )
        lines.append(
            "Raw rates after streaks are biased downward; the permutation test reports them "
            "with their null mean."
        )
        return "\n".join(lines + _caveat_lines())


# ---------------------------------------------------------------------------
# One statistic's permutation test
# ---------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class StatisticTest:
    """The permutation test of one statistic for one player.

    Attributes
    ----------
    statistic : str
        ``'difference'`` (D_k), ``'after_makes'``, ``'after_misses'``, ``'runs'``,
        ``'longest_run'`` or ``'lag1'``.
    k : int or None
        Streak length, for the three rate statistics.
    hot_direction : {'greater', 'less'}
        Which way is "hot" for this statistic.
    observed, null_mean, corrected : float or None
        Observed value, mean of the permutation null (defined draws), and
        ``observed - null_mean`` (the bias-corrected effect).
    null_band : (float, float) or None
        2.5% and 97.5% quantiles of the null (where chance puts the statistic;
        not a confidence interval).
    interval : (float, float) or None
        Confidence interval for the corrected effect, from resampling games.
    share_defined : float
        Share of null draws on which the statistic is defined.
    p_value, p_value_se : float or None
        p-value for the requested alternative, and its Monte Carlo standard
        error (0 for exact enumeration).
    p_hot, p_cold : float or None
        The two one-sided p-values.
    reason : str or None
        Why a value is undefined.
    null_distribution : ndarray or None
        The defined null draws (kept only when asked).
    """

    statistic: str
    k: int | None
    hot_direction: str
    observed: float | None
    null_mean: float | None
    corrected: float | None
    null_band: tuple[float, float] | None
    interval: tuple[float, float] | None
    share_defined: float
    p_value: float | None
    p_value_se: float | None
    p_hot: float | None
    p_cold: float | None
    reason: str | None = None
    null_distribution: np.ndarray | None = field(default=None, repr=False)

    @property
    def label(self):
        names = {
            "difference": "D_{k} (after {k} makes - after {k} misses)",
            "after_makes": "rate after {k} makes",
            "after_misses": "rate after {k} misses",
            "runs": "number of runs",
            "longest_run": "longest run of makes",
            "lag1": "lag-1 correlation",
        }
        return names[self.statistic].format(k=self.k)

    def row(self):
        band = self.null_band or (None, None)
        interval = self.interval or (None, None)
        return {
            "statistic": self.statistic,
            "k": self.k,
            "observed": _number(self.observed),
            "null_mean": _number(self.null_mean),
            "corrected": _number(self.corrected),
            "null_band_low": _number(band[0]),
            "null_band_high": _number(band[1]),
            "interval_low": _number(interval[0]),
            "interval_high": _number(interval[1]),
            "share_defined": _number(self.share_defined),
            "p_value": _number(self.p_value),
            "p_value_se": _number(self.p_value_se),
            "p_hot": _number(self.p_hot),
            "p_cold": _number(self.p_cold),
            "hot_direction": self.hot_direction,
            "reason": self.reason,
        }


_FRAME_FLOATS = (
    "observed", "null_mean", "corrected", "null_band_low", "null_band_high", "interval_low",
    "interval_high", "share_defined", "p_value", "p_value_se", "p_hot", "p_cold",
)


def _tests_frame(rows):
    frame = pd.DataFrame(rows)
    for name in _FRAME_FLOATS:
        if name in frame:
            frame[name] = frame[name].astype(float)
    if "k" in frame:
        frame["k"] = frame["k"].astype("Int64")
    if "q_value" in frame:
        frame["q_value"] = frame["q_value"].astype(float)
    return frame


# ---------------------------------------------------------------------------
# Classic tests
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class RunsTestResult:
    """Stratified Wald-Wolfowitz runs test (see ``runs_test``).

    Attributes
    ----------
    runs : int
        Observed runs, summed over sessions.
    expected, variance : float
        Null mean and variance of the summed runs (sums of the sessions').
    z : float or None
        ``(runs - expected) / sqrt(variance)``, no continuity correction.
    p_value, p_hot, p_cold : float or None
        p-value for ``alternative``; the one-sided p-values (hot = fewer runs).
    method : {'exact', 'normal'}
    alternative : str
    attempts, sessions : int
    reason : str or None
    """

    runs: int
    expected: float
    variance: float
    z: float | None
    p_value: float | None
    p_hot: float | None
    p_cold: float | None
    method: str
    alternative: str
    attempts: int
    sessions: int
    reason: str | None = None

    def to_frame(self):
        """One row: runs, expected, variance, z, p values, method, alternative."""
        return pd.DataFrame([{
            "test": "wald_wolfowitz", "runs": self.runs, "expected": self.expected,
            "variance": self.variance, "z": _number(self.z), "p_value": _number(self.p_value),
            "p_hot": _number(self.p_hot), "p_cold": _number(self.p_cold), "method": self.method,
            "alternative": self.alternative, "attempts": self.attempts, "sessions": self.sessions,
            "reason": self.reason,
        }]).astype({"z": float, "p_value": float, "p_hot": float, "p_cold": float})

    def summary(self):
        lines = [
            "Wald-Wolfowitz runs test, runs counted within sessions and summed",
            f"  attempts {self.attempts} in {self.sessions} sessions",
            f"  runs {self.runs}, expected {self.expected:.2f} (variance {self.variance:.2f})",
            f"  z {_show(self.z)}, p ({self.alternative}, {self.method}) {_show_p(self.p_value)}",
        ]
        if self.reason:
            lines.append(f"  {self.reason}")
        return "\n".join(lines + _caveat_lines())

    def to_dict(self):
        return {"z": _number(self.z), "p_value": _number(self.p_value), "reason": self.reason}


@dataclass(frozen=True, eq=False)
class SerialCorrelationResult:
    """Pooled within-session autocorrelations with their naive normal test.

    Attributes
    ----------
    lags : ndarray of int
    correlation : ndarray of float
        Pooled within-session autocorrelation per lag (NaN when undefined).
    pairs : ndarray of int
        Number of within-session pairs per lag.
    z, p_value : ndarray of float
        ``correlation * sqrt(pairs)`` and its normal p-value for
        ``alternative``; naive (ignores the estimator's bias toward negative
        values in short sessions).
    alternative : str
    """

    lags: np.ndarray
    correlation: np.ndarray
    pairs: np.ndarray
    z: np.ndarray
    p_value: np.ndarray
    alternative: str

    def to_frame(self):
        return pd.DataFrame({
            "lag": self.lags, "correlation": self.correlation, "pairs": self.pairs,
            "z": self.z, "p_value": self.p_value, "alternative": self.alternative,
        })

    def summary(self):
        lines = ["Serial correlation, pooled within sessions (naive normal test)"]
        for i, lag in enumerate(self.lags):
            lines.append(
                f"  lag {int(lag)}: r {_show(float(self.correlation[i]))} over {int(self.pairs[i])} pairs, "
                f"z {_show(float(self.z[i]))}, p {_show_p(_number(self.p_value[i]))}"
            )
        lines.append(
            "  Naive: in short sessions r is biased toward -1/L under no dependence; "
            "the permutation test's lag1 row corrects for it."
        )
        return "\n".join(lines + _caveat_lines())


# ---------------------------------------------------------------------------
# One player's full test
# ---------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class StreakTestResult:
    """Everything the within-session permutation test found for one player.

    Attributes
    ----------
    player : str or None
    attempts, sessions, makes : int
    make_rate : float
    max_k : int
    alternative : {'hot', 'cold', 'two-sided'}
    method : {'exact', 'random'}
    permutations : int
        Null draws: random permutations, or all arrangements when exact.
    seed : int or None
        The seed the player's stream was derived from (None when a Generator
        was passed in).
    batch : int
    confidence_level : float
    resamples : int
        Bootstrap resamples of games behind the intervals.
    rates : ConditionalRates
        The observed counts and rates.
    tests : tuple of StatisticTest
        D_k, rate after k makes and after k misses for every k, then runs,
        longest run and lag-1 correlation.
    runs_test : RunsTestResult
        The stratified Wald-Wolfowitz test beside them.
    """

    player: str | None
    attempts: int
    sessions: int
    makes: int
    make_rate: float
    max_k: int
    alternative: str
    method: str
    permutations: int
    seed: int | None
    batch: int
    confidence_level: float
    resamples: int
    rates: ConditionalRates
    tests: tuple[StatisticTest, ...]
    runs_test: RunsTestResult

    def test(self, statistic, k=None):
        """The :class:`StatisticTest` of ``statistic`` (and ``k``)."""
        for item in self.tests:
            if item.statistic == statistic and item.k == k:
                return item
        raise KeyError(f"no test of {statistic!r} with k={k!r} in this result")

    def to_frame(self):
        """One row per statistic with the player's settings as columns."""
        rows = []
        for item in self.tests:
            row = {"player": self.player, **item.row()}
            row.update(alternative=self.alternative, method=self.method,
                       permutations=self.permutations, seed=self.seed)
            rows.append(row)
        return _tests_frame(rows)

    def summary(self):
        """A readable table of every statistic, with numbered caveats."""
        name = self.player if self.player is not None else "(unnamed)"
        lines = [
            f"Streak test for {name}: {self.attempts} attempts in {self.sessions} sessions, "
            f"make rate {_show(self.make_rate)}",
            f"Within-session permutation test ({self.method}, {self.permutations} draws, seed "
            f"{self.seed}), alternative '{self.alternative}'",
            f"{'statistic':<44}{'observed':>9}{'null mean':>10}{'corrected':>10}"
            f"{'null band':>17}{'p-value':>9}",
        ]
        for item in self.tests:
            band = (f"[{_show(item.null_band[0])}, {_show(item.null_band[1])}]"
                    if item.null_band else "-")
            lines.append(
                f"{item.label:<44}{_show(item.observed):>9}{_show(item.null_mean):>10}"
                f"{_show(item.corrected):>10}{band:>17}{_show_p(item.p_value):>9}"
            )
            if item.reason:
                lines.append(f"    ({item.reason})")
        rt = self.runs_test
        lines.append(
            f"Wald-Wolfowitz runs test (stratified): z {_show(rt.z)}, p {_show_p(rt.p_value)} ({rt.method})"
        )
        lines.append(
            "Null band: where chance alone puts the statistic (2.5-97.5%), not a confidence "
            f"interval; intervals for corrected effects ({self.confidence_level:.0%}) come from "
            "resampling games."
        )
        return "\n".join(lines + _caveat_lines())

    def to_dict(self, q_values=None):
        """The player's entry of the JSON layout (``q_value`` None unless given)."""
        q_values = q_values or {}
        streak = []
        for k in range(1, self.max_k + 1):
            d = self.test("difference", k)
            i = k - 1
            entry = {
                "k": k,
                "after_makes": _rate_entry(
                    self.rates.makes_after_makes[i], self.rates.attempts_after_makes[i], k, "makes"),
                "after_misses": _rate_entry(
                    self.rates.makes_after_misses[i], self.rates.attempts_after_misses[i], k, "misses"),
                "difference": _number(d.observed),
                "null_mean": _number(d.null_mean),
                "corrected": _number(d.corrected),
                "null_band": _pair(d.null_band),
                "interval": _pair(d.interval),
                "share_defined": _number(d.share_defined),
                "p_value": _number(d.p_value),
                "p_value_se": _number(d.p_value_se),
                "q_value": _number(q_values.get(k)),
                "reason": d.reason,
            }
            streak.append(entry)

        def simple(statistic):
            t = self.test(statistic)
            undefined = t.observed is None or t.null_mean is None or t.p_value is None
            return {"observed": _number(t.observed), "null_mean": _number(t.null_mean),
                    "p_value": _number(t.p_value), "reason": t.reason if undefined else None}

        return {
            "player": self.player,
            "attempts": int(self.attempts),
            "sessions": int(self.sessions),
            "make_rate": _number(self.make_rate),
            "streak": streak,
            "runs": simple("runs"),
            "longest_run": simple("longest_run"),
            "lag1": simple("lag1"),
            "wald_wolfowitz": self.runs_test.to_dict(),
        }


def _rate_entry(makes, attempts, k, kind):
    attempts = int(attempts)
    makes = int(makes)
    rate = makes / attempts if attempts else None
    words = kind if k > 1 else {"makes": "make", "misses": "miss"}[kind]
    reason = None if attempts else f"no attempt followed {k} {words}"
    return {"makes": makes, "attempts": attempts, "rate": rate, "reason": reason}


# ---------------------------------------------------------------------------
# League scan
# ---------------------------------------------------------------------------


@dataclass(frozen=True, eq=False)
class PlayerScanResult:
    """One player's entry of a league scan: the test and the q-values of D_k.

    Attributes
    ----------
    player : str
    result : StreakTestResult
    q_values : tuple of (float or None)
        Benjamini-Hochberg q-value of D_k for k = 1..max_k, across the scanned
        players (None where the player's p-value is undefined).
    """

    player: str
    result: StreakTestResult
    q_values: tuple[float | None, ...]

    def to_frame(self):
        frame = self.result.to_frame()
        q = [self.q_values[int(k) - 1] if s == "difference" else None
             for s, k in zip(frame["statistic"], frame["k"].fillna(0))]
        frame["q_value"] = pd.array(q, dtype="Float64").astype(float)
        return frame

    def to_dict(self):
        return self.result.to_dict({k: q for k, q in enumerate(self.q_values, start=1)})

    def summary(self):
        q = ", ".join(f"D_{k}: {_show(v)}" for k, v in enumerate(self.q_values, start=1))
        return self.result.summary() + f"\nq-values across the league: {q}"


@dataclass(frozen=True, eq=False)
class LeagueTestResult:
    """Pooled league test of D_k: the mean corrected D_k across players.

    Attributes
    ----------
    k : int
    players : int
        Players whose observed D_k is defined (they enter the mean).
    corrected_mean : float or None
        Mean over those players of (observed D_k - the player's null mean).
    null_band : (float, float) or None
        2.5-97.5% quantiles of the pooled statistic under the joint null.
    share_defined : float
    p_value, p_value_se : float or None
    alternative : str
    reason : str or None
    null_distribution : ndarray or None
    """

    k: int
    players: int
    corrected_mean: float | None
    null_band: tuple[float, float] | None
    share_defined: float
    p_value: float | None
    p_value_se: float | None
    alternative: str
    reason: str | None = None
    null_distribution: np.ndarray | None = field(default=None, repr=False)

    def row(self):
        band = self.null_band or (None, None)
        return {
            "k": self.k, "players": self.players, "corrected_mean": _number(self.corrected_mean),
            "null_band_low": _number(band[0]), "null_band_high": _number(band[1]),
            "share_defined": _number(self.share_defined), "p_value": _number(self.p_value),
            "p_value_se": _number(self.p_value_se), "alternative": self.alternative,
            "reason": self.reason,
        }

    def to_dict(self):
        return {"k": self.k, "players": self.players, "corrected_mean": _number(self.corrected_mean),
                "p_value": _number(self.p_value), "reason": self.reason}


@dataclass(frozen=True, eq=False)
class LeagueScanResult:
    """A league scan: every player's test, q-values, and the pooled tests.

    Attributes
    ----------
    players : tuple of PlayerScanResult
        In the order the players were given.
    league : tuple of LeagueTestResult
        One pooled test per k.
    skipped : tuple of (str, str)
        Players left out, with the reason (too few attempts).
    seed : int or None
    permutations : int
    alternative : str
    max_k : int
    min_attempts : int
    """

    players: tuple[PlayerScanResult, ...]
    league: tuple[LeagueTestResult, ...]
    skipped: tuple[tuple[str, str], ...]
    seed: int | None
    permutations: int
    alternative: str
    max_k: int
    min_attempts: int

    def player(self, player):
        """The :class:`PlayerScanResult` of ``player``."""
        for item in self.players:
            if item.player == player:
                return item
        raise KeyError(f"player {player!r} is not in this scan")

    def to_frame(self):
        """Tidy: one row per player and statistic, with ``q_value`` on D_k rows."""
        frames = [p.to_frame() for p in self.players]
        if not frames:
            return _tests_frame([]).reindex(columns=[
                "player", "statistic", "k", "observed", "null_mean", "corrected", "null_band_low",
                "null_band_high", "interval_low", "interval_high", "share_defined", "p_value",
                "p_value_se", "p_hot", "p_cold", "hot_direction", "reason", "alternative", "method",
                "permutations", "seed", "q_value"])
        return pd.concat(frames, ignore_index=True)

    def league_frame(self):
        """One row per k: the pooled league test."""
        return _tests_frame([t.row() for t in self.league])

    def summary(self):
        lines = [
            f"League scan: {len(self.players)} players tested (min {self.min_attempts} attempts), "
            f"{len(self.skipped)} skipped; {self.permutations} within-session permutations, "
            f"seed {self.seed}, alternative '{self.alternative}'",
            f"{'player':<24}" + "".join(f"{'D_' + str(k) + ' corr':>11}{'p':>9}{'q':>9}"
                                       for k in range(1, self.max_k + 1)),
        ]
        for item in self.players:
            cells = []
            for k in range(1, self.max_k + 1):
                t = item.result.test("difference", k)
                cells.append(f"{_show(t.corrected):>11}{_show_p(t.p_value):>9}"
                             f"{_show_p(item.q_values[k - 1]):>9}")
            lines.append(f"{str(item.player)[:23]:<24}" + "".join(cells))
        for t in self.league:
            lines.append(
                f"Pooled league test, D_{t.k}: mean corrected {_show(t.corrected_mean)} over "
                f"{t.players} players, p {_show_p(t.p_value)}"
                + (f" ({t.reason})" if t.reason else "")
            )
        return "\n".join(lines + _caveat_lines((LEAGUE_CAVEAT,)))

    def to_dict(self):
        """The stable JSON layout: ``seed``, ``permutations``, ``players``, ``league``."""
        return {
            "seed": self.seed,
            "permutations": int(self.permutations),
            "players": [p.to_dict() for p in self.players],
            "league": [t.to_dict() for t in self.league],
        }
