"""Pulse-derived input: pulse times, raw PPG, and WFDB annotations of any annotator extension."""

from __future__ import annotations

import shutil

import numpy as np
import pytest

import rrkit
from rrkit.errors import InputError


def _copy_record(mitdb100, tmp_path):
    for ext in ("hea", "dat"):
        shutil.copy(f"{mitdb100}.{ext}", tmp_path / f"100.{ext}")
    return tmp_path / "100"


@pytest.mark.parametrize("ext", ["wabp", "myqrs", "test"])
def test_wfdb_annotations_of_any_extension_beside_the_header(mitdb100, tmp_path, ext):
    # files written by wfdb.wrann itself (the WFDB library, PhysioNet) with other extensions:
    # they must read like the record's .atr (MIT-BIH 100: 2,273 beats, REFERENCES.md 5)
    wfdb = pytest.importorskip("wfdb")
    _copy_record(mitdb100, tmp_path)
    ann = wfdb.rdann(str(mitdb100), "atr")
    wfdb.wrann("100", ext, ann.sample, symbol=ann.symbol, fs=360, write_dir=str(tmp_path))
    ref = rrkit.read(f"{mitdb100}.atr")
    rec = rrkit.read(tmp_path / f"100.{ext}")
    assert rec.info.kind == "annotations"
    assert "beside the header" in rec.info.kind_decided_by
    assert rec.n_beats == ref.n_beats == 2273
    np.testing.assert_allclose(rec.beat_times_s, ref.beat_times_s)
    # wabp is an arterial-pressure pulse detector's annotator: pulse-derived without asking
    assert rec.info.pulse_derived == (ext == "wabp")
    assert rec.info.interval_name == ("pulse-to-pulse" if ext == "wabp" else "RR")


def test_annotation_file_without_header_read_when_kind_given(mitdb100, tmp_path):
    wfdb = pytest.importorskip("wfdb")
    ann = wfdb.rdann(str(mitdb100), "atr")
    wfdb.wrann("lonely", "wabp", ann.sample, symbol=ann.symbol, fs=360, write_dir=str(tmp_path))
    rec = rrkit.read(tmp_path / "lonely.wabp", kind="annotations")
    assert rec.n_beats == 2273
    assert rec.info.fs_hz == 360
    rec = rrkit.read(tmp_path / "lonely.wabp", kind="pulse")
    assert rec.info.pulse_derived
    assert rec.info.kind == "annotations"


def test_text_table_is_never_taken_for_annotations(tmp_path):
    (tmp_path / "x.hea").write_text("x 1 250 1000\n")
    f = tmp_path / "x.csv"
    f.write_text("\n".join(str(v) for v in [800, 810, 790, 805, 795]) + "\n")
    assert rrkit.read(f).info.kind == "rr"
    log = tmp_path / "x.log"  # a text file of another suffix beside the header: still text
    log.write_text(f.read_text())
    assert rrkit.read(log).info.kind == "rr"
    with pytest.raises(InputError, match="kind='annotations' reads WFDB annotation files"):
        rrkit.read(f, kind="annotations")


def test_pulse_times_are_marked_pulse_to_pulse(tmp_path):
    f = tmp_path / "pulses.txt"
    t = np.cumsum(np.full(50, 0.8)) + 0.25
    f.write_text("\n".join(f"{v:.3f}" for v in t) + "\n")
    rec = rrkit.read(f, kind="pulse")
    assert rec.info.kind == "pulse"
    assert rec.info.pulse_derived
    assert rec.info.extra["pulse_values"] == "pulse peak or onset times"
    np.testing.assert_allclose(rec.rr_ms, 800.0)
    # intervals in a file work too (pulse-to-pulse intervals)
    g = tmp_path / "pp.txt"
    g.write_text("\n".join(["812", "790", "805", "821"]) + "\n")
    rec = rrkit.read(g, kind="pulse")
    assert rec.info.extra["pulse_values"] == "pulse-to-pulse intervals"
    assert rrkit.read(g).info.pulse_derived is False


