"""Numeric engine of the agreement statistics: arrays in, plain floats out (no tables).

Every function takes 1-D float64 arrays that the caller has already validated (finite, equal
lengths) and returns a dict of floats. The public entry point is `rrkit.agreement`, which builds
the pairs, chooses the scale and assembles the result; see its docstring for the references.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "bland_altman",
    "ccc",
    "icc_pingouin",
    "mean_abs",
    "pearson",
    "pitman_morgan",
    "proportional_bias",
    "typical_error",
]


def _t_quantile(confidence: float, df: float) -> float:
    from scipy import stats as _st

    return float(_st.t.ppf(0.5 + confidence / 2.0, df))


def _z_quantile(confidence: float) -> float:
    from scipy import stats as _st

    return float(_st.norm.ppf(0.5 + confidence / 2.0))


def bland_altman(diff: np.ndarray, *, multiplier: float, confidence: float,
                 groups: np.ndarray | None = None) -> dict[str, float]:
    """Bias, SD of differences and limits of agreement with confidence intervals.

    Independent pairs (``groups`` None, or every group holding one pair) follow Bland & Altman
    1986: SE of the bias ``s/sqrt(n)``, SE of a limit ``sqrt(3 s^2 / n)``, both with ``t(n-1)``;
    the SD's interval is the chi-square one on n - 1 degrees of freedom.

    Repeated pairs per subject follow Bland & Altman 2007 (true value varying within subject):
    a one-way analysis of variance of the differences by subject gives the within-subject
    variance ``s_w^2 = MSW`` and the between-subject component ``s_b^2 = (MSB - MSW) / m0``
    (0 when negative), with ``m0 = (N - sum m_i^2 / N) / (k - 1)``; the SD of a single difference
    is ``sqrt(s_b^2 + s_w^2)``. The bias is the mean of all differences with variance
    ``s_b^2 sum m_i^2 / N^2 + s_w^2 / N`` and ``t(k-1)``. The limits' intervals combine the
    bias interval with a Graybill-Wang interval for ``s_b^2 + s_w^2`` by the method of
    recovering variance estimates (MOVER), the construction Zou (2013) proposed for this design
    (Zou GY, Stat Methods Med Res 22:630-642; secondary, the paper seen cited for this design,
    the construction checked here by simulated coverage); the SD's interval is the square root
    of the Graybill-Wang one.
    """
    from scipy import stats as _st

    d = np.asarray(diff, dtype=float)
    n = d.size
    out: dict[str, float] = {"n": float(n)}
    nan = float("nan")
    if groups is not None:
        _, codes, counts = np.unique(groups, return_inverse=True, return_counts=True)
        k = counts.size
        out["n_subjects"] = float(k)
        repeated = bool(counts.max() > 1) and k >= 2
    else:
        k, codes, counts = n, None, None
        out["n_subjects"] = nan
        repeated = False
    bias = float(d.mean()) if n else nan
    out["bias"] = bias
    if not repeated:
        out["repeated"] = 0.0
        if n < 2:
            for key in ("sd_diff", "sd_diff_ci_low", "sd_diff_ci_high", "bias_ci_low",
                        "bias_ci_high", "loa_low", "loa_high", "loa_low_ci_low",
                        "loa_low_ci_high", "loa_high_ci_low", "loa_high_ci_high", "sd_within",
                        "sd_between"):
                out[key] = nan
            return out
        s = float(d.std(ddof=1))
        t = _t_quantile(confidence, n - 1)
        se_bias = s / np.sqrt(n)
        se_loa = np.sqrt(3.0 * s * s / n)  # Bland & Altman 1986, section 5
        lo, hi = bias - multiplier * s, bias + multiplier * s
        a = 1.0 - confidence
        out.update(
            sd_diff=s,
            sd_diff_ci_low=s * float(np.sqrt((n - 1) / _st.chi2.ppf(1 - a / 2, n - 1))),
            sd_diff_ci_high=s * float(np.sqrt((n - 1) / _st.chi2.ppf(a / 2, n - 1))),
            bias_ci_low=bias - t * se_bias, bias_ci_high=bias + t * se_bias,
            loa_low=lo, loa_high=hi,
            loa_low_ci_low=lo - t * se_loa, loa_low_ci_high=lo + t * se_loa,
            loa_high_ci_low=hi - t * se_loa, loa_high_ci_high=hi + t * se_loa,
            sd_within=nan, sd_between=nan,
        )
        return out

    # ---- repeated measurements per subject (Bland & Altman 2007)
    out["repeated"] = 1.0
    sums = np.bincount(codes, weights=d, minlength=k)
    gmean = sums / counts
    ss_between = float(np.sum(counts * (gmean - bias) ** 2))
    ss_within = float(np.sum((d - gmean[codes]) ** 2))
    df_b, df_w = k - 1, n - k
    msb = ss_between / df_b
    msw = ss_within / df_w
    m0 = (n - np.sum(counts.astype(float) ** 2) / n) / df_b
    sb2 = (msb - msw) / m0
    if sb2 > 0:
        lam_b, lam_w = 1.0 / m0, 1.0 - 1.0 / m0
    else:
        sb2, lam_b, lam_w = 0.0, 0.0, 1.0
    st2 = lam_b * msb + lam_w * msw
    s = float(np.sqrt(st2))
    var_bias = sb2 * np.sum(counts.astype(float) ** 2) / n**2 + msw / n
    t = _t_quantile(confidence, df_b)
    se_bias = float(np.sqrt(var_bias))
    b_lo, b_hi = bias - t * se_bias, bias + t * se_bias
    # Graybill-Wang (modified large-sample) interval for lam_b MSB + lam_w MSW
    a = 1.0 - confidence
    gb_lo = 1.0 - df_b / _st.chi2.ppf(1 - a / 2, df_b)
    gb_hi = df_b / _st.chi2.ppf(a / 2, df_b) - 1.0
    gw_lo = 1.0 - df_w / _st.chi2.ppf(1 - a / 2, df_w)
    gw_hi = df_w / _st.chi2.ppf(a / 2, df_w) - 1.0
    v_lo = st2 - np.sqrt((lam_b * msb * gb_lo) ** 2 + (lam_w * msw * gw_lo) ** 2)
    v_hi = st2 + np.sqrt((lam_b * msb * gb_hi) ** 2 + (lam_w * msw * gw_hi) ** 2)
    zs = multiplier * s
    zs_lo, zs_hi = multiplier * np.sqrt(max(v_lo, 0.0)), multiplier * np.sqrt(v_hi)
    lo, hi = bias - zs, bias + zs
    out.update(
        sd_diff=s, sd_diff_ci_low=float(np.sqrt(max(v_lo, 0.0))),
        sd_diff_ci_high=float(np.sqrt(v_hi)),
        bias_ci_low=b_lo, bias_ci_high=b_hi, loa_low=lo, loa_high=hi,
        # MOVER: upper limit = bias + z s, lower limit = bias - z s
        loa_high_ci_low=hi - np.sqrt((bias - b_lo) ** 2 + (zs - zs_lo) ** 2),
        loa_high_ci_high=hi + np.sqrt((b_hi - bias) ** 2 + (zs_hi - zs) ** 2),
        loa_low_ci_low=lo - np.sqrt((bias - b_lo) ** 2 + (zs_hi - zs) ** 2),
        loa_low_ci_high=lo + np.sqrt((b_hi - bias) ** 2 + (zs - zs_lo) ** 2),
        sd_within=float(np.sqrt(msw)), sd_between=float(np.sqrt(sb2)),
    )
    return out


def proportional_bias(diff: np.ndarray, mean: np.ndarray, *, confidence: float,
                      groups: np.ndarray | None = None) -> dict[str, float]:
    """Least-squares regression of the differences on the means (statsmodels OLS).

    With repeated pairs per subject the standard errors are cluster-robust by subject, since
    pairs of one subject are not independent.
    """
    import statsmodels.api as sm

    nan = float("nan")
    keys = ("proportional_bias_slope", "proportional_bias_slope_ci_low",
            "proportional_bias_slope_ci_high", "proportional_bias_p", "proportional_bias_intercept")
    if diff.size < 3 or np.ptp(mean) == 0:
        return dict.fromkeys(keys, nan)
    x = sm.add_constant(np.asarray(mean, dtype=float), has_constant="add")
    model = sm.OLS(np.asarray(diff, dtype=float), x)
    if groups is not None and np.unique(groups).size < groups.size and np.unique(groups).size >= 2:
        _, codes = np.unique(groups, return_inverse=True)
        fit = model.fit(cov_type="cluster", cov_kwds={"groups": codes})
    else:
        fit = model.fit()
    ci = np.asarray(fit.conf_int(alpha=1.0 - confidence))
    return dict(zip(keys, (float(fit.params[1]), float(ci[1, 0]), float(ci[1, 1]),
                           float(fit.pvalues[1]), float(fit.params[0])), strict=True))


def ccc(x: np.ndarray, y: np.ndarray, *, confidence: float) -> dict[str, float]:
    """Lin's concordance correlation coefficient with its CI (Lin 1989, Biometrics 45:255-268).

    ``rho_c = 2 s_xy / (s_x^2 + s_y^2 + (mean_x - mean_y)^2)`` with 1/n moments. The interval is
    built on ``z = atanh(rho_c)`` with Lin's asymptotic variance

        var(z) = 1/(n-2) [ (1-r^2) rho_c^2 / ((1-rho_c^2) r^2)
                          + 2 rho_c^3 (1-rho_c) u^2 / (r (1-rho_c^2)^2)
                          - rho_c^4 u^4 / (2 r^2 (1-rho_c^2)^2) ]

    where r is Pearson's r and ``u = (mean_x - mean_y) / sqrt(s_x s_y)``.
    """
    nan = float("nan")
    n = x.size
    if n < 3:
        return {"ccc": nan, "ccc_ci_low": nan, "ccc_ci_high": nan}
    mx, my = x.mean(), y.mean()
    sx2, sy2 = np.mean((x - mx) ** 2), np.mean((y - my) ** 2)
    sxy = np.mean((x - mx) * (y - my))
    denom = sx2 + sy2 + (mx - my) ** 2
    if denom == 0:
        return {"ccc": nan, "ccc_ci_low": nan, "ccc_ci_high": nan}
    rc = float(2.0 * sxy / denom)
    if sx2 == 0 or sy2 == 0:
        return {"ccc": rc, "ccc_ci_low": nan, "ccc_ci_high": nan}
    if abs(rc) >= 1.0 - 1e-12:  # perfect concordance: the interval degenerates to the point
        return {"ccc": rc, "ccc_ci_low": rc, "ccc_ci_high": rc}
    r = sxy / np.sqrt(sx2 * sy2)
    if r == 0:
        return {"ccc": rc, "ccc_ci_low": nan, "ccc_ci_high": nan}
    u2 = (mx - my) ** 2 / np.sqrt(sx2 * sy2)
    one = 1.0 - rc * rc
    var_z = ((1 - r * r) * rc * rc / (one * r * r)
             + 2 * rc**3 * (1 - rc) * u2 / (r * one**2)
             - rc**4 * u2 * u2 / (2 * r * r * one**2)) / (n - 2)
    if not np.isfinite(var_z) or var_z <= 0:
        return {"ccc": rc, "ccc_ci_low": nan, "ccc_ci_high": nan}
    z = np.arctanh(rc)
    h = _z_quantile(confidence) * np.sqrt(var_z)
    return {"ccc": rc, "ccc_ci_low": float(np.tanh(z - h)), "ccc_ci_high": float(np.tanh(z + h))}


# Row labels pingouin has used for the forms (they changed between versions), by meaning.
_ICC_FORMS = {
    # two-way random effects, absolute agreement, single measures: Shrout & Fleiss ICC(2,1)
    "icc": ({"ICC2", "ICC(2,1)", "ICC(A,1)"}, "single random raters"),
    # two-way mixed effects, consistency, single measures: Shrout & Fleiss ICC(3,1)
    "icc_consistency": ({"ICC3", "ICC(3,1)", "ICC(C,1)"}, "single fixed raters"),
}


def icc_pingouin(ratings: np.ndarray) -> dict[str, float]:
    """ICC(2,1) and ICC(3,1) of an (n_targets, k_raters) array through pingouin.

    pingouin computes both from the two-way analysis of variance (Shrout & Fleiss 1979) and their
    95% intervals (McGraw & Wong 1996). Its confidence interval column is rounded to two decimals
    by default; the rounding option is switched off for the call and restored afterwards.
    """
    import pandas as pd
    import pingouin

    nan = float("nan")
    keys = ("icc", "icc_ci_low", "icc_ci_high", "icc_consistency", "icc_consistency_ci_low",
            "icc_consistency_ci_high")
    n, k = ratings.shape
    if n < 3 or np.all(ratings == ratings[0, 0]):
        return dict.fromkeys(keys, nan)
    long = pd.DataFrame({
        "target": np.repeat(np.arange(n), k),
        "rater": np.tile(np.arange(k), n),
        "rating": ratings.ravel(),
    })
    opts = pingouin.options
    saved = dict(opts)
    try:
        opts["round"] = None
        opts.pop("round.column.CI95", None)
        with np.errstate(invalid="ignore", divide="ignore"):
            table = pingouin.intraclass_corr(long, targets="target", raters="rater",
                                             ratings="rating")
    finally:
        opts.clear()
        opts.update(saved)
    out: dict[str, float] = {}
    for name, (labels, description) in _ICC_FORMS.items():
        row = _pick_icc_row(table, labels, description)
        ci = np.asarray(row["CI95"], dtype=float)
        out[name] = float(row["ICC"])
        out[f"{name}_ci_low"] = float(ci[0])
        out[f"{name}_ci_high"] = float(ci[1])
    return out


def _pick_icc_row(table, labels: set[str], description: str):
    hit = table[table["Type"].astype(str).isin(labels)]
    if hit.empty and "Description" in table.columns:
        hit = table[table["Description"].astype(str).str.lower() == description]
    if len(hit) != 1:
        raise RuntimeError(
            f"pingouin.intraclass_corr returned no unique row for {sorted(labels)} "
            f"(rows: {list(table['Type'])}); the installed pingouin may label its forms differently"
        )
    return hit.iloc[0]


def pearson(x: np.ndarray, y: np.ndarray, *, confidence: float) -> dict[str, float]:
    """Pearson's r with the Fisher-z interval (scipy.stats.pearsonr)."""
    from scipy import stats as _st

    nan = float("nan")
    if x.size < 3 or np.ptp(x) == 0 or np.ptp(y) == 0:
        return {"pearson_r": nan, "pearson_r_ci_low": nan, "pearson_r_ci_high": nan,
                "pearson_p": nan}
    res = _st.pearsonr(x, y)
    ci = res.confidence_interval(confidence_level=confidence)
    return {"pearson_r": float(res.statistic), "pearson_r_ci_low": float(ci.low),
            "pearson_r_ci_high": float(ci.high), "pearson_p": float(res.pvalue)}


