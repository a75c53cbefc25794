"""Streak odds: how often chance alone produces a run or a hot stretch.

Everything here assumes attempts that are independent given their make
probabilities (a steady shooter, or one whose per-attempt probabilities come
from a difficulty model) or, given the number of makes, every arrangement
equally likely. It answers:

- :func:`run_probability`: P(a run of at least ``r`` makes, misses, or either,
  somewhere in ``n`` attempts) at a fixed rate: an exact rational answer by an
  O(n) integer recurrence when the rate is a :class:`fractions.Fraction`, and
  otherwise powers of the small transition matrix of the run-length chain
  (n = 10**6 in well under a millisecond) with a stated rounding bound;
- :func:`run_probability_per_attempt`: the same with a probability per attempt
  (a forward pass over the run-length states, O(n * r));
- :func:`run_probability_given_makes`: given the number of makes, by exact
  integer combinatorics;
- :func:`longest_run_odds`: the whole distribution of the longest run and its
  mean; :func:`expected_attempts_until_run`;
- :func:`window_probability`: P(some window of ``Y`` consecutive attempts holds
  at least ``X`` makes): an exact Markov chain on the window's contents, the
  Naus (1982) approximation, or Monte Carlo, and the result says which;
- :func:`combine_sessions`: many opportunities (games, players, seasons),
  with the chance of at least one occurrence and the expected number;
- :func:`expected_run_count`, :func:`expected_window_count`: the expected
  number of separate streaks;
- :func:`longest_run_figure`: the longest-run distribution with an observed
  run marked (Plotly).

Accuracy. An exact result carries the value as a ``Fraction``. A float result
carries ``error_bound``, a worst-case bound on its absolute rounding error:
every float method here adds and multiplies nonnegative numbers only, so the
relative error of the computed probability is at most (number of rounding
steps on any path) x 2**-53, which the functions count. Approximations and
Monte Carlo estimates say so, with the standard error where there is one.
"""

from __future__ import annotations

import decimal
import itertools
import math
import numbers
from collections import deque
from dataclasses import dataclass
from fractions import Fraction

import numpy as np
import pandas as pd
from scipy import signal, sparse, stats

from .figures import OKABE_ITO

__all__ = [
    "EXACT_DISTRIBUTION_MAX_ATTEMPTS",
    "EXACT_MAX_ATTEMPTS",
    "KINDS",
    "LongestRunOddsResult",
    "OKABE_ITO",
    "OpportunityResult",
    "RunProbabilityResult",
    "WINDOW_METHODS",
    "WindowProbabilityResult",
    "combine_sessions",
    "expected_attempts_until_run",
    "expected_run_count",
    "expected_window_count",
    "longest_run_figure",
    "longest_run_odds",
    "run_probability",
    "run_probability_given_makes",
    "run_probability_per_attempt",
    "window_probability",
]

#: What a run is a run of.
KINDS = ("makes", "misses", "either")

#: Methods of :func:`window_probability`.
WINDOW_METHODS = ("auto", "exact", "naus", "monte_carlo")

#: Largest number of attempts for which a Fraction rate gets an exact answer
#: by default (the O(n) big-integer recurrence takes well under a second).
EXACT_MAX_ATTEMPTS = 20_000

#: Largest number of attempts for an exact distribution of the longest run at
#: a Fraction rate by default (one O(n) recurrence per run length).
EXACT_DISTRIBUTION_MAX_ATTEMPTS = 400

#: Attempts x states for exact rational per-attempt and window passes.
_EXACT_RATIONAL_MAX_WORK = 400_000

#: Attempts x states for the exact float window chain in ``method="auto"``
#: (about a second).
_WINDOW_EXACT_MAX_WORK = 2.5e8

#: Most states the exact window chain may build on request.
_WINDOW_MAX_STATES = 20_000_000

#: Largest window length for which the exact chain is attempted at all.
_WINDOW_MAX_EXACT_LENGTH = 40

#: Monte Carlo draws for windows unless told (standard error <= 0.0016).
_DEFAULT_SAMPLES = 100_000

#: A tail probability below this is treated as zero when a float distribution
#: is truncated (its mass goes into ``error_bound``).
_TAIL_CUTOFF = 1e-17

#: Unit roundoff of IEEE double precision.
_UNIT = 2.0**-53



# ---------------------------------------------------------------------------
# Validation helpers
# ---------------------------------------------------------------------------


def _show(value):
    text = repr(value) if isinstance(value, str) else str(value)
    return text if len(text) <= 60 else text[:57] + "..."


def _check_integer(name, value, minimum=0):
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        if isinstance(value, float) and value.is_integer():
            value = int(value)
        else:
            raise ValueError(f"`{name}` must be an integer (got {_show(value)})")
    value = int(value)
    if value < minimum:
        raise ValueError(f"`{name}` must be an integer >= {minimum} (got {value})")
    return value


def _check_rate(value, name="rate"):
    """Return ``(rate, rational)``: a Fraction when given exactly, else a float in [0, 1]."""
    if isinstance(value, bool):
        raise ValueError(f"`{name}` must be a number in [0, 1] (got {value!r})")
    if isinstance(value, decimal.Decimal):
        value = Fraction(value)
    if isinstance(value, numbers.Rational):
        rate = Fraction(value)
        if not 0 <= rate <= 1:
            raise ValueError(f"`{name}` must be in [0, 1] (got {rate})")
        return rate, True
    if isinstance(value, numbers.Real):
        rate = float(value)
        if not (math.isfinite(rate) and 0.0 <= rate <= 1.0):
            raise ValueError(f"`{name}` must be in [0, 1] (got {_show(value)})")
        return rate, False
    raise ValueError(f"`{name}` must be a number in [0, 1] (got {_show(value)})")


def _check_rates(values, name="rates"):
    """Return ``(rates, rational)``: a list of Fractions, or a float array."""
    if isinstance(values, (str, bytes)) or np.ndim(values) != 1:
        raise ValueError(f"`{name}` must be a one-dimensional sequence of probabilities (got {_show(values)})")
    items = list(values) if not isinstance(values, np.ndarray) else values
    if isinstance(items, list) and all(
        isinstance(v, (numbers.Rational, decimal.Decimal)) and not isinstance(v, bool) for v in items
    ):
        rates = [_check_rate(v, name)[0] for v in items]
        return rates, True
    try:
        array = np.asarray(items, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"`{name}` must hold probabilities in [0, 1] (got {_show(values)})") from None
    bad = ~(np.isfinite(array) & (array >= 0.0) & (array <= 1.0))
    if bad.any():
        raise ValueError(f"`{name}` must hold probabilities in [0, 1] (got {_show(array[bad][0])} at position {int(np.argmax(bad))})")
    return array, False


def _check_kind(kind):
    if kind not in KINDS:
        raise ValueError(f"`kind` must be one of {', '.join(repr(k) for k in KINDS)} (got {_show(kind)})")
    return kind


def _check_exact(exact):
    if exact not in (None, True, False):
        raise ValueError(f"`exact` must be None, True or False (got {_show(exact)})")
    return exact


def _caps(kind, run):
    """The longest allowed make run and miss run that still counts as 'no run': (make_cap, miss_cap)."""
    if kind == "makes":
        return run, None
    if kind == "misses":
        return None, run
    return run, run


def _run_name(kind, run):
    noun = {"makes": "makes", "misses": "misses", "either": "makes or misses"}[kind]
    return f"a run of at least {run} {noun}"


def _float_accuracy(bound, probability):
    return f"floating point; absolute error at most {bound:.1e} ({bound / probability if probability > 0 else 0.0:.1e} relative; worst-case rounding bound)"


# ---------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------


_CAUTION = (
    "Chance alone produces long runs far more often than intuition expects: a run "
    "like this is not by itself evidence of a hot hand.",
    "These odds assume independent attempts at the stated probabilities; real "
    "shooters' rates vary with shot difficulty and form.",
    "Nothing here is betting advice.",
)


_GIVEN_MAKES_CAUTION = (
    "These odds take the number of makes as given and every order of them as equally "
    "likely, as a shooter without a hot hand would produce."
)


def _caveats(extra=(), model=None):
    caution = _CAUTION if model != "given_makes" else (_CAUTION[0], _GIVEN_MAKES_CAUTION, _CAUTION[2])
    lines = ["Caveats:"]
    for i, text in enumerate((*extra, *caution), start=1):
        lines.append(f"  {i}. {text}")
    return lines


def _fraction_text(value):
    if value is None:
        return None
    text = f"{value.numerator}/{value.denominator}"
    return text if len(text) <= 200 else None


