"""Daily table: baselines and flags against independent computations, day selection, time zones."""

from __future__ import annotations

import datetime as dt
import math
import re
import statistics

import numpy as np
import pandas as pd
import pytest

import rrkit
from rrkit.daily import (
    BaselineSettings,
    DailySettings,
    add_baselines,
    daily_table,
    localize,
    measure_recording,
    select_days,
    weekly_summary,
)
from rrkit.simulate import simulate_rr

D0 = dt.date(2026, 3, 2)  # a Monday


# ----------------------------------------------------------------------------- the rolling fixture
def _fixture_table():
    # REFERENCES.md section 7, rolling fixture (computed): daily RMSSD in ms
    rmssd = [60, 55, 65, 58, 62, 50, 70, 66, 54, 61]
    return pd.DataFrame({"subject": "A", "date": [D0 + dt.timedelta(days=i) for i in range(10)],
                         "quality": "ok", "ln_rmssd": np.log(rmssd), "mean_hr_bpm": 55.0})


def test_rolling_fixture_from_references():
    # the fixture's band is the one of a baseline that ends on the date itself (no lag)
    out = add_baselines(_fixture_table(), settings=BaselineSettings(
        baseline_days=7, baseline_min_days=3, baseline_lag_days=0))
    day7, day10 = out.iloc[6], out.iloc[9]
    # REFERENCES.md section 7 (computed): day 7 ln mean 4.089166, SD 0.110316 (ddof=1),
    # CV 2.6978 %; day 10 mean 4.091087, CV 2.8156 %; band from days 1-7 4.034008-4.144324
    assert day7["ln_rmssd_7d"] == pytest.approx(4.089166, abs=5e-7)
    assert day7["ln_rmssd_base_sd"] == pytest.approx(0.110316, abs=5e-7)
    assert day7["ln_rmssd_cv_7d"] == pytest.approx(2.6978, abs=5e-5)
    assert day10["ln_rmssd_7d"] == pytest.approx(4.091087, abs=5e-7)
    assert day10["ln_rmssd_cv_7d"] == pytest.approx(2.8156, abs=5e-5)
    assert day7["ln_rmssd_swc_low"] == pytest.approx(4.034008, abs=5e-7)
    assert day7["ln_rmssd_swc_high"] == pytest.approx(4.144324, abs=5e-7)
    # the column names of the smallest-worthwhile-change (SWC) band and its flags are pinned
    swc = ["ln_rmssd_swc_low", "ln_rmssd_swc_high", "below_swc", "above_swc",
           "hr_swc_low_bpm", "hr_swc_high_bpm", "hr_below_swc", "hr_above_swc"]
    cols = list(out.columns)
    assert [c for c in cols if "swc" in c] == swc
    assert not [c for c in cols if "band" in c]
    # fewer than 3 ok days in the window: no 7-day value (Plews et al. 2014 minimum)
    assert math.isnan(out.iloc[1]["ln_rmssd_7d"])
    assert out.iloc[2]["n_ok_7d"] == 3
    assert not math.isnan(out.iloc[2]["ln_rmssd_7d"])


# ----------------------------------------------------------------------------- independent check
def _squad(seed: int = 7, n_days: int = 45):
    rng = np.random.default_rng(seed)
    rows = []
    for subj, mu, hr0 in (("A01", 4.3, 52.0), ("B02", 3.8, 61.0), ("C03", 4.0, 57.0)):
        for i in range(n_days):
            q = rng.choice(["ok", "flagged", "rejected", "missing"], p=[0.72, 0.1, 0.08, 0.1])
            ln = rng.normal(mu, 0.15)
            hr = rng.normal(hr0, 3.0)
            if q == "missing":
                ln = hr = np.nan
            rows.append({"subject": subj, "date": D0 + dt.timedelta(days=i), "quality": q,
                         # rejected / flagged days carry a value that must NOT enter a baseline
                         "ln_rmssd": ln + (1.0 if q in ("rejected", "flagged") else 0.0),
                         "mean_hr_bpm": hr})
    return pd.DataFrame(rows)


