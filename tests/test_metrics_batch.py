"""The many-window kernels (ragged values + offsets) against slow, obvious loops, Welch against
scipy.signal.welch, and many windows at once against one metrics() call per window."""

from __future__ import annotations

import math

import numpy as np
import pytest

import rrkit
from rrkit.metrics import MetricsSettings, _engine, compute_windows, metrics_many
from rrkit.metrics._ragged import Ragged
from rrkit.metrics.nonlinear import dfa_many, poincare_many, sampen_counts_many
from rrkit.metrics.spectral import _hann, segment_starts, welch_segments
from rrkit.metrics.time import HIST_BIN_MS, histograms, time_many, tinn, tinn_many
from rrkit.simulate import simulate_rr


@pytest.fixture(scope="module")
def gappy():
    """Two hours with gaps: some windows have several runs."""
    rec = simulate_rr(duration_s=2 * 3600, seed=5)
    gaps = np.zeros(rec.rr_ms.size, bool)
    gaps[400] = True
    gaps[1500:1503] = True
    gaps[3000:3200:9] = True
    return rrkit.Recording.from_rr(rec.rr_ms, gaps=gaps)


@pytest.fixture(scope="module")
def windows(gappy):
    rng = np.random.default_rng(1)
    parts = []
    for length in rng.choice([1, 3, 20, 50, 70, 130, 299.5, 300, 301, 700], size=40):
        a = rng.uniform(0, 2 * 3600 - 710)
        parts.append(gappy.slice(a, a + float(length)))
    return parts


def _runs(p) -> list[np.ndarray]:
    return [s for s in p.nn_segments() if s.size]


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


# --------------------------------------------------------------------------- many = one by one
@pytest.mark.parametrize("settings", [
    MetricsSettings(),
    MetricsSettings(detrend="linear"),
    MetricsSettings(psd="lomb", domains=("frequency", "nonlinear")),
    MetricsSettings(domains=("time",)),
])
def test_many_windows_equal_one_call_each(windows, settings, monkeypatch):
    # small chunks, so that windows are split over several chunks and blocks
    monkeypatch.setattr(_engine, "CHUNK_INTERVALS", 700)
    _assert_same(windows, metrics_many(windows, settings), settings)


def test_compute_windows_equals_slices(gappy):
    t = gappy.beat_times_s
    starts = np.arange(0.0, 7000.0, 240.0)
    first = np.searchsorted(t, starts - 1e-9, side="left")
    stop = np.searchsorted(t, starts + 300.0 + 1e-9, side="right")
    got = compute_windows(gappy, first, stop, MetricsSettings())
    _assert_same([gappy.slice_beats(a, b) for a, b in zip(first, stop, strict=True)], got,
                 MetricsSettings())


def test_analyze_rows_follow_metrics_per_window():
    rec = simulate_rr(duration_s=3 * 3600, seed=9)
    df = rrkit.analyze(rec, windows="slide:5m", clean=None)
    for _, row in df.iloc[[0, 7, -1]].iterrows():
        ref = rrkit.metrics(rec.slice(row["start_s"], row["end_s"]))
        for k, v in ref.items():
            assert row[k] == pytest.approx(v, rel=1e-9, nan_ok=True), k


