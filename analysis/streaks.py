"""Hit rates after streaks, runs, longest runs and lag-1 correlation, batched.

Every statistic here takes ``x``: outcomes (1 make, 0 miss) with the attempts on
the last axis, shape ``(..., n_attempts)``, and ``offsets``: where each session
starts in that last axis (session ``i`` is ``x[..., offsets[i]:offsets[i + 1]]``,
the layout of :class:`~streakwise.analysis.sequences.PlayerSequences`). All
leading axes are a batch: a whole block of reshuffled seasons is counted in one
call, without a loop over attempts, sessions or sequences. The run lengths come
from cumulative maxima of attempt positions that restart at every session
start, so a streak never crosses from one session into the next.

Counting conventions (the same in every function and in the permutation
engine):

- an attempt "follows k makes" when the k attempts just before it, in the same
  session, are all makes. Windows overlap: in a run of five makes followed by a
  miss, the 4th, 5th and 6th attempts all follow three makes (two of them are
  makes, the 6th a miss). The first k attempts of a session never follow k of
  anything;
- the pooled rate after k makes is a ratio of sums over sessions:
  (makes that follow k makes) / (attempts that follow k makes), likewise after
  k misses; it is undefined (NaN) when no attempt follows k makes (misses);
- ``D_k`` = rate after k makes - rate after k misses;
- the runs count is the number of maximal blocks of equal outcomes inside each
  session, summed over sessions;
- the longest run is the longest block of consecutive makes inside one session;
- the lag-1 correlation is pooled within sessions: every session is centred on
  its own make rate, and the sum of lag-1 cross products is divided by the sum
  of squares (each session's own autocorrelation estimator, pooled as a ratio of
  sums). It is undefined when every session is all makes or all misses.
"""

from __future__ import annotations

import numbers

import numpy as np

from ._values import show_value as _show
from .results import ConditionalRates, StreakCounts
from .sequences import PlayerSequences

__all__ = [
    "conditional_rates",
    "count_runs",
    "lag1_correlation",
    "longest_run",
    "streak_counts",
]

MAX_K = 8


# ---------------------------------------------------------------------------
# Shared input validation (also used by the other statistics modules)
# ---------------------------------------------------------------------------


def _check_integer(name, value, *, minimum=None, maximum=None):
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Integral):
        raise ValueError(f"`{name}` must be an integer (got {_show(value)})")
    value = int(value)
    if minimum is not None and maximum is not None and not minimum <= value <= maximum:
        raise ValueError(f"`{name}` must be an integer from {minimum} to {maximum} (got {value})")
    if minimum is not None and value < minimum:
        raise ValueError(f"`{name}` must be an integer >= {minimum} (got {value})")
    return value


def _check_choice(name, value, choices):
    if not isinstance(value, str) or value not in choices:
        listed = ", ".join(repr(c) for c in choices)
        raise ValueError(f"`{name}` must be one of {listed} (got {_show(value)})")
    return value


def _check_made(x):
    """Outcomes as an int8 array of 0/1 with the attempts on the last axis."""
    if isinstance(x, PlayerSequences):
        x = x.made
    try:
        array = np.asarray(x)
    except (TypeError, ValueError):
        raise ValueError(f"`x` must be an array of 0/1 outcomes (got {_show(x)})") from None
    if array.ndim == 0:
        raise ValueError("`x` must have the attempts on its last axis (got a scalar)")
    if array.dtype == bool:
        return array.astype(np.int8)
    if not (np.issubdtype(array.dtype, np.integer) or np.issubdtype(array.dtype, np.floating)):
        raise ValueError(f"`x` must hold 0/1 outcomes (got dtype {array.dtype})")
    bad = (array != 0) & (array != 1)
    if bad.any():
        raise ValueError(f"`x` must hold only 0 (miss) and 1 (make) (got {_show(array[bad][0])})")
    return array.astype(np.int8)


def _check_offsets(offsets, n_attempts, x=None):
    """Session offsets: 0 first, ``n_attempts`` last, strictly increasing."""
    if offsets is None:
        if isinstance(x, PlayerSequences):
            offsets = x.offsets
        else:
            return np.array([0, n_attempts], dtype=np.int64) if n_attempts else np.zeros(1, np.int64)
    try:
        array = np.asarray(offsets)
    except (TypeError, ValueError):
        raise ValueError(f"`offsets` must be integers (got {_show(offsets)})") from None
    if array.ndim != 1 or array.size == 0 or not np.issubdtype(array.dtype, np.integer):
        raise ValueError(
            "`offsets` must be a 1-D integer array of session starts ending with the "
            f"number of attempts (got {_show(offsets)})"
        )
    if array[0] != 0 or array[-1] != n_attempts:
        raise ValueError(
            f"`offsets` must start at 0 and end at the number of attempts {n_attempts} "
            f"(got {int(array[0])} ... {int(array[-1])})"
        )
    if array.size > 1 and (np.diff(array) <= 0).any():
        raise ValueError("`offsets` must be strictly increasing: every session needs at least one attempt")
    return array.astype(np.int64)