@dataclass(frozen=True)
class RunProbabilityResult:
    """P(a run of at least ``run`` of ``kind`` somewhere in ``attempts`` attempts).

    Attributes
    ----------
    probability : float
    fraction : Fraction or None
        The exact value when ``exact``.
    method : str
        ``"rational_recurrence"``, ``"rational_forward_pass"``,
        ``"combinatorial"`` (exact), ``"matrix_power"``, ``"forward_pass"``
        (float).
    exact : bool
    error_bound : float
        Bound on the absolute rounding error (0 when exact).
    accuracy : str
        The same in words.
    attempts, run : int
    kind : str
        ``"makes"``, ``"misses"`` or ``"either"``.
    model : str
        ``"fixed_rate"``, ``"per_attempt"`` or ``"given_makes"``.
    rate : float or None
        The fixed rate (``None`` otherwise); ``mean_rate`` for per-attempt.
    makes : int or None
        The number of makes (``given_makes`` only).
    """

    probability: float
    fraction: Fraction | None
    method: str
    exact: bool
    error_bound: float
    accuracy: str
    attempts: int
    run: int
    kind: str
    model: str
    rate: float | None = None
    makes: int | None = None

    def to_dict(self):
        """Stable JSON-ready keys."""
        return {
            "question": _run_name(self.kind, self.run) + f" in {self.attempts} attempts",
            "probability": self.probability,
            "exact_fraction": _fraction_text(self.fraction),
            "method": self.method,
            "exact": self.exact,
            "error_bound": self.error_bound,
            "accuracy": self.accuracy,
            "model": self.model,
            "attempts": self.attempts,
            "run": self.run,
            "kind": self.kind,
            "rate": self.rate,
            "makes": self.makes,
        }

    def to_frame(self):
        """One row with the columns of :meth:`to_dict`."""
        return pd.DataFrame([self.to_dict()])

    def summary(self):
        """Text with numbered caveats."""
        given = {
            "fixed_rate": f"a steady {_percent(self.rate)} shooter",
            "per_attempt": f"the given per-attempt probabilities (mean {_percent(self.rate)})",
            "given_makes": f"{self.makes} makes, every order equally likely",
        }[self.model]
        lines = [
            f"Chance of {_run_name(self.kind, self.run)} in {self.attempts} attempts, for {given}:",
            f"  {self.probability:.6g}" + (f"  (exactly {_fraction_text(self.fraction)})" if _fraction_text(self.fraction) else ""),
            f"  method: {self.method}; {self.accuracy}",
        ]
        return "\n".join(lines + _caveats(model=self.model))


@dataclass(frozen=True)
class WindowProbabilityResult:
    """P(some window of ``window`` consecutive attempts holds at least ``at_least`` makes).

    Attributes
    ----------
    probability : float
    fraction : Fraction or None
    method : str
        ``"exact_chain"`` (exact or float), ``"naus_approximation"``,
        ``"monte_carlo"``.
    exact : bool
        True for an exact rational answer.
    error_bound : float or None
        Bound on the absolute rounding error of the exact chain in floats; 0
        for rationals; ``None`` for approximations.
    standard_error : float or None
        Monte Carlo standard error.
    accuracy : str
    attempts, window, at_least : int
    rate : float or None
        Fixed rate, or the mean of per-attempt rates.
    states : int or None
        States of the exact chain.
    samples : int or None
    seed : object
        The ``rng`` given to a Monte Carlo run.
    """

    probability: float
    fraction: Fraction | None
    method: str
    exact: bool
    error_bound: float | None
    standard_error: float | None
    accuracy: str
    attempts: int
    window: int
    at_least: int
    rate: float | None
    states: int | None = None
    samples: int | None = None
    seed: object = None

    def to_dict(self):
        """Stable JSON-ready keys."""
        return {
            "question": f"at least {self.at_least} makes in some {self.window} consecutive attempts, in {self.attempts} attempts",
            "probability": self.probability,
            "exact_fraction": _fraction_text(self.fraction),
            "method": self.method,
            "exact": self.exact,
            "error_bound": self.error_bound,
            "standard_error": self.standard_error,
            "accuracy": self.accuracy,
            "attempts": self.attempts,
            "window": self.window,
            "at_least": self.at_least,
            "rate": self.rate,
            "states": self.states,
            "samples": self.samples,
            "seed": self.seed if isinstance(self.seed, (int, type(None))) else str(self.seed),
        }

    def to_frame(self):
        """One row with the columns of :meth:`to_dict`."""
        return pd.DataFrame([self.to_dict()])

    def summary(self):
        """Text with numbered caveats."""
        lines = [
            f"Chance of at least {self.at_least} makes in some {self.window} consecutive attempts "
            f"within {self.attempts} attempts at {_percent(self.rate)}:",
            f"  {self.probability:.6g}" + (f"  (exactly {_fraction_text(self.fraction)})" if _fraction_text(self.fraction) else ""),
            f"  method: {self.method}; {self.accuracy}",
        ]
        return "\n".join(lines + _caveats())


@dataclass(frozen=True, eq=False)
class LongestRunOddsResult:
    """The distribution of the longest run under chance.

    Attributes
    ----------
    attempts : int
    kind : str
    model : str
    lengths : ndarray of int
        0..``attempts``.
    probabilities : ndarray of float
        P(longest run = length).
    at_least : ndarray of float
        P(longest run >= length).
    mean : float
        Expected longest run.
    fractions : tuple of Fraction or None
        Exact P(longest run = length) when ``exact``.
    mean_fraction : Fraction or None
    method : str
    exact : bool
    error_bound : float
        Bound on the absolute error of every ``at_least`` entry (rounding and
        truncation of a negligible tail); entries of ``probabilities`` are
        within twice that, and ``mean`` within ``mean_error_bound``.
    mean_error_bound : float
    rate : float or None
    makes : int or None
    """

    attempts: int
    kind: str
    model: str
    lengths: np.ndarray
    probabilities: np.ndarray
    at_least: np.ndarray
    mean: float
    fractions: tuple | None
    mean_fraction: Fraction | None
    method: str
    exact: bool
    error_bound: float
    mean_error_bound: float
    rate: float | None = None
    makes: int | None = None

    def probability_at_least(self, run):
        """P(longest run >= ``run``)."""
        run = _check_integer("run", run, 0)
        if run > self.attempts:
            return 0.0
        return float(self.at_least[run])

    def to_frame(self):
        """One row per length: ``length``, ``probability``, ``at_least_probability``."""
        return pd.DataFrame(
            {"length": self.lengths, "probability": self.probabilities, "at_least_probability": self.at_least}
        )

    def to_dict(self):
        """Stable JSON-ready keys (lengths with a probability above 1e-12)."""
        keep = self.probabilities > 1e-12
        return {
            "attempts": self.attempts,
            "kind": self.kind,
            "model": self.model,
            "method": self.method,
            "exact": self.exact,
            "mean": self.mean,
            "exact_mean": _fraction_text(self.mean_fraction),
            "error_bound": self.error_bound,
            "lengths": self.lengths[keep].tolist(),
            "probabilities": self.probabilities[keep].tolist(),
        }

    def summary(self):
        """Text with numbered caveats."""
        noun = {"makes": "makes", "misses": "misses", "either": "makes or misses"}[self.kind]
        lines = [
            f"Longest run of {noun} in {self.attempts} attempts: mean {self.mean:.4f}"
            + (f" (exactly {_fraction_text(self.mean_fraction)})" if _fraction_text(self.mean_fraction) else ""),
            "  length  P(longest = length)  P(longest >= length)",
        ]
        for length, prob, tail in zip(self.lengths, self.probabilities, self.at_least, strict=True):
            if prob > 5e-5 or (0 < length and tail > 5e-5):
                lines.append(f"  {int(length):6d}  {prob:19.4f}  {tail:20.4f}")
        lines.append(f"  method: {self.method}; " + ("exact" if self.exact else f"absolute error at most {self.error_bound:.1e}"))
        return "\n".join(lines + _caveats(model=self.model))


