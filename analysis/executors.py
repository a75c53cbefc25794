"""Where independent tasks run: in this process, on a local process pool, or on Dask.

League scans test every player separately, and later work (difficulty-adjusted
scans, the hidden-Markov permutation test, the planner's simulations) splits the
same way: one task per player or per simulation, each with its own random
stream. :func:`map_tasks` runs such tasks and hands the results back in the
order of the items, whichever executor ran them:

- in this process (one worker, or a single task);
- on a local process pool (``workers=N``), started here and shut down after;
- on an existing Dask distributed scheduler (``cluster="tcp://HOST:PORT"``),
  through ``distributed.Client``; Dask is imported only then.

Faults. A worker process that dies takes its tasks with it, not the run: on
the local pool a ``BrokenProcessPool`` restarts the pool and resubmits every
task that had not come back; on Dask the scheduler reschedules the tasks of a
lost worker, tasks are submitted with ``retries=``, and a task that killed
its workers too often (``KilledWorker``) is submitted again. A task that
raises an ordinary exception is a bug and stops the run. Results come back
to this process as they complete (``on_result``), so the caller can save
them and resume an interrupted run with only the missing items.

Tiny tasks are grouped: with ``weights`` (say attempts x permutations per
player) and ``task_weight``, consecutive items share a task until their
weights reach ``task_weight``, so the per-task overhead (about a millisecond
on the pool, a few on Dask) stays small next to the work. A heavy item is a
task of its own, holding only its own arrays. At most a few tasks per worker
are in flight at a time, which bounds the memory the inputs take.

:func:`encode_task_output` and :func:`decode_task_output` turn a task's
result (frozen result dataclasses, numpy arrays, tuples, floats) into plain
JSON-ready data and back, exactly: arrays keep their bytes, floats their
value, so a result saved mid-run and read back equals the one computed.

Nothing here reads or writes files or opens the store.
"""

from __future__ import annotations

import base64
import dataclasses
import importlib
import math
import multiprocessing
import numbers
import os
import signal
from collections import deque
from collections.abc import Callable, Sequence
from concurrent.futures import FIRST_COMPLETED, Executor, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = [
    "ExecutorSpec",
    "WorkerLostError",
    "decode_task_output",
    "encode_task_output",
    "map_tasks",
    "usable_cores",
]

#: Seconds to wait for a Dask scheduler to answer before giving up.
CONNECT_TIMEOUT = 20

#: Tasks in flight per worker (bounds the memory of inputs and results in transit).
TASKS_PER_WORKER = 4

#: Modules whose dataclasses :func:`decode_task_output` may rebuild.
_DATACLASS_PREFIX = "streakwise.analysis."

#: What the server that starts local workers imports once, so that a new pool
#: starts quickly: the main script (which every worker would otherwise import
#: again) and the statistics.
_PRELOAD = ["__main__", "streakwise.analysis"]


class WorkerLostError(RuntimeError):
    """A task was lost with its worker more often than ``retries`` allows."""


def usable_cores() -> int:
    """Number of CPU cores this process may run on (the default ``--workers``).

    Returns
    -------
    int
        The size of the process's CPU affinity set where the system has one
        (a container or ``taskset`` limit counts), else ``os.cpu_count()``.

    Examples
    --------
    >>> from streakwise.analysis.executors import usable_cores
    >>> usable_cores() >= 1
    True
    """
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


