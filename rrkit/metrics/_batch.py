"""The same metrics for many windows at once (the engine behind `rrkit.analyze`).

Analysing the 96 five-minute windows of a night spends most of its time in per-call overhead
of small array operations. Here the costly pieces are computed for every window together: TINN
from one histogram array, DFA from one padded array of profiles, SampEn from one sort of every
window's templates, the Welch spectra from one detrending solve per series length and one FFT
of every segment. The per-window functions then take these values (``pre``), so notes, NaN
rules and every other metric come from the single implementation in `time`, `spectral` and
`nonlinear`; the test suite checks that both paths agree.

Windows with gaps, with fewer than four intervals, or beyond the sizes below take the
per-window path.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np
from scipy.linalg.lapack import dpbtrs

from ..recording import Recording
from . import MetricsResult, compute
from ._settings import MetricsSettings
from .nonlinear import SORTED_SAMPEN_MAX, _boxes
from .spectral import (
    PsdEstimate,
    _band,
    _hann,
    _onesided,
    _smoothness_factor,
    edge_allowance_s,
    resample,
    run_length_s,
    segment_starts,
)
from .time import HIST_BIN_MS

__all__ = ["WindowView", "metrics_many"]

#: From this many windows on, SampEn and DFA run in compiled loops (`rrkit.metrics._kernels`,
#: numba); below it, numba's import and compile time would outweigh the gain.
COMPILED_MIN_WINDOWS = 24
#: Windows per chunk of the TINN and DFA arrays (bounds the memory of the padded arrays).
_CHUNK = 64
#: Most candidate template pairs per SampEn chunk (bounds memory: ~50 bytes a pair).
_MAX_PAIRS = 60_000


class WindowView:
    """The beats of one window as read-only views of a recording's arrays: what
    `rrkit.Recording.slice` gives, without building (and validating again) a new `Recording`.
    Has the attributes the metric functions read."""

    __slots__ = ("beat_times_s", "gaps", "rr_ms")

    def __init__(self, rec: Recording, start_s: float, end_s: float) -> None:
        t = rec.beat_times_s
        lo = int(np.searchsorted(t, start_s - 1e-9, side="left"))   # as Recording.slice
        hi = int(np.searchsorted(t, end_s + 1e-9, side="right"))
        if hi - lo < 2:
            lo = hi = 0
        self.beat_times_s = t[lo:hi]
        self.rr_ms = rec.rr_ms[lo:max(hi - 1, lo)]
        self.gaps = rec.gaps[lo:max(hi - 1, lo)]

    @property
    def n_beats(self) -> int:
        return int(self.beat_times_s.size)

    @property
    def n_intervals(self) -> int:
        return int(self.rr_ms.size)

    @property
    def duration_s(self) -> float:
        t = self.beat_times_s
        return 0.0 if t.size < 2 else float(t[-1] - t[0])

    @property
    def interval_times_s(self) -> np.ndarray:
        return self.beat_times_s[1:]


def metrics_many(parts: Sequence[Recording], s: MetricsSettings, *,
                 breathing_hz: Sequence[float | None] | None = None,
                 clean_settings: Sequence[Any] | None = None) -> list[MetricsResult]:
    """`rrkit.metrics` of every recording in ``parts`` with settings ``s``, batched.

    Parameters
    ----------
    parts : sequence of Recording or WindowView
        One recording (or view) per window.
    s : MetricsSettings
    breathing_hz : sequence of float or None, optional
        Stated breathing rate per window (Hz).
    clean_settings : sequence, optional
        Cleaning settings per window (carried into each result).

    Returns
    -------
    list of MetricsResult
        Equal to ``[rrkit.metrics(p, settings=s, ...) for p in parts]`` up to float rounding.
    """
    n = len(parts)
    breathing_hz = [None] * n if breathing_hz is None else list(breathing_hz)
    clean_settings = [None] * n if clean_settings is None else list(clean_settings)
    pre: list[dict[str, Any]] = [{} for _ in range(n)]
    fast = [i for i, p in enumerate(parts) if p.n_intervals >= 4 and not p.gaps.any()]
    if fast:
        nns = [parts[i].rr_ms for i in fast]
        if "time" in s.domains:
            for i, v in zip(fast, _tinn_many(nns), strict=True):
                pre[i]["tinn_ms"] = v
        if "nonlinear" in s.domains or "time" in s.domains:
            _nonlinear_many(fast, nns, s, pre)
        if "frequency" in s.domains and s.psd == "welch":
            _welch_many(fast, parts, s, pre)
    return [compute(p, s, breathing_hz=b, clean_settings=c, pre=q)
            for p, b, c, q in zip(parts, breathing_hz, clean_settings, pre, strict=True)]


# ----------------------------------------------------------------------------- TINN
def _tinn_many(nns: list[np.ndarray]) -> list[float]:
    k = _kernels() if len(nns) >= COMPILED_MIN_WINDOWS else None
    if k is not None:
        import warnings

        sizes = np.array([x.size for x in nns], dtype=np.int64)
        offsets = np.concatenate(([0], np.cumsum(sizes)[:-1])).astype(np.int64)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", category=Warning)
            return k.tinn_many(np.concatenate(nns), offsets, sizes, HIST_BIN_MS).tolist()
    out: list[float] = []
    for k in range(0, len(nns), _CHUNK):
        out += _tinn_chunk(nns[k:k + _CHUNK])
    return out


def _tinn_chunk(nns: list[np.ndarray]) -> list[float]:
    """`rrkit.metrics.time.tinn` of each array: the same least-squares triangle, every window's
    candidate feet evaluated in one array (windows x feet x bins)."""
    w = len(nns)
    idx = [(x // HIST_BIN_MS).astype(np.int64) for x in nns]
    lo = np.array([int(i.min()) for i in idx])
    nb = np.array([int(i.max()) for i in idx]) - lo + 1
    width = int(nb.max())
    rows = np.repeat(np.arange(w), [i.size for i in idx])
    rel = np.concatenate(idx) - np.repeat(lo, [i.size for i in idx])
    counts = np.bincount(rows * width + rel,
                         minlength=w * width).reshape(w, width).astype(float)
    x = counts.argmax(axis=1)
    y = counts[np.arange(w), x]
    xc = (x + 0.5)[:, None, None]
    yy = y[:, None, None]
    bins = (np.arange(width) + 0.5)[None, None, :]
    # left: feet at edges 0..x, bins 0..x
    feet = np.arange(width, dtype=float)[None, :, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.maximum(yy * (bins - feet) / (xc - feet), 0.0)
    left_bins = (np.arange(width)[None, :] <= x[:, None])[:, None, :]
    err_left = np.where(left_bins, (counts[:, None, :] - q) ** 2, 0.0).sum(axis=2)
    err_left[np.arange(width)[None, :] > x[:, None]] = np.inf
    # right: feet at edges x+1..nb, bins x+1..
    ends = np.arange(1, width + 1, dtype=float)[None, :, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.maximum(yy * (ends - bins) / (ends - xc), 0.0)
    right_bins = (np.arange(width)[None, :] > x[:, None])[:, None, :]
    err_right = np.where(right_bins, (counts[:, None, :] - q) ** 2, 0.0).sum(axis=2)
    e = np.arange(1, width + 1)[None, :]
    err_right[(e <= x[:, None]) | (e > nb[:, None])] = np.inf
    base = (err_right.argmin(axis=1) + 1) - err_left.argmin(axis=1)
    tinn = base * HIST_BIN_MS
    return [float(v) if b >= 3 else math.nan for v, b in zip(tinn, nb, strict=True)]


# ----------------------------------------------------------------------------- DFA, SampEn
def _kernels():
    """The compiled loops, or None when numba is not installed (then numpy does the work)."""
    try:
        from . import _kernels as k
    except ImportError:  # pragma: no cover - numba is a dependency, but stay usable without
        return None
    return k


def _nonlinear_many(fast: list[int], nns: list[np.ndarray], s: MetricsSettings,
                    pre: list[dict[str, Any]]) -> None:
    k = _kernels() if len(fast) >= COMPILED_MIN_WINDOWS else None
    if k is not None:
        _nonlinear_compiled(k, fast, nns, s, pre)
        return
    if "nonlinear" not in s.domains:
        return
    ranges = (s.dfa_alpha1_beats, s.dfa_alpha2_beats)
    for k in range(0, len(fast), _CHUNK):
        alphas = _dfa_chunk(nns[k:k + _CHUNK], ranges, s.dfa_min_boxes)
        for i, a in zip(fast[k:k + _CHUNK], alphas, strict=True):
            pre[i]["dfa"] = a
    use = [j for j, x in enumerate(nns) if s.sampen_min_beats <= x.size <= SORTED_SAMPEN_MAX]
    chunks: list[list[int]] = []
    pairs = 0
    for j in use:  # chunks bounded by the expected number of candidate pairs
        expect = nns[j].size ** 2 // 8
        if not chunks or pairs + expect > _MAX_PAIRS:
            chunks.append([])
            pairs = 0
        chunks[-1].append(j)
        pairs += expect
    for chunk in chunks:
        for j, v in zip(chunk, _sampen_chunk([nns[j] for j in chunk], s), strict=True):
            pre[fast[j]]["sampen"] = v


def _nonlinear_compiled(k, fast: list[int], nns: list[np.ndarray], s: MetricsSettings,
                        pre: list[dict[str, Any]]) -> None:
    import warnings

    sizes = np.array([x.size for x in nns], dtype=np.int64)
    offsets = np.concatenate(([0], np.cumsum(sizes)[:-1])).astype(np.int64)
    x = np.ascontiguousarray(np.concatenate(nns), dtype=np.float64)
    ranges = (s.dfa_alpha1_beats, s.dfa_alpha2_beats)
    lo = min(a for a, _ in ranges)
    hi = max(b for _, b in ranges)
    scales = np.arange(lo, hi + 1, dtype=np.int64)
    r = np.empty(sizes.size)
    for i, v in enumerate(nns):
        dev = v - float(v.sum()) / v.size
        r[i] = s.sampen_r * math.sqrt(float(dev @ dev) / (v.size - 1)) if v.size > 1 else 0.0
    with warnings.catch_warnings():
        # numba warns when it cannot write its on-disk cache (read-only install): harmless
        warnings.simplefilter("ignore", category=Warning)
        sums = k.sums_many(x, offsets, sizes, HIST_BIN_MS)
        fl, nbox = k.dfa_fluctuations_many(x, offsets, sizes, scales)
        a_cnt, b_cnt = k.sampen_counts_many(x, offsets, sizes, int(s.sampen_m), r)
    for j, i in enumerate(fast):
        row = dict(zip(k.SUM_KEYS, sums[j].tolist(), strict=True))
        nd = row["n_diff"]
        pre[i]["sums"] = row
        if nd >= 2:  # Poincaré SD1, SD2 (ddof=1) from the centred sums, as `poincare`
            pre[i]["sd12"] = (math.sqrt(row["ssc_diff"] / (2.0 * (nd - 1))),
                              math.sqrt(row["ssc_sum"] / (2.0 * (nd - 1))))
    logn = np.log(scales.astype(float))
    cols = []
    for a, b in ranges:
        sel = slice(a - lo, b - lo + 1)
        cols.append(_slopes(logn[sel], fl[:, sel], nbox[:, b - lo], s.dfa_min_boxes))
    for j, i in enumerate(fast):
        pre[i]["dfa"] = (float(cols[0][j]), float(cols[1][j]))
        if s.sampen_min_beats <= sizes[j]:
            a, b = int(a_cnt[j]), int(b_cnt[j])
            pre[i]["sampen"] = (math.nan, a, b) if a == 0 or b == 0 else \
                (float(-math.log(a / b)), a, b)


def _slopes(logn: np.ndarray, f: np.ndarray, nbox_hi: np.ndarray, min_boxes: int) -> np.ndarray:
    """Least-squares slope of log F on log n per row, over the finite positive F of the row."""
    ok = np.isfinite(f) & (f > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        y = np.where(ok, np.log(np.where(ok, f, 1.0)), 0.0)
        cnt = ok.sum(axis=1)
        xm = (logn * ok).sum(axis=1) / cnt
        ym = y.sum(axis=1) / cnt
        xd = np.where(ok, logn[None, :] - xm[:, None], 0.0)
        slope = (xd * (y - ym[:, None])).sum(axis=1) / (xd * xd).sum(axis=1)
    slope[(cnt < 2) | (nbox_hi < min_boxes)] = math.nan
    return slope


def _dfa_chunk(nns: list[np.ndarray], ranges, min_boxes: int) -> list[tuple[float, float]]:
    """`rrkit.metrics.nonlinear.dfa_alphas` of each array, from one padded array of profiles."""
    lo = min(a for a, _ in ranges)
    hi = max(b for _, b in ranges)
    scales = tuple(range(lo, hi + 1))
    nsc = len(scales)
    w = len(nns)
    sizes = np.array([x.size for x in nns])
    lmax = int(sizes.max())
    vals = np.zeros((w, lmax))
    mask = np.arange(lmax)[None, :] < sizes[:, None]
    vals[mask] = np.concatenate([x - float(x.sum()) / x.size for x in nns])
    prof = np.cumsum(vals, axis=1)
    cum = np.zeros((3, w, lmax + 1))
    cum[0, :, 1:] = prof
    cum[1, :, 1:] = prof * np.arange(lmax)
    cum[2, :, 1:] = prof * prof
    np.cumsum(cum, axis=2, out=cum)
    flat = cum.reshape(3, -1)
    parts = [_boxes((int(n),), scales) for n in sizes]
    row = np.repeat(np.arange(w), [p[0].size for p in parts])
    off = row * (lmax + 1)
    starts = np.concatenate([p[0] for p in parts]) + off
    ends = np.concatenate([p[1] for p in parts]) + off
    which = np.concatenate([p[2] for p in parts])
    size = np.concatenate([p[3] for p in parts])
    centre = np.concatenate([p[4] for p in parts])
    stt = np.concatenate([p[5] for p in parts])
    nbox = np.stack([p[6] for p in parts])
    sy, sky, syy = flat[:, ends] - flat[:, starts]
    sty = sky - centre * sy
    ss = syy - sy * sy / size - sty * sty / stt
    with np.errstate(divide="ignore", invalid="ignore"):
        f2 = np.bincount(row * nsc + which, weights=np.maximum(ss, 0.0) / size,
                         minlength=w * nsc).reshape(w, nsc) / nbox
        fl = np.sqrt(f2)
    logn = np.log(np.asarray(scales, dtype=float))
    cols = [_slopes(logn[a - lo:b - lo + 1], fl[:, a - lo:b - lo + 1], nbox[:, b - lo], min_boxes)
            for a, b in ranges]
    return [tuple(float(c[i]) for c in cols) for i in range(w)]


def _sampen_chunk(nns: list[np.ndarray], s: MetricsSettings) -> list[tuple[float, int, int]]:
    """`rrkit.metrics.nonlinear.sample_entropy` (sorted count) of each array, one sort for all:
    each window's values are shifted apart so that no candidate pair spans two windows."""
    m = s.sampen_m
    w = len(nns)
    sizes = np.array([x.size for x in nns])
    x = np.concatenate(nns)
    offsets = np.concatenate(([0], np.cumsum(sizes)[:-1]))
    r = np.empty(w)
    for i, v in enumerate(nns):
        dev = v - float(v.sum()) / v.size
        r[i] = s.sampen_r * math.sqrt(float(dev @ dev) / (v.size - 1))
    nt = sizes - m
    win = np.repeat(np.arange(w), nt)
    starts = offsets[win] + (np.arange(int(nt.sum())) - np.repeat(np.cumsum(nt) - nt, nt))
    spread = float(x.max() - x.min()) + 4.0 * float(r.max()) + 1.0
    key = x[starts] - float(x.min()) + win * spread
    order = np.argsort(key, kind="stable")
    ks = key[order]
    # template points in sorted order (contiguous gathers below); x0 are the unshifted firsts
    st = starts[order]
    cols = [x[st + k] for k in range(m + 1)]
    ws = win[order]
    rw = r[ws]
    slack = 8.0 * np.finfo(float).eps * (w * spread)  # a few ulps of the largest key
    hi = np.searchsorted(ks, ks + rw * (1 + 1e-12) + slack, side="right")
    counts = hi - np.arange(ks.size) - 1
    total = int(counts.sum())
    a_cnt = np.zeros(w, np.int64)
    b_cnt = np.zeros(w, np.int64)
    if total:
        pi = np.repeat(np.arange(ks.size), counts)
        pj = np.arange(total) + np.repeat(np.arange(1, ks.size + 1) - (np.cumsum(counts) - counts),
                                          counts)
        rp = rw[pi]
        ok = np.abs(cols[0][pj] - cols[0][pi]) <= rp
        for k in range(1, m):
            ok &= np.abs(cols[k][pj] - cols[k][pi]) <= rp
        keep = np.flatnonzero(ok)
        pi, pj, rp = pi[keep], pj[keep], rp[keep]
        b_cnt = np.bincount(ws[pi], minlength=w)
        okm = np.abs(cols[m][pj] - cols[m][pi]) <= rp
        a_cnt = np.bincount(ws[pi[okm]], minlength=w)
    out = []
    for a, b in zip(a_cnt.tolist(), b_cnt.tolist(), strict=True):
        out.append((math.nan, a, b) if a == 0 or b == 0 else (float(-math.log(a / b)), a, b))
    return out