def _sequence_iv(x, offsets):
    made = _check_made(x)
    offsets = _check_offsets(offsets, made.shape[-1], x)
    return made, offsets


def _max_k_iv(max_k):
    return _check_integer("max_k", max_k, minimum=1, maximum=MAX_K)


# ---------------------------------------------------------------------------
# The batched counting kernel
# ---------------------------------------------------------------------------


def _reduce(values, offsets, per_session, ufunc=np.add, dtype=np.int64):
    """Per-session reduction of ``values`` (attempts on the last axis), or the total."""
    if per_session:
        return ufunc.reduceat(values, offsets[:-1], axis=-1, dtype=dtype) if values.shape[-1] else (
            np.zeros(values.shape[:-1] + (0,), dtype=dtype))
    if ufunc is np.maximum:
        return values.max(axis=-1, initial=0).astype(dtype)
    return values.sum(axis=-1, dtype=dtype)


def _counts(made, offsets, max_k, per_session):
    """The sufficient counts of every statistic; see :func:`streak_counts`."""
    n = made.shape[-1]
    lengths = np.diff(offsets)
    n_sessions = len(lengths)
    position_type = np.int32 if n < 2**31 - 1 else np.int64
    position = np.arange(n, dtype=position_type)
    # the position just before the attempt's session starts, for every attempt
    before = np.repeat(offsets[:-1] - 1, lengths).astype(position_type)
    is_make = made.astype(bool)
    starts = np.zeros(n, dtype=bool)
    starts[offsets[:-1]] = True

    # length of the run of makes (misses) that ends at each attempt: positions
    # since the last miss (make), restarting at every session start
    last_miss = np.maximum.accumulate(np.where(is_make, before, position), axis=-1)
    last_make = np.maximum.accumulate(np.where(is_make, position, before), axis=-1)
    run_of_makes = position - last_miss
    run_of_misses = position - last_make
    del last_miss, last_make

    # the run that ends just before each attempt (0 at a session start)
    before_makes = np.zeros_like(run_of_makes)
    before_makes[..., 1:] = run_of_makes[..., :-1]
    before_makes[..., starts] = 0
    before_misses = np.zeros_like(run_of_misses)
    before_misses[..., 1:] = run_of_misses[..., :-1]
    before_misses[..., starts] = 0

    shape = made.shape[:-1] + ((n_sessions,) if per_session else ())
    makes_after_makes = np.empty(shape + (max_k,), dtype=np.int64)
    attempts_after_makes = np.empty_like(makes_after_makes)
    makes_after_misses = np.empty_like(makes_after_makes)
    attempts_after_misses = np.empty_like(makes_after_makes)
    for k in range(1, max_k + 1):
        follows = before_makes >= k
        attempts_after_makes[..., k - 1] = _reduce(follows, offsets, per_session)
        makes_after_makes[..., k - 1] = _reduce(follows & is_make, offsets, per_session)
        follows = before_misses >= k
        attempts_after_misses[..., k - 1] = _reduce(follows, offsets, per_session)
        makes_after_misses[..., k - 1] = _reduce(follows & is_make, offsets, per_session)

    changes = np.zeros(made.shape, dtype=bool)
    changes[..., 1:] = made[..., 1:] != made[..., :-1]
    changes[..., starts] = False
    runs = _reduce(changes, offsets, per_session) + (1 if per_session else n_sessions)
    longest = _reduce(run_of_makes, offsets, per_session, ufunc=np.maximum)

    # lag-1 pieces, per session
    session_makes = _reduce(made, offsets, True)
    first = made[..., offsets[:-1]].astype(np.int64)
    last = made[..., offsets[1:] - 1].astype(np.int64)
    pairs_made = (
        makes_after_makes[..., 0] if per_session else _reduce((before_makes >= 1) & is_make, offsets, True)
    )
    rate = session_makes / lengths
    numerator = pairs_made - rate * (2 * session_makes - first - last) + (lengths - 1) * rate**2
    denominator = session_makes * (lengths - session_makes) / lengths
    if not per_session:
        numerator = numerator.sum(axis=-1)
        denominator = denominator.sum(axis=-1)
        session_makes = session_makes.sum(axis=-1)
        attempts = np.full(made.shape[:-1], n, dtype=np.int64)
        sessions = np.full(made.shape[:-1], n_sessions, dtype=np.int64)
    else:
        attempts = np.broadcast_to(lengths, shape).astype(np.int64)
        sessions = np.ones(shape, dtype=np.int64)
    return StreakCounts(
        max_k=max_k,
        attempts=attempts,
        makes=np.asarray(session_makes, dtype=np.int64),
        sessions=sessions,
        makes_after_makes=makes_after_makes,
        attempts_after_makes=attempts_after_makes,
        makes_after_misses=makes_after_misses,
        attempts_after_misses=attempts_after_misses,
        runs=np.asarray(runs, dtype=np.int64),
        longest_run=np.asarray(longest, dtype=np.int64),
        lag1_numerator=np.asarray(numerator, dtype=float),
        lag1_denominator=np.asarray(denominator, dtype=float),
    )


