"""Batch runtime: patterns, discovery, placement in a time zone, fault tolerance, resume."""

from __future__ import annotations

import datetime as dt
import gzip
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import rrkit
from rrkit.batch import (
    FilenamePattern,
    InlineExecutor,
    LocalExecutor,
    discover,
    read_manifest,
    run_daily,
)
from rrkit.batch._atomic import TMP_SUFFIX, atomic_write_text
from rrkit.cli import main
from rrkit.daily import BaselineSettings, DailySettings
from rrkit.simulate import simulate_rr

D0 = dt.date(2026, 3, 2)


def _write(path: Path, seed: int, *, duration_s: float = 370.0, mean_rr_ms: float = 950.0):
    path.parent.mkdir(parents=True, exist_ok=True)
    rr = simulate_rr(duration_s=duration_s, seed=seed, mean_rr_ms=mean_rr_ms, as_recording=False)
    rrkit.write_rr(path, rr)
    return path


def _squad_folder(root: Path, *, subjects=("A01", "B02"), n_days: int = 10, skip=()):
    files = []
    for si, subj in enumerate(subjects):
        for d in range(n_days):
            if (subj, d) in skip:
                continue
            day = D0 + dt.timedelta(days=d)
            files.append(_write(root / subj / f"{subj}_{day:%Y-%m-%d}_0710.txt",
                                seed=1000 * si + d, mean_rr_ms=900 + 60 * si))
    return files


# ----------------------------------------------------------------------------- patterns
@pytest.mark.parametrize(("pattern", "path", "expected"), [
    ("{subject}_{date}[_{time}]*", "x/A01_2026-03-01_0712.txt",
     {"subject": "A01", "date": dt.date(2026, 3, 1), "time": dt.time(7, 12)}),
    ("{subject}_{date}[_{time}]*", "A_01_20260301.csv",
     {"subject": "A_01", "date": dt.date(2026, 3, 1)}),
    ("{subject}/{date:%d.%m.%Y}_{position}.txt", "A01/01.03.2026_supine.txt",
     {"subject": "A01", "date": dt.date(2026, 3, 1), "position": "supine"}),
    ("**/{subject}/{datetime}.rr", "a/b/A01/20260301T071230.rr",
     {"subject": "A01", "date": dt.date(2026, 3, 1), "time": dt.time(7, 12, 30)}),
    ("{subject}/{date:%d.%m.%Y}_{position}.txt", "z/A01/01.03.2026_supine.txt", None),
    ("{subject}_{date}*", "notes.txt", None),
])
def test_pattern_match(pattern, path, expected):
    assert FilenamePattern(pattern).match(path) == expected


@pytest.mark.parametrize(("pattern", "message"), [
    ("{subject", "never closed"),
    ("{subject}_{date:%Q}", "unknown format code '%Q'"),
    ("{datetime}_{date}", "appears twice"),
    ("{subject:%Y}", "a format is allowed only for date"),
    ("{sub-ject}", "bad field name"),
    ("{subject}[_{date}", "never closed with"),
])
def test_pattern_errors(pattern, message):
    with pytest.raises(rrkit.InputError, match=message):
        FilenamePattern(pattern)


def test_pattern_impossible_date():
    with pytest.raises(rrkit.InputError, match="not a valid date"):
        FilenamePattern("{subject}_{date}*").match("A01_2026-02-30.txt")


# ----------------------------------------------------------------------------- discovery
def test_discover_manifest_precedence(tmp_path):
    data = tmp_path / "data"
    _write(data / "A01_2026-03-02_0700.txt", 1)
    _write(data / "other.txt", 2)
    (data / "README.md").write_text("not a recording")
    man = tmp_path / "manifest.csv"
    man.write_text("path,subject,start,position\n"
                   "A01_2026-03-02_0700.txt,Z09,2026-03-05T06:30:00,seated\n"
                   "missing.txt,Z09,2026-03-06T06:30:00,supine\n"
                   "other.txt,,2026-03-06T06:30:00,supine\n"
                   "other.txt,Z09,yesterday,supine\n")
    found = discover(data, manifest=man)
    (cand,) = found.candidates  # only the manifest's files; other.txt rows both bad
    assert (cand.subject, cand.start, cand.extra) == ("Z09", dt.datetime(2026, 3, 5, 6, 30),
                                                      {"position": "seated"})
    kinds = sorted((p[1], p[2].split(": ", 1)[-1][:30]) for p in found.problems)
    assert [k for k, _ in kinds] == ["FileNotFoundError", "InputError", "InputError"]
    assert found.n_ignored == 2  # other.txt (not placed by the manifest) and README.md


def test_manifest_needs_columns(tmp_path):
    man = tmp_path / "m.csv"
    man.write_text("file,who\nx.txt,A\n")
    with pytest.raises(rrkit.InputError, match="manifest needs the columns path, subject"):
        read_manifest(man)