def _independent(table: pd.DataFrame, b: BaselineSettings) -> pd.DataFrame:
    # Written from the published definitions, one date at a time: the 7-day value is the mean
    # of ln-RMSSD of the ok days among the date and the 6 calendar days before it (Plews et al.
    # 2012), with at least 3 such days (Plews et al. 2014); CV = 100 * SD(ddof=1) / mean
    # (Plews et al. 2013); band = baseline mean +/- 0.5 SD (common practice).
    out = []
    for _, r in table.iterrows():
        subj = table[(table["subject"] == r["subject"]) & (table["quality"] == "ok")]
        in7 = subj[(subj["date"] <= r["date"])
                   & (subj["date"] > r["date"] - dt.timedelta(days=b.rolling_days))]
        end = r["date"] - dt.timedelta(days=b.baseline_lag_days)
        inb = subj[(subj["date"] <= end)
                   & (subj["date"] > end - dt.timedelta(days=b.baseline_days))]
        e: dict = {}
        if len(in7) >= b.rolling_min_days:
            vals = list(in7["ln_rmssd"])
            e["ln_rmssd_7d"] = statistics.fmean(vals)
            e["ln_rmssd_cv_7d"] = 100 * statistics.stdev(vals) / statistics.fmean(vals)
            e["mean_hr_bpm_7d"] = statistics.fmean(in7["mean_hr_bpm"])
        if len(inb) >= b.baseline_min_days:
            m, sd = statistics.fmean(inb["ln_rmssd"]), statistics.stdev(inb["ln_rmssd"])
            e["ln_rmssd_swc_low"], e["ln_rmssd_swc_high"] = m - b.swc_sd * sd, m + b.swc_sd * sd
            hm, hsd = statistics.fmean(inb["mean_hr_bpm"]), statistics.stdev(inb["mean_hr_bpm"])
            e["hr_swc_low_bpm"], e["hr_swc_high_bpm"] = hm - b.swc_sd * hsd, hm + b.swc_sd * hsd
            if "ln_rmssd_7d" in e:
                e["below_swc"] = e["ln_rmssd_7d"] < e["ln_rmssd_swc_low"]
                e["above_swc"] = e["ln_rmssd_7d"] > e["ln_rmssd_swc_high"]
                e["hr_below_swc"] = e["mean_hr_bpm_7d"] < e["hr_swc_low_bpm"]
                e["hr_above_swc"] = e["mean_hr_bpm_7d"] > e["hr_swc_high_bpm"]
        monday = r["date"] - dt.timedelta(days=r["date"].weekday())
        wk = table[(table["subject"] == r["subject"]) & (table["date"] >= monday)
                   & (table["date"] < monday + dt.timedelta(days=7))]
        wk_ok = wk[wk["quality"] == "ok"]
        e["week_compliance_pct"] = 100 * len(wk_ok) / len(wk)
        if len(wk_ok) >= b.week_min_days:  # Plews et al. 2014: weekly value from 3 valid days
            e["ln_rmssd_week"] = statistics.fmean(wk_ok["ln_rmssd"])
        out.append(e)
    return pd.DataFrame(out)


@pytest.mark.parametrize("b", [
    BaselineSettings(baseline_days=21, baseline_min_days=10, baseline_lag_days=0),
    BaselineSettings(baseline_days=21, baseline_min_days=10),  # the default lag of 7 days
    BaselineSettings(baseline_days=14, baseline_min_days=7, baseline_lag_days=7, swc_sd=1.0,
                     rolling_min_days=4, week_min_days=4),
])
def test_baselines_equal_independent_computation(b):
    table = _squad()
    got = add_baselines(table, settings=b)
    want = _independent(table, b)
    for col in ("ln_rmssd_7d", "ln_rmssd_cv_7d", "mean_hr_bpm_7d", "ln_rmssd_swc_low",
                "ln_rmssd_swc_high", "hr_swc_low_bpm", "hr_swc_high_bpm",
                "week_compliance_pct", "ln_rmssd_week"):
        w = want[col].to_numpy(dtype=float) if col in want else np.full(len(got), np.nan)
        np.testing.assert_allclose(got[col].to_numpy(dtype=float), w, rtol=1e-12, atol=1e-12,
                                   err_msg=col)
    for col in ("below_swc", "above_swc", "hr_below_swc", "hr_above_swc"):
        w = [None if (not isinstance(v, (bool, np.bool_))) else bool(v) for v in want[col]]
        g = [None if v is pd.NA else bool(v) for v in got[col]]
        assert g == w, col
    assert got["below_swc"].any() or got["above_swc"].any()  # the check sees both states
    assert got["ln_rmssd_swc_low"].notna().sum() > 20


