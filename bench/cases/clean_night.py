"""clean-night: artifact correction of an 8-hour night, rrkit vs neurokit2, on the same peaks.

rrkit: ``rrkit.clean(Recording.from_peak_times(peaks / fs), method="drr")``.
neurokit2: ``signal_fixpeaks(peaks, sampling_rate=fs)`` with its defaults (the method of
Lipponen & Tarvainen 2019, J Med Eng Technol 43(3):173-181, iterative).

Checks before timing: (1) the intervals each side flags agree on at least 90% of the injected
artifacts (each artifact counts as flagged by a side when that side flags it or a neighbour
within one interval); (2) each side's corrected series is compared with the artifact-free truth
(mean absolute error of the intervals around the artifacts, matched by beat time; RMSSD and SDNN
of the whole night), and rrkit's must be closer than neurokit2's.
"""

from __future__ import annotations

import time

import numpy as np

from .._harness import CaseResult, Check, Target, speed_ratios, time_pair
from .._nk import FS_HZ, nk_changed_intervals, nk_fixpeaks

NAME = "clean-night"
DESCRIPTION = "8-h night, 2% artifacts: rrkit.clean(drr) vs neurokit2 signal_fixpeaks"
TARGET_X = 50.0
AGREE_MIN = 0.90


def _near(flags: np.ndarray, idx: np.ndarray, tol: int = 1) -> np.ndarray:
    """For each index in ``idx``: is any of ``flags[i - tol : i + tol + 1]`` set?"""
    padded = np.concatenate((np.zeros(tol, bool), flags, np.zeros(tol, bool)))
    win = np.lib.stride_tricks.sliding_window_view(padded, 2 * tol + 1)
    return win[idx].any(axis=1)


def _nearest_distance(sorted_ref: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Distance from each ``x`` to the nearest value of ``sorted_ref`` (inf when it is empty)."""
    if sorted_ref.size == 0:
        return np.full(x.shape, np.inf)
    k = np.searchsorted(sorted_ref, x)
    lo = sorted_ref[np.clip(k - 1, 0, sorted_ref.size - 1)]
    hi = sorted_ref[np.clip(k, 0, sorted_ref.size - 1)]
    return np.minimum(np.abs(x - lo), np.abs(hi - x))


def _rmssd(rr: np.ndarray) -> float:
    return float(np.sqrt(np.mean(np.diff(rr) ** 2)))


def errors_vs_truth(truth, beat_times_s: np.ndarray, rr_ms: np.ndarray,
                    artifact_times_s: np.ndarray) -> dict[str, float]:
    """How far a corrected series is from the artifact-free truth.

    Each true interval is paired with the corrected interval whose end beat is nearest in time;
    ``mae_near_ms`` averages ``|corrected - true|`` over true intervals ending within 3 s of an
    injected artifact, ``mae_all_ms`` over all of them. RMSSD and SDNN errors are relative (%),
    over the whole night.
    """
    te = np.asarray(truth.beat_times_s)[1:]
    trr = np.asarray(truth.rr_ms)
    ce = np.asarray(beat_times_s)[1:]
    j = np.clip(np.searchsorted(ce, te), 1, ce.size - 1)
    j = np.where(np.abs(ce[j - 1] - te) <= np.abs(ce[j] - te), j - 1, j)
    err = np.abs(np.asarray(rr_ms)[j] - trr)
    near = _nearest_distance(np.asarray(artifact_times_s), te) <= 3.0
    rmssd_t, sdnn_t = _rmssd(trr), float(np.std(trr, ddof=1))
    return {
        "mae_near_ms": float(err[near].mean()) if near.any() else float("nan"),
        "mae_all_ms": float(err.mean()),
        "rmssd_err_pct": 100.0 * (_rmssd(np.asarray(rr_ms)) - rmssd_t) / rmssd_t,
        "sdnn_err_pct": 100.0 * (float(np.std(rr_ms, ddof=1)) - sdnn_t) / sdnn_t,
    }


def run(cfg) -> CaseResult:
    import rrkit

    res = CaseResult(NAME, DESCRIPTION)
    t_case = time.perf_counter()
    night = cfg.night()
    peaks = night.peaks
    rec = night.recording
    idx = night.artifact_intervals
    res.params = {"duration_h": round(rec.duration_s / 3600, 2), "beats": int(rec.n_beats),
                  "injected_artifacts": int(idx.size),
                  "artifact_pct": round(100 * idx.size / rec.n_intervals, 2)}

    def rr_side():
        return rrkit.clean(rrkit.Recording.from_peak_times(peaks / FS_HZ), method="drr")

    def nk_side():
        return nk_fixpeaks(peaks)

    # Outputs first (also the warm-up), checks before any timing.
    out_rr = rr_side()
    out_nk = nk_side()
    rr_flag = np.asarray(out_rr.changed, bool) | (np.asarray(out_rr.labels) != "normal")
    nk_flag = nk_changed_intervals(peaks, out_nk)
    hit_rr = _near(rr_flag, idx)
    hit_nk = _near(nk_flag, idx)
    agree = float(np.mean(hit_rr == hit_nk)) if idx.size else float("nan")
    res.checks.append(Check(
        "flags agree on injected artifacts", bool(idx.size) and agree >= AGREE_MIN,
        f"{100 * agree:.1f}% of {idx.size} injected artifacts (need >= {100 * AGREE_MIN:.0f}%); "
        f"flagged by rrkit {100 * hit_rr.mean():.1f}%, by neurokit2 {100 * hit_nk.mean():.1f}%",
        agree))
    art_t = np.sort(np.asarray(rec.interval_times_s)[idx])
    fixed = out_rr.recording
    e_rr = errors_vs_truth(night.truth, fixed.beat_times_s, fixed.rr_ms, art_t)
    t_nk = out_nk / FS_HZ
    e_nk = errors_vs_truth(night.truth, t_nk, np.diff(t_nk) * 1000.0, art_t)
    e_raw = errors_vs_truth(night.truth, rec.beat_times_s, rec.rr_ms, art_t)
    res.metrics["error_vs_truth"] = {"rrkit": e_rr, "neurokit2": e_nk, "uncorrected": e_raw}
    res.metrics["flagged_pct"] = {"rrkit": 100 * rr_flag.mean(), "neurokit2": 100 * nk_flag.mean()}
    closer = e_rr["mae_near_ms"] < e_nk["mae_near_ms"]
    res.checks.append(Check(
        "rrkit closer to the truth", bool(closer),
        f"MAE near artifacts rrkit {e_rr['mae_near_ms']:.2f} ms vs neurokit2 "
        f"{e_nk['mae_near_ms']:.2f} ms (uncorrected {e_raw['mae_near_ms']:.1f}); RMSSD error "
        f"rrkit {e_rr['rmssd_err_pct']:+.2f}% vs neurokit2 {e_nk['rmssd_err_pct']:+.2f}% "
        f"(uncorrected {e_raw['rmssd_err_pct']:+.1f}%)",
        {"rrkit": e_rr["mae_near_ms"], "neurokit2": e_nk["mae_near_ms"]}))

    t_rr, t_nk_ = time_pair(rr_side, nk_side, repeat=cfg.reps(5, 2))
    res.timings = {"rrkit clean(drr)": t_rr, "neurokit2 signal_fixpeaks": t_nk_}
    r = speed_ratios(t_rr, t_nk_)
    res.ratios = {"speed-up (median)": r["median"], "speed-up (min)": r["min"]}
    res.targets.append(Target("speed-up vs neurokit2", r["median"], ">=", TARGET_X))
    res.elapsed_s = time.perf_counter() - t_case
    return res