@dataclass(frozen=True)
class OpportunityResult:
    """One event over many opportunities: sessions, players and seasons.

    An *occurrence* is a session (game) in which the event happens at least
    once. Sessions are independent; the league has ``players`` players alike.

    Attributes
    ----------
    sessions : int
        Sessions in one player's season.
    probability_season : float
        P(at least one occurrence in one player's season) = 1 - prod(1 - P_g).
    expected_season : float
        Expected occurrences in one player's season = sum(P_g).
    players, seasons : int
    probability_player_span : float
        One player, over ``seasons`` seasons.
    probability_league_season : float
        Anyone in the league, in one season.
    expected_league_season : float
    probability_league_span : float
        Anyone in the league, over ``seasons`` seasons.
    expected_league_span : float
    seasons_per_occurrence : float
        One player: about once every this many seasons (1 / expected_season;
        ``inf`` when the event cannot happen).
    league_seasons_per_occurrence : float
        The league: 1 / expected_league_season.
    fraction_season, fraction_expected_season : Fraction or None
        Exact values when every session probability was a Fraction.
    """

    sessions: int
    probability_season: float
    expected_season: float
    players: int
    seasons: int
    probability_player_span: float
    probability_league_season: float
    expected_league_season: float
    probability_league_span: float
    expected_league_span: float
    seasons_per_occurrence: float
    league_seasons_per_occurrence: float
    fraction_season: Fraction | None = None
    fraction_expected_season: Fraction | None = None

    def to_dict(self):
        """Stable JSON-ready keys."""
        return {
            "sessions": self.sessions,
            "players": self.players,
            "seasons": self.seasons,
            "probability_season": self.probability_season,
            "expected_season": self.expected_season,
            "probability_player_span": self.probability_player_span,
            "probability_league_season": self.probability_league_season,
            "expected_league_season": self.expected_league_season,
            "probability_league_span": self.probability_league_span,
            "expected_league_span": self.expected_league_span,
            "seasons_per_occurrence": self.seasons_per_occurrence,
            "league_seasons_per_occurrence": self.league_seasons_per_occurrence,
            "exact_probability_season": _fraction_text(self.fraction_season),
            "exact_expected_season": _fraction_text(self.fraction_expected_season),
        }

    def to_frame(self):
        """One row with the columns of :meth:`to_dict`."""
        return pd.DataFrame([self.to_dict()])

    def summary(self):
        """Text with numbered caveats."""
        lines = [
            f"One player, one season ({self.sessions} sessions): P(at least once) = {self.probability_season:.4g}, "
            f"expected occurrences {self.expected_season:.4g} (about once every {_seasons_text(self.seasons_per_occurrence)})",
            f"League of {self.players}, one season: P(anyone) = {self.probability_league_season:.4g}, "
            f"expected {self.expected_league_season:.4g}",
            f"Over {self.seasons} season(s): one player {self.probability_player_span:.4g}; "
            f"anyone {self.probability_league_span:.4g}; expected {self.expected_league_span:.4g}",
        ]
        return "\n".join(lines + _caveats(("An occurrence is a session with the event at least once; sessions are independent.",)))


def _percent(rate):
    if rate is None:
        return "-"
    return f"{100 * float(rate):.3g}%"


def _seasons_text(value):
    if not math.isfinite(value):
        return "never"
    return f"{value:.3g} seasons"


# ---------------------------------------------------------------------------
# The run-length chain
# ---------------------------------------------------------------------------


def _chain_targets(make_cap, miss_cap):
    """Where each state of the run-length chain goes on a make and on a miss.

    States: 0 = start; then the make-run lengths 1..make_cap-1 (one state when
    make runs are not capped); then the miss-run lengths; last = absorbed
    (a run of at least the cap has happened).
    """
    make_states = make_cap - 1 if make_cap is not None else 1
    miss_states = miss_cap - 1 if miss_cap is not None else 1
    size = 1 + make_states + miss_states + 1
    absorbed = size - 1

    def after_make(length):
        if make_cap is None:
            return 1
        return absorbed if length >= make_cap else length

    def after_miss(length):
        if miss_cap is None:
            return 1 + make_states
        return absorbed if length >= miss_cap else make_states + length

    make_target = np.empty(size, dtype=np.intp)
    miss_target = np.empty(size, dtype=np.intp)
    make_target[0], miss_target[0] = after_make(1), after_miss(1)
    for length in range(1, make_states + 1):
        make_target[length] = after_make(length + 1)
        miss_target[length] = after_miss(1)
    for length in range(1, miss_states + 1):
        make_target[make_states + length] = after_make(1)
        miss_target[make_states + length] = after_miss(length + 1)
    make_target[absorbed] = miss_target[absorbed] = absorbed
    return make_target, miss_target


def _chain_matrix(rate, make_cap, miss_cap):
    make_target, miss_target = _chain_targets(make_cap, miss_cap)
    size = len(make_target)
    matrix = np.zeros((size, size))
    rows = np.arange(size)
    np.add.at(matrix, (rows, make_target), rate)
    np.add.at(matrix, (rows, miss_target), 1.0 - rate)
    return matrix


def _absorbed_by_powers(matrix, steps):
    """(e_0 M^steps)[-1] by binary powering; returns (value, relative error bound)."""
    size = matrix.shape[0]
    vector = np.zeros(size)
    vector[0] = 1.0
    power = matrix
    remaining = steps
    while remaining:
        if remaining & 1:
            vector = vector @ power
        remaining >>= 1
        if remaining:
            power = power @ power
    bits = max(steps.bit_length(), 1)
    # Nonnegative products: each squaring at most doubles the relative error
    # and adds gamma_size; the input matrix is off by one rounding.
    relative = 1.01 * ((steps + bits + 1) * (size + 1)) * _UNIT
    return min(float(vector[-1]), 1.0), relative


def _alive_weight(steps, a, c, make_cap, miss_cap):
    """Integer weight of the sequences with no capped run, make weight ``a``, miss weight ``c``.

    O(steps) big-integer operations: the weight of being in a make run of
    length l at time t is a**(l-1) times the weight that entered it at time
    t-l+1, so each run kind's total obeys a sliding-window recurrence.
    """
    if steps == 0:
        return 1
    start = 1
    in_makes = in_misses = 0
    make_entries: deque[int] = deque()
    miss_entries: deque[int] = deque()
    a_drop = a ** (make_cap - 1) if make_cap is not None else 0
    c_drop = c ** (miss_cap - 1) if miss_cap is not None else 0
    for _ in range(steps):
        enter_makes = a * (in_misses + start)
        enter_misses = c * (in_makes + start)
        new_makes = a * in_makes + enter_makes
        new_misses = c * in_misses + enter_misses
        if make_cap is not None:
            make_entries.append(enter_makes)
            if len(make_entries) == make_cap:
                new_makes -= a_drop * make_entries.popleft()
        if miss_cap is not None:
            miss_entries.append(enter_misses)
            if len(miss_entries) == miss_cap:
                new_misses -= c_drop * miss_entries.popleft()
        in_makes, in_misses, start = new_makes, new_misses, 0
    return in_makes + in_misses


def _exact_fixed(attempts, rate, make_cap, miss_cap):
    a, b = rate.numerator, rate.denominator
    total = b**attempts
    alive = _alive_weight(attempts, a, b - a, make_cap, miss_cap)
    return Fraction(total - alive, total)


def _float_fixed(attempts, rate, make_cap, miss_cap):
    matrix = _chain_matrix(rate, make_cap, miss_cap)
    value, relative = _absorbed_by_powers(matrix, attempts)
    return value, relative * value


def _run_probability_iv(attempts, run, rate, kind, exact):
    attempts = _check_integer("attempts", attempts, 0)
    run = _check_integer("run", run, 1)
    rate, rational = _check_rate(rate)
    kind = _check_kind(kind)
    exact = _check_exact(exact)
    if exact and not rational:
        raise ValueError(
            f"`exact=True` needs `rate` as a fractions.Fraction (got {_show(rate)}); "
            f"for example Fraction('{rate}')"
        )
    return attempts, run, rate, rational, kind, exact


def run_probability(attempts, run, rate, *, kind="makes", exact=None):
    r"""Chance of a run of at least ``run`` somewhere in ``attempts`` attempts at a fixed rate.

    Parameters
    ----------
    attempts : int
        Number of attempts, n >= 0.
    run : int
        Run length r >= 1. A run longer than the attempts has probability 0.
    rate : float or fractions.Fraction
        Make probability p of every attempt, in [0, 1].
    kind : {"makes", "misses", "either"}
        Count runs of makes, of misses, or of either.
    exact : bool, optional
        ``None`` (default): exact when ``rate`` is a Fraction (or 0/1) and
        ``attempts <= EXACT_MAX_ATTEMPTS``; ``True``: exact whatever the size
        (needs a Fraction); ``False``: floats.

    Returns
    -------
    RunProbabilityResult

    Notes
    -----
    The outcomes drive a chain on the current run length (start, make runs
    1..r-1, miss runs 1..r-1, and an absorbing "run happened" state). In
    floats, the answer is the absorbing entry of :math:`e_0 M^n`, computed by
    repeated squaring in :math:`O(r^3 \log n)`; all entries are nonnegative,
    so the relative error is at most about :math:`(n + \log_2 n)(d + 1) 2^{-53}`
    for d states (reported as ``error_bound``). Exactly, with
    :math:`p = a/b`, the weight :math:`W_n = b^n P(\text{no run})` of each run
    kind obeys a sliding recurrence: the weight in make runs at time t is
    :math:`Z_t = a Z_{t-1} + E_t - a^{r-1} E_{t-r+1}`, where :math:`E_t`
    enters a new make run; O(n) integer steps.

    References
    ----------
    .. [1] Feller, W. (1968). An Introduction to Probability Theory and Its
       Applications, Vol. 1, 3rd ed., ch. XIII (recurrent events; success
       runs). Wiley.

    Examples
    --------
    >>> from fractions import Fraction
    >>> from streakwise.analysis.odds import run_probability
    >>> run_probability(30, 6, Fraction(2, 5)).fraction > 0
    True
    >>> round(run_probability(1_000, 8, 0.43).probability, 4)
    0.4862
    """
    attempts, run, rate, rational, kind, exact = _run_probability_iv(attempts, run, rate, kind, exact)
    make_cap, miss_cap = _caps(kind, run)
    use_exact = rational and (exact or (exact is None and attempts <= EXACT_MAX_ATTEMPTS))
    common = dict(attempts=attempts, run=run, kind=kind, model="fixed_rate", rate=float(rate))
    if run > attempts:
        return RunProbabilityResult(0.0, Fraction(0), "impossible", True, 0.0, "exact (the run is longer than the attempts)", **common)
    if use_exact:
        value = _exact_fixed(attempts, rate, make_cap, miss_cap)
        return RunProbabilityResult(float(value), value, "rational_recurrence", True, 0.0, "exact rational", **common)
    probability, bound = _float_fixed(attempts, float(rate), make_cap, miss_cap)
    return RunProbabilityResult(probability, None, "matrix_power", False, bound, _float_accuracy(bound, probability), **common)


