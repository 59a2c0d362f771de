"""``rrkit info`` end to end: main([...]) with files in tmp_path, output read from capsys.

Expected numbers are hand-computed from the tiny inputs (comment beside each check) or the
MIT-BIH record 100 counts (../shared/data/mitdb-100/README.md).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from rrkit.cli import main


def _rr_file(tmp_path):
    path = tmp_path / "morning.csv"
    path.write_text("timestamp;RR (ms)\n"
                    "2026-03-01T07:00:01.000+01:00;1000\n"
                    "2026-03-01T07:00:01.750+01:00;750\n"
                    "2026-03-01T07:00:02.750+01:00;1000\n"
                    "2026-03-01T07:00:03.250+01:00;500\n")
    return path


def test_info_rr_table(tmp_path, capsys):
    assert main(["info", str(_rr_file(tmp_path))]) == 0
    out = capsys.readouterr().out
    assert "kind       rr  (decided by: column name 'RR (ms)')" in out
    assert "unit       ms  (decided by: column name 'RR (ms)')" in out
    assert "beats      5 beats, 4 intervals" in out
    assert "duration   0:03.2 (3.2 s)" in out  # 1000 + 750 + 1000 + 500 ms
    assert "start      2026-03-01T07:00:00+01:00" in out  # first stamp minus its 1000 ms
    # the range after correction comes first, the range as read after it; the numbers of
    # both are those of rrkit.clean and of the raw intervals (60000/1000 .. 60000/500)
    import rrkit

    rec = rrkit.read(_rr_file(tmp_path))
    hr = 60000.0 / rrkit.clean(rec).recording.rr_ms
    line = next(ln for ln in out.splitlines() if ln.startswith("  HR range"))
    assert line.startswith(f"  HR range   {hr.min():.0f} to {hr.max():.0f} bpm, median "
                           f"{np.median(hr):.0f} bpm after artifact correction")
    assert line.endswith("as read 60 to 120 bpm (from 4 intervals)")
    assert "gaps       none" in out
    assert "separator semicolon" in out


def test_info_options_and_samples(tmp_path, capsys):
    path = tmp_path / "peaks.txt"
    path.write_text("0\n250\n500\n760\n1000\n")  # sample indices at 250 Hz
    assert main(["info", str(path), "--kind", "peaks", "--unit", "samples", "--fs", "250"]) == 0
    out = capsys.readouterr().out
    assert "kind       peaks  (decided by: given)" in out
    assert "unit       samples  (decided by: given)" in out
    assert "fs         250 Hz" in out
    assert "as read 58 to 62 bpm" in out  # 250 samples = 1 s -> 60 bpm; 260 -> 57.7; 240 -> 62.5


def test_info_annotations_and_ecg(mitdb100, capsys):
    assert main(["info", f"{mitdb100}.atr", f"{mitdb100}.hea"]) == 0
    out = capsys.readouterr().out
    atr, ecg = out.split("\n\n")
    assert "beats      2273 beats, 2272 intervals" in atr  # README: 2,273 beats
    assert "symbols    N x2239, A x33, V x1" in atr
    assert "non-beats  1 skipped (+ x1)" in atr
    assert "kind       ecg" in ecg
    assert "fs         360 Hz" in ecg
    assert "ECG        detector neurokit; inverted lead no;" in ecg
    assert "% of beats match the median beat" in ecg


def test_info_error_is_one_line(tmp_path, capsys):
    bad = tmp_path / "bad.txt"
    bad.write_text("812\n790\nabc\n800\n")
    assert main(["info", str(bad)]) == 2
    err = capsys.readouterr().err
    expected = f"{bad}, line 3: found 'abc' in column 'column 1', expected a number"
    assert err.strip() == f"rrkit: error: {expected}"
    assert main(["info", str(tmp_path / "missing.txt")]) == 2
    assert "file not found" in capsys.readouterr().err


def test_info_several_files_one_bad(tmp_path, capsys):
    good = _rr_file(tmp_path)
    bad = tmp_path / "empty.txt"
    bad.write_text("")
    assert main(["info", str(bad), str(good)]) == 2
    captured = capsys.readouterr()
    assert "the file is empty" in captured.err
    assert str(good) in captured.out
    assert "beats      5 beats" in captured.out


def test_info_debug_raises(tmp_path):
    from rrkit import InputError

    bad = tmp_path / "empty.txt"
    bad.write_text("")
    with pytest.raises(InputError, match="the file is empty"):
        main(["--debug", "info", str(bad)])


def test_info_help(capsys):
    assert main(["info", "--help"]) == 0
    out = capsys.readouterr().out
    assert "--kind" in out
    assert "--fs" in out
    assert "not a medical device" in out


def test_info_gaps_and_warning(tmp_path, capsys, rng):
    path = tmp_path / "drop.csv"
    stamps = [0.8, 1.6, 2.4, 33.2, 34.0, 34.8]
    path.write_text("ts,rr_ms\n" + "".join(f"2026-03-01T07:00:{s:06.3f}Z,800\n" for s in stamps))
    assert main(["info", str(path)]) == 0
    out = capsys.readouterr().out
    assert "gaps       1 (30.0 s); no successive difference crosses them" in out
    noise = tmp_path / "noise.csv"
    noise.write_text("ecg\n" + "".join(f"{v:.5f}\n" for v in rng.normal(size=7500)))
    assert main(["info", str(noise), "--fs", "250"]) == 0
    assert "rrkit: warning:" in capsys.readouterr().err
    assert Path(noise).exists()


def test_hints_name_the_command_line_options(tmp_path, capsys):
    # the library's hints name Python keywords ("pass fs="); each command spells them as its
    # own options, and leaves a keyword alone where the command has no such option
    samples = tmp_path / "peaks.csv"
    samples.write_text("sample\n0\n300\n610\n905\n1210\n1500\n")
    assert main(["info", str(samples)]) == 2
    err = capsys.readouterr().err
    assert "(pass --fs, the sampling rate in Hz)" in err
    assert "fs=" not in err
    unclear = tmp_path / "rr.txt"
    unclear.write_text("50\n51\n50.5\n52\n49\n")
    assert main(["clean", str(unclear)]) == 2
    assert "(pass --unit ms, --unit s or --unit samples with --fs)" in capsys.readouterr().err
    assert main(["analyze", str(unclear), str(unclear)]) == 2
    assert capsys.readouterr().err.count("--unit ms, --unit s or --unit samples with --fs") == 2
    from rrkit import InputError
    from rrkit.cli import error_line

    exc = InputError("x (pass fs= in Hz, for example fs=250; kind='rr')")
    assert error_line(exc, "info") == "x (pass --fs in Hz, for example --fs 250; --kind rr)"
    assert error_line(exc, "daily") == str(exc)  # daily has neither --fs nor --kind
    assert error_line(exc, None) == str(exc)
