"""The table of a device's reported nightly values (``subject, date, <metric>`` CSV)."""

from __future__ import annotations

import os

from ..errors import InputError

__all__ = ["read_reported"]


def read_reported(path: str | os.PathLike[str], *, metric: str = "rmssd_ms"):
    """Read the reported values: a CSV with ``subject``, ``date`` and the ``metric`` column.

    Parameters
    ----------
    path : path-like
    metric : str
        The value column (a key of `rrkit.metrics`, default ``"rmssd_ms"``).

    Returns
    -------
    pandas.DataFrame
        The table with ``subject`` and ``date`` as text and the metric as float.

    Raises
    ------
    InputError
        Naming the file and line of an unreadable table, a missing column or a value that is
        not a number.
    """
    import pandas as pd

    try:
        table = pd.read_csv(path, dtype={"subject": str, "date": str})
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read the reported values: {exc}", path=path) from None
    needed = ["subject", "date", metric]
    missing = [c for c in needed if c not in table.columns]
    if missing:
        raise InputError(f"missing column(s) {missing}; expected {needed}", path=path, line=1,
                         hint="name the value column with --metric")
    values = pd.to_numeric(table[metric], errors="coerce")
    bad = values.isna() & table[metric].notna()
    if bad.any():
        i = int(bad.to_numpy().nonzero()[0][0])
        raise InputError(f"{metric} is {table[metric].iloc[i]!r}; expected a number", path=path,
                         line=i + 2)
    table[metric] = values
    return table