# ---------------------------------------------------------------------------
# Per-attempt probabilities
# ---------------------------------------------------------------------------


def _forward_exact(rates, make_cap, miss_cap):
    """Exact absorption probability for Fraction rates (integer weights, common denominator)."""
    make_target, miss_target = _chain_targets(make_cap, miss_cap)
    size = len(make_target)
    weights = [0] * size
    weights[0] = 1
    denominator = 1
    for rate in rates:
        a, b = rate.numerator, rate.denominator
        c = b - a
        new = [0] * size
        for state, weight in enumerate(weights):
            if weight:
                new[make_target[state]] += a * weight
                new[miss_target[state]] += c * weight
        weights = new
        denominator *= b
    return Fraction(weights[-1], denominator)


def _forward_float(rates, make_cap, miss_cap):
    make_target, miss_target = _chain_targets(make_cap, miss_cap)
    size = len(make_target)
    vector = np.zeros(size)
    vector[0] = 1.0
    for rate in rates.tolist():
        vector = rate * np.bincount(make_target, weights=vector, minlength=size) + (1.0 - rate) * np.bincount(
            miss_target, weights=vector, minlength=size
        )
    relative = 1.01 * len(rates) * (size + 4) * _UNIT
    return min(float(vector[-1]), 1.0), relative


def _run_probability_per_attempt_iv(rates, run, kind, exact):
    rates, rational = _check_rates(rates)
    run = _check_integer("run", run, 1)
    kind = _check_kind(kind)
    exact = _check_exact(exact)
    if exact and not rational:
        raise ValueError("`exact=True` needs `rates` as fractions.Fraction values")
    return rates, rational, run, kind, exact


def run_probability_per_attempt(rates, run, *, kind="makes", exact=None):
    r"""Chance of a run of at least ``run`` when each attempt has its own make probability.

    Parameters
    ----------
    rates : sequence of float or fractions.Fraction
        Make probability of each attempt, in order (e.g. from a difficulty
        model).
    run : int
        Run length r >= 1.
    kind : {"makes", "misses", "either"}
    exact : bool, optional
        ``None``: exact when every rate is a Fraction and the work
        (attempts x states) is small; ``True``: exact (Fractions needed);
        ``False``: floats.

    Returns
    -------
    RunProbabilityResult
        ``rate`` holds the mean of the rates.

    Notes
    -----
    A forward pass over the run-length states: at attempt i the probability
    vector moves by :math:`v \leftarrow p_i\, v A_{\text{make}} + (1 - p_i)\, v
    A_{\text{miss}}`, where each row of the 0/1 matrices has one entry (one
    vectorised scatter per kind). O(n r) work; the relative rounding error is
    at most :math:`n (d + 4) 2^{-53}`.

    References
    ----------
    .. [1] Feller, W. (1968). An Introduction to Probability Theory and Its
       Applications, Vol. 1, 3rd ed., ch. XIII. Wiley.

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.odds import run_probability_per_attempt
    >>> rates = np.random.default_rng(7).uniform(0.3, 0.6, size=200)
    >>> 0 < run_probability_per_attempt(rates, 6).probability < 1
    True
    """
    rates, rational, run, kind, exact = _run_probability_per_attempt_iv(rates, run, kind, exact)
    make_cap, miss_cap = _caps(kind, run)
    attempts = len(rates)
    states = 2 * run + 2
    mean_rate = float(sum(rates) / attempts) if attempts else None
    common = dict(attempts=attempts, run=run, kind=kind, model="per_attempt", rate=mean_rate)
    if run > attempts:
        return RunProbabilityResult(0.0, Fraction(0), "impossible", True, 0.0, "exact (the run is longer than the attempts)", **common)
    use_exact = rational and (exact or (exact is None and attempts * states <= _EXACT_RATIONAL_MAX_WORK))
    if use_exact:
        value = _forward_exact(rates, make_cap, miss_cap)
        return RunProbabilityResult(float(value), value, "rational_forward_pass", True, 0.0, "exact rational", **common)
    rates = np.asarray([float(r) for r in rates]) if rational else rates
    probability, relative = _forward_float(rates, make_cap, miss_cap)
    bound = relative * probability
    return RunProbabilityResult(probability, None, "forward_pass", False, bound, _float_accuracy(bound, probability), **common)


# ---------------------------------------------------------------------------
# Given the number of makes
# ---------------------------------------------------------------------------


def _compositions(total, parts, largest):
    """Ways to write ``total`` as an ordered sum of ``parts`` integers in [1, largest] (None: unbounded)."""
    if parts == 0:
        return 1 if total == 0 else 0
    if total < parts:
        return 0
    if largest is None or largest >= total:
        return math.comb(total - 1, parts - 1)
    if largest < 1:
        return 0
    count = 0
    for j in range(parts + 1):
        rest = total - j * largest
        if rest < parts:
            break
        term = math.comb(parts, j) * math.comb(rest - 1, parts - 1)
        count += -term if j % 2 else term
    return count


def _gaps_without_run(makes, misses, cap):
    """Arrangements of ``makes`` makes among ``misses`` misses with every make run < cap."""
    gaps = misses + 1
    count = 0
    for j in range(gaps + 1):
        rest = makes - j * cap
        if rest < 0:
            break
        term = math.comb(gaps, j) * math.comb(rest + gaps - 1, gaps - 1)
        count += -term if j % 2 else term
    return count


def _arrangements_without_run(attempts, makes, make_cap, miss_cap):
    """Number of 0/1 strings with ``makes`` ones and every make run < make_cap, miss run < miss_cap."""
    misses = attempts - makes
    if miss_cap is None:
        return _gaps_without_run(makes, misses, make_cap) if make_cap is not None else math.comb(attempts, makes)
    if make_cap is None:
        return _gaps_without_run(misses, makes, miss_cap)
    if makes == 0 or misses == 0:
        length = attempts
        cap = make_cap if misses == 0 else miss_cap
        return 1 if length < cap else 0
    total = 0
    for make_runs in range(1, makes + 1):
        ways_makes = _compositions(makes, make_runs, make_cap - 1)
        if ways_makes == 0:
            continue
        ways_misses = (
            _compositions(misses, make_runs - 1, miss_cap - 1)
            + 2 * _compositions(misses, make_runs, miss_cap - 1)
            + _compositions(misses, make_runs + 1, miss_cap - 1)
        )
        total += ways_makes * ways_misses
    return total


def _run_probability_given_makes_iv(attempts, run, makes, kind):
    attempts = _check_integer("attempts", attempts, 0)
    run = _check_integer("run", run, 1)
    makes = _check_integer("makes", makes, 0)
    if makes > attempts:
        raise ValueError(f"`makes` must be at most `attempts` ({attempts}) (got {makes})")
    return attempts, run, makes, _check_kind(kind)


def run_probability_given_makes(attempts, run, makes, *, kind="makes"):
    r"""Chance of a run of at least ``run`` given ``makes`` makes in ``attempts`` attempts.

    Every arrangement of the makes is equally likely (the permutation null).

    Parameters
    ----------
    attempts : int
    run : int
    makes : int
        0 <= makes <= attempts.
    kind : {"makes", "misses", "either"}

    Returns
    -------
    RunProbabilityResult
        Always exact (``fraction`` holds the value).

    Notes
    -----
    The misses leave :math:`g = n - m + 1` gaps for the makes; the
    arrangements with no run of r makes are the ways to fill the gaps with at
    most r - 1 makes each, :math:`\sum_j (-1)^j \binom{g}{j}\binom{m - jr + g - 1}{g - 1}`
    (inclusion-exclusion). For runs of either kind the string is split into
    alternating runs: k make runs (compositions of m into k parts below r)
    with k - 1, k or k + 1 miss runs (k of them in two orders).

    References
    ----------
    .. [1] Feller, W. (1968). An Introduction to Probability Theory and Its
       Applications, Vol. 1, 3rd ed., ch. II (occupancy) and XIII. Wiley.

    Examples
    --------
    >>> from streakwise.analysis.odds import run_probability_given_makes
    >>> run_probability_given_makes(12, 4, 6).fraction
    Fraction(7, 33)
    """
    attempts, run, makes, kind = _run_probability_given_makes_iv(attempts, run, makes, kind)
    make_cap, miss_cap = _caps(kind, run)
    total = math.comb(attempts, makes)
    value = Fraction(total - _arrangements_without_run(attempts, makes, make_cap, miss_cap), total)
    return RunProbabilityResult(
        float(value),
        value,
        "combinatorial",
        True,
        0.0,
        "exact rational",
        attempts=attempts,
        run=run,
        kind=kind,
        model="given_makes",
        makes=makes,
    )


