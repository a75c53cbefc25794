"""Simulators of make/miss sequences, and the closed-form moments they should match.

Pure numpy/scipy: arrays and numbers in, arrays and frozen dataclasses out. Every
random function takes ``rng`` (None, an integer seed or a ``numpy.random.Generator``)
and passes it through ``numpy.random.default_rng``. Sequences come back with the
attempts on the last axis and one row per sequence, so a whole batch of games is
drawn in one call. The demo league generator and the power planner both draw from
here.

Three models of a shooter:

- independent attempts with given per-attempt probabilities
  (:func:`simulate_bernoulli`, with :func:`make_probability` for a logistic
  difficulty model);
- dependence on the previous outcome (:func:`simulate_markov`);
- a hidden hot/cold state that switches as a Markov chain
  (:func:`simulate_hidden_state`).

:func:`hidden_state_moments` and :func:`markov_moments` give their long-run make
rate, lag-1 autocorrelation and the difference P(make | make) - P(make | miss)
exactly; :func:`simulate_session_lengths` draws attempts per game.
"""

from __future__ import annotations

import numbers
from dataclasses import dataclass, fields

import numpy as np
from scipy import optimize, special

from ._values import show_value as _show


__all__ = [
    "HiddenStateDraw",
    "HiddenStateMoments",
    "MarkovDraw",
    "MarkovMoments",
    "hidden_state_moments",
    "make_probability",
    "markov_moments",
    "simulate_bernoulli",
    "simulate_hidden_state",
    "simulate_markov",
    "simulate_session_lengths",
]

_STARTS = ("stationary", "hot", "cold")


# ---------------------------------------------------------------------------
# Result dataclasses
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class HiddenStateDraw:
    """Sequences drawn from the hidden hot/cold state model.

    Attributes
    ----------
    made : ndarray of bool, shape (n_sequences, n_attempts)
        Outcome of every attempt (True = make).
    hot : ndarray of bool, shape (n_sequences, n_attempts)
        The hidden state at every attempt (True = hot).
    probability : ndarray of float, shape (n_sequences, n_attempts)
        The make probability each attempt was drawn with.
    """

    made: np.ndarray
    hot: np.ndarray
    probability: np.ndarray

    def to_frame(self):
        """One row per attempt: ``sequence``, ``seq``, ``made``, ``hot``, ``probability``."""
        return _draw_frame(made=self.made, hot=self.hot, probability=self.probability)


@dataclass(frozen=True)
class MarkovDraw:
    """Sequences drawn from the previous-outcome (Markov) model.

    Attributes
    ----------
    made : ndarray of bool, shape (n_sequences, n_attempts)
        Outcome of every attempt (True = make).
    probability : ndarray of float, shape (n_sequences, n_attempts)
        The make probability each attempt was drawn with: the first rate for the
        first attempt, then the rate after a make or after a miss.
    """

    made: np.ndarray
    probability: np.ndarray

    def to_frame(self):
        """One row per attempt: ``sequence``, ``seq``, ``made``, ``probability``."""
        return _draw_frame(made=self.made, probability=self.probability)


@dataclass(frozen=True)
class HiddenStateMoments:
    """Long-run (stationary) moments of the hidden hot/cold state model.

    Every attribute is a float when all inputs were scalars, else an array of
    their broadcast shape.

    Attributes
    ----------
    hot_rate, cold_rate, stay_hot, stay_cold
        The model's parameters, as given.
    hot_share
        Stationary probability of the hot state.
    persistence
        ``stay_hot + stay_cold - 1``, the second eigenvalue of the state chain.
    make_rate
        Long-run make rate.
    rate_after_make, rate_after_miss
        P(make | previous make) and P(make | previous miss) in the stationary
        chain (NaN when the conditioning outcome never happens).
    rate_difference
        ``rate_after_make - rate_after_miss``.
    lag1_autocorrelation
        Correlation of consecutive outcomes (NaN when the make rate is 0 or 1).
    """

    hot_rate: float | np.ndarray
    cold_rate: float | np.ndarray
    stay_hot: float | np.ndarray
    stay_cold: float | np.ndarray
    hot_share: float | np.ndarray
    persistence: float | np.ndarray
    make_rate: float | np.ndarray
    rate_after_make: float | np.ndarray
    rate_after_miss: float | np.ndarray
    rate_difference: float | np.ndarray
    lag1_autocorrelation: float | np.ndarray

    def autocorrelation(self, lag):
        """Correlation of outcomes ``lag`` attempts apart (``lag >= 1``).

        For the hidden state model it decays geometrically with the state chain:
        ``lag1_autocorrelation * persistence ** (lag - 1)``.
        """
        lag = _check_count("lag", lag, minimum=1)
        return _scalar_or_array(
            np.asarray(self.lag1_autocorrelation)
            * np.asarray(self.persistence) ** (lag - 1)
        )

    def to_frame(self):
        """One row per parameter setting, one column per attribute."""
        return _moments_frame(self)


