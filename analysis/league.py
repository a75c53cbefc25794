"""League scans: every player's within-session test, q-values, a pooled league test.

A scan runs :func:`~streakwise.analysis.permutation.permutation_test` for every
player with enough attempts, each on the player's own random stream (derived
from the seed and the player id), so a player's result is the same whether the
scan ran serially or on a process pool, and whoever else was scanned. Then:

- Benjamini-Hochberg q-values of D_k across the scanned players, per k;
- a pooled league test per k: the mean over players of the corrected D_k, with
  its null from the same within-session permutations of every player, drawn
  jointly (draw j of the league null is the mean of every player's draw j).

Players run as tasks through :func:`~streakwise.analysis.executors.map_tasks`:
in this process, on a local process pool or on a Dask cluster, with the same
results. Each finished player can be handed to the caller (``on_player``) to
keep, and a later call given those (``completed``) runs only the others.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Callable, Mapping, Sequence
from concurrent.futures import Executor
from functools import partial

import numpy as np
from statsmodels.stats.multitest import multipletests

from .executors import ExecutorSpec, map_tasks
from .permutation import _p_values, _quantiles, _run_test, _statistic_keys
from .results import LeagueScanResult, LeagueTestResult, PlayerScanResult, StreakTestResult
from .runs import _pick
from .sequences import PlayerSequences
from .streaks import _check_choice, _check_integer, _max_k_iv, _show

__all__ = ["benjamini_hochberg", "league_scan"]

ALTERNATIVES = ("hot", "cold", "two-sided")

#: Smallest task, in attempts x (permutations + resamples): about 15 ms of work,
#: so that players with few attempts share a task and the per-task cost stays small.
TASK_WEIGHT = 5_000_000


def _benjamini_hochberg_iv(p_values):
    values = [None if p is None or (isinstance(p, float) and math.isnan(p)) else p for p in p_values]
    for p in values:
        if p is not None and (isinstance(p, (bool, np.bool_)) or not isinstance(p, numbers.Real)
                              or not 0.0 <= float(p) <= 1.0):
            raise ValueError(f"`p_values` must be numbers in [0, 1] or None (got {_show(p)})")
    return values


def benjamini_hochberg(p_values):
    """Benjamini-Hochberg q-values, in the caller's order; None stays None.

    Parameters
    ----------
    p_values : sequence of float or None
        None (or NaN) marks an undefined p-value; it is left out of the
        procedure and gets a None q-value.

    Returns
    -------
    list of float or None

    Notes
    -----
    The q-value of the i-th smallest of m p-values is
    :math:`\\min_{j \\ge i} \\min(1, m p_{(j)} / j)`; rejecting every q-value at
    most :math:`\\alpha` controls the false discovery rate at :math:`\\alpha` for
    independent tests [1]_. Computed by ``statsmodels``'
    ``multipletests(method="fdr_bh")``.

    References
    ----------
    .. [1] Benjamini, Y. & Hochberg, Y. (1995). Controlling the false discovery
       rate: a practical and powerful approach to multiple testing. Journal of
       the Royal Statistical Society B 57(1), 289-300.

    Examples
    --------
    >>> from streakwise.analysis.league import benjamini_hochberg
    >>> [round(q, 4) if q is not None else q for q in benjamini_hochberg([0.01, None, 0.04, 0.03])]
    [0.03, None, 0.04, 0.04]
    """
    values = _benjamini_hochberg_iv(p_values)
    defined = [i for i, p in enumerate(values) if p is not None]
    out = [None] * len(values)
    if defined:
        q = multipletests([float(values[i]) for i in defined], method="fdr_bh")[1]
        for i, value in zip(defined, q):
            out[i] = float(value)
    return out


def _scan_player(sequences, settings):
    """One player's test (null draws dropped) and the null draws of D_1..D_K."""
    result, null = _run_test(
        sequences.made, sequences.offsets, sequences.player, settings["max_k"],
        settings["permutations"], settings["alternative"], "random", settings["batch"],
        settings["seed"], settings["confidence_level"], settings["resamples"], False,
    )
    difference = [j for j, (name, _) in enumerate(_statistic_keys(settings["max_k"]))
                  if name == "difference"]
    return result, np.ascontiguousarray(null[:, difference])


