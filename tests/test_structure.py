"""One window table, one settings tree with one digest, one daylight-saving policy.

The window table (`rrkit.window_rows`) is what `analyze`, the daily table and the reference
values of the agreement search are built from; the settings tree of a daily run is hashed once
(`rrkit._plain.digest`) for the resume cache, the HDF5 store and the provenance; local wall
times follow one rule in `localize` and in clock windows.
"""

from __future__ import annotations

import datetime as dt
import json
import math
from zoneinfo import ZoneInfo

import h5py
import numpy as np
import pandas as pd
import pytest

import rrkit
from rrkit._plain import digest, to_plain
from rrkit.agreement import REFERENCE_DEFINITIONS
from rrkit.agreement._reference import aggregate, window_values
from rrkit.batch import InlineExecutor, run_daily
from rrkit.batch._work import settings_hash
from rrkit.daily import DailySettings, DaySelection, localize, measure_recording
from rrkit.errors import ERROR_COLUMNS
from rrkit.metrics import ALL_KEYS, Bands, MetricsSettings
from rrkit.simulate import simulate_rr
from rrkit.windows import ClockTime, Sliding

PARIS = ZoneInfo("Europe/Paris")


# ----------------------------------------------------------------------------- window table
@pytest.fixture(scope="module")
def night():
    rec = simulate_rr(duration_s=1500, seed=11)
    return rec.replace(start=dt.datetime(2026, 1, 20, 3, 0, tzinfo=PARIS), subject="S1",
                       source="n.txt")


def test_analyze_is_the_window_table(night):
    cr = rrkit.clean(night)
    rows = rrkit.window_rows(cr, windows=Sliding(300))
    df = rrkit.analyze(cr, windows=Sliding(300))
    assert len(rows) == len(df) == 4
    for r, (_, row) in zip(rows, df.iterrows(), strict=True):
        assert r["window"] == row["window"]
        assert r["quality"] == row["quality"]
        assert r["notes"] == row["notes"]
        for k in ALL_KEYS:
            assert (math.isnan(r[k]) and math.isnan(row[k])) or r[k] == row[k], k


def test_each_row_is_metrics_of_its_cleaned_window(night):
    # the obvious implementation: rrkit.metrics of CleanResult.window, window by window
    cr = rrkit.clean(night)
    for r in rrkit.window_rows(cr, windows="slide:5m"):
        part = cr.window(r["start_s"], r["end_s"])
        m = rrkit.metrics(part)
        assert r["n_beats"] == part.input.n_beats
        assert r["corrected_pct"] == part.summary.corrected_pct
        for k in ALL_KEYS:
            assert r[k] == pytest.approx(m[k], rel=1e-9, nan_ok=True), k


def test_daily_rows_are_selected_from_the_window_table(night):
    s = DailySettings()
    rows, cr = measure_recording(night, settings=s)
    table = rrkit.window_rows(cr, windows=s.window_spec(), settings=s.metrics, quality=s.quality)
    assert len(rows) == len(table) == 1
    for k, v in rows[0].items():
        w = table[0][k]
        assert v == w or (not v and not w) or (isinstance(v, float) and math.isnan(v)), k
    assert rows[0]["notes"] == table[0]["notes"]


def test_quality_rules_live_in_the_window_table():
    rec = simulate_rr(duration_s=100, seed=1)
    plain = rrkit.window_rows(rec, windows=rrkit.MORNING)
    ruled = rrkit.window_rows(rec, windows=rrkit.MORNING, quality=rrkit.QualityRules())
    assert plain[0]["quality"] in ("ok", "flagged")       # the cleaning verdict only
    assert ruled[0]["quality"] == "rejected"               # the window is not covered
    assert "needs 90 %" in ruled[0]["quality_reason"]
    loose = rrkit.window_rows(rec, windows=rrkit.MORNING,
                              quality=rrkit.QualityRules(min_coverage=0.1))
    assert loose[0]["quality"] != "rejected"


def test_reference_values_are_aggregations_of_the_window_table(night):
    cr = rrkit.clean(night)
    rows = rrkit.window_rows(cr, windows=Sliding(300, label="tile"),
                             settings=MetricsSettings(domains=("time",)))
    d = REFERENCE_DEFINITIONS["lowest-hr-5min"]
    value, used, _ = aggregate(d, window_values(cr, d.windows, "rmssd_ms"))
    lowest = min((r for r in rows if r["quality"] == "ok"), key=lambda r: r["mean_hr_bpm"])
    assert used == 1
    assert value == lowest["rmssd_ms"]
    ref = rrkit.reference_table([night], definition="tiles-5min", metric="rmssd_ms")
    ok = [r["rmssd_ms"] for r in rows if r["quality"] == "ok"]
    assert ref["rmssd_ms"].iloc[0] == pytest.approx(np.mean(ok), rel=1e-12)


