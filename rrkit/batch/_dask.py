"""`DaskExecutor`: the batch executor on a Dask distributed cluster (extra ``rrkit[dask]``).

Dask is imported only when a `DaskExecutor` starts, so ``import rrkit`` never imports it.

Each chunk of items is one Dask task. The workers run ``fn`` on the items themselves (for
rrkit's batch stages: they read the files from paths they can reach) and send back only the
results. Faults:

* a worker that dies mid-task: the scheduler runs its tasks again on another worker; the
  executor records, per item, how many times that happened (``lost``, from the scheduler's
  ``remove-worker`` events);
* a task that has killed more workers than the scheduler allows
  (``distributed.scheduler.allowed-failures``; a `LocalCluster` started here allows
  ``max_losses - 1``): a chunk of several items is split and its items are run one per task, so
  only the item that kills its workers every time ends with ``on_broken(item, exc)``;
* a scheduler that cannot be reached: `rrkit.errors.InputError` (one line on the command line).
"""

from __future__ import annotations

import contextlib
import itertools
import logging
import threading
import uuid
from collections.abc import Callable
from typing import Any

from .._validation import check_int
from ..errors import InputError
from ._executor import _run_chunk, default_jobs

__all__ = ["LOCAL_DASK", "DaskExecutor"]

#: Seconds to wait for a scheduler before giving up (the default of `DaskExecutor`).
CONNECT_TIMEOUT_S = 10.0
#: The ``--cluster`` value that starts a `distributed.LocalCluster` on this machine.
LOCAL_DASK = "local-dask"
log = logging.getLogger("rrkit")