# ---------------------------------------------------------------------------
# The distribution of the longest run
# ---------------------------------------------------------------------------


def _expected_runs_fixed(attempts, run, rate):
    """Expected number of maximal make runs of length >= run at a fixed rate (an upper bound on P)."""
    if run > attempts:
        return 0.0
    return rate**run * (1.0 + (attempts - run) * (1.0 - rate))


def _filtered_run_probability(attempts, run, rate):
    """P(make run >= run) via the no-run recurrence as an all-pole filter (O(n r), nonnegative)."""
    q = 1.0 - rate
    # no-run probability u_t for t = 0..attempts-run-1 (u_t = 1 for t < run)
    length = attempts - run
    if length <= 0:
        return rate**run if length == 0 else 0.0, 0.0
    powers = rate ** np.arange(run)
    denominator = np.concatenate(([1.0], -q * powers))
    impulse = np.zeros(length)
    head = min(run, length)
    impulse[:head] = rate ** np.arange(head)  # innovations that reproduce u_t = 1 for t < run
    alive = signal.lfilter([1.0], denominator, impulse)
    value = min(rate**run * (1.0 + q * float(np.sum(alive))), 1.0)
    relative = 1.01 * (attempts * (run + 3) + attempts) * _UNIT
    return value, relative * value


def _fixed_at_least_float(attempts, run, rate, kind):
    """P(longest >= run) in floats with a bound, choosing the cheaper method."""
    if kind == "misses":
        rate, kind = 1.0 - rate, "makes"
    if kind == "makes":
        matrix_cost = 2 * (run + 2) ** 3 * max(attempts.bit_length(), 1)
        if matrix_cost > attempts * (run + 2) * 4:
            return _filtered_run_probability(attempts, run, rate)
        return _float_fixed(attempts, rate, run, None)
    matrix_cost = 2 * (2 * run + 1) ** 3 * max(attempts.bit_length(), 1)
    if matrix_cost > 40 * attempts * (2 * run + 1) + 10_000 * attempts:
        value, relative = _forward_float(np.full(attempts, rate), run, run)
        return value, relative * value
    return _float_fixed(attempts, rate, run, run)


def _tail_bound(attempts, run, kind, rate=None, rates=None):
    """Expected number of runs >= run of the kind (bounds P(longest >= run))."""
    if rates is not None:
        total = 0.0
        logs = []
        if kind in ("makes", "either"):
            logs.append(np.log(np.maximum(rates, 1e-300)))
        if kind in ("misses", "either"):
            logs.append(np.log(np.maximum(1.0 - rates, 1e-300)))
        for values in logs:
            sums = np.concatenate(([0.0], np.cumsum(values)))
            total += float(np.exp(sums[run:] - sums[:-run]).sum())
        return total
    total = 0.0
    if kind in ("makes", "either"):
        total += _expected_runs_fixed(attempts, run, rate)
    if kind in ("misses", "either"):
        total += _expected_runs_fixed(attempts, run, 1.0 - rate)
    return total


def _largest_step(kind, rate=None, rates=None):
    """The largest chance of extending a run of the kind by one attempt."""
    top = float(np.max(rates)) if rates is not None and len(rates) else (rate if rate is not None else 0.0)
    bottom = float(np.min(rates)) if rates is not None and len(rates) else (rate if rate is not None else 1.0)
    return {"makes": top, "misses": 1.0 - bottom, "either": max(top, 1.0 - bottom)}[kind]


def _longest_run_odds_iv(attempts, rate, rates, makes, kind, exact):
    given = [name for name, value in (("rate", rate), ("rates", rates), ("makes", makes)) if value is not None]
    if len(given) != 1:
        raise ValueError(f"give exactly one of `rate`, `rates`, `makes` (got {', '.join(given) or 'none'})")
    kind = _check_kind(kind)
    exact = _check_exact(exact)
    if rates is not None:
        rates, rational = _check_rates(rates)
        if attempts is not None and _check_integer("attempts", attempts, 0) != len(rates):
            raise ValueError(f"`attempts` must equal len(rates) = {len(rates)} (got {attempts})")
        return len(rates), None, rates, rational, None, kind, exact
    attempts = _check_integer("attempts", attempts, 0)
    if rate is not None:
        rate, rational = _check_rate(rate)
        if exact and not rational:
            raise ValueError(f"`exact=True` needs `rate` as a fractions.Fraction (got {_show(rate)})")
        return attempts, rate, None, rational, None, kind, exact
    makes = _check_integer("makes", makes, 0)
    if makes > attempts:
        raise ValueError(f"`makes` must be at most `attempts` ({attempts}) (got {makes})")
    return attempts, None, None, True, makes, kind, exact


def longest_run_odds(attempts=None, rate=None, *, rates=None, makes=None, kind="makes", exact=None):
    r"""The distribution of the longest run, and its mean, under chance.

    Give exactly one of ``rate`` (fixed make probability), ``rates``
    (per-attempt probabilities; ``attempts`` may be omitted) or ``makes``
    (given the number of makes, every arrangement equally likely).

    Parameters
    ----------
    attempts : int
    rate : float or fractions.Fraction, optional
    rates : sequence of float or Fraction, optional
    makes : int, optional
    kind : {"makes", "misses", "either"}
    exact : bool, optional
        ``None``: exact for ``makes``; for a Fraction ``rate`` when
        ``attempts <= EXACT_DISTRIBUTION_MAX_ATTEMPTS``; for Fraction
        ``rates`` when small. ``True`` forces exact (Fractions needed).

    Returns
    -------
    LongestRunOddsResult

    Notes
    -----
    :math:`P(L \ge r)` comes from the run functions for r = 1, 2, ...; the
    mean is :math:`\sum_{r \ge 1} P(L \ge r)`. In floats the lengths stop once
    the expected number of runs of length r, an upper bound on
    :math:`P(L \ge r)`, falls below 1e-17; the neglected mass is in
    ``error_bound``.

    References
    ----------
    .. [1] Feller, W. (1968). An Introduction to Probability Theory and Its
       Applications, Vol. 1, 3rd ed., ch. XIII. Wiley.
    .. [2] Schilling, M. F. (1990). The longest run of heads. The College
       Mathematics Journal 21(3), 196-207.

    Examples
    --------
    >>> from fractions import Fraction
    >>> from streakwise.analysis.odds import longest_run_odds
    >>> result = longest_run_odds(12, Fraction(1, 2))
    >>> result.exact, round(result.mean, 4)
    (True, 3.0391)
    """
    attempts, rate, rates, rational, makes, kind, exact = _longest_run_odds_iv(attempts, rate, rates, makes, kind, exact)
    lengths = np.arange(attempts + 1)
    at_least_exact = None
    if makes is not None:
        make_cap_values = [_caps(kind, r) for r in range(1, attempts + 1)]
        total = math.comb(attempts, makes)
        at_least_exact = [Fraction(1)] + [
            Fraction(total - _arrangements_without_run(attempts, makes, mc, qc), total) for mc, qc in make_cap_values
        ]
        model, method = "given_makes", "combinatorial"
    elif rate is not None and rational and (exact or (exact is None and attempts <= EXACT_DISTRIBUTION_MAX_ATTEMPTS)):
        at_least_exact = [Fraction(1)] + [_exact_at_least_fixed(attempts, r, rate, kind) for r in range(1, attempts + 1)]
        model, method = "fixed_rate", "rational_recurrence"
    elif rates is not None and rational and (
        exact or (exact is None and attempts * attempts * (attempts + 2) <= 20 * _EXACT_RATIONAL_MAX_WORK)
    ):
        at_least_exact = [Fraction(1)] + [_forward_exact(rates, *_caps(kind, r)) for r in range(1, attempts + 1)]
        model, method = "per_attempt", "rational_forward_pass"
    if at_least_exact is not None:
        if attempts == 0:
            at_least_exact = [Fraction(1)]
        fractions = tuple(at_least_exact[r] - (at_least_exact[r + 1] if r < attempts else 0) for r in range(attempts + 1))
        mean_fraction = sum(at_least_exact[1:], Fraction(0))
        mean_rate = float(rate) if rate is not None else (float(sum(rates) / attempts) if rates is not None and attempts else None)
        return LongestRunOddsResult(
            attempts=attempts,
            kind=kind,
            model=model,
            lengths=lengths,
            probabilities=np.array([float(f) for f in fractions]),
            at_least=np.array([float(f) for f in at_least_exact]),
            mean=float(mean_fraction),
            fractions=fractions,
            mean_fraction=mean_fraction,
            method=method,
            exact=True,
            error_bound=0.0,
            mean_error_bound=0.0,
            rate=mean_rate,
            makes=makes,
        )
    # floats
    if rates is not None:
        rates = np.asarray([float(r) for r in rates]) if rational else rates
        model, method = "per_attempt", "forward_pass"
    else:
        rate = float(rate)
        model, method = "fixed_rate", "matrix_power_or_filter"
    at_least = np.zeros(attempts + 1)
    at_least[0] = 1.0
    bounds = np.zeros(attempts + 1)
    truncated = 0.0
    for r in range(1, attempts + 1):
        tail = _tail_bound(attempts, r, kind, rate=rate, rates=rates)
        if tail < _TAIL_CUTOFF:
            # longer runs are rarer still: the expected number of runs of
            # length s shrinks at least by the factor ``largest`` per step, and
            # never grows with s
            largest = _largest_step(kind, rate=rate, rates=rates)
            remaining = attempts - r + 1
            truncated = tail * (min(remaining, 1.0 / (1.0 - largest)) if largest < 1.0 else remaining)
            bounds[r:] = tail
            break
        if rates is not None:
            value, relative = _forward_float(rates, *_caps(kind, r))
            at_least[r], bounds[r] = value, relative * value
        else:
            at_least[r], bounds[r] = _fixed_at_least_float(attempts, r, rate, kind)
    at_least = np.minimum(np.maximum.accumulate(at_least[::-1])[::-1], 1.0)
    probabilities = at_least - np.append(at_least[1:], 0.0)
    error_bound = float(bounds.max(initial=0.0))
    mean = float(at_least[1:].sum())
    mean_rate = rate if rates is None else (float(rates.mean()) if attempts else None)
    return LongestRunOddsResult(
        attempts=attempts,
        kind=kind,
        model=model,
        lengths=lengths,
        probabilities=probabilities,
        at_least=at_least,
        mean=mean,
        fractions=None,
        mean_fraction=None,
        method=method,
        exact=False,
        error_bound=error_bound,
        mean_error_bound=float(bounds.sum()) + truncated,
        rate=mean_rate,
        makes=None,
    )


