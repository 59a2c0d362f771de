"""analyze(): windows x (cleaning audit, metrics) -> table; the ``rrkit analyze`` command;
MIT-BIH record 100 end to end."""

from __future__ import annotations

import json
import math
from datetime import datetime
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd
import pytest

import rrkit
from rrkit.analysis import NOTE_SEPARATOR, WINDOW_COLUMNS
from rrkit.cli import main
from rrkit.metrics import ALL_KEYS, TIME_KEYS
from rrkit.simulate import simulate_rr
from rrkit.windows import MORNING, Events, Sliding, Window

PARIS = ZoneInfo("Europe/Paris")


@pytest.fixture(scope="module")
def night():
    rec = simulate_rr(duration_s=1800, seed=3)
    return rec.replace(start=datetime(2026, 1, 15, 3, 30, tzinfo=PARIS), subject="S01",
                       source="night.txt")


def test_columns_and_rows(night):
    df = rrkit.analyze(night, windows=Sliding(300))
    assert list(df.columns) == list(WINDOW_COLUMNS) + list(ALL_KEYS)
    assert len(df) == 5  # 1800 s of beats end a little before 1800 s: five full 5-min windows
    assert df["window"].tolist() == [f"slide-{k:03d}" for k in range(1, 6)]
    assert (df["source"] == "night.txt").all()
    assert (df["subject"] == "S01").all()
    assert df["start_time"].iloc[1] == pd.Timestamp("2026-01-15 03:35:00", tz=PARIS)
    assert (df["quality"] == "ok").all()
    assert df.attrs["metrics_settings"]["psd"] == "welch"
    assert df.attrs["clean_settings"]["method"] == "drr"
    assert df.attrs["rrkit_version"] == rrkit.__version__


def test_rows_equal_metrics_of_the_cleaned_window(night):
    # each row is rrkit.metrics of CleanResult.window over that window's bounds
    cr = rrkit.clean(night)
    df = rrkit.analyze(night, windows=MORNING)
    row = df.iloc[0]
    expect = rrkit.metrics(cr.window(row["start_s"], row["end_s"]))
    for k in ALL_KEYS:
        assert row[k] == pytest.approx(expect[k], nan_ok=True), k
    assert row["window"] == "morning"
    assert (row["start_s"], row["end_s"]) == (60.0, 360.0)
    assert row["artifact_pct"] == cr.window(60.0, 360.0).summary.artifact_pct


def test_clean_none_and_clean_result_input(night):
    raw = rrkit.analyze(night, windows=MORNING, clean=None)
    assert raw["quality"].iloc[0] == "unchecked"
    assert math.isnan(raw["artifact_pct"].iloc[0])
    direct = rrkit.metrics(night.slice(60.0, 360.0))
    assert raw["rmssd_ms"].iloc[0] == pytest.approx(direct["rmssd_ms"])
    cr = rrkit.clean(night, method="median")
    given = rrkit.analyze(cr, windows=MORNING)
    assert given.attrs["clean_settings"]["method"] == "median"
    settings_obj = rrkit.analyze(night, windows=MORNING,
                                 clean=rrkit.CleanSettings(method="median"))
    assert given["rmssd_ms"].iloc[0] == pytest.approx(settings_obj["rmssd_ms"].iloc[0])


def test_artifacts_show_in_the_window_audit():
    rec = simulate_rr(duration_s=700, seed=8)
    rr = rec.rr_ms.copy()
    rr[150], rr[151] = rr[150] * 0.6, rr[151] * 1.4   # a premature beat inside the morning window
    df = rrkit.analyze(rrkit.Recording.from_rr(rr), windows=["morning", "last:2m"])
    assert df["artifact_pct"].iloc[0] > 0
    assert df["artifact_pct"].iloc[1] == 0


