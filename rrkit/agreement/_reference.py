"""Reference values from raw nights: which part of a night counts and how windows combine.

A *reference definition* says which part of a night a nightly value is computed on and how the
per-window values are combined: the whole night, the mean over consecutive 5-minute windows, the
last hours before waking, a fixed clock window, or the windows with the lowest heart rate. The
per-window values are rows of the window table (`rrkit.analysis.window_rows`); a definition is
an aggregation over them.
"""

from __future__ import annotations

import functools
import logging
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import date
from typing import Any

import numpy as np

from .._validation import check_int, check_option
from ..errors import InputError
from ..recording import Recording

__all__ = [
    "CLEANINGS",
    "REFERENCE_DEFINITIONS",
    "ReferenceDefinition",
    "aggregate",
    "as_cleaning",
    "as_definition",
    "night_date",
    "reference_grid",
    "reference_table",
    "window_values",
]

log = logging.getLogger("rrkit")

_AGGREGATES = ("mean", "lowest_hr")


@dataclass(frozen=True, slots=True)
class ReferenceDefinition:
    """How one nightly reference value is computed from a night.

    Parameters
    ----------
    name : str
        Short name used in tables (``"tiles-5min"``).
    windows : WindowSpec or str
        The windows (a `rrkit.windows` spec or its text syntax, such as ``"slide:5m"``).
    aggregate : {"mean", "lowest_hr"}
        ``"mean"``: the mean of the metric over the windows (the value itself for one window);
        ``"lowest_hr"``: the mean over the ``n_lowest`` windows with the lowest mean heart rate.
    n_lowest : int
        Windows kept by ``"lowest_hr"`` (default 1).
    skip_flagged : bool
        Leave out windows whose cleaning quality is not ``"ok"`` (too many corrected beats) when
        there is more than one window (default True). A single window is always used and its
        quality reported.
    description : str
        One line for tables and help texts.
    """

    name: str
    windows: Any
    aggregate: str = "mean"
    n_lowest: int = 1
    skip_flagged: bool = True
    description: str = ""

    def __post_init__(self) -> None:
        from ..windows import parse_window

        check_option("aggregate", self.aggregate, _AGGREGATES)
        check_int("n_lowest", self.n_lowest, low=1)
        if isinstance(self.windows, str):
            object.__setattr__(self, "windows", parse_window(self.windows))


def _builtin_definitions() -> dict[str, ReferenceDefinition]:
    from ..windows import BeforeEnd, ClockTime, Sliding, Whole

    five = Sliding(300.0, label="tile")
    defs = [
        ReferenceDefinition("whole-night", Whole(label="night"),
                            description="metric over the whole night, first to last beat"),
        ReferenceDefinition("tiles-5min", five,
                            description="mean over consecutive 5-minute windows (flagged windows "
                                        "left out)"),
        ReferenceDefinition("last-1h", BeforeEnd(3600.0),
                            description="metric over the last hour before the last beat"),
        ReferenceDefinition("last-3h", BeforeEnd(3 * 3600.0),
                            description="metric over the last 3 hours before the last beat"),
        ReferenceDefinition("clock-02-05", ClockTime("02:00", "05:00"),
                            description="metric over 02:00-05:00 local time (the night's zone)"),
        ReferenceDefinition("lowest-hr-5min", five, aggregate="lowest_hr", n_lowest=1,
                            description="the 5-minute window with the lowest mean heart rate"),
        ReferenceDefinition("lowest-hr-30min", five, aggregate="lowest_hr", n_lowest=6,
                            description="mean over the six 5-minute windows with the lowest "
                                        "heart rate"),
    ]
    return {d.name: d for d in defs}


class _LazyDefinitions(Mapping):
    """The built-in definitions, built on first use (keeps `import rrkit` light)."""

    _items: dict[str, ReferenceDefinition] | None = None

    def _d(self) -> dict[str, ReferenceDefinition]:
        if _LazyDefinitions._items is None:
            _LazyDefinitions._items = _builtin_definitions()
        return _LazyDefinitions._items

    def __getitem__(self, key):
        return self._d()[key]

    def __iter__(self):
        return iter(self._d())

    def __len__(self):
        return len(self._d())

    def __repr__(self):
        return f"REFERENCE_DEFINITIONS({list(self)})"


#: The built-in reference definitions by name (see `ReferenceDefinition`).
REFERENCE_DEFINITIONS: Mapping[str, ReferenceDefinition] = _LazyDefinitions()