# ----------------------------------------------------------------------------- Welch
def _resampled(parts: list, fs: float) -> list[np.ndarray]:
    """`rrkit.metrics.spectral.resample` of each window (compiled loop for many windows)."""
    k = _kernels() if len(parts) >= COMPILED_MIN_WINDOWS else None
    if k is None:
        return [resample(p.interval_times_s, p.rr_ms, fs) for p in parts]
    import warnings

    ts = [p.interval_times_s for p in parts]
    sizes = np.array([v.size for v in ts], dtype=np.int64)
    offsets = np.concatenate(([0], np.cumsum(sizes)[:-1])).astype(np.int64)
    out_sizes = np.array([math.floor((v[-1] - v[0]) * fs + 1e-9) + 1 for v in ts], dtype=np.int64)
    out_offsets = np.concatenate(([0], np.cumsum(out_sizes)[:-1])).astype(np.int64)
    out = np.empty(int(out_sizes.sum()))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", category=Warning)
        k.resample_many(np.concatenate(ts), np.concatenate([p.rr_ms for p in parts]), offsets,
                        sizes, float(fs), out, out_offsets, out_sizes)
    return np.split(out, out_offsets[1:])


def _welch_many(fast: list[int], parts: Sequence[Recording], s: MetricsSettings,
                pre: list[dict[str, Any]]) -> None:
    """Welch spectra of single-run windows: one banded solve per series length for the
    smoothness-priors detrending, one FFT over every segment of every window."""
    fs = s.resample_hz
    nfft = max(round(s.welch_segment_s * fs), 8)
    series: dict[int, list[tuple[int, np.ndarray]]] = {}
    longest: dict[int, float] = {}
    allowance: dict[int, float] = {}
    use = []
    for i in fast:
        p = parts[i]
        length = run_length_s(p.interval_times_s, p.rr_ms)
        allow = edge_allowance_s(p.rr_ms)
        if length + allow >= s.min_hf_s:  # shorter: the per-window path writes the note
            use.append(i)
            longest[i] = length
            allowance[i] = allow
    if not use:
        return
    for i, x in zip(use, _resampled([parts[i] for i in use], fs), strict=True):
        series.setdefault(x.size, []).append((i, x))
    detrended: dict[int, np.ndarray] = {}
    for n, items in series.items():
        rows = np.stack([x for _, x in items])  # (k, n): one series a row; its transpose is the
        if s.detrend == "smoothness_priors" and n >= 3:  # Fortran-ordered (n, k) LAPACK wants
            trend, info = dpbtrs(_smoothness_factor(n, float(s.smoothness_lambda)), rows.T,
                                 lower=0)
            if info != 0:  # pragma: no cover
                raise RuntimeError(f"banded Cholesky solve failed (LAPACK info {info})")
            rows = rows - trend.T
        elif s.detrend == "smoothness_priors":
            rows = rows - rows.mean(axis=1, keepdims=True)
        else:
            from scipy.signal import detrend

            rows = detrend(rows, axis=1, type="linear")
        for r, (i, _) in enumerate(items):
            detrended[i] = rows[r]
    groups: dict[int, list[int]] = {}
    for i, x in detrended.items():
        groups.setdefault(min(nfft, x.size), []).append(i)
    f = np.arange(nfft // 2 + 1) * (fs / nfft)
    f.flags.writeable = False
    df = fs / nfft
    for nper, members in groups.items():
        nover = int(nper * s.welch_overlap)
        win = _hann(nper)
        series_all = [detrended[i] for i in members]
        sizes = np.array([x.size for x in series_all])
        first = np.concatenate(([0], np.cumsum(sizes)[:-1]))
        starts = [segment_starts(int(n), nper, nover) for n in sizes]
        counts = [st.size for st in starts]
        seg0 = np.concatenate([f0 + st for f0, st in zip(first.tolist(), starts, strict=True)])
        allseg = np.concatenate(series_all)[seg0[:, None] + np.arange(nper)[None, :]]
        allseg -= allseg.mean(axis=1, keepdims=True)
        allseg *= win
        spec = np.fft.rfft(allseg, n=nfft, axis=1)
        power = spec.real ** 2 + spec.imag ** 2
        bounds = np.concatenate(([0], np.cumsum(counts)[:-1]))
        psd = np.add.reduceat(power, bounds, axis=0) / np.asarray(counts, float)[:, None]
        psd /= fs * float(np.dot(win, win))
        _onesided(psd, nfft)
        known = _known_values(f, psd, df, s)
        for row, i in enumerate(members):
            p = psd[row]
            p.flags.writeable = False
            pre[i]["estimate"] = PsdEstimate(f, p, float(df), "welch", longest[i], 1, 0,
                                             known=known[row], edge_allowance_s=allowance[i])


def _known_values(f: np.ndarray, psd: np.ndarray, df: float, s: MetricsSettings
                  ) -> list[dict]:
    """Band powers, band peaks and the low-frequency peak of every row of ``psd`` at once
    (the quantities `rrkit.metrics.spectral.frequency_domain` asks of each spectrum)."""
    b = s.bands
    cum = np.zeros((psd.shape[0], psd.shape[1] + 1))
    np.cumsum(psd, axis=1, out=cum[:, 1:])
    out: list[dict] = [{} for _ in range(psd.shape[0])]
    total_band = (b.vlf[0], b.hf[1])
    for band in (b.vlf, b.lf, b.hf, total_band):
        sl = _band(f, band)
        power = (cum[:, sl.stop] - cum[:, sl.start]) * df
        for row, v in enumerate(power.tolist()):
            out[row][("power", band)] = v
    for band in (b.lf, b.hf):
        sl = _band(f, band)
        if sl.stop <= sl.start:
            continue
        peaks = f[sl.start + psd[:, sl].argmax(axis=1)]
        for row, v in enumerate(peaks.tolist()):
            out[row][("peak", band)] = v
    low = _band(f, (b.vlf[0], b.hf[0]))
    if low.stop > low.start:
        hw = s.resp_peak_halfwidth_hz
        fpk = f[low.start + psd[:, low].argmax(axis=1)]
        a = np.searchsorted(f, fpk - hw, side="left")
        z = np.searchsorted(f, fpk + hw, side="right")
        near = (cum[np.arange(psd.shape[0]), z] - cum[np.arange(psd.shape[0]), a]) * df
        for row, (fp, nv) in enumerate(zip(fpk.tolist(), near.tolist(), strict=True)):
            out[row][("low_peak", low.start, low.stop, hw)] = (fp, nv)
    return out
