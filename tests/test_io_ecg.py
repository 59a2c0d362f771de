"""Raw ECG readers: EDF written here with pyedflib, CSV columns, inverted, flat and empty leads.

Ground truth comes from neurokit2's simulator (``ecg_simulate``, seeded): a 60 s ECG at 70 bpm
must give intervals near 857 ms (60000 / 70), and the same beats when the lead is turned over.
"""

from __future__ import annotations

from datetime import datetime

import numpy as np
import pytest

from rrkit import InputError, QualityWarning, read

FS_HZ = 250
HR_BPM = 70


@pytest.fixture(scope="module")
def ecg_mv():
    import neurokit2 as nk

    return np.asarray(nk.ecg_simulate(duration=60, sampling_rate=FS_HZ, heart_rate=HR_BPM,
                                      random_state=20261202), dtype=np.float64)


def _write_edf(path, signals: dict[str, np.ndarray], *, fs_hz: int = FS_HZ,
               start: datetime | None = None):
    import pyedflib

    headers = []
    for label, x in signals.items():
        span = round(max(float(np.max(np.abs(x))), 1e-3) * 1.1 + 0.001, 3)  # 8-character field
        headers.append({"label": label, "dimension": "mV", "sample_frequency": fs_hz,
                        "physical_max": span, "physical_min": -span,
                        "digital_max": 32767, "digital_min": -32768,
                        "transducer": "", "prefilter": ""})
    writer = pyedflib.EdfWriter(str(path), len(signals), file_type=pyedflib.FILETYPE_EDFPLUS)
    try:
        writer.setSignalHeaders(headers)
        if start is not None:
            writer.setStartdatetime(start)
        writer.writeSamples(list(signals.values()))
    finally:
        writer.close()
    return path


def test_edf_round_trip(tmp_path, ecg_mv):
    start = datetime(2026, 3, 1, 6, 45, 0)
    resp = np.sin(2 * np.pi * 0.25 * np.arange(ecg_mv.size) / FS_HZ)
    path = _write_edf(tmp_path / "night.edf", {"Resp": resp, "ECG II": ecg_mv}, start=start)
    rec = read(path)
    info = rec.info
    assert info.kind == "ecg"
    assert info.fs_hz == FS_HZ
    assert info.column == "ECG II"  # the channel labelled as ECG, not the first one
    assert info.extra["detector"] == "neurokit"
    assert info.extra["inverted_lead"] is False
    assert rec.start == start  # EDF start date and time (no zone in EDF)
    # simulator truth: 70 bpm -> mean interval 60000 / 70 = 857 ms, about 70 beats a minute
    assert rec.rr_ms.mean() == pytest.approx(60000 / HR_BPM, rel=0.02)
    assert abs(rec.n_beats - HR_BPM) <= 2
    assert info.extra["detection_quality"] >= 0.95
    # the same signal from a CSV column, with the rate given
    csv = tmp_path / "ecg.csv"
    rows = (f"{k / FS_HZ:.4f},{v:.6f}" for k, v in enumerate(ecg_mv.tolist()))
    csv.write_text("time_s,ecg_mv\n" + "\n".join(rows) + "\n")  # an ECG table, not peaks
    from_csv = read(csv, fs=FS_HZ)
    assert from_csv.info.kind == "ecg"
    assert from_csv.info.column == "ecg_mv"
    np.testing.assert_allclose(from_csv.beat_times_s, rec.beat_times_s, atol=2 / FS_HZ)


def test_edf_channel_choice_and_fs(tmp_path, ecg_mv):
    path = _write_edf(tmp_path / "two.edf", {"A": ecg_mv, "B": ecg_mv})
    with pytest.raises(InputError, match="no channel is labelled as an ECG lead"):
        read(path)
    assert read(path, column="B").info.column == "B"
    assert read(path, column=0).info.column == "A"
    with pytest.raises(InputError, match="disagrees with the 250 Hz"):
        read(path, column="A", fs=500)


def test_inverted_lead_is_detected_and_corrected(tmp_path, ecg_mv):
    upright = read(_write_edf(tmp_path / "up.edf", {"ECG": ecg_mv}))
    flipped = read(_write_edf(tmp_path / "down.edf", {"ECG": -ecg_mv}))
    assert flipped.info.extra["inverted_lead"] is True
    assert upright.info.extra["inverted_lead"] is False
    # same beats within 2 samples (8 ms) once turned over
    assert flipped.n_beats == upright.n_beats
    np.testing.assert_allclose(flipped.beat_times_s, upright.beat_times_s, atol=2 / FS_HZ)


def test_flat_stretch_becomes_a_gap(tmp_path, ecg_mv):
    x = ecg_mv.copy()
    x[20 * FS_HZ:40 * FS_HZ] = x[20 * FS_HZ]  # 20 s of a disconnected lead
    path = _write_edf(tmp_path / "flat.edf", {"ECG": x})
    with pytest.warns(QualityWarning, match="of the signal usable"):
        rec = read(path)
    ex = rec.info.extra
    assert ex["flat_s"] == pytest.approx(20, abs=0.05)
    assert ex["n_segments"] == 2
    assert rec.gaps.sum() == 1  # one interval spans the flat stretch
    gap = rec.rr_ms[rec.gaps][0]
    assert gap > 20000  # and is not an NN interval
    assert rec.rr_ms[~rec.gaps].mean() == pytest.approx(60000 / HR_BPM, rel=0.03)
    assert len(rec.nn_segments()) == 2