@dataclass(frozen=True)
class MarkovMoments:
    """Long-run (stationary) moments of the previous-outcome (Markov) model.

    Every attribute is a float when all inputs were scalars, else an array of
    their broadcast shape.

    Attributes
    ----------
    rate_after_make, rate_after_miss
        The model's parameters, as given (they are the conditional rates).
    make_rate
        Stationary make rate.
    rate_difference
        ``rate_after_make - rate_after_miss``.
    lag1_autocorrelation
        Correlation of consecutive outcomes in the stationary chain; equal to
        ``rate_difference`` when the make rate is strictly between 0 and 1, NaN
        otherwise.
    """

    rate_after_make: float | np.ndarray
    rate_after_miss: float | np.ndarray
    make_rate: float | np.ndarray
    rate_difference: float | np.ndarray
    lag1_autocorrelation: float | np.ndarray

    def autocorrelation(self, lag):
        """Correlation of outcomes ``lag`` attempts apart: ``rate_difference ** lag``."""
        lag = _check_count("lag", lag, minimum=1)
        rho = np.asarray(self.lag1_autocorrelation)
        return _scalar_or_array(
            np.where(np.isnan(rho), np.nan, np.asarray(self.rate_difference) ** lag)
        )

    def to_frame(self):
        """One row per parameter setting, one column per attribute."""
        return _moments_frame(self)


# ---------------------------------------------------------------------------
# Shared helpers
# ---------------------------------------------------------------------------


def _check_count(name, value, *, minimum=0):
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Integral):
        raise ValueError(
            f"`{name}` must be an integer >= {minimum} (got {_show(value)})"
        )
    if value < minimum:
        raise ValueError(
            f"`{name}` must be an integer >= {minimum} (got {_show(value)})"
        )
    return int(value)


def _check_probability(name, value):
    """A scalar probability in [0, 1], returned as float."""
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Real):
        raise ValueError(f"`{name}` must be a number in [0, 1] (got {_show(value)})")
    x = float(value)
    if not 0.0 <= x <= 1.0:  # also rejects NaN
        raise ValueError(f"`{name}` must be in [0, 1] (got {_show(value)})")
    return x


def _check_probability_array(name, value):
    """An array (or scalar) of probabilities in [0, 1], returned as float array."""
    try:
        x = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(
            f"`{name}` must be numbers in [0, 1] (got {_show(value)})"
        ) from None
    bad = ~((x >= 0.0) & (x <= 1.0))  # NaN counts as bad
    if bad.any():
        raise ValueError(f"`{name}` must be in [0, 1] (got {_show(x[bad][0])})")
    return x


def _scalar_or_array(x):
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


def _draw_frame(**columns):
    import pandas as pd

    made = columns["made"]
    n_sequences, n_attempts = made.shape
    frame = {
        "sequence": np.repeat(np.arange(n_sequences), n_attempts),
        "seq": np.tile(np.arange(n_attempts), n_sequences),
    }
    frame.update({name: np.ravel(values) for name, values in columns.items()})
    return pd.DataFrame(frame)


def _moments_frame(result):
    import pandas as pd

    names = [f.name for f in fields(result)]
    values = np.broadcast_arrays(*(np.asarray(getattr(result, n)) for n in names))
    return pd.DataFrame({n: np.ravel(v).astype(float) for n, v in zip(names, values)})


