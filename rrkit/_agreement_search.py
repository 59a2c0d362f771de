"""Reference values from raw nights, and the search for the definition a device resembles.

A *reference definition* says which part of a night a nightly value is computed on and how the
per-window values are combined: the whole night, the mean over consecutive 5-minute windows, the
last hours before waking, a fixed clock window, or the windows with the lowest heart rate. The
windows come from `rrkit.windows`, the cleaning from `rrkit.clean`, the values from
`rrkit.metrics`; this module only combines them.

`search_definitions` computes every definition under every cleaning setting for the same nights,
compares each with the device's reported values (`rrkit.agreement`) and ranks them.
"""

from __future__ import annotations

import functools
import logging
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from datetime import date
from typing import Any

import numpy as np

from ._validation import check_int, check_option
from .errors import InputError
from .recording import Recording

__all__ = [
    "CLEANINGS",
    "REFERENCE_DEFINITIONS",
    "DefinitionSearch",
    "ReferenceDefinition",
    "night_date",
    "reference_table",
    "search_definitions",
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
        from .windows import parse_window

        check_option("aggregate", self.aggregate, _AGGREGATES)
        check_int("n_lowest", self.n_lowest, low=1)
        if isinstance(self.windows, str):
            object.__setattr__(self, "windows", parse_window(self.windows))


def _builtin_definitions() -> dict[str, ReferenceDefinition]:
    from .windows import BeforeEnd, ClockTime, Sliding, Whole

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


def _definition(value) -> ReferenceDefinition:
    if isinstance(value, ReferenceDefinition):
        return value
    if isinstance(value, str):
        check_option("definition", value, list(REFERENCE_DEFINITIONS))
        return REFERENCE_DEFINITIONS[value]
    raise InputError(f"definition must be a name or a ReferenceDefinition; got "
                     f"{type(value).__name__}", hint=f"names: {list(REFERENCE_DEFINITIONS)}")


def _cleaning(value) -> tuple[str, dict[str, Any]]:
    """(label, keyword arguments of rrkit.clean) of a cleaning choice."""
    from .clean import METHODS, CleanSettings

    if value is None:
        return "none", {"method": "none"}
    if isinstance(value, str):
        if value in CLEANINGS:
            return value, dict(CLEANINGS[value])
        check_option("clean", value, list(CLEANINGS) + [m for m in METHODS if m not in CLEANINGS])
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
    from .metrics import FREQUENCY_KEYS, NONLINEAR_KEYS, TIME_KEYS

    if metric in TIME_KEYS:
        return ("time",)
    if metric in FREQUENCY_KEYS:
        return ("time", "frequency")
    if metric in NONLINEAR_KEYS:
        return ("time", "nonlinear")
    raise InputError(f"metric must be a key of rrkit.metrics; got {metric!r}",
                     hint="for example 'rmssd_ms', 'ln_rmssd', 'mean_hr_bpm', 'hf_ms2'")


def _window_values(cr, spec, metric: str, domains) -> list[tuple[float, float, str]]:
    """(metric, mean heart rate in bpm, quality) of every window of ``spec`` in a night."""
    from .metrics import metrics
    from .windows import resolve_windows

    out = []
    for win in resolve_windows(spec, cr.input, clean_result=cr):
        part = cr.window(win.start_s, win.end_s)
        m = metrics(part, domains=domains)
        out.append((float(m[metric]), float(m["mean_hr_bpm"]), str(part.summary.quality)))
    return out


def _aggregate(d: ReferenceDefinition, values) -> tuple[float, int, str]:
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


def _reference_grid(recordings, definitions, cleanings, metric: str, *, progress=None,
                    executor=None):
    """Long table: one row per night x definition x cleaning."""
    import pandas as pd


    domains = _domains_for(metric)
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
                            metric=metric, domains=domains)
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


def _progress_bar(total: int, progress):
    from tqdm.auto import tqdm

    disable = None if progress is None else not progress  # None: only on a terminal
    return tqdm(total=total, desc="nights", unit="night", disable=disable, leave=False)