def _exact_at_least_fixed(attempts, run, rate, kind):
    """Exact P(longest >= run) at a Fraction rate, with the closed form when 2 run >= attempts."""
    if run > attempts:
        return Fraction(0)
    q = 1 - rate

    def single(p):
        # at most one run >= run fits: it starts at attempt 1, or right after a miss
        return p**run * (1 + (attempts - run) * (1 - p))

    if 2 * run > attempts:
        if kind == "makes":
            return single(rate)
        if kind == "misses":
            return single(q)
        return single(rate) + single(q)  # both kinds cannot fit
    return _exact_fixed(attempts, rate, *_caps(kind, run))


def expected_attempts_until_run(run, rate):
    r"""Expected number of attempts until the first run of ``run`` makes.

    Parameters
    ----------
    run : int
        r >= 1.
    rate : float or fractions.Fraction
        Make probability p in (0, 1].

    Returns
    -------
    Fraction or float
        :math:`(1 - p^r) / ((1 - p) p^r)`; a Fraction when ``rate`` is
        rational; r when p = 1. (For a run of misses pass 1 - p.)

    References
    ----------
    .. [1] Feller, W. (1968). An Introduction to Probability Theory and Its
       Applications, Vol. 1, 3rd ed., ch. XIII, sec. 7. Wiley.

    Examples
    --------
    >>> from fractions import Fraction
    >>> from streakwise.analysis.odds import expected_attempts_until_run
    >>> expected_attempts_until_run(2, Fraction(1, 3))
    Fraction(12, 1)
    """
    run = _check_integer("run", run, 1)
    rate, rational = _check_rate(rate)
    if rate == 0:
        raise ValueError("`rate` must be above 0: a shooter who never makes never has a run (got 0)")
    if rate == 1:
        return Fraction(run) if rational else float(run)
    if rational:
        return (1 - rate**run) / ((1 - rate) * rate**run)
    # sum_{j<r} p^-j ... written without cancellation: (1 - p^r)/((1-p) p^r) = sum_{j=1}^{r} p^-j
    return float(np.sum(rate ** -np.arange(1, run + 1, dtype=float)))


# ---------------------------------------------------------------------------
# Windows: at least X makes in some Y consecutive attempts
# ---------------------------------------------------------------------------


def _canonical(masks, width, keep_misses):
    """Forget what lies beyond the ``keep_misses``-th most recent miss (set those bits to make).

    Any later window that reaches that far back holds ``keep_misses`` misses
    and so fewer than the threshold of makes, whatever the older outcomes were.
    """
    masks = np.asarray(masks, dtype=np.int64)
    out = masks.copy()
    full = (1 << width) - 1
    zeros = np.zeros(masks.shape, dtype=np.int64)
    done = np.zeros(masks.shape, dtype=bool)
    for bit in range(width):
        is_miss = ((masks >> bit) & 1) == 0
        zeros += is_miss & ~done
        hit = is_miss & ~done & (zeros == keep_misses)
        out = np.where(hit, out | (full & ~((1 << (bit + 1)) - 1)), out)
        done |= hit
    return out


def _masks_with_popcounts(width, counts):
    if width <= 22:
        codes = np.arange(1 << width, dtype=np.int64)
        return codes[np.isin(np.bitwise_count(codes), list(counts))]
    found = []
    for count in counts:
        if 0 <= count <= width:
            for ones in itertools.combinations(range(width), count):
                found.append(sum(1 << i for i in ones))
    return np.sort(np.array(found, dtype=np.int64))


def _window_state_count(window, at_least):
    """States of the canonical window chain: C(Y, X - 1)."""
    return math.comb(window, at_least - 1)


@dataclass(frozen=True, eq=False)
class _WindowChain:
    states: np.ndarray
    start: int
    make_target: np.ndarray  # -1: the window reaches the threshold (absorbed)
    miss_target: np.ndarray


def _window_chain(window, at_least):
    """Alive states: the last Y - 1 outcomes (bit 0 = most recent), canonicalised.

    A state holds X - 1 makes (fewer than Y - X + 1 misses, all remembered) or
    X - 2 makes (exactly Y - X + 1 misses remembered, older bits set): C(Y, X - 1)
    states in all, Y for a run (X = Y).
    """
    width = window - 1
    keep = window - at_least + 1
    full = (1 << width) - 1
    states = _masks_with_popcounts(width, (at_least - 1, at_least - 2))
    counts = np.bitwise_count(states)
    start = int(np.searchsorted(states, _canonical(np.array([0]), width, keep)[0]))
    miss_next = _canonical((states << 1) & full, width, keep)
    make_next = _canonical(((states << 1) | 1) & full, width, keep)
    miss_target = np.searchsorted(states, miss_next)
    make_target = np.searchsorted(states, make_next)
    make_target = np.where(counts + 1 >= at_least, -1, make_target)
    return _WindowChain(states, start, make_target, miss_target)


def _window_exact_float(attempts, chain, rates):
    size = len(chain.states)
    alive_make = chain.make_target >= 0
    rows_make = np.flatnonzero(alive_make)
    make = sparse.csr_array((np.ones(len(rows_make)), (chain.make_target[rows_make], rows_make)), shape=(size, size))
    miss = sparse.csr_array((np.ones(size), (chain.miss_target, np.arange(size))), shape=(size, size))
    dead = (~alive_make).astype(float)
    vector = np.zeros(size)
    vector[chain.start] = 1.0
    absorbed = 0.0
    if np.ndim(rates) == 0:
        p = float(rates)
        step = (p * make + (1.0 - p) * miss).tocsr()
        dead_weight = p * dead
        for _ in range(attempts):
            absorbed += float(dead_weight @ vector)
            vector = step @ vector
    else:
        for p in rates.tolist():
            absorbed += p * float(dead @ vector)
            vector = p * (make @ vector) + (1.0 - p) * (miss @ vector)
    relative = 1.01 * (4 * attempts + size + 2) * _UNIT
    return min(absorbed, 1.0), relative * absorbed


def _window_exact_rational(attempts, chain, rates):
    size = len(chain.states)
    weights = [0] * size
    weights[chain.start] = 1
    make_target = chain.make_target.tolist()
    miss_target = chain.miss_target.tolist()
    absorbed = Fraction(0)
    denominator = 1
    for rate in rates:
        a, b = rate.numerator, rate.denominator
        c = b - a
        new = [0] * size
        hit = 0
        for state, weight in enumerate(weights):
            if weight:
                target = make_target[state]
                if target < 0:
                    hit += a * weight
                else:
                    new[target] += a * weight
                new[miss_target[state]] += c * weight
        denominator *= b
        absorbed += Fraction(hit, denominator)
        weights = new
    return absorbed


def _binom_cdf(k, n, p):
    return float(stats.binom.cdf(k, n, p)) if k >= 0 and n >= 0 else 0.0


