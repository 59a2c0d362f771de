"""Tests of the recording model (hand-computable inputs)."""

from datetime import datetime, timezone

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays

from rrkit import InputError, Recording


def test_from_rr_times_and_duration():
    rec = Recording.from_rr([800, 810, 790])
    np.testing.assert_allclose(rec.beat_times_s, [0.0, 0.8, 1.61, 2.4])
    assert rec.n_beats == 4
    assert rec.n_intervals == 3
    assert rec.duration_s == pytest.approx(2.4)


def test_from_peak_times_intervals():
    rec = Recording.from_peak_times([0.5, 1.3, 2.1])
    np.testing.assert_allclose(rec.rr_ms, [800.0, 800.0])


def test_arrays_are_read_only_and_copied():
    rr = np.array([800.0, 900.0])
    rec = Recording.from_rr(rr)
    rr[0] = 1.0
    assert rec.rr_ms[0] == 800.0
    with pytest.raises(ValueError, match="read-only"):
        rec.rr_ms[0] = 5.0


@pytest.mark.parametrize(
    ("times", "rr", "match"),
    [
        ([0.0, 1.0], [1000.0, 1000.0], "one more element"),
        ([0.0, 1.0, 0.5], [1000.0, -500.0], "strictly increase"),
        ([0.0, 1.0, 1.5], [1000.0, -500.0], "must be > 0"),
        ([0.0, 1.0, 2.0], [1000.0, 900.0], "disagrees"),
        ([0.0, np.nan], [1000.0], "finite"),
    ],
)
def test_invalid_arrays_raise(times, rr, match):
    with pytest.raises(InputError, match=match):
        Recording(np.array(times), np.array(rr))


def test_times_must_increase():
    with pytest.raises(InputError, match="strictly increase"):
        Recording.from_peak_times([0.0, 1.0, 1.0])


def test_slice_keeps_clock():
    rec = Recording.from_rr([1000.0] * 10)
    part = rec.slice(2.0, 5.0)
    np.testing.assert_allclose(part.beat_times_s, [2, 3, 4, 5])
    assert part.n_intervals == 3
    assert rec.slice(20, 30).n_beats == 0


def test_nn_segments_split_at_gaps():
    gaps = np.array([False, False, True, False])
    rec = Recording.from_rr([800, 810, 5000, 820], gaps=gaps)
    segs = rec.nn_segments()
    assert [s.tolist() for s in segs] == [[800, 810], [820]]


def test_to_frame_with_start():
    start = datetime(2026, 3, 1, 6, 30, tzinfo=timezone.utc)
    df = Recording.from_rr([1000, 1000], start=start).to_frame()
    assert list(df.columns) == ["time", "time_s", "rr_ms", "gap"]
    assert str(df["time"].iloc[0]).startswith("2026-03-01 06:30:01")


def test_pickle_round_trip():
    import pickle

    rec = Recording.from_rr([800, 810], subject="A01", gaps=[False, True])
    back = pickle.loads(pickle.dumps(rec))
    np.testing.assert_array_equal(back.rr_ms, rec.rr_ms)
    assert back.subject == "A01"
    assert back.gaps.tolist() == [False, True]


@given(arrays(np.float64, st.integers(1, 200), elements=st.floats(200, 2500)))
def test_from_rr_consistent(rr):
    rec = Recording.from_rr(rr)
    np.testing.assert_allclose(np.diff(rec.beat_times_s) * 1000, rr, atol=1e-6)
    back = Recording.from_peak_times(rec.beat_times_s)
    np.testing.assert_allclose(back.rr_ms, rr, atol=1e-6)