def _night_rows(rec, *, definitions, cleanings, metric: str, domains) -> list[dict]:
    """The reference rows of one night (every definition x cleaning); run by a batch worker."""
    from .clean import clean as run_clean

    rows = []
    subject, day = str(rec.subject), night_date(rec).isoformat()
    for clabel, kwargs in cleanings:
        cr = run_clean(rec, **kwargs)
        cache: dict[str, list] = {}
        for d in definitions:
            ckey = repr(d.windows)
            if ckey not in cache:
                cache[ckey] = _window_values(cr, d.windows, metric, domains)
            value, used, note = _aggregate(d, cache[ckey])
            rows.append({"subject": subject, "date": day, "source": rec.source,
                         "definition": d.name, "cleaning": clabel, metric: value,
                         "n_windows": used, "note": note})
    return rows


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
    d = _definition(definition)
    c = _cleaning(clean)
    return _reference_grid(nights, [d], [c], metric, progress=progress,
                           executor=executor).reset_index(drop=True)


@dataclass(frozen=True, slots=True, eq=False)
class DefinitionSearch:
    """Result of `search_definitions`.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per definition x cleaning, best first: ``rank``, ``definition``, ``cleaning``,
        ``n``, ``sd_diff`` (the ranking criterion), ``sd_ratio_to_best``, ``p_vs_best``
        (Pitman-Morgan test of equal SDs of differences against the best, on common pairs),
        ``bias`` with its CI, the limits, ``residual_sd`` (SD of the reported values around
        their least-squares line on the reference: what is left after a linear recalibration),
        ``ccc``, ``icc``, ``pearson_r``, ``mae``, ``description``.
    results : Mapping[(str, str), AgreementResult]
        The full agreement result of every combination.
    reference : pandas.DataFrame
        Every night's reference value under every combination (long format).
    metric : str
    ratio : bool
    """

    table: Any
    results: Mapping[tuple[str, str], Any]
    reference: Any
    metric: str
    ratio: bool = False
    notes: tuple[str, ...] = field(default=())

    @property
    def best(self) -> tuple[str, str]:
        """(definition, cleaning) that the reported values resemble most."""
        row = self.table.iloc[0]
        return str(row["definition"]), str(row["cleaning"])

    @property
    def runner_up(self) -> tuple[str, str] | None:
        """The best-ranked combination with a *different definition* from the best."""
        rest = self.table[(self.table["definition"] != self.best[0]) & self.table["rank"].notna()]
        if rest.empty:
            return None
        row = rest.iloc[0]
        return str(row["definition"]), str(row["cleaning"])

    def summary_text(self) -> str:
        """Readable verdict: the closest definition, by how much, and the top of the table."""
        from ._agreement_text import CAUTION

        t = self.table
        best = t.iloc[0]
        unit = "log ratio" if self.ratio else (self.results[self.best].unit or "")
        lines = [f"Which reference definition do the reported {self.metric} values resemble?",
                 "Ranked by the SD of the differences (reported - reference), the part of the "
                 "disagreement that no constant offset removes; bias is reported beside it.", ""]
        lines.append(f"Closest: {best['definition']} with cleaning {best['cleaning']} "
                     f"(SD of differences {best['sd_diff']:.3g} {unit}, bias {best['bias']:.3g}, "
                     f"n = {int(best['n'])}).")
        ru = self.runner_up
        if ru is not None:
            row = t[(t["definition"] == ru[0]) & (t["cleaning"] == ru[1])].iloc[0]
            p = row["p_vs_best"]
            lines.append(f"Next definition: {ru[0]} with cleaning {ru[1]} (SD "
                         f"{row['sd_diff']:.3g} {unit}, {row['sd_ratio_to_best']:.2f} times the "
                         f"best; Pitman-Morgan p = {p:.2g} for equal SDs).")
            if np.isfinite(p) and p >= 0.05:
                lines.append("The two are not clearly distinguishable with these nights: more "
                             "nights, or nights that differ more, would be needed.")
        ranked = t[t["rank"].notna()]
        if len(ranked) and ranked["residual_sd"].notna().any():
            alt = ranked.loc[ranked["residual_sd"].idxmin()]
            if alt["definition"] != best["definition"]:
                lines.append(f"Allowing a linear recalibration (a proportional error), "
                             f"{alt['definition']} with cleaning {alt['cleaning']} would be closest"
                             f" (residual SD {alt['residual_sd']:.3g} {unit} against "
                             f"{best['residual_sd']:.3g}).")
        lines.append("")
        cols = ["rank", "definition", "cleaning", "n", "sd_diff", "sd_ratio_to_best", "bias",
                "loa_low", "loa_high", "ccc"]
        lines.append(t[cols].head(12).to_string(index=False, float_format=lambda v: f"{v:.3g}"))
        if self.notes:
            lines.append("")
            lines.append("Notes")
            lines.extend(f"  - {n}" for n in self.notes)
        lines.append("")
        lines.append(CAUTION)
        return "\n".join(lines) + "\n"