def _naus_q2_q3(window, at_least, rate):
    """Exact no-window probabilities in 2Y and 3Y attempts (Naus 1982, Bernoulli case)."""
    m, k, p = window, at_least, rate

    def F(r, s=m):  # noqa: N802 - the paper's notation
        return _binom_cdf(r, s, p)

    def b(r, s=m):
        return float(stats.binom.pmf(r, s, p)) if 0 <= r <= s else 0.0

    bk = b(k)
    q2 = F(k - 1) ** 2 - (k - 1) * bk * F(k - 2) + m * p * bk * F(k - 3, m - 1)
    a1 = 2 * bk * F(k - 1) * ((k - 1) * F(k - 2) - m * p * F(k - 3, m - 1))
    a2 = 0.5 * bk**2 * ((k - 1) * (k - 2) * F(k - 3) - 2 * (k - 2) * m * p * F(k - 4, m - 1) + m * (m - 1) * p**2 * F(k - 5, m - 2))
    a3 = sum(b(2 * k - r) * F(r - 1) ** 2 for r in range(1, k))
    a4 = sum(b(2 * k - r) * b(r) * ((r - 1) * F(r - 2) - m * p * F(r - 3, m - 1)) for r in range(2, k))
    q3 = F(k - 1) ** 3 - a1 + a2 + a3 - a4
    return q2, q3


def _naus_probability(attempts, window, at_least, rate):
    q2, q3 = _naus_q2_q3(window, at_least, rate)
    if q2 <= 0.0:
        return 1.0
    ratio = min(max(q3 / q2, 0.0), 1.0)
    return float(min(max(1.0 - q2 * ratio ** (attempts / window - 2.0), 0.0), 1.0))