#: Cleaning settings of the search grid by name: keyword arguments of `rrkit.clean`.
CLEANINGS: Mapping[str, Mapping[str, str]] = {
    "drr": {"method": "drr"},
    "drr-drop": {"method": "drr", "strategy": "drop"},
    "median": {"method": "median"},
    "none": {"method": "none"},
}


def as_definition(value, *, name: str = "definition") -> ReferenceDefinition:
    """A `ReferenceDefinition` from itself or a name of `REFERENCE_DEFINITIONS`.

    Parameters
    ----------
    value : str or ReferenceDefinition
    name : str
        What a message calls the value (``"--definition"`` on the command line).
    """
    if isinstance(value, ReferenceDefinition):
        return value
    if isinstance(value, str):
        check_option(name, value, list(REFERENCE_DEFINITIONS))
        return REFERENCE_DEFINITIONS[value]
    raise InputError(f"definition must be a name or a ReferenceDefinition; got "
                     f"{type(value).__name__}", hint=f"names: {list(REFERENCE_DEFINITIONS)}")


def as_cleaning(value, *, name: str = "clean") -> tuple[str, dict[str, Any]]:
    """(label, keyword arguments of `rrkit.clean`) of a cleaning choice.

    Parameters
    ----------
    value : str, CleanSettings, mapping or None
        A name of `CLEANINGS` or of a method, a `CleanSettings`, keyword arguments of
        `rrkit.clean`, or None (no cleaning).
    name : str
        What a message calls the value (``"--clean"`` on the command line).
    """
    from ..clean import METHODS, CleanSettings

    if value is None:
        return "none", {"method": "none"}
    if isinstance(value, str):
        if value in CLEANINGS:
            return value, dict(CLEANINGS[value])
        check_option(name, value, list(CLEANINGS) + [m for m in METHODS if m not in CLEANINGS])
        return value, {"method": value}
    if isinstance(value, CleanSettings):
        return f"{value.method}/{value.strategy}", {"settings": value}
    if isinstance(value, Mapping):
        return ",".join(f"{k}={v}" for k, v in value.items()) or "default", dict(value)
    raise InputError(f"clean must be a name, a CleanSettings, a mapping or None; got "
                     f"{type(value).__name__}", hint=f"names: {list(CLEANINGS)}")


def night_date(recording: Recording) -> date:
    """The date a night is filed under: the local date of its last beat (the morning of waking).

    Local means the zone of ``recording.start`` (its wall clock when the start is naive).
    """
    end = recording.end_time()
    if end is None:
        raise InputError(f"{recording.source or 'a recording'}: a night needs its absolute start "
                         "time to be given a date", hint="read files with time stamps, or use a "
                         "manifest with a start column")
    return end.date()


def _domains_for(metric: str) -> tuple[str, ...]:
    from ..metrics import FREQUENCY_KEYS, NONLINEAR_KEYS, TIME_KEYS

    if metric in TIME_KEYS:
        return ("time",)
    if metric in FREQUENCY_KEYS:
        return ("time", "frequency")
    if metric in NONLINEAR_KEYS:
        return ("time", "nonlinear")
    raise InputError(f"metric must be a key of rrkit.metrics; got {metric!r}",
                     hint="for example 'rmssd_ms', 'ln_rmssd', 'mean_hr_bpm', 'hf_ms2'")


def window_values(cr, spec, metric: str) -> list[tuple[float, float, str]]:
    """(metric, mean heart rate in bpm, quality) of every window of ``spec`` in a night: the
    rows of the window table (`rrkit.analysis.window_rows`), computed with only the domains
    the metric needs."""
    from ..analysis import window_rows
    from ..metrics import MetricsSettings

    rows = window_rows(cr, windows=spec, settings=MetricsSettings(domains=_domains_for(metric)))
    return [(float(r[metric]), float(r["mean_hr_bpm"]), str(r["quality"])) for r in rows
            if np.isfinite(r["start_s"])]


def aggregate(d: ReferenceDefinition, values) -> tuple[float, int, str]:
    """(value, windows used, note) of one definition from its windows' values."""
    if not values:
        return math.nan, 0, "no window in this night"
    if len(values) > 1 and d.skip_flagged:
        kept = [v for v in values if v[2] == "ok"]
        if not kept:
            return math.nan, 0, f"all {len(values)} windows flagged by the cleaning"
    else:
        kept = list(values)
    kept = [v for v in kept if np.isfinite(v[0]) and np.isfinite(v[1])]
    if not kept:
        return math.nan, 0, "no window with a finite value"
    if d.aggregate == "lowest_hr":
        kept.sort(key=lambda v: v[1])
        kept = kept[:d.n_lowest]
    note = "" if len(values) == 1 or len(kept) == len(values) else \
        f"{len(values) - len(kept)} of {len(values)} windows not used"
    return float(np.mean([v[0] for v in kept])), len(kept), note