def test_default_baseline_lag_keeps_a_sustained_fall_below_the_swc_band():
    """Simulation with a known truth: 41 steady days (ln-RMSSD 4.2, SD 0.05), then a fall of
    0.15 ln units held for 20 days, against a 28-day baseline. A baseline ending on the date
    takes the fall in as it happens and the band follows it down; the default baseline, ending
    the day before the current 7-day window, keeps the fall below the band."""
    rng = np.random.default_rng(11)
    n = 61
    ln = 4.2 + rng.normal(0.0, 0.05, n)
    ln[41:] -= 0.15
    t = pd.DataFrame({"subject": "A", "date": [D0 + dt.timedelta(days=i) for i in range(n)],
                      "quality": "ok", "ln_rmssd": ln, "mean_hr_bpm": 50.0})
    assert BaselineSettings().baseline_lag_days == 7
    lagged = add_baselines(t, settings=BaselineSettings(baseline_days=28))
    chasing = add_baselines(t, settings=BaselineSettings(baseline_days=28, baseline_lag_days=0))
    fall = slice(47, n)  # from the first day whose 7-day window lies wholly in the fall
    assert lagged["below_swc"].iloc[fall].all()
    assert not chasing["below_swc"].iloc[fall].all()  # the chasing band lets it back in
    # the lagged baseline on day 47 is days 13-40 exactly: the steady stretch only
    assert lagged["ln_rmssd_base_mean"].iloc[47] == pytest.approx(ln[13:41].mean(), rel=1e-12)
    assert chasing["ln_rmssd_base_mean"].iloc[47] == pytest.approx(ln[20:48].mean(), rel=1e-12)


def test_baselines_never_zero_fill_and_absent_days_count_as_missing():
    t = _fixture_table().drop(index=[3, 4, 5]).reset_index(drop=True)  # three dates absent
    out = add_baselines(t, settings=BaselineSettings(baseline_days=7, baseline_min_days=3))
    # on date 7 (index 3 now) the window holds dates 1, 2, 3 and 7: four ok days
    row = out[out["date"] == D0 + dt.timedelta(days=6)].iloc[0]
    vals = np.log([60, 55, 65, 70])
    assert row["n_ok_7d"] == 4
    assert row["ln_rmssd_7d"] == pytest.approx(vals.mean(), rel=1e-12)


def test_add_baselines_rejects_duplicate_dates():
    t = pd.concat([_fixture_table(), _fixture_table().iloc[[0]]])
    with pytest.raises(rrkit.InputError, match="two rows for 2026-03-02"):
        add_baselines(t)


def test_weekly_summary_compliance():
    t = _fixture_table()
    t.loc[[0, 1, 2, 3, 8], "quality"] = ["ok", "missing", "rejected", "missing", "flagged"]
    w = weekly_summary(t)
    first = w.iloc[0]
    # week of Mon 2 March: 7 days in the table, 4 ok (indices 0, 4, 5, 6)
    assert (first["week_days"], first["week_ok_days"]) == (7, 4)
    assert first["week_compliance_pct"] == pytest.approx(100 * 4 / 7)
    assert first["ln_rmssd_week"] == pytest.approx(np.log([60, 62, 50, 70]).mean())
    assert math.isnan(w.iloc[1]["ln_rmssd_week"])  # 3 days, 2 ok: below the 3-day minimum


# ----------------------------------------------------------------------------- settings
def test_settings_validation():
    with pytest.raises(rrkit.InputError, match="unknown time zone 'Mars/Base'"):
        DailySettings.from_options(tz="Mars/Base")
    with pytest.raises(rrkit.InputError, match="wake_start must be before wake_end"):
        DailySettings.from_options(wake_start="11:00", wake_end="05:00")
    with pytest.raises(rrkit.InputError, match="rolling_min_days must be in"):
        BaselineSettings(rolling_min_days=8)
    with pytest.raises(rrkit.InputError, match="pick must be one of"):
        DailySettings.from_options(pick="best")
    with pytest.raises(rrkit.InputError, match="did you mean 'welch'"):
        DailySettings.from_options(psd="welsh")
    with pytest.raises(rrkit.InputError, match="strategy must be one of"):
        DailySettings.from_options(strategy="guess")


