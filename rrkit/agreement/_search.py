"""The search for the reference definition a device resembles, and its ranking.

`search_definitions` computes every definition under every cleaning setting for the same nights
(`rrkit.agreement._reference`), compares each with the device's reported values
(`rrkit.agreement`) and ranks them.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..errors import InputError
from ..recording import Recording
from . import _stats
from ._core import agreement
from ._reference import (
    CLEANINGS,
    REFERENCE_DEFINITIONS,
    as_cleaning,
    as_definition,
    reference_grid,
)

__all__ = ["DefinitionSearch", "search_definitions"]


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
        from ._text import CAUTION

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


    if not isinstance(reported, pd.DataFrame):
        raise InputError(f"reported must be a table (subject, date, {metric}); got "
                         f"{type(reported).__name__}")
    if metric not in reported.columns:
        raise InputError(f"the reported table has no column {metric!r}; columns: "
                         f"{list(reported.columns)}", hint="pass metric=... to match it")
    defs = [as_definition(d) for d in (definitions if definitions is not None
                                     else list(REFERENCE_DEFINITIONS))]
    names = [d.name for d in defs]
    if len(set(names)) != len(names):
        raise InputError(f"definition names must be unique; got {names}")
    cls = [as_cleaning(c) for c in (cleanings if cleanings is not None else list(CLEANINGS))]
    if not defs or not cls:
        raise InputError("give at least one definition and one cleaning")
    grid = reference_grid(nights, defs, cls, metric, progress=progress, executor=executor)
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