# ----------------------------------------------------------------------------- settings tree
def test_settings_tree_is_taken_as_it_is():
    bands = Bands(hf=(0.15, 0.5))
    s = DailySettings(metrics=MetricsSettings(bands=bands, detrend="linear"))
    rec = simulate_rr(duration_s=400, seed=2)
    rows, cr = measure_recording(rec, settings=s)
    w = rrkit.resolve_windows(rrkit.MORNING, rec)[0]
    m = rrkit.metrics(cr.window(w.start_s, w.end_s), bands=bands,
                      settings=MetricsSettings(detrend="linear"))
    assert rows[0]["hf_ms2"] == pytest.approx(m["hf_ms2"], rel=1e-9)
    default = measure_recording(rec)[0][0]["hf_ms2"]
    assert rows[0]["hf_ms2"] != pytest.approx(default, rel=1e-6)


def test_from_options_fills_the_nodes():
    s = DailySettings.from_options(tz="Europe/Berlin", pick="marked", clean="median",
                                   strategy="drop", psd="ar", detrend="linear",
                                   bands={"hf": (0.15, 0.6)}, reject_corrected_pct=10)
    assert s.days == DaySelection(tz="Europe/Berlin", pick="marked")
    assert (s.cleaning.method, s.cleaning.strategy) == ("median", "drop")
    assert (s.metrics.psd, s.metrics.detrend, s.metrics.bands.hf) == ("ar", "linear", (0.15, 0.6))
    assert s.quality.reject_corrected_pct == 10
    assert s.tz == "Europe/Berlin"
    with pytest.raises(rrkit.InputError, match="metrics must be a MetricsSettings"):
        DailySettings(metrics="welch")


def test_digest_is_the_hash_of_the_plain_settings():
    s = DailySettings.from_options(tz="Europe/Paris")
    plain = s.to_plain()
    assert json.loads(json.dumps(plain)) == plain          # JSON-ready
    assert digest(s) == digest(plain) == s.digest()
    assert to_plain(s) == plain
    # baselines and days do not decide a file's result: the cache key stays
    later = DailySettings.from_options(tz="Europe/Paris", pick="marked")
    assert settings_hash(later) == settings_hash(s)
    assert later.digest() != s.digest()


def _folder(root, n=2):
    (root / "A01").mkdir(parents=True, exist_ok=True)
    for d in range(n):
        day = dt.date(2026, 3, 2) + dt.timedelta(days=d)
        rr = simulate_rr(duration_s=370, seed=40 + d, as_recording=False)
        rrkit.write_rr(root / "A01" / f"A01_{day:%Y-%m-%d}_0710.txt", rr)


def test_one_band_edge_changes_cache_store_and_provenance(tmp_path):
    data = tmp_path / "data"
    _folder(data)
    seen = []
    for hf_hi in (0.40, 0.45):
        s = DailySettings(metrics=MetricsSettings(bands=Bands(hf=(0.15, hf_hi))))
        out = tmp_path / f"out{hf_hi}"
        res = run_daily(data, out, executor=InlineExecutor(), settings=s)
        assert res.n_failed == 0
        cache = sorted(p.name.split("-")[1] for p in (out / ".rrkit-cache").iterdir())
        with h5py.File(out / "store.h5", "r") as h5:
            store = str(h5.attrs["settings_sha256"])
            stored = json.loads(h5.attrs["settings"])
        prov = json.loads((out / "provenance.json").read_text())
        assert cache[0].startswith(settings_hash(s)[:16])
        assert store == s.digest()
        assert stored["metrics"]["bands"]["hf"] == [0.15, hf_hi]
        assert prov["settings_sha256"] == store  # provenance and store: the same digest
        assert prov["cache_key_sha256"] == settings_hash(s)
        assert prov["settings"] == s.to_plain()
        seen.append((cache[0], store, prov["cache_key_sha256"]))
    assert all(a != b for a, b in zip(*seen, strict=True))


