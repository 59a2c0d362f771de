"""Imports a batch worker makes once when it starts (process-pool and Dask workers alike)."""

from __future__ import annotations

__all__ = ["import_all"]


def import_all(modules: tuple[str, ...]) -> None:
    """Import the heavy modules once per worker, not once per task."""
    import importlib

    for name in modules:
        importlib.import_module(name)
