"""The Dask worker plugin of `rrkit.batch.DaskExecutor` (imported only with Dask in use)."""

from __future__ import annotations

from distributed import WorkerPlugin

from ._preload import import_all

__all__ = ["Preload"]


class Preload(WorkerPlugin):
    """Imports rrkit's stage modules on every worker (also on one that joins or restarts)."""

    def __init__(self, modules: tuple[str, ...]) -> None:
        self.modules = tuple(modules)

    def setup(self, worker) -> None:
        import_all(self.modules)
