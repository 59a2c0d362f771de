"""rrkit.model: published check values (NIST Longley, Benjamini & Hochberg 1995) and simulations
whose ground truth the test knows (AR(1) errors, opposite within/between slopes)."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd
import pytest

from rrkit import InputError
from rrkit.cli import main
from rrkit.model import (
    ModelSettings,
    bh_qvalues,
    compare_pooled,
    fit,
    hac_lag_rule,
    plain_lines,
    screen,
)
from rrkit.model._fit import ols_errors

# NIST Statistical Reference Datasets, linear regression, "Longley" (Longley JW 1967, J Am Stat
# Assoc 62:819-841), certified values: https://www.itl.nist.gov/div898/strd/lls/data/Longley.shtml
# (as also typed in statsmodels' regression test results, which cite NIST).
NIST_LONGLEY = {  # term: (certified estimate, certified standard deviation of the estimate)
    "Intercept": (-3482258.63459582, 890420.383607373),
    "GNPDEFL": (15.0618722713733, 84.9149257747669),
    "GNP": (-0.358191792925910e-01, 0.334910077722432e-01),
    "UNEMP": (-2.02022980381683, 0.488399681651699),
    "ARMED": (-1.03322686717359, 0.214274163161675),
    "POP": (-0.511041056535807e-01, 0.226073200069370),
    "YEAR": (1829.15146461355, 455.478499142212),
}
NIST_LONGLEY_R2 = 0.995479004577296  # certified R-squared
NIST_LONGLEY_RESIDUAL_SD = 304.854073561965  # certified residual standard deviation

# Benjamini Y, Hochberg Y 1995, J R Stat Soc B 57:289-300, the worked example of 15 p-values
# (section 3.2; from the paper as recalled, cross-checked against statsmodels below).
BH_1995 = [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.3240,
           0.4262, 0.5719, 0.6528, 0.7590, 1.0000]


def _sig_digits(a: float, b: float) -> float:
    return -np.log10(abs(a - b) / abs(b)) if a != b else 99.0


def _longley_table() -> pd.DataFrame:
    from statsmodels.datasets import longley

    df = longley.load_pandas().data
    df.insert(0, "subject", "longley")
    df.insert(1, "date", [dt.date(1947, 1, 1) + dt.timedelta(days=i) for i in range(len(df))])
    return df


# ------------------------------------------------------------------------- NIST StRD Longley
def test_longley_matches_nist_certified_values_through_the_cli(tmp_path):
    """The command line's own path (CSV in, coefficients.csv out) reproduces NIST to >= 7
    significant digits; classical OLS errors, as NIST certifies them."""
    path = tmp_path / "longley.csv"
    _longley_table().to_csv(path, index=False)
    rc = main(["model", str(path), "--outcome", "TOTEMP", "--adjust",
               "GNPDEFL,GNP,UNEMP,ARMED,POP,YEAR", "--by", "subject", "--se", "classical",
               "--days", "all", "-o", str(tmp_path / "out")])
    assert rc == 0
    coef = pd.read_csv(tmp_path / "out" / "coefficients.csv").set_index("term")
    assert len(coef) == 7
    for term, (est, se) in NIST_LONGLEY.items():
        assert _sig_digits(coef.loc[term, "estimate"], est) >= 7, term
        assert _sig_digits(coef.loc[term, "se"], se) >= 7, term
    import json

    diag = json.loads((tmp_path / "out" / "diagnostics.json").read_text())["longley"]
    assert _sig_digits(diag["r2"], NIST_LONGLEY_R2) >= 7
    assert _sig_digits(diag["residual_sd"], NIST_LONGLEY_RESIDUAL_SD) >= 7
    model = json.loads((tmp_path / "out" / "model.json").read_text())
    assert model["formula"] == "TOTEMP ~ GNPDEFL + GNP + UNEMP + ARMED + POP + YEAR"
    assert model["rrkit_version"]
    assert "not causes" in model["caution"]


def test_hac_with_zero_lags_is_hc0():
    """HAC with 0 lags and no correction equals White's HC0 (computed with statsmodels)."""
    import statsmodels.formula.api as smf

    df = _longley_table()
    f = "TOTEMP ~ GNPDEFL + UNEMP"
    hac = smf.ols(f, df).fit(cov_type="HAC", cov_kwds={"maxlags": 0, "use_correction": False})
    hc0 = smf.ols(f, df).fit(cov_type="HC0")
    np.testing.assert_allclose(hac.bse, hc0.bse, rtol=1e-12)