# ----------------------------------------------------------------------------- placement
def test_placement_time_zone_dst_and_unmatched(tmp_path):
    data = tmp_path / "data"
    # file names carry local wall-clock times in Europe/Berlin; 29 March 2026 is the DST day
    _write(data / "A01_2026-03-28_0730.txt", 1)
    _write(data / "A01_2026-03-29_0730.txt", 2)
    # two recordings on 30 March: the 04:10 one is before the wake window, 07:05 is chosen
    _write(data / "A01_2026-03-30_0410.txt", 3)
    _write(data / "A01_2026-03-30_0705.txt", 4)
    _write(data / "A01_2026-03-30_0750.txt", 5)
    # a morning whose first try is too short (rejected): the retake counts
    _write(data / "A01_2026-03-31_0700.txt", 6, duration_s=90)
    _write(data / "A01_2026-03-31_0710.txt", 7)
    # 02:30 does not exist in Berlin on 29 March
    _write(data / "A01_2026-03-29_0230.txt", 8)
    # a file that matches no pattern and holds no subject or time stamps
    _write(data / "misc" / "recording.txt", 9)
    s = DailySettings.from_options(tz="Europe/Berlin", wake_start="05:00", wake_end="11:00")
    summary = run_daily(data, tmp_path / "out", settings=s, executor=InlineExecutor())
    t = summary.table.set_index("date")
    assert t.loc[dt.date(2026, 3, 28), "start_time"] == "2026-03-28T07:30:00+01:00"
    assert t.loc[dt.date(2026, 3, 29), "start_time"] == "2026-03-29T07:30:00+02:00"
    assert t.loc[dt.date(2026, 3, 30), "source"] == "A01_2026-03-30_0705.txt"
    assert t.loc[dt.date(2026, 3, 30), "n_recordings"] == 3
    assert t.loc[dt.date(2026, 3, 31), "source"] == "A01_2026-03-31_0710.txt"
    errs = summary.errors.set_index("path")
    assert set(errs.index) == {"A01_2026-03-29_0230.txt", "misc/recording.txt"}
    assert "does not exist in time zone Europe/Berlin" in errs.loc["A01_2026-03-29_0230.txt",
                                                                   "message"]
    msg = errs.loc["misc/recording.txt", "message"]
    assert "no subject" in msg
    assert "does not match the pattern" in msg
    assert summary.exit_code == 1


def test_placement_manifest_utc_start_local_date(tmp_path):
    data = tmp_path / "data"
    _write(data / "a.txt", 1)
    _write(data / "b.txt", 2)
    man = data / "manifest.csv"
    # 23:30 UTC is 00:30 the next day in Berlin; the date is the local one
    man.write_text("path,subject,start\n"
                   "a.txt,A01,2026-03-01T23:30:00+00:00\n"
                   "b.txt,A01,2026-03-03T06:00:00Z\n")
    s = DailySettings.from_options(tz="Europe/Berlin", wake_start="00:00", wake_end="12:00")
    t = run_daily(data, tmp_path / "out", manifest=man, settings=s,
                  executor=InlineExecutor()).table
    assert t["date"].tolist() == [dt.date(2026, 3, 2), dt.date(2026, 3, 3)]
    assert t["start_time"].tolist() == ["2026-03-02T00:30:00+01:00", "2026-03-03T07:00:00+01:00"]
    utc = DailySettings.from_options(wake_start="00:00", wake_end="12:00")
    t_utc = run_daily(data, tmp_path / "out_utc", manifest=man, executor=InlineExecutor(),
                      settings=utc).table
    assert t_utc["date"].tolist()[0] == dt.date(2026, 3, 1)