def mean_abs(values: np.ndarray, name: str, *, confidence: float) -> dict[str, float]:
    """Mean of non-negative values with a t interval (MAE, MAPE)."""
    nan = float("nan")
    n = values.size
    if n == 0:
        return {name: nan, f"{name}_ci_low": nan, f"{name}_ci_high": nan}
    m = float(values.mean())
    if n < 2:
        return {name: m, f"{name}_ci_low": nan, f"{name}_ci_high": nan}
    h = _t_quantile(confidence, n - 1) * float(values.std(ddof=1)) / np.sqrt(n)
    return {name: m, f"{name}_ci_low": max(m - h, 0.0), f"{name}_ci_high": m + h}


def typical_error(reported: np.ndarray, reference: np.ndarray, *,
                  confidence: float) -> dict[str, float]:
    """Typical error of the estimate: residual SD of the reference regressed on the reported value.

    Hopkins' typical error (Hopkins WG 2000, Sports Med 30(1):1-15, verified: the typical error
    is the within-subject SD), here in its validity form, an rrkit choice of presentation: the
    standard error of the estimate of a least-squares line predicting the reference from the
    device, in the reference's units, with a chi-square interval on n - 2 degrees of freedom.
    """
    import statsmodels.api as sm
    from scipy import stats as _st

    nan = float("nan")
    n = reported.size
    if n < 3 or np.ptp(reported) == 0:
        return {"typical_error": nan, "typical_error_ci_low": nan, "typical_error_ci_high": nan}
    fit = sm.OLS(reference, sm.add_constant(reported, has_constant="add")).fit()
    df = n - 2
    te = float(np.sqrt(fit.mse_resid))
    a = 1.0 - confidence
    return {
        "typical_error": te,
        "typical_error_ci_low": te * float(np.sqrt(df / _st.chi2.ppf(1 - a / 2, df))),
        "typical_error_ci_high": te * float(np.sqrt(df / _st.chi2.ppf(a / 2, df))),
    }


def pitman_morgan(d1: np.ndarray, d2: np.ndarray) -> float:
    """Two-sided p-value that two paired samples have equal variances (Pitman-Morgan test).

    ``var(d1) = var(d2)`` exactly when ``d1 + d2`` and ``d1 - d2`` are uncorrelated (Pitman EJG
    1939, Biometrika 31:9-12; Morgan WA 1939, Biometrika 31:13-19), tested with the usual t
    statistic of a correlation on n - 2 degrees of freedom.
    """
    from scipy import stats as _st

    n = d1.size
    s, t = d1 + d2, d1 - d2
    if n >= 1 and np.ptp(t) == 0:
        return 1.0  # the two differ by a constant: their variances are equal
    if n < 4 or np.ptp(s) == 0:
        return float("nan")
    return float(_st.pearsonr(s, t).pvalue)
