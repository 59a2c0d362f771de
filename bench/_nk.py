"""The neurokit2 side of every comparison: the same work written the way a neurokit2 user would.

neurokit2 is the reference library here (general purpose, BSD licence). Each function calls its
public API with the settings named in the case descriptions; nothing of neurokit2 is copied.
"""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np

__all__ = [
    "FS_HZ",
    "NK_KEYS",
    "nk_changed_intervals",
    "nk_fixpeaks",
    "nk_read_rr",
    "nk_window_metrics",
    "nk_windows",
]

#: Sampling rate of the peak indices handed to ``signal_fixpeaks`` (a common ECG rate).
FS_HZ = 1000


def _nk():
    import neurokit2 as nk

    return nk


def nk_fixpeaks(peaks: np.ndarray) -> np.ndarray:
    """``neurokit2.signal_fixpeaks`` with its defaults (the Lipponen & Tarvainen 2019 method,
    iterative) on peak sample indices at `FS_HZ`; returns the corrected peak indices."""
    nk = _nk()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        _info, clean = nk.signal_fixpeaks(peaks, sampling_rate=FS_HZ)
    return np.asarray(clean, dtype=np.int64)


def nk_changed_intervals(peaks: np.ndarray, clean: np.ndarray) -> np.ndarray:
    """Which input intervals ``signal_fixpeaks`` changed.

    Input interval ``i`` runs from ``peaks[i]`` to ``peaks[i + 1]``; it is unchanged when both
    peaks are still in the corrected set and nothing was inserted between them.
    """
    clean = np.sort(np.asarray(clean))
    pos = np.searchsorted(clean, peaks)
    present = (pos < clean.size) & (clean[np.minimum(pos, clean.size - 1)] == peaks)
    same = present[:-1] & present[1:] & (pos[1:] == pos[:-1] + 1)
    return ~same


def nk_read_rr(path: str | Path) -> np.ndarray:
    """Read a one-value-a-line RR file (ms) the way a neurokit2 user would: numpy.

    neurokit2 has no RR-file reader, so the user's code reads the column with numpy; lines that
    are not numbers (a header) are skipped.
    """
    try:
        return np.loadtxt(path, dtype=float, ndmin=1)
    except ValueError:
        return np.loadtxt(path, dtype=float, ndmin=1, skiprows=1)


#: neurokit2 columns read by `nk_window_metrics`, keyed by the rrkit metric they are compared to.
NK_KEYS = {
    "mean_rr_ms": "HRV_MeanNN",
    "median_rr_ms": "HRV_MedianNN",
    "sdnn_ms": "HRV_SDNN",
    "rmssd_ms": "HRV_RMSSD",
    "sdsd_ms": "HRV_SDSD",
    "pnn50_pct": "HRV_pNN50",
    "pnn20_pct": "HRV_pNN20",
    "cv_rr_pct": "HRV_CVNN",  # a fraction in neurokit2; x100 below
    "min_hr_bpm": "HRV_MaxNN",  # 60000 / longest interval
    "max_hr_bpm": "HRV_MinNN",  # 60000 / shortest interval
    "hrv_triangular_index": "HRV_HTI",
    "tinn_ms": "HRV_TINN",
    "vlf_ms2": "HRV_VLF",
    "lf_ms2": "HRV_LF",
    "hf_ms2": "HRV_HF",
    "total_power_ms2": "HRV_TP",
    "lf_hf": "HRV_LFHF",
}


def nk_window_metrics(
    rr_ms: np.ndarray,
    times_s: np.ndarray,
    *,
    sampen_r: float | None = None,
    dfa_overlap: bool = False,
) -> dict[str, float]:
    """The metric set of one window with neurokit2, mapped to rrkit's key names.

    Calls ``hrv_time``, ``hrv_frequency`` (Welch, ``interpolation_rate=4``, ``normalize=False``),
    ``entropy_sample`` (m = 2, r given, default 0.2 SD with ddof=1) and ``fractal_dfa`` over
    scales 4-16 (alpha1) and 16-64 (alpha2) beats with non-overlapping boxes (Peng et al. 1995;
    the box layout rrkit uses), on the given NN intervals (ms) and the times (s) of the beats
    that end them.
    """
    nk = _nk()
    rr_ms = np.asarray(rr_ms, dtype=float)
    data = {"RRI": rr_ms, "RRI_Time": np.asarray(times_s, dtype=float)}
    r = float(sampen_r) if sampen_r is not None else 0.2 * float(np.std(rr_ms, ddof=1))
    out: dict[str, float] = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        t = nk.hrv_time(data)
        f = nk.hrv_frequency(data, normalize=False, interpolation_rate=4, psd_method="welch")
        sampen, _ = nk.entropy_sample(rr_ms, delay=1, dimension=2, tolerance=r)
        a1, _ = nk.fractal_dfa(rr_ms, scale=np.arange(4, 17), overlap=dfa_overlap)
        a2, _ = nk.fractal_dfa(rr_ms, scale=np.arange(16, 65), overlap=dfa_overlap)
    row = {**t.iloc[0].to_dict(), **f.iloc[0].to_dict()}
    for key, col in NK_KEYS.items():
        out[key] = float(row.get(col, np.nan))
    out["cv_rr_pct"] *= 100.0
    out["min_hr_bpm"] = 60000.0 / out["min_hr_bpm"]
    out["max_hr_bpm"] = 60000.0 / out["max_hr_bpm"]
    out["sampen"] = float(sampen)
    out["dfa_alpha1"] = float(a1)
    out["dfa_alpha2"] = float(a2)
    out["n_intervals"] = float(rr_ms.size)
    return out


def nk_windows(
    beat_times_s: np.ndarray,
    rr_ms: np.ndarray,
    bounds_s: list[tuple[float, float]],
    **kwargs,
) -> list[dict[str, float]]:
    """`nk_window_metrics` for each ``(start_s, end_s)`` window of a beat series.

    A window holds the beats with ``start_s <= t <= end_s`` and the intervals between them (the
    membership rule of `rrkit.Recording.slice`, so both sides see the same intervals).
    """
    t = np.asarray(beat_times_s, dtype=float)
    rr_ms = np.asarray(rr_ms, dtype=float)
    out = []
    for a, b in bounds_s:
        lo = int(np.searchsorted(t, a - 1e-9, side="left"))
        hi = int(np.searchsorted(t, b + 1e-9, side="right"))
        out.append(nk_window_metrics(rr_ms[lo:hi - 1], t[lo + 1:hi], **kwargs))
    return out