# ----------------------------------------------------------------------------- fault tolerance
def test_fault_tolerance_cli_exit_code_and_errors_csv(tmp_path, capsys):
    data = tmp_path / "data"
    good = _squad_folder(data, n_days=6)
    # a truncated gzip file, a binary file and an empty file among the good ones
    raw = gzip.compress(good[0].read_bytes())
    (data / "A01" / "A01_2026-03-08_0700.txt.gz").write_bytes(raw[: len(raw) // 2])
    (data / "B02" / "B02_2026-03-08_0700.txt").write_bytes(bytes(range(256)) * 8)
    (data / "B02" / "B02_2026-03-09_0700.txt").write_bytes(b"")
    out = tmp_path / "out"
    rc = main(["daily", str(data), "-o", str(out), "--jobs", "2"])
    text = capsys.readouterr().out
    assert rc == 1
    errors = pd.read_csv(out / "errors.csv")
    assert sorted(errors["path"]) == ["A01/A01_2026-03-08_0700.txt.gz",
                                      "B02/B02_2026-03-08_0700.txt",
                                      "B02/B02_2026-03-09_0700.txt"]
    assert list(errors.columns) == ["path", "error_type", "message"]
    daily = pd.read_csv(out / "daily.csv")
    used = set(daily.loc[daily["quality"] != "missing", "source"])
    assert used == {f.relative_to(data).as_posix() for f in good}  # every good file has its row
    # the failed days are present, as missing, with the reason
    failed_day = daily[(daily["subject"] == "B02") & (daily["date"] == "2026-03-09")].iloc[0]
    assert failed_day["quality"] == "missing"
    assert "errors.csv" in failed_day["quality_reason"]
    assert "12 done, 0 skipped (unchanged), 3 failed" in text
    assert "Training decisions rest with qualified staff" in text
    for name in ("daily.parquet", "store.h5", "provenance.json", "weekly.csv", "recordings.csv"):
        assert (out / name).is_file()


def test_usage_error_exit_code(tmp_path, capsys):
    (tmp_path / "d").mkdir()
    assert main(["daily", str(tmp_path / "d"), "-o", str(tmp_path / "o"), "--tz", "Nowhere/X"]) == 2
    assert "unknown time zone" in capsys.readouterr().err
    assert main(["daily", str(tmp_path / "nope"), "-o", str(tmp_path / "o")]) == 2
    bad_window = ["daily", str(tmp_path / "d"), "-o", str(tmp_path / "o"), "--window", "mornin"]
    assert main(bad_window) == 2
    assert "unknown window 'mornin'" in capsys.readouterr().err


# ----------------------------------------------------------------------------- resume
def test_rerun_unchanged_recomputes_nothing(tmp_path):
    data = tmp_path / "data"
    files = _squad_folder(data, n_days=5)
    out = tmp_path / "out"
    first = run_daily(data, out, executor=InlineExecutor())
    assert (first.n_done, first.n_skipped, first.n_computed) == (10, 0, 10)
    second = run_daily(data, out, executor=InlineExecutor())
    assert (second.n_done, second.n_skipped, second.n_failed, second.n_computed) == (0, 10, 0, 0)
    pd.testing.assert_frame_equal(first.table, second.table)
    # one changed input is recomputed; a settings change recomputes everything
    _write(files[0], seed=999)
    third = run_daily(data, out, executor=InlineExecutor())
    assert (third.n_done, third.n_skipped) == (1, 9)
    fourth = run_daily(data, out, executor=InlineExecutor(),
                       settings=DailySettings(window="start:30+240"))
    assert (fourth.n_done, fourth.n_skipped) == (10, 0)
    # baseline settings do not change a file's result: nothing recomputed
    fifth = run_daily(data, out, executor=InlineExecutor(), settings=DailySettings(
        window="start:30+240", baselines=BaselineSettings(swc_sd=1.0)))
    assert fifth.n_computed == 0


def test_damaged_cache_entry_is_recomputed(tmp_path):
    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01",), n_days=3)
    out = tmp_path / "out"
    first = run_daily(data, out, executor=InlineExecutor())
    entry = sorted((out / ".rrkit-cache").glob("*.npz"))[0]
    entry.write_bytes(entry.read_bytes()[:100])
    again = run_daily(data, out, executor=InlineExecutor())
    assert (again.n_done, again.n_skipped) == (1, 2)
    pd.testing.assert_frame_equal(first.table, again.table)


def test_killed_run_then_rerun_gives_same_table(tmp_path):
    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01", "B02", "C03", "D04"), n_days=30)  # 120 files
    ref = tmp_path / "ref"
    assert main(["daily", str(data), "-o", str(ref), "--jobs", "2"]) == 0
    out = tmp_path / "out"
    cmd = [sys.executable, "-m", "rrkit", "daily", str(data), "-o", str(out), "--jobs", "1"]
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                            start_new_session=True)
    cache = out / ".rrkit-cache"
    deadline = time.monotonic() + 60
    try:
        while time.monotonic() < deadline and proc.poll() is None:
            if cache.is_dir() and len(list(cache.glob("*.npz"))) >= 10:
                break
            time.sleep(0.01)
        assert proc.poll() is None, "the run ended before it could be interrupted"
        os.killpg(proc.pid, signal.SIGKILL)  # the run and its worker process, by group id
    finally:
        proc.wait(timeout=30)
    n_cached = len(list(cache.glob("*.npz")))
    assert 10 <= n_cached < 120
    assert not (out / "daily.csv").exists()  # killed before the end: no output at all
    rerun = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
    assert rerun.returncode == 0, rerun.stderr
    assert "skipped (unchanged)" in rerun.stdout
    skipped = int(rerun.stdout.rsplit(" done, ", 1)[1].split(" skipped")[0])
    assert skipped >= n_cached - 1
    assert (out / "daily.csv").read_bytes() == (ref / "daily.csv").read_bytes()
    leftovers = [p for p in out.rglob("*") if p.name.endswith(TMP_SUFFIX)]
    assert leftovers == []


def test_stale_temporary_files_are_removed(tmp_path):
    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01",), n_days=2)
    out = tmp_path / "out"
    out.mkdir()
    stale = out / f".daily.csv.abc{TMP_SUFFIX}"
    stale.write_text("partial")
    run_daily(data, out, executor=InlineExecutor())
    assert not stale.exists()


def test_atomic_write_leaves_old_file_on_failure(tmp_path, monkeypatch):
    target = tmp_path / "x.csv"
    atomic_write_text(target, "old\n")

    def boom(src, dst):
        raise OSError("disk full")

    monkeypatch.setattr(os, "replace", boom)
    with pytest.raises(OSError, match="disk full"):
        atomic_write_text(target, "new\n")
    assert target.read_text() == "old\n"
    assert list(tmp_path.iterdir()) == [target]


# ----------------------------------------------------------------------------- executors
def _square(x):
    return x * x


def test_local_executor_matches_inline():
    items = list(range(37))
    with LocalExecutor(2) as ex:
        got = sorted(ex.imap_unordered(_square, items, chunksize=5))
    assert got == [x * x for x in items]
    assert isinstance(ex, rrkit.batch.Executor)
    assert isinstance(InlineExecutor(), rrkit.batch.Executor)
    with pytest.raises(rrkit.InputError, match="jobs must be in"):
        LocalExecutor(0)


def test_jobs_do_not_change_the_table(tmp_path):
    data = tmp_path / "data"
    _squad_folder(data, n_days=4)
    a = run_daily(data, tmp_path / "a", executor=InlineExecutor()).table
    b = run_daily(data, tmp_path / "b", jobs=2).table
    pd.testing.assert_frame_equal(a, b)


# ----------------------------------------------------------------------------- provenance
def test_provenance_lists_every_input_hash(tmp_path):
    import hashlib
    import json

    data = tmp_path / "data"
    files = _squad_folder(data, subjects=("A01",), n_days=3)
    summary = run_daily(data, tmp_path / "out", executor=InlineExecutor())
    prov = json.loads(summary.outputs["provenance"].read_text())
    assert prov["rrkit_version"] == rrkit.__version__
    want = {f.relative_to(data).as_posix(): hashlib.sha256(f.read_bytes()).hexdigest()
            for f in files}
    assert {i["path"]: i["sha256"] for i in prov["inputs"]} == want
    assert prov["settings"]["baselines"]["rolling_days"] == 7
    assert prov["outputs"]["daily_csv"]["sha256"] == hashlib.sha256(
        (tmp_path / "out" / "daily.csv").read_bytes()).hexdigest()
    parquet = pd.read_parquet(tmp_path / "out" / "daily.parquet")
    np.testing.assert_allclose(parquet["ln_rmssd"], summary.table["ln_rmssd"])


def _exit_on_three(x):
    if x == 3:
        os._exit(1)  # a worker process that dies (as if killed by the system)
    return x * x


def test_local_executor_survives_a_dying_worker():
    with LocalExecutor(1, on_broken=lambda item, exc: ("died", item)) as ex:
        got = list(ex.imap_unordered(_exit_on_three, range(8), chunksize=1))
    assert ("died", 3) in got
    assert len(got) == 8
    assert {g for g in got if not isinstance(g, tuple)} <= {x * x for x in range(8)}
    assert 49 in got  # items after the failure still ran on a fresh pool


def test_progress_bar_only_when_asked_or_on_a_terminal(tmp_path, capsys):
    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01",), n_days=3)
    run_daily(data, tmp_path / "a", executor=InlineExecutor())  # stderr is not a terminal here
    assert capsys.readouterr().err == ""
    run_daily(data, tmp_path / "b", executor=InlineExecutor(), progress=True)
    assert "rrkit daily" in capsys.readouterr().err


def test_manifest_marks_the_morning_recording(tmp_path):
    data = tmp_path / "data"
    for name, seed in (("a.txt", 1), ("b.txt", 2), ("c.txt", 3)):
        _write(data / name, seed)
    man = tmp_path / "manifest.csv"
    man.write_text("path,subject,date,time,morning,protocol\n"
                   "a.txt,A01,2026-03-02,06:30,no,supine\n"
                   "b.txt,A01,2026-03-02,06:40,yes,seated\n"
                   "c.txt,A01,2026-03-03,06:30,,supine\n")
    s = DailySettings.from_options(pick="marked")
    t = run_daily(data, tmp_path / "out", manifest=man, settings=s,
                  executor=InlineExecutor()).table
    assert t["source"].iloc[0] == "b.txt"
    assert t["protocol"].iloc[0] == "seated"  # manifest columns travel with the row
    assert t["quality"].iloc[1] == "missing"
    first = run_daily(data, tmp_path / "out", manifest=man, executor=InlineExecutor()).table
    assert first["source"].tolist() == ["a.txt", "c.txt"]  # the default rule: the first one


def test_frequent_premature_beats_carry_the_caution(tmp_path, capsys):
    from rrkit.simulate import inject_artifacts

    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01",), n_days=2)
    rec = simulate_rr(duration_s=370, seed=5)
    ectopic, _ = inject_artifacts(rec, counts={"ectopic": 12}, seed=3)  # ~120 per hour
    rrkit.write_rr(data / "B02_2026-03-02_0700.txt", ectopic)
    out = tmp_path / "out"
    assert main(["daily", str(data), "-o", str(out)]) == 0
    daily = pd.read_csv(out / "daily.csv", keep_default_na=False)
    b = daily[daily["subject"] == "B02"].iloc[0]
    # the artifact stage's caution (above 30 premature beats per hour) travels to the row
    assert "premature beats" in b["caution"]
    assert "does not diagnose" in b["caution"]
    assert (daily.loc[daily["subject"] == "A01", "caution"] == "").all()
    text = capsys.readouterr().out
    assert "frequent premature beats (B02 on 1 of 1 morning;" in text
    assert "does not diagnose" in text


def test_premature_beat_caution_tells_noisy_mornings_apart():
    """A caution that only fires on noisy mornings, where the premature beats are a minority of
    the non-normal intervals, is reported apart: in a noisy 5-minute window a few beats
    labelled premature may be noise (rrkit's reporting rule; the rate is the artifact stage's).
    """
    from rrkit.cli._daily import ectopy_lines

    def c(n):
        return f"{n} premature beats (36 per hour, above 30 per hour). rrkit does not diagnose"

    table = pd.DataFrame({
        "subject": ["P1", "P1", "P2", "N1", "N2", "Q1"],
        "quality": ["ok", "flagged", "flagged", "flagged", "flagged", "ok"],
        # P2: 12 beats -> 24 of 26 non-normal intervals; N1: 4 beats -> 8 of 36; N2: 3 of 35
        "n_beats": [300, 300, 400, 240, 270, 300],
        "artifact_pct": [2.0, 9.0, 6.5, 15.0, 13.0, 0.0],
        "caution": [c(3), c(4), c(12), c(4), c(3), ""]})
    lines = ectopy_lines(table)
    assert len(lines) == 2
    assert lines[0].startswith("frequent premature beats (P1 on 2 of 2 mornings, P2 on 1 of 1 "
                              "morning;")
    assert "clinician" in lines[0]
    assert lines[1].startswith("premature beats counted only on noisy mornings, among other "
                               "artifacts: N1 (1 of 1 morning), N2 (1 of 1 morning);")
    assert "clinician" in lines[1]
    assert "does not diagnose" in lines[1]
    # the boundary: 2 x 9 = 18 premature intervals of 36 non-normal ones is half -> stands
    half = table.iloc[[3]].assign(caution=c(9))
    assert ectopy_lines(half)[0].startswith("frequent premature beats (N1 on 1 of 1 morning")
    # an unreadable count errs on the cautious side
    odd = table.iloc[[3]].assign(caution="premature beats, many")
    assert ectopy_lines(odd)[0].startswith("frequent premature beats (N1")
    assert ectopy_lines(table.assign(caution="")) == []


def test_one_rule_counts_the_premature_beat_cautions():
    """`rrkit daily`, the demo summary and the trend figure count cautioned days the same way:
    the day's morning window carries the caution, out of the days whose morning was read
    (missing days do not count; a caution on a missing row cannot exist but is ignored)."""
    from rrkit._premature import caution_counts

    table = pd.DataFrame({
        "subject": ["A"] * 6 + ["B"] * 2,
        "quality": ["ok", "ok", "flagged", "rejected", "missing", "ok", "ok", "ok"],
        "caution": ["4 premature beats", "", "3 premature beats", "5 premature beats",
                    "9 premature beats", "", "", ""]})
    got = caution_counts(table)
    assert list(got) == ["A"]  # B has none
    assert (got["A"].n_days, got["A"].n_measured) == (3, 5)
    assert got["A"].text() == "3 of 5 mornings"
    assert got["A"].majority
    assert got["A"].firm


def _timestamped(path: Path, start: dt.datetime, seed: int) -> Path:
    rr = simulate_rr(duration_s=370, seed=seed, as_recording=False)
    ends = [start + dt.timedelta(milliseconds=float(x)) for x in np.cumsum(rr)]
    lines = ["time,rr_ms"] + [f"{t.isoformat(timespec='milliseconds')},{v:.1f}"
                              for t, v in zip(ends, rr, strict=True)]
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text("\n".join(lines) + "\n")
    return path


def test_time_stamps_inside_the_file_fill_what_the_name_lacks(tmp_path):
    data = tmp_path / "data"
    # subject from the folder, date from the name, time of day only inside the file
    _timestamped(data / "A01" / "02.03.2026.csv", dt.datetime(2026, 3, 2, 6, 41, 5), 1)
    # the name's date disagrees with the file's stamps: the name wins, the time is unknown
    _timestamped(data / "A01" / "03.03.2026.csv", dt.datetime(2026, 3, 9, 6, 0, 0), 2)
    # no date in the name at all: the file's stamps place it
    _timestamped(data / "B02" / "undated.csv", dt.datetime(2026, 3, 3, 7, 15, 0), 3)
    pattern = "{subject}/[{date:%d.%m.%Y}]*"
    s = DailySettings.from_options(tz="Europe/Berlin")
    summary = run_daily(data, tmp_path / "out", pattern=pattern, settings=s,
                        executor=InlineExecutor())
    t = summary.table.set_index(["subject", "date"])

    def near(text, wall):  # the reader rebuilds the start from the first stamp (ms rounding)
        got = dt.datetime.fromisoformat(text)
        want = rrkit.daily.localize(wall, "Europe/Berlin")
        return abs(got - want) < dt.timedelta(seconds=1)

    a01 = t.loc[("A01", dt.date(2026, 3, 2)), "start_time"]
    assert near(a01, dt.datetime(2026, 3, 2, 6, 41, 5))
    assert pd.isna(t.loc[("A01", dt.date(2026, 3, 3)), "start_time"])
    assert t.loc[("A01", dt.date(2026, 3, 3)), "source"] == "A01/03.03.2026.csv"
    assert near(t.loc[("B02", dt.date(2026, 3, 3)), "start_time"], dt.datetime(2026, 3, 3, 7, 15))
    assert summary.n_failed == 0


def test_localize_agrees_with_pandas(rng):
    # pandas' tz_localize (reference library) for wall times through a year in two zones;
    # ambiguous autumn times are the first occurrence (pandas ambiguous=True, DST)
    for zone in ("Europe/Berlin", "America/New_York", "Australia/Sydney"):
        for minutes in rng.integers(0, 365 * 24 * 60, 300):
            naive = dt.datetime(2026, 1, 1) + dt.timedelta(minutes=int(minutes))
            try:
                ref = pd.Timestamp(naive).tz_localize(zone, ambiguous=True,
                                                      nonexistent="raise")
            except Exception:  # a wall time the clocks skip
                with pytest.raises(rrkit.InputError, match="does not exist"):
                    rrkit.daily.localize(naive, zone)
                continue
            got = rrkit.daily.localize(naive, zone)
            assert got.utcoffset() == ref.utcoffset(), (zone, naive)


from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402


@settings(max_examples=150, deadline=None)
@given(subject=st.from_regex(r"[A-Za-z][A-Za-z0-9-]{0,5}(_[A-Za-z0-9][A-Za-z0-9-]{0,5})?",
                             fullmatch=True),
       day=st.dates(min_value=dt.date(1900, 1, 1), max_value=dt.date(2099, 12, 31)),
       clock=st.times().map(lambda t: t.replace(microsecond=0)),
       compact=st.booleans())
def test_pattern_recovers_what_a_name_was_made_of(subject, day, clock, compact):
    # a name built from known parts parses back to them (invariant of the default pattern)
    name = (f"{subject}_{day:%Y%m%d}_{clock:%H%M%S}.txt" if compact
            else f"{subject}_{day:%Y-%m-%d}_{clock:%H-%M-%S}.txt")
    got = FilenamePattern("{subject}_{date}[_{time}]*").match(f"any/where/{name}")
    assert got == {"subject": subject, "date": day, "time": clock}


@pytest.mark.parametrize(("option", "value", "shown"), [
    ("--min-days", "9", "--min-days must be in [1, 7]; got 9"),
    ("--baseline-min", "0", "--baseline-min must be in"),
    ("--swc-sd", "-1", "--swc-sd must be in"),
    ("--from", "2026-13-01", "--from must be a date 'YYYY-MM-DD'"),
])
def test_daily_usage_errors_name_the_option(tmp_path, capsys, option, value, shown):
    _write(tmp_path / "d" / "A01_2026-03-02_0700.txt", 1)
    rc = main(["daily", str(tmp_path / "d"), "-o", str(tmp_path / "o"), option, value])
    assert rc == 2
    err = capsys.readouterr().err
    assert shown in err
    for internal in ("_days", "swc_sd", "first_date"):  # the Python names stay out of it
        assert internal not in err


def test_cache_entries_are_npz_loaded_without_pickle(tmp_path):
    import zipfile

    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01",), n_days=3)
    out = tmp_path / "out"
    first = run_daily(data, out, executor=InlineExecutor())
    entries = sorted((out / ".rrkit-cache").glob("*.npz"))
    assert len(entries) == 3
    with np.load(entries[0], allow_pickle=False) as z:  # a plain numpy archive
        assert "meta" in z.files
        assert "a_lef8" in z.files  # the float64 arrays, end to end
    # one flipped byte inside an array member: the zip CRC-32 catches it
    raw = bytearray(entries[0].read_bytes())
    with zipfile.ZipFile(entries[0]) as zf:
        info = zf.getinfo("a_lef8.npy")
    at = info.header_offset + 30 + len(info.filename) + len(info.extra) + 200
    raw[at] ^= 0xFF
    entries[0].write_bytes(bytes(raw))
    # an entry holding a pickled object array is refused (never unpickled)
    with zipfile.ZipFile(entries[1]) as zf:
        members = {n: zf.read(n) for n in zf.namelist()}
    import io as _io

    buf = _io.BytesIO()
    np.save(buf, np.array([{"x": 1}], dtype=object), allow_pickle=True)
    members["a_lei8.npy"] = buf.getvalue()
    with zipfile.ZipFile(entries[1], "w") as zf:
        for name, blob in members.items():
            zf.writestr(name, blob)
    again = run_daily(data, out, executor=InlineExecutor())
    assert (again.n_done, again.n_skipped) == (2, 1)
    pd.testing.assert_frame_equal(first.table, again.table)


# ----------------------------------------------------------------------------- folder lock
_HOLD = ("import sys, time; from rrkit.batch._lock import FolderLock; "
         "lk = FolderLock(sys.argv[1]); lk.acquire(); print('held', flush=True); time.sleep(60)")


def test_a_second_run_on_the_same_folder_stops_naming_the_holder(tmp_path, capsys, caplog):
    import logging

    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01",), n_days=2)
    out = tmp_path / "out"
    out.mkdir()
    holder = subprocess.Popen([sys.executable, "-c", _HOLD, str(out)], stdout=subprocess.PIPE,
                              text=True)
    try:
        assert holder.stdout.readline().strip() == "held"
        rc = main(["daily", str(data), "-o", str(out), "--jobs", "1"])
        err = capsys.readouterr().err
        assert rc == 2
        assert f"in use by another rrkit run (process {holder.pid}" in err
        assert len(err.strip().splitlines()) == 1
        assert not (out / "daily.csv").exists()
        t0 = time.monotonic()
        rc = main(["daily", str(data), "-o", str(out), "--jobs", "1", "--wait", "0.5"])
        assert rc == 2
        assert time.monotonic() - t0 >= 0.5
        capsys.readouterr()
    finally:
        holder.kill()  # a killed holder: the kernel releases its lock, its file stays
        holder.wait()
        holder.stdout.close()
    assert str(holder.pid) in (out / ".rrkit-lock").read_text()
    with caplog.at_level(logging.INFO, logger="rrkit"):
        rc = main(["daily", str(data), "-o", str(out), "--jobs", "1"])
    assert rc == 0
    assert f"left by an ended run (process {holder.pid}" in caplog.text
    assert (out / ".rrkit-lock").read_text() == ""  # released cleanly at the end


def test_waiting_run_goes_on_when_the_holder_finishes(tmp_path):
    from rrkit.batch._lock import FolderLock

    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01",), n_days=2)
    out = tmp_path / "out"
    out.mkdir()
    lock = FolderLock(out)
    lock.acquire()
    import threading

    threading.Timer(0.5, lock.release).start()
    summary = run_daily(data, out, executor=InlineExecutor(), wait_s=20)
    assert summary.n_done == 2


# ----------------------------------------------------------------------------- special files
@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes need POSIX")
def test_special_files_are_listed_and_never_hang_the_run(tmp_path):
    import socket

    data = tmp_path / "data"
    good = _squad_folder(data, subjects=("A01",), n_days=3)
    os.mkfifo(data / "A01" / "A01_2026-03-09_0700.txt")  # nobody ever writes into it
    sock_path = data / "A01" / "A01_2026-03-10_0700.txt"
    sock = socket.socket(socket.AF_UNIX)
    try:
        sock.bind(str(sock_path))
        os.symlink("/dev/zero", data / "A01" / "A01_2026-03-11_0700.txt")  # a device
        summary = run_daily(data, tmp_path / "out", jobs=2)
    finally:
        sock.close()
    errors = pd.read_csv(tmp_path / "out" / "errors.csv")
    assert errors["path"].tolist() == ["A01/A01_2026-03-09_0700.txt",
                                       "A01/A01_2026-03-10_0700.txt",
                                       "A01/A01_2026-03-11_0700.txt"]
    assert set(errors["error_type"]) == {"NotARegularFile"}
    assert [m.split(",")[0] for m in errors["message"]] == [
        "a named pipe (FIFO)", "a socket", "a character device"]
    assert summary.n_done == len(good)


def test_a_fifo_that_appears_after_discovery_is_refused_by_the_worker(tmp_path):
    from rrkit.batch._work import process_file

    if not hasattr(os, "mkfifo"):
        pytest.skip("named pipes need POSIX")
    fifo = tmp_path / "late.txt"
    os.mkfifo(fifo)
    res = process_file((str(fifo), "late.txt", "0" * 64), settings=DailySettings(),
                       time_limit_s=5)
    assert (res["ok"], res["error_type"]) == (False, "NotARegularFile")


def _slow_measure(path, settings, out):
    while True:  # a pathological file: the work never ends
        sum(range(1000))


@pytest.mark.parametrize("in_thread", [False, True])
def test_per_file_time_limit_stops_a_file_and_says_so(tmp_path, monkeypatch, in_thread):
    import threading

    from rrkit.batch import _work

    monkeypatch.setattr(_work, "_measure", _slow_measure)
    task = (str(tmp_path / "x.txt"), "x.txt", "0" * 64)
    got = {}

    def run():
        got["res"] = _work.process_file(task, settings=DailySettings(), time_limit_s=0.3)

    t0 = time.monotonic()
    if in_thread:  # as in a Dask worker, whose tasks run in threads
        th = threading.Thread(target=run)
        th.start()
        th.join(10)
        assert not th.is_alive()
    else:
        run()
    assert time.monotonic() - t0 < 5
    res = got["res"]
    assert (res["ok"], res["error_type"]) == (False, "TimeLimitExceeded")
    assert "per-file time limit" in res["message"]
    assert "0.3 s" in res["message"]


def test_time_limit_rows_reach_errors_csv_and_are_not_cached(tmp_path, monkeypatch):
    from rrkit.batch import _work

    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01",), n_days=3)
    real = _work._measure

    def sometimes_slow(path, settings, out):
        if path.endswith("03-03_0710.txt"):
            _slow_measure(path, settings, out)
        real(path, settings, out)

    monkeypatch.setattr(_work, "_measure", sometimes_slow)
    out = tmp_path / "out"
    summary = run_daily(data, out, executor=InlineExecutor(), time_limit_s=0.5)
    assert summary.n_done == 2
    assert summary.n_failed == 1
    errors = pd.read_csv(out / "errors.csv")
    assert errors["error_type"].tolist() == ["TimeLimitExceeded"]
    assert len(list((out / ".rrkit-cache").glob("*.npz"))) == 2  # the stopped file: not cached
    monkeypatch.setattr(_work, "_measure", real)
    again = run_daily(data, out, executor=InlineExecutor(), time_limit_s=0.5)
    assert (again.n_done, again.n_skipped, again.n_failed) == (1, 2, 0)


# ----------------------------------------------------------------------------- other stages
def test_analyze_many_files_with_jobs_keeps_order_and_values(tmp_path, capsys):
    files = _squad_folder(tmp_path / "d", subjects=("A01",), n_days=4)
    bad = tmp_path / "d" / "bad.txt"
    bad.write_text("RR\nabc\n")
    args = ["analyze", *map(str, files[:2]), str(bad), *map(str, files[2:]), "--format", "csv"]
    assert main([*args, "-o", str(tmp_path / "one.csv")]) == 1
    err_one = capsys.readouterr().err
    assert main([*args, "-o", str(tmp_path / "two.csv"), "--jobs", "2"]) == 1
    err_two = capsys.readouterr().err
    assert (tmp_path / "one.csv").read_bytes() == (tmp_path / "two.csv").read_bytes()
    assert [ln for ln in err_one.splitlines() if "error" in ln] == \
        [ln for ln in err_two.splitlines() if "error" in ln]
    src = pd.read_csv(tmp_path / "two.csv")["source"].tolist()
    assert [Path(s).name for s in src] == [f.name for f in files]  # the order of the arguments


def test_agreement_nights_through_a_pool_same_as_in_process():
    import datetime as _dt
    from zoneinfo import ZoneInfo

    from rrkit.simulate import simulate_night

    zone = ZoneInfo("Europe/Berlin")
    nights = [simulate_night(duration_h=1, seed=70 + i, subject=f"N{i}",
                             start=_dt.datetime(2026, 3, 10 + i, 23, 0, tzinfo=zone))
              for i in range(4)]
    here = rrkit.reference_table(nights, definition="tiles-5min", metric="rmssd_ms")
    with LocalExecutor(2) as ex:
        pooled = rrkit.reference_table(nights, definition="tiles-5min", metric="rmssd_ms",
                                       executor=ex)
    pd.testing.assert_frame_equal(here, pooled)