@dataclass(frozen=True)
class ExecutorSpec:
    """Where :func:`map_tasks` runs its tasks.

    Attributes
    ----------
    workers : int
        Local worker processes; 1 runs every task in this process. Ignored
        when ``cluster`` or ``executor`` is given.
    cluster : str or distributed.Client or None
        Address of a Dask scheduler (``"tcp://HOST:PORT"``), or a connected
        ``distributed.Client`` (used as it is, not closed).
    executor : concurrent.futures.Executor or None
        Run the tasks on this executor (not shut down, not restarted: a
        broken pool of the caller's ends the run).
    retries : int
        How many more times a task lost with its worker is run (default 2).

    Examples
    --------
    >>> from streakwise.analysis.executors import ExecutorSpec
    >>> ExecutorSpec(workers=4).describe()
    '4 local worker processes'
    >>> ExecutorSpec(cluster="tcp://10.0.0.5:8786").describe()
    'the Dask cluster at tcp://10.0.0.5:8786'
    """

    workers: int = 1
    cluster: Any = None
    executor: Executor | None = None
    retries: int = 2

    def __post_init__(self):
        _executor_spec_iv(self)

    def describe(self) -> str:
        """Where the tasks run, in words."""
        if self.cluster is not None:
            address = self.cluster if isinstance(self.cluster, str) else _client_address(self.cluster)
            return f"the Dask cluster at {address}"
        if self.executor is not None:
            return f"the given executor ({type(self.executor).__name__})"
        if self.workers == 1:
            return "this process"
        return f"{self.workers} local worker processes"


def _show(value):
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def _is_client(value):
    return hasattr(value, "submit") and hasattr(value, "scheduler_info")


def _client_address(client):
    return getattr(getattr(client, "scheduler", None), "address", None) or "(connected client)"


def _executor_spec_iv(spec):
    workers = spec.workers
    if isinstance(workers, (bool, np.bool_)) or not isinstance(workers, numbers.Integral) or workers < 1:
        raise ValueError(f"`workers` must be an integer >= 1 (got {_show(workers)})")
    retries = spec.retries
    if isinstance(retries, (bool, np.bool_)) or not isinstance(retries, numbers.Integral) or retries < 0:
        raise ValueError(f"`retries` must be an integer >= 0 (got {_show(retries)})")
    cluster = spec.cluster
    if cluster is not None:
        if isinstance(cluster, str):
            scheme, sep, rest = cluster.partition("://")
            host, colon, port = rest.rpartition(":")
            if not sep or scheme not in ("tcp", "tls") or not colon or not host or not port.isdigit():
                raise ValueError(
                    f"`cluster` must be a Dask scheduler address like 'tcp://HOST:PORT' (got {_show(cluster)})")
        elif not _is_client(cluster):
            raise ValueError(
                f"`cluster` must be an address 'tcp://HOST:PORT' or a distributed.Client (got {_show(cluster)})")
    if spec.executor is not None and not isinstance(spec.executor, Executor):
        raise ValueError(
            f"`executor` must be a concurrent.futures.Executor or None (got {_show(spec.executor)})")
    if spec.executor is not None and cluster is not None:
        raise ValueError("give `executor` or `cluster`, not both")


def _as_spec(executor_spec):
    """An ExecutorSpec from a spec, None (this process), a worker count or an address."""
    if executor_spec is None:
        return ExecutorSpec()
    if isinstance(executor_spec, ExecutorSpec):
        return executor_spec
    if isinstance(executor_spec, numbers.Integral) and not isinstance(executor_spec, (bool, np.bool_)):
        return ExecutorSpec(workers=int(executor_spec))
    if isinstance(executor_spec, str) or _is_client(executor_spec):
        return ExecutorSpec(cluster=executor_spec)
    if isinstance(executor_spec, Executor):
        return ExecutorSpec(executor=executor_spec)
    raise ValueError(
        "`executor_spec` must be an ExecutorSpec, None, a number of workers, a Dask scheduler "
        f"address or a concurrent.futures.Executor (got {_show(executor_spec)})")


# ---------------------------------------------------------------------------
# Tasks
# ---------------------------------------------------------------------------


def _task_bounds(count, weights, task_weight):
    """(start, stop) of every task: consecutive items until their weight reaches task_weight."""
    if weights is None or task_weight <= 0:
        return [(i, i + 1) for i in range(count)]
    bounds, start, total = [], 0, 0.0
    for i, weight in enumerate(weights):
        total += weight
        if total >= task_weight:
            bounds.append((start, i + 1))
            start, total = i + 1, 0.0
    if start < count:
        bounds.append((start, count))
    return bounds