def test_hac_lag_rule():
    # floor(4 (n/100)^(2/9)) (Newey-West rule of thumb, common practice)
    assert [hac_lag_rule(n) for n in (10, 20, 60, 100, 120, 500)] == [2, 2, 3, 4, 4, 5]


# ------------------------------------------------------------------- Benjamini & Hochberg
def test_bh_worked_example_and_statsmodels():
    from statsmodels.stats.multitest import multipletests

    q = bh_qvalues(BH_1995)
    assert int((q <= 0.05).sum()) == 4  # the paper: the 4 smallest are rejected at q = 0.05
    assert np.all(q[:4] <= 0.05)
    assert q[4] > 0.05
    # Bonferroni at 0.05/15 rejects only 3 (the paper's comparison)
    assert int((np.array(BH_1995) <= 0.05 / 15).sum()) == 3
    reject, q_sm, _s, _b = multipletests(BH_1995, alpha=0.05, method="fdr_bh")
    np.testing.assert_allclose(q, q_sm, rtol=0, atol=1e-15)
    assert reject.sum() == 4
    # order does not matter
    rng = np.random.default_rng(3)
    perm = rng.permutation(len(BH_1995))
    np.testing.assert_allclose(bh_qvalues(np.array(BH_1995)[perm]), q_sm[perm], atol=1e-15)


def test_bh_rejects_p_outside_unit_interval():
    with pytest.raises(InputError, match=r"p-values must lie in \[0, 1\]"):
        bh_qvalues([0.1, 1.5])


# -------------------------------------------------------------- AR(1) errors: CI coverage
def _ar1(rng, shape, phi):
    e = rng.normal(0.0, np.sqrt(1 - phi ** 2), shape)
    out = np.empty(shape)
    out[..., 0] = rng.normal(0.0, 1.0, shape[:-1])
    for t in range(1, shape[-1]):
        out[..., t] = phi * out[..., t - 1] + e[..., t]
    return out


def test_hac_ci_covers_under_ar1_errors_and_naive_ols_does_not():
    """300 simulated n-of-1 seasons (365 mornings; load-like regressor AR(1) 0.7, errors AR(1)
    0.5, true slope -0.05): the HAC 95% CI covers the truth in 90-98% of seasons, the classical
    OLS CI clearly less often (the reason the HAC correction is the default). With 120 days the
    HAC coverage falls to about 0.87-0.92 (the known small-sample bias of HAC errors; seen in
    the same simulation), see docs/modelling.md."""
    rng = np.random.default_rng(20260105)
    n_seasons, n_days, beta = 300, 365, -0.05
    x = _ar1(rng, (n_seasons, n_days), 0.7)
    e = 0.1 * _ar1(rng, (n_seasons, n_days), 0.5)
    y = 4.3 + beta * x + e
    hits = {"hac": 0, "classical": 0}
    estimates = []
    import statsmodels.api as sm

    for i in range(n_seasons):
        model = sm.OLS(y[i], np.column_stack([np.ones(n_days), x[i]]))
        for se in hits:
            res = ols_errors(model, se=se, maxlags=None)  # the error settings of fit()
            lo, hi = res.conf_int()[1]
            hits[se] += lo <= beta <= hi
        estimates.append(res.params[1])
    cover = {k: v / n_seasons for k, v in hits.items()}
    assert 0.90 <= cover["hac"] <= 0.98, cover
    assert cover["classical"] <= cover["hac"] - 0.05, cover
    assert cover["classical"] < 0.87, cover
    assert abs(np.mean(estimates) - beta) < 0.005  # unbiased: the planted effect is recovered