def test_events_with_breathing_rate(tmp_path, capsys):
    rec = simulate_rr(duration_s=900, seed=2, resp_hz=0.1, resp_amp_ms=50.0, lf_amp_ms=5.0)
    path = tmp_path / "protocol.csv"
    path.write_text("label,start_s,end_s,breaths_per_min\nrest,0,300,\npaced,300,600,6\n")
    df = rrkit.analyze(rec, windows=Events.from_csv(path), clean=None)
    assert df["window"].tolist() == ["rest", "paced"]
    assert "breathing at 0.100 Hz (6.0/min, given)" in df["notes"].iloc[1]
    # the readable table gives the breathing rate per minute too
    rr_file = tmp_path / "paced.txt"
    rrkit.write_rr(rr_file, rec)
    assert main(["analyze", str(rr_file), "--window", f"events:{path}"]) == 0
    text = capsys.readouterr().out
    header, _rest, paced = text.splitlines()[:3]
    assert header.split()[-1] == "resp_per_min"
    assert paced.split()[-1] == f"{df['resp_hz'].iloc[1] * 60:.1f}"
    assert df["resp_hz"].iloc[1] == pytest.approx(0.1, abs=0.012)


def test_short_and_outside_windows_explain_themselves(night):
    df = rrkit.analyze(night, windows=[Window("early", 0, 40), "clock:12:00-13:00"])
    assert len(df) == 2
    assert math.isnan(df["hf_ms2"].iloc[0])
    assert "HF needs at least 60 s" in df["notes"].iloc[0]
    # 12:00-13:00 is not in a 03:30-04:00 recording: one row saying so
    assert df["window"].iloc[1] == "none"
    assert "no window" in df["quality_reason"].iloc[1]


def test_domains_and_psd_pass_through(night):
    df = rrkit.analyze(night, windows=MORNING, domains=["time"], psd="lomb")
    assert list(df.columns) == list(WINDOW_COLUMNS) + list(TIME_KEYS)
    assert df.attrs["metrics_settings"]["psd"] == "lomb"


def test_bad_arguments(night):
    with pytest.raises(rrkit.InputError, match="clean must be a method name"):
        rrkit.analyze(night, clean=3)
    with pytest.raises(rrkit.InputError, match="did you mean 'drr'"):
        rrkit.analyze(night, clean="dr")
    with pytest.raises(rrkit.InputError, match="recording must be a Recording"):
        rrkit.analyze([1, 2, 3])


# --------------------------------------------------------------------------- MIT-BIH record 100
def test_mitdb100_cleaned_whole_record(mitdb100):
    # MIT-BIH Arrhythmia Database record 100 (Moody & Mark 2001; PhysioNet): a resting adult
    # with 33 A and 1 V beats (REFERENCES.md section 5)
    rec = rrkit.read(f"{mitdb100}.atr")
    df = rrkit.analyze(rec, windows="whole")
    row = df.iloc[0]
    for k in ALL_KEYS:
        assert math.isfinite(row[k]), k
    # physiological ranges for a resting adult (common practice; REFERENCES.md 1 and 5:
    # mean RR 794.6 ms over all beats, normal-to-normal SD 36 ms)
    assert 780 < row["mean_rr_ms"] < 810
    assert 60 < row["mean_hr_bpm"] < 90
    assert 20 < row["sdnn_ms"] < 60
    assert 10 < row["rmssd_ms"] < 70
    assert 0 < row["lf_ms2"] < 5000
    assert 0 < row["hf_ms2"] < 5000
    assert 0.3 < row["dfa_alpha1"] < 1.6
    assert 0.5 < row["sampen"] < 2.6
    assert 0.15 <= row["resp_hz"] < 0.4
    # correction removes the premature beats' long/short pairs: RMSSD falls well below the
    # 63.2 ms of all beats (REFERENCES.md section 5, computed)
    assert row["rmssd_ms"] < 63.2
    assert "caution:" in row["notes"]  # 36 premature beats in 30 min: frequent-ectopy caution


def test_mitdb100_short_windows_give_nan_with_notes(mitdb100):
    rec = rrkit.read(f"{mitdb100}.atr")
    df = rrkit.analyze(rec, windows="slide:45s")
    assert len(df) == 40
    assert df["hf_ms2"].isna().all()
    assert df["sampen"].isna().all()
    assert df["rmssd_ms"].notna().all()
    assert df["notes"].str.contains("HF needs at least 60 s").all()
    assert df["notes"].str.contains("sampen: NaN").all()