def _ratio(numerator, denominator):
    """``numerator / denominator`` with NaN where the denominator is 0."""
    numerator = np.asarray(numerator, dtype=float)
    denominator = np.asarray(denominator, dtype=float)
    out = np.full(np.broadcast(numerator, denominator).shape, np.nan)
    np.divide(numerator, denominator, out=out, where=denominator > 0)
    return out


# ---------------------------------------------------------------------------
# Public statistics
# ---------------------------------------------------------------------------


def _streak_counts_iv(x, offsets, max_k, per_session):
    made, offsets = _sequence_iv(x, offsets)
    max_k = _max_k_iv(max_k)
    if not isinstance(per_session, (bool, np.bool_)):
        raise ValueError(f"`per_session` must be True or False (got {_show(per_session)})")
    return made, offsets, max_k, bool(per_session)


def streak_counts(x, offsets=None, *, max_k=3, per_session=False):
    r"""Sufficient counts of every streak statistic, for a batch of seasons.

    Parameters
    ----------
    x : array_like of 0/1 or bool, shape (..., n_attempts), or PlayerSequences
        Outcomes (1 make, 0 miss), sessions concatenated on the last axis. Leading
        axes are a batch (for example a block of reshuffled seasons).
    offsets : array_like of int, optional
        Session starts followed by ``n_attempts`` (strictly increasing). Default:
        the offsets of a :class:`PlayerSequences`, else one session.
    max_k : int, optional
        Longest streak conditioned on, 1 to 8 (default 3).
    per_session : bool, optional
        Keep a session axis (just before the ``k`` axis) instead of summing over
        sessions.

    Returns
    -------
    StreakCounts
        ``makes_after_makes``, ``attempts_after_makes``, ``makes_after_misses``,
        ``attempts_after_misses`` with a last axis for k = 1..max_k; ``runs``,
        ``longest_run``, ``lag1_numerator``, ``lag1_denominator``, ``makes``,
        ``attempts`` with the batch shape.

    Notes
    -----
    With :math:`c^{+}_t` the length of the run of makes ending at attempt
    :math:`t` (0 after a miss or before the session), computed as :math:`t` minus
    the cumulative maximum of the positions of misses and of the position just
    before the session start, attempt :math:`t + 1` of the same session follows
    :math:`k` makes iff :math:`c^{+}_t \ge k`. Windows overlap (a run of five makes
    offers three attempts after three makes). Runs of misses likewise. Totals
    are sums over sessions, except ``longest_run`` (a maximum) and the lag-1
    pieces, see :func:`lag1_correlation`.

    References
    ----------
    .. [1] Gilovich, T., Vallone, R. & Tversky, A. (1985). The hot hand in
       basketball: On the misperception of random sequences. Cognitive
       Psychology 17(3), 295-314.
    .. [2] Miller, J. B. & Sanjurjo, A. (2018). Surprised by the hot hand
       fallacy? A truth in the law of small numbers. Econometrica 86(6),
       2019-2047.

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.streaks import streak_counts
    >>> x = np.array([1, 1, 1, 0, 1, 1, 0, 0])
    >>> c = streak_counts(x, [0, 5, 8], max_k=2)
    >>> c.makes_after_makes.tolist(), c.attempts_after_makes.tolist()
    ([2, 1], [4, 2])
    >>> int(c.runs), int(c.longest_run)
    (5, 3)
    >>> rng = np.random.default_rng(7)
    >>> batch = rng.integers(0, 2, size=(1000, 8))
    >>> streak_counts(batch, [0, 5, 8]).runs.shape
    (1000,)
    """
    made, offsets, max_k, per_session = _streak_counts_iv(x, offsets, max_k, per_session)
    return _counts(made, offsets, max_k, per_session)