def _pooled_test(k, results, nulls, alternative):
    """The league test of D_k from every player's result and null draws of D_k."""
    observed, centred = [], []
    for result, null in zip(results, nulls):
        test = result.test("difference", k)
        if test.corrected is None:
            continue
        observed.append(test.corrected)
        centred.append(null[:, k - 1] - test.null_mean)
    if not observed:
        return LeagueTestResult(
            k=k, players=0, corrected_mean=None, null_band=None, share_defined=0.0, p_value=None,
            p_value_se=None, alternative=alternative,
            reason=f"D_{k} is undefined for every scanned player")
    matrix = np.column_stack(centred)
    defined = ~np.isnan(matrix)
    count = defined.sum(axis=1)
    with np.errstate(invalid="ignore"):
        pooled = np.where(defined, matrix, 0.0).sum(axis=1) / count
    pooled = pooled[count > 0]
    statistic = float(np.mean(observed))
    p_hot, p_cold, se_hot, se_cold = _p_values(pooled, statistic, "greater", exact=False)
    p_value = _pick(alternative, p_hot, p_cold)
    if alternative == "hot":
        se = se_hot
    elif alternative == "cold":
        se = se_cold
    else:
        se = 0.0 if p_value >= 1.0 else 2.0 * (se_hot if p_hot <= p_cold else se_cold)
    low, high = _quantiles(pooled, (0.025, 0.975))
    return LeagueTestResult(
        k=k, players=len(observed), corrected_mean=statistic, null_band=(float(low), float(high)),
        share_defined=float(pooled.size / matrix.shape[0]), p_value=p_value, p_value_se=se,
        alternative=alternative, null_distribution=pooled)


def _league_scan_iv(players, min_attempts, max_k, permutations, alternative, rng, batch,
                    confidence_level, resamples, workers, executor, cluster, progress, completed,
                    on_player):
    if isinstance(players, Mapping):
        players = list(players.values())
    if not isinstance(players, Sequence) and not hasattr(players, "__iter__"):
        raise ValueError(f"`players` must be a list of PlayerSequences (got {_show(players)})")
    players = list(players)
    seen = set()
    for item in players:
        if not isinstance(item, PlayerSequences):
            raise ValueError(f"`players` must hold PlayerSequences (got {_show(item)})")
        if item.player in seen:
            raise ValueError(f"`players` holds player {item.player!r} twice")
        seen.add(item.player)
    min_attempts = _check_integer("min_attempts", min_attempts, minimum=1)
    max_k = _max_k_iv(max_k)
    permutations = _check_integer("permutations", permutations, minimum=1)
    alternative = _check_choice("alternative", alternative, ALTERNATIVES)
    if rng is not None and (isinstance(rng, (bool, np.bool_)) or not isinstance(rng, numbers.Integral)
                            or rng < 0):
        raise ValueError(
            "`rng` must be None or a non-negative integer seed for a league scan: each player's "
            f"stream is derived from it (got {_show(rng)})")
    batch = _check_integer("batch", batch, minimum=1)
    if isinstance(confidence_level, (bool, np.bool_)) or not isinstance(confidence_level, numbers.Real) \
            or not 0.0 < float(confidence_level) < 1.0:
        raise ValueError(f"`confidence_level` must be a number strictly between 0 and 1 "
                         f"(got {_show(confidence_level)})")
    resamples = _check_integer("resamples", resamples, minimum=0)
    workers = _check_integer("workers", workers, minimum=1)
    if executor is not None and not isinstance(executor, Executor):
        raise ValueError(f"`executor` must be a concurrent.futures.Executor or None (got {_show(executor)})")
    if progress is not None and not callable(progress):
        raise ValueError(f"`progress` must be callable or None (got {_show(progress)})")
    if on_player is not None and not callable(on_player):
        raise ValueError(f"`on_player` must be callable or None (got {_show(on_player)})")
    spec = ExecutorSpec(workers=workers, cluster=cluster, executor=executor)
    seed = np.random.SeedSequence().entropy if rng is None else int(rng)
    if completed is not None and not isinstance(completed, Mapping):
        raise ValueError(f"`completed` must be a mapping of player id to a finished player (got {_show(completed)})")
    return (players, min_attempts, max_k, permutations, alternative, seed, batch,
            float(confidence_level), resamples, spec, progress, dict(completed or {}), on_player)


