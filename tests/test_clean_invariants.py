"""Invariants of `rrkit.clean` under random inputs (hypothesis).

Source of every check: the contract of `CleanResult` (one label per input interval, beat times
that strictly increase and agree with the intervals, an origin map into the input, the total
duration kept within one interval where no lone interval was re-valued) and idempotence: a
result whose iteration converged is left alone when cleaned again.
"""

from __future__ import annotations

import numpy as np
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from rrkit import Recording, clean
from rrkit.clean import LABELS
from rrkit.simulate import inject_artifacts, simulate_rr

CLASSES = ("ectopic", "missed", "extra", "long", "short")

_common = settings(max_examples=40, deadline=None,
                   suppress_health_check=[HealthCheck.too_slow])


@st.composite
def dirty_recordings(draw, classes=CLASSES):
    seed = draw(st.integers(0, 10_000))
    n = draw(st.integers(40, 600))
    mean_rr = draw(st.floats(450.0, 1300.0))
    base = simulate_rr(n, seed=seed, mean_rr_ms=mean_rr)
    counts = {c: draw(st.integers(0, max(n // 60, 1))) for c in classes}
    rec, truth = inject_artifacts(base, counts=counts, seed=seed + 1, min_spacing=2)
    return rec, truth


@st.composite
def raw_recordings(draw):
    """Arbitrary plausible and implausible intervals, optionally with recording gaps."""
    rr = draw(st.lists(st.floats(100.0, 3000.0), min_size=0, max_size=200))
    gaps = draw(st.lists(st.booleans(), min_size=len(rr), max_size=len(rr)))
    return Recording.from_rr(np.array(rr, dtype=float), gaps=np.array(gaps, dtype=bool))


def _check_contract(rec: Recording, res) -> None:
    assert res.labels.shape == (rec.n_intervals,)
    assert set(res.labels.tolist()) <= set(LABELS)
    assert res.changed.shape == (rec.n_intervals,)
    out = res.recording
    if out.n_beats:
        assert np.all(np.diff(out.beat_times_s) > 0)
        np.testing.assert_allclose(np.diff(out.beat_times_s) * 1000.0, out.rr_ms, atol=1e-4)
    assert res.origin.shape == (out.n_intervals,)
    if res.origin.size:
        assert np.all(np.diff(res.origin) >= 0)
        assert res.origin.min() >= 0
        assert res.origin.max() < rec.n_intervals
    # gaps stay gaps and are never labelled or changed
    assert (res.labels[rec.gaps] == "normal").all()
    assert not res.changed[rec.gaps].any()
    s = res.summary
    assert s.n_intervals == int((~rec.gaps).sum())
    assert sum(s.counts.values()) == s.n_intervals


@_common
@given(dirty_recordings(), st.sampled_from(["drr", "median", "mad", "none"]),
       st.sampled_from(["interpolate", "drop"]))
def test_contract_on_simulated_artifacts(data, method, strategy):
    rec, _ = data
    res = clean(rec, method=method, strategy=strategy)
    _check_contract(rec, res)


@_common
@given(raw_recordings(), st.sampled_from(["drr", "median", "mad", "none"]),
       st.sampled_from(["interpolate", "drop"]))
def test_contract_on_arbitrary_intervals(rec, method, strategy):
    res = clean(rec, method=method, strategy=strategy)
    _check_contract(rec, res)


@_common
@given(dirty_recordings(classes=("ectopic", "missed", "extra")))
def test_duration_kept_within_one_interval(data):
    # split and merged beats keep their span; a premature beat with full compensation is
    # re-timed inside its pair, so the whole recording keeps its duration
    rec, _ = data
    res = clean(rec)
    assert abs(res.recording.duration_s - rec.duration_s) * 1000.0 <= np.median(rec.rr_ms)


@_common
@given(dirty_recordings(), st.sampled_from(["drr", "median", "mad"]))
def test_cleaning_a_converged_result_changes_nothing(data, method):
    rec, _ = data
    res = clean(rec, method=method, iterate=True)
    assume(res.extra["converged"])  # the bounded iteration settles on almost every input
    again = clean(res, method=method)
    assert not again.changed.any()
    assert (again.labels == "normal").all()
    np.testing.assert_array_equal(again.recording.rr_ms, res.recording.rr_ms)


@_common
@given(dirty_recordings(), st.floats(0.05, 0.95))
def test_windows_partition_the_audit(data, frac):
    # two windows that meet at one beat hold every input interval exactly once
    rec, _ = data
    res = clean(rec)
    cut = float(rec.beat_times_s[int(frac * (rec.n_beats - 1))])
    a, b = res.window(None, cut), res.window(cut, None)
    assert a.labels.size + b.labels.size == rec.n_intervals
    for name in LABELS:
        assert a.summary.counts[name] + b.summary.counts[name] == res.summary.counts[name]
    assert a.changed.sum() + b.changed.sum() == res.changed.sum()
    for part in (a, b):
        if part.origin.size:
            assert part.origin.max() < part.input.n_intervals


@_common
@given(st.integers(0, 10_000))
def test_clean_series_untouched_by_none(seed):
    rec = simulate_rr(300, seed=seed)
    res = clean(rec, method="none")
    assert not res.changed.any()
    assert res.recording is rec
