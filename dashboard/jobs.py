"""Long work (league scans) off the request threads, with progress and cancel.

Why threads and not Dash's background callbacks: DESIGN.md says the server
process owns the store and background work never opens it. A Dash background
callback runs the callback body in a separate worker process, which would
have to fetch its data from somewhere; here the server reads the data from
its store in the request thread, hands it to a job as plain arguments, and
polls the job from the page with a ``dcc.Interval``. The job itself runs
in a thread of the server process (or, with ``workers > 1``, spreads the
players over a pool of *spawned* processes that receive only the players'
make/miss arrays). Cancelling sets a flag that the next progress report
turns into :class:`JobCancelled`; work still queued in the pool is dropped.

Jobs are keyed (for a scan: its result key), so asking twice for the same
work joins the running job instead of starting another.
"""

from __future__ import annotations

import multiprocessing
import threading
import time
import traceback
from collections.abc import Callable
from concurrent.futures import Executor, Future, ProcessPoolExecutor
from dataclasses import dataclass, field
from typing import Any

__all__ = ["Job", "JobCancelled", "Jobs"]

#: Finished jobs kept for their status (the oldest are forgotten first).
KEEP_FINISHED = 64


class JobCancelled(Exception):
    """Raised inside a job's progress report once the job was asked to stop."""


@dataclass
class Job:
    """One piece of background work and what is known about it.

    Attributes
    ----------
    key : str
    label : str
        What the job does, for the page.
    total : int
        Units of work (players for a scan).
    done : int
        Units finished so far.
    state : {'running', 'done', 'cancelled', 'failed'}
    error : str or None
        The failure, for ``'failed'``.
    result : object
        What the work returned, for ``'done'``.
    """

    key: str
    label: str
    total: int
    done: int = 0
    state: str = "running"
    error: str | None = None
    result: Any = None
    started: float = field(default_factory=time.monotonic)
    finished: float | None = None
    _cancel: threading.Event = field(default_factory=threading.Event, repr=False)
    _thread: threading.Thread | None = field(default=None, repr=False)

    @property
    def running(self) -> bool:
        return self.state == "running"

    @property
    def fraction(self) -> float:
        return 0.0 if self.total <= 0 else min(1.0, self.done / self.total)

    @property
    def elapsed(self) -> float:
        return (self.finished or time.monotonic()) - self.started

    def report(self, done: int) -> None:
        """Record progress; raise :class:`JobCancelled` if the job should stop."""
        self.done = int(done)
        if self._cancel.is_set():
            raise JobCancelled(self.key)

    def cancel(self) -> None:
        self._cancel.set()

    def wait(self, timeout: float | None = None) -> bool:
        """Wait for the job to finish; True when it has."""
        if self._thread is not None:
            self._thread.join(timeout)
        return not self.running


class _TrackingExecutor(Executor):
    """Submits to a shared pool and remembers the futures, so they can be dropped."""

    def __init__(self, pool: Executor) -> None:
        self._pool = pool
        self._futures: list[Future] = []

    def submit(self, fn, /, *args, **kwargs) -> Future:
        future = self._pool.submit(fn, *args, **kwargs)
        self._futures.append(future)
        return future

    def cancel_pending(self) -> None:
        for future in self._futures:
            future.cancel()


class Jobs:
    """The server's background jobs.

    Parameters
    ----------
    workers : int
        1 (default): work runs in the job's thread. More: work that accepts an
        executor gets a pool of that many spawned processes (created on first
        use, shared by the jobs, shut down by :meth:`shutdown`).
    """

    def __init__(self, workers: int = 1) -> None:
        if isinstance(workers, bool) or not isinstance(workers, int) or workers < 1:
            raise ValueError(f"`workers` must be a whole number of at least 1 (got {workers!r})")
        self.workers = workers
        self._jobs: dict[str, Job] = {}
        self._lock = threading.Lock()
        self._pool: ProcessPoolExecutor | None = None

    def _executor(self) -> _TrackingExecutor | None:
        if self.workers == 1:
            return None
        with self._lock:
            if self._pool is None:
                self._pool = ProcessPoolExecutor(self.workers, mp_context=multiprocessing.get_context("spawn"))
            return _TrackingExecutor(self._pool)

    def get(self, key: str) -> Job | None:
        with self._lock:
            return self._jobs.get(key)

    def start(
        self,
        key: str,
        label: str,
        total: int,
        work: Callable[[Callable[[int], None], Executor | None], Any],
        on_done: Callable[[Any], None] | None = None,
    ) -> Job:
        """Start ``work(report, executor)`` in a thread, unless ``key`` is already running.

        ``work`` calls ``report(done)`` as it goes (which raises
        :class:`JobCancelled` after :meth:`cancel`) and returns its result;
        ``on_done(result)`` then runs in the same thread (to save it, say).
        """
        with self._lock:
            existing = self._jobs.get(key)
            if existing is not None and existing.running:
                return existing
            job = Job(key=key, label=label, total=int(total))
            self._jobs[key] = job
            self._forget_old()
        executor = self._executor()

        def run() -> None:
            try:
                result = work(job.report, executor)
                if on_done is not None:
                    on_done(result)
                job.result = result
                job.state = "done"
            except JobCancelled:
                job.state = "cancelled"
            except Exception as exc:  # reported on the page; the traceback goes to the server log
                traceback.print_exc()
                job.error = f"{type(exc).__name__}: {exc}"
                job.state = "failed"
            finally:
                if executor is not None:
                    executor.cancel_pending()
                job.finished = time.monotonic()

        job._thread = threading.Thread(target=run, name=f"streakwise-job-{key[:12]}", daemon=True)
        job._thread.start()
        return job

    def cancel(self, key: str) -> Job | None:
        job = self.get(key)
        if job is not None and job.running:
            job.cancel()
        return job

    def _forget_old(self) -> None:
        finished = [k for k, j in self._jobs.items() if not j.running]
        for key in finished[: max(0, len(finished) - KEEP_FINISHED)]:
            del self._jobs[key]

    def shutdown(self, timeout: float = 5.0) -> None:
        """Cancel running jobs, wait a little for them, and stop the pool."""
        with self._lock:
            jobs = list(self._jobs.values())
        for job in jobs:
            job.cancel()
        for job in jobs:
            job.wait(timeout)
        with self._lock:
            if self._pool is not None:
                self._pool.shutdown(wait=False, cancel_futures=True)
                self._pool = None
