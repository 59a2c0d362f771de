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

__all__ = ["TIME_KEYS", "successive_differences", "time_domain", "tinn", "triangular_index"]

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


def tinn(nn_ms: np.ndarray) -> float:
    """TINN (ms): base ``M - N`` of the triangle that best fits the NN histogram (least squares).

    Notes
    -----
    Histogram with 1/128 s bins from 0 ms. The triangle is 0 outside ``[N, M]``, rises linearly
    from 0 at ``N`` to the histogram maximum ``Y`` at the modal bin ``X`` and falls to 0 at
    ``M``; ``N`` and ``M`` run over the bin edges left and right of ``X`` (Task Force 1996). The
    squared error is evaluated for every pair at once.
    """
    if nn_ms.size < 3:
        return _NAN
    idx = (nn_ms // HIST_BIN_MS).astype(np.int64)
    counts = np.bincount(idx - idx.min()).astype(float)
    nb = counts.size
    if nb < 3:
        return _NAN
    x = int(counts.argmax())
    y = counts[x]
    xc = x + 0.5
    # left side: bins 0..x (centres j + 0.5), feet at edges 0..x; the line is 0 left of its foot
    left = counts[: x + 1]
    feet = np.arange(x + 1.0)
    q = y * ((np.arange(x + 1) + 0.5)[None, :] - feet[:, None]) / (xc - feet)[:, None]
    err_left = ((left[None, :] - np.maximum(q, 0.0)) ** 2).sum(axis=1)
    # right side: bins x+1..nb-1, feet at edges x+1..nb; 0 right of its foot
    right = counts[x + 1:]
    ends = np.arange(x + 1.0, nb + 1.0)
    q = y * (ends[:, None] - (np.arange(x + 1, nb) + 0.5)[None, :]) / (ends - xc)[:, None]
    err_right = ((right[None, :] - np.maximum(q, 0.0)) ** 2).sum(axis=1)
    return float((ends[int(err_right.argmin())] - feet[int(err_left.argmin())]) * HIST_BIN_MS)


def _median(x: np.ndarray) -> float:
    """Median (as `numpy.median`) by one partition, without its per-call overhead."""
    n = x.size
    k = n // 2
    if n % 2:
        return float(np.partition(x, k)[k])
    part = np.partition(x, (k - 1, k))
    return 0.5 * (float(part[k - 1]) + float(part[k]))


def _sums(nn: np.ndarray, d: np.ndarray) -> dict[str, float]:
    """The sums the time-domain metrics are made of (see `time_domain`)."""
    n = nn.size
    mean = float(nn.sum()) / n
    dev = nn - mean
    out = {"mean": mean, "median": _median(nn), "min": float(nn.min()), "max": float(nn.max()),
           "ss_dev": float(dev @ dev), "n_diff": float(d.size), "ss_diff": float(d @ d),
           "ssc_diff": _NAN, "nn50": 0.0, "nn20": 0.0,
           "hist_max": float(np.bincount((nn // HIST_BIN_MS).astype(np.int64)).max())}
    if d.size:
        ad = np.abs(d)
        out["nn50"] = float(np.count_nonzero(ad > 50.0))
        out["nn20"] = float(np.count_nonzero(ad > 20.0))
        dc = d - float(d.sum()) / d.size
        out["ssc_diff"] = float(dc @ dc)
    return out


def time_domain(segments: list[np.ndarray], *, n_beats: int, duration_s: float,
                tinn_ms: float | None = None, sums: dict[str, float] | None = None,
                ) -> tuple[dict[str, float], list[str]]:
    """Time-domain metrics of NN-interval runs.

    Parameters
    ----------
    segments : list of numpy.ndarray
        Runs of consecutive NN intervals in ms (split at gaps).
    n_beats : int
        Beats in the window (reported as ``n_beats``).
    duration_s : float
        Time from the first to the last beat, in s (gaps included).
    tinn_ms : float, optional
        TINN already computed for these intervals (the batched path of `rrkit.analyze`).
    sums : dict, optional
        The sums of `_sums` already computed (the batched path of `rrkit.analyze`).

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
    notes: list[str] = []
    out = dict.fromkeys(TIME_KEYS, _NAN)
    out["n_beats"] = float(n_beats)
    out["duration_s"] = float(duration_s)
    nonempty = [s for s in segments if s.size]
    if not nonempty:
        nn = np.zeros(0)
    else:
        nn = nonempty[0] if len(nonempty) == 1 else np.concatenate(nonempty)
    n = nn.size
    if n == 0:
        notes.append("time domain: no NN intervals in the window, every time-domain metric is NaN")
        return out, notes
    if sums is None:
        d = successive_differences(nonempty)
        sums = _sums(nn, d)
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
    out["tinn_ms"] = tinn(nn) if tinn_ms is None else float(tinn_ms)
    if not np.isfinite(out["tinn_ms"]):
        notes.append("tinn_ms: NaN, the NN histogram has fewer than 3 bins")
    return out, notes