def _two_state_path(start_in_one, n_attempts, stay_one, stay_zero, rng):
    """Boolean paths of a two-state Markov chain, without a loop over attempts.

    A stay in a state lasts a geometric number of attempts (in state one:
    P(k attempts) = stay_one**(k - 1) * (1 - stay_one)), and stays alternate
    between the two states. Drawing the first ``n_attempts`` stay lengths of every
    sequence (there cannot be more stays than attempts), their cumulative sums are
    the attempts where the state switches, and the state at attempt t is the start
    state flipped once per switch at or before t.
    """
    n_sequences = start_in_one.shape[0]
    if n_attempts == 0 or n_sequences == 0:
        return np.zeros((n_sequences, n_attempts), dtype=bool)
    # stay j (0-based) is in the start state when j is even
    odd = (np.arange(n_attempts) % 2).astype(bool)
    stay_in_one = start_in_one[:, None] ^ odd[None, :]
    leave = np.where(stay_in_one, 1.0 - stay_one, 1.0 - stay_zero)
    # a state that is never left lasts beyond the end of the sequence
    lengths = np.full((n_sequences, n_attempts), n_attempts, dtype=np.int64)
    can_leave = leave > 0.0
    lengths[can_leave] = rng.geometric(leave[can_leave])
    np.minimum(lengths, n_attempts, out=lengths)  # keeps the sums from overflowing
    switch_at = np.minimum(np.cumsum(lengths, axis=1), n_attempts)
    switches = np.zeros((n_sequences, n_attempts + 1), dtype=bool)
    switches[np.arange(n_sequences)[:, None], switch_at] = True
    flipped = np.logical_xor.accumulate(switches[:, :n_attempts], axis=1)
    return start_in_one[:, None] ^ flipped


# ---------------------------------------------------------------------------
# Hidden hot/cold state
# ---------------------------------------------------------------------------


def _simulate_hidden_state_iv(
    n_attempts, hot_rate, cold_rate, stay_hot, stay_cold, n_sequences, start,
    logit_offset,
):
    n_attempts = _check_count("n_attempts", n_attempts)
    n_sequences = _check_count("n_sequences", n_sequences)
    hot_rate = _check_probability("hot_rate", hot_rate)
    cold_rate = _check_probability("cold_rate", cold_rate)
    stay_hot = _check_probability("stay_hot", stay_hot)
    stay_cold = _check_probability("stay_cold", stay_cold)
    if not isinstance(start, str) or start not in _STARTS:
        raise ValueError(
            "`start` must be one of 'stationary', 'hot', 'cold' "
            f"(got {_show(start)})"
        )
    if start == "stationary" and stay_hot == 1.0 and stay_cold == 1.0:
        raise ValueError(
            "the stationary start is undefined when `stay_hot` = 1 and "
            "`stay_cold` = 1 (neither state is ever left); give `start` "
            "'hot' or 'cold'"
        )
    shape = (n_sequences, n_attempts)
    if logit_offset is not None:
        try:
            offset = np.asarray(logit_offset, dtype=float)
        except (TypeError, ValueError):
            raise ValueError(
                f"`logit_offset` must be real numbers (got {_show(logit_offset)})"
            ) from None
        try:
            offset = np.broadcast_to(offset, shape)
        except ValueError:
            raise ValueError(
                f"`logit_offset` must broadcast to (n_sequences, n_attempts) = "
                f"{shape} (got shape {offset.shape})"
            ) from None
        if not np.isfinite(offset).all():
            raise ValueError(
                "`logit_offset` must be finite "
                f"(got {_show(offset[~np.isfinite(offset)][0])})"
            )
        logit_offset = offset
    return (
        n_attempts, hot_rate, cold_rate, stay_hot, stay_cold, n_sequences, start,
        logit_offset,
    )


