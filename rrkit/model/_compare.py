"""Within, between and naive pooled slopes of one term side by side."""

from __future__ import annotations

from ..covariates import term_label
from ._fit import ModelSettings, fit
from ._report import _num, outcome_label

__all__ = ["compare_pooled"]


def compare_pooled(table, *, term: str, outcome: str = "ln_rmssd", adjust=(),
                   qualities=("ok",), units: dict | None = None):
    """How a naive pooled regression reads one term, beside the within/between split.

    Fits the squad mixed model ``outcome ~ term_within + term_between (+ adjust, split too)``
    and the naive pooled OLS ``outcome ~ term (+ adjust)`` with classical errors (athletes and
    autocorrelation ignored) on the same days.

    Returns
    -------
    (pandas.DataFrame, list of str, ModelResult)
        Rows ``within``, ``between`` (mixed model) and ``pooled`` (naive OLS) with ``estimate``,
        ``ci_low``, ``ci_high``, ``per_unit`` and ``unit``; plain-language lines; the mixed
        fit (for `write_outputs`).

    Notes
    -----
    A pooled slope is a weighted mix of the within- and between-athlete slopes (Curran PJ,
    Bauer DJ 2011, Annu Rev Psychol 62:583-619): when the two differ it answers neither
    question, and its classical CI ignores that days of one athlete are alike.
    """
    import pandas as pd

    q = None if qualities is None else tuple(qualities)
    mixed = fit(table, settings=ModelSettings(outcome=outcome, terms=(term, *adjust), by="squad",
                                              qualities=q), units=units)
    # the same days for the pooled fit
    days = mixed.data[["subject", "date"]].astype(str)
    keyed = table.assign(_k=table["subject"].astype(str) + "|" + table["date"].astype(str))
    same = keyed[keyed["_k"].isin(days["subject"] + "|" + days["date"])].drop(columns="_k")
    pooled = fit(same, settings=ModelSettings(outcome=outcome, terms=(term, *adjust),
                                              by="pooled", qualities=q), units=units)
    cm = mixed.coefficients
    w = cm[(cm["model"] == "mixed") & (cm["term"] == f"{term}_within")].iloc[0]
    b = cm[(cm["model"] == "mixed") & (cm["term"] == f"{term}_between")].iloc[0]
    p = pooled.coefficients[pooled.coefficients["term"] == term].iloc[0]
    rows = []
    step = w["per_unit"] / w["estimate"] if w["estimate"] else 1.0
    for name, r in (("within", w), ("between", b), ("pooled", p)):
        rows.append({"part": name, "term": r["term"], "estimate": r["estimate"],
                     "ci_low": r["ci_low"], "ci_high": r["ci_high"], "se_type": r["se_type"],
                     "per_step": r["estimate"] * step, "step": w["unit"],
                     "n_days": r["n_days"], "n_athletes": r["n_athletes"]})
    out = pd.DataFrame(rows)
    phrase, _unit = term_label(term, units)
    label = outcome_label(outcome)

    def fmt(r):
        return (f"{_num(r['estimate'] * step)} (95% CI {_num(r['ci_low'] * step)} to "
                f"{_num(r['ci_high'] * step)})")

    lines = [
        f"Within athletes: {label} changes by {fmt(out.iloc[0])} per {w['unit']} of {phrase} "
        "(a day against that athlete's usual day; mixed model).",
        f"Between athletes: {fmt(out.iloc[1])} per {w['unit']} of the athlete's usual value "
        "(athletes compared with each other).",
        f"Naive pooled regression: {fmt(out.iloc[2])} per {w['unit']}, a mix of the two"
        + (" with the wrong sign for the within-athlete question"
           if (out.iloc[2]["estimate"] > 0) != (out.iloc[0]["estimate"] > 0) else "")
        + ", and a CI that treats every day as independent.",
    ]
    return out, lines, mixed