# ----------------------------------------------------------------------------- time zones
def test_localize_dst_and_nonexistent_time():
    # Europe/Berlin moves from +01:00 to +02:00 at 02:00 local on 29 March 2026 (IANA tz data)
    a = localize(dt.datetime(2026, 3, 28, 7, 30), "Europe/Berlin")
    b = localize(dt.datetime(2026, 3, 29, 7, 30), "Europe/Berlin")
    assert a.utcoffset() == dt.timedelta(hours=1)
    assert b.utcoffset() == dt.timedelta(hours=2)
    utc = dt.timezone.utc
    assert b.astimezone(utc) - a.astimezone(utc) == dt.timedelta(hours=23)  # same wall time
    with pytest.raises(rrkit.InputError, match="does not exist in time zone Europe/Berlin"):
        localize(dt.datetime(2026, 3, 29, 2, 30), "Europe/Berlin")
    late = dt.datetime(2026, 3, 1, 23, 30, tzinfo=utc)
    assert localize(late, "Europe/Berlin").date() == dt.date(2026, 3, 2)


def _per_rec(rows):
    base = {"window": "morning", "n_beats": 300, "artifact_pct": 0.0, "corrected_pct": 0.0,
            "quality_reason": "", "mean_hr_bpm": 60.0, "rmssd_ms": 50.0,
            "ln_rmssd": math.log(50.0), "sdnn_ms": 50.0, "pnn50_pct": 20.0, "hf_ms2": 500.0,
            "lf_ms2": 600.0, "lf_hf": 1.2, "sd1_ms": 35.0, "dfa_alpha1": 1.0}
    return pd.DataFrame([{**base, **r} for r in rows])


def test_select_days_rules():
    berlin = DailySettings.from_options(tz="Europe/Berlin", wake_start="05:00", wake_end="10:00")
    t = _per_rec([
        # 28 March: a late-night file (outside the wake window), then two mornings
        {"subject": "A", "start": "2026-03-28T01:30:00+01:00", "source": "night", "quality": "ok"},
        {"subject": "A", "start": "2026-03-28T07:40:00", "source": "late", "quality": "ok"},
        {"subject": "A", "start": "2026-03-28T07:10:00", "source": "early", "quality": "ok"},
        # 29 March (DST day): 05:30 UTC is 07:30 CEST, inside the window
        {"subject": "A", "start": "2026-03-29T05:30:00Z", "source": "dst", "quality": "ok"},
        # 30 March: the first try is rejected, the retake is used
        {"subject": "A", "start": "2026-03-30T06:00:00", "source": "try1", "quality": "rejected"},
        {"subject": "A", "start": "2026-03-30T06:05:00", "source": "try2", "quality": "flagged"},
        # 1 April: only an evening recording
        {"subject": "A", "start": "2026-04-01T20:00:00", "source": "evening", "quality": "ok"},
        # 23:30 UTC on 1 April is 01:30 on 2 April in Berlin: a night, not a morning
        {"subject": "B", "start": "2026-04-01T23:30:00+00:00", "source": "b-night",
         "quality": "ok"},
    ])
    days = select_days(t, settings=berlin).set_index(["subject", "date"])
    a = days.loc["A"]
    assert a.loc[dt.date(2026, 3, 28), "source"] == "early"
    assert a.loc[dt.date(2026, 3, 28), "n_recordings"] == 3
    assert a.loc[dt.date(2026, 3, 29), "source"] == "dst"
    assert a.loc[dt.date(2026, 3, 29), "start_time"] == "2026-03-29T07:30:00+02:00"
    assert a.loc[dt.date(2026, 3, 28), "start_time"] == "2026-03-28T07:10:00+01:00"
    assert a.loc[dt.date(2026, 3, 30), "source"] == "try2"
    assert a.loc[dt.date(2026, 3, 31), "quality"] == "missing"
    assert a.loc[dt.date(2026, 3, 31), "quality_reason"] == "no recording"
    assert a.loc[dt.date(2026, 4, 1), "quality"] == "missing"
    assert "between 05:00 and 10:00" in a.loc[dt.date(2026, 4, 1), "quality_reason"]
    b = days.loc["B"]
    assert b.loc[dt.date(2026, 4, 2), "quality"] == "missing"  # local date is 2 April
    assert list(b.index) == list(a.index)  # every subject gets every date of the span