def _window_monte_carlo(attempts, window, at_least, rates, samples, rng, batch):
    generator = np.random.default_rng(rng)
    hits = 0
    done = 0
    per_batch = max(1, min(samples, batch // max(attempts, 1)))
    while done < samples:
        size = min(per_batch, samples - done)
        made = generator.random((size, attempts)) < rates
        sums = np.cumsum(made, axis=1, dtype=np.int32)
        sums = np.concatenate((np.zeros((size, 1), dtype=np.int32), sums), axis=1)
        counts = sums[:, window:] - sums[:, :-window]
        hits += int(np.count_nonzero(counts.max(axis=1) >= at_least))
        done += size
    estimate = hits / samples
    return estimate, math.sqrt(max(estimate * (1 - estimate), 0.0) / samples)


def _window_probability_iv(attempts, window, at_least, rate, method, samples, batch):
    attempts = _check_integer("attempts", attempts, 0)
    window = _check_integer("window", window, 1)
    at_least = _check_integer("at_least", at_least, 1)
    if at_least > window:
        raise ValueError(f"`at_least` must be at most `window` ({window}) (got {at_least})")
    if method not in WINDOW_METHODS:
        raise ValueError(f"`method` must be one of {', '.join(repr(m) for m in WINDOW_METHODS)} (got {_show(method)})")
    samples = _check_integer("samples", samples, 1)
    batch = _check_integer("batch", batch, 1)
    if np.ndim(rate) == 0 and not isinstance(rate, (list, tuple)):
        rate, rational = _check_rate(rate)
        per_attempt = False
    else:
        rate, rational = _check_rates(rate, "rate")
        if len(rate) != attempts:
            raise ValueError(f"`rate` as per-attempt probabilities must have `attempts` = {attempts} entries (got {len(rate)})")
        per_attempt = True
    if method == "naus" and per_attempt:
        raise ValueError("`method='naus'` needs one fixed `rate` (got per-attempt probabilities)")
    return attempts, window, at_least, rate, rational, per_attempt, method, samples, batch


def window_probability(
    attempts, window, at_least, rate, *, method="auto", samples=_DEFAULT_SAMPLES, rng=None, batch=4_000_000
):
    r"""Chance that some ``window`` consecutive attempts hold at least ``at_least`` makes.

    Parameters
    ----------
    attempts : int
        n >= 0; with fewer attempts than ``window`` there is no such window
        and the probability is 0.
    window : int
        Y >= 1.
    at_least : int
        X, 1 <= X <= Y. X = Y is a run of Y makes.
    rate : float, Fraction, or sequence of them
        The fixed make probability, or one per attempt.
    method : {"auto", "exact", "naus", "monte_carlo"}
        ``"auto"``: the exact chain when its work (attempts x states) is at
        most about 2.5e8; else the Naus (1982) approximation for a fixed rate
        and ``attempts >= 2 window``; else Monte Carlo.
    samples : int
        Monte Carlo sequences.
    rng : None, int or numpy.random.Generator
        Seed for Monte Carlo (recorded in the result).
    batch : int
        Attempts simulated per batch (caps memory).

    Returns
    -------
    WindowProbabilityResult

    Notes
    -----
    Exact chain: the state is the last Y - 1 outcomes, but anything older
    than the (Y - X + 1)-th most recent miss cannot matter (a window reaching
    that far back holds at least Y - X + 1 misses), and a state with X makes
    among the last Y - 1 has already produced a window. That leaves
    :math:`\binom{Y}{X-1}` states (Y for a run; 12,870 at most for Y = 16),
    moved by one sparse step per attempt; nonnegative arithmetic gives a
    relative rounding error below :math:`(4n + d) 2^{-53}`. With Fraction
    rates the same chain runs in exact integers when attempts x states is at
    most 400,000 (floats beyond).

    Naus (1982): with :math:`Q_2, Q_3` the exact probabilities of no such
    window in 2Y and 3Y attempts (closed forms in binomial terms),
    :math:`P \approx 1 - Q_2 (Q_3/Q_2)^{n/Y - 2}`; no error bound is known,
    but it is exact at n = 2Y and 3Y and close in between.

    References
    ----------
    .. [1] Naus, J. I. (1982). Approximations for distributions of scan
       statistics. Journal of the American Statistical Association 77(377),
       177-183.
    .. [2] Glaz, J., Naus, J. & Wallenstein, S. (2001). Scan Statistics.
       Springer.

    Examples
    --------
    >>> from fractions import Fraction
    >>> from streakwise.analysis.odds import window_probability
    >>> result = window_probability(20, 6, 5, Fraction(1, 2))
    >>> result.method, result.exact
    ('exact_chain', True)
    """
    attempts, window, at_least, rate, rational, per_attempt, method, samples, batch = _window_probability_iv(
        attempts, window, at_least, rate, method, samples, batch
    )
    mean_rate = (float(sum(rate) / attempts) if attempts else None) if per_attempt else float(rate)
    common = dict(attempts=attempts, window=window, at_least=at_least, rate=mean_rate)
    if attempts < window:
        return WindowProbabilityResult(
            0.0, Fraction(0), "impossible", True, 0.0, None, "exact (fewer attempts than the window)", **common
        )
    states = _window_state_count(window, at_least)
    work = attempts * states
    if method == "auto":
        if window <= _WINDOW_MAX_EXACT_LENGTH and work <= _WINDOW_EXACT_MAX_WORK:
            method = "exact"
        elif not per_attempt and attempts >= 2 * window:
            method = "naus"
        else:
            method = "monte_carlo"
    if method == "exact":
        if window > 62 or states > _WINDOW_MAX_STATES:
            raise ValueError(
                f"the exact window chain would need {states:,} states (at most {_WINDOW_MAX_STATES:,}, "
                f"`window` at most 62); use method='naus' or 'monte_carlo'"
            )
        chain = _window_chain(window, at_least)
        if rational and work <= _EXACT_RATIONAL_MAX_WORK:
            rates = rate if per_attempt else [rate] * attempts
            value = _window_exact_rational(attempts, chain, rates)
            return WindowProbabilityResult(float(value), value, "exact_chain", True, 0.0, None, "exact rational", states=states, **common)
        rates = np.asarray([float(r) for r in rate]) if per_attempt else float(rate)
        probability, bound = _window_exact_float(attempts, chain, rates)
        return WindowProbabilityResult(
            probability, None, "exact_chain", False, bound, None, _float_accuracy(bound, probability), states=states, **common
        )
    if method == "naus":
        if attempts < 2 * window:
            raise ValueError(f"the Naus approximation needs `attempts` >= 2 x `window` = {2 * window} (got {attempts})")
        probability = _naus_probability(attempts, window, at_least, float(rate))
        return WindowProbabilityResult(
            probability,
            None,
            "naus_approximation",
            False,
            None,
            None,
            "approximation (Naus 1982): exact at 2 and 3 windows' worth of attempts, no error bound beyond; "
            "use method='monte_carlo' for a stated standard error",
            **common,
        )
    rates = (np.asarray([float(r) for r in rate]) if per_attempt else np.full(attempts, float(rate))) if attempts else np.zeros(0)
    estimate, standard_error = _window_monte_carlo(attempts, window, at_least, rates, samples, rng, batch)
    return WindowProbabilityResult(
        estimate,
        None,
        "monte_carlo",
        False,
        None,
        standard_error,
        f"Monte Carlo estimate from {samples:,} simulated sequences; standard error {standard_error:.1e}",
        samples=samples,
        seed=rng,
        **common,
    )


# ---------------------------------------------------------------------------
# Expected numbers of separate streaks
# ---------------------------------------------------------------------------


def expected_run_count(attempts, run, rate, *, kind="makes"):
    r"""Expected number of separate runs of at least ``run`` in ``attempts`` attempts.

    Parameters
    ----------
    attempts, run : int
    rate : float or fractions.Fraction
    kind : {"makes", "misses", "either"}

    Returns
    -------
    Fraction or float
        :math:`p^r (1 + (n - r)(1 - p))` for runs of makes (a run starts at
        the first attempt or right after a miss); exact for a Fraction rate.

    Examples
    --------
    >>> from fractions import Fraction
    >>> from streakwise.analysis.odds import expected_run_count
    >>> expected_run_count(10, 3, Fraction(1, 2))
    Fraction(9, 16)
    """
    attempts = _check_integer("attempts", attempts, 0)
    run = _check_integer("run", run, 1)
    rate, rational = _check_rate(rate)
    kind = _check_kind(kind)
    one = Fraction(1) if rational else 1.0

    def makes(p):
        if run > attempts:
            return 0 * one
        return p**run * (1 + (attempts - run) * (one - p))

    if kind == "makes":
        return makes(rate)
    if kind == "misses":
        return makes(one - rate)
    return makes(rate) + makes(one - rate)


def expected_window_count(attempts, window, at_least, rate):
    r"""Expected number of separate stretches with at least ``at_least`` makes in ``window`` attempts.

    A stretch is a maximal set of consecutive qualifying windows.

    Parameters
    ----------
    attempts, window, at_least : int
    rate : float or fractions.Fraction

    Returns
    -------
    Fraction or float
        :math:`P(\mathrm{Bin}(Y, p) \ge X) + (n - Y)\, p (1 - p)\, P(\mathrm{Bin}(Y-1, p) = X - 1)`:
        a stretch starts at the first window, or where the window gains a
        make and loses a miss while holding X - 1 makes in between. With X = Y
        it is :func:`expected_run_count`.

    Examples
    --------
    >>> from fractions import Fraction
    >>> from streakwise.analysis.odds import expected_window_count
    >>> expected_window_count(10, 3, 3, Fraction(1, 2))
    Fraction(9, 16)
    """
    attempts = _check_integer("attempts", attempts, 0)
    window = _check_integer("window", window, 1)
    at_least = _check_integer("at_least", at_least, 1)
    if at_least > window:
        raise ValueError(f"`at_least` must be at most `window` ({window}) (got {at_least})")
    rate, rational = _check_rate(rate)
    if attempts < window:
        return Fraction(0) if rational else 0.0
    q = 1 - rate

    def pmf(k, n):
        return math.comb(n, k) * rate**k * q ** (n - k)

    first = sum(pmf(k, window) for k in range(at_least, window + 1))
    later = (attempts - window) * rate * q * pmf(at_least - 1, window - 1)
    return first + later if rational else float(first + later)


# ---------------------------------------------------------------------------
# Many opportunities
# ---------------------------------------------------------------------------


def _combine_sessions_iv(probabilities, players, seasons):
    if isinstance(probabilities, (str, bytes)) or np.ndim(probabilities) != 1:
        raise ValueError(f"`session_probabilities` must be a one-dimensional sequence (got {_show(probabilities)})")
    values = list(probabilities)
    checked = [_check_rate(v, "session_probabilities") for v in values]
    rational = bool(checked) and all(r for _, r in checked)
    players = _check_integer("players", players, 1)
    seasons = _check_integer("seasons", seasons, 1)
    return [v for v, _ in checked], rational, players, seasons


def _at_least_once(none_log, count):
    """1 - exp(count * none_log) without cancellation."""
    if none_log == -math.inf:
        return 1.0
    return float(-math.expm1(count * none_log))


def combine_sessions(session_probabilities, *, players=1, seasons=1):
    r"""Combine independent opportunities: sessions of a season, players, seasons.

    Parameters
    ----------
    session_probabilities : sequence of float or Fraction
        P_g: the chance of the event in each session (game) of one player's
        season. For a league of different players, pass every player's
        sessions together with ``players=1``.
    players : int
        Players alike in the league (the season repeats for each).
    seasons : int
        Seasons considered.

    Returns
    -------
    OpportunityResult

    Notes
    -----
    Independent sessions: :math:`P(\text{at least once}) = 1 - \prod_g (1 -
    P_g)` (computed as :math:`-\mathrm{expm1}(\sum_g \mathrm{log1p}(-P_g))`,
    so tiny chances keep their digits), expected occurrences
    :math:`\sum_g P_g`, where an occurrence is a session with the event.
    Players and seasons multiply the exponent and the sum. "About once every
    N seasons" uses N = 1 / expected occurrences per season.

    Examples
    --------
    >>> from streakwise.analysis.odds import combine_sessions
    >>> result = combine_sessions([0.01] * 80, players=100)
    >>> round(result.probability_season, 4), round(result.expected_league_season, 1)
    (0.5525, 80.0)
    """
    values, rational, players, seasons = _combine_sessions_iv(session_probabilities, players, seasons)
    floats = np.array([float(v) for v in values], dtype=float)
    with np.errstate(divide="ignore"):
        none_log = float(np.sum(np.log1p(-floats))) if len(floats) else 0.0
    expected = float(np.sum(floats))
    fraction_season = fraction_expected = None
    if rational:
        product = Fraction(1)
        for value in values:
            product *= 1 - value
        fraction_season = 1 - product
        fraction_expected = sum(values, Fraction(0))
    probability_season = float(fraction_season) if rational else _at_least_once(none_log, 1)
    return OpportunityResult(
        sessions=len(values),
        probability_season=probability_season,
        expected_season=float(fraction_expected) if rational else expected,
        players=players,
        seasons=seasons,
        probability_player_span=_at_least_once(none_log, seasons),
        probability_league_season=_at_least_once(none_log, players),
        expected_league_season=players * expected,
        probability_league_span=_at_least_once(none_log, players * seasons),
        expected_league_span=players * seasons * expected,
        seasons_per_occurrence=1.0 / expected if expected > 0 else math.inf,
        league_seasons_per_occurrence=1.0 / (players * expected) if expected > 0 else math.inf,
        fraction_season=fraction_season,
        fraction_expected_season=fraction_expected,
    )


# ---------------------------------------------------------------------------
# Figure
# ---------------------------------------------------------------------------


def longest_run_figure(distribution, observed=None, *, title=None):
    """Bar chart of the longest-run distribution with an observed run marked.

    Parameters
    ----------
    distribution : LongestRunOddsResult
    observed : int, optional
        The run seen; lengths at or beyond it are highlighted and
        P(longest >= observed) is annotated.
    title : str, optional

    Returns
    -------
    plotly.graph_objects.Figure
        Okabe-Ito colours (bluish green bars, orange from the observed run
        on), readable in grey scale and by colour-blind viewers.

    Examples
    --------
    >>> from streakwise.analysis.odds import longest_run_figure, longest_run_odds
    >>> figure = longest_run_figure(longest_run_odds(300, 0.43), observed=8)
    >>> len(figure.data)
    1
    """
    import plotly.graph_objects as go

    if not isinstance(distribution, LongestRunOddsResult):
        raise ValueError(f"`distribution` must be a LongestRunOddsResult (got {type(distribution).__name__})")
    if observed is not None:
        observed = _check_integer("observed", observed, 0)
    keep = (distribution.probabilities > 1e-6) | (distribution.lengths == (observed if observed is not None else -1))
    lengths = distribution.lengths[keep]
    probabilities = distribution.probabilities[keep]
    colours = [
        OKABE_ITO["orange"] if observed is not None and length >= observed else OKABE_ITO["bluish_green"]
        for length in lengths
    ]
    noun = {"makes": "makes", "misses": "misses", "either": "makes or misses"}[distribution.kind]
    figure = go.Figure(
        go.Bar(
            x=lengths,
            y=probabilities,
            marker_color=colours,
            marker_line_color=OKABE_ITO["black"],
            marker_line_width=0.5,
            hovertemplate="longest run %{x}: %{y:.4f}<extra></extra>",
        )
    )
    figure.update_layout(
        title=title or f"Longest run of {noun} in {distribution.attempts} attempts by chance alone",
        xaxis_title="longest run",
        yaxis_title="probability",
        template="simple_white",
        bargap=0.1,
    )
    if observed is not None:
        tail = distribution.probability_at_least(observed)
        figure.add_vline(x=observed - 0.5, line_dash="dash", line_color=OKABE_ITO["black"])
        figure.add_annotation(
            x=observed,
            y=float(probabilities.max()) if len(probabilities) else 0.0,
            text=f"observed {observed}: P(longest >= {observed}) = {tail:.3g}",
            showarrow=False,
            xanchor="left",
            yanchor="bottom",
        )
    return figure
