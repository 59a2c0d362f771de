"""Time-domain HRV metrics: pure functions of NN-interval runs (ms).

Every function takes ``segments``, a list of 1-D float arrays of NN intervals in ms: the runs of
consecutive usable intervals of a recording (`Recording.nn_segments`). Statistics of the intervals
pool all runs; successive differences are formed inside each run only, never across a gap.

References
----------
Task Force of the European Society of Cardiology and the North American Society of Pacing and
Electrophysiology (1996). Heart rate variability: standards of measurement, physiological
interpretation, and clinical use. Circulation 93(5):1043-1065. doi:10.1161/01.CIR.93.5.1043
"""

from __future__ import annotations

import math

import numpy as np

from ._ragged import Ragged, segment_max, segment_min, segment_sum

__all__ = ["TIME_KEYS", "histograms", "successive_differences", "time_domain", "time_many",
           "time_values", "tinn", "tinn_many", "triangular_index"]

TIME_KEYS = (
    "n_beats", "duration_s", "mean_rr_ms", "median_rr_ms", "mean_hr_bpm", "min_hr_bpm",
    "max_hr_bpm", "sdnn_ms", "rmssd_ms", "ln_rmssd", "sdsd_ms", "pnn50_pct", "pnn20_pct",
    "cv_rr_pct", "hrv_triangular_index", "tinn_ms",
)

#: Histogram bin width of the geometric indices: 1/128 s (Task Force 1996).
HIST_BIN_MS = 1000.0 / 128.0

_NAN = float("nan")


def successive_differences(segments: list[np.ndarray]) -> np.ndarray:
    """Successive differences RR[n+1] - RR[n] (ms) inside each run, pooled."""
    parts = [np.diff(s) for s in segments if s.size > 1]
    if not parts:
        return np.zeros(0)
    return parts[0] if len(parts) == 1 else np.concatenate(parts)


