"""Executors: run one function over many items, here or in a pool of worker processes.

The interface is deliberately small so that a distributed engine can implement it later:

``imap_unordered(fn, items, *, chunksize) -> iterator of results``
    Call ``fn(item)`` for every item and yield the results as they complete (in any order).
    ``fn`` and the items must be picklable; ``fn`` must not raise for a bad item (it returns a
    result that says what went wrong), so one bad file never stops the others.
``n_workers``
    How many items run at the same time.
``close()``
    Release the workers (executors are also context managers).

`LocalExecutor` runs on a `concurrent.futures.ProcessPoolExecutor`, submitting items in chunks
so that the cost of sending a task is paid once per chunk, not once per file.
`InlineExecutor` runs in the calling process (debugging, tiny jobs).
"""

from __future__ import annotations

import gc
import os
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import FIRST_COMPLETED, CancelledError, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from typing import Any, Protocol, runtime_checkable

from .._validation import check_int

__all__ = ["Executor", "InlineExecutor", "LocalExecutor", "default_jobs"]


def default_jobs() -> int:
    """All cores this process may use (``os.sched_getaffinity`` where available)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


@runtime_checkable
class Executor(Protocol):
    """What `rrkit.batch.run_daily` needs from an executor (see the module notes)."""

    n_workers: int

    def imap_unordered(self, fn: Callable[[Any], Any], items: Iterable[Any], *,
                       chunksize: int = 1) -> Iterator[Any]: ...

    def close(self) -> None: ...


class InlineExecutor:
    """Runs every item in the calling process, one after the other."""

    n_workers = 1

    def imap_unordered(self, fn, items, *, chunksize: int = 1):
        for item in items:
            yield fn(item)

    def close(self) -> None:
        pass

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()


def _run_chunk(fn, chunk):
    return [fn(item) for item in chunk]


def _warm_up(modules: tuple[str, ...]) -> None:
    # Ctrl-C is handled by the parent (it stops submitting and shuts the pool down cleanly);
    # workers ignore it instead of each printing a traceback
    import importlib
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    # import the heavy modules once per worker, not once per task
    for name in modules:
        importlib.import_module(name)


class LocalExecutor:
    """A pool of worker processes on this machine.

    Parameters
    ----------
    jobs : int, optional
        Number of worker processes (default: all cores, `default_jobs`).
    preload : tuple of str
        Modules each worker imports when it starts.
    on_broken : callable, optional
        ``on_broken(item, exc) -> result`` gives the result for an item whose worker process
        died (for example killed by the system); default re-raises.

    Notes
    -----
    Chunks are submitted a few at a time per worker (``2 * jobs`` in flight), so memory stays
    bounded on long runs and results stream back as they complete.
    """

    def __init__(self, jobs: int | None = None, *, preload: tuple[str, ...] = (),
                 on_broken: Callable[[Any, BaseException], Any] | None = None) -> None:
        self.n_workers = default_jobs() if jobs is None else check_int("jobs", jobs, low=1)
        self._preload = tuple(preload)
        self._on_broken = on_broken
        self._pool: ProcessPoolExecutor | None = None

    def _ensure(self) -> ProcessPoolExecutor:
        if self._pool is None:
            self._pool = ProcessPoolExecutor(max_workers=self.n_workers, initializer=_warm_up,
                                             initargs=(self._preload,))
        return self._pool

    def imap_unordered(self, fn, items, *, chunksize: int = 1):
        chunksize = check_int("chunksize", chunksize, low=1)
        it = iter(items)
        pending: dict = {}

        def submit_next() -> bool:
            chunk = []
            for item in it:
                chunk.append(item)
                if len(chunk) >= chunksize:
                    break
            if not chunk:
                return False
            fresh = self._pool is None
            pool = self._ensure()
            if fresh:
                # worker processes start at the first submit; objects that exist now move to
                # the permanent generation first, so the workers' garbage collector never walks
                # (and copies) the parent's heap (gc.freeze, Python >= 3.7)
                gc.freeze()
                try:
                    fut = pool.submit(_run_chunk, fn, chunk)
                finally:
                    gc.unfreeze()
            else:
                fut = pool.submit(_run_chunk, fn, chunk)
            pending[fut] = (chunk, pool)
            return True

        for _ in range(2 * self.n_workers):
            if not submit_next():
                break
        while pending:
            done, _ = wait(pending, return_when=FIRST_COMPLETED)
            for fut in done:
                chunk, pool = pending.pop(fut)
                try:
                    results = fut.result()
                except (BrokenProcessPool, CancelledError) as exc:
                    if self._on_broken is None:
                        raise
                    results = [self._on_broken(item, exc) for item in chunk]
                    if pool is self._pool:  # replace the broken pool once
                        self._pool = None
                        pool.shutdown(wait=False, cancel_futures=True)
                yield from results
                submit_next()

    def close(self) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