def test_fit_recovers_planted_effect_with_hac():
    rng = np.random.default_rng(7)
    n = 150
    load = np.clip(500 + 300 * _ar1(rng, (1, n), 0.3)[0], 0, None)
    ln = 4.3 - 0.00008 * np.r_[np.nan, load[:-1]] + 0.08 * _ar1(rng, (1, n), 0.5)[0]
    days = [dt.date(2026, 1, 1) + dt.timedelta(days=i) for i in range(n)]
    table = pd.DataFrame({"subject": "A", "date": days, "ln_rmssd": ln, "load_au": load,
                          "quality": "ok"})
    res = fit(table, terms=("load_au_lag1",), by="subject")
    row = res.coefficients.set_index("term").loc["load_au_lag1"]
    assert row["ci_low"] <= -0.00008 <= row["ci_high"]
    assert row["se_type"].startswith("HAC (Newey-West), 4 lags")
    assert row["n_days"] == n - 1  # the first day has no previous day
    step = float(row["unit"].removesuffix(" AU"))  # a round step near the SD of the load
    assert step in (100, 200, 500)
    np.testing.assert_allclose(row["per_unit"], step * row["estimate"])
    d = res.diagnostics["A"]
    assert 0 < d["durbin_watson"] < 2  # positive residual autocorrelation is reported
    assert d["ljung_box_p"] < 0.05
    line = plain_lines(res)[0]
    assert line.startswith("A: ln-RMSSD next morning changes by ")
    assert f"per {step:g} AU of the previous day's load" in line


# ---------------------------------------------------------------- within/between, mixed
def _squad(rng, *, n_athletes=10, n_days=60, within=-0.1, between=0.5, phi=0.5):
    """Athletes whose usual x differs; the within slope and the between slope differ in sign."""
    rows = []
    for a in range(n_athletes):
        mean_x = rng.normal(0.0, 1.0)
        x = mean_x + 0.8 * _ar1(rng, (1, n_days), 0.3)[0]
        y = (4.0 + between * mean_x + within * (x - mean_x) + rng.normal(0.0, 0.05)
             + 0.08 * _ar1(rng, (1, n_days), phi)[0])
        for d in range(n_days):
            rows.append({"subject": f"S{a:02d}", "date": dt.date(2026, 1, 1)
                         + dt.timedelta(days=d), "ln_rmssd": y[d], "sleep_h": x[d],
                         "quality": "ok"})
    return pd.DataFrame(rows)


def test_within_and_between_slopes_of_opposite_sign_are_both_recovered():
    rng = np.random.default_rng(11)
    table = _squad(rng)
    res = fit(table, terms=("sleep_h",), by="squad")
    c = res.coefficients
    mixed = c[c["model"] == "mixed"].set_index("term")
    assert mixed.loc["sleep_h_within", "ci_high"] < 0  # within: negative (planted -0.1)
    assert abs(mixed.loc["sleep_h_within", "estimate"] + 0.1) < 0.02
    assert mixed.loc["sleep_h_between", "ci_low"] > 0  # between: positive (planted +0.5)
    cl = c[c["model"] == "ols_cluster"].set_index("term")
    assert np.sign(cl.loc["sleep_h_within", "estimate"]) == -1
    assert np.sign(cl.loc["sleep_h_between", "estimate"]) == 1
    assert mixed["n_athletes"].eq(10).all()
    # the naive pooled slope mixes the two and gets the within-athlete sign wrong
    parts, lines, _mixed = compare_pooled(table, term="sleep_h")
    pooled = parts.set_index("part").loc["pooled", "estimate"]
    assert pooled > 0
    assert "wrong sign" in lines[2]


