"""The within-session permutation engine: one null for every streak statistic.

Under "no hot hand" the attempts of a session are exchangeable: every
arrangement of a session's makes among its attempts is equally likely, whatever
the shooter's form that day. The engine keeps each session's length and number
of makes and reshuffles the makes inside the session, never across sessions.
Every statistic (D_k, the rates after k makes and after k misses, the number of
runs, the longest run of makes, the lag-1 correlation) is a function of a few
counts that add up over sessions, so one draw of those counts serves all of
them.

How a draw is made, fastest first:

1. sessions of at most 18 attempts: all ``2**L`` outcome patterns of a length
   ``L`` are counted once per process (bit operations on the patterns as
   integers), sorted by number of makes, so the ``C(L, m)`` arrangements of
   ``m`` makes are one contiguous block of a table. A permuted season is one
   random row index per session and a look-up of its counts;
2. sessions of 19 to 36 attempts: one uniform random rank among the session's
   ``C(L, m)`` arrangements is decoded into the makes of its first half and a
   pattern of each half (each half at most 18 attempts, so the patterns come
   from the same sorted lists); the counts come from bit operations on the
   assembled pattern;
3. longer sessions: blocks of sessions are shuffled with ``Generator.permuted``
   and counted by :func:`~streakwise.analysis.streaks.streak_counts`.

No Python loop runs over attempts or permutations: the loops are over batches
of permutations and over distinct (length, makes) pairs above 18 attempts.
"""

from __future__ import annotations

import hashlib
import itertools
import math
import numbers
import warnings
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from .results import ConditionalRates, StatisticTest, StreakTestResult
from .runs import _pick, runs_test
from .streaks import (
    _check_choice,
    _check_integer,
    _counts,
    _max_k_iv,
    _rates_from_counts,
    _ratio,
    _sequence_iv,
    _show,
)
from .sequences import PlayerSequences

__all__ = [
    "HOT_DIRECTION",
    "arrangement_count",
    "permutation_test",
    "player_seed_sequence",
]

ALTERNATIVES = ("hot", "cold", "two-sided")
METHODS = ("auto", "exact", "random")
EXACT_LIMIT = 20_000  # 'auto' enumerates every arrangement up to this many
EXACT_MAX = 200_000  # 'exact' refuses more than this many
TABLE_MAX_LENGTH = 18  # sessions up to this length are tabulated
MASK_MAX_LENGTH = 2 * TABLE_MAX_LENGTH  # up to this length: two tabulated halves
LONG_BLOCK = 1 << 20  # attempts per shuffled block of long sessions

#: "Hot" direction of every statistic: larger ("greater") or smaller ("less").
HOT_DIRECTION = {
    "difference": "greater",
    "after_makes": "greater",
    "after_misses": "less",
    "runs": "less",
    "longest_run": "greater",
    "lag1": "greater",
}


# ---------------------------------------------------------------------------
# Column layout of the per-arrangement counts
# ---------------------------------------------------------------------------