def simulate_hidden_state(
    n_attempts,
    *,
    hot_rate,
    cold_rate,
    stay_hot,
    stay_cold,
    n_sequences=1,
    start="stationary",
    rng=None,
    logit_offset=None,
):
    r"""Draw make/miss sequences from a shooter with a hidden hot or cold state.

    Parameters
    ----------
    n_attempts : int
        Attempts per sequence (>= 0).
    hot_rate, cold_rate : float
        Make probability in the hot and in the cold state, in [0, 1].
    stay_hot, stay_cold : float
        Probability that the state is the same at the next attempt, in [0, 1].
    n_sequences : int, optional
        Number of independent sequences (games), default 1.
    start : {'stationary', 'hot', 'cold'}, optional
        State at the first attempt. ``'stationary'`` (default) draws it from the
        chain's stationary distribution, so every attempt of every sequence is a
        draw from the long-run chain.
    rng : None, int or numpy.random.Generator, optional
        Source of randomness, passed to ``numpy.random.default_rng``.
    logit_offset : array_like, optional
        Added to the state's rate on the logit scale, per attempt; broadcast to
        ``(n_sequences, n_attempts)``. Use it to combine a shot-difficulty model or
        a player's skill with the state. Must be finite.

    Returns
    -------
    HiddenStateDraw
        ``made`` and ``hot`` (bool) and ``probability`` (float), each of shape
        ``(n_sequences, n_attempts)``.

    Notes
    -----
    The state :math:`S_t \in \{\text{hot}, \text{cold}\}` is a Markov chain with
    :math:`P(S_{t+1} = \text{hot} \mid S_t = \text{hot}) = a` (``stay_hot``) and
    :math:`P(S_{t+1} = \text{cold} \mid S_t = \text{cold}) = b` (``stay_cold``).
    Its stationary hot share is :math:`\pi_h = (1 - b)/(2 - a - b)`. Given the
    states, attempts are independent with

    .. math:: p_t = \operatorname{expit}(\operatorname{logit}(r_{S_t}) + o_t),

    :math:`r_{\text{hot}}` = ``hot_rate``, :math:`r_{\text{cold}}` = ``cold_rate``
    and :math:`o_t` the logit offset (0 by default, so :math:`p_t = r_{S_t}`).

    A stay in the hot state lasts :math:`k` attempts with probability
    :math:`a^{k-1}(1 - a)` (mean :math:`1/(1 - a)`), likewise in the cold state
    with :math:`b`. The paths are drawn as alternating geometric stays whose
    cumulative sums mark the switches, so no loop runs over the attempts.
    :func:`hidden_state_moments` gives the long-run make rate and lag-1
    dependence of this model.

    References
    ----------
    .. [1] Rabiner, L. R. (1989). A tutorial on hidden Markov models and selected
       applications in speech recognition. Proceedings of the IEEE 77(2), 257-286.
    .. [2] Wetzels, R., Tutschkow, D., Dolan, C., van der Sluis, S., Dutilh, G. &
       Wagenmakers, E.-J. (2016). A Bayesian test for the hot hand phenomenon.
       Journal of Mathematical Psychology 72, 200-209.

    Examples
    --------
    >>> from streakwise.analysis.simulate import simulate_hidden_state
    >>> draw = simulate_hidden_state(
    ...     20, hot_rate=0.6, cold_rate=0.4, stay_hot=0.9, stay_cold=0.9,
    ...     n_sequences=1000, rng=12345,
    ... )
    >>> draw.made.shape, draw.made.dtype
    ((1000, 20), dtype('bool'))
    >>> bool(((draw.probability == 0.6) == draw.hot).all())
    True
    >>> round(float(draw.made.mean()), 1)  # long-run make rate is 0.5
    0.5
    """
    (
        n_attempts, hot_rate, cold_rate, stay_hot, stay_cold, n_sequences, start,
        logit_offset,
    ) = _simulate_hidden_state_iv(
        n_attempts, hot_rate, cold_rate, stay_hot, stay_cold, n_sequences, start,
        logit_offset,
    )
    rng = np.random.default_rng(rng)
    if start == "stationary":
        hot_share = (1.0 - stay_cold) / (2.0 - stay_hot - stay_cold)
        start_hot = rng.random(n_sequences) < hot_share
    else:
        start_hot = np.full(n_sequences, start == "hot")
    hot = _two_state_path(start_hot, n_attempts, stay_hot, stay_cold, rng)
    probability = np.where(hot, hot_rate, cold_rate)
    if logit_offset is not None:
        probability = special.expit(special.logit(probability) + logit_offset)
    made = rng.random(probability.shape) < probability
    return HiddenStateDraw(made=made, hot=hot, probability=probability)


def _hidden_state_moments_iv(hot_rate, cold_rate, stay_hot, stay_cold):
    hot_rate = _check_probability_array("hot_rate", hot_rate)
    cold_rate = _check_probability_array("cold_rate", cold_rate)
    stay_hot = _check_probability_array("stay_hot", stay_hot)
    stay_cold = _check_probability_array("stay_cold", stay_cold)
    try:
        arrays = np.broadcast_arrays(hot_rate, cold_rate, stay_hot, stay_cold)
    except ValueError:
        raise ValueError(
            "`hot_rate`, `cold_rate`, `stay_hot` and `stay_cold` must broadcast "
            f"together (got shapes {hot_rate.shape}, {cold_rate.shape}, "
            f"{stay_hot.shape}, {stay_cold.shape})"
        ) from None
    if ((arrays[2] == 1.0) & (arrays[3] == 1.0)).any():
        raise ValueError(
            "the stationary chain is undefined when `stay_hot` = 1 and "
            "`stay_cold` = 1 (neither state is ever left)"
        )
    return arrays