def test_raw_ppg_peaks_match_the_simulated_heart_rate(tmp_path):
    # neurokit2.ppg_simulate at 70 bpm (neurokit2's own simulator, an outside reference)
    nk = pytest.importorskip("neurokit2")
    ppg = nk.ppg_simulate(duration=120, sampling_rate=100, heart_rate=70, random_state=3)
    f = tmp_path / "finger.csv"
    f.write_text("time_s,pleth\n" + "\n".join(f"{i / 100:.2f},{v:.5f}"
                                              for i, v in enumerate(ppg)) + "\n")
    rec = rrkit.read(f, kind="ppg", fs=100)
    assert rec.info.kind == "ppg"
    assert rec.info.pulse_derived
    assert rec.info.extra["detector"] == "elgendi"
    assert rec.info.column == "pleth"
    assert 60000 / np.median(rec.rr_ms) == pytest.approx(70, abs=2)
    assert abs(rec.n_beats - 140) <= 3


def test_ppg_needs_its_sampling_rate_and_a_pulse_detector(tmp_path):
    f = tmp_path / "p.csv"
    f.write_text("pleth\n" + "\n".join(str(np.sin(i / 10)) for i in range(2000)) + "\n")
    with pytest.raises(InputError, match="needs its sampling rate; there is no default"):
        rrkit.read(f, kind="ppg")
    with pytest.raises(InputError, match="is an R-peak detector for ECG"):
        rrkit.read(f, kind="ppg", fs=100, detector="pantompkins1985")
    with pytest.raises(InputError, match="applies to kind='ppg'"):
        rrkit.read(f, detector="elgendi")
    with pytest.raises(InputError, match="does not apply to a PPG"):
        rrkit.read(f, kind="ppg", fs=100, unit="ms")


def _pulse_wave(beat_times_s: np.ndarray, fs_hz: float, duration_s: float) -> np.ndarray:
    """A synthetic finger pulse at each beat: a systolic wave and a smaller diastolic one."""
    t = np.arange(int(duration_s * fs_hz)) / fs_hz
    x = np.zeros_like(t)
    for b in beat_times_s:
        near = (t > b - 0.2) & (t < b + 0.8)
        d = t[near] - b
        x[near] += np.exp(-0.5 * (d / 0.06) ** 2) + 0.4 * np.exp(-0.5 * ((d - 0.3) / 0.08) ** 2)
    return x


def test_ppg_peaks_sit_at_the_planted_pulses(tmp_path):
    # ground truth known: systolic peaks planted at the beats of a simulated series plus a
    # 200 ms delay; neurokit2's detector must find each one, paired within 150 ms after
    # alignment, with a constant lag (the delay) and no spread to speak of
    from rrkit.pairing import pair_beats
    from rrkit.simulate import simulate_rr

    ref = simulate_rr(duration_s=300, seed=8)
    wave = _pulse_wave(ref.beat_times_s + 0.2, 100.0, ref.beat_times_s[-1] + 1.5)
    f = tmp_path / "finger.csv"
    f.write_text("ppg\n" + "\n".join(f"{v:.5f}" for v in wave) + "\n")
    ppg = rrkit.read(f, kind="ppg", fs=100)
    pairs = pair_beats(ref, ppg)
    assert pairs.stats["matched_pct"] >= 99.0
    assert pairs.stats["n_extra"] <= 1
    assert pairs.alignment.offset_s == pytest.approx(-0.2, abs=0.015)
    assert pairs.alignment.jitter_ms < 10.0
    assert pairs.interval_name == "pulse-to-pulse"


def test_ppg_channel_of_a_wfdb_record_found_by_its_label(tmp_path):
    wfdb = pytest.importorskip("wfdb")
    from rrkit.simulate import simulate_rr

    ref = simulate_rr(duration_s=120, seed=9)
    wave = _pulse_wave(ref.beat_times_s, 125.0, ref.beat_times_s[-1] + 1.0)
    noise = np.random.default_rng(2).normal(0, 0.01, wave.size)
    wfdb.wrsamp("tilt", fs=125, units=["mV", "NU"], sig_name=["ECG", "PLETH"],
                p_signal=np.column_stack([noise, wave]), fmt=["16", "16"],
                write_dir=str(tmp_path))
    rec = rrkit.read(tmp_path / "tilt.hea", kind="ppg")
    assert rec.info.column == "PLETH"
    assert "pulse wave" in rec.info.extra["column_chosen_by"]
    assert rec.info.pulse_derived
    assert abs(rec.n_beats - ref.n_beats) <= 2
