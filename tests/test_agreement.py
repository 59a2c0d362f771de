"""Agreement statistics: published worked examples, closed formulas and reference libraries."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats as st

import rrkit
from rrkit import InputError, agreement
from rrkit.agreement._stats import bland_altman, ccc, icc_pingouin

# Bland JM, Altman DG 1986, Lancet i:307-310, Table 1: peak expiratory flow (l/min), first
# reading of each meter, 17 subjects (data as transcribed in ../shared/REFERENCES.md section 6).
LARGE = np.array([494, 395, 516, 434, 476, 557, 413, 442, 650, 433, 417, 656, 267, 478, 178, 423,
                  427], float)
MINI = np.array([512, 430, 520, 428, 500, 600, 364, 380, 658, 445, 432, 626, 260, 477, 259, 350,
                 451], float)

# Shrout PE, Fleiss JL 1979, Psychol Bull 86:420-428, Table 2: 6 targets (rows) x 4 judges.
SHROUT_FLEISS = np.array([[9, 2, 5, 8], [6, 1, 3, 2], [8, 4, 6, 8], [7, 1, 2, 6], [10, 5, 6, 9],
                          [6, 2, 4, 7]], float)


# ------------------------------------------------------------------------------------ ICC
def test_icc_shrout_fleiss_table2():
    out = icc_pingouin(SHROUT_FLEISS)
    # published in Shrout & Fleiss 1979 (Table 4): ICC(2,1) = .29, ICC(3,1) = .71
    assert round(out["icc"], 2) == 0.29
    assert round(out["icc_consistency"], 2) == 0.71
    # computed in REFERENCES.md section 6 (pingouin 0.7): CIs 0.02-0.76 and 0.34-0.95
    assert round(out["icc_ci_low"], 2) == 0.02
    assert round(out["icc_ci_high"], 2) == 0.76
    assert round(out["icc_consistency_ci_low"], 2) == 0.34
    assert round(out["icc_consistency_ci_high"], 2) == 0.95
    # the interval comes back unrounded (pingouin rounds it to 2 decimals by default)
    assert out["icc_ci_low"] != round(out["icc_ci_low"], 2)


def test_icc_option_restored_after_call():
    import pingouin

    before = dict(pingouin.options)
    icc_pingouin(SHROUT_FLEISS)
    assert dict(pingouin.options) == before


# ---------------------------------------------------------------------------- Bland-Altman
def test_bland_altman_1986_peak_flow_two_sd():
    res = agreement(LARGE, MINI, multiplier=2.0)
    s = res.stats
    # Bland & Altman 1986: mean difference -2.1, SD 38.8 l/min
    assert round(s["bias"], 1) == -2.1
    assert round(s["sd_diff"], 1) == 38.8
    # published limits -79.7 and 75.5 (they round the bias and SD first: -2.1 -/+ 2 x 38.8);
    # from the unrounded values -79.65 and 75.41, so the published rounding is met within 0.15
    assert s["loa_low"] == pytest.approx(-79.7, abs=0.15)
    assert s["loa_high"] == pytest.approx(75.5, abs=0.15)
    # published CI of the lower limit -114.3 to -45.1 (SE sqrt(3 s^2/n) rounded to 16.3, t = 2.12)
    assert s["loa_low_ci_low"] == pytest.approx(-114.3, abs=0.15)
    assert s["loa_low_ci_high"] == pytest.approx(-45.1, abs=0.15)


def test_bland_altman_1986_peak_flow_196():
    s = agreement(LARGE, MINI).stats
    # computed in REFERENCES.md section 6: bias -2.1176, SD 38.7651, limits -78.097 to 73.862
    assert s["bias"] == pytest.approx(-2.1176, abs=1e-4)
    assert s["sd_diff"] == pytest.approx(38.7651, abs=1e-4)
    assert s["loa_low"] == pytest.approx(-78.097, abs=1e-3)
    assert s["loa_high"] == pytest.approx(73.862, abs=1e-3)
    # formulas of Bland & Altman 1986 written out: SE bias s/sqrt(n), SE limit sqrt(3 s^2/n), t(16)
    n, sd = 17, np.std(LARGE - MINI, ddof=1)
    t = st.t.ppf(0.975, n - 1)
    assert s["bias_ci_low"] == pytest.approx(s["bias"] - t * sd / np.sqrt(n), rel=1e-12)
    assert s["loa_high_ci_high"] == pytest.approx(s["loa_high"] + t * np.sqrt(3 * sd**2 / n),
                                                  rel=1e-12)
    assert s["repeated"] == 0.0


def test_proportional_bias_matches_scipy_linregress():
    s = agreement(LARGE, MINI).stats
    # scipy as reference library: least-squares slope of differences on means, two-sided p
    ref = st.linregress((LARGE + MINI) / 2, LARGE - MINI)
    assert s["proportional_bias_slope"] == pytest.approx(ref.slope, rel=1e-9)
    assert s["proportional_bias_p"] == pytest.approx(ref.pvalue, rel=1e-7)
    assert s["proportional_bias_intercept"] == pytest.approx(ref.intercept, rel=1e-9)


def test_proportional_bias_detected_and_noted(rng):
    ref = rng.uniform(20, 120, 60)
    rep = ref * 1.25 + rng.normal(0, 2, 60)  # error grows with the value: known by construction
    res = agreement(rep, ref)
    assert res.stats["proportional_bias_p"] < 1e-6
    assert res.stats["proportional_bias_slope"] > 0
    assert any("proportional bias" in note for note in res.notes)
    # on the log scale the same device has a constant ratio: no proportional bias left
    res_log = agreement(rep, ref, ratio=True)
    assert res_log.stats["bias_ci_low"] < 1.25 < res_log.stats["bias_ci_high"]
    assert res_log.stats["proportional_bias_p"] > 0.001


def test_ratio_analysis_is_back_transformed_log_analysis(rng):
    ref = rng.lognormal(np.log(50), 0.4, 40)
    rep = ref * 0.9 * np.exp(rng.normal(0, 0.05, 40))
    r = agreement(rep, ref, ratio=True).stats
    a = agreement(np.log(rep), np.log(ref)).stats
    # Bland & Altman 1999: limits on log values, antilogged to ratios
    for key in ("bias", "loa_low", "loa_high", "bias_ci_low", "loa_high_ci_high"):
        assert r[key] == pytest.approx(np.exp(a[key]), rel=1e-12)
    assert r["sd_diff"] == pytest.approx(a["sd_diff"], rel=1e-12)
    assert r["sd_log_ratio"] == r["sd_diff"]
    assert r["bias_ci_low"] < 0.9 < r["bias_ci_high"]  # the simulated ratio


def test_ratio_needs_positive_values():
    with pytest.raises(InputError, match=r"ratio=True needs positive values; pair 1"):
        agreement([1.0, 0.0, 3.0, 4.0], [1.0, 2.0, 3.0, 5.0], ratio=True)


# ------------------------------------------------------------------- repeated measurements
def _repeated_data(rng, k=8, m=5, sb=3.0, sw=2.0):
    subj = np.repeat([f"s{i}" for i in range(k)], m)
    ref = rng.normal(60, 15, k * m)
    rep = ref + 1.5 + np.repeat(rng.normal(0, sb, k), m) + rng.normal(0, sw, k * m)
    return subj, rep, ref


def test_repeated_variance_components_match_mixedlm(rng):
    import statsmodels.formula.api as smf

    subj, rep, ref = _repeated_data(rng)
    res = agreement(rep, ref, subject=subj)
    s = res.stats
    assert res.repeated
    # statsmodels MixedLM (REML, random intercept per subject) as reference: in a balanced design
    # the REML components equal the analysis-of-variance ones used by Bland & Altman 2007
    df = pd.DataFrame({"d": rep - ref, "g": subj})
    fit = smf.mixedlm("d ~ 1", df, groups=df["g"]).fit(reml=True)
    assert s["sd_within"] ** 2 == pytest.approx(fit.scale, rel=1e-4)
    assert s["sd_between"] ** 2 == pytest.approx(float(fit.cov_re.iloc[0, 0]), rel=1e-4)
    assert s["sd_diff"] ** 2 == pytest.approx(fit.scale + float(fit.cov_re.iloc[0, 0]), rel=1e-4)
    assert s["bias"] == pytest.approx(float(fit.fe_params.iloc[0]), rel=1e-6)
    # SE of the bias equals the MixedLM SE of the intercept (balanced design); t with k-1 df
    se = (s["bias_ci_high"] - s["bias"]) / st.t.ppf(0.975, 7)
    assert se == pytest.approx(float(fit.bse_fe.iloc[0]), rel=1e-3)
    # the limits' intervals contain the limits and are wider on the outer side
    assert s["loa_low_ci_low"] < s["loa_low"] < s["loa_low_ci_high"]
    assert s["loa_high_ci_low"] < s["loa_high"] < s["loa_high_ci_high"]


def test_repeated_limits_cover_new_subjects(rng):
    # simulation with known truth: the population limits are 1.5 +/- 1.96 sqrt(3^2 + 2^2);
    # the interval of each limit should contain it in most of 200 replications
    true_lo, true_hi = 1.5 - 1.96 * np.sqrt(13.0), 1.5 + 1.96 * np.sqrt(13.0)
    hit_lo = hit_hi = 0
    for _ in range(200):
        subj, rep, ref = _repeated_data(rng, k=12, m=4)
        s = bland_altman(rep - ref, multiplier=1.96, confidence=0.95, groups=subj)
        hit_lo += s["loa_low_ci_low"] <= true_lo <= s["loa_low_ci_high"]
        hit_hi += s["loa_high_ci_low"] <= true_hi <= s["loa_high_ci_high"]
    # nominal 95%; MOVER intervals are approximate (binomial SD of the share ~1.5%)
    assert 0.88 <= hit_lo / 200 <= 0.995
    assert 0.88 <= hit_hi / 200 <= 0.995


def test_repeated_ignored_is_flagged(rng):
    subj, rep, ref = _repeated_data(rng)
    res = agreement(rep, ref, subject=subj, repeated=False)
    assert not res.repeated
    assert any("treated as independent" in note for note in res.notes)
    # ignoring the between-subject component understates neither bias nor SD here, but the
    # independent-pairs SD is the plain SD of all differences
    assert res.stats["sd_diff"] == pytest.approx(np.std(rep - ref, ddof=1), rel=1e-12)


# ------------------------------------------------------------------------------------ CCC
def test_ccc_identical_series_is_one(rng):
    x = rng.normal(50, 10, 30)
    out = ccc(x, x.copy(), confidence=0.95)
    assert out["ccc"] == pytest.approx(1.0, abs=1e-12)  # Lin 1989: perfect concordance


def test_ccc_equals_pearson_when_means_and_variances_equal(rng):
    x = rng.normal(50, 10, 25)
    y = x[rng.permutation(25)] * 0.5 + x * 0.5
    y = (y - y.mean()) / y.std() * x.std() + x.mean()  # same mean and variance (1/n) as x
    out = ccc(x, y, confidence=0.95)
    # Lin 1989: rho_c = rho * C_b with C_b = 1 when means and variances are equal
    assert out["ccc"] == pytest.approx(st.pearsonr(x, y).statistic, rel=1e-12)


def test_ccc_closed_formula_small_example():
    x = np.array([1.0, 2.0, 3.0, 4.0, 5.0])
    y = np.array([1.5, 2.0, 3.5, 3.5, 6.0])
    # Lin 1989 closed formula by hand, 1/n moments: means 3 and 3.3; s_x^2 = 2; s_y^2 = 2.46;
    # s_xy = (2*1.8 + 1*1.3 + 0 + 1*0.2 + 2*2.7) / 5 = 2.1; rho_c = 4.2 / (2 + 2.46 + 0.09)
    expected = 4.2 / (2.0 + 2.46 + 0.09)
    assert ccc(x, y, confidence=0.95)["ccc"] == pytest.approx(expected, rel=1e-12)


def test_ccc_peak_flow_computed_value():
    s = agreement(LARGE, MINI).stats
    # computed in REFERENCES.md section 6: CCC 0.94274, Pearson r 0.94328
    assert s["ccc"] == pytest.approx(0.94274, abs=1e-5)
    assert s["pearson_r"] == pytest.approx(0.94328, abs=1e-5)
    assert s["ccc_ci_low"] < s["ccc"] < s["ccc_ci_high"] < 1


def test_ccc_interval_coverage(rng):
    # simulation with known truth: bivariate normal, means 0 and 0.3, SDs 1 and 1.1, rho 0.8;
    # population rho_c = 2 rho s_x s_y / (s_x^2 + s_y^2 + (mu_x - mu_y)^2) (Lin 1989)
    rho, sx, sy, dm, n = 0.8, 1.0, 1.1, 0.3, 60
    true = 2 * rho * sx * sy / (sx**2 + sy**2 + dm**2)
    cov = [[sx**2, rho * sx * sy], [rho * sx * sy, sy**2]]
    hits = 0
    for _ in range(400):
        xy = rng.multivariate_normal([0.0, dm], cov, n)
        out = ccc(xy[:, 0], xy[:, 1], confidence=0.95)
        hits += out["ccc_ci_low"] <= true <= out["ccc_ci_high"]
    assert 0.91 <= hits / 400 <= 0.98  # nominal 0.95; binomial SD ~1.1%


# ----------------------------------------------------------------- error statistics, r
def test_error_statistics_match_direct_formulas():
    s = agreement(LARGE, MINI).stats
    d = LARGE - MINI
    assert s["mae"] == pytest.approx(np.mean(np.abs(d)), rel=1e-12)
    assert s["mape_pct"] == pytest.approx(100 * np.mean(np.abs(d) / MINI), rel=1e-12)
    r = st.pearsonr(LARGE, MINI)  # scipy as reference library
    ci = r.confidence_interval(0.95)
    assert (s["pearson_r_ci_low"], s["pearson_r_ci_high"]) == pytest.approx((ci.low, ci.high))
    # typical error of the estimate: SD(reference) sqrt(1 - r^2) sqrt((n-1)/(n-2)) (closed form
    # of the residual SD of a least-squares line)
    n = 17
    te = np.std(MINI, ddof=1) * np.sqrt(1 - r.statistic**2) * np.sqrt((n - 1) / (n - 2))
    assert s["typical_error"] == pytest.approx(te, rel=1e-9)
    assert s["typical_error_ci_low"] < te < s["typical_error_ci_high"]


def test_icc_of_two_methods_against_pingouin_directly():
    import pingouin

    long = pd.DataFrame({"t": np.tile(np.arange(17), 2), "r": np.repeat(["a", "b"], 17),
                         "y": np.concatenate([LARGE, MINI])})
    table = pingouin.intraclass_corr(long, targets="t", raters="r", ratings="y")
    s = agreement(LARGE, MINI).stats
    assert s["icc"] == pytest.approx(float(table.iloc[1]["ICC"]), rel=1e-12)  # ICC(A,1) row


# ------------------------------------------------------------------------- tables and input
def test_tables_joined_on_subject_and_date():
    rep = pd.DataFrame({"subject": ["a", "a", "b", "b", "c"],
                        "date": ["2026-01-05", "2026-01-06", "2026-01-05", "2026-01-06",
                                 "2026-01-05"],
                        "rmssd_ms": [50.0, 55.0, 40.0, 42.0, 70.0]})
    ref = pd.DataFrame({"subject": ["b", "a", "a", "b", "d"],
                        "date": pd.to_datetime(["2026-01-05", "2026-01-06", "2026-01-05",
                                                "2026-01-06", "2026-01-05"]),
                        "rmssd_ms": [38.0, 52.0, 49.0, 41.0, 30.0]})
    res = agreement(rep, ref)
    assert res.metric == "rmssd_ms"
    assert res.unit == "ms"
    assert int(res.stats["n"]) == 4
    got = res.pairs.set_index(["subject", "date"])["diff"].to_dict()
    assert got == {("a", "2026-01-05"): 1.0, ("a", "2026-01-06"): 3.0,
                   ("b", "2026-01-05"): 2.0, ("b", "2026-01-06"): 1.0}
    assert sorted(res.unmatched["side"]) == ["reference", "reported"]
    assert any("no partner" in note for note in res.notes)


@pytest.mark.parametrize("text", ["03/04/2026", "29/03/2026", "4 March 2026"])
def test_text_dates_must_be_iso(text):
    # 03/04/2026 is 3 April or 4 March depending on the convention: refused, not guessed
    rep = pd.DataFrame({"subject": ["a", "b", "c"], "date": [text, "2026-03-05", "2026-03-06"],
                        "v": [1.0, 2.0, 3.0]})
    ref = rep.assign(date=["2026-03-04", "2026-03-05", "2026-03-06"])
    with pytest.raises(InputError, match=r"reported table, row 1: date .* is not a date; "
                                         r"expected YYYY-MM-DD"):
        agreement(rep, ref)
    # python dates and ISO date-times are fine
    ok = rep.assign(date=[pd.Timestamp("2026-03-04").date(), "2026-03-05T00:00:00",
                          "2026-03-06"])
    assert int(agreement(ok, ref).stats["n"]) == 3


def test_duplicate_keys_rejected():
    rep = pd.DataFrame({"subject": ["a", "a"], "date": ["2026-01-05", "2026-01-05"],
                        "v": [1.0, 2.0]})
    with pytest.raises(InputError, match=r"reported table, row 1: .* appears more than once"):
        agreement(rep, rep)


def test_missing_values_excluded_and_counted():
    rep = [50.0, np.nan, 60.0, 70.0, 65.0]
    ref = [49.0, 51.0, 61.0, np.nan, 63.0]
    res = agreement(rep, ref)
    assert int(res.stats["n"]) == 3
    assert int(res.stats["n_excluded"]) == 2
    assert any("2 pair(s) excluded" in note for note in res.notes)


@pytest.mark.parametrize(
    ("rep", "ref", "message"),
    [
        ([1.0, 2.0, 3.0], [1.0, 2.0], r"same length; got 3 and 2"),
        ([1.0, 2.0], [1.0, 2.0], r"at least 3 complete pairs; got 2"),
        (["a", "b", "c"], [1.0, 2.0, 3.0], r"reported must be a 1-D sequence of numbers"),
        ([1.0, np.inf, 3.0], [1.0, 2.0, 3.0], r"reported must be finite or NaN"),
    ],
)
def test_bad_input(rep, ref, message):
    with pytest.raises(InputError, match=message):
        agreement(rep, ref)


def test_bad_options():
    with pytest.raises(InputError, match=r"multiplier must be in \(0, inf\]"):
        agreement(LARGE, MINI, multiplier=0)
    with pytest.raises(InputError, match=r"repeated must be one of"):
        agreement(LARGE, MINI, repeated="yes")
    with pytest.raises(InputError, match=r"both be tables or both be sequences"):
        agreement(pd.DataFrame({"v": LARGE}), MINI)


# ----------------------------------------------------------------------- result and summary
def test_result_table_and_summary():
    res = agreement(LARGE, MINI, unit="l/min", metric="peak flow")
    table = res.table
    assert list(table.columns) == ["statistic", "estimate", "ci_low", "ci_high", "unit", "meaning"]
    row = table.set_index("statistic").loc["loa_low"]
    assert row["estimate"] == res.stats["loa_low"]
    assert row["unit"] == "l/min"
    text = res.summary_text()
    assert "limits of agreement" in text
    assert "-78.1 to 73.9 l/min" in text
    assert "not a medical device" in text
    # Koo & Li 2016 bands judged on the CI (0.857 to 0.980 spans good and excellent)
    assert res.icc_band() == "good to excellent"
    for key in ("n", "bias", "sd_diff", "loa_low", "loa_high", "ccc", "icc", "mae", "mape_pct",
                "pearson_r", "proportional_bias_slope", "proportional_bias_p", "typical_error"):
        assert np.isfinite(res.stats[key]), key
    with pytest.raises(TypeError):
        res.stats["bias"] = 0.0  # read-only


def test_public_names():
    from rrkit.agreement import AgreementResult
    from rrkit.agreement import agreement as module_function

    assert rrkit.agreement is module_function
    assert rrkit.AgreementResult is AgreementResult


def test_sd_interval_chi_square():
    s = agreement(LARGE, MINI).stats
    # textbook chi-square interval of an SD on n - 1 = 16 degrees of freedom (common practice)
    sd = np.std(LARGE - MINI, ddof=1)
    assert s["sd_diff_ci_low"] == pytest.approx(sd * np.sqrt(16 / st.chi2.ppf(0.975, 16)))
    assert s["sd_diff_ci_high"] == pytest.approx(sd * np.sqrt(16 / st.chi2.ppf(0.025, 16)))


def test_icc_interval_left_empty_at_other_levels():
    res = agreement(LARGE, MINI, confidence=0.9)
    assert np.isnan(res.stats["icc_ci_low"])
    assert np.isfinite(res.stats["icc"])
    assert any("95% only" in note for note in res.notes)
    # other intervals follow the level: a 90% bias interval is narrower than the 95% one
    wide = agreement(LARGE, MINI).stats
    assert res.stats["bias_ci_high"] - res.stats["bias_ci_low"] < \
        wide["bias_ci_high"] - wide["bias_ci_low"]