def hidden_state_moments(hot_rate, cold_rate, stay_hot, stay_cold):
    r"""Long-run make rate and lag-1 dependence of the hidden hot/cold state model.

    Parameters
    ----------
    hot_rate, cold_rate : float or array_like
        Make probability in the hot and in the cold state, in [0, 1].
    stay_hot, stay_cold : float or array_like
        Probability of staying in the hot (cold) state, in [0, 1]; not both 1.
        All four broadcast together.

    Returns
    -------
    HiddenStateMoments
        Floats for scalar inputs, arrays of the broadcast shape otherwise.

    Notes
    -----
    With :math:`h`, :math:`c` the state rates, :math:`a`, :math:`b` the stay
    probabilities, :math:`\lambda = a + b - 1` and the stationary chain

    .. math::

        \pi_h = \frac{1 - b}{2 - a - b}, \qquad \pi_c = 1 - \pi_h, \qquad
        \mu = E[X_t] = \pi_h h + \pi_c c.

    :math:`P(S_{t+k} = \text{hot} \mid S_t) - \pi_h` shrinks by :math:`\lambda`
    per step, which gives the lag-:math:`k` covariance of the makes

    .. math:: \gamma_k = \operatorname{Cov}(X_t, X_{t+k})
              = \pi_h \pi_c (h - c)^2 \lambda^k,

    so :math:`\rho_k = \gamma_k / (\mu(1 - \mu))`. Then
    :math:`P(\text{make} \mid \text{make}) = E[X_t X_{t+1}]/\mu = \mu + \gamma_1/\mu`,
    :math:`P(\text{make} \mid \text{miss}) = \mu - \gamma_1/(1 - \mu)`, and their
    difference is :math:`\gamma_1/(\mu(1-\mu)) = \rho_1`: for 0/1 outcomes the
    lag-1 autocorrelation and the difference of conditional rates coincide.
    Outcome autocorrelation is smaller than that of the make probability by the
    factor :math:`\operatorname{Var}(p_t)/\operatorname{Var}(X_t)` [2]_.

    References
    ----------
    .. [1] Rabiner, L. R. (1989). A tutorial on hidden Markov models and selected
       applications in speech recognition. Proceedings of the IEEE 77(2), 257-286.
    .. [2] Stone, D. F. (2012). Measurement error and the hot hand. The American
       Statistician 66(1), 61-66.

    Examples
    --------
    >>> from streakwise.analysis.simulate import hidden_state_moments
    >>> m = hidden_state_moments(0.6, 0.4, stay_hot=0.9, stay_cold=0.9)
    >>> round(m.make_rate, 12), round(m.hot_share, 12)
    (0.5, 0.5)
    >>> round(m.rate_difference, 6)  # 0.5 * 0.5 * 0.2**2 * 0.8 / 0.25
    0.032
    >>> round(m.autocorrelation(2), 6)
    0.0256
    """
    h, c, a, b = _hidden_state_moments_iv(hot_rate, cold_rate, stay_hot, stay_cold)
    persistence = a + b - 1.0
    hot_share = (1.0 - b) / (2.0 - a - b)
    cold_share = 1.0 - hot_share
    make_rate = hot_share * h + cold_share * c
    covariance = hot_share * cold_share * (h - c) ** 2 * persistence
    both = make_rate**2 + covariance  # E[X_t X_{t+1}]
    miss_rate = 1.0 - make_rate
    with np.errstate(divide="ignore", invalid="ignore"):
        after_make = np.where(make_rate > 0, both / make_rate, np.nan)
        after_miss = np.where(miss_rate > 0, (make_rate - both) / miss_rate, np.nan)
        variance = make_rate * miss_rate
        rho = np.where(variance > 0, covariance / variance, np.nan)
    return HiddenStateMoments(
        hot_rate=_scalar_or_array(h),
        cold_rate=_scalar_or_array(c),
        stay_hot=_scalar_or_array(a),
        stay_cold=_scalar_or_array(b),
        hot_share=_scalar_or_array(hot_share),
        persistence=_scalar_or_array(persistence),
        make_rate=_scalar_or_array(make_rate),
        rate_after_make=_scalar_or_array(after_make),
        rate_after_miss=_scalar_or_array(after_miss),
        rate_difference=_scalar_or_array(after_make - after_miss),
        lag1_autocorrelation=_scalar_or_array(rho),
    )


# ---------------------------------------------------------------------------
# Dependence on the previous outcome
# ---------------------------------------------------------------------------


def _stationary_rate(rate_after_make, rate_after_miss):
    return rate_after_miss / (1.0 - rate_after_make + rate_after_miss)