def _run_task(fn, items):
    """One task: ``fn`` over a few consecutive items (runs in the worker)."""
    return [fn(item) for item in items]


def _ignore_interrupts():
    """Local workers leave Ctrl-C to the main process, which stops the pool."""
    signal.signal(signal.SIGINT, signal.SIG_IGN)


def _pool_context():
    """Start workers from a clean server process where the platform has one.

    A forked copy of a process that holds threads (a database connection, a
    progress bar's monitor) can deadlock; ``forkserver`` forks from a small
    single-threaded process that has imported the statistics modules once.
    """
    if "forkserver" in multiprocessing.get_all_start_methods():
        context = multiprocessing.get_context("forkserver")
        context.set_forkserver_preload(_PRELOAD)
        return context
    return multiprocessing.get_context("spawn")


class _Collector:
    """Puts each finished task's results in place and reports them, in this process."""

    def __init__(self, count, bounds, on_result, progress):
        self.results = [None] * count
        self.bounds = bounds
        self.on_result = on_result
        self.progress = progress
        self.done = 0

    def __call__(self, task, values):
        start, stop = self.bounds[task]
        if len(values) != stop - start:
            raise RuntimeError(f"a task returned {len(values)} results for {stop - start} items")
        for offset, value in enumerate(values):
            self.results[start + offset] = value
            if self.on_result is not None:
                self.on_result(start + offset, value)
        self.done += stop - start
        if self.progress is not None:
            self.progress(self.done)


def _lost(task, attempts, retries, where, hint=""):
    if attempts[task] > retries:
        raise WorkerLostError(
            f"a task was lost with its worker {attempts[task]} times on {where} (retries={retries}); "
            f"a worker may be running out of memory or crashing{hint}")


def _run_here(fn, items, bounds, collect):
    for task, (start, stop) in enumerate(bounds):
        collect(task, _run_task(fn, items[start:stop]))


def _run_on_pool(fn, items, bounds, collect, spec):
    """On a concurrent.futures executor: ours (restarted when broken) or the caller's."""
    own = spec.executor is None
    # the caller's executor does not say how many workers it has: keep every core busy
    workers = min(spec.workers, len(bounds)) if own else max(spec.workers, usable_cores())

    def start_pool():
        return ProcessPoolExecutor(max_workers=workers, mp_context=_pool_context(),
                                   initializer=_ignore_interrupts)

    pool = start_pool() if own else spec.executor
    window = max(2, TASKS_PER_WORKER * workers)
    todo = deque(range(len(bounds)))
    attempts = [0] * len(bounds)
    pending = {}
    try:
        while todo or pending:
            while todo and len(pending) < window:
                task = todo.popleft()
                attempts[task] += 1
                start, stop = bounds[task]
                pending[pool.submit(_run_task, fn, items[start:stop])] = task
            finished, _ = wait(pending, return_when=FIRST_COMPLETED)
            broken = False
            for future in sorted(finished, key=pending.get):
                task = pending.pop(future)
                try:
                    values = future.result()
                except BrokenProcessPool:
                    broken = True
                    todo.appendleft(task)
                    continue
                collect(task, values)
            if not broken:
                continue
            if not own:
                raise BrokenProcessPool(
                    "a worker process of the given executor died; it cannot be restarted from here")
            # Every task still out was lost with the pool, except those already back.
            for future, task in sorted(pending.items(), key=lambda item: item[1]):
                if future.done() and not future.cancelled() and future.exception() is None:
                    collect(task, future.result())
                else:
                    todo.append(task)
            pending.clear()
            for task in todo:
                if attempts[task]:
                    _lost(task, attempts, spec.retries, f"{workers} local worker processes",
                          "; a script that starts local workers must do so under "
                          "`if __name__ == \"__main__\":`")
            todo = deque(sorted(todo))
            pool.shutdown(wait=True, cancel_futures=True)
            pool = start_pool()
    except BaseException:
        # Ctrl-C, or a failing task: what is still running is not wanted
        if own:
            _stop_workers(pool)
        raise
    finally:
        for future in pending:
            future.cancel()
        if own:
            pool.shutdown(wait=True, cancel_futures=True)


