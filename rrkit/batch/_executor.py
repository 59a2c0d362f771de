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

Optional: ``local_disk`` (True: the workers see this machine's files and may write the output
folder's resume cache themselves), ``start()`` starts the workers early (the caller goes on
discovering files while they start), and ``lost``, a dict item -> number of worker deaths while
the item was in flight (the retried items, recorded in the run's provenance).

`LocalExecutor` runs on a `concurrent.futures.ProcessPoolExecutor`, submitting items in chunks
so that the cost of sending a task is paid once per chunk, not once per file.
`InlineExecutor` runs in the calling process (debugging, tiny jobs).
`rrkit.batch.DaskExecutor` runs on a Dask distributed cluster (optional extra ``rrkit[dask]``).
"""

from __future__ import annotations

import gc
import itertools
import os
from collections import deque
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import FIRST_COMPLETED, CancelledError, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from typing import Any, Protocol, runtime_checkable

from .._validation import check_int
from ._preload import import_all

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
    local_disk = True  # runs here: sees the same files as the caller

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
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    import_all(modules)


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
        died every time it was tried (for example killed by the system); default re-raises.
    max_losses : int
        How many times an item may take its worker process down, running alone, before
        ``on_broken`` gives its result (default 2).

    Attributes
    ----------
    lost : dict
        Item -> how many times a worker process died while the item was in flight (the items
        that were retried); kept for the whole life of the executor.

    Notes
    -----
    Chunks are submitted a few at a time per worker (``2 * jobs`` in flight), so memory stays
    bounded on long runs and results stream back as they complete. When a worker process dies,
    the whole pool is replaced (that is how `concurrent.futures` reports it) and every item
    that was in flight becomes a suspect: suspects are run one at a time, each alone in the
    pool, so a death is blamed on the one item that caused it; the others succeed on their
    solo run and nothing is lost.
    """

    def __init__(self, jobs: int | None = None, *, preload: tuple[str, ...] = (),
                 on_broken: Callable[[Any, BaseException], Any] | None = None,
                 max_losses: int = 2) -> None:
        self.n_workers = default_jobs() if jobs is None else check_int("jobs", jobs, low=1)
        self.local_disk = True  # workers on this machine: they may write beside the caller
        self._preload = tuple(preload)
        self._on_broken = on_broken
        self.max_losses = check_int("max_losses", max_losses, low=1)
        self._pool: ProcessPoolExecutor | None = None
        self.lost: dict[Any, int] = {}

    def _ensure(self) -> ProcessPoolExecutor:
        if self._pool is None:
            self._pool = ProcessPoolExecutor(max_workers=self.n_workers, initializer=_warm_up,
                                             initargs=(self._preload,))
            # worker processes start at the first submit; objects that exist now move to the
            # permanent generation first, so the workers' garbage collector never walks (and
            # copies) the parent's heap (gc.freeze, Python >= 3.7)
            gc.freeze()
            try:
                self._pool.submit(int)  # starts every worker (and its imports) now
            finally:
                gc.unfreeze()
        return self._pool

    def start(self) -> None:
        """Start the worker processes now (they import `preload` while the caller works on)."""
        self._ensure()

    def imap_unordered(self, fn, items, *, chunksize: int = 1):
        chunksize = check_int("chunksize", chunksize, low=1)
        it = iter(items)
        pending: dict = {}
        suspects: deque = deque()
        solo_losses: dict[Any, int] = {}

        def submit(chunk, solo=False) -> None:
            pool = self._ensure()
            try:
                fut = pool.submit(_run_chunk, fn, chunk)
            except BrokenProcessPool:
                if self._on_broken is None:
                    raise
                # a worker died and the pool knows it before its futures say so: a fresh pool
                # takes this chunk; the old pool's chunks come back as failed and are retried
                self._pool = None
                pool.shutdown(wait=False, cancel_futures=True)
                pool = self._ensure()
                fut = pool.submit(_run_chunk, fn, chunk)
            pending[fut] = (chunk, pool, solo)

        def fill() -> None:
            if suspects:  # one suspect at a time, alone in the pool
                if not pending:
                    submit([suspects.popleft()], solo=True)
                return
            while len(pending) < 2 * self.n_workers:
                chunk = list(itertools.islice(it, chunksize))
                if not chunk:
                    return
                submit(chunk)

        fill()
        while pending:
            done, _ = wait(pending, return_when=FIRST_COMPLETED)
            for fut in done:
                chunk, pool, solo = pending.pop(fut)
                try:
                    results = fut.result()
                except (BrokenProcessPool, CancelledError) as exc:
                    if self._on_broken is None:
                        raise
                    if pool is self._pool:  # replace the broken pool once
                        self._pool = None
                        pool.shutdown(wait=False, cancel_futures=True)
                    results = []
                    for item in chunk:
                        self.lost[item] = self.lost.get(item, 0) + 1
                        if solo:
                            solo_losses[item] = solo_losses.get(item, 0) + 1
                        if solo_losses.get(item, 0) >= self.max_losses:
                            results.append(self._on_broken(item, exc))
                        else:
                            suspects.append(item)
                yield from results
            fill()

    def close(self) -> None:
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