def _completed_iv(completed, eligible, settings):
    """Check that every finished player handed in is a player of this scan, with its settings."""
    by_id = {p.player: p for p in eligible}
    expected = {name: settings[name] for name in ("max_k", "permutations", "alternative", "seed", "batch",
                                                  "confidence_level", "resamples")}
    for player, part in completed.items():
        if player not in by_id:
            raise ValueError(f"`completed` holds player {player!r}, who is not among the players to test")
        result, null = part if isinstance(part, tuple) and len(part) == 2 else (None, None)
        if not isinstance(result, StreakTestResult) or not isinstance(null, np.ndarray):
            raise ValueError(f"`completed` must map player ids to what `on_player` was given "
                             f"(got {_show(part)} for {player!r})")
        found = {name: getattr(result, name) for name in expected}
        sequences = by_id[player]
        if (found != expected or result.method != "random" or result.player != player
                or (result.attempts, result.sessions) != (sequences.attempts, len(sequences))
                or null.shape != (settings["permutations"], settings["max_k"])):
            raise ValueError(f"`completed` holds a result for player {player!r} from another scan "
                             f"(its settings {found}, this scan's {expected})")


def league_scan(players, *, min_attempts=100, max_k=3, permutations=10_000, alternative="hot",
                rng=None, batch=4096, confidence_level=0.95, resamples=2000, workers=1,
                executor=None, cluster=None, progress: Callable[[int], object] | None = None,
                completed: Mapping[str, tuple] | None = None,
                on_player: Callable[[str, tuple], object] | None = None):
    r"""Test every player of a league, with q-values and a pooled league test.

    Parameters
    ----------
    players : sequence (or mapping) of PlayerSequences
        One entry per player (ids unique).
    min_attempts : int, optional
        Players with fewer attempts are skipped (default 100).
    max_k : int, optional
        Streak lengths k = 1..max_k (default 3).
    permutations : int, optional
        Random within-session permutations per player (default 10,000).
    alternative : {'hot', 'cold', 'two-sided'}, optional
        As in :func:`~streakwise.analysis.permutation.permutation_test`.
    rng : None or int, optional
        Seed of the scan; each player's stream is derived from (seed, player
        id). None draws a fresh seed, recorded in the result.
    batch, confidence_level, resamples : optional
        Passed to every player's test.
    workers : int, optional
        Local processes to spread the players over (default 1: in this
        process). Results are identical for any number of workers.
    executor : concurrent.futures.Executor, optional
        Run the players on this executor instead (it is not shut down).
    cluster : str or distributed.Client, optional
        Run the players on this Dask scheduler (``"tcp://HOST:PORT"``) or
        client instead. A worker lost mid-scan loses no player: its tasks
        run again (see :func:`~streakwise.analysis.executors.map_tasks`).
    progress : callable, optional
        Called with the number of players done so far (skipped and
        ``completed`` players count as done, so it ends at ``len(players)``).
    completed : mapping, optional
        Players already tested by an interrupted run of the same scan: player
        id to what ``on_player`` was given. They are not run again, and the
        result is the same as an uninterrupted run's.
    on_player : callable, optional
        Called in this process with ``(player id, finished player)`` as each
        player's test arrives, before ``progress``: keep it to resume
        later (:func:`~streakwise.analysis.executors.encode_task_output`
        turns it into JSON-ready data).

    Returns
    -------
    LeagueScanResult

    Notes
    -----
    Every player is tested with random permutations, so every player has one
    null draw per league permutation. For each k the q-values apply
    Benjamini-Hochberg [3]_ to the players' D_k p-values. The pooled statistic
    is the mean over players of the corrected effect
    :math:`\bar c_k = \frac{1}{P}\sum_p (D_{k,p} - \mu_{k,p})`, where
    :math:`\mu_{k,p}` is player p's null mean [2]_; its null draw j is the mean
    of :math:`D^{(j)}_{k,p} - \mu_{k,p}` over the players on whom draw j is
    defined, with each player's draws from that player's own stream (players
    are independent under the null). Its p-value is
    :math:`(b + 1)/(m + 1)` [4]_.

    References
    ----------
    .. [1] Gilovich, T., Vallone, R. & Tversky, A. (1985). The hot hand in
       basketball: On the misperception of random sequences. Cognitive
       Psychology 17(3), 295-314.
    .. [2] Miller, J. B. & Sanjurjo, A. (2018). Surprised by the hot hand
       fallacy? A truth in the law of small numbers. Econometrica 86(6),
       2019-2047.
    .. [3] Benjamini, Y. & Hochberg, Y. (1995). Controlling the false discovery
       rate: a practical and powerful approach to multiple testing. Journal of
       the Royal Statistical Society B 57(1), 289-300.
    .. [4] Phipson, B. & Smyth, G. K. (2010). Permutation p-values should never
       be zero: calculating exact p-values when permutations are randomly
       drawn. Statistical Applications in Genetics and Molecular Biology
       9(1), Article 39.

    Examples
    --------
    >>> import numpy as np
    >>> from streakwise.analysis.sequences import PlayerSequences
    >>> from streakwise.analysis.league import league_scan
    >>> from streakwise.analysis.simulate import simulate_bernoulli
    >>> def player(name, seed):
    ...     made = simulate_bernoulli(np.full(300, 0.5), rng=seed).astype(np.int8)
    ...     offsets = np.arange(0, 301, 15)
    ...     return PlayerSequences(name, np.arange(20).astype(str), np.arange(20).astype(str),
    ...                            made, offsets)
    >>> scan = league_scan([player("a", 1), player("b", 2)], permutations=500, rng=9, max_k=2)
    >>> [p.player for p in scan.players], [t.k for t in scan.league]
    (['a', 'b'], [1, 2])
    """
    (players, min_attempts, max_k, permutations, alternative, seed, batch, confidence_level,
     resamples, spec, progress, completed, on_player) = _league_scan_iv(
        players, min_attempts, max_k, permutations, alternative, rng, batch, confidence_level,
        resamples, workers, executor, cluster, progress, completed, on_player)
    settings = dict(max_k=max_k, permutations=permutations, alternative=alternative, seed=seed,
                    batch=batch, confidence_level=confidence_level, resamples=resamples)
    eligible = [p for p in players if p.attempts >= min_attempts]
    skipped = tuple((p.player, f"{p.attempts} attempts, fewer than min_attempts={min_attempts}")
                    for p in players if p.attempts < min_attempts)
    _completed_iv(completed, eligible, settings)
    done = len(skipped) + len(completed)
    if progress is not None:
        progress(done)
    todo = [p for p in eligible if p.player not in completed]
    fresh = map_tasks(
        partial(_scan_player, settings=settings), todo, executor_spec=spec,
        progress=None if progress is None else (lambda count: progress(done + count)),
        on_result=None if on_player is None else (lambda i, out: on_player(todo[i].player, out)),
        weights=[p.attempts * (permutations + resamples) for p in todo], task_weight=TASK_WEIGHT)
    fresh = dict(zip((p.player for p in todo), fresh))
    outputs = [completed[p.player] if p.player in completed else fresh[p.player] for p in eligible]
    results = [out[0] for out in outputs]
    nulls = [out[1] for out in outputs]
    q_by_k = [benjamini_hochberg([r.test("difference", k).p_value for r in results])
              for k in range(1, max_k + 1)]
    scanned = tuple(
        PlayerScanResult(player=r.player, result=r, q_values=tuple(q[i] for q in q_by_k))
        for i, r in enumerate(results))
    league = tuple(_pooled_test(k, results, nulls, alternative) for k in range(1, max_k + 1))
    return LeagueScanResult(players=scanned, league=league, skipped=skipped, seed=seed,
                            permutations=permutations, alternative=alternative, max_k=max_k,
                            min_attempts=min_attempts)
