"""Simultaneous recordings: alignment, beat pairing and device agreement (rrkit.pairing)."""

from __future__ import annotations

import numpy as np
import pytest

import rrkit
from rrkit.errors import InputError
from rrkit.pairing import align, compare_devices, pair_beats
from rrkit.recording import Recording
from rrkit.simulate import simulate_device, simulate_rr

# the planted device of the MIT-BIH test: clock 37.25 s behind, gaining 40 ms per hour, pulse
# delay 220 ms with a beat-to-beat jitter SD wandering between 5 and 15 ms, 2% of beats dropped
# and 0.5% invented (ground truth known from rrkit.simulate.simulate_device)
CLOCK_S, DRIFT_MS_H, DELAY_MS = 37.25, 40.0, 220.0


@pytest.fixture(scope="module")
def record100(mitdb100):
    # MIT-BIH Arrhythmia Database record 100 (PhysioNet, ODC-By 1.0): 2,273 reference beats
    return rrkit.read(f"{mitdb100}.atr")


@pytest.fixture(scope="module")
def planted(record100):
    return simulate_device(record100, clock_offset_s=CLOCK_S, drift_ms_per_h=DRIFT_MS_H,
                           delay_ms=DELAY_MS, jitter_ms=(5.0, 15.0), drop_pct=2.0,
                           extra_pct=0.5, seed=12)


def test_alignment_finds_the_planted_offset_and_drift(record100, planted):
    dev, _ = planted
    al = align(record100, dev)
    # a constant delay and a clock offset move every beat alike: the offset found is the
    # clock offset minus the delay (module notes); within 10 ms
    assert abs(al.offset_s - (CLOCK_S - DELAY_MS / 1000.0)) < 0.010
    assert al.drift_ms_per_h == pytest.approx(DRIFT_MS_H, rel=0.10)
    assert al.confidence > 0.4
    assert 5.0 < al.jitter_ms < 15.0
    # with the clock offset known, the delay is what remains
    known = align(record100, dev, clock_offset_s=CLOCK_S, max_offset_s=5.0)
    assert known.delay_ms == pytest.approx(DELAY_MS, abs=10.0)


def test_every_dropped_and_invented_beat_is_classified(record100, planted):
    dev, truth = planted
    pairs = pair_beats(record100, dev)
    t = pairs.table
    missed = set(t.loc[t["class"] == "missed", "ref_beat"].astype(int))
    extra = set(t.loc[t["class"] == "extra", "dev_beat"].astype(int))
    assert missed == set(truth.dropped.tolist())
    assert extra == set(truth.invented.tolist())
    m = t[t["class"] == "matched"]
    kept = truth.source_beat[truth.source_beat >= 0]
    # every matched pair is the right pair, and >= 99% of the kept beats are paired
    assert np.array_equal(truth.source_beat[m["dev_beat"].astype(int)], m["ref_beat"].astype(int))
    assert len(m) >= 0.99 * kept.size
    # one row per beat: each reference and each device beat appears exactly once
    assert t["ref_beat"].dropna().is_unique
    assert t["dev_beat"].dropna().is_unique
    assert t["ref_beat"].notna().sum() == record100.n_beats
    assert t["dev_beat"].notna().sum() == dev.n_beats
    assert pairs.interval_name == "pulse-to-pulse"


def test_annotations_against_rrkits_own_ecg_detection(mitdb100, record100):
    # ANSI/AAMI EC57 150 ms match window (REFERENCES.md 5, secondary); the same share the
    # detection check in test_io_mitdb asserts with wfdb.processing.compare_annotations
    ecg = rrkit.read(f"{mitdb100}.hea")
    pairs = pair_beats(record100, ecg, tolerance_ms=150.0)
    assert pairs.stats["matched_pct"] >= 99.5
    assert pairs.stats["device_ppv_pct"] >= 99.5
    al = pairs.alignment
    assert abs(al.offset_s) < 0.05  # same clock, same samples
    assert abs(al.drift_ms_per_h) < 5.0
    wfdb = pytest.importorskip("wfdb")
    from wfdb import processing

    ann = wfdb.rdann(str(mitdb100), "atr")
    beats = np.isin(ann.symbol, list(rrkit.io.BEAT_SYMBOLS))
    det = np.round(ecg.beat_times_s * 360.0).astype(int)
    cmp = processing.compare_annotations(ann.sample[beats], det, round(0.150 * 360) + 1)
    assert pairs.stats["n_matched"] == pytest.approx(cmp.tp, abs=3)


def test_unrelated_recordings_are_refused(record100):
    other = simulate_rr(duration_s=1800, seed=3, mean_rr_ms=800.0)
    with pytest.raises(InputError, match="do not correlate"):
        align(record100, other)
    with pytest.raises(InputError, match="two different recordings"):
        pair_beats(record100, other)