def _simulate_markov_iv(n_attempts, rate_after_make, rate_after_miss, n_sequences,
                        first_rate):
    n_attempts = _check_count("n_attempts", n_attempts)
    n_sequences = _check_count("n_sequences", n_sequences)
    rate_after_make = _check_probability("rate_after_make", rate_after_make)
    rate_after_miss = _check_probability("rate_after_miss", rate_after_miss)
    if first_rate is None:
        if rate_after_make == 1.0 and rate_after_miss == 0.0:
            raise ValueError(
                "the stationary make rate is undefined when `rate_after_make` = 1 "
                "and `rate_after_miss` = 0 (every attempt repeats the first); "
                "give `first_rate`"
            )
        first_rate = _stationary_rate(rate_after_make, rate_after_miss)
    else:
        first_rate = _check_probability("first_rate", first_rate)
    return n_attempts, rate_after_make, rate_after_miss, n_sequences, first_rate


def simulate_markov(
    n_attempts,
    *,
    rate_after_make,
    rate_after_miss,
    n_sequences=1,
    first_rate=None,
    rng=None,
):
    r"""Draw make/miss sequences in which each attempt depends on the previous one.

    Parameters
    ----------
    n_attempts : int
        Attempts per sequence (>= 0).
    rate_after_make, rate_after_miss : float
        Make probability after a make and after a miss, in [0, 1].
    n_sequences : int, optional
        Number of independent sequences (games), default 1.
    first_rate : float, optional
        Make probability of the first attempt. Default: the stationary make rate,
        so every attempt is a draw from the long-run chain.
    rng : None, int or numpy.random.Generator, optional
        Source of randomness, passed to ``numpy.random.default_rng``.

    Returns
    -------
    MarkovDraw
        ``made`` (bool) and ``probability`` (float), each of shape
        ``(n_sequences, n_attempts)``.

    Notes
    -----
    :math:`P(X_t = 1 \mid X_{t-1} = 1) = p_1` (``rate_after_make``) and
    :math:`P(X_t = 1 \mid X_{t-1} = 0) = p_0` (``rate_after_miss``). The outcomes
    form a two-state Markov chain with stationary make rate

    .. math:: \mu = \frac{p_0}{1 - p_1 + p_0},

    and lag-:math:`k` autocorrelation :math:`(p_1 - p_0)^k`. Runs of makes are
    geometric with mean :math:`1/(1 - p_1)`, runs of misses with mean
    :math:`1/p_0`; the sequences are drawn as alternating runs, with no loop over
    the attempts. See :func:`markov_moments`.

    References
    ----------
    .. [1] Feller, W. (1968). An Introduction to Probability Theory and Its
       Applications, Vol. 1, 3rd ed., ch. XV (Markov chains). Wiley.

    Examples
    --------
    >>> from streakwise.analysis.simulate import simulate_markov
    >>> draw = simulate_markov(
    ...     20, rate_after_make=0.55, rate_after_miss=0.45, n_sequences=1000,
    ...     rng=2024,
    ... )
    >>> draw.made.shape
    (1000, 20)
    >>> bool((draw.probability[:, 1:] == 0.55).sum() == draw.made[:, :-1].sum())
    True
    """
    n_attempts, p1, p0, n_sequences, first_rate = _simulate_markov_iv(
        n_attempts, rate_after_make, rate_after_miss, n_sequences, first_rate
    )
    rng = np.random.default_rng(rng)
    start_made = rng.random(n_sequences) < first_rate
    # a run of makes continues with p1, a run of misses with 1 - p0
    made = _two_state_path(start_made, n_attempts, p1, 1.0 - p0, rng)
    probability = np.empty((n_sequences, n_attempts), dtype=float)
    if n_attempts:
        probability[:, 0] = first_rate
        probability[:, 1:] = np.where(made[:, :-1], p1, p0)
    return MarkovDraw(made=made, probability=probability)


def _markov_moments_iv(rate_after_make, rate_after_miss):
    p1 = _check_probability_array("rate_after_make", rate_after_make)
    p0 = _check_probability_array("rate_after_miss", rate_after_miss)
    try:
        p1, p0 = np.broadcast_arrays(p1, p0)
    except ValueError:
        raise ValueError(
            "`rate_after_make` and `rate_after_miss` must broadcast together "
            f"(got shapes {p1.shape}, {p0.shape})"
        ) from None
    if ((p1 == 1.0) & (p0 == 0.0)).any():
        raise ValueError(
            "the stationary make rate is undefined when `rate_after_make` = 1 "
            "and `rate_after_miss` = 0 (every attempt repeats the first)"
        )
    return p1, p0


