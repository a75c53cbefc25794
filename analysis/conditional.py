"""Conditional Bernoulli sampling: redraw a game's makes given how many there were.

When attempts differ in difficulty they are not exchangeable, so shuffling a
game's makes is no longer the "no hot hand" null. The null used instead keeps
each attempt's own make probability ``p_i`` (from a difficulty model) and
draws the outcomes as independent Bernoulli(``p_i``) *conditional on the
game's observed number of makes*. Conditioning on the makes keeps the player's
form in that game, whatever it was: a shift of every log-odds of a game by the
same amount leaves the conditional distribution unchanged. With equal ``p_i``
inside a game it is exactly the within-game permutation null.

Sampling is exact and sequential ("drafting"): a backward table of the tail
sums' distribution gives each attempt's conditional make probability given
the makes still to place. The table is built once per player, for all games at
once (games padded to one length), and the draws run one attempt position at
a time with every draw and every game in one array operation.

The module also derives each player's random stream from ``(seed, player)``
(:func:`player_generator`), so a player's result never depends on which other
players were analysed.
"""

from __future__ import annotations

import hashlib
import numbers

import numpy as np

from ._values import show_value as _show


__all__ = [
    "conditional_inclusion_probabilities",
    "player_generator",
    "sample_conditional_bernoulli",
]

_BATCH_CELLS = 1 << 22  # draws x padded attempts held at once by default


# ---------------------------------------------------------------------------
# Validation helpers (shared with the other difficulty modules)
# ---------------------------------------------------------------------------


def _check_count(name, value, *, minimum=0):
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, numbers.Integral) or value < minimum:
        raise ValueError(f"`{name}` must be an integer >= {minimum} (got {_show(value)})")
    return int(value)


def _check_offsets(offsets, n_attempts):
    """Offsets as int64 (length n_sessions + 1); None means one session."""
    if offsets is None:
        return np.array([0, n_attempts], dtype=np.int64)
    try:
        array = np.asarray(offsets)
    except (TypeError, ValueError):
        raise ValueError(f"`offsets` must be integers (got {_show(offsets)})") from None
    if array.ndim != 1 or array.size < 1 or not np.issubdtype(array.dtype, np.integer):
        raise ValueError(
            "`offsets` must be a 1-d array of integers: the start of every session and the "
            f"number of attempts at the end (got {_show(offsets)})"
        )
    array = array.astype(np.int64)
    if array[0] != 0 or array[-1] != n_attempts:
        raise ValueError(
            f"`offsets` must start at 0 and end at the number of attempts {n_attempts} "
            f"(got {int(array[0])} ... {int(array[-1])})"
        )
    if (np.diff(array) < 0).any():
        raise ValueError("`offsets` must not decrease")
    return array


def _check_probability_vector(name, value):
    try:
        array = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise ValueError(f"`{name}` must be numbers in [0, 1] (got {_show(value)})") from None
    if array.ndim != 1:
        raise ValueError(f"`{name}` must be 1-d, one value per attempt (got shape {array.shape})")
    bad = ~((array >= 0.0) & (array <= 1.0))
    if bad.any():
        raise ValueError(f"`{name}` must be in [0, 1] (got {_show(array[bad][0])})")
    return array


def _check_makes(makes, lengths):
    try:
        array = np.asarray(makes)
    except (TypeError, ValueError):
        raise ValueError(f"`makes` must be integers, one per session (got {_show(makes)})") from None
    if array.ndim == 0:
        array = array.reshape(1)
    if array.shape != lengths.shape or not (np.issubdtype(array.dtype, np.integer) or array.dtype == bool):
        raise ValueError(
            f"`makes` must hold one integer per session ({len(lengths)} sessions; got {_show(makes)})"
        )
    array = array.astype(np.int64)
    bad = (array < 0) | (array > lengths)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise ValueError(
            f"`makes` must be between 0 and the session's attempts (session {i}: "
            f"{int(array[i])} makes in {int(lengths[i])} attempts)"
        )
    return array


def _generator(rng):
    return rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)


# ---------------------------------------------------------------------------
# Random streams per player
# ---------------------------------------------------------------------------


def _player_generator_iv(seed, player, purpose):
    if isinstance(seed, (bool, np.bool_)) or not isinstance(seed, numbers.Integral) or seed < 0:
        raise ValueError(f"`seed` must be a non-negative integer (got {_show(seed)})")
    if player is not None and not isinstance(player, str):
        raise ValueError(f"`player` must be a string or None (got {_show(player)})")
    if not isinstance(purpose, str):
        raise ValueError(f"`purpose` must be a string (got {_show(purpose)})")
    return int(seed), player or "", purpose


