"""Fitting: n-of-1 OLS with HAC errors, the squad's mixed model and its cluster-robust check.

All the statistics come from statsmodels (imported inside the functions); this module prepares
the rows, checks the request, and puts the results into one tidy table.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np

from .._version import __version__
from ..covariates import add_terms, parse_term, term_label
from ..errors import InputError

__all__ = ["BY", "SE_TYPES", "ModelResult", "ModelSettings", "fit", "hac_lag_rule", "prepare"]

BY = ("subject", "squad", "pooled")
SE_TYPES = ("hac", "classical")
_COLUMNS = ["model", "subject", "term", "estimate", "ci_low", "ci_high", "se", "se_type", "p",
            "q", "n_days", "n_athletes", "per_unit", "unit", "within_sd", "per_within_sd"]


def hac_lag_rule(n: int) -> int:
    """Newey-West lag length ``floor(4 (n / 100) ** (2 / 9))`` for ``n`` days.

    The rule of thumb of Newey WK, West KD 1994 (Rev Econ Stud 61:631-653) as commonly quoted
    (common practice); it grows slowly with the series: 2 lags up to 27 days, 3 for 28-99,
    4 for 100-272.
    """
    return math.floor(4.0 * (max(int(n), 1) / 100.0) ** (2.0 / 9.0))


@dataclass(frozen=True, slots=True)
class ModelSettings:
    """What was fitted (travels with every result; written to model.json).

    Attributes
    ----------
    outcome : str
        Daily column modelled (default ``ln_rmssd``).
    terms : tuple of str
        Terms on the right-hand side, as requested (before the within/between split).
    by : {"subject", "squad", "pooled"}
        ``subject``: one n-of-1 OLS per athlete; ``squad``: one mixed model over all athletes;
        ``pooled``: one naive OLS over every row with classical errors, athletes ignored (only
        to show what such a fit gets wrong).
    subject : str or None
        Only this athlete (``by="subject"``).
    split : bool
        Squad models: enter each covariate term as ``x_within + x_between`` (Curran & Bauer
        2011). Terms already ending in ``_within``/``_between`` are kept as they are.
    random_slope : str or None
        Squad models: a random slope for this term (after the split, e.g. ``load_au_lag1_within``).
    se : {"hac", "classical"}
        n-of-1 standard errors: Newey-West HAC (default) or classical OLS (for checks).
    hac_lags : int or None
        HAC lag length (None: `hac_lag_rule` of each athlete's number of days).
    qualities : tuple of str or None
        Rows kept by the daily table's ``quality`` column (or ``status``, when the table names it
        so; default only ``ok``); None keeps all. A table with neither column keeps every row.
    """

    outcome: str = "ln_rmssd"
    terms: tuple[str, ...] = ()
    by: str = "subject"
    subject: str | None = None
    split: bool = True
    random_slope: str | None = None
    se: str = "hac"
    hac_lags: int | None = None
    qualities: tuple[str, ...] | None = ("ok",)

    def __post_init__(self) -> None:
        if self.by not in BY:
            raise InputError(f"by must be one of {BY!r}; got {self.by!r}")
        if self.se not in SE_TYPES:
            raise InputError(f"se must be one of {SE_TYPES!r}; got {self.se!r}")
        if self.hac_lags is not None and int(self.hac_lags) < 0:
            raise InputError(f"hac_lags must be >= 0; got {self.hac_lags!r}")

    def as_dict(self) -> dict:
        return {k: (list(v) if isinstance(v, tuple) else v)
                for k, v in ((n, getattr(self, n)) for n in self.__slots__)}


@dataclass(frozen=True)
class ModelResult:
    """A fitted model: the tidy table, the diagnostics and how it was made.

    Attributes
    ----------
    coefficients : pandas.DataFrame
        One row per model x subject x term: ``model`` (``ols_hac``, ``ols``, ``mixed``,
        ``ols_cluster``), ``subject`` (athlete or ``"squad"``), ``term``, ``estimate``,
        ``ci_low``/``ci_high`` (95%), ``se``, ``se_type``, ``p``, ``q`` (Benjamini-Hochberg across
        the non-intercept terms of that fit), ``n_days``, ``n_athletes``, ``per_unit`` (the
        estimate per ``unit`` of the term, the step used in the plain-language line),
        ``unit``, ``within_sd`` (SD of the term within athletes) and ``per_within_sd``
        (estimate x within_sd).
    diagnostics : dict
        Per fit: R^2 / adjusted R^2, Durbin-Watson, Ljung-Box, HAC lags, log-likelihood,
        variance components, warnings raised by the optimiser.
    formula : str
        The model in statsmodels/patsy notation (paste into ``smf.ols`` / ``smf.mixedlm``).
    settings : ModelSettings
    version : str
        rrkit version.
    data : pandas.DataFrame
        The rows used (outcome, terms, subject, date).
    units : dict
        Base variable -> unit.
    """

    coefficients: object
    diagnostics: dict
    formula: str
    settings: ModelSettings
    version: str
    data: object
    units: dict = field(default_factory=dict)
    fits: dict = field(default_factory=dict, repr=False)

    @property
    def terms(self) -> list[str]:
        """The right-hand-side terms after the split."""
        return self.formula.split("~", 1)[1].replace(" ", "").split("+")

    def provenance(self) -> dict:
        """Formula, settings and version, as written to ``model.json``."""
        return {"formula": self.formula, "settings": self.settings.as_dict(),
                "rrkit_version": self.version, "n_rows": len(self.data)}


# ----------------------------------------------------------------------------- preparation
def _expand(terms, *, squad: bool, split: bool) -> list[str]:
    out = []
    for t in terms:
        _base, steps = parse_term(t)
        if squad and split and not (steps and steps[-1][0] in ("within", "between")):
            out += [f"{t}_within", f"{t}_between"]
        else:
            out.append(t)
    return list(dict.fromkeys(out))


def _check_columns(table, names, what: str) -> None:
    cols = set(table.columns)
    for name in names:
        base, steps = parse_term(name)
        if name in cols or (steps and base in cols):
            continue
        shown = [c for c in table.columns if c not in ("subject", "date")]
        raise InputError(f"unknown {what} {name!r}: {base!r} is not a column of the daily table "
                         f"or the covariates (columns: {', '.join(map(str, shown))})",
                         hint="derived terms are a column name plus _lag1, _sum7, _mean7, "
                              "_ewma7, _acwr, _within, _between")


def prepare(table, settings: ModelSettings):
    """Rows and columns a model needs: filtered, derived, complete, checked.

    Returns ``(data, rhs_terms)``. Raises `InputError` for an unknown column, a term without
    variance, or fewer days than parameters, each in one line.
    """
    import pandas as pd

    s = settings
    for k in ("subject", "date"):
        if k not in table.columns:
            raise InputError(f"the daily table needs a {k!r} column; got {list(table.columns)!r}")
    _check_columns(table, [s.outcome], "outcome")
    if not s.terms:
        raise InputError("no terms to model: give at least one term (for example "
                         "load_au_lag1)")
    _check_columns(table, s.terms, "term")
    squad = s.by in ("squad", "pooled")
    rhs = _expand(s.terms, squad=s.by == "squad", split=s.split)
    if s.random_slope is not None and s.random_slope not in rhs:
        raise InputError(f"random slope {s.random_slope!r} is not a term of the model "
                         f"({' + '.join(rhs)})", hint="name one of the model's terms")
    if s.random_slope is not None and s.by != "squad":
        raise InputError("a random slope needs the squad model (by='squad')")
    df = table.copy()
    df["subject"] = df["subject"].astype(str)
    if s.subject is not None:
        df = df[df["subject"] == str(s.subject)]
        if not len(df):
            known = ", ".join(sorted(table["subject"].astype(str).unique()))
            raise InputError(f"subject {s.subject!r} is not in the table (subjects: {known})")
    # time terms on every row (the calendar needs the days around), centring on the used rows
    timed = [t for t in [*rhs, s.outcome] if parse_term(t)[1]
             and parse_term(t)[1][-1][0] not in ("within", "between")]
    inner = [t[: t.rfind("_")] for t in rhs if parse_term(t)[1]
             and parse_term(t)[1][-1][0] in ("within", "between")]
    df = add_terms(df, list(dict.fromkeys(timed + inner)))
    qcol = next((c for c in ("quality", "status") if c in df.columns), None)
    if s.qualities is not None and qcol is not None:
        df = df[df[qcol].astype(str).isin(s.qualities)]
    plain = [s.outcome] + [t for t in rhs if not parse_term(t)[1]
                           or parse_term(t)[1][-1][0] not in ("within", "between")] + inner
    for c in dict.fromkeys(plain):
        df[c] = pd.to_numeric(df[c], errors="coerce")
    complete = np.isfinite(df[list(dict.fromkeys(plain))].to_numpy(dtype=float)).all(axis=1)
    df = df[complete]
    df = add_terms(df, [t for t in rhs if t not in df.columns])
    df = df[["subject", "date", s.outcome, *[c for c in dict.fromkeys(rhs + inner)
                                              if c != s.outcome]]].reset_index(drop=True)
    n_params = len(rhs) + 1
    groups = [("squad", df)] if squad else list(df.groupby("subject", sort=True))
    if not groups:
        raise InputError(f"no days with {s.outcome!r} and every term present"
                         + (f" among quality {list(s.qualities)!r} days" if s.qualities else ""),
                         hint="check the covariate dates against the daily table's dates")
    for name, g in groups:
        who = "the squad" if squad else f"subject {name}"
        if len(g) <= n_params:
            raise InputError(f"{who} has {len(g)} complete days for {n_params} parameters "
                             f"({s.outcome} ~ {' + '.join(rhs)} plus the intercept): a model "
                             "needs more days than parameters", hint="use fewer terms or more "
                             "days; terms with lags or rolling windows lose their first days")
        for t in rhs:
            v = g[t].to_numpy(dtype=float)
            if np.ptp(v) <= 1e-12 * max(1.0, float(np.max(np.abs(v)))):
                raise InputError(f"term {t!r} has no variance in the {len(g)} days used by "
                                 f"{who} (every value {v[0]:g})",
                                 hint="drop the term, or choose days where it varies")
        if s.by == "squad" and g["subject"].nunique() < 2:
            raise InputError(f"the squad model needs at least 2 athletes; found "
                             f"{g['subject'].nunique()}", hint="use by='subject' for one athlete")
        n_between = sum(t.endswith("_between") for t in rhs)
        if s.by == "squad" and n_between + 2 > g["subject"].nunique():
            raise InputError(f"the squad has {g['subject'].nunique()} athletes for "
                             f"{n_between} between-athlete terms plus the intercept and the "
                             "athletes' spread: a mixed model needs at least 2 more athletes "
                             "than between-athlete terms", hint="use fewer terms, or --no-split")
    return df, rhs


def _within_sd(data, term: str) -> float:
    v = data[term].to_numpy(dtype=float)
    dev = v - data.groupby("subject")[term].transform("mean").to_numpy(dtype=float)
    n = v.size - data["subject"].nunique()
    return float(np.sqrt(np.sum(dev ** 2) / n)) if n > 0 else float("nan")


def _between_sd(data, term: str) -> float:
    means = data.groupby("subject")[term].mean().to_numpy(dtype=float)
    return float(np.std(means, ddof=1)) if means.size > 1 else float("nan")


def nice_step(sd: float) -> float:
    """A round step near ``sd`` (1, 2 or 5 x 10^k) for 'per X units' sentences."""
    if not np.isfinite(sd) or sd <= 0:
        return 1.0
    k = math.floor(math.log10(sd))
    cands = [m * 10.0 ** j for j in (k - 1, k, k + 1) for m in (1, 2, 5)]
    return min(cands, key=lambda c: abs(math.log(c / sd)))


# ------------------------------------------------------------------------------------ fits
def _ols_core(formula: str, data, *, se: str, maxlags: int | None):
    """statsmodels OLS from a formula, with HAC (Newey-West) or classical errors."""
    import statsmodels.formula.api as smf

    return ols_errors(smf.ols(formula, data=data), se=se, maxlags=maxlags)


def ols_errors(model, *, se: str, maxlags: int | None):
    """Fit a statsmodels OLS model with rrkit's error settings: classical, or Newey-West HAC
    with `hac_lag_rule` lags (unless given) and statsmodels' small-sample correction."""
    if se == "classical":
        return model.fit()
    lags = hac_lag_rule(int(model.nobs)) if maxlags is None else int(maxlags)
    return model.fit(cov_type="HAC", cov_kwds={"maxlags": lags, "use_correction": True})


