"""Classic tests beside the permutation engine: runs, longest runs, serial correlation.

- The Wald-Wolfowitz runs test, stratified by session: runs are counted inside
  each session and summed; the null keeps every session's numbers of makes and
  misses. The exact null is the convolution of the sessions' exact runs
  distributions; the normal approximation uses the summed means and variances.
- The exact distribution of the longest run of makes given a session's length
  and number of makes, every arrangement equally likely.
- The serial-correlation view: pooled within-session autocorrelations with the
  naive normal test, to show where a naive reading and the bias-corrected
  permutation test differ.
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from scipy import special, stats

from .results import RunsTestResult, SerialCorrelationResult
from .streaks import _check_choice, _check_integer, _counts, _ratio, _sequence_iv

__all__ = [
    "longest_run_distribution",
    "runs_distribution",
    "runs_moments",
    "runs_test",
    "season_longest_run_distribution",
    "serial_correlation",
]

ALTERNATIVES = ("hot", "cold", "two-sided")
EXACT_MAX_ATTEMPTS = 1000


def _two_sided(p_hot, p_cold):
    return min(1.0, 2.0 * min(p_hot, p_cold))


def _pick(alternative, p_hot, p_cold):
    if alternative == "hot":
        return p_hot
    if alternative == "cold":
        return p_cold
    return _two_sided(p_hot, p_cold)


# ---------------------------------------------------------------------------
# Exact runs distribution
# ---------------------------------------------------------------------------


@lru_cache(maxsize=4096)
def _session_runs_pmf(length, makes):
    """pmf of the number of runs over r = 0..length, for one session (read-only)."""
    pmf = np.zeros(length + 1)
    misses = length - makes
    if length == 0:
        pmf[0] = 1.0
    elif makes == 0 or misses == 0:
        pmf[1] = 1.0
    else:
        total = math.comb(length, makes)
        for s in range(1, min(makes, misses) + 1):
            even = 2 * math.comb(makes - 1, s - 1) * math.comb(misses - 1, s - 1)
            pmf[2 * s] = even / total
            if 2 * s + 1 <= length:
                odd = (math.comb(makes - 1, s) * math.comb(misses - 1, s - 1)
                       + math.comb(makes - 1, s - 1) * math.comb(misses - 1, s))
                pmf[2 * s + 1] = odd / total
    pmf.setflags(write=False)
    return pmf


def _runs_distribution_iv(lengths, makes):
    try:
        lengths = np.atleast_1d(np.asarray(lengths))
        makes = np.atleast_1d(np.asarray(makes))
    except (TypeError, ValueError):
        raise ValueError("`lengths` and `makes` must be integers") from None
    for name, value in (("lengths", lengths), ("makes", makes)):
        if value.ndim != 1 or not np.issubdtype(value.dtype, np.integer):
            raise ValueError(f"`{name}` must be an integer or a 1-D array of integers (got {value!r})")
    if lengths.shape != makes.shape:
        raise ValueError(
            f"`lengths` and `makes` must have the same length (got {lengths.size} and {makes.size})")
    if (lengths < 1).any():
        raise ValueError(f"`lengths` must be >= 1 (got {int(lengths[lengths < 1][0])})")
    bad = (makes < 0) | (makes > lengths)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(
            f"`makes` must be from 0 to the session length (got {int(makes[i])} makes in "
            f"{int(lengths[i])} attempts)")
    return lengths.astype(np.int64), makes.astype(np.int64)


def runs_distribution(lengths, makes):
    r"""Exact null distribution of the number of runs, summed over sessions.

    Parameters
    ----------
    lengths, makes : int or array_like of int
        Attempts and makes of each session (one session for scalars).

    Returns
    -------
    ndarray of float
        ``pmf[r] = P(R = r)`` for r = 0..sum(lengths), every arrangement of each
        session's makes equally likely and sessions independent.

    Notes
    -----
    For one session with :math:`n_1` makes and :math:`n_0` misses
    (:math:`n = n_1 + n_0`), the classic counts [1]_ are

    .. math::

        P(R = 2s) = \frac{2\binom{n_1 - 1}{s - 1}\binom{n_0 - 1}{s - 1}}{\binom{n}{n_1}},
        \quad
        P(R = 2s + 1) = \frac{\binom{n_1 - 1}{s}\binom{n_0 - 1}{s - 1}
                        + \binom{n_1 - 1}{s - 1}\binom{n_0 - 1}{s}}{\binom{n}{n_1}}.

    A session of only makes or only misses has one run. Runs summed over
    independent sessions have the convolution of the sessions' distributions.

    References
    ----------
    .. [1] Wald, A. & Wolfowitz, J. (1940). On a test whether two samples are
       from the same population. Annals of Mathematical Statistics 11(2),
       147-162.

    Examples
    --------
    >>> from streakwise.analysis.runs import runs_distribution
    >>> pmf = runs_distribution(10, 6)
    >>> round(float(pmf[:4].sum()), 8)  # P(R <= 3) with 6 makes and 4 misses
    0.04761905
    >>> round(float(runs_distribution([3, 3], [1, 2]).sum()), 12)
    1.0
    """
    lengths, makes = _runs_distribution_iv(lengths, makes)
    pmf = np.ones(1)
    for length, made in zip(lengths.tolist(), makes.tolist()):
        pmf = np.convolve(pmf, _session_runs_pmf(length, made))
    return pmf


_runs_moments_iv = _runs_distribution_iv


def runs_moments(lengths, makes):
    r"""Null mean and variance of the number of runs, summed over sessions.

    Parameters
    ----------
    lengths, makes : int or array_like of int
        Attempts and makes of each session.

    Returns
    -------
    (float, float)
        Mean and variance.

    Notes
    -----
    Per session with :math:`n_1` makes, :math:`n_0` misses, :math:`n = n_1 + n_0`
    [1]_: mean :math:`1 + 2 n_1 n_0 / n`, variance
    :math:`2 n_1 n_0 (2 n_1 n_0 - n) / (n^2 (n - 1))`; sessions add.

    References
    ----------
    .. [1] Wald, A. & Wolfowitz, J. (1940). On a test whether two samples are
       from the same population. Annals of Mathematical Statistics 11(2),
       147-162.

    Examples
    --------
    >>> from streakwise.analysis.runs import runs_moments
    >>> mean, variance = runs_moments(10, 6)
    >>> round(mean, 6), round(variance, 6)
    (5.8, 2.026667)
    """
    lengths, makes = _runs_moments_iv(lengths, makes)
    return _runs_moments(lengths, makes)


def _runs_moments(lengths, makes):
    n = lengths.astype(float)
    product = makes.astype(float) * (n - makes)
    mean = np.sum(1.0 + 2.0 * product / n)
    with np.errstate(divide="ignore", invalid="ignore"):
        variance = np.where(n > 1, 2.0 * product * (2.0 * product - n) / (n**2 * (n - 1)), 0.0)
    return float(mean), float(np.sum(variance))


# ---------------------------------------------------------------------------
# The stratified runs test
# ---------------------------------------------------------------------------


def _runs_test_iv(x, offsets, alternative, method):
    made, offsets = _sequence_iv(x, offsets)
    if made.ndim != 1:
        raise ValueError(f"`x` must be one season (1-D) for a test (got shape {made.shape})")
    alternative = _check_choice("alternative", alternative, ALTERNATIVES)
    method = _check_choice("method", method, ("auto", "exact", "normal"))
    return made, offsets, alternative, method


def runs_test(x, offsets=None, *, alternative="hot", method="auto"):
    r"""Wald-Wolfowitz runs test, stratified by session.

    Parameters
    ----------
    x : array_like of 0/1 or bool, shape (n_attempts,), or PlayerSequences
        One player's outcomes, sessions concatenated.
    offsets : array_like of int, optional
        Session starts followed by ``n_attempts`` (default: one session).
    alternative : {'hot', 'cold', 'two-sided'}, optional
        ``'hot'`` (default): fewer runs than chance gives (streaky);
        ``'cold'``: more runs (alternating); ``'two-sided'``: twice the smaller
        one-sided p-value, at most 1.
    method : {'auto', 'exact', 'normal'}, optional
        ``'exact'`` convolves the sessions' exact runs distributions;
        ``'normal'`` uses the normal approximation; ``'auto'`` (default) is exact
        up to 1000 attempts.

    Returns
    -------
    RunsTestResult

    Notes
    -----
    Runs are counted within sessions and summed: :math:`R = \sum_s R_s`. Under
    the null every arrangement of each session's makes is equally likely, so
    :math:`E[R] = \sum_s E[R_s]` and :math:`\operatorname{Var}[R] = \sum_s
    \operatorname{Var}[R_s]` (see :func:`runs_moments`), and
    :math:`z = (R - E[R]) / \sqrt{\operatorname{Var}[R]}`, without continuity
    correction. The exact p-values are :math:`P(R \le r)` (hot) and
    :math:`P(R \ge r)` (cold) under :func:`runs_distribution`.

    References
    ----------
    .. [1] Wald, A. & Wolfowitz, J. (1940). On a test whether two samples are
       from the same population. Annals of Mathematical Statistics 11(2),
       147-162.
    .. [2] Gilovich, T., Vallone, R. & Tversky, A. (1985). The hot hand in
       basketball: On the misperception of random sequences. Cognitive
       Psychology 17(3), 295-314.

    Examples
    --------
    >>> from streakwise.analysis.runs import runs_test
    >>> res = runs_test([1, 1, 1, 1, 0, 0, 0, 0, 1, 1])
    >>> res.runs, round(res.p_value, 8), res.method
    (3, 0.04761905, 'exact')
    >>> import numpy as np
    >>> rng = np.random.default_rng(40)
    >>> x = (rng.random(2000) < 0.45).astype(int)
    >>> runs_test(x, np.arange(0, 2001, 20), method="normal").method
    'normal'
    """
    made, offsets, alternative, method = _runs_test_iv(x, offsets, alternative, method)
    lengths = np.diff(offsets)
    makes = np.add.reduceat(made.astype(np.int64), offsets[:-1]) if made.size else np.zeros(0, np.int64)
    observed = int(_counts(made, offsets, 1, per_session=False).runs) if made.size else 0
    mean, variance = _runs_moments(lengths, makes)
    if method == "auto":
        method = "exact" if made.size <= EXACT_MAX_ATTEMPTS else "normal"
    common = dict(runs=observed, expected=mean, variance=variance, method=method,
                  alternative=alternative, attempts=int(made.size), sessions=int(len(lengths)))
    if variance <= 0.0:
        return RunsTestResult(
            z=None, p_value=None, p_hot=None, p_cold=None,
            reason="every session is all makes or all misses: the number of runs cannot vary",
            **common)
    z = (observed - mean) / math.sqrt(variance)
    if method == "exact":
        pmf = runs_distribution(lengths, makes)
        p_hot = float(min(1.0, pmf[: observed + 1].sum()))
        p_cold = float(min(1.0, pmf[observed:].sum()))
    else:
        p_hot = float(stats.norm.cdf(z))
        p_cold = float(stats.norm.sf(z))
    return RunsTestResult(z=float(z), p_value=_pick(alternative, p_hot, p_cold),
                          p_hot=p_hot, p_cold=p_cold, **common)


# ---------------------------------------------------------------------------
# Longest run of makes
# ---------------------------------------------------------------------------


@lru_cache(maxsize=4096)
def _longest_pmf(length, makes):
    misses = length - makes
    gaps = misses + 1
    total = math.comb(length, makes)
    at_most = []
    for r in range(makes + 1):
        # ways to spread `makes` over `gaps` gaps, each holding at most r
        count = 0
        for j in range(0, min(gaps, makes // (r + 1)) + 1):
            term = math.comb(gaps, j) * math.comb(makes - j * (r + 1) + gaps - 1, gaps - 1)
            count += -term if j % 2 else term
        at_most.append(count)
    counts = np.diff(np.array([0] + at_most, dtype=object))
    pmf = np.array([c / total for c in counts], dtype=float)
    pmf.setflags(write=False)
    return pmf


def _longest_run_distribution_iv(length, makes):
    length = _check_integer("length", length, minimum=1)
    makes = _check_integer("makes", makes, minimum=0)
    if makes > length:
        raise ValueError(f"`makes` must be from 0 to `length` = {length} (got {makes})")
    return length, makes


def longest_run_distribution(length, makes):
    r"""Exact distribution of the longest run of makes, given attempts and makes.

    Parameters
    ----------
    length : int
        Attempts in the session (>= 1).
    makes : int
        Makes among them (0 to ``length``).

    Returns
    -------
    ndarray of float, shape (makes + 1,)
        ``pmf[r]`` = P(longest run of makes = r), every arrangement equally likely.

    Notes
    -----
    The :math:`L - m` misses leave :math:`g = L - m + 1` gaps; an arrangement
    is a way of spreading the :math:`m` makes over the gaps, and its longest run
    is the fullest gap. The number of spreads with every gap at most :math:`r` is

    .. math::

        N_r = \sum_{j \ge 0} (-1)^j \binom{g}{j} \binom{m - j(r + 1) + g - 1}{g - 1},

    computed in exact integer arithmetic;
    :math:`P(\text{longest} = r) = (N_r - N_{r-1}) / \binom{L}{m}`.

    References
    ----------
    .. [1] Feller, W. (1968). An Introduction to Probability Theory and Its
       Applications, Vol. 1, 3rd ed., ch. XIII (recurrent events, success
       runs). Wiley.
    .. [2] Gilovich, T., Vallone, R. & Tversky, A. (1985). The hot hand in
       basketball: On the misperception of random sequences. Cognitive
       Psychology 17(3), 295-314.

    Examples
    --------
    >>> from streakwise.analysis.runs import longest_run_distribution
    >>> longest_run_distribution(4, 2).round(6).tolist()  # 6 arrangements
    [0.0, 0.5, 0.5]
    """
    length, makes = _longest_run_distribution_iv(length, makes)
    return _longest_pmf(length, makes).copy()


# ---------------------------------------------------------------------------
# Serial correlation
# ---------------------------------------------------------------------------


def _serial_correlation_iv(x, offsets, max_lag, alternative):
    made, offsets = _sequence_iv(x, offsets)
    max_lag = _check_integer("max_lag", max_lag, minimum=1)
    alternative = _check_choice("alternative", alternative, ALTERNATIVES)
    return made, offsets, max_lag, alternative


def serial_correlation(x, offsets=None, *, max_lag=1, alternative="hot"):
    r"""Autocorrelations pooled within sessions, with the naive normal test.

    Parameters
    ----------
    x : array_like of 0/1 or bool, shape (n_attempts,), or PlayerSequences
    offsets : array_like of int, optional
        Session starts followed by ``n_attempts`` (default: one session).
    max_lag : int, optional
        Lags 1..max_lag (default 1).
    alternative : {'hot', 'cold', 'two-sided'}, optional
        Hot = positive correlation.

    Returns
    -------
    SerialCorrelationResult

    Notes
    -----
    With every session centred on its own make rate :math:`\bar x_s`,

    .. math::

        r_\ell = \frac{\sum_s \sum_{t=1}^{L_s - \ell} (x_{s,t} - \bar x_s)(x_{s,t+\ell} - \bar x_s)}
                      {\sum_s \sum_{t=1}^{L_s} (x_{s,t} - \bar x_s)^2},
        \qquad z_\ell = r_\ell \sqrt{N_\ell},

    :math:`N_\ell` the number of within-session pairs. This is the classic
    serial-correlation check [1]_ and it is naive on purpose: in short sessions
    :math:`r_\ell` is biased toward :math:`-1/L` even without any dependence, so
    it understates streakiness. Compare with the ``lag1`` row of
    :func:`~streakwise.analysis.permutation.permutation_test`, whose null mean
    carries that bias.

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
    >>> from streakwise.analysis.runs import serial_correlation
    >>> rng = np.random.default_rng(85)
    >>> x = (rng.random(400) < 0.5).astype(int)
    >>> res = serial_correlation(x, np.arange(0, 401, 20), max_lag=2)
    >>> res.lags.tolist(), res.pairs.tolist()
    ([1, 2], [380, 360])
    """
    made, offsets, max_lag, alternative = _serial_correlation_iv(x, offsets, max_lag, alternative)
    lengths = np.diff(offsets)
    x = made.astype(float)
    session = np.repeat(np.arange(len(lengths)), lengths)
    means = np.add.reduceat(x, offsets[:-1], axis=-1) / lengths if x.shape[-1] else x
    centred = x - means[..., session]
    denominator = (centred**2).sum(axis=-1)
    lags = np.arange(1, max_lag + 1)
    correlation = np.full(x.shape[:-1] + (max_lag,), np.nan)
    pairs = np.zeros(max_lag, dtype=np.int64)
    for i, lag in enumerate(lags):
        if lag >= x.shape[-1]:
            continue
        same = session[lag:] == session[:-lag]
        numerator = (centred[..., :-lag] * centred[..., lag:] * same).sum(axis=-1)
        correlation[..., i] = _ratio(numerator, denominator)
        pairs[i] = int(same.sum())
    z = correlation * np.sqrt(pairs)
    p_hot = special.ndtr(-z)
    p_cold = special.ndtr(z)
    if alternative == "hot":
        p = p_hot
    elif alternative == "cold":
        p = p_cold
    else:
        p = np.minimum(1.0, 2.0 * np.minimum(p_hot, p_cold))
    return SerialCorrelationResult(lags=lags, correlation=correlation, pairs=pairs, z=z,
                                   p_value=p, alternative=alternative)


@lru_cache(maxsize=4096)
def _game_longest_run_cdf(length: int, makes: int, top: int) -> tuple[float, ...]:
    """P(longest run of makes <= r), r = 0..top, for one game's arrangements."""
    cdf = np.cumsum(longest_run_distribution(length, makes))
    out = np.ones(top + 1)
    out[: min(top + 1, cdf.size)] = cdf[: top + 1]
    return tuple(np.minimum(out, 1.0))