def player_generator(seed, player, purpose=""):
    """A random generator derived from ``(seed, player, purpose)`` only.

    Parameters
    ----------
    seed : int
        Non-negative seed of the whole analysis.
    player : str or None
        Player id (None counts as the empty id).
    purpose : str, optional
        Names the use (``"conditional"``, ``"hot_state"``, ...), so two uses
        for the same player get independent streams.

    Returns
    -------
    numpy.random.Generator

    Notes
    -----
    The player id and the purpose enter through SHA-256 digests (stable
    across processes and Python versions, unlike ``hash``), which are mixed
    with the seed by ``numpy.random.SeedSequence``. A player's results
    therefore do not depend on which other players were analysed, in which
    order, or on how many processes ran them.

    Examples
    --------
    >>> from streakwise.analysis.conditional import player_generator
    >>> a = player_generator(7, "P001", "conditional").random(2)
    >>> b = player_generator(7, "P001", "conditional").random(2)
    >>> bool((a == b).all())
    True
    """
    seed, player, purpose = _player_generator_iv(seed, player, purpose)
    player_words = np.frombuffer(hashlib.sha256(player.encode("utf-8")).digest()[:16], dtype="<u4")
    purpose_words = np.frombuffer(hashlib.sha256(purpose.encode("utf-8")).digest()[:8], dtype="<u4")
    sequence = np.random.SeedSequence([seed, *player_words.tolist(), *purpose_words.tolist()])
    return np.random.Generator(np.random.PCG64(sequence))


def _resolve_rng(rng, player, purpose):
    """(generator, recorded seed) following the package's seed convention.

    An integer seed is combined with the player id; a Generator is used as
    given (seed None); None draws a fresh seed and records it.
    """
    if isinstance(rng, np.random.Generator):
        return rng, None
    if rng is None:
        rng = int(np.random.SeedSequence().entropy % (1 << 63))
    if isinstance(rng, (bool, np.bool_)) or not isinstance(rng, numbers.Integral) or rng < 0:
        raise ValueError(
            f"`rng` must be None, a non-negative integer seed or a numpy Generator (got {_show(rng)})"
        )
    return player_generator(int(rng), player, purpose), int(rng)


# ---------------------------------------------------------------------------
# Padded layout and the tail tables
# ---------------------------------------------------------------------------


def _padded(values, offsets, fill):
    """(n_sessions, max_length) array of per-attempt values and its mask."""
    lengths = np.diff(offsets)
    n_sessions = len(lengths)
    width = int(lengths.max()) if n_sessions else 0
    position = np.arange(width)
    mask = position[None, :] < lengths[:, None]
    padded = np.full((n_sessions, width), fill, dtype=np.asarray(values).dtype)
    padded[mask] = values
    return padded, mask


def _tail_table(p, max_makes):
    """Row-normalised distribution of the makes among attempts i.. of each session.

    ``table[s, i, k]`` is proportional (with a positive factor per ``(s, i)``)
    to P(attempts i, i+1, ... of session s hold exactly k makes) under
    independent Bernoulli(p); ``log_scale[s, i]`` is the log of that factor,
    so the unnormalised value is ``table * exp(log_scale)``.
    """
    n_sessions, width = p.shape
    table = np.zeros((n_sessions, width + 1, max_makes + 1))
    log_scale = np.zeros((n_sessions, width + 1))
    table[:, width, 0] = 1.0
    for i in range(width - 1, -1, -1):
        nxt = table[:, i + 1, :]
        row = (1.0 - p[:, i, None]) * nxt
        row[:, 1:] += p[:, i, None] * nxt[:, :-1]
        top = row.max(axis=1)
        top = np.where(top > 0, top, 1.0)
        table[:, i, :] = row / top[:, None]
        log_scale[:, i] = log_scale[:, i + 1] + np.log(top)
    return table, log_scale


def _head_table(p, max_makes):
    """Like :func:`_tail_table` for attempts before i: ``head[s, i, k]`` ~ P(first i hold k)."""
    n_sessions, width = p.shape
    table = np.zeros((n_sessions, width + 1, max_makes + 1))
    log_scale = np.zeros((n_sessions, width + 1))
    table[:, 0, 0] = 1.0
    for i in range(width):
        prev = table[:, i, :]
        row = (1.0 - p[:, i, None]) * prev
        row[:, 1:] += p[:, i, None] * prev[:, :-1]
        top = row.max(axis=1)
        top = np.where(top > 0, top, 1.0)
        table[:, i + 1, :] = row / top[:, None]
        log_scale[:, i + 1] = log_scale[:, i] + np.log(top)
    return table, log_scale


def _prepare(probability, makes, offsets):
    p = _check_probability_vector("probability", probability)
    offsets = _check_offsets(offsets, len(p))
    lengths = np.diff(offsets)
    makes = _check_makes(makes, lengths)
    return p, makes, offsets, lengths