def reference_grid(recordings, definitions, cleanings, metric: str, *, progress=None,
                   executor=None):
    """Long table: one row per night x definition x cleaning.

    ``executor`` (an `rrkit.batch` executor) runs the per-night computations elsewhere; the
    rows come back in the order of the nights whichever executor ran them.
    """
    import pandas as pd

    _domains_for(metric)  # an unknown metric is an error before any night is cleaned
    nights = list(recordings)
    if not nights:
        raise InputError("no nights given; expected at least one Recording")
    keys: dict[tuple[str, str], str] = {}
    for i, rec in enumerate(nights):
        if not isinstance(rec, Recording):
            raise InputError(f"nights[{i}] must be a Recording; got {type(rec).__name__}")
        if not rec.subject:
            raise InputError(f"{rec.source or f'nights[{i}]'}: the night has no subject",
                             hint="set subject= when reading, or use a manifest")
        key = (str(rec.subject), night_date(rec).isoformat())
        if key in keys:
            raise InputError(f"{rec.source or f'nights[{i}]'}: subject {key[0]!r} already has a "
                             f"night ending on {key[1]} ({keys[key]}); expected one night per "
                             "subject and date")
        keys[key] = rec.source or f"nights[{i}]"
    one = functools.partial(_night_rows, definitions=definitions, cleanings=cleanings,
                            metric=metric)
    per_night: list = [None] * len(nights)
    bar = _progress_bar(len(nights), progress)
    try:
        if executor is None:
            for i, rec in enumerate(nights):
                per_night[i] = one(rec)
                bar.update(1)
        else:  # an rrkit.batch executor (results come back in any order)
            for i, rows in executor.imap_unordered(functools.partial(_numbered, one),
                                                   list(enumerate(nights)), chunksize=1):
                per_night[i] = rows
                bar.update(1)
    finally:
        bar.close()
    return pd.DataFrame([row for rows in per_night for row in rows])


def _numbered(fn, pair):
    i, item = pair
    return i, fn(item)


def _night_rows(rec, *, definitions, cleanings, metric: str) -> list[dict]:
    """The reference rows of one night (every definition x cleaning); run by a batch worker."""
    from ..clean import clean as run_clean

    rows = []
    subject, day = str(rec.subject), night_date(rec).isoformat()
    for clabel, kwargs in cleanings:
        cr = run_clean(rec, **kwargs)
        cache: dict[str, list] = {}
        for d in definitions:
            ckey = repr(d.windows)
            if ckey not in cache:
                cache[ckey] = window_values(cr, d.windows, metric)
            value, used, note = aggregate(d, cache[ckey])
            rows.append({"subject": subject, "date": day, "source": rec.source,
                         "definition": d.name, "cleaning": clabel, metric: value,
                         "n_windows": used, "note": note})
    return rows


def _progress_bar(total: int, progress):
    from tqdm.auto import tqdm

    disable = None if progress is None else not progress  # None: only on a terminal
    return tqdm(total=total, desc="nights", unit="night", disable=disable, leave=False)


def reference_table(nights: Sequence[Recording], *, definition="whole-night", clean="drr",
                    metric: str = "rmssd_ms", progress: bool | None = None, executor=None):
    """Nightly reference values computed from raw nights with one definition and cleaning.

    Parameters
    ----------
    nights : sequence of Recording
        Whole nights with ``subject`` and ``start`` set (one night per subject and date).
    definition : str or ReferenceDefinition
        A name of `REFERENCE_DEFINITIONS` (default ``"whole-night"``) or a definition object.
    clean : str, CleanSettings, mapping or None
        A name of `CLEANINGS` or of a `rrkit.clean` method, a `CleanSettings`, keyword
        arguments of `rrkit.clean`, or None for no cleaning (default ``"drr"``).
    metric : str
        Key of `rrkit.metrics` (default ``"rmssd_ms"``).
    progress : bool, optional
        Progress bar; default only on a terminal.
    executor : rrkit.batch.Executor, optional
        Where the per-night computations run (default: in this process).

    Returns
    -------
    pandas.DataFrame
        ``subject``, ``date`` (`night_date`: the local date of the last beat), ``source``,
        ``definition``, ``cleaning``, the metric column, ``n_windows`` (windows used) and
        ``note`` (why a value is missing or windows were left out).
    """
    d = as_definition(definition)
    c = as_cleaning(clean)
    return reference_grid(nights, [d], [c], metric, progress=progress,
                          executor=executor).reset_index(drop=True)