# --------------------------------------------------------------------------- CLI
@pytest.fixture
def rr_file(tmp_path):
    rr = simulate_rr(duration_s=700, seed=4, as_recording=False)
    path = tmp_path / "morning.txt"
    np.savetxt(path, np.round(rr, 2), fmt="%.2f")
    return path


def test_cli_table(rr_file, capsys):
    assert main(["analyze", str(rr_file)]) == 0
    out = capsys.readouterr().out
    assert "morning.txt" in out
    assert "rmssd_ms" in out
    assert "morning" in out
    assert "notes" in out
    assert "vlf_ms2: NaN" in out


def test_cli_json_has_every_key(rr_file, capsys):
    assert main(["analyze", str(rr_file), "--window", "slide:5m", "--format", "json"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert [d["window"] for d in data] == ["slide-001", "slide-002"]
    for d in data:
        for k in ("window", "start_s", "end_s", "artifact_pct", "quality", "notes", *ALL_KEYS):
            assert k in d, k
        assert isinstance(d["notes"], list)
        assert d["vlf_ms2"] is None
        assert type(d["n_beats"]) is int  # a count, printed as 412, not 412.0
        assert all(NOTE_SEPARATOR not in n for n in d["notes"])
    table = rrkit.analyze(rrkit.read(rr_file), windows="slide:5m")
    assert data[0]["rmssd_ms"] == pytest.approx(table["rmssd_ms"].iloc[0])


def test_cli_json_carries_the_settings(rr_file, capsys):
    # provenance: every window object names the settings behind its numbers (the same dicts
    # rrkit.analyze keeps in DataFrame.attrs), so two numbers can be traced to their settings
    args = ["analyze", str(rr_file), "-w", "slide:5m", "--psd", "lomb", "--clean", "median",
            "--band", "hf=0.15-0.5", "--format", "json"]
    assert main(args) == 0
    data = json.loads(capsys.readouterr().out)
    table = rrkit.analyze(rrkit.read(rr_file), windows="slide:5m", psd="lomb", clean="median",
                          bands={"hf": (0.15, 0.5)})
    for d in data:
        got = d["settings"]
        assert got["rrkit_version"] == rrkit.__version__
        assert got["metrics"] == json.loads(json.dumps(table.attrs["metrics_settings"]))
        assert got["clean"] == json.loads(json.dumps(table.attrs["clean_settings"]))
        assert got["metrics"]["psd"] == "lomb"
        assert got["metrics"]["bands.hf_hz"] == [0.15, 0.5]
        assert got["clean"]["method"] == "median"
    assert main(["analyze", str(rr_file), "--clean", "none", "--format", "json"]) == 0
    assert json.loads(capsys.readouterr().out)[0]["settings"]["clean"] is None


def test_cli_start_enables_clock_windows(rr_file, tmp_path, capsys):
    # a file without timestamps takes its absolute start from --start; the clock window is then
    # placed on the recording clock through it (hand-computed: 06:30 is 120 s after 06:28)
    spec = "clock:06:30-06:35@Europe/Paris"
    assert main(["analyze", str(rr_file), "-w", spec]) == 2
    err = capsys.readouterr().err
    assert "needs the recording's absolute start time" in err
    assert "--start" in err
    assert main(["analyze", str(rr_file), "-w", spec, "--start", "2026-01-11T06:28:00+01:00",
                 "--format", "json"]) == 0
    (d,) = json.loads(capsys.readouterr().out)
    first = rrkit.read(rr_file).beat_times_s[0]
    assert d["start_s"] == pytest.approx(120.0, abs=2.0)
    assert d["start_s"] >= first + 120.0 - 1e-9
    assert d["end_s"] <= first + 420.0 + 1e-9
    assert d["start_time"].startswith("2026-01-11T06:3")
    # a malformed time, and a file that has its own start, are errors naming the option
    assert main(["analyze", str(rr_file), "--start", "yesterday"]) == 2
    assert "--start must be an ISO 8601 time; got 'yesterday'" in capsys.readouterr().err
    stamped = tmp_path / "stamped.csv"
    times = pd.Timestamp("2026-01-11T06:28:00+01:00") + pd.to_timedelta(
        np.cumsum(np.full(400, 0.9)), unit="s")
    pd.DataFrame({"timestamp": [t.isoformat() for t in times],
                  "rr_ms": np.full(400, 900.0)}).to_csv(stamped, index=False)
    assert main(["analyze", str(stamped), "--start", "2026-01-11T06:28:00+01:00"]) == 2
    assert "has its own start time" in capsys.readouterr().err


def test_cli_column_and_detector(tmp_path, capsys):
    # --column picks the RR column of a table that auto-detection would not choose;
    # --detector only accepts neurokit2's detector names
    rr = simulate_rr(duration_s=400, seed=8, as_recording=False)
    other = simulate_rr(duration_s=400, seed=9, as_recording=False)
    n = min(rr.size, other.size)
    path = tmp_path / "two.csv"
    pd.DataFrame({"rr_ms": np.round(rr[:n], 2), "other_ms": np.round(other[:n], 2)}).to_csv(
        path, index=False)
    assert main(["analyze", str(path), "-w", "whole", "--column", "other_ms",
                 "--format", "json"]) == 0
    (d,) = json.loads(capsys.readouterr().out)
    ref = rrkit.analyze(rrkit.read(path, column="other_ms"), windows="whole")
    assert d["rmssd_ms"] == pytest.approx(ref["rmssd_ms"].iloc[0], rel=1e-12)
    auto = rrkit.analyze(rrkit.read(path), windows="whole")
    assert d["rmssd_ms"] != pytest.approx(auto["rmssd_ms"].iloc[0], rel=1e-6)
    assert main(["analyze", str(path), "--detector", "no-such-detector"]) == 2
    assert "no-such-detector" in capsys.readouterr().err


def test_cli_csv_output_file(rr_file, tmp_path, capsys):
    out = tmp_path / "w.csv"
    code = main(["analyze", str(rr_file), "-w", "last:2m", "--psd", "ar", "--clean", "none",
                 "--band", "hf=0.15-0.5", "-o", str(out)])
    assert code == 0
    df = pd.read_csv(out)
    assert df["window"].tolist() == ["last 2m"]
    assert df["quality"].tolist() == ["unchecked"]
    assert "1 windows" in capsys.readouterr().err


def test_cli_errors(rr_file, tmp_path, capsys):
    assert main(["analyze", str(rr_file), "--window", "slid:5m"]) == 2
    assert "did you mean 'slide'" in capsys.readouterr().err
    assert main(["analyze", str(rr_file), "--band", "hf:0.1"]) == 2
    assert "--band must read NAME=LO-HI" in capsys.readouterr().err
    bad = tmp_path / "bad.txt"
    bad.write_text("hello\nworld\n")
    assert main(["analyze", str(rr_file), str(bad)]) == 1  # one file failed, one analysed
    captured = capsys.readouterr()
    assert "bad.txt" in captured.err
    assert "morning.txt" in captured.out


def test_cli_help_documents_the_window_syntax(capsys):
    assert main(["analyze", "--help"]) == 0
    out = capsys.readouterr().out
    for token in ("morning", "start:60+300", "last:5m", "slide:5m/1m", "clock:04:00-07:00",
                  "events:protocol.csv", "not a medical device"):
        assert token in out


def test_cli_csv_neutralises_formula_labels(tmp_path):
    """Window labels come from an events table (outside text): a label that a spreadsheet would
    run as a formula is written as text (the CSV-injection problem described by OWASP);
    numbers stay numbers."""
    rr = simulate_rr(duration_s=700, seed=4, as_recording=False)
    rec_path = tmp_path / "lab.txt"
    np.savetxt(rec_path, np.round(rr, 2), fmt="%.2f")
    events = tmp_path / "events.csv"
    events.write_text('label,start_s,end_s\n"=HYPERLINK(""http://x"")",0,300\n@rest,300,600\n')
    out = tmp_path / "w.csv"
    assert main(["analyze", str(rec_path), "-w", f"events:{events}", "-o", str(out)]) == 0
    text = out.read_text()
    assert ",=HYPERLINK" not in text
    assert not any(line.startswith(("=", "@")) for line in text.splitlines())
    df = pd.read_csv(out)
    assert df["window"].tolist() == ["'=HYPERLINK(\"http://x\")", "'@rest"]
    assert pd.api.types.is_float_dtype(df["rmssd_ms"])
