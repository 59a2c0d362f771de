"""The breathing rate measured from an ECG at read time (R-wave amplitude), and the window table
using it when no rate is given. ECGs are simulated with neurokit2 (``ecg_simulate``) and their
amplitude scaled by a breathing rhythm of known rate, so the truth is known to the test."""

from __future__ import annotations

import numpy as np
import pytest
from test_metrics_edr import FS, _ecg  # tests/ on sys.path: the same simulated ECG

import rrkit
from rrkit._breathing import MEASURED_BY, STEP_S, STRETCH_S, window_breathing_hz
from rrkit.cli import main
from rrkit.simulate import simulate_rr


def _ecg_record(tmp_path, breathing_hz, *, name="ecg", duration_s=300, seed=1):
    """A WFDB record (written by wfdb.wrsamp) of one ECG lead whose amplitude follows a breathing
    rhythm of ``breathing_hz`` (None: no rhythm)."""
    wfdb = pytest.importorskip("wfdb")
    ecg = _ecg(breathing_hz, seed=seed, duration_s=duration_s)
    wfdb.wrsamp(name, fs=FS, units=["mV"], sig_name=["ECG"], p_signal=ecg[:, None],
                fmt=["16"], write_dir=str(tmp_path))
    return tmp_path / f"{name}.hea"


@pytest.mark.parametrize("truth", [0.1, 0.25])
def test_reading_an_ecg_measures_its_breathing_rate(tmp_path, truth):
    rec = rrkit.read(_ecg_record(tmp_path, truth))
    ex = rec.info.extra
    # Welch resolution 1/64 s = 0.016 Hz on the 4 Hz amplitude series: within one bin
    assert ex["breathing_hz"] == pytest.approx(truth, abs=0.016)
    assert MEASURED_BY in ex["breathing_measured_by"]
    series = ex["breathing_series"]
    # 300 s: stretches of 120 s every 60 s start at 0, 60, 120, 180, the last ending at the last
    # beat a second or two before 300 s (counted by hand)
    assert len(series) == 4
    assert [b - a for a, b, _ in series[:3]] == pytest.approx([STRETCH_S] * 3)
    assert STRETCH_S - 3 < series[3][1] - series[3][0] <= STRETCH_S
    assert series[1][0] - series[0][0] == pytest.approx(STEP_S)
    assert all(hz == pytest.approx(truth, abs=0.016) for _, _, hz in series)
    # the window table's lookup: stretches centred in 60-300 s
    assert window_breathing_hz(ex, 60.0, 300.0) == pytest.approx(truth, abs=0.016)
    assert window_breathing_hz(ex, 0.0, 10.0) is None  # no stretch centred there


def test_an_ecg_without_a_breathing_rhythm_claims_none(tmp_path, capsys):
    path = _ecg_record(tmp_path, None)
    rec = rrkit.read(path)
    assert rec.info.extra["breathing_hz"] is None
    assert main(["info", str(path)]) == 0
    assert "breathing  no steady rate" in capsys.readouterr().out
    # beat times and rates without an ECG have no measured series
    assert "breathing_series" not in simulate_rr(duration_s=120, seed=1).info.extra


def _on(rr_rec, ecg_rec):
    """The simulated RR series carrying what the reader measured on the ECG (its ReadInfo)."""
    return rr_rec.replace(info=ecg_rec.info)


def test_measured_rate_decides_the_note_in_the_window_table(tmp_path):
    # orthostatic RR: a dominant 0.1 Hz baroreflex oscillation, breathing at 0.25 Hz
    standing = simulate_rr(duration_s=300, seed=4, mean_rr_ms=700.0, lf_hz=0.1, lf_amp_ms=60.0,
                           resp_hz=0.25, resp_amp_ms=8.0)
    alone = rrkit.analyze(standing, clean=None)
    assert "the spectrum alone cannot tell which" in alone["notes"][0]
    assert np.isnan(alone["resp_hz"][0])
    ecg = rrkit.read(_ecg_record(tmp_path, 0.25, name="standing"))
    measured = rrkit.analyze(_on(standing, ecg), clean=None)
    note = measured["notes"][0]
    assert "not breathing" in note
    assert MEASURED_BY in note
    assert "breathing at" not in note
    assert 0.2 < measured["resp_hz"][0] < 0.32
    # paced breathing at 6 per minute (0.1 Hz), measured from the ECG: the claim, so worded
    paced = simulate_rr(duration_s=300, seed=2, resp_hz=0.1, resp_amp_ms=60.0, lf_amp_ms=5.0)
    ecg6 = rrkit.read(_ecg_record(tmp_path, 0.1, name="paced"))
    row = rrkit.analyze(_on(paced, ecg6), clean=None).iloc[0]
    assert "breathing at 0.09" in row["notes"] or "breathing at 0.10" in row["notes"]
    assert f"{MEASURED_BY}) lies below the HF band" in row["notes"]
    assert 0.08 < row["resp_hz"] < 0.12


def test_a_given_rate_always_wins(tmp_path):
    paced = simulate_rr(duration_s=300, seed=2, resp_hz=0.1, resp_amp_ms=60.0, lf_amp_ms=5.0)
    ecg = rrkit.read(_ecg_record(tmp_path, 0.25, name="other"))
    events = tmp_path / "protocol.csv"
    events.write_text("label,start_s,end_s,breaths_per_min\npaced,0,300,6\nfree,0,300,\n")
    df = rrkit.analyze(_on(paced, ecg), windows=f"events:{events}", clean=None)
    given, free = df["notes"]
    # 6 per minute given in the table: the given rate, not the measured 0.25 Hz
    assert "breathing at 0.100 Hz (6.0/min, given) lies below the HF band" in given
    assert MEASURED_BY not in given
    # no rate in the table: the measured one (0.25 Hz) names the 0.1 Hz peak as not breathing
    assert MEASURED_BY in free
    assert "not breathing" in free