def triangular_index(nn_ms: np.ndarray) -> float:
    """HRV triangular index: N / (height of the NN histogram with 1/128 s bins from 0 ms).

    The bin origin changes the value; rrkit bins from 0 ms (as neurokit2 does).
    """
    if nn_ms.size == 0:
        return _NAN
    counts = np.bincount((nn_ms // HIST_BIN_MS).astype(np.int64))
    return float(nn_ms.size / counts.max())


def histograms(rg: Ragged) -> tuple[np.ndarray, np.ndarray]:
    """NN histograms of every window (1/128 s bins from 0 ms, from each window's lowest
    occupied bin to its highest): counts laid end to end and their offsets per window."""
    b = (rg.rr_ms // HIST_BIN_MS).astype(np.int64)
    off = rg.window_offsets
    n = rg.n_intervals
    lo = np.zeros(n.size, np.int64)
    hi = np.full(n.size, -1, np.int64)
    ne = n > 0
    if ne.any():
        lo[ne] = np.minimum.reduceat(b, off[:-1][ne])
        hi[ne] = np.maximum.reduceat(b, off[:-1][ne])
    width = hi - lo + 1
    hoff = np.concatenate(([0], np.cumsum(width)))
    key = b - lo[rg.value_window] + hoff[:-1][rg.value_window]
    counts = np.bincount(key, minlength=int(hoff[-1]))
    return counts, hoff


#: Most elements (windows x candidate feet x bins) of one TINN block (bounds its memory).
_TINN_BLOCK = 1 << 21


def tinn_many(counts: np.ndarray, offsets: np.ndarray) -> np.ndarray:
    """TINN (ms) of every histogram ``counts[offsets[i]:offsets[i + 1]]`` (see `tinn`).

    Windows are processed in blocks of at most `_TINN_BLOCK` elements of the
    (windows x feet x bins) error array; NaN for fewer than 3 bins (`time_many` also gives NaN
    for fewer than 3 intervals).
    """
    nb = np.diff(offsets)
    out = np.full(nb.size, _NAN)
    use = np.flatnonzero(nb >= 3)
    i = 0
    while i < use.size:  # blocks of windows: (count x width**2) elements at most
        j = i
        width = 0
        while j < use.size:
            w2 = max(width, int(nb[use[j]]))
            if j > i and (j - i + 1) * w2 * w2 > _TINN_BLOCK:
                break
            width = w2
            j += 1
        block = use[i:j]
        out[block] = _tinn_block(counts, offsets, block, width)
        i = j
    return out


def _tinn_block(counts: np.ndarray, offsets: np.ndarray, block: np.ndarray, width: int
                ) -> np.ndarray:
    w = block.size
    nb = (offsets[block + 1] - offsets[block])
    c = np.zeros((w, width))
    col = np.arange(width)[None, :]
    inside = col < nb[:, None]
    c[inside] = counts[(offsets[block][:, None] + col)[inside]]
    x = c.argmax(axis=1)
    y = c[np.arange(w), x]
    xc = (x + 0.5)[:, None, None]
    yy = y[:, None, None]
    bins = (np.arange(width) + 0.5)[None, None, :]
    # left side: feet at edges 0..x, over bins 0..x; the line is 0 left of its foot
    feet = np.arange(width, dtype=float)[None, :, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.maximum(yy * (bins - feet) / (xc - feet), 0.0)
    left_bins = (col <= x[:, None])[:, None, :]
    err_left = np.where(left_bins, (c[:, None, :] - q) ** 2, 0.0).sum(axis=2)
    err_left[col > x[:, None]] = np.inf
    # right side: feet at edges x+1..nb, over bins x+1..nb-1; 0 right of its foot
    ends = np.arange(1, width + 1, dtype=float)[None, :, None]
    with np.errstate(divide="ignore", invalid="ignore"):
        q = np.maximum(yy * (ends - bins) / (ends - xc), 0.0)
    right_bins = ((col > x[:, None]) & (col < nb[:, None]))[:, None, :]
    err_right = np.where(right_bins, (c[:, None, :] - q) ** 2, 0.0).sum(axis=2)
    e = col + 1
    err_right[(e <= x[:, None]) | (e > nb[:, None])] = np.inf
    base = (err_right.argmin(axis=1) + 1) - err_left.argmin(axis=1)
    return base * HIST_BIN_MS


def tinn(nn_ms: np.ndarray) -> float:
    """TINN (ms): base ``M - N`` of the triangle that best fits the NN histogram (least squares).

    Notes
    -----
    Histogram with 1/128 s bins from 0 ms. The triangle is 0 outside ``[N, M]``, rises linearly
    from 0 at ``N`` to the histogram maximum ``Y`` at the modal bin ``X`` and falls to 0 at
    ``M``; ``N`` and ``M`` run over the bin edges left and right of ``X`` (Task Force 1996). The
    squared error is evaluated for every pair at once (`tinn_many`, one window).
    """
    nn_ms = np.asarray(nn_ms, dtype=np.float64)
    if nn_ms.size < 3:
        return _NAN
    counts, off = histograms(Ragged.from_segments([nn_ms]))
    return float(tinn_many(counts, off)[0])


def time_many(rg: Ragged) -> dict[str, np.ndarray]:
    """The sums the time-domain metrics of every window are made of (see `time_values`)."""
    x = rg.rr_ms
    off = rg.window_offsets
    n = rg.n_intervals.astype(float)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = segment_sum(x, off) / n
        dev = x - mean[rg.value_window]
        ss_dev = segment_sum(dev * dev, off)
        j = rg.pairs
        poff = rg.pair_offsets
        d = x[j] - x[j - 1]
        nd = np.diff(poff).astype(float)
        ss_diff = segment_sum(d * d, poff)
        ad = np.abs(d)
        nn50 = segment_sum((ad > 50.0).astype(float), poff)
        nn20 = segment_sum((ad > 20.0).astype(float), poff)
        dc = d - (segment_sum(d, poff) / nd)[np.repeat(np.arange(n.size), np.diff(poff))]
        ssc_diff = np.where(nd > 0, segment_sum(dc * dc, poff), _NAN)
    counts, hoff = histograms(rg)
    hist_max = segment_max(counts.astype(float), hoff)
    tinn_ms = tinn_many(counts, hoff)
    tinn_ms[n < 3] = _NAN
    return {"n": n, "mean": mean, "median": rg.window_median, "min": segment_min(x, off),
            "max": segment_max(x, off), "ss_dev": ss_dev, "n_diff": nd, "ss_diff": ss_diff,
            "ssc_diff": ssc_diff, "nn50": nn50, "nn20": nn20, "hist_max": hist_max,
            "tinn_ms": tinn_ms}


def time_values(sums: dict[str, float], *, n_beats: int, duration_s: float
                ) -> tuple[dict[str, float], list[str]]:
    """Time-domain values and notes of one window from its row of `time_many`."""
    notes: list[str] = []
    out = dict.fromkeys(TIME_KEYS, _NAN)
    out["n_beats"] = float(n_beats)
    out["duration_s"] = float(duration_s)
    n = int(sums["n"])
    if n == 0:
        notes.append("time domain: no NN intervals in the window, every time-domain metric is NaN")
        return out, notes
    nd = int(sums["n_diff"])
    mean = sums["mean"]
    out["mean_rr_ms"] = mean
    out["median_rr_ms"] = sums["median"]
    out["mean_hr_bpm"] = 60000.0 / mean
    out["min_hr_bpm"] = 60000.0 / sums["max"]
    out["max_hr_bpm"] = 60000.0 / sums["min"]
    if n >= 2:
        sdnn = math.sqrt(sums["ss_dev"] / (n - 1))
        out["sdnn_ms"] = sdnn
        out["cv_rr_pct"] = 100.0 * sdnn / mean
    else:
        notes.append("sdnn_ms, cv_rr_pct: NaN, fewer than 2 NN intervals")
    if nd >= 1:
        rmssd = math.sqrt(sums["ss_diff"] / nd)
        out["rmssd_ms"] = rmssd
        out["ln_rmssd"] = math.log(rmssd) if rmssd > 0 else _NAN
        if rmssd == 0:
            notes.append("ln_rmssd: NaN, RMSSD is 0 ms")
        out["pnn50_pct"] = 100.0 * sums["nn50"] / n
        out["pnn20_pct"] = 100.0 * sums["nn20"] / n
    else:
        notes.append("rmssd_ms, ln_rmssd, pnn50_pct, pnn20_pct: NaN, no two adjacent NN intervals")
    if nd >= 2:
        out["sdsd_ms"] = math.sqrt(sums["ssc_diff"] / (nd - 1))
    else:
        notes.append("sdsd_ms: NaN, fewer than 2 successive differences")
    out["hrv_triangular_index"] = n / sums["hist_max"]
    out["tinn_ms"] = float(sums["tinn_ms"])
    if not np.isfinite(out["tinn_ms"]):
        notes.append("tinn_ms: NaN, the NN histogram has fewer than 3 bins")
    return out, notes


def time_domain(segments: list[np.ndarray], *, n_beats: int, duration_s: float,
                ) -> tuple[dict[str, float], list[str]]:
    """Time-domain metrics of NN-interval runs (one window: `time_many` on a batch of one).

    Parameters
    ----------
    segments : list of numpy.ndarray
        Runs of consecutive NN intervals in ms (split at gaps).
    n_beats : int
        Beats in the window (reported as ``n_beats``).
    duration_s : float
        Time from the first to the last beat, in s (gaps included).

    Returns
    -------
    values : dict
        The keys of `TIME_KEYS`, floats (NaN where undefined).
    notes : list of str
        Why any value is NaN.

    Notes
    -----
    With ``N`` NN intervals and ``D`` the pooled successive differences inside runs:
    ``sdnn_ms = SD(NN, ddof=1)``, ``rmssd_ms = sqrt(mean(D**2))``, ``sdsd_ms = SD(D, ddof=1)``,
    ``pnn50_pct = 100 * #(|D| > 50 ms) / N`` (the Task Force 1996 denominator, the number of NN
    intervals; many programs divide by the number of differences instead), ``pnn20_pct``
    likewise, ``cv_rr_pct = 100 * sdnn / mean``, ``mean_hr_bpm = 60000 / mean_rr_ms``,
    ``min_hr_bpm`` and ``max_hr_bpm`` from the beat-to-beat rate ``60000 / RR``,
    ``ln_rmssd = ln(rmssd_ms)``.

    Examples
    --------
    >>> import numpy as np
    >>> v, _ = time_domain([np.array([800., 810, 790, 850, 820, 780, 900, 840])],
    ...                    n_beats=9, duration_s=6.59)
    >>> round(v["rmssd_ms"], 4), v["pnn50_pct"]
    (59.2814, 37.5)
    """
    rg = Ragged.from_segments(segments, n_beats=n_beats, duration_s=duration_s)
    sums = {k: float(v[0]) for k, v in time_many(rg).items()}
    return time_values(sums, n_beats=n_beats, duration_s=duration_s)
