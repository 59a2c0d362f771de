"""`make_executor`: the executor a batch command asked for (process pool or Dask cluster)."""

from __future__ import annotations

from collections.abc import Callable
from typing import Any

from ._dask import DaskExecutor
from ._executor import Executor, LocalExecutor

__all__ = ["make_executor"]


def make_executor(jobs: int | None = None, cluster: str | None = None, *,
                  preload: tuple[str, ...] = (),
                  on_broken: Callable[[Any, BaseException], Any] | None = None) -> Executor:
    """The executor a batch command asked for: a process pool, or a Dask cluster.

    Parameters
    ----------
    jobs : int, optional
        Worker processes (pool, or local Dask cluster); default all cores.
    cluster : str, optional
        None: a `LocalExecutor`. ``"local-dask"``: a `rrkit.batch.DaskExecutor` on a new
        `distributed.LocalCluster` of ``jobs`` workers. ``tcp://host:port`` (or any address Dask
        accepts): a `DaskExecutor` connected to that scheduler.
    preload, on_broken
        Passed to the executor.
    """
    if cluster is None:
        return LocalExecutor(jobs, preload=preload, on_broken=on_broken)
    return DaskExecutor(cluster, n_workers=jobs, preload=preload, on_broken=on_broken)