def _conditional_rates_iv(x, offsets, max_k):
    made, offsets = _sequence_iv(x, offsets)
    return made, offsets, _max_k_iv(max_k)


def _rates_from_counts(counts, session_counts=None):
    after_makes = _ratio(counts.makes_after_makes, counts.attempts_after_makes)
    after_misses = _ratio(counts.makes_after_misses, counts.attempts_after_misses)
    if session_counts is None:
        average_makes = average_misses = average_difference = np.full(after_makes.shape, np.nan)
    else:
        per_makes = _ratio(session_counts.makes_after_makes, session_counts.attempts_after_makes)
        per_misses = _ratio(session_counts.makes_after_misses, session_counts.attempts_after_misses)
        average_makes = _nanmean(per_makes, axis=-2)
        average_misses = _nanmean(per_misses, axis=-2)
        average_difference = _nanmean(per_makes - per_misses, axis=-2)
    return ConditionalRates(
        k=np.arange(1, counts.max_k + 1),
        attempts=counts.attempts,
        makes=counts.makes,
        make_rate=_ratio(counts.makes, counts.attempts),
        makes_after_makes=counts.makes_after_makes,
        attempts_after_makes=counts.attempts_after_makes,
        makes_after_misses=counts.makes_after_misses,
        attempts_after_misses=counts.attempts_after_misses,
        after_makes=after_makes,
        after_misses=after_misses,
        difference=after_makes - after_misses,
        session_average_after_makes=average_makes,
        session_average_after_misses=average_misses,
        session_average_difference=average_difference,
    )


def _nanmean(values, axis):
    defined = ~np.isnan(values)
    count = defined.sum(axis=axis)
    total = np.where(defined, values, 0.0).sum(axis=axis)
    return _ratio(total, count)


def conditional_rates(x, offsets=None, *, max_k=3):
    r"""Hit rates after k makes and after k misses, pooled within sessions.

    Parameters
    ----------
    x : array_like of 0/1 or bool, shape (..., n_attempts), or PlayerSequences
        Outcomes, sessions concatenated on the last axis; leading axes a batch.
    offsets : array_like of int, optional
        Session starts followed by ``n_attempts``. Default: one session (or the
        offsets of a :class:`PlayerSequences`).
    max_k : int, optional
        Streak lengths k = 1..max_k (1 to 8, default 3).

    Returns
    -------
    ConditionalRates
        Counts and rates with a last axis for k: ``after_makes``,
        ``after_misses`` and their ``difference`` (NaN where undefined), the
        overall ``make_rate``, and for comparison the per-session rates
        averaged over the sessions where they are defined
        (``session_average_after_makes`` and so on).

    Notes
    -----
    With :math:`M^{+}_{k,s}` makes among the :math:`A^{+}_{k,s}` attempts of
    session :math:`s` that follow :math:`k` makes (and :math:`M^{-}_{k,s}`,
    :math:`A^{-}_{k,s}` after :math:`k` misses),

    .. math::

        \hat p^{+}_k = \frac{\sum_s M^{+}_{k,s}}{\sum_s A^{+}_{k,s}}, \qquad
        \hat p^{-}_k = \frac{\sum_s M^{-}_{k,s}}{\sum_s A^{-}_{k,s}}, \qquad
        D_k = \hat p^{+}_k - \hat p^{-}_k .

    Streaks never cross sessions, windows overlap (see :func:`streak_counts`).
    These estimators are biased downward in finite sequences, even for
    independent attempts [2]_: report them beside their permutation null mean
    (:func:`~streakwise.analysis.permutation.permutation_test`). The average of
    per-session rates is the estimator of early studies [1]_, kept for
    comparison; its bias is larger still.

    References
    ----------
    .. [1] Gilovich, T., Vallone, R. & Tversky, A. (1985). The hot hand in
       basketball: On the misperception of random sequences. Cognitive
       Psychology 17(3), 295-314.
    .. [2] Miller, J. B. & Sanjurjo, A. (2018). Surprised by the hot hand
       fallacy? A truth in the law of small numbers. Econometrica 86(6),
       2019-2047.

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.streaks import conditional_rates
    >>> rng = np.random.default_rng(2018)
    >>> x = (rng.random(600) < 0.5).astype(int)
    >>> offsets = np.arange(0, 601, 20)  # 30 sessions of 20 attempts
    >>> r = conditional_rates(x, offsets, max_k=2)
    >>> r.k.tolist(), r.after_makes.shape
    ([1, 2], (2,))
    >>> bool(np.isfinite(r.difference).all())
    True
    """
    made, offsets, max_k = _conditional_rates_iv(x, offsets, max_k)
    totals = _counts(made, offsets, max_k, per_session=False)
    per_session = _counts(made, offsets, max_k, per_session=True)
    return _rates_from_counts(totals, per_session)