def test_select_days_marked_rule_and_failed_files():
    s = DailySettings.from_options(pick="marked")
    t = _per_rec([
        {"subject": "A", "start": "2026-03-02T07:00:00", "source": "x", "quality": "ok",
         "marked": "no"},
        {"subject": "A", "start": "2026-03-02T07:20:00", "source": "y", "quality": "ok",
         "marked": "yes"},
        {"subject": "A", "start": "2026-03-03T07:00:00", "source": "z", "quality": "ok",
         "marked": None},
    ])
    days = select_days(t, settings=s)
    assert days["source"].iloc[0] == "y"
    assert pd.isna(days["source"].iloc[1])
    assert "no recording marked" in days["quality_reason"].iloc[1]
    t2 = _per_rec([{"subject": "A", "start": "2026-03-02T07:00:00", "source": "bad",
                    "quality": "missing", "failed": True}])
    d2 = select_days(t2)
    assert d2["quality"].iloc[0] == "missing"
    assert "errors.csv" in d2["quality_reason"].iloc[0]


# ----------------------------------------------------------------------------- with recordings
def test_daily_table_from_recordings_matches_metrics():
    recs = []
    for i in range(3):
        start = dt.datetime(2026, 3, 2 + i, 6, 45, tzinfo=dt.timezone.utc)
        rec = simulate_rr(duration_s=380, seed=10 + i).replace(subject="A01", start=start,
                                                               source=f"r{i}")
        recs.append(rec)
    table = daily_table(recs)
    assert table["quality"].tolist() == ["ok"] * 3
    # the daily value is rrkit.metrics of the cleaned morning window (skip 60 s, 300 s)
    cr = rrkit.clean(recs[1])
    w = rrkit.resolve_windows(rrkit.MORNING, recs[1])[0]
    m = rrkit.metrics(cr.window(w.start_s, w.end_s))
    assert table["rmssd_ms"].iloc[1] == pytest.approx(m["rmssd_ms"], rel=1e-12)
    assert table["ln_rmssd"].iloc[1] == pytest.approx(math.log(m["rmssd_ms"]), rel=1e-12)
    # 3 ok days: the 7-day value of day 3 is their mean (Plews et al. 2012)
    assert table["ln_rmssd_7d"].iloc[2] == pytest.approx(table["ln_rmssd"].mean(), rel=1e-12)


def test_measure_recording_rejects_short_recording():
    rows, _ = measure_recording(simulate_rr(duration_s=100, seed=1))
    assert rows[0]["quality"] == "rejected"
    reason = rows[0]["quality_reason"]
    # the morning window asks for 60-360 s; a 100-s recording covers about 40 s of it
    assert re.search(r"lasts (99|100) s and covers (39|40) s of the 300-s window from 60 to "
                     r"360 s \(needs 90 %\)", reason), reason


def test_daily_table_points_folders_to_run_daily(tmp_path):
    with pytest.raises(rrkit.InputError, match=r"use rrkit\.run_daily"):
        daily_table(tmp_path)


def test_daily_table_needs_subject_and_start():
    with pytest.raises(rrkit.InputError, match="needs subject and start"):
        daily_table([simulate_rr(duration_s=400, seed=1)])


def test_select_days_span_options():
    t = _per_rec([{"subject": "A", "start": "2026-03-03T07:00:00", "source": "x",
                   "quality": "ok"}])
    days = select_days(t, first_date="2026-03-01", last_date=dt.date(2026, 3, 4))
    assert days["date"].tolist() == [D0 - dt.timedelta(days=1) + dt.timedelta(days=k)
                                     for k in range(4)]
    assert days["quality"].tolist() == ["missing", "missing", "ok", "missing"]
    with pytest.raises(rrkit.InputError, match="is after last_date"):
        select_days(t, first_date="2026-03-05", last_date="2026-03-04")
    with pytest.raises(rrkit.InputError, match="first_date must be a date"):
        select_days(t, first_date="March")


def test_measure_recording_passes_the_spectral_method():
    rec = simulate_rr(duration_s=380, seed=4)
    rows, cr = measure_recording(rec, settings=DailySettings.from_options(psd="lomb"))
    w = rrkit.resolve_windows(rrkit.MORNING, rec)[0]
    m = rrkit.metrics(cr.window(w.start_s, w.end_s), psd="lomb")
    assert rows[0]["hf_ms2"] == pytest.approx(m["hf_ms2"], rel=1e-12)
    welch = measure_recording(rec)[0][0]["hf_ms2"]
    assert welch != pytest.approx(m["hf_ms2"], rel=1e-6)
