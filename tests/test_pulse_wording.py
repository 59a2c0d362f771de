"""Pulse-derived input is called pulse-to-pulse, never RR, in every output about the recording:
``rrkit info``, ``clean``, ``analyze`` (table, csv, json), the diagnostic figure and ``ramp``."""

from __future__ import annotations

import json
import shutil

import numpy as np
import pandas as pd
import pytest

import rrkit
from rrkit.cli import main
from rrkit.exercise import RampSettings, ramp_test
from rrkit.io import write_rr
from rrkit.plots import ramp_figure, recording_diagnostic
from rrkit.recording import ReadInfo, interval_name
from rrkit.simulate import simulate_ramp, simulate_rr


@pytest.fixture
def wabp(mitdb100, tmp_path):
    """MIT-BIH 100's beat annotations rewritten by wfdb.wrann (the WFDB library) as a ``.wabp``
    annotator file beside the record's header: the extension of an arterial-pressure pulse
    detector, so rrkit reads it as pulse-derived."""
    wfdb = pytest.importorskip("wfdb")
    for ext in ("hea", "dat"):
        shutil.copy(f"{mitdb100}.{ext}", tmp_path / f"100.{ext}")
    ann = wfdb.rdann(str(mitdb100), "atr")
    wfdb.wrann("100", "wabp", ann.sample, symbol=ann.symbol, fs=360, write_dir=str(tmp_path))
    return tmp_path / "100.wabp"


@pytest.fixture
def pulse_text(tmp_path):
    """Pulse times in a text file, read with kind="pulse" (invented, five minutes)."""
    rec = simulate_rr(duration_s=420, seed=3)
    f = tmp_path / "finger.txt"
    f.write_text("\n".join(f"{t:.4f}" for t in rec.beat_times_s + 0.25) + "\n")
    return f


def test_one_answer_for_every_stage(wabp, mitdb100):
    pulse = rrkit.read(wabp)
    ecg = rrkit.read(f"{mitdb100}.atr")
    assert interval_name(pulse) == interval_name(pulse.info) == "pulse-to-pulse"
    assert interval_name(ecg) == "RR"
    assert interval_name(rrkit.clean(pulse)) == "pulse-to-pulse"  # a CleanResult: its input
    assert interval_name(rrkit.analyze(pulse, windows="start:60+300")) == "pulse-to-pulse"
    assert interval_name(ReadInfo(kind="ppg")) == "pulse-to-pulse"
    assert interval_name(None) == "RR"


def test_info_and_clean_say_pulse_to_pulse(wabp, mitdb100, tmp_path, capsys):
    assert main(["info", str(wabp)]) == 0
    out = capsys.readouterr().out
    assert "intervals  pulse-to-pulse, not RR" in out
    # 2,273 beats in MIT-BIH 100 (PhysioNet record README, REFERENCES.md): 2,272 intervals
    assert main(["clean", str(wabp), "--rr-out", str(tmp_path / "c.txt")]) == 0
    out = capsys.readouterr().out
    assert "2272 pulse-to-pulse intervals" in out
    assert "corrected pulse-to-pulse intervals ->" in out
    assert " RR" not in out
    assert main(["clean", f"{mitdb100}.atr"]) == 0
    out = capsys.readouterr().out
    assert "2272 RR intervals" in out
    assert "pulse" not in out


def test_analyze_says_it_once_in_a_table_and_as_a_column(pulse_text, tmp_path, capsys):
    rr = tmp_path / "strap.txt"
    write_rr(rr, simulate_rr(duration_s=420, seed=4))
    assert main(["analyze", str(pulse_text), "--kind", "pulse", "--window", "slide:2m",
                 "--no-progress"]) == 0
    out = capsys.readouterr().out
    first = out.splitlines()[0]
    assert first.startswith("intervals: pulse-to-pulse (all files, read from a pulse wave)")
    assert out.count("pulse-to-pulse (") == 1          # said once, not per window
    assert "pulse" not in out.split("notes", 1)[-1]    # and not as a note on every row
    # an RR file: nothing said, the usual table
    assert main(["analyze", str(rr), "--window", "slide:2m", "--no-progress"]) == 0
    assert "pulse" not in capsys.readouterr().out
    out_csv = tmp_path / "w.csv"
    assert main(["analyze", str(pulse_text), "--kind", "pulse", "--window", "slide:2m",
                 "-o", str(out_csv), "--no-progress"]) == 0
    df = pd.read_csv(out_csv)
    assert list(df.columns[:2]) == ["source", "intervals"]
    assert set(df["intervals"]) == {"pulse-to-pulse"}
    assert main(["analyze", str(rr), "--window", "slide:2m", "--format", "json",
                 "--no-progress"]) == 0
    assert {r["intervals"] for r in json.loads(capsys.readouterr().out)} == {"RR"}


def test_diagnostic_figure_names_the_intervals(wabp, mitdb100):
    pytest.importorskip("matplotlib")
    import matplotlib.pyplot as plt

    for path, name in ((wabp, "pulse-to-pulse"), (f"{mitdb100}.atr", "RR")):
        fig = recording_diagnostic(rrkit.read(path), window_s=(60, 360))
        labels = [ax.get_ylabel() for ax in fig.axes] + [ax.get_xlabel() for ax in fig.axes]
        assert f"{name} interval (ms)" in labels
        assert f"{name} interval n (ms)" in labels
        assert f"{name} intervals, analysis window" in fig._suptitle.get_text()
        other = "RR" if name != "RR" else "pulse"
        assert not any(lab.startswith(other) for lab in labels)
        plt.close(fig)


def test_ramp_says_pulse_to_pulse(tmp_path, capsys):
    sim = simulate_ramp(seed=4)
    f = tmp_path / "ramp_pulses.txt"
    f.write_text("\n".join(f"{t:.4f}" for t in sim.recording.beat_times_s) + "\n")
    out = tmp_path / "out"
    assert main(["ramp", str(f), "--kind", "pulse", "-o", str(out)]) == 0
    printed = capsys.readouterr().out
    assert "intervals   pulse-to-pulse (read from a pulse wave" in printed
    settings = json.loads((out / "settings.json").read_text())
    assert settings["intervals"] == "pulse-to-pulse"
    res = ramp_test(rrkit.read(f, kind="pulse"),
                                   settings=RampSettings(n_boot=100))
    assert res.interval_name == "pulse-to-pulse"
    fig = ramp_figure(res)
    assert "from pulse-to-pulse intervals" in fig._suptitle.get_text()
    import matplotlib.pyplot as plt

    plt.close(fig)
    # the times were written to 0.1 ms
    np.testing.assert_allclose(rrkit.read(f, kind="pulse").rr_ms, sim.recording.rr_ms, atol=0.2)
