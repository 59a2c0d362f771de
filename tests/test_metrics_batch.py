"""The batched engine behind analyze() against one metrics() call per window (the obvious
implementation): same keys, same notes, same values up to float rounding."""

from __future__ import annotations

import math

import numpy as np
import pytest

import rrkit
from rrkit.metrics import MetricsSettings, _batch
from rrkit.metrics.nonlinear import dfa_fluctuations, sample_entropy
from rrkit.simulate import simulate_rr


@pytest.fixture(scope="module")
def windows():
    rec = simulate_rr(duration_s=2 * 3600, seed=5)
    rng = np.random.default_rng(1)
    parts = []
    for length in rng.choice([3, 20, 50, 70, 130, 299.5, 300, 301, 700], size=60):
        a = rng.uniform(0, 2 * 3600 - 710)
        parts.append(rec.slice(a, a + float(length)))
    # windows with gaps take the per-window path inside the batch
    rr = rec.rr_ms.copy()
    gaps = np.zeros(rr.size, bool)
    gaps[400] = True
    gaps[1500:1503] = True
    with_gaps = rrkit.Recording.from_rr(rr, gaps=gaps)
    parts += [with_gaps.slice(200, 800), with_gaps.slice(1300, 1900)]
    return parts


def _assert_same(parts, batch, s):
    for p, b in zip(parts, batch, strict=True):
        ref = rrkit.metrics(p, settings=s)
        assert list(b) == list(ref)
        assert b.notes == ref.notes
        for k, v in ref.items():
            if math.isnan(v):
                assert math.isnan(b[k]), k
            else:
                assert b[k] == pytest.approx(v, rel=1e-9, abs=1e-12), k


@pytest.mark.parametrize("settings", [
    MetricsSettings(),
    MetricsSettings(detrend="linear"),
    MetricsSettings(psd="lomb", domains=("frequency", "nonlinear")),
    MetricsSettings(domains=("time",)),
])
def test_batch_equals_per_window(windows, settings):
    assert len(windows) >= _batch.COMPILED_MIN_WINDOWS  # compiled loops in use
    _assert_same(windows, _batch.metrics_many(windows, settings), settings)


def test_small_batch_uses_numpy_and_agrees(windows):
    few = windows[: _batch.COMPILED_MIN_WINDOWS - 1]
    s = MetricsSettings()
    _assert_same(few, _batch.metrics_many(few, s), s)


def test_compiled_loops_against_numpy_kernels(rng):
    kernels = pytest.importorskip("rrkit.metrics._kernels")
    xs = [1000 + 40 * rng.standard_normal(n) for n in (5, 60, 300, 1000)]
    sizes = np.array([x.size for x in xs])
    offsets = np.concatenate(([0], np.cumsum(sizes)[:-1]))
    x = np.concatenate(xs)
    r = np.array([0.2 * v.std(ddof=1) for v in xs])
    a, b = kernels.sampen_counts_many(x, offsets, sizes, 2, r)
    scales = np.arange(4, 65)
    fl, nb = kernels.dfa_fluctuations_many(x, offsets, sizes, scales)
    for i, v in enumerate(xs):
        _, a_ref, b_ref = sample_entropy([v], m=2, r=r[i], method="dense")
        assert (a[i], b[i]) == (a_ref, b_ref)  # integer counts: identical
        f_ref, nb_ref = dfa_fluctuations([v], scales)
        assert np.array_equal(nb[i], nb_ref)
        assert np.allclose(fl[i], f_ref, rtol=1e-9, equal_nan=True)


def test_analyze_rows_follow_the_batch(windows):
    rec = simulate_rr(duration_s=3 * 3600, seed=9)
    df = rrkit.analyze(rec, windows="slide:5m", clean=None)
    assert len(df) >= _batch.COMPILED_MIN_WINDOWS
    for _, row in df.iloc[[0, 7, -1]].iterrows():
        ref = rrkit.metrics(rec.slice(row["start_s"], row["end_s"]))
        for k, v in ref.items():
            assert row[k] == pytest.approx(v, rel=1e-9, nan_ok=True), k