def _lag1_correlation_iv(x, offsets):
    return _sequence_iv(x, offsets)


_count_runs_iv = _longest_run_iv = _lag1_correlation_iv


def lag1_correlation(x, offsets=None):
    r"""Lag-1 autocorrelation of the outcomes, pooled within sessions.

    Parameters
    ----------
    x : array_like of 0/1 or bool, shape (..., n_attempts), or PlayerSequences
    offsets : array_like of int, optional
        Session starts followed by ``n_attempts`` (default: one session).

    Returns
    -------
    ndarray of float, the batch shape
        NaN where every session is all makes or all misses.

    Notes
    -----
    With :math:`\bar x_s` the make rate of session :math:`s`,

    .. math::

        r_1 = \frac{\sum_s \sum_{t=1}^{L_s - 1} (x_{s,t} - \bar x_s)(x_{s,t+1} - \bar x_s)}
                   {\sum_s \sum_{t=1}^{L_s} (x_{s,t} - \bar x_s)^2}.

    Centring each session on its own rate keeps game-to-game form out of the
    numerator. For one session this is the usual sample autocorrelation; it is
    biased toward :math:`-1/L` under independence, which is why the permutation
    engine reports it beside its null mean.

    References
    ----------
    .. [1] Gilovich, T., Vallone, R. & Tversky, A. (1985). The hot hand in
       basketball: On the misperception of random sequences. Cognitive
       Psychology 17(3), 295-314.

    Examples
    --------
    >>> from streakwise.analysis.streaks import lag1_correlation
    >>> round(float(lag1_correlation([1, 1, 0, 0, 1, 1, 0, 0])), 6)
    0.125
    """
    made, offsets = _lag1_correlation_iv(x, offsets)
    counts = _counts(made, offsets, 1, per_session=False)
    return _ratio(counts.lag1_numerator, counts.lag1_denominator)


def count_runs(x, offsets=None):
    r"""Number of runs (maximal blocks of equal outcomes), summed over sessions.

    Parameters
    ----------
    x : array_like of 0/1 or bool, shape (..., n_attempts), or PlayerSequences
    offsets : array_like of int, optional
        Session starts followed by ``n_attempts`` (default: one session).

    Returns
    -------
    ndarray of int64, the batch shape

    Notes
    -----
    Each session contributes one run plus one per change of outcome between
    consecutive attempts; a session boundary is not a change. Fewer runs than
    chance gives means streakier shooting [1]_.

    References
    ----------
    .. [1] Wald, A. & Wolfowitz, J. (1940). On a test whether two samples are
       from the same population. Annals of Mathematical Statistics 11(2),
       147-162.

    Examples
    --------
    >>> from streakwise.analysis.streaks import count_runs
    >>> int(count_runs([1, 1, 1, 1, 0, 0, 0, 0, 1, 1]))
    3
    >>> int(count_runs([1, 1, 0, 0, 1, 1], [0, 3, 6]))
    4
    """
    made, offsets = _count_runs_iv(x, offsets)
    return _counts(made, offsets, 1, per_session=False).runs


def longest_run(x, offsets=None):
    r"""Longest run of consecutive makes inside one session.

    Parameters
    ----------
    x : array_like of 0/1 or bool, shape (..., n_attempts), or PlayerSequences
    offsets : array_like of int, optional
        Session starts followed by ``n_attempts`` (default: one session).

    Returns
    -------
    ndarray of int64, the batch shape (0 when there is no make)

    Notes
    -----
    A run of makes ends at a miss or at the end of its session: makes at the end
    of one game and the start of the next are two runs.

    References
    ----------
    .. [1] Gilovich, T., Vallone, R. & Tversky, A. (1985). The hot hand in
       basketball: On the misperception of random sequences. Cognitive
       Psychology 17(3), 295-314.

    Examples
    --------
    >>> from streakwise.analysis.streaks import longest_run
    >>> int(longest_run([1, 1, 1, 0, 1, 1]))
    3
    >>> int(longest_run([1, 1, 1, 0, 1, 1], [0, 2, 6]))
    2
    """
    made, offsets = _longest_run_iv(x, offsets)
    return _counts(made, offsets, 1, per_session=False).longest_run