def _stop_workers(pool):
    """End the worker processes of our own pool now, abandoning their tasks.

    Without this, shutting the pool down waits for every task already handed
    to a worker, which for a large player can take many seconds after Ctrl-C.
    Workers hold no files and no store, so nothing is left half-written.
    """
    for process in list((getattr(pool, "_processes", None) or {}).values()):
        if process.is_alive():
            process.terminate()


def _dask_client(spec):
    """(client, whether we opened it) for ``spec.cluster``."""
    if not isinstance(spec.cluster, str):
        return spec.cluster, False
    try:
        from distributed import Client
    except ImportError as exc:  # pragma: no cover - a dependency, but imported lazily
        raise ImportError(
            "running on a Dask cluster needs the 'distributed' package (pip install \"dask[distributed]\")"
        ) from exc
    try:
        client = Client(spec.cluster, timeout=CONNECT_TIMEOUT, set_as_default=False)
    except OSError as exc:  # TimeoutError is an OSError
        raise ConnectionError(f"cannot reach the Dask scheduler at {spec.cluster} ({exc})") from None
    return client, True


def _run_on_dask(fn, items, bounds, collect, spec):
    from distributed import KilledWorker, as_completed

    client, own = _dask_client(spec)
    try:
        where = spec.describe()
        threads = sum(client.nthreads().values())
        window = max(16, TASKS_PER_WORKER * threads)
        todo = deque(range(len(bounds)))
        attempts = [0] * len(bounds)
        pending = {}
        running = as_completed(loop=client.loop)

        def submit(task):
            attempts[task] += 1
            start, stop = bounds[task]
            future = client.submit(_run_task, fn, items[start:stop], pure=False, retries=spec.retries)
            pending[future] = task
            running.add(future)

        try:
            while todo and len(pending) < window:
                submit(todo.popleft())
            for future in running:
                task = pending.pop(future)
                try:
                    values = future.result()
                except KilledWorker:
                    _lost(task, attempts, spec.retries, where)
                    submit(task)
                    continue
                finally:
                    future.release()
                collect(task, values)
                while todo and len(pending) < window:
                    submit(todo.popleft())
        finally:
            if pending:
                client.cancel(list(pending))
    finally:
        if own:
            client.close()