def markov_moments(rate_after_make, rate_after_miss):
    r"""Long-run make rate and lag-1 dependence of the previous-outcome model.

    Parameters
    ----------
    rate_after_make, rate_after_miss : float or array_like
        Make probability after a make and after a miss, in [0, 1]; not 1 and 0
        together. They broadcast together.

    Returns
    -------
    MarkovMoments
        Floats for scalar inputs, arrays of the broadcast shape otherwise.

    Notes
    -----
    The stationary make rate solves :math:`\mu = \mu p_1 + (1 - \mu) p_0`:

    .. math:: \mu = \frac{p_0}{1 - p_1 + p_0}.

    The transition matrix has second eigenvalue :math:`p_1 - p_0`, so
    :math:`\operatorname{Cov}(X_t, X_{t+k}) = \mu(1 - \mu)(p_1 - p_0)^k` and the
    lag-1 autocorrelation equals the difference of the conditional rates.

    References
    ----------
    .. [1] Feller, W. (1968). An Introduction to Probability Theory and Its
       Applications, Vol. 1, 3rd ed., ch. XV (Markov chains). Wiley.

    Examples
    --------
    >>> from streakwise.analysis.simulate import markov_moments
    >>> m = markov_moments(0.6, 0.4)
    >>> round(m.make_rate, 12), round(m.rate_difference, 12)
    (0.5, 0.2)
    """
    p1, p0 = _markov_moments_iv(rate_after_make, rate_after_miss)
    make_rate = _stationary_rate(p1, p0)
    difference = p1 - p0
    inside = (make_rate > 0.0) & (make_rate < 1.0)
    return MarkovMoments(
        rate_after_make=_scalar_or_array(p1),
        rate_after_miss=_scalar_or_array(p0),
        make_rate=_scalar_or_array(make_rate),
        rate_difference=_scalar_or_array(difference),
        lag1_autocorrelation=_scalar_or_array(np.where(inside, difference, np.nan)),
    )


# ---------------------------------------------------------------------------
# Independent attempts
# ---------------------------------------------------------------------------