def _residual_sd(reported: np.ndarray, reference: np.ndarray) -> float:
    """SD of the reported values around their least-squares line on the reference (n - 2 df)."""
    if reported.size < 3 or np.ptp(reference) == 0:
        return math.nan
    slope, intercept = np.polyfit(reference, reported, 1)
    resid = reported - (intercept + slope * reference)
    return float(np.sqrt(np.sum(resid**2) / (reported.size - 2)))


def _identical_definitions(grid, metric: str) -> list[tuple[str, str]]:
    """Pairs of definitions whose values agree on every night under every cleaning."""
    wide = grid.pivot_table(index=["subject", "date", "cleaning"], columns="definition",
                            values=metric, aggfunc="first", dropna=False)
    names = list(dict.fromkeys(grid["definition"]))
    out = []
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            x, y = wide[a].to_numpy(), wide[b].to_numpy()
            ok = np.isfinite(x) & np.isfinite(y)
            if ok.sum() >= 3 and np.array_equal(np.isfinite(x), np.isfinite(y)) and \
                    np.allclose(x[ok], y[ok], rtol=1e-12, atol=0.0):
                out.append((a, b))
    return out


def search_definitions(
    reported,
    nights: Sequence[Recording],
    *,
    metric: str = "rmssd_ms",
    definitions=None,
    cleanings=None,
    ratio: bool = False,
    multiplier: float = 1.96,
    min_coverage: float = 0.8,
    progress: bool | None = None,
    executor=None,
) -> DefinitionSearch:
    """Rank reference definitions x cleaning settings by their agreement with reported values.

    Parameters
    ----------
    reported : pandas.DataFrame
        The device's nightly values: ``subject``, ``date`` and the ``metric`` column.
    nights : sequence of Recording
        The raw nights (``subject`` and ``start`` set), filed by `night_date`.
    metric : str
        Key of `rrkit.metrics` that the device reports (default ``"rmssd_ms"``).
    definitions : sequence of str or ReferenceDefinition, optional
        Default: all of `REFERENCE_DEFINITIONS`.
    cleanings : sequence, optional
        Cleaning choices as `reference_table` takes them; default all of `CLEANINGS`.
    ratio : bool
        Compare on the log scale (ratios), see `rrkit.agreement`.
    multiplier : float
        Limits of agreement at ``bias ± multiplier × SD``.
    min_coverage : float
        A combination is ranked only when it pairs at least this share of the largest number
        of pairs any combination reaches (definitions that miss many nights, such as a clock
        window outside short nights, are listed unranked). Default 0.8.
    progress : bool, optional
        Progress bar; default only on a terminal.
    executor : rrkit.batch.Executor, optional
        Where the per-night computations run (default: in this process).

    Returns
    -------
    DefinitionSearch

    Notes
    -----
    The ranking criterion is the SD of the differences (on the log scale when ``ratio``):
    smallest first, ties broken by the larger CCC. The SD measures how well a definition tracks
    the reported values night by night whatever the device's constant offset, which is reported
    separately as the bias. How much closer the best is than another combination is given as
    the ratio of SDs and as the p-value of the Pitman-Morgan test of equal variances of paired
    differences (Pitman 1939, Biometrika 31:9-12; Morgan 1939, Biometrika 31:13-19).
    A device with a proportional error (reported = a × value + b, a ≠ 1) inflates the SD of
    differences by the spread of the values; ``residual_sd`` allows for it, and the summary
    says when ranking by it would pick another definition.
    """
    import pandas as pd

    from . import _agreement_stats as _stats
    from .agreement import agreement

    if not isinstance(reported, pd.DataFrame):
        raise InputError(f"reported must be a table (subject, date, {metric}); got "
                         f"{type(reported).__name__}")
    if metric not in reported.columns:
        raise InputError(f"the reported table has no column {metric!r}; columns: "
                         f"{list(reported.columns)}", hint="pass metric=... to match it")
    defs = [_definition(d) for d in (definitions if definitions is not None
                                     else list(REFERENCE_DEFINITIONS))]
    names = [d.name for d in defs]
    if len(set(names)) != len(names):
        raise InputError(f"definition names must be unique; got {names}")
    cls = [_cleaning(c) for c in (cleanings if cleanings is not None else list(CLEANINGS))]
    if not defs or not cls:
        raise InputError("give at least one definition and one cleaning")
    grid = _reference_grid(nights, defs, cls, metric, progress=progress, executor=executor)
    notes: list[str] = []
    results: dict[tuple[str, str], Any] = {}
    rows = []
    desc = {d.name: d.description for d in defs}
    for d in defs:
        for clabel, _kw in cls:
            ref = grid[(grid["definition"] == d.name) & (grid["cleaning"] == clabel)]
            try:
                res = agreement(reported[["subject", "date", metric]],
                                ref[["subject", "date", metric]], value=metric, ratio=ratio,
                                multiplier=multiplier)
            except InputError as exc:
                notes.append(f"{d.name} / {clabel}: not compared ({exc})")
                continue
            results[(d.name, clabel)] = res
            s = res.stats
            rep, ref_v = res.pairs["reported"].to_numpy(), res.pairs["reference"].to_numpy()
            if ratio:
                rep, ref_v = np.log(rep), np.log(ref_v)
            rows.append({"definition": d.name, "cleaning": clabel, "n": int(s["n"]),
                         "sd_diff": s["sd_diff"], "bias": s["bias"],
                         "bias_ci_low": s["bias_ci_low"], "bias_ci_high": s["bias_ci_high"],
                         "loa_low": s["loa_low"], "loa_high": s["loa_high"],
                         "residual_sd": _residual_sd(rep, ref_v), "ccc": s["ccc"],
                         "icc": s["icc"], "pearson_r": s["pearson_r"], "mae": s["mae"],
                         "description": desc[d.name]})
    if not rows:
        raise InputError("no definition could be compared with the reported values",
                         hint="; ".join(notes[:3]))
    table = pd.DataFrame(rows)
    n_max = int(table["n"].max())
    rankable = table["n"] >= max(3, math.ceil(min_coverage * n_max))
    for row in table[~rankable].itertuples():
        notes.append(f"{row.definition} / {row.cleaning}: only {row.n} of up to {n_max} nights "
                     "paired; not ranked")
    table["_ccc"] = -table["ccc"].fillna(-np.inf)
    table = pd.concat([table[rankable].sort_values(["sd_diff", "_ccc"], kind="stable"),
                       table[~rankable]]).drop(columns="_ccc").reset_index(drop=True)
    table.insert(0, "rank", pd.array([i + 1 if ok else pd.NA for i, ok in
                                      enumerate(table["n"] >= max(3, math.ceil(
                                          min_coverage * n_max)))], dtype="Int64"))
    best = results[(table.loc[0, "definition"], table.loc[0, "cleaning"])]
    base = best.pairs.set_index(["subject", "date"])["diff"]
    ratios, pvals = [], []
    for row in table.itertuples():
        other = results[(row.definition, row.cleaning)].pairs.set_index(["subject", "date"])
        common = base.index.intersection(other.index)
        ratios.append(row.sd_diff / table.loc[0, "sd_diff"] if table.loc[0, "sd_diff"] > 0
                      else np.nan)
        if row.Index == 0:
            pvals.append(np.nan)
        else:
            pvals.append(_stats.pitman_morgan(base.loc[common].to_numpy(),
                                              other["diff"].loc[common].to_numpy()))
    table.insert(table.columns.get_loc("sd_diff") + 1, "sd_ratio_to_best", ratios)
    table.insert(table.columns.get_loc("sd_ratio_to_best") + 1, "p_vs_best", pvals)
    same = _identical_definitions(grid, metric)
    for a, b in same:
        notes.append(f"{b} gives the same reference values as {a} for these nights")
    if ratio:
        notes.append("compared on the log scale: sd_diff is the SD of log ratios, bias and limits "
                     "are ratios")
    return DefinitionSearch(table=table, results=results, reference=grid, metric=metric,
                            ratio=ratio, notes=tuple(notes))