def test_clipped_stretch_survives(tmp_path, ecg_mv):
    # an amplifier saturating at its rail: every R wave clipped, and 1 s stuck at the rail
    rail = np.percentile(ecg_mv, 97)
    x = np.minimum(ecg_mv, rail)
    x[30 * FS_HZ:31 * FS_HZ] = rail
    rec = read(_write_edf(tmp_path / "clip.edf", {"ECG": x}))
    assert rec.info.extra["clipped_pct"] > 0
    assert rec.gaps.sum() == 1  # the stuck second
    assert rec.rr_ms[~rec.gaps].mean() == pytest.approx(60000 / HR_BPM, rel=0.03)


def test_flat_signal_is_an_input_error(tmp_path):
    path = _write_edf(tmp_path / "dead.edf", {"ECG": np.zeros(30 * FS_HZ)})
    with pytest.raises(InputError, match=r"no usable ECG.*: the signal is flat"):
        read(path)


def test_no_detectable_beats(tmp_path):
    # a slow 0.1 Hz drift of 10 uV: no QRS complex anywhere
    x = 0.01 * np.sin(2 * np.pi * 0.1 * np.arange(30 * FS_HZ) / FS_HZ)
    csv = tmp_path / "drift.csv"
    csv.write_text("ecg\n" + "\n".join(repr(float(v)) for v in x) + "\n")
    with pytest.raises(InputError, match=r"found \d heartbeats? in the ECG .*too few beats"):
        read(csv, fs=FS_HZ)


def test_noise_warns(tmp_path, rng):
    csv = tmp_path / "noise.csv"
    csv.write_text("ecg\n" + "\n".join(f"{v:.6f}" for v in rng.normal(size=30 * FS_HZ)) + "\n")
    with pytest.warns(QualityWarning, match="match the median beat") as caught:
        rec = read(csv, fs=FS_HZ)
    assert rec.info.extra["detection_quality"] < 0.7
    assert caught[0].filename == __file__  # the warning points at the caller of read()


def test_ecg_needs_fs_and_a_long_enough_signal(tmp_path, ecg_mv):
    csv = tmp_path / "short.csv"
    csv.write_text("ecg\n" + "\n".join(f"{v:.6f}" for v in ecg_mv[:FS_HZ]) + "\n")
    with pytest.raises(InputError, match="needs its sampling rate"):
        read(csv, kind="ecg")
    with pytest.raises(InputError, match=r"lasts 1\.00 s, expected at least 2 s"):
        read(csv, kind="ecg", fs=FS_HZ)


def test_wfdb_record_and_annotations_written_here(tmp_path, ecg_mv):
    # a WFDB record and annotation file written with wfdb itself (its writer is the format's
    # reference implementation): start time from the header, beats from beat symbols only
    import wfdb

    start = datetime(2026, 3, 1, 6, 45, 0)
    wfdb.wrsamp("sim", fs=FS_HZ, units=["mV"], sig_name=["ECG"],
                p_signal=ecg_mv.reshape(-1, 1), fmt=["16"], base_datetime=start,
                write_dir=str(tmp_path))
    rec = read(tmp_path / "sim.hea")
    assert rec.start == start
    assert rec.info.fs_hz == FS_HZ
    assert rec.info.extra["column_chosen_by"] == "the only channel"
    samples = np.round(rec.beat_times_s * FS_HZ).astype(int)
    symbols = ["N"] * samples.size
    symbols[5] = "V"
    # a rhythm change and a noise marker between beats: annotations, not beats
    extra_samples = [int(samples[2]) + 10, int(samples[7]) + 10]
    order = np.argsort(np.concatenate([samples, extra_samples]), kind="stable")
    all_samples = np.concatenate([samples, extra_samples])[order]
    all_symbols = np.array([*symbols, "+", "~"])[order]
    aux = ["(N" if s == "+" else "" for s in all_symbols]
    wfdb.wrann("sim", "atr", all_samples, symbol=list(all_symbols), aux_note=aux, fs=FS_HZ,
               write_dir=str(tmp_path))
    ann = read(tmp_path / "sim.atr")
    np.testing.assert_array_equal(np.round(ann.beat_times_s * FS_HZ).astype(int), samples)
    assert ann.beat_symbols.tolist() == symbols
    assert ann.start == start  # from the header beside it
    assert ann.info.extra["non_beat_annotations_skipped"] == 2


def test_ecg_table_suggests_fs_from_its_time_column(tmp_path, ecg_mv):
    csv = tmp_path / "ecg.csv"
    rows = (f"{k * 4},{v:.5f}" for k, v in enumerate(ecg_mv[:2000].tolist()))
    csv.write_text("t_ms,ECG\n" + "\n".join(rows) + "\n")
    # the rate is never taken silently from the file, but the message says what it would be
    with pytest.raises(InputError, match=r"steps by 4 ms, which would be fs=250"):
        read(csv)