def season_longest_run_distribution(lengths, makes):
    r"""Distribution of the longest run of makes in any one game, under within-game shuffles.

    Parameters
    ----------
    lengths, makes : array_like of int
        Attempts and makes of each game (session).

    Returns
    -------
    ndarray
        ``pmf[r]`` = P(the longest run of makes in any one game is r),
        r = 0..max(makes).

    Notes
    -----
    Each game's makes are spread over its attempts, every arrangement equally
    likely, independently across games (the permutation test's null). The
    season's longest run is at most r when every game's is, so

    .. math:: P(\max_g R_g \le r) = \prod_g P(R_g \le r),

    each factor exact (:func:`longest_run_distribution`).

    Examples
    --------
    >>> from streakwise.analysis.runs import season_longest_run_distribution
    >>> season_longest_run_distribution([3, 2], [1, 2]).tolist()
    [0.0, 0.0, 1.0]
    """
    lengths = np.asarray(lengths, dtype=np.int64)
    makes = np.asarray(makes, dtype=np.int64)
    if lengths.shape != makes.shape or lengths.ndim != 1:
        raise ValueError("`lengths` and `makes` must be one-dimensional and of the same length "
                         f"(got shapes {lengths.shape} and {makes.shape})")
    if np.any(makes < 0) or np.any(makes > lengths):
        raise ValueError("every game needs 0 <= makes <= attempts")
    top = int(makes.max(initial=0))
    cdf = np.ones(top + 1)
    for length, count in zip(lengths.tolist(), makes.tolist()):
        cdf *= np.asarray(_game_longest_run_cdf(int(length), int(count), top))
    return np.clip(np.diff(np.r_[0.0, cdf]), 0.0, 1.0)
