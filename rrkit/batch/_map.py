"""`map_files`: one function over many inputs through an executor, results in input order.

The loop that the many-file commands other than ``rrkit daily`` share (``rrkit analyze`` over
several files, the nights of ``rrkit agree``): one item per task, run by a `LocalExecutor`, a
`DaskExecutor` or in this process, with a progress bar of completed items.
"""

from __future__ import annotations

import functools
import sys
from collections.abc import Callable, Iterable
from typing import Any

from ._choose import make_executor
from ._executor import Executor, InlineExecutor

__all__ = ["map_files"]


def _indexed(fn, pair):
    i, item = pair
    return i, fn(item)


def map_files(fn: Callable[[Any], Any], items: Iterable[Any], *, jobs: int | None = 1,
              cluster: str | None = None, executor: Executor | None = None,
              on_lost: Callable[[Any, BaseException], Any] | None = None,
              progress: bool | None = None, desc: str = "files", unit: str = "file",
              preload: tuple[str, ...] = ()) -> list[Any]:
    """``[fn(item) for item in items]``, computed by an executor.

    Parameters
    ----------
    fn : callable
        A module-level function (it is pickled to the workers); it should return a result
        that says what went wrong rather than raise for a bad item.
    items : iterable
        Picklable items (paths, or small tuples).
    jobs : int, optional
        Worker processes; 1 (the default) with no ``cluster`` runs in this process.
    cluster : str, optional
        A Dask scheduler address or ``"local-dask"`` (see `make_executor`).
    executor : Executor, optional
        Use this executor (not closed here) instead of making one.
    on_lost : callable, optional
        ``on_lost(item, exc) -> result`` for an item whose worker died every time it ran;
        default re-raises.
    progress : bool, optional
        Progress bar of completed items (default: on a terminal, for more than one item).
    desc, unit : str
        Progress bar labels.
    preload : tuple of str
        Modules the workers import when they start.

    Returns
    -------
    list
        The results, in the order of ``items``.
    """
    pairs = list(enumerate(items))
    own = executor is None
    if own:
        if cluster is None and jobs == 1:
            executor = InlineExecutor()
        else:
            broken = None if on_lost is None else (lambda pair, exc: (pair[0],
                                                                       on_lost(pair[1], exc)))
            executor = make_executor(jobs, cluster, preload=preload, on_broken=broken)
    show = progress if progress is not None else (sys.stderr.isatty() and len(pairs) > 1)
    out: list[Any] = [None] * len(pairs)
    bar = None
    try:
        if show:
            from tqdm.auto import tqdm

            bar = tqdm(total=len(pairs), desc=desc, unit=unit, leave=False, file=sys.stderr)
        for i, res in executor.imap_unordered(functools.partial(_indexed, fn), pairs,
                                              chunksize=1):
            out[i] = res
            if bar is not None:
                bar.update(1)
    finally:
        if bar is not None:
            bar.close()
        if own:
            executor.close()
    return out