def map_tasks(fn: Callable[[Any], Any], items: Sequence[Any], *, executor_spec=None,
              progress: Callable[[int], object] | None = None,
              on_result: Callable[[int, Any], object] | None = None,
              weights: Sequence[float] | None = None, task_weight: float = 0.0) -> list:
    """Run ``fn(item)`` for every item, here or on workers; results in the items' order.

    Parameters
    ----------
    fn : callable
        A picklable function of one item (a module-level function, or a
        ``functools.partial`` of one). It must not depend on which process
        runs it: give each item its own random stream.
    items : sequence
        The inputs; each task is sent only its own items.
    executor_spec : ExecutorSpec, int, str, Executor or None, optional
        Where to run (see :class:`ExecutorSpec`): None runs in this process,
        an integer is a number of local worker processes, a string is a Dask
        scheduler address. A local pool is started only when there are at
        least two tasks.
    progress : callable, optional
        Called with the number of items done so far, after each task.
    on_result : callable, optional
        Called in this process with ``(index, result)`` as each item's
        result arrives (in completion order), before ``progress``. Raising
        from it (or from ``progress``), a ``KeyboardInterrupt`` say, stops
        the run: tasks not yet started are cancelled.
    weights : sequence of float, optional
        Cost of each item (any unit); with ``task_weight``, consecutive items
        share a task until their weights reach ``task_weight``.
    task_weight : float, optional
        Smallest total weight of a task (default 0: one item per task).

    Returns
    -------
    list
        ``fn(item)`` for every item, in the order of ``items``.

    Raises
    ------
    WorkerLostError
        A task was lost with its worker more than ``retries`` times.
    ConnectionError
        The Dask scheduler could not be reached.

    Notes
    -----
    The results do not depend on the executor, the number of workers or the
    grouping of items into tasks, as long as ``fn`` is deterministic per
    item. A task lost with its worker is run again from the start; one that
    raises is not retried on the local pool (it is a bug) and is retried
    ``retries`` times on Dask (the scheduler's own rule).

    Examples
    --------
    >>> from streakwise.analysis.executors import map_tasks
    >>> map_tasks(abs, [-3, 1, -2])
    [3, 1, 2]
    >>> done = []
    >>> map_tasks(abs, [-3, 1, -2], weights=[1, 1, 1], task_weight=2, progress=done.append)
    [3, 1, 2]
    >>> done
    [2, 3]
    """
    spec, items, weights, task_weight = _map_tasks_iv(fn, items, executor_spec, progress, on_result,
                                                      weights, task_weight)
    bounds = _task_bounds(len(items), weights, task_weight)
    collect = _Collector(len(items), bounds, on_result, progress)
    if not bounds:
        return []
    if spec.cluster is not None:
        _run_on_dask(fn, items, bounds, collect, spec)
    elif spec.executor is not None or (spec.workers > 1 and len(bounds) > 1):
        _run_on_pool(fn, items, bounds, collect, spec)
    else:
        _run_here(fn, items, bounds, collect)
    return collect.results


def _map_tasks_iv(fn, items, executor_spec, progress, on_result, weights, task_weight):
    if not callable(fn):
        raise ValueError(f"`fn` must be callable (got {_show(fn)})")
    if isinstance(items, (str, bytes)) or not hasattr(items, "__iter__"):
        raise ValueError(f"`items` must be a sequence (got {_show(items)})")
    items = list(items)
    spec = _as_spec(executor_spec)
    for name, value in (("progress", progress), ("on_result", on_result)):
        if value is not None and not callable(value):
            raise ValueError(f"`{name}` must be callable or None (got {_show(value)})")
    if weights is not None:
        weights = [float(w) for w in weights]
        if len(weights) != len(items) or any(not math.isfinite(w) or w < 0 for w in weights):
            raise ValueError("`weights` must hold one finite non-negative number per item")
    if isinstance(task_weight, bool) or not isinstance(task_weight, numbers.Real) or task_weight < 0:
        raise ValueError(f"`task_weight` must be a number >= 0 (got {_show(task_weight)})")
    return spec, items, weights, float(task_weight)


# ---------------------------------------------------------------------------
# Task outputs to JSON-ready data and back
# ---------------------------------------------------------------------------