class DaskExecutor:
    """Runs the per-item work on a Dask distributed cluster.

    Parameters
    ----------
    address : str, optional
        Scheduler address (``tcp://host:8786``). None (or ``"local-dask"``): start a
        `distributed.LocalCluster` on this machine, one single-threaded worker process per core.
    n_workers : int, optional
        Worker processes of the local cluster (default all cores); ignored with an address.
    preload : tuple of str
        Modules every worker imports before its first task.
    on_broken : callable, optional
        ``on_broken(item, exc) -> result`` for an item whose task killed its workers every
        time; default re-raises the scheduler's ``KilledWorker``.
    max_losses : int
        Worker deaths a task of the local cluster may cause before it is given up (default 2);
        a remote scheduler uses its own ``allowed-failures`` setting (Dask's default 3 allows
        4 deaths).
    connect_timeout_s : float, optional
        How long to try to reach the scheduler (default `CONNECT_TIMEOUT_S`).
    memory_limit : str or float
        Memory limit of each local worker (Dask's syntax; default ``"auto"``, a share of this
        machine's memory).

    Attributes
    ----------
    lost : dict
        Item -> number of worker deaths while its task was running or assigned (the items that
        were retried).
    n_workers : int
        Worker threads of the cluster (known once connected; an estimate before).
    """

    def __init__(self, address: str | None = None, *, n_workers: int | None = None,
                 preload: tuple[str, ...] = (),
                 on_broken: Callable[[Any, BaseException], Any] | None = None,
                 max_losses: int = 2, connect_timeout_s: float | None = None,
                 memory_limit: str | float = "auto") -> None:
        self.address = None if address in (None, LOCAL_DASK) else str(address)
        self._local_workers = (default_jobs() if n_workers is None
                               else check_int("n_workers", n_workers, low=1))
        self.n_workers = self._local_workers
        self.max_losses = check_int("max_losses", max_losses, low=1)
        self._preload = tuple(preload)
        self._on_broken = on_broken
        self._timeout = float(CONNECT_TIMEOUT_S if connect_timeout_s is None
                              else connect_timeout_s)
        self._memory_limit = memory_limit
        self._cluster = None
        self._client = None
        self._starting: threading.Thread | None = None
        self._start_error: BaseException | None = None
        self._lost_keys: dict[str, int] = {}
        self._lock = threading.Lock()
        self._tag = uuid.uuid4().hex[:8]
        self._counter = itertools.count()
        self.lost: dict[Any, int] = {}

    # -------------------------------------------------------------- connection
    def _connect(self) -> None:
        try:
            import dask
            from distributed import Client, LocalCluster
        except ImportError:
            raise InputError("running on a Dask cluster needs Dask distributed, which is not "
                             "installed", hint='pip install "rrkit[dask]"') from None

        if self.address is None:
            with dask.config.set({"distributed.scheduler.allowed-failures": self.max_losses - 1,
                                  "distributed.worker.daemon": False}):
                self._cluster = LocalCluster(n_workers=self._local_workers, threads_per_worker=1,
                                             processes=True, dashboard_address=None,
                                             host="127.0.0.1", scheduler_port=0,
                                             memory_limit=self._memory_limit,
                                             silence_logs=logging.ERROR,
                                             # no dashboard; the scheduler's small HTTP server
                                             # on a free loopback port, never a fixed one
                                             scheduler_kwargs={
                                                 "dashboard_address": "127.0.0.1:0"})
            self._client = Client(self._cluster, timeout=self._timeout)
        else:
            try:
                self._client = Client(self.address, timeout=self._timeout)
            except (OSError, TimeoutError, ValueError) as exc:
                raise InputError(f"cannot reach the Dask scheduler at {self.address}: "
                                 f"{' '.join(str(exc).split())}",
                                 hint="start it with 'dask scheduler' (see docs/cluster.md), "
                                      "check the address and port, or use --cluster "
                                      "local-dask") from None
        self._client.subscribe_topic("all", self._on_event)
        n = sum(self._client.nthreads().values())
        self.n_workers = max(1, n)
        if self._preload:
            from ._dask_plugin import Preload

            self._client.register_plugin(Preload(self._preload), name="rrkit-preload")

    def _on_event(self, event) -> None:
        _, msg = event
        if isinstance(msg, dict) and msg.get("action") == "remove-worker" \
                and not msg.get("expected"):
            with self._lock:
                for key in msg.get("processing-tasks", ()):
                    self._lost_keys[str(key)] = self._lost_keys.get(str(key), 0) + 1

    def _run_start(self) -> None:
        try:
            self._connect()
        except BaseException as exc:  # handed to the caller by _ensure
            self._start_error = exc

    def start(self) -> None:
        """Start (or connect to) the cluster in the background; `imap_unordered` waits for it."""
        if self._client is None and self._starting is None:
            self._starting = threading.Thread(target=self._run_start, name="rrkit-dask-start",
                                              daemon=True)
            self._starting.start()

    def _ensure(self):
        if self._client is None:
            if self._starting is None:
                self._connect()
            else:
                self._starting.join()
                self._starting = None
                if self._start_error is not None:
                    exc, self._start_error = self._start_error, None
                    raise exc
        return self._client

    # -------------------------------------------------------------- work
    def imap_unordered(self, fn, items, *, chunksize: int = 1):
        from distributed import as_completed
        from distributed.scheduler import KilledWorker

        chunksize = check_int("chunksize", chunksize, low=1)
        client = self._ensure()
        it = iter(items)
        chunks: dict[str, list] = {}
        ac = as_completed()
        limit = 2 * self.n_workers + 2
        suspects: list = []

        def submit(chunk) -> None:
            key = f"rrkit-{self._tag}-{next(self._counter)}"
            chunks[key] = chunk
            ac.add(client.submit(_run_chunk, fn, chunk, key=key, pure=False))

        def fill() -> None:
            while len(chunks) < limit:
                chunk = list(itertools.islice(it, chunksize))
                if not chunk:
                    return
                submit(chunk)

        fill()
        for fut in ac:
            chunk = chunks.pop(fut.key)
            with self._lock:
                n_lost = self._lost_keys.pop(str(fut.key), 0)
            if n_lost:
                for item in chunk:
                    self.lost[item] = self.lost.get(item, 0) + n_lost
            if fut.status == "finished":
                results = fut.result()
                fut.release()
                yield from results
            else:
                exc = fut.exception()
                fut.release()
                if exc is not None and not isinstance(exc, KilledWorker):
                    raise exc
                # KilledWorker, or a future the cluster lost or cancelled with its worker
                if len(chunk) > 1:  # find the one item that kills its workers
                    for item in chunk:
                        submit([item])
                else:  # guilty, or only queued on a worker that another item killed
                    suspects.append(chunk[0])
            fill()
        # each suspect alone on the cluster: only an item that kills its worker with nothing
        # else running is given up (an innocent one queued beside it is never blamed)
        for item in suspects:
            key = f"rrkit-{self._tag}-{next(self._counter)}"
            fut = client.submit(_run_chunk, fn, [item], key=key, pure=False)
            try:
                results = fut.result()
            except KilledWorker as exc:
                if self._on_broken is None:
                    raise
                yield self._on_broken(item, exc)
            else:
                yield from results
            finally:
                with self._lock:
                    n_lost = self._lost_keys.pop(key, 0)
                if n_lost:
                    self.lost[item] = self.lost.get(item, 0) + n_lost
                fut.release()

    def close(self) -> None:
        if self._starting is not None:
            self._starting.join()
            self._starting = None
        if self._client is not None:
            with contextlib.suppress(Exception):
                self._client.unsubscribe_topic("all")
            self._client.close()
            self._client = None
        if self._cluster is not None:
            self._cluster.close()
            self._cluster = None

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()