# --------------------------------------------------------------------------- kernels vs loops
def test_time_kernel_against_numpy_per_window(windows):
    # slow obvious version: numpy per window, differences inside each run only
    rg = Ragged.from_recordings(windows)
    got = time_many(rg)
    for i, p in enumerate(windows):
        runs = _runs(p)
        nn = np.concatenate(runs) if runs else np.zeros(0)
        d = np.concatenate([np.diff(r) for r in runs]) if runs else np.zeros(0)
        assert got["n"][i] == nn.size
        assert got["n_diff"][i] == d.size
        if nn.size == 0:
            continue
        assert got["mean"][i] == pytest.approx(nn.mean(), rel=1e-12)
        assert got["median"][i] == np.median(nn)
        assert got["min"][i] == nn.min()
        assert got["max"][i] == nn.max()
        assert got["ss_dev"][i] == pytest.approx(((nn - nn.mean()) ** 2).sum(), rel=1e-9,
                                                 abs=1e-9)
        assert got["ss_diff"][i] == pytest.approx((d ** 2).sum(), rel=1e-12)
        assert got["nn50"][i] == np.count_nonzero(np.abs(d) > 50)
        assert got["nn20"][i] == np.count_nonzero(np.abs(d) > 20)
        assert got["hist_max"][i] == np.bincount((nn // HIST_BIN_MS).astype(int)).max()


def _tinn_loop(nn: np.ndarray) -> float:
    """TINN by brute force: every foot pair (N left of the mode, M right of it) on the bin
    edges, the squared error of the triangle 0 at N, peak Y at the modal bin centre, 0 at M
    (Task Force 1996 definition), summed bin by bin."""
    if nn.size < 3:
        return math.nan
    idx = (nn // HIST_BIN_MS).astype(int)
    c = np.bincount(idx - idx.min()).astype(float)
    nb = c.size
    if nb < 3:
        return math.nan
    x = int(np.argmax(c))
    y = c[x]
    best_left, foot = math.inf, 0
    for f in range(x + 1):
        err = 0.0
        for j in range(x + 1):
            q = max(y * ((j + 0.5) - f) / ((x + 0.5) - f), 0.0)
            err += (c[j] - q) ** 2
        if err < best_left:
            best_left, foot = err, f
    best_right, end = math.inf, x + 1
    for e in range(x + 1, nb + 1):
        err = 0.0
        for j in range(x + 1, nb):
            q = max(y * (e - (j + 0.5)) / (e - (x + 0.5)), 0.0)
            err += (c[j] - q) ** 2
        if err < best_right:
            best_right, end = err, e
    return (end - foot) * HIST_BIN_MS


def test_tinn_kernel_against_brute_force_loop(windows, rng):
    series = [np.concatenate(_runs(p)) if _runs(p) else np.zeros(0) for p in windows]
    series += [1000 + 60 * rng.standard_normal(n) for n in (3, 5, 40, 300, 2000)]
    series += [np.full(10, 800.0), np.array([800.0, 810.0, 820.0])]
    for x in series:
        want = _tinn_loop(x)
        got = tinn(x)
        assert (math.isnan(want) and math.isnan(got)) or got == want
    # and all at once, in several blocks
    rg = Ragged.from_recordings([rrkit.Recording.from_rr(x) for x in series if x.size >= 1])
    counts, off = histograms(rg)
    many = tinn_many(counts, off)
    singles = [tinn(x) for x in series if x.size >= 1]
    for a, b in zip(many, singles, strict=True):
        if not math.isnan(b):
            assert a == b


def test_dfa_kernel_against_polyfit_loop(windows):
    # slow obvious version: per run profile, np.polyfit line per box (Peng et al. 1995)
    scales = np.arange(4, 65)
    rg = Ragged.from_recordings(windows)
    fl, nb = dfa_many(rg, scales)
    for i, p in enumerate(windows[:12]):
        runs = _runs(p)
        if not runs:
            assert np.all(nb[i] == 0)
            continue
        mean = np.concatenate(runs).mean()
        for k, n in enumerate(scales):
            res = []
            for r in runs:
                y = np.cumsum(r - mean)
                for j in range(y.size // n):
                    seg = y[j * n:(j + 1) * n]
                    tt = np.arange(n)
                    res.append(np.mean((seg - np.polyval(np.polyfit(tt, seg, 1), tt)) ** 2))
            assert nb[i, k] == len(res)
            if res:
                assert fl[i, k] == pytest.approx(math.sqrt(np.mean(res)), rel=1e-7)


def test_sampen_kernel_against_double_loop(windows):
    # Richman & Moorman 2000 definition: templates inside one run, Chebyshev distance <= r
    m = 2
    picked = [p for p in windows if 20 <= p.rr_ms.size <= 400][:8]
    rg = Ragged.from_recordings(picked)
    r = np.array([0.2 * np.concatenate(_runs(p)).std(ddof=1) for p in picked])
    a_got, b_got = sampen_counts_many(rg, m, r)
    for i, p in enumerate(picked):
        tpl = [(run, s) for run in _runs(p) for s in range(run.size - m)]
        a = b = 0
        for u in range(len(tpl)):
            for v in range(u + 1, len(tpl)):
                x1 = tpl[u][0][tpl[u][1]:tpl[u][1] + m + 1]
                x2 = tpl[v][0][tpl[v][1]:tpl[v][1] + m + 1]
                d = np.abs(x1 - x2)
                if d[:m].max() <= r[i]:
                    b += 1
                    a += int(d[m] <= r[i])
        assert (a_got[i], b_got[i]) == (a, b)


def test_poincare_kernel_against_numpy(windows):
    # Brennan et al. 2001: SD1 = SD(dRR / sqrt 2), SD2 = SD((RR[n+1] + RR[n]) / sqrt 2), ddof=1
    sd1, sd2 = poincare_many(Ragged.from_recordings(windows))
    for i, p in enumerate(windows):
        runs = [r for r in _runs(p) if r.size > 1]
        d = np.concatenate([np.diff(r) for r in runs]) if runs else np.zeros(0)
        s = np.concatenate([r[1:] + r[:-1] for r in runs]) if runs else np.zeros(0)
        if d.size < 2:
            assert math.isnan(sd1[i])
            assert math.isnan(sd2[i])
        else:
            assert sd1[i] == pytest.approx(np.std(d / math.sqrt(2), ddof=1), rel=1e-9)
            assert sd2[i] == pytest.approx(np.std(s / math.sqrt(2), ddof=1), rel=1e-9)


def test_ragged_median_against_numpy(windows):
    rg = Ragged.from_recordings(windows)
    for i, p in enumerate(windows):
        runs = _runs(p)
        if runs:
            assert rg.window_median[i] == np.median(np.concatenate(runs))
        else:
            assert math.isnan(rg.window_median[i])


# --------------------------------------------------------------------------- Welch vs scipy
def test_hann_equals_scipy():
    from scipy.signal.windows import hann  # the reference: scipy's periodic Hann window

    for n in (1, 2, 3, 8, 239, 240, 600):
        assert np.array_equal(_hann(n), hann(n, sym=False)), n


@pytest.mark.parametrize(("n", "nperseg", "noverlap", "nfft"), [
    (1200, 600, 300, 600), (900, 600, 300, 600), (400, 400, 200, 600), (960, 240, 120, 256)])
def test_welch_equals_scipy_signal_welch_on_the_same_segments(rng, n, nperseg, noverlap, nfft):
    # scipy.signal.welch is the reference: Hann window, segment means removed, one-sided
    # density. The sizes are chosen so that rrkit's evenly spread segments start where scipy's
    # fixed step puts them (n - nperseg a multiple of the step).
    from scipy.signal import welch

    starts = segment_starts(n, nperseg, noverlap)
    step = nperseg - noverlap
    assert np.array_equal(starts, np.arange(0, n - nperseg + 1, step))
    xs = [1000 + 40 * rng.standard_normal(n) for _ in range(3)]
    p, nseg = welch_segments(xs, 4.0, [nperseg] * 3, [noverlap] * 3, nfft)
    for x, row, k in zip(xs, p, nseg, strict=True):
        f_ref, p_ref = welch(x, fs=4.0, window="hann", nperseg=nperseg, noverlap=noverlap,
                             nfft=nfft, detrend="constant", scaling="density")
        assert k == starts.size
        assert row.shape == p_ref.shape
        assert np.allclose(row, p_ref, rtol=1e-10, atol=0)
    assert np.allclose(f_ref, np.arange(nfft // 2 + 1) * 4.0 / nfft)


@pytest.mark.parametrize("overlap", [False, True])
def test_spline_many_equals_scipy_cubicspline_per_series(rng, overlap):
    # scipy.interpolate.CubicSpline (not-a-knot) is the reference, series by series; one
    # block tridiagonal solve for all of them, series that follow each other or overlap in time
    from scipy.interpolate import CubicSpline

    from rrkit._spline import spline_many

    xs, ys, grids = [], [], []
    t0 = 0.0
    for n in (4, 5, 30, 301):
        x = t0 + np.cumsum(rng.uniform(0.4, 1.3, n))
        t0 = x[0] + 3.0 if overlap else x[-1] + 0.5
        xs.append(x)
        ys.append(900 + 40 * rng.standard_normal(n))
        grids.append(x[0] + np.arange(int((x[-1] - x[0]) * 4.0) + 1) / 4.0)
    for x, y, g, got in zip(xs, ys, grids, spline_many(xs, ys, grids), strict=True):
        want = CubicSpline(x, y, bc_type="not-a-knot")(g)
        assert np.allclose(got, want, rtol=1e-9, atol=1e-9)


@pytest.mark.parametrize("overlap", [False, True])
def test_spline_many_natural_equals_scipy_cubicspline(rng, overlap):
    # scipy.interpolate.CubicSpline(bc_type="natural") is the reference (zero second derivative
    # at both ends), series by series, from 2 knots (a line) up; the cleaning interpolates so
    from scipy.interpolate import CubicSpline

    from rrkit._spline import spline_many

    xs, ys, grids = [], [], []
    t0 = 0.0
    for n in (2, 3, 4, 7, 30, 301):
        x = t0 + np.cumsum(rng.uniform(0.4, 1.3, n))
        t0 = x[0] + 3.0 if overlap else x[-1] + 0.5
        xs.append(x)
        ys.append(900 + 40 * rng.standard_normal(n))
        grids.append(np.sort(rng.uniform(x[0], x[-1], 3 * n)))
    got_all = spline_many(xs, ys, grids, bc_type="natural")
    for x, y, g, got in zip(xs, ys, grids, got_all, strict=True):
        want = CubicSpline(x, y, bc_type="natural")(g)
        assert np.allclose(got, want, rtol=1e-9, atol=0)
        # through the knots themselves
        assert np.allclose(spline_many([x], [y], [x], bc_type="natural")[0], y, rtol=1e-12)


def test_spline_many_rejects_unknown_end_conditions_and_too_few_knots():
    from rrkit._spline import spline_many

    x = np.arange(3.0)
    with pytest.raises(ValueError, match="bc_type"):
        spline_many([x], [x], [x], bc_type="clamped")
    with pytest.raises(ValueError, match="at least 4 knots"):
        spline_many([x], [x], [x])