def encode_task_output(value):
    """A task's result as JSON-ready data (dicts, lists, strings, numbers), exactly.

    Parameters
    ----------
    value
        None, bool, int, float, str, a numpy scalar or array (numeric,
        boolean or fixed-width text), a list, tuple or string-keyed dict of
        these, or a dataclass from ``streakwise.analysis``.

    Returns
    -------
    object
        Data that ``json.dumps(..., allow_nan=False)`` accepts;
        :func:`decode_task_output` rebuilds ``value`` from it. Arrays keep
        their dtype, shape and bytes (base64), floats their exact value
        (NaN and infinities are spelled out), tuples stay tuples.

    Examples
    --------
    >>> import json, numpy as np
    >>> from streakwise.analysis.executors import decode_task_output, encode_task_output
    >>> value = (1.5, float("nan"), np.arange(3, dtype=np.int8))
    >>> back = decode_task_output(json.loads(json.dumps(encode_task_output(value), allow_nan=False)))
    >>> back[0], np.isnan(back[1]), back[2].tolist()
    (1.5, True, [0, 1, 2])
    """
    if value is None or isinstance(value, (bool, str)):
        return value
    if isinstance(value, np.ndarray):
        if value.dtype.kind not in "biufcU":
            raise ValueError(f"cannot encode an array of dtype {value.dtype} (numbers, booleans or text only)")
        return {"$array": value.dtype.str, "shape": list(value.shape),
                "data": base64.b64encode(np.ascontiguousarray(value).tobytes()).decode("ascii")}
    if isinstance(value, np.generic):
        if value.dtype.kind not in "biufcU":
            raise ValueError(f"cannot encode a numpy scalar of dtype {value.dtype}")
        return {"$scalar": value.dtype.str,
                "data": base64.b64encode(np.asarray(value).tobytes()).decode("ascii")}
    if isinstance(value, numbers.Integral):
        return int(value)
    if isinstance(value, float):
        return value if math.isfinite(value) else {"$float": repr(value)}
    if isinstance(value, tuple):
        return {"$tuple": [encode_task_output(v) for v in value]}
    if isinstance(value, list):
        return [encode_task_output(v) for v in value]
    if isinstance(value, dict):
        if not all(isinstance(k, str) for k in value):
            raise ValueError("cannot encode a dict whose keys are not all strings")
        return {"$dict": {k: encode_task_output(v) for k, v in value.items()}}
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        cls = type(value)
        if not cls.__module__.startswith(_DATACLASS_PREFIX):
            raise ValueError(f"cannot encode {cls.__module__}.{cls.__qualname__}: only streakwise.analysis "
                             "dataclasses are encoded")
        return {"$dataclass": f"{cls.__module__}:{cls.__qualname__}",
                "fields": {f.name: encode_task_output(getattr(value, f.name))
                           for f in dataclasses.fields(value)}}
    raise ValueError(f"cannot encode a {type(value).__name__} ({_show(value)})")


def decode_task_output(data):
    """Rebuild a value from :func:`encode_task_output`'s data.

    Parameters
    ----------
    data
        What :func:`encode_task_output` returned, possibly after a JSON
        round trip.

    Returns
    -------
    object
        The original value: equal arrays (same dtype and shape, writable),
        floats, tuples and dataclasses.

    Raises
    ------
    ValueError
        The data was not made by :func:`encode_task_output`, or names a
        class outside ``streakwise.analysis`` (nothing else is imported).
    """
    if data is None or isinstance(data, (bool, str, int, float)):
        return data
    if isinstance(data, list):
        return [decode_task_output(v) for v in data]
    if not isinstance(data, dict) or len(data) < 1:
        raise ValueError(f"not encoded task output: {_show(data)}")
    if "$array" in data:
        array = np.frombuffer(base64.b64decode(data["data"]), dtype=np.dtype(data["$array"]))
        return array.reshape(tuple(data["shape"])).copy()
    if "$scalar" in data:
        return np.frombuffer(base64.b64decode(data["data"]), dtype=np.dtype(data["$scalar"]))[0]
    if "$float" in data:
        return float(data["$float"])
    if "$tuple" in data:
        return tuple(decode_task_output(v) for v in data["$tuple"])
    if "$dict" in data:
        return {k: decode_task_output(v) for k, v in data["$dict"].items()}
    if "$dataclass" in data:
        module_name, _, name = data["$dataclass"].partition(":")
        if not module_name.startswith(_DATACLASS_PREFIX):
            raise ValueError(f"refusing to rebuild {data['$dataclass']!r}: not a streakwise.analysis class")
        cls = getattr(importlib.import_module(module_name), name, None)
        if not (isinstance(cls, type) and dataclasses.is_dataclass(cls)):
            raise ValueError(f"{data['$dataclass']!r} is not a dataclass")
        values = {k: decode_task_output(v) for k, v in data["fields"].items()}
        init = {f.name for f in dataclasses.fields(cls) if f.init}
        value = cls(**{k: v for k, v in values.items() if k in init})
        for k, v in values.items():
            if k not in init:
                object.__setattr__(value, k, v)
        return value
    raise ValueError(f"not encoded task output: {_show(data)}")