def test_random_slope_and_screening_with_lr_test():
    rng = np.random.default_rng(5)
    table = _squad(rng, n_athletes=8, n_days=50)
    table["noise_x"] = rng.normal(size=len(table))
    table["load_au"] = 400 + 100 * rng.normal(size=len(table))
    res = fit(table, terms=("sleep_h",), by="squad", random_slope="sleep_h_within")
    assert res.diagnostics["squad"]["random_slope"] == "sleep_h_within"
    assert res.diagnostics["squad"]["random_slope_sd"] is not None
    scr = screen(table, base=("sleep_h",), candidates=("noise_x", "load_au_lag1"), by="squad")
    assert list(scr["candidate"]) == ["noise_x", "load_au_lag1"]
    assert scr["lr_df"].eq(2).all()
    assert (scr["q"] >= scr["p"]).all()
    np.testing.assert_allclose(scr["q"], bh_qvalues(scr["p"]))


def test_screening_n_of_1_reports_adjusted_r2_change():
    rng = np.random.default_rng(9)
    n = 90
    x = rng.normal(size=n)
    z = rng.normal(size=n)
    days = [dt.date(2026, 1, 1) + dt.timedelta(days=i) for i in range(n)]
    table = pd.DataFrame({"subject": "A", "date": days, "ln_rmssd": 4 + 0.3 * x
                          + 0.1 * rng.normal(size=n), "x_au": x, "z_au": z})
    scr = screen(table, candidates=("x_au", "z_au"), by="subject")
    s = scr.set_index("candidate")
    assert s.loc["x_au", "delta_r2_adj"] > 0.5
    assert s.loc["z_au", "delta_r2_adj"] < 0.02
    assert s.loc["x_au", "q"] < 0.01


# -------------------------------------------------------------------------- bad requests
@pytest.fixture
def small_table():
    days = [dt.date(2026, 1, 1) + dt.timedelta(days=i) for i in range(6)]
    return pd.DataFrame({"subject": "A", "date": days, "ln_rmssd": [4.1, 4.0, 4.3, 4.2, 4.4, 4.0],
                         "load_au": [300.0, 500, 0, 650, 420, 380], "flat_au": 5.0,
                         "z": [1.0, 2, 3, 1, 2, 3], "quality": "ok"})


def test_unknown_column(small_table):
    with pytest.raises(InputError, match=r"unknown term 'sleep_h': 'sleep_h' is not a column"):
        fit(small_table, terms=("sleep_h",), by="subject")
    with pytest.raises(InputError, match=r"unknown outcome 'hrv'"):
        fit(small_table, outcome="hrv", terms=("load_au",), by="subject")


def test_term_without_variance(small_table):
    with pytest.raises(InputError, match=r"term 'flat_au' has no variance in the 6 days used "
                                         r"by subject A \(every value 5\)"):
        fit(small_table, terms=("flat_au",), by="subject")


def test_fewer_days_than_terms(small_table):
    with pytest.raises(InputError, match=r"subject A has 5 complete days for 5 parameters .*"
                                         r"a model needs more days than parameters"):
        fit(small_table, terms=("load_au", "load_au_lag1", "z", "load_au_sum2"), by="subject")


def test_squad_needs_athletes_for_its_between_terms():
    rng = np.random.default_rng(1)
    table = _squad(rng, n_athletes=3, n_days=20)
    table["z"] = rng.normal(size=len(table))
    with pytest.raises(InputError, match=r"the squad has 3 athletes for 2 between-athlete terms"):
        fit(table, terms=("sleep_h", "z"), by="squad")


def test_other_bad_settings(small_table):
    with pytest.raises(InputError, match=r"by must be one of"):
        ModelSettings(by="team")
    with pytest.raises(InputError, match=r"random slope 'z' is not a term"):
        fit(small_table, terms=("load_au",), by="squad", random_slope="z")
    with pytest.raises(InputError, match=r"no terms to model"):
        fit(small_table, terms=(), by="subject")
    with pytest.raises(InputError, match=r"subject 'B' is not in the table"):
        fit(small_table, terms=("load_au",), by="subject", subject="B")