def _feasible(table, makes):
    n_sessions = table.shape[0]
    if n_sessions == 0:
        return
    reachable = table[np.arange(n_sessions), 0, makes] > 0
    if not reachable.all():
        i = int(np.flatnonzero(~reachable)[0])
        raise ValueError(
            f"session {i}: {int(makes[i])} makes are impossible under the given probabilities "
            "(probabilities of exactly 0 or 1 rule it out)"
        )


# ---------------------------------------------------------------------------
# Public functions
# ---------------------------------------------------------------------------


def _sample_conditional_bernoulli_iv(probability, makes, offsets, n_draws, batch):
    p, makes, offsets, lengths = _prepare(probability, makes, offsets)
    n_draws = _check_count("n_draws", n_draws)
    if batch is not None:
        batch = _check_count("batch", batch, minimum=1)
    return p, makes, offsets, lengths, n_draws, batch


def sample_conditional_bernoulli(probability, makes, offsets=None, *, n_draws=1, rng=None, batch=None):
    r"""Draw outcomes from independent Bernoulli(p_i) given each session's number of makes.

    Parameters
    ----------
    probability : array_like of float, shape (n_attempts,)
        Make probability of every attempt, sessions concatenated, in [0, 1].
    makes : array_like of int, shape (n_sessions,)
        Number of makes to place in each session.
    offsets : array_like of int, optional
        Session starts plus the total (length ``n_sessions + 1``), as in
        :class:`~streakwise.analysis.sequences.PlayerSequences`. Default: one
        session.
    n_draws : int, optional
        Number of independent draws (default 1).
    rng : None, int or numpy.random.Generator, optional
        Source of randomness, passed to ``numpy.random.default_rng``.
    batch : int, optional
        Draws made at once (caps memory); default about four million padded
        attempts per batch.

    Returns
    -------
    ndarray of int8, shape (n_draws, n_attempts)
        1 for a make; every row has exactly ``makes[s]`` makes in session
        ``s``.

    Notes
    -----
    Let :math:`T_i(k) = P(X_i + \dots + X_L = k)` under independent
    :math:`X_j \sim \text{Bernoulli}(p_j)`; it satisfies
    :math:`T_i(k) = p_i T_{i+1}(k-1) + (1 - p_i) T_{i+1}(k)`. Given that
    :math:`r` makes remain to be placed among attempts :math:`i, \dots, L`,

    .. math:: P(X_i = 1 \mid \cdot) = \frac{p_i T_{i+1}(r - 1)}
              {p_i T_{i+1}(r - 1) + (1 - p_i) T_{i+1}(r)},

    so drawing attempt by attempt and lowering :math:`r` after each make gives
    an exact draw from the conditional distribution
    :math:`P(x \mid \sum x = m) \propto \prod_i w_i^{x_i}` with odds
    :math:`w_i = p_i / (1 - p_i)` (the conditional Bernoulli distribution).
    Only ratios within one row :math:`T_{i+1}` enter, so every row is rescaled
    to a maximum of 1 (no underflow in long sessions). A common shift of all
    log-odds in a session cancels: the game's form does not matter, only the
    attempts' relative difficulty does. Cost: :math:`O(L m)` per session for
    the table and :math:`O(L)` per draw.

    References
    ----------
    .. [1] Chen, X.-H., Dempster, A. P. & Liu, J. S. (1994). Weighted finite
       population sampling to maximize entropy. Biometrika 81(3), 457-469.
    .. [2] Chen, S. X. & Liu, J. S. (1997). Statistical applications of the
       Poisson-binomial and conditional Bernoulli distributions. Statistica
       Sinica 7, 875-892.

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.conditional import sample_conditional_bernoulli
    >>> p = np.array([0.2, 0.5, 0.8, 0.6, 0.4, 0.7])
    >>> x = sample_conditional_bernoulli(p, [2, 1], [0, 4, 6], n_draws=5000, rng=1)
    >>> x.shape, x[:, :4].sum(axis=1).tolist()[:3], x[:, 4:].sum(axis=1).tolist()[:3]
    ((5000, 6), [2, 2, 2], [1, 1, 1])
    >>> bool(x[:, 2].mean() > x[:, 0].mean())
    True
    """
    p, makes, offsets, lengths, n_draws, batch = _sample_conditional_bernoulli_iv(
        probability, makes, offsets, n_draws, batch
    )
    rng = _generator(rng)
    n_attempts = len(p)
    out = np.zeros((n_draws, n_attempts), dtype=np.int8)
    if n_draws == 0 or n_attempts == 0:
        return out
    sampler = _ConditionalSampler(p, makes, offsets)
    if batch is None:
        batch = max(1, _BATCH_CELLS // max(1, sampler.cells))
    for start in range(0, n_draws, batch):
        stop = min(n_draws, start + batch)
        out[start:stop] = sampler.draw(stop - start, rng)
    return out


class _ConditionalSampler:
    """The tail tables of one player's sessions, ready for many draws."""

    def __init__(self, p, makes, offsets):
        self.offsets = offsets
        self.makes = makes
        self.p_padded, self.mask = _padded(p, offsets, 0.0)
        max_makes = int(makes.max()) if len(makes) else 0
        self.table, _ = _tail_table(self.p_padded, max_makes)
        _feasible(self.table, makes)
        self.cells = self.p_padded.size
        self.n_attempts = len(p)

    def draw(self, n_draws, rng):
        n_sessions, width = self.p_padded.shape
        remaining = np.broadcast_to(self.makes, (n_draws, n_sessions)).copy()
        sessions = np.arange(n_sessions)[None, :]
        drawn = np.zeros((n_draws, n_sessions, width), dtype=np.int8)
        uniform = rng.random((n_draws, n_sessions, width))
        for i in range(width):
            nxt = self.table[:, i + 1, :]
            p = self.p_padded[None, :, i]
            take = p * np.where(remaining > 0, nxt[sessions, np.maximum(remaining - 1, 0)], 0.0)
            leave = (1.0 - p) * nxt[sessions, remaining]
            total = take + leave
            chance = np.divide(take, total, out=np.zeros_like(take), where=total > 0)
            made = uniform[:, :, i] < chance
            drawn[:, :, i] = made
            remaining -= made
        return drawn[:, self.mask]


def _conditional_inclusion_probabilities_iv(probability, makes, offsets):
    return _prepare(probability, makes, offsets)


def conditional_inclusion_probabilities(probability, makes, offsets=None):
    r"""Exact P(attempt i is a make | its session's number of makes), per attempt.

    Parameters
    ----------
    probability : array_like of float, shape (n_attempts,)
        Make probability of every attempt, sessions concatenated, in [0, 1].
    makes : array_like of int, shape (n_sessions,)
        Makes in each session.
    offsets : array_like of int, optional
        Session starts plus the total; default one session.

    Returns
    -------
    ndarray of float, shape (n_attempts,)
        :math:`\pi_i`; they add up to ``makes[s]`` within session ``s``.

    Notes
    -----
    .. math:: \pi_i = \frac{p_i \, P(S_{-i} = m - 1)}{P(S = m)},
              \qquad P(S_{-i} = j) = \sum_{a} H_i(a) \, T_{i+1}(j - a),

    with :math:`H_i` the distribution of the makes among the attempts before
    :math:`i` and :math:`T_{i+1}` among those after it (both built by the
    recursion in :func:`sample_conditional_bernoulli`, with log scale factors
    so long sessions do not underflow). These are the expected values of
    :func:`sample_conditional_bernoulli`'s draws.

    References
    ----------
    .. [1] Chen, X.-H., Dempster, A. P. & Liu, J. S. (1994). Weighted finite
       population sampling to maximize entropy. Biometrika 81(3), 457-469.

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.conditional import conditional_inclusion_probabilities
    >>> conditional_inclusion_probabilities([0.5, 0.5, 0.5], [1]).round(6).tolist()
    [0.333333, 0.333333, 0.333333]
    """
    p, makes, offsets, lengths = _conditional_inclusion_probabilities_iv(probability, makes, offsets)
    if len(p) == 0:
        return np.zeros(0)
    p_padded, mask = _padded(p, offsets, 0.0)
    max_makes = int(makes.max())
    tail, tail_scale = _tail_table(p_padded, max_makes)
    _feasible(tail, makes)
    head, head_scale = _head_table(p_padded, max_makes)
    n_sessions, width = p_padded.shape
    rows = np.arange(n_sessions)
    total = tail[rows, 0, makes]  # scaled by exp(tail_scale[:, 0])
    pi = np.zeros((n_sessions, width))
    k = np.arange(max_makes + 1)
    for i in range(width):
        # P(S_{-i} = m - 1) = sum_a head[i][a] * tail[i+1][m - 1 - a]
        need = makes[:, None] - 1 - k[None, :]
        valid = (need >= 0) & (need <= max_makes)
        tail_part = np.where(valid, tail[rows[:, None], i + 1, np.clip(need, 0, max_makes)], 0.0)
        others = (head[:, i, :] * tail_part).sum(axis=1)
        log_ratio = head_scale[:, i] + tail_scale[:, i + 1] - tail_scale[:, 0]
        with np.errstate(divide="ignore", invalid="ignore"):
            value = p_padded[:, i] * others * np.exp(log_ratio) / total
        pi[:, i] = np.where(makes > 0, value, 0.0)
    return np.clip(pi[mask], 0.0, 1.0)