@dataclass(frozen=True)
class _Columns:
    """Where each count sits in a row of the arrangement tables."""

    max_k: int

    @property
    def makes_after_makes(self):
        return slice(0, self.max_k)

    @property
    def attempts_after_makes(self):
        return slice(self.max_k, 2 * self.max_k)

    @property
    def makes_after_misses(self):
        return slice(2 * self.max_k, 3 * self.max_k)

    @property
    def attempts_after_misses(self):
        return slice(3 * self.max_k, 4 * self.max_k)

    @property
    def runs(self):
        return 4 * self.max_k

    @property
    def ends(self):
        return 4 * self.max_k + 1

    @property
    def longest(self):
        return 4 * self.max_k + 2

    @property
    def width(self):
        return 4 * self.max_k + 3

    @property
    def padded(self):
        """Row width of the tables: a multiple of 8 bytes, so a look-up moves whole words."""
        return -(-self.width // 8) * 8


def _mask_counts(masks, length, max_k):
    """Counts of every outcome pattern given as integers (bit t = attempt t).

    ``masks`` is a uint64 array of any shape holding patterns of ``length``
    attempts (1 to 63); returns int8 counts with a last axis laid out as
    :class:`_Columns`.
    """
    cols = _Columns(max_k)
    one = np.uint64(1)
    valid = np.uint64((1 << length) - 1)
    x = masks & valid
    miss = ~x & valid
    following = x >> one  # bit t: attempt t + 1 was a make
    has_next = valid >> one  # bit t: attempt t + 1 exists
    out = np.empty(masks.shape + (cols.width,), dtype=np.int8)
    made_run = x  # bit t: attempts t-k+1..t are all makes
    miss_run = miss
    for k in range(1, max_k + 1):
        if k > 1:
            made_run = made_run & (x << np.uint64(k - 1))
            miss_run = miss_run & (miss << np.uint64(k - 1))
        out[..., cols.attempts_after_makes.start + k - 1] = np.bitwise_count(made_run & has_next)
        out[..., cols.makes_after_makes.start + k - 1] = np.bitwise_count(made_run & following)
        out[..., cols.attempts_after_misses.start + k - 1] = np.bitwise_count(miss_run & has_next)
        out[..., cols.makes_after_misses.start + k - 1] = np.bitwise_count(miss_run & following)
    out[..., cols.runs] = 1 + np.bitwise_count((x ^ following) & has_next)
    out[..., cols.ends] = (x & one) + ((x >> np.uint64(length - 1)) & one)
    longest = np.zeros(masks.shape, dtype=np.int8)
    run = x
    j = 1
    while True:
        nonzero = run != 0
        if not nonzero.any():
            break
        longest += nonzero
        run = run & (x << np.uint64(j))
        j += 1
    out[..., cols.longest] = longest
    return out


@dataclass(frozen=True, eq=False)
class _Patterns:
    """All outcome patterns of 1..18 attempts, sorted by makes within a length."""

    masks: np.ndarray  # uint64, lengths concatenated
    base: np.ndarray  # (19,) first row of each length
    starts: np.ndarray  # (19, 20) first row of each number of makes, within its length
    combinations: np.ndarray  # (19, 19) C(L, m)


@lru_cache(maxsize=1)
def _patterns():
    top = TABLE_MAX_LENGTH
    masks, base = [], np.zeros(top + 1, dtype=np.int64)
    starts = np.zeros((top + 1, top + 2), dtype=np.int64)
    combinations = np.zeros((top + 1, top + 1), dtype=np.int64)
    row = 0
    for length in range(1, top + 1):
        patterns = np.arange(2**length, dtype=np.uint64)
        made = np.bitwise_count(patterns)
        order = np.argsort(made, kind="stable")
        masks.append(patterns[order])
        base[length] = row
        per = np.bincount(made, minlength=length + 1)
        starts[length, 1 : length + 2] = np.cumsum(per)
        combinations[length, : length + 1] = per
        row += 2**length
    result = _Patterns(np.concatenate(masks), base, starts, combinations)
    for array in (result.masks, result.base, result.starts, result.combinations):
        array.setflags(write=False)
    return result


@lru_cache(maxsize=8)
def _table(max_k):
    """Counts of every pattern of :func:`_patterns`, rows aligned (int8, read-only).

    Rows are padded with zeros to :attr:`_Columns.padded` bytes.
    """
    patterns = _patterns()
    cols = _Columns(max_k)
    table = np.zeros((patterns.masks.size, cols.padded), dtype=np.int8)
    for length in range(1, TABLE_MAX_LENGTH + 1):
        start = patterns.base[length]
        stop = start + 2**length
        table[start:stop, : cols.width] = _mask_counts(patterns.masks[start:stop], length, max_k)
    table.setflags(write=False)
    return table


def _arrangements(length, makes):
    """Every arrangement of ``makes`` in ``length`` attempts, as 0/1 rows (int8)."""
    count = math.comb(length, makes)
    rows = np.zeros((count, length), dtype=np.int8)
    if makes and count:
        positions = np.array(list(itertools.combinations(range(length), makes)), dtype=np.int64)
        rows[np.arange(count)[:, None], positions] = 1
    return rows


# ---------------------------------------------------------------------------
# Seeds
# ---------------------------------------------------------------------------


def _player_seed_sequence_iv(seed, player):
    if isinstance(seed, (bool, np.bool_)) or not isinstance(seed, numbers.Integral) or seed < 0:
        raise ValueError(f"`seed` must be a non-negative integer (got {_show(seed)})")
    if player is not None and not isinstance(player, str):
        raise ValueError(f"`player` must be a string or None (got {_show(player)})")
    return int(seed), player or ""


def player_seed_sequence(seed, player):
    """The random stream of one player: derived from ``(seed, player)`` only.

    Parameters
    ----------
    seed : int
        Non-negative seed of the whole analysis.
    player : str or None
        Player id (None is treated as the empty id).

    Returns
    -------
    numpy.random.SeedSequence

    Notes
    -----
    The player id enters through SHA-256 (four 32-bit words of the digest), a
    stable hash, so a player's results do not depend on which other players
    were analysed, in which order, or on how many processes ran them.

    Examples
    --------
    >>> from streakwise.analysis.permutation import player_seed_sequence
    >>> a = player_seed_sequence(7, "p01").generate_state(2)
    >>> b = player_seed_sequence(7, "p01").generate_state(2)
    >>> bool((a == b).all())
    True
    """
    seed, player = _player_seed_sequence_iv(seed, player)
    digest = hashlib.sha256(player.encode("utf-8")).digest()
    words = np.frombuffer(digest[:16], dtype="<u4").tolist()
    return np.random.SeedSequence([seed, *words])


def _streams(rng, player):
    """(seed, permutation generator, bootstrap generator) for one player."""
    if isinstance(rng, np.random.Generator):
        permutation_rng, bootstrap_rng = rng.spawn(2)
        return None, permutation_rng, bootstrap_rng
    seed = np.random.SeedSequence().entropy if rng is None else int(rng)
    permutation_ss, bootstrap_ss = player_seed_sequence(seed, player).spawn(2)
    return seed, np.random.Generator(np.random.PCG64(permutation_ss)), np.random.Generator(
        np.random.PCG64(bootstrap_ss))


# ---------------------------------------------------------------------------
# The plan of a player's season
# ---------------------------------------------------------------------------


def _arrangement_count_iv(lengths, makes):
    lengths = np.atleast_1d(np.asarray(lengths))
    makes = np.atleast_1d(np.asarray(makes))
    if lengths.shape != makes.shape or not (
        np.issubdtype(lengths.dtype, np.integer) and np.issubdtype(makes.dtype, np.integer)
    ):
        raise ValueError("`lengths` and `makes` must be integer arrays of the same length")
    if ((makes < 0) | (makes > lengths)).any():
        raise ValueError("`makes` must be from 0 to the session length in every session")
    return lengths, makes


def arrangement_count(lengths, makes):
    """Number of within-session arrangements: the product of ``C(L_s, m_s)``.

    Parameters
    ----------
    lengths, makes : array_like of int
        Attempts and makes of every session.

    Returns
    -------
    int
        Exact (Python integer).

    Examples
    --------
    >>> from streakwise.analysis.permutation import arrangement_count
    >>> arrangement_count([4, 5], [2, 1])
    30
    """
    lengths, makes = _arrangement_count_iv(lengths, makes)
    return math.prod(math.comb(int(n), int(m)) for n, m in zip(lengths, makes))


@dataclass(frozen=True, eq=False)
class _Halves:
    """How to decode a uniform rank among the C(L, m) arrangements into two halves.

    Arrangements are ordered by the makes j in the first half (``first``
    attempts), then by the first half's pattern, then by the second half's.
    ``cumulative[j]`` arrangements come before block j.
    """

    length: int
    makes: int
    first: int
    total: int
    cumulative: np.ndarray  # (first + 2,)
    second_count: np.ndarray  # (first + 1,) patterns of the second half per j (>= 1)
    first_rows: np.ndarray  # (first + 1,) row of the first half's first pattern per j
    second_rows: np.ndarray  # (first + 1,) same for the second half


@lru_cache(maxsize=1024)
def _halves(length, makes):
    patterns = _patterns()
    first = (length + 1) // 2
    second = length - first
    j = np.arange(first + 1)
    rest = makes - j
    possible = (rest >= 0) & (rest <= second)
    rest = np.clip(rest, 0, second)
    second_count = np.array([math.comb(second, int(r)) for r in rest], dtype=np.int64)
    block = np.array([math.comb(first, int(i)) for i in j], dtype=np.int64) * second_count * possible
    cumulative = np.concatenate([[0], np.cumsum(block)]).astype(np.int64)
    return _Halves(
        length=length, makes=makes, first=first, total=int(cumulative[-1]), cumulative=cumulative,
        second_count=second_count,
        first_rows=patterns.base[first] + patterns.starts[first, j],
        second_rows=patterns.base[second] + patterns.starts[second, rest])


def _draw_halves(halves, shape, rng):
    """Uniformly random arrangements (64-bit patterns) of one (length, makes) pair.

    One exact uniform rank per arrangement, decoded into the makes of the
    first half and the two halves' patterns (each at most 18 attempts).
    """
    masks = _patterns().masks
    rank = rng.integers(0, halves.total, size=shape)
    j = np.searchsorted(halves.cumulative, rank, side="right") - 1
    offset = rank - halves.cumulative[j]
    count = halves.second_count[j]
    first = offset // count
    second = offset - first * count
    return masks[halves.first_rows[j] + first] | (
        masks[halves.second_rows[j] + second] << np.uint64(halves.first))


class _Plan:
    """A player's sessions sorted into the three drawing methods."""

    def __init__(self, made, offsets, max_k):
        self.max_k = max_k
        self.cols = _Columns(max_k)
        lengths = np.diff(offsets)
        makes = np.add.reduceat(made.astype(np.int64), offsets[:-1])
        self.lengths, self.makes = lengths, makes
        rate = makes / lengths
        self.lag1_denominator = float(np.sum(makes * (lengths - makes) / lengths))
        # lag-1 numerator of a session: pairs made + rate * ends + constant
        constant = (lengths - 1) * rate**2 - 2 * makes * rate
        varies = (makes > 0) & (makes < lengths)
        fixed = ~varies
        # sessions with one arrangement add constants
        fixed_counts = _counts(made, offsets, max_k, per_session=True)
        self.fixed_sums = _as_columns(fixed_counts, self.cols, fixed)
        self.fixed_longest = int(fixed_counts.longest_run[fixed].max(initial=0))
        self.fixed_lag1 = float(fixed_counts.lag1_numerator[fixed].sum())

        short = varies & (lengths <= TABLE_MAX_LENGTH)
        patterns = _patterns()
        self.short_rows = patterns.base[lengths[short]] + patterns.starts[lengths[short], makes[short]]
        self.short_count = patterns.combinations[lengths[short], makes[short]]
        self.short_rate = rate[short]
        self.short_constant = float(constant[short].sum())

        self.medium = []  # (halves, sessions of that length and makes)
        medium = varies & (lengths > TABLE_MAX_LENGTH) & (lengths <= MASK_MAX_LENGTH)
        pairs = sorted(set(zip(lengths[medium].tolist(), makes[medium].tolist())))
        for length, made_here in pairs:
            chosen = int((medium & (lengths == length) & (makes == made_here)).sum())
            self.medium.append((_halves(length, made_here), chosen))
        self.medium_constant = float(constant[medium].sum())

        self.long = []  # (length, outcomes (c, length))
        long = varies & (lengths > MASK_MAX_LENGTH)
        for length in np.unique(lengths[long]).tolist():
            chosen = np.flatnonzero(long & (lengths == length))
            block = np.stack([made[offsets[i] : offsets[i] + length] for i in chosen])
            self.long.append((length, block))

    # -- random draws ------------------------------------------------------

    def draw(self, size, rng):
        """Summed counts of ``size`` random within-session permutations.

        Arrays are laid out session-major, ``(sessions, size, ...)``, so the sum
        over sessions adds contiguous blocks.
        """
        cols = self.cols
        sums = np.broadcast_to(self.fixed_sums, (size, cols.width - 1)).astype(np.int64)
        longest = np.full(size, self.fixed_longest, dtype=np.int64)
        lag1 = np.full(size, self.fixed_lag1 + self.short_constant + self.medium_constant)
        if self.short_rows.size:
            index = self.short_rows[:, None] + rng.integers(
                0, self.short_count[:, None], size=(self.short_rows.size, size))
            rows = np.take(_table(self.max_k), index, axis=0)
            self._add_rows(rows, self.short_rate, sums, longest, lag1)
        for halves, sessions in self.medium:
            masks = _draw_halves(halves, (sessions, size), rng)
            rate = np.full(sessions, halves.makes / halves.length)
            self._add_rows(_mask_counts(masks, halves.length, self.max_k), rate, sums, longest, lag1)
        for length, block in self.long:
            chunk = max(1, LONG_BLOCK // block.size)
            offsets = np.arange(0, block.size + 1, length)
            for start in range(0, size, chunk):
                stop = min(size, start + chunk)
                shuffled = rng.permuted(np.broadcast_to(block, (stop - start, *block.shape)), axis=-1)
                counts = _counts(shuffled.reshape(stop - start, block.size), offsets, self.max_k, False)
                sums[start:stop] += _as_columns(counts, cols)
                np.maximum(longest[start:stop], counts.longest_run, out=longest[start:stop])
                lag1[start:stop] += counts.lag1_numerator
        return sums, longest, lag1

    def _add_rows(self, rows, rate, sums, longest, lag1):
        """Add session-major rows ``(sessions, size, width)`` of counts into the totals."""
        cols = self.cols
        sums += rows.sum(axis=0, dtype=np.int32)[:, : cols.width - 1]
        np.maximum(longest, rows[..., cols.longest].max(axis=0), out=longest)
        # lag-1 numerator: pairs made + rate * ends (the constants were added up front)
        # (einsum rather than BLAS: small products, no thread pools to contend for)
        lag1 += rows[..., cols.makes_after_makes.start].sum(axis=0) + np.einsum(
            "s,sb->b", rate, rows[..., cols.ends])

    # -- exact enumeration -------------------------------------------------

    def every_arrangement(self):
        """Summed counts of every within-session arrangement (mixed-radix order)."""
        cols = self.cols
        lengths, makes = self.lengths, self.makes
        total = arrangement_count(lengths, makes)
        sums = np.broadcast_to(self.fixed_sums, (total, cols.width - 1)).astype(np.int64)
        longest = np.full(total, self.fixed_longest, dtype=np.int64)
        lag1 = np.full(total, self.fixed_lag1)
        index = np.arange(total, dtype=np.int64)
        stride = 1
        for length, made_here in zip(lengths.tolist(), makes.tolist()):
            count = math.comb(length, made_here)
            if count == 1:
                continue
            rows = _arrangements(length, made_here)
            counts = _counts(rows, np.array([0, length]), self.max_k, per_session=False)
            digit = (index // stride) % count
            sums += _as_columns(counts, cols)[digit]
            np.maximum(longest, counts.longest_run[digit], out=longest)
            lag1 += counts.lag1_numerator[digit]
            stride *= count
        return sums, longest, lag1


def _as_columns(counts, cols, chosen=None):
    """Summed count columns (all but the longest run) from a StreakCounts.

    The ``ends`` column (first + last outcome, used only inside the tables'
    lag-1 sums) is left at 0; ``chosen`` sums the chosen sessions' rows.
    """
    parts = [counts.makes_after_makes, counts.attempts_after_makes, counts.makes_after_misses,
             counts.attempts_after_misses, counts.runs[..., None], np.zeros_like(counts.runs)[..., None]]
    matrix = np.concatenate(parts, axis=-1).astype(np.int64)
    if chosen is not None:
        matrix = matrix[chosen].sum(axis=0)
    return matrix


# ---------------------------------------------------------------------------
# Statistics from summed counts
# ---------------------------------------------------------------------------


def _statistic_keys(max_k):
    keys = []
    for k in range(1, max_k + 1):
        keys += [("difference", k), ("after_makes", k), ("after_misses", k)]
    return keys + [("runs", None), ("longest_run", None), ("lag1", None)]


def _statistics(sums, longest, lag1_numerator, lag1_denominator, cols):
    """Every statistic (last axis, in :func:`_statistic_keys` order) from the counts."""
    k = cols.max_k
    after_makes = _ratio(sums[..., cols.makes_after_makes], sums[..., cols.attempts_after_makes])
    after_misses = _ratio(sums[..., cols.makes_after_misses], sums[..., cols.attempts_after_misses])
    out = np.empty(sums.shape[:-1] + (3 * k + 3,))
    out[..., 0 : 3 * k : 3] = after_makes - after_misses
    out[..., 1 : 3 * k : 3] = after_makes
    out[..., 2 : 3 * k : 3] = after_misses
    out[..., 3 * k] = sums[..., cols.runs]
    out[..., 3 * k + 1] = longest
    out[..., 3 * k + 2] = _ratio(lag1_numerator, lag1_denominator)
    return out


def _undefined_reason(statistic, k):
    makes = f"{k} make" if k == 1 else f"{k} makes"
    misses = f"{k} miss" if k == 1 else f"{k} misses"
    if statistic == "after_makes":
        return f"no attempt followed {makes} in a session"
    if statistic == "after_misses":
        return f"no attempt followed {misses} in a session"
    if statistic == "difference":
        return f"no attempt followed {makes}, or none followed {misses}, in a session"
    if statistic == "lag1":
        return "every session is all makes or all misses"
    return "undefined"


def _quantiles(values, probabilities):
    """Quantiles with linear interpolation (numpy's default method), by partitioning."""
    n = values.size
    positions = np.asarray(probabilities) * (n - 1)
    below = np.floor(positions).astype(np.int64)
    above = np.minimum(below + 1, n - 1)
    ordered = np.partition(values, np.unique(np.concatenate([below, above])))
    return ordered[below] + (positions - below) * (ordered[above] - ordered[below])


def _tail_counts(null, observed):
    """How many null draws are >= and <= the observed value (with a float tolerance)."""
    gamma = 1e-12 + 100 * np.finfo(float).eps * abs(observed)
    return int(np.count_nonzero(null >= observed - gamma)), int(np.count_nonzero(null <= observed + gamma))


def _p_values(null, observed, hot, exact):
    """(p_hot, p_cold, se_hot, se_cold) from the defined null draws."""
    m = null.size
    greater, less = _tail_counts(null, observed)
    if exact:
        p_greater, p_less = greater / m, less / m
        se_greater = se_less = 0.0
    else:
        p_greater, p_less = (greater + 1) / (m + 1), (less + 1) / (m + 1)
        se_greater = math.sqrt(p_greater * (1 - p_greater) / m)
        se_less = math.sqrt(p_less * (1 - p_less) / m)
    if hot == "greater":
        return p_greater, p_less, se_greater, se_less
    return p_less, p_greater, se_less, se_greater


def _summarise(statistic, k, observed, null, alternative, exact, interval, keep_null,
               with_intervals=False):
    """The StatisticTest of one statistic from its null draws (NaN = undefined)."""
    hot = HOT_DIRECTION[statistic]
    defined = null[~np.isnan(null)]
    share = defined.size / null.size if null.size else 0.0
    reason = None
    null_mean = band = p_value = se = p_hot = p_cold = None
    if defined.size:
        null_mean = float(defined.mean())
        low, high = _quantiles(defined, (0.025, 0.975))
        band = (float(low), float(high))
    observed_value = None if math.isnan(observed) else float(observed)
    if observed_value is None:
        reason = f"observed value undefined: {_undefined_reason(statistic, k)}"
        interval = None
    elif not defined.size:
        reason = f"undefined on every null draw: {_undefined_reason(statistic, k)}"
        interval = None
    else:
        p_hot, p_cold, se_hot, se_cold = _p_values(defined, observed_value, hot, exact)
        p_value = _pick(alternative, p_hot, p_cold)
        if alternative == "hot":
            se = se_hot
        elif alternative == "cold":
            se = se_cold
        else:
            se = 0.0 if p_value >= 1.0 else 2.0 * (se_hot if p_hot <= p_cold else se_cold)
    corrected = (observed_value - null_mean
                 if observed_value is not None and null_mean is not None else None)
    if reason is None and with_intervals and statistic == "longest_run":
        reason = NO_INTERVAL_FOR_MAXIMUM
    return StatisticTest(
        statistic=statistic, k=k, hot_direction=hot, observed=observed_value, null_mean=null_mean,
        corrected=corrected, null_band=band, interval=interval if corrected is not None else None,
        share_defined=float(share), p_value=p_value, p_value_se=se, p_hot=p_hot, p_cold=p_cold,
        reason=reason, null_distribution=defined.copy() if keep_null else None,
    )


# ---------------------------------------------------------------------------
# Confidence intervals by resampling games
# ---------------------------------------------------------------------------


def _falling_ratio(top, bottom, k):
    """prod_{i<k} (top - i) / (bottom - i), 0 where top < k (bottom >= k assumed)."""
    out = np.ones(np.shape(top))
    for i in range(k):
        with np.errstate(divide="ignore", invalid="ignore"):
            out = out * np.where(bottom - i > 0, np.clip(top - i, 0, None) / (bottom - i), 0.0)
    return out


def _expected_columns(lengths, makes, cols):
    """Exact permutation means of every summed count, per session (float)."""
    length = lengths.astype(float)
    made = makes.astype(float)
    missed = length - made
    out = np.zeros((lengths.size, cols.width - 1))
    for k in range(1, cols.max_k + 1):
        windows = np.clip(length - k, 0, None)
        out[:, cols.attempts_after_makes.start + k - 1] = windows * _falling_ratio(made, length, k)
        out[:, cols.makes_after_makes.start + k - 1] = windows * _falling_ratio(made, length, k + 1)
        out[:, cols.attempts_after_misses.start + k - 1] = windows * _falling_ratio(missed, length, k)
        # k misses then a make: (missed)_k * made / (length)_(k+1)
        with np.errstate(divide="ignore", invalid="ignore"):
            last = np.where(length - k > 0, made / (length - k), 0.0)
        out[:, cols.makes_after_misses.start + k - 1] = windows * _falling_ratio(missed, length, k) * last
    out[:, cols.runs] = 1 + 2 * made * missed / length
    return out


NO_INTERVAL_FOR_MAXIMUM = (
    "no interval for the longest run: resampling games does not give valid intervals for a maximum")


def _bootstrap_intervals(made, offsets, plan, observed_stats, null_means, confidence_level,
                         resamples, rng):
    """Percentile intervals of the corrected effects, resampling whole sessions.

    Each resample draws the sessions with replacement; its corrected effect is
    the resampled statistic minus that resample's null mean, taken from the
    sessions' exact permutation moments (exact for the runs and the lag-1
    correlation; first order, a ratio of expected sums, for the rates). The
    percentile interval of those effects is shifted by the gap between the
    engine's corrected effect and the same moment-based effect on the observed
    season. The longest run gets no interval (the bootstrap of a maximum is
    not valid).
    """
    cols = plan.cols
    n_stats = len(observed_stats)
    if resamples == 0:
        return [None] * n_stats
    lengths, makes = plan.lengths, plan.makes
    n_sessions = lengths.size
    per = _counts(made, offsets, cols.max_k, per_session=True)
    observed = np.concatenate([_as_columns(per, cols).astype(float),
                               per.lag1_numerator[:, None], per.lag1_denominator[:, None]], axis=1)
    rate = makes / lengths
    expected_lag1 = makes * (makes - 1) / lengths + rate * 2 * makes / lengths + (
        (lengths - 1) * rate**2 - 2 * makes * rate)
    expected = np.concatenate([_expected_columns(lengths, makes, cols), expected_lag1[:, None],
                               per.lag1_denominator[:, None]], axis=1)
    width = cols.width - 1

    def effects(weights):
        # einsum rather than BLAS matmul: small products, no thread pools to contend for
        sums = np.einsum("bs,sc->bc", weights, observed)
        means = np.einsum("bs,sc->bc", weights, expected)
        nothing = np.zeros(weights.shape[0])
        return (_statistics(sums[:, :width], nothing, sums[:, -2], sums[:, -1], cols)
                - _statistics(means[:, :width], nothing, means[:, -2], means[:, -1], cols))

    # how often each session is drawn in each resample (a multinomial count)
    drawn = rng.integers(0, n_sessions, size=(resamples, n_sessions))
    drawn += (np.arange(resamples) * n_sessions)[:, None]
    counts = np.bincount(drawn.ravel(), minlength=resamples * n_sessions).reshape(resamples, n_sessions)
    replicates = effects(counts.astype(float))
    reference = effects(np.ones((1, n_sessions)))[0]
    alpha = 1.0 - confidence_level
    longest = 3 * cols.max_k + 1
    intervals = []
    for j in range(n_stats):
        corrected = observed_stats[j] - null_means[j] if null_means[j] is not None else math.nan
        column = replicates[:, j]
        column = column[~np.isnan(column)]
        if j == longest or math.isnan(corrected) or math.isnan(reference[j]) or column.size < resamples / 2:
            intervals.append(None)
            continue
        low, high = _quantiles(column, (alpha / 2, 1 - alpha / 2)) + (corrected - reference[j])
        intervals.append((float(low), float(high)))
    return intervals


# ---------------------------------------------------------------------------
# The test
# ---------------------------------------------------------------------------


def _permutation_test_iv(x, offsets, player, max_k, permutations, alternative, method, batch, rng,
                         confidence_level, resamples, keep_null):
    if isinstance(x, PlayerSequences) and player is None:
        player = x.player
    made, offsets = _sequence_iv(x, offsets)
    if made.ndim != 1:
        raise ValueError(f"`x` must be one season (1-D) for a test (got shape {made.shape})")
    if made.size == 0:
        raise ValueError("`x` has no attempts: there is nothing to test")
    if player is not None and not isinstance(player, str):
        raise ValueError(f"`player` must be a string or None (got {_show(player)})")
    max_k = _max_k_iv(max_k)
    permutations = _check_integer("permutations", permutations, minimum=1)
    alternative = _check_choice("alternative", alternative, ALTERNATIVES)
    method = _check_choice("method", method, METHODS)
    batch = _check_integer("batch", batch, minimum=1)
    if not (rng is None or isinstance(rng, np.random.Generator) or (
            isinstance(rng, numbers.Integral) and not isinstance(rng, (bool, np.bool_)) and rng >= 0)):
        raise ValueError(
            f"`rng` must be None, a non-negative integer seed or a numpy Generator (got {_show(rng)})")
    if isinstance(confidence_level, (bool, np.bool_)) or not isinstance(confidence_level, numbers.Real) \
            or not 0.0 < float(confidence_level) < 1.0:
        raise ValueError(f"`confidence_level` must be a number strictly between 0 and 1 "
                         f"(got {_show(confidence_level)})")
    resamples = _check_integer("resamples", resamples, minimum=0)
    if not isinstance(keep_null, (bool, np.bool_)):
        raise ValueError(f"`keep_null` must be True or False (got {_show(keep_null)})")
    return (made, offsets, player, max_k, permutations, alternative, method, batch, rng,
            float(confidence_level), resamples, bool(keep_null))


def _run_test(made, offsets, player, max_k, permutations, alternative, method, batch, rng,
              confidence_level, resamples, keep_null):
    """The test, plus the null draws of every statistic (rows = draws, NaN = undefined)."""
    plan = _Plan(made, offsets, max_k)
    cols = plan.cols
    total = arrangement_count(plan.lengths, plan.makes)
    if method == "exact" and total > EXACT_MAX:
        raise ValueError(
            f"exact enumeration would need {total} arrangements (at most {EXACT_MAX}); "
            "use method='random' or 'auto'")
    exact = method == "exact" or (method == "auto" and total <= EXACT_LIMIT)
    if total == 1:
        warnings.warn("every session is all makes or all misses: the permutation null is a single "
                      "arrangement and every p-value is 1", RuntimeWarning, stacklevel=3)
    seed, permutation_rng, bootstrap_rng = _streams(rng, player)

    if exact:
        sums, longest, lag1 = plan.every_arrangement()
        null = _statistics(sums, longest, lag1, plan.lag1_denominator, cols)
    else:
        null = np.empty((permutations, 3 * max_k + 3))
        for start in range(0, permutations, batch):
            size = min(batch, permutations - start)
            sums, longest, lag1 = plan.draw(size, permutation_rng)
            null[start : start + size] = _statistics(sums, longest, lag1, plan.lag1_denominator, cols)

    counts = _counts(made, offsets, max_k, per_session=False)
    observed = _statistics(_as_columns(counts, cols), counts.longest_run, counts.lag1_numerator,
                           counts.lag1_denominator, cols)
    keys = _statistic_keys(max_k)
    means = []
    for j in range(len(keys)):
        column = null[:, j]
        column = column[~np.isnan(column)]
        means.append(float(column.mean()) if column.size else None)
    intervals = _bootstrap_intervals(made, offsets, plan, observed, means, confidence_level,
                                     resamples, bootstrap_rng)
    tests = tuple(
        _summarise(statistic, k, observed[j], null[:, j], alternative, exact, intervals[j], keep_null,
                   with_intervals=resamples > 0)
        for j, (statistic, k) in enumerate(keys)
    )
    rates: ConditionalRates = _rates_from_counts(counts, _counts(made, offsets, max_k, per_session=True))
    result = StreakTestResult(
        player=player, attempts=int(made.size), sessions=int(offsets.size - 1),
        makes=int(made.sum()), make_rate=float(made.mean()), max_k=max_k, alternative=alternative,
        method="exact" if exact else "random", permutations=int(null.shape[0]), seed=seed,
        batch=batch, confidence_level=confidence_level, resamples=resamples, rates=rates,
        tests=tests, runs_test=runs_test(made, offsets, alternative=alternative),
    )
    return result, null


def permutation_test(x, offsets=None, *, player=None, max_k=3, permutations=10_000,
                     alternative="hot", method="auto", batch=4096, rng=None,
                     confidence_level=0.95, resamples=2000, keep_null=True):
    r"""Within-session permutation test of every streak statistic for one player.

    Parameters
    ----------
    x : array_like of 0/1 or bool, shape (n_attempts,), or PlayerSequences
        One player's outcomes (1 make, 0 miss), sessions concatenated in season
        order.
    offsets : array_like of int, optional
        Session starts followed by ``n_attempts``. Default: the offsets of a
        :class:`PlayerSequences`, else one session.
    player : str, optional
        Player id; with an integer ``rng`` it selects the player's own random
        stream. Default: the id of a :class:`PlayerSequences`, else none.
    max_k : int, optional
        Streak lengths k = 1..max_k (1 to 8, default 3).
    permutations : int, optional
        Random permutations (default 10,000), when not enumerating exactly.
    alternative : {'hot', 'cold', 'two-sided'}, optional
        ``'hot'`` (default) tests each statistic in its hot direction (D_k,
        rate after k makes, longest run and lag-1 correlation higher; rate
        after k misses and number of runs lower), ``'cold'`` the other way,
        ``'two-sided'`` reports twice the smaller one-sided p-value, at most 1.
    method : {'auto', 'exact', 'random'}, optional
        ``'auto'`` (default) enumerates every arrangement when there are at most
        20,000 of them (in practice one short session), else draws random
        permutations. ``'exact'`` enumerates up to 200,000.
    batch : int, optional
        Permutations drawn per vectorised step (default 4096); memory is
        O(batch x sessions), plus bounded blocks for sessions over 64 attempts.
    rng : None, int or numpy.random.Generator, optional
        An integer is the seed of the analysis: the player's stream is derived
        from (seed, player id) by :func:`player_seed_sequence`. None draws a
        fresh seed (recorded in the result). A Generator is used as is (the
        result's seed is then None).
    confidence_level : float, optional
        Of the intervals for the corrected effects (default 0.95).
    resamples : int, optional
        Bootstrap resamples of games for those intervals (default 2000; 0 for
        none).
    keep_null : bool, optional
        Keep each statistic's null draws in the result (default True).

    Returns
    -------
    StreakTestResult
        Observed rates; for every statistic the observed value, null mean,
        corrected effect, null band, interval, share defined and p-values; the
        stratified Wald-Wolfowitz test.

    Notes
    -----
    The null keeps every session's attempts and makes and makes all
    :math:`\prod_s \binom{L_s}{m_s}` within-session arrangements equally
    likely, so game-to-game form cannot masquerade as streakiness.

    *p-values.* With :math:`t` observed and :math:`b` of the :math:`m` defined
    null draws at least as extreme (in the statistic's hot direction for
    ``'hot'``): exact enumeration gives :math:`p = b/m`; random permutations
    give :math:`p = (b + 1)/(m + 1)` [3]_, never zero, with Monte Carlo
    standard error :math:`\sqrt{p(1 - p)/m}`. A null draw on which a statistic
    is undefined (no attempt after k misses, say) is left out of that
    statistic's null; the share defined is reported. An undefined observed
    statistic has no p-value, and the result says why. Values within
    :math:`10^{-12}` (plus a relative :math:`100\epsilon`) count as ties.

    *Bias.* Rates after streaks are biased downward in finite sequences [2]_.
    The null mean is the mean of the permutation null itself, so for the pooled
    ratio of sums it is not the average of per-session expectations; the
    corrected effect is observed minus null mean. The null band is the 2.5% and
    97.5% quantiles of the null: where chance puts the statistic, not a
    confidence interval. The interval of a corrected effect resamples whole
    games (sessions) with replacement; each resample's null mean comes from
    the sessions' exact permutation moments, and the percentile interval is
    re-centred on the engine's corrected effect. The longest run gets no
    interval: the bootstrap is not valid for a maximum.

    *Speed.* Sessions up to 18 attempts are drawn as one random row of a table
    of all arrangements' counts; 19-36 attempts as two tabulated halves;
    longer ones by batched shuffles (module docstring).

    References
    ----------
    .. [1] Gilovich, T., Vallone, R. & Tversky, A. (1985). The hot hand in
       basketball: On the misperception of random sequences. Cognitive
       Psychology 17(3), 295-314.
    .. [2] Miller, J. B. & Sanjurjo, A. (2018). Surprised by the hot hand
       fallacy? A truth in the law of small numbers. Econometrica 86(6),
       2019-2047.
    .. [3] Phipson, B. & Smyth, G. K. (2010). Permutation p-values should never
       be zero: calculating exact p-values when permutations are randomly
       drawn. Statistical Applications in Genetics and Molecular Biology
       9(1), Article 39.
    .. [4] Wald, A. & Wolfowitz, J. (1940). On a test whether two samples are
       from the same population. Annals of Mathematical Statistics 11(2),
       147-162.

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.permutation import permutation_test
    >>> from streakwise.analysis.simulate import simulate_bernoulli
    >>> made = simulate_bernoulli(np.full(600, 0.45), rng=11).astype(int)
    >>> offsets = np.arange(0, 601, 15)  # 40 games of 15 attempts
    >>> res = permutation_test(made, offsets, player="p01", permutations=2000, rng=2024)
    >>> res.method, res.permutations, res.seed
    ('random', 2000, 2024)
    >>> d1 = res.test("difference", 1)
    >>> d1.null_mean < 0  # the finite-sample bias of D_1
    True
    >>> 0 < d1.p_value <= 1
    True
    """
    args = _permutation_test_iv(x, offsets, player, max_k, permutations, alternative, method, batch,
                                rng, confidence_level, resamples, keep_null)
    result, _ = _run_test(*args)
    return result