def _make_probability_iv(linear_predictor):
    try:
        eta = np.asarray(linear_predictor, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(
            f"`linear_predictor` must be real numbers (got {_show(linear_predictor)})"
        ) from None
    if np.isnan(eta).any():
        raise ValueError("`linear_predictor` must not contain NaN (got nan)")
    return eta


def make_probability(linear_predictor):
    r"""Make probability of a logistic (difficulty) model: ``expit(linear_predictor)``.

    Parameters
    ----------
    linear_predictor : array_like
        The model's linear predictor (log-odds of a make) per attempt, any shape.
        No NaN; -inf and inf give 0 and 1.

    Returns
    -------
    ndarray of float (a float for scalar input)
        :math:`p = 1/(1 + e^{-\eta})`, same shape as the input.

    Notes
    -----
    In a logistic difficulty model :math:`\eta = \beta_0 + x^\top \beta`: the
    player's skill, the shot's covariates (distance, defender distance, ...) and,
    for a hot-hand alternative, a state or streak term, all add on this scale.
    Draw the makes with :func:`simulate_bernoulli`.

    References
    ----------
    .. [1] McCullagh, P. & Nelder, J. A. (1989). Generalized Linear Models,
       2nd ed., ch. 4 (binary data). Chapman & Hall.

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.simulate import make_probability
    >>> make_probability(np.array([0.0, np.log(3.0)])).round(6)
    array([0.5 , 0.75])
    """
    eta = _make_probability_iv(linear_predictor)
    return _scalar_or_array(special.expit(eta))


def _simulate_bernoulli_iv(probability):
    try:
        p = np.asarray(probability, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(
            f"`probability` must be numbers in [0, 1] (got {_show(probability)})"
        ) from None
    bad = ~((p >= 0.0) & (p <= 1.0))
    if bad.any():
        raise ValueError(f"`probability` must be in [0, 1] (got {_show(p[bad][0])})")
    return p


def simulate_bernoulli(probability, *, rng=None):
    r"""Independent makes with the given per-attempt probabilities.

    Parameters
    ----------
    probability : array_like
        Make probability of every attempt, in [0, 1], any shape (for a batch of
        sequences: attempts on the last axis).
    rng : None, int or numpy.random.Generator, optional
        Source of randomness, passed to ``numpy.random.default_rng``.

    Returns
    -------
    ndarray of bool
        Same shape as ``probability`` (0-d for a scalar); True = make.

    Notes
    -----
    :math:`X_i = [U_i < p_i]` with :math:`U_i` uniform on [0, 1), so
    :math:`P(X_i = 1) = p_i` exactly, 0 never makes and 1 always makes. This is
    the "no hot hand" model once the probabilities account for shot difficulty
    (:func:`make_probability`).

    References
    ----------
    .. [1] Devroye, L. (1986). Non-Uniform Random Variate Generation, ch. II
       (the inversion method). Springer.

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.simulate import simulate_bernoulli
    >>> made = simulate_bernoulli(np.full((500, 20), 0.45), rng=7)
    >>> made.shape, made.dtype
    ((500, 20), dtype('bool'))
    >>> round(float(made.mean()), 2)
    0.45
    """
    p = _simulate_bernoulli_iv(probability)
    rng = np.random.default_rng(rng)
    return rng.random(p.shape) < p


# ---------------------------------------------------------------------------
# Attempts per game
# ---------------------------------------------------------------------------


def _simulate_session_lengths_iv(n_sessions, mean, low, high):
    n_sessions = _check_count("n_sessions", n_sessions)
    low = _check_count("low", low, minimum=1)
    high = _check_count("high", high, minimum=1)
    if high < low:
        raise ValueError(f"`high` must be >= `low` = {low} (got {high})")
    if isinstance(mean, (bool, np.bool_)) or not isinstance(mean, numbers.Real):
        raise ValueError(f"`mean` must be a number (got {_show(mean)})")
    mean = float(mean)
    if low == high:
        if mean != low:
            raise ValueError(
                f"`mean` must equal `low` = `high` = {low} (got {_show(mean)})"
            )
    elif not low < mean < high:
        raise ValueError(
            f"`mean` must be strictly between `low` = {low} and `high` = {high} "
            f"(got {_show(mean)})"
        )
    return n_sessions, mean, low, high


def _truncated_poisson_pmf(mean, low, high):
    """Support and probabilities of the Poisson on [low, high] with the given mean."""
    support = np.arange(low, high + 1)
    if low == high:
        return support, np.ones(1)
    log_factorial = special.gammaln(support + 1.0)

    def pmf(log_lambda):
        return special.softmax(support * log_lambda - log_factorial)

    def excess(log_lambda):
        return pmf(log_lambda) @ support - mean

    # the mean rises strictly from low to high as log(lambda) runs over the reals
    lower = upper = np.log(mean)
    step = 1.0
    while excess(lower) > 0.0:
        lower -= step
        step *= 2.0
    step = 1.0
    while excess(upper) < 0.0:
        upper += step
        step *= 2.0
    log_lambda = optimize.brentq(excess, lower, upper, xtol=1e-14, rtol=1e-14)
    return support, pmf(log_lambda)


def simulate_session_lengths(n_sessions, *, mean, low, high, rng=None):
    r"""Attempts per game: a Poisson truncated to [low, high] with the given mean.

    Parameters
    ----------
    n_sessions : int
        Number of games (sessions) to draw (>= 0).
    mean : float
        Mean number of attempts per game, strictly between ``low`` and ``high``
        (or equal to both when ``low == high``).
    low, high : int
        Fewest and most attempts in a game (1 <= low <= high).
    rng : None, int or numpy.random.Generator, optional
        Source of randomness, passed to ``numpy.random.default_rng``.

    Returns
    -------
    ndarray of int64, shape (n_sessions,)

    Notes
    -----
    The lengths follow :math:`P(L = k) \propto \lambda^k / k!` for
    :math:`k = \text{low}, \dots, \text{high}`. This family's mean rises strictly
    from ``low`` to ``high`` as :math:`\log \lambda` runs over the real line, so
    :math:`\lambda` is solved numerically to make the *truncated* mean equal
    ``mean`` (unlike clipping, which moves the mean and piles games on the
    bounds). Draws are by inversion of the exact probabilities.

    References
    ----------
    .. [1] Johnson, N. L., Kemp, A. W. & Kotz, S. (2005). Univariate Discrete
       Distributions, 3rd ed., ch. 4 (truncated Poisson distributions). Wiley.

    Examples
    --------
    >>> from streakwise.analysis.simulate import simulate_session_lengths
    >>> lengths = simulate_session_lengths(2000, mean=16, low=10, high=22, rng=3)
    >>> int(lengths.min()) >= 10, int(lengths.max()) <= 22
    (True, True)
    >>> round(float(lengths.mean()))
    16
    """
    n_sessions, mean, low, high = _simulate_session_lengths_iv(
        n_sessions, mean, low, high
    )
    rng = np.random.default_rng(rng)
    support, pmf = _truncated_poisson_pmf(mean, low, high)
    return rng.choice(support, size=n_sessions, p=pmf).astype(np.int64)
