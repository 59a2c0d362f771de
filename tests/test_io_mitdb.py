"""MIT-BIH Arrhythmia Database record 100 through every reader.

Source: Moody GB, Mark RG, IEEE Eng Med Biol 20(3):45-50 (2001); Goldberger AL et al.,
Circulation 101(23):e215-e220 (2000); counts from ../shared/data/mitdb-100/README.md
(2,273 beats = 2,239 N + 33 A + 1 V, one '+' rhythm annotation that is not a beat). Files are
reached only through the `mitdb100` fixture (tests/conftest.py).
"""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import numpy as np
import pytest

from rrkit import read

FS_HZ = 360.0  # record 100 header: 360 Hz (README of the shared copy)


@pytest.fixture(scope="module")
def reference(mitdb100):
    return read(Path(f"{mitdb100}.atr"))


def test_annotations_beats_only(reference):
    # README: 2,273 beats with 33 'A' and 1 'V'; the '+' at sample 18 is not a beat
    assert reference.n_beats == 2273
    assert reference.n_intervals == 2272
    counts = Counter(reference.beat_symbols.tolist())
    assert counts == {"N": 2239, "A": 33, "V": 1}
    assert reference.info.kind == "annotations"
    assert reference.info.fs_hz == FS_HZ
    assert reference.info.extra["non_beat_symbols"] == "+ x1"
    # REFERENCES.md section 5 (computed): mean of all 2,272 intervals 794.59 ms
    assert reference.rr_ms.mean() == pytest.approx(794.59, abs=0.005)
    # first beat: sample 77 (100_beats.csv row 3) -> 77 / 360 s
    assert reference.beat_times_s[0] == pytest.approx(77 / FS_HZ)


def test_annotations_by_record_name(mitdb100, reference):
    rec = read(mitdb100, kind="annotations")
    np.testing.assert_array_equal(rec.rr_ms, reference.rr_ms)


def test_beat_table_as_peak_times(mitdb100, reference):
    # 100_beats.csv: sample, time_s (= sample / 360, 6 decimals), symbol
    csv = Path(f"{mitdb100}_beats.csv")
    rec = read(csv, kind="peaks")
    assert rec.info.column == "time_s"
    assert rec.info.unit == "s"
    assert rec.n_intervals == 2272
    # time_s is rounded to 1e-6 s, so differences agree with the annotations to 1e-3 ms
    np.testing.assert_allclose(rec.rr_ms, reference.rr_ms, rtol=0, atol=1e-3)
    np.testing.assert_array_equal(rec.beat_symbols, reference.beat_symbols)
    assert rec.info.extra["non_beat_rows_skipped"] == 1
    # with the sampling rate the exact sample column is used: identical intervals
    exact = read(csv, kind="peaks", fs=FS_HZ)
    assert exact.info.column == "sample"
    assert exact.info.unit == "samples"
    np.testing.assert_allclose(exact.rr_ms, reference.rr_ms, rtol=1e-12)
    # and auto-detection reaches the same decision from the column name
    assert read(csv).info.kind == "peaks"


def _ec57(ref_s: np.ndarray, det_s: np.ndarray, fs_hz: float) -> tuple[float, float]:
    """Sensitivity and positive predictivity, ANSI/AAMI EC57 150 ms matching window.

    wfdb.processing.compare_annotations matches when |difference| < window samples (strict,
    REFERENCES.md section 5): 150 ms at 360 Hz is 54 samples, so window 55 accepts a distance
    of exactly 54 samples (= 150 ms), as EC57's "within 150 ms" does.
    """
    from wfdb import processing

    ref = np.round(ref_s * fs_hz).astype(int)
    det = np.round(det_s * fs_hz).astype(int)
    window = round(0.150 * fs_hz) + 1
    cmp = processing.compare_annotations(ref, det, window)
    return float(cmp.sensitivity), float(cmp.positive_predictivity)


def test_ecg_detection_matches_reference(mitdb100, reference):
    rec = read(Path(f"{mitdb100}.dat"))
    assert rec.info.kind == "ecg"
    assert rec.info.fs_hz == FS_HZ
    assert rec.info.column == "MLII"  # first channel labelled as an ECG lead
    ex = rec.info.extra
    assert ex["detector"] == "neurokit"
    assert ex["inverted_lead"] is False
    se, ppv = _ec57(reference.beat_times_s, rec.beat_times_s, FS_HZ)
    assert se >= 0.995
    assert ppv >= 0.995
    # an independent matcher: nearest reference beat within 150 ms for each detection
    ref = reference.beat_times_s
    idx = np.clip(np.searchsorted(ref, rec.beat_times_s), 1, ref.size - 1)
    det = rec.beat_times_s
    nearest = np.minimum(np.abs(ref[idx] - det), np.abs(ref[idx - 1] - det))
    assert np.mean(nearest <= 0.150) >= 0.995
    assert ex["detection_quality"] >= 0.95
    assert ex["usable_signal_pct"] == 100.0


def test_ecg_from_header_and_other_detector(mitdb100, reference):
    rec = read(Path(f"{mitdb100}.hea"), detector="pantompkins1985", column="MLII")
    assert rec.info.extra["detector"] == "pantompkins1985"
    se, ppv = _ec57(reference.beat_times_s, rec.beat_times_s, FS_HZ)
    assert se >= 0.99
    assert ppv >= 0.99


def test_fs_disagreeing_with_header(mitdb100):
    from rrkit import InputError

    with pytest.raises(InputError, match="disagrees with the 360 Hz in the file header"):
        read(Path(f"{mitdb100}.hea"), fs=250)
    with pytest.raises(InputError, match="not a channel of this record"):
        read(Path(f"{mitdb100}.hea"), column="V1")
    with pytest.raises(InputError, match="read with kind='annotations'"):
        read(Path(f"{mitdb100}.atr"), kind="peaks")