def _residual_checks(resid: np.ndarray) -> dict:
    from statsmodels.stats.diagnostic import acorr_ljungbox
    from statsmodels.stats.stattools import durbin_watson

    n = resid.size
    lags = max(1, min(10, n // 5))
    lb = acorr_ljungbox(resid, lags=[lags], return_df=True)
    r1 = float(np.corrcoef(resid[:-1], resid[1:])[0, 1]) if n > 2 else float("nan")
    return {"durbin_watson": float(durbin_watson(resid)), "ljung_box_lags": int(lags),
            "ljung_box_q": float(lb["lb_stat"].iloc[0]),
            "ljung_box_p": float(lb["lb_pvalue"].iloc[0]),
            "residual_lag1_autocorrelation": r1}


def _rows(res, *, model: str, subject: str, se_type: str, data, terms, units, steps) -> list[dict]:
    ci = np.asarray(res.conf_int(alpha=0.05))
    names = list(res.params.index)
    out = []
    for i, name in enumerate(names):
        if name not in ("Intercept", *terms):
            continue  # random-effect rows of a mixed model
        est = float(res.params.iloc[i])
        row = {"model": model, "subject": subject, "term": name, "estimate": est,
               "ci_low": float(ci[i, 0]), "ci_high": float(ci[i, 1]),
               "se": float(res.bse.iloc[i]), "se_type": se_type, "p": float(res.pvalues.iloc[i]),
               "q": np.nan, "n_days": len(data), "n_athletes": int(data["subject"].nunique())}
        if name == "Intercept":
            row.update(per_unit=np.nan, unit="", within_sd=np.nan, per_within_sd=np.nan)
        else:
            _base, chain = parse_term(name)
            between = bool(chain) and chain[-1][0] == "between"
            wsd = np.nan if between else _within_sd(data, name)
            step = steps.get(name, 1.0)
            core = name[: name.rfind("_")] if chain and chain[-1][0] in ("within", "between") \
                else name
            unit = term_label(core, units)[1]
            row.update(per_unit=est * step, unit=_unit_text(step, unit),
                       within_sd=wsd, per_within_sd=est * wsd)
        out.append(row)
    return out


def _unit_text(step: float, unit: str) -> str:
    s = f"{step:g}"
    return f"{s} {unit}".strip() if unit else (f"{s} unit" if s == "1" else f"{s} units")


def _add_q(rows: list[dict]) -> None:
    from ._bh import bh_qvalues

    idx = [i for i, r in enumerate(rows) if r["term"] != "Intercept"]
    if idx:
        q = bh_qvalues([rows[i]["p"] for i in idx])
        for i, v in zip(idx, q, strict=True):
            rows[i]["q"] = float(v)


def _fit_mixed(formula, data, *, random_slope, reml=True):
    import statsmodels.formula.api as smf

    re_formula = f"~{random_slope}" if random_slope else None
    res = None
    for method in (None, "powell", "nm"):  # statsmodels' default chain first, then two others
        with warnings.catch_warnings(record=True) as w:
            warnings.simplefilter("always")
            model = smf.mixedlm(formula, data=data, groups=data["subject"],
                                re_formula=re_formula)
            res = model.fit(reml=reml) if method is None else model.fit(reml=reml,
                                                                        method=method)
        caught = sorted({str(x.message).split("\n")[0] for x in w})
        if np.isfinite(float(res.llf)) and np.all(np.isfinite(np.asarray(res.bse_fe))):
            break
    return res, caught


def residuals(res) -> np.ndarray:
    """Residuals of a fit; for a mixed model whose random-effect variance sits on the boundary
    (zero: the BLUPs are undefined) the marginal residuals, which then equal the conditional."""
    try:
        return np.asarray(res.resid, dtype=float)
    except ValueError:
        exog = np.asarray(res.model.exog, dtype=float)
        return np.asarray(res.model.endog, dtype=float) - exog @ np.asarray(res.fe_params)


def fit(table, *, outcome: str = "ln_rmssd", terms=(), by: str = "subject",
        subject: str | None = None, split: bool = True, random_slope: str | None = None,
        se: str = "hac", hac_lags: int | None = None, qualities=("ok",),
        settings: ModelSettings | None = None, units: dict | None = None) -> ModelResult:
    """Fit the model of ``settings`` to a daily table (already joined with its covariates).

    Parameters
    ----------
    table : pandas.DataFrame
        Daily table rows with ``subject``, ``date``, the outcome and the term columns (base
        columns are enough: derived terms are computed, see `rrkit.covariates`).
    outcome, terms, by, subject, split, random_slope, se, hac_lags, qualities
        What to fit: the fields of `ModelSettings` (see there), used when ``settings`` is not
        given.
    settings : ModelSettings, optional
        What to fit, as one object (the keyword fields above are then ignored).
    units : dict, optional
        Variable -> unit for the output (``CovariateTable.units``).

    Returns
    -------
    ModelResult

    Notes
    -----
    * ``by="subject"`` (n-of-1): ordinary least squares per athlete, standard errors by
      Newey-West HAC (Newey WK, West KD 1987, Econometrica 55:703-708,
      doi:10.2307/1913610) with ``hac_lag_rule(n)`` lags and the small-sample correction,
      t-based CIs; Durbin-Watson (Durbin J, Watson GS 1950, Biometrika 37:409) and Ljung-Box
      (Ljung GM, Box GEP 1978, Biometrika 65:297) on the residuals.
    * ``by="squad"``: a linear mixed model with a random intercept per athlete (optionally a
      random slope for one term) by REML (statsmodels ``MixedLM``; Laird NM, Ware JH 1982,
      Biometrics 38:963), Wald CIs, plus OLS with cluster-robust (by athlete) errors as a
      cross-check. With few athletes (< about 20-30) cluster-robust errors are themselves too
      small: read the cross-check as a check, not as the answer (common practice).
    * Consecutive days are not independent: the mixed model's random intercept absorbs an
      athlete's level but not day-to-day autocorrelation; see its residual lag-1
      autocorrelation in the diagnostics.

    These are associations in observational data, not causes.
    """
    s = settings or ModelSettings(outcome=outcome, terms=tuple(terms), by=by, subject=subject,
                                  split=split, random_slope=random_slope, se=se,
                                  hac_lags=hac_lags,
                                  qualities=None if qualities is None else tuple(qualities))
    data, rhs = prepare(table, s)
    units = dict(units or {})
    formula = f"{s.outcome} ~ {' + '.join(rhs)}"
    steps = {t: nice_step(_between_sd(data, t) if t.endswith("_between") else _within_sd(data, t))
             for t in rhs}
    rows: list[dict] = []
    diags: dict = {}
    fits: dict = {}
    if s.by == "subject":
        se_type = ("HAC (Newey-West)" if s.se == "hac" else "classical OLS")
        for subject, g in data.groupby("subject", sort=True):
            g = g.reset_index(drop=True)
            res = _ols_core(formula, g, se=s.se, maxlags=s.hac_lags)
            lags = (hac_lag_rule(len(g)) if s.hac_lags is None else int(s.hac_lags))
            label = f"{se_type}, {lags} lags" if s.se == "hac" else se_type
            sub_rows = _rows(res, model="ols_hac" if s.se == "hac" else "ols",
                             subject=str(subject), se_type=label, data=g, terms=rhs,
                             units=units, steps=steps)
            _add_q(sub_rows)
            rows += sub_rows
            d = {"model": "ols", "n_days": len(g), "r2": float(res.rsquared),
                 "r2_adj": float(res.rsquared_adj), "residual_sd": float(np.sqrt(res.scale)),
                 "hac_lags": lags if s.se == "hac" else None}
            d.update(_residual_checks(np.asarray(res.resid)))
            diags[str(subject)] = d
            fits[str(subject)] = res
    elif s.by == "pooled":
        import statsmodels.formula.api as smf

        res = smf.ols(formula, data=data).fit()
        rows = _rows(res, model="ols_pooled", subject="squad",
                     se_type="naive pooled OLS (classical)", data=data, terms=rhs, units=units,
                     steps=steps)
        _add_q(rows)
        d = {"model": "ols_pooled", "n_days": len(data), "r2": float(res.rsquared),
             "r2_adj": float(res.rsquared_adj), "residual_sd": float(np.sqrt(res.scale))}
        d.update(_residual_checks(np.asarray(res.resid)))
        diags["squad"] = d
        fits["ols_pooled"] = res
    else:
        res, caught = _fit_mixed(formula, data, random_slope=s.random_slope)
        mixed_rows = _rows(res, model="mixed", subject="squad",
                           se_type="mixed model (REML, Wald)", data=data, terms=rhs,
                           units=units, steps=steps)
        _add_q(mixed_rows)
        import statsmodels.formula.api as smf

        codes = data["subject"].astype("category").cat.codes.to_numpy()
        cl = smf.ols(formula, data=data).fit(cov_type="cluster", cov_kwds={"groups": codes})
        cl_rows = _rows(cl, model="ols_cluster", subject="squad",
                        se_type="cluster-robust OLS (by athlete)", data=data, terms=rhs,
                        units=units, steps=steps)
        _add_q(cl_rows)
        rows += mixed_rows + cl_rows
        resid = residuals(res)
        r1 = []
        for _subj, idx in data.groupby("subject").groups.items():
            r = resid[data.index.get_indexer(idx)]
            if r.size > 3:
                r1.append(float(np.corrcoef(r[:-1], r[1:])[0, 1]))
        cov_re = np.asarray(res.cov_re)
        diags["squad"] = {
            "model": "mixed", "n_days": len(data), "n_athletes": int(data["subject"].nunique()),
            "random_slope": s.random_slope, "log_likelihood_reml": float(res.llf),
            "converged": bool(getattr(res, "converged", True)),
            "random_intercept_sd": float(np.sqrt(cov_re[0, 0])),
            "random_slope_sd": float(np.sqrt(cov_re[1, 1])) if cov_re.shape[0] > 1 else None,
            "residual_sd": float(np.sqrt(res.scale)),
            "mean_residual_lag1_autocorrelation": float(np.mean(r1)) if r1 else None,
            "optimiser_warnings": caught,
            "random_effects_on_boundary": bool(np.min(np.linalg.eigvalsh(cov_re)) <= 1e-10),
            "degenerate": bool(not np.isfinite(float(res.llf))
                               or not np.all(np.isfinite(np.asarray(res.bse_fe)))),
            "cluster_check": {"r2": float(cl.rsquared), "r2_adj": float(cl.rsquared_adj),
                              "n_clusters": int(data["subject"].nunique())},
        }
        fits["mixed"] = res
        fits["ols_cluster"] = cl
    import pandas as pd

    coef = pd.DataFrame(rows, columns=_COLUMNS)
    return ModelResult(coefficients=coef, diagnostics=diags, formula=formula, settings=s,
                       version=__version__, data=data, units=units, fits=fits)
