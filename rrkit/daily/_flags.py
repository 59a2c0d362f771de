"""Reading a daily table back: runs of flagged days, and premature-beat rates per subject.

These answer the questions a coach asks of a finished run (who is below the band, since when,
how often this season; whose recordings hold frequent premature beats), for the command line
and the library alike.

rrkit is not a medical device and makes no diagnosis: a run of flagged days is a prompt to
look at the data and the context, and frequent premature beats are worth showing to a
clinician.
"""

from __future__ import annotations

import json
import math
import os
from typing import Any

from ..errors import InputError

__all__ = ["flag_runs", "premature_beat_rates", "run_since"]


def flag_runs(table, *, column: str = "below_swc") -> dict[str, list[tuple[str, str]]]:
    """Per subject, the (first, last) dates of each run of consecutive flagged rows.

    Parameters
    ----------
    table : pandas.DataFrame
        A daily table (one row per subject per date, as `rrkit.daily_table` gives).
    column : str
        The boolean flag column (default ``"below_swc"``); a missing value counts as not
        flagged.

    Returns
    -------
    dict
        ``{subject: [(first_date, last_date), ...]}`` with ISO dates, in date order; a subject
        without a flagged day has an empty list.

    Examples
    --------
    >>> import pandas as pd
    >>> t = pd.DataFrame({"subject": ["A"] * 4, "date": ["2026-03-01", "2026-03-02",
    ...                   "2026-03-03", "2026-03-04"], "below_swc": [True, True, False, True]})
    >>> flag_runs(t)
    {'A': [('2026-03-01', '2026-03-02'), ('2026-03-04', '2026-03-04')]}
    """
    for col in ("subject", "date", column):
        if col not in table.columns:
            raise InputError(f"flag_runs needs a {col!r} column; got {list(table.columns)!r}")
    out: dict[str, list[tuple[str, str]]] = {}
    for subject, d in table.sort_values("date").groupby("subject"):
        flags = d[column].fillna(False).astype(bool).to_numpy()
        dates = [str(x) for x in d["date"]]
        runs, start = [], None
        for i, f in enumerate(flags):
            if f and start is None:
                start = i
            if (not f or i == flags.size - 1) and start is not None:
                end = i if f else i - 1
                runs.append((dates[start], dates[end]))
                start = None
        out[str(subject)] = runs
    return out


def run_since(table, subject: str, *, column: str = "below_swc") -> str | None:
    """First date of the run of flagged days that reaches a subject's last date, else None."""
    d = table[table["subject"].astype(str) == str(subject)]
    if not len(d):
        return None
    runs = flag_runs(d, column=column).get(str(subject), [])
    last = str(d["date"].max())
    return runs[-1][0] if runs and runs[-1][1] == last else None


def premature_beat_rates(store: str | os.PathLike[str]) -> dict[str, dict[str, Any]]:
    """Premature beats per hour, per subject, from the cleaning audits in a run's HDF5 store.

    Parameters
    ----------
    store : path-like
        The ``store.h5`` of `rrkit.run_daily`.

    Returns
    -------
    dict
        ``{subject: {"per_hour", "n_files", "n_caution"[, "caution"]}}``: ``per_hour`` is the
        mean over the subject's recordings used in the daily table of the audit's premature
        beats per hour (``CleanSummary.ectopic_per_hour``), ``n_caution`` counts those whose
        whole-recording audit carries the frequent-premature-beats caution (and ``caution`` its
        text). How often an athlete's *mornings* carried the caution is counted from the daily
        table by `rrkit._premature.caution_counts`, the one rule the commands report.
    """
    from ..io.store import read_store_index

    per: dict[str, dict[str, Any]] = {}
    rates: dict[str, list[float]] = {}
    index = read_store_index(store)
    if "used_in_daily" in index.columns:  # the same mornings as the daily table
        index = index[index["used_in_daily"].astype(bool)]
    for row in index.itertuples(index=False):
        summ = json.loads(row.clean_summary) if isinstance(row.clean_summary, str) else {}
        subject = str(row.subject)
        d = per.setdefault(subject, {"n_files": 0, "n_caution": 0})
        rates.setdefault(subject, []).append(float(summ.get("ectopic_per_hour", math.nan)))
        d["n_files"] += 1
        if summ.get("caution"):
            d["n_caution"] += 1
            d["caution"] = summ["caution"]
    for subject, d in per.items():
        known = [r for r in rates[subject] if r == r]
        d["per_hour"] = sum(known) / len(known) if known else math.nan
    return per
