"""Screening candidate terms one at a time on a base model, with Benjamini-Hochberg q-values."""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ._bh import bh_qvalues
from ._fit import ModelSettings, _expand, _fit_mixed, _ols_core, fit

__all__ = ["bh_qvalues", "screen"]


def screen(table, *, outcome: str = "ln_rmssd", base=(), candidates=(), by: str = "subject",
           subject: str | None = None, split: bool = True, se: str = "hac",
           hac_lags: int | None = None, qualities=("ok",), units: dict | None = None):
    """Add each candidate term alone to a base model and compare.

    Parameters
    ----------
    table : pandas.DataFrame
        Daily table joined with covariates.
    outcome : str
    base : sequence of str
        Adjustment terms kept in every model (may be empty).
    candidates : sequence of str
        Terms tried one at a time.
    by, subject, split, se, hac_lags, qualities, units
        As in `ModelSettings`.

    Returns
    -------
    pandas.DataFrame
        One row per candidate (per athlete for ``by="subject"``): ``candidate``, ``term`` (the
        coefficient reported: the within-athlete part in squad models), ``estimate``,
        ``ci_low``, ``ci_high``, ``se_type``, the comparison (``delta_r2_adj`` for OLS; for the
        mixed model ``lr_stat``, ``lr_df`` of ML fits on the same rows), ``p`` (the candidate's
        Wald p for OLS, the likelihood-ratio p for the mixed model), ``q`` (Benjamini-Hochberg
        across the candidates, within each athlete for ``by="subject"``), ``n_days``.

    Notes
    -----
    Each pair (base, base + candidate) is fitted on the same rows (days complete for both), so
    the comparison is fair; different candidates may use different days. A small q says the
    association is unlikely to be a fluke of screening many candidates; it says nothing about
    cause.
    """
    import pandas as pd
    from scipy import stats

    if not candidates:
        raise InputError("no candidate terms to screen")
    base = tuple(base)
    out = []
    for cand in candidates:
        if cand in base:
            raise InputError(f"candidate {cand!r} is also an adjustment term")
        s = ModelSettings(outcome=outcome, terms=(*base, cand), by=by, subject=subject,
                          split=split, se=se, hac_lags=hac_lags,
                          qualities=None if qualities is None else tuple(qualities))
        full = fit(table, settings=s, units=units)
        data = full.data
        cand_terms = _expand([cand], squad=by == "squad", split=split)
        report = cand_terms[0]
        base_terms = [t for t in full.terms if t not in cand_terms]
        rhs_base = " + ".join(base_terms) if base_terms else "1"
        if by == "subject":
            for subj, g in data.groupby("subject", sort=True):
                g = g.reset_index(drop=True)
                res_b = _ols_core(f"{outcome} ~ {rhs_base}", g, se=se, maxlags=hac_lags)
                row = full.coefficients[(full.coefficients["subject"] == str(subj))
                                        & (full.coefficients["term"] == report)].iloc[0]
                out.append({"subject": str(subj), "candidate": cand, "term": report,
                            "estimate": row["estimate"], "ci_low": row["ci_low"],
                            "ci_high": row["ci_high"], "se_type": row["se_type"],
                            "delta_r2_adj": float(full.fits[str(subj)].rsquared_adj
                                                  - res_b.rsquared_adj),
                            "lr_stat": np.nan, "lr_df": np.nan, "p": row["p"],
                            "n_days": len(g)})
        else:
            res_f, _w1 = _fit_mixed(full.formula, data, random_slope=None, reml=False)
            res_b, _w2 = _fit_mixed(f"{outcome} ~ {rhs_base}", data, random_slope=None,
                                    reml=False)
            lr = max(0.0, 2.0 * (float(res_f.llf) - float(res_b.llf)))
            df = len(cand_terms)
            i = list(res_f.params.index).index(report)
            ci = np.asarray(res_f.conf_int())[i]
            out.append({"subject": "squad", "candidate": cand, "term": report,
                        "estimate": float(res_f.params.iloc[i]), "ci_low": float(ci[0]),
                        "ci_high": float(ci[1]), "se_type": "mixed model (ML, Wald)",
                        "delta_r2_adj": np.nan, "lr_stat": lr, "lr_df": df,
                        "p": float(stats.chi2.sf(lr, df)), "n_days": len(data)})
    table_out = pd.DataFrame(out)
    table_out["q"] = np.nan
    for _subj, idx in table_out.groupby("subject").groups.items():
        table_out.loc[idx, "q"] = bh_qvalues(table_out.loc[idx, "p"].to_numpy(dtype=float))
    return table_out