def test_errors_csv_has_one_schema(tmp_path):
    data = tmp_path / "data"
    _folder(data, n=1)
    (data / "A01" / "A01_2026-03-05_0710.txt").write_text("800\nabc\n", encoding="ascii")
    res = run_daily(data, tmp_path / "out", executor=InlineExecutor())
    assert res.n_failed == 1
    assert tuple(pd.read_csv(tmp_path / "out" / "errors.csv").columns) == ERROR_COLUMNS


# ----------------------------------------------------------------------------- daylight saving
# Europe/Paris skips 02:00-03:00 on 29 March 2026 and repeats 02:00-03:00 on 25 October 2026
# (EU summer time: last Sunday of March and of October, 01:00 UTC; IANA tz database).
def test_localize_refuses_a_skipped_wall_time_and_takes_the_first_repeated_one():
    with pytest.raises(rrkit.InputError, match="does not exist in time zone Europe/Paris"):
        localize(dt.datetime(2026, 3, 29, 2, 30), "Europe/Paris")
    first = localize(dt.datetime(2026, 10, 25, 2, 30), "Europe/Paris")
    assert first.utcoffset() == dt.timedelta(hours=2)      # summer time: the first 02:30


def _night(start_local: dt.datetime, hours: float):
    rr = np.full(int(hours * 3600), 1000.0)  # 1 s intervals: times are easy to read
    return rrkit.Recording.from_rr(rr, start=start_local)


def test_clock_window_over_the_skipped_hour_is_an_error_not_a_zero_length_window():
    rec = _night(dt.datetime(2026, 3, 29, 0, 0, tzinfo=PARIS), 5)
    with pytest.raises(rrkit.InputError, match=r"clock window start 2026-03-29T02:30:00 does "
                                               r"not exist in time zone Europe/Paris"):
        rrkit.resolve_windows("clock:02:30-03:30@Europe/Paris", rec)
    # the daily table reports it as the reason of a rejected row (same wording)
    s = DailySettings(window="clock:02:30-03:30@Europe/Paris")
    rows, _ = measure_recording(rec, settings=s)
    assert rows[0]["quality"] == "rejected"
    assert "does not exist in time zone Europe/Paris" in rows[0]["quality_reason"]
    # windows whose edges exist are measured across the change: 01:30-03:30 lasts one hour
    (w,) = rrkit.resolve_windows(ClockTime("01:30", "03:30", tz="Europe/Paris"), rec)
    assert w.duration_s == pytest.approx(3600.0)


def test_skipped_hour_on_a_day_the_recording_misses_is_no_error():
    rec = _night(dt.datetime(2026, 3, 29, 8, 0, tzinfo=PARIS), 3)
    assert rrkit.resolve_windows("clock:02:30-03:30@Europe/Paris", rec) == []


def test_clock_window_over_the_repeated_hour_starts_at_the_first():
    rec = _night(dt.datetime(2026, 10, 25, 0, 0, tzinfo=PARIS), 6)
    (w,) = rrkit.resolve_windows(ClockTime("02:30", "04:00", tz="Europe/Paris"), rec)
    # 00:00 +02:00 is 22:00 UTC; the first 02:30 (+02:00) is 00:30 UTC, 04:00 (+01:00) 03:00 UTC
    assert (w.start_s, w.end_s) == (pytest.approx(2.5 * 3600), pytest.approx(5 * 3600))


def test_daily_command_passes_psd_detrend_and_bands_to_the_spectrum(tmp_path):
    from rrkit.cli import main

    data = tmp_path / "data"
    _folder(data, n=1)
    out = tmp_path / "out"
    assert main(["daily", str(data), "-o", str(out), "--psd", "lomb", "--detrend", "linear",
                 "--band", "hf=0.15-0.5", "--no-progress", "--jobs", "1"]) == 0
    prov = json.loads((out / "provenance.json").read_text())
    m = prov["settings"]["metrics"]
    assert (m["psd"], m["detrend"], m["bands"]["hf"]) == ("lomb", "linear", [0.15, 0.5])
    # the value in the table is the spectrum with those settings
    rec = rrkit.read(next((data / "A01").iterdir()))
    cr = rrkit.clean(rec)
    w = rrkit.resolve_windows(rrkit.MORNING, rec)[0]
    want = rrkit.metrics(cr.window(w.start_s, w.end_s), settings=MetricsSettings(
        psd="lomb", detrend="linear", bands=Bands(hf=(0.15, 0.5))))
    got = pd.read_csv(out / "daily.csv")["hf_ms2"].iloc[0]
    assert got == pytest.approx(want["hf_ms2"], rel=1e-6)
    assert main(["daily", str(data), "-o", str(out), "--psd", "welsh"]) == 2