def test_recordings_that_do_not_overlap_are_refused():
    ref = simulate_rr(duration_s=600, seed=1)
    dev, _ = simulate_device(ref, clock_offset_s=570.0, delay_ms=0.0, jitter_ms=0.0, seed=1)
    with pytest.raises(InputError, match="do not overlap by 60 s"):
        align(ref, dev)
    dev, _ = simulate_device(ref, clock_offset_s=200.0, delay_ms=0.0, jitter_ms=1.0, seed=1)
    with pytest.raises(InputError, match="do not correlate"):  # the true offset is outside
        align(ref, dev, max_offset_s=20.0)
    assert align(ref, dev, max_offset_s=250.0).offset_s == pytest.approx(200.0, abs=0.005)


def test_pairing_by_hand():
    # reference beats every 800 ms; the device (same clock) misses the 5th beat, adds one half
    # way through the 10th interval and is 20 ms late on the 15th: counted by hand
    ref_t = np.arange(200) * 0.8
    rng = np.random.default_rng(1)
    ref_t = ref_t + rng.normal(0, 0.03, ref_t.size) * (np.arange(200) % 3 == 0)  # irregular
    dev_t = np.delete(ref_t, 4)
    dev_t = np.sort(np.append(dev_t, (ref_t[9] + ref_t[10]) / 2))
    dev_t[dev_t == ref_t[14]] += 0.020
    ref = Recording.from_peak_times(ref_t)
    dev = Recording.from_peak_times(dev_t)
    al = align(ref, dev, max_offset_s=1.0)
    pairs = pair_beats(ref, dev, alignment=al)
    t = pairs.table
    assert t.loc[t["class"] == "missed", "ref_beat"].tolist() == [4]
    extra_t = t.loc[t["class"] == "extra", "dev_aligned_s"].to_numpy(float)
    assert extra_t == pytest.approx([(ref_t[9] + ref_t[10]) / 2], abs=0.002)
    assert pairs.stats["n_matched"] == 199
    row = t[t["ref_beat"] == 14].iloc[0]
    assert row["time_diff_ms"] == pytest.approx(20.0, abs=2.0)
    # the interval ending at beat 14 and the one after it differ by +20 and -20 ms
    assert row["interval_diff_ms"] == pytest.approx(20.0, abs=2.0)


def test_tolerance_is_checked():
    ref = simulate_rr(duration_s=300, seed=2)
    with pytest.raises(InputError, match="tolerance_ms"):
        pair_beats(ref, ref, tolerance_ms=0.0)


def test_window_rmssd_bias_has_the_planted_size():
    # a pulse device whose delay jitters independently from beat to beat with SD s adds
    # (e[i+1] - e[i]) to each interval and (e[i+2] - 2 e[i+1] + e[i]) to each successive
    # difference: RMSSD^2 grows by 6 s^2 (derived), so bias = sqrt(R^2 + 6 s^2) - R
    sigma_ms = 12.0
    ref = simulate_rr(duration_s=1800, seed=21, mean_rr_ms=900.0)
    dev, _ = simulate_device(ref, clock_offset_s=-42.0, delay_ms=240.0, jitter_ms=sigma_ms,
                             seed=22)
    res = compare_devices(ref, dev, windows="slide:5m")
    w = res.windows
    assert len(w) >= 5
    expected = np.sqrt(w["ref_rmssd_ms"] ** 2 + 6 * sigma_ms ** 2) - w["ref_rmssd_ms"]
    bias = res.rmssd_bias_ms
    assert bias > 0
    assert bias == pytest.approx(float(expected.mean()), rel=0.15)
    st = res.window_agreement["rmssd_ms"].stats
    assert st["bias_ci_low"] > 0  # a real, reported bias
    # mean heart rate is not affected by the jitter
    assert abs(res.window_agreement["mean_hr_bpm"].stats["bias"]) < 0.2
    assert "the device reads" in res.summary_text()
    assert "ms higher than the reference" in res.summary_text()
    # the same windows on both sides
    assert (w["start_s"] >= res.alignment.overlap_s[0] - 1e-9).all()


def test_second_ecg_has_no_rmssd_bias():
    ref = simulate_rr(duration_s=1500, seed=31)
    dev, _ = simulate_device(ref, clock_offset_s=5.0, delay_ms=0.0, jitter_ms=1.0, seed=32)
    res = compare_devices(ref, dev)
    assert res.interval_name == "RR"
    assert abs(res.rmssd_bias_ms) < 1.0
    assert res.pairs.stats["matched_pct"] == 100.0
