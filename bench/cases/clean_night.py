"""clean-night: artifact correction of an 8-hour night, rrkit vs neurokit2, on the same peaks.

rrkit: ``rrkit.clean(Recording.from_peak_times(peaks / fs), method="drr")``.
neurokit2: ``signal_fixpeaks(peaks, sampling_rate=fs)`` with its defaults (the method of
Lipponen & Tarvainen 2019, J Med Eng Technol 43(3):173-181, iterative).

Checks before timing: (1) the two sides agree on at least 90% of the injected events (both flag
it or both do not; an event counts as flagged by a side when that side labels, or for neurokit2
changes, one of the intervals it touches or one on either side: the within-one-interval rule);
(2) each side's corrected night is compared with the artifact-free truth: RMSSD (the metric most
sensitive to artifacts) must be closer for rrkit; SDNN and mean RR errors are reported.
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


#: How many intervals an injected event touches (an ectopic beat and an extra beat corrupt two).
SPAN = {"ectopic": 2, "extra": 2, "missed": 1, "long": 1, "short": 1}


def event_hits(flags: np.ndarray, events: np.ndarray, span: int) -> np.ndarray:
    """For each event (index of its first interval): is any interval it touches, or one
    interval on either side, flagged?"""
    flags = np.asarray(flags, bool)
    c = np.concatenate(([0], np.cumsum(flags)))
    lo = np.clip(np.asarray(events) - 1, 0, flags.size)
    hi = np.clip(np.asarray(events) + span + 1, 0, flags.size)
    return (c[hi] - c[lo]) > 0


def _rmssd(rr: np.ndarray) -> float:
    return float(np.sqrt(np.mean(np.diff(rr) ** 2)))


def errors_vs_truth(truth_rr_ms: np.ndarray, rr_ms: np.ndarray) -> dict[str, float]:
    """Relative errors (%) of a corrected night's RMSSD, SDNN and mean RR against the
    artifact-free truth (Task Force 1996 definitions; SDNN with ddof=1)."""
    t, r = np.asarray(truth_rr_ms, float), np.asarray(rr_ms, float)

    def rel(a, b):
        return 100.0 * (a - b) / b

    return {
        "rmssd_err_pct": rel(_rmssd(r), _rmssd(t)),
        "sdnn_err_pct": rel(float(np.std(r, ddof=1)), float(np.std(t, ddof=1))),
        "mean_rr_err_pct": rel(float(r.mean()), float(t.mean())),
        "n_intervals_diff": int(r.size - t.size),
    }


def run(cfg) -> CaseResult:
    import rrkit

    res = CaseResult(NAME, DESCRIPTION)
    t_case = time.perf_counter()
    night = cfg.night()
    peaks = night.peaks
    rec = night.recording
    idx = night.artifact_intervals
    res.params = {"duration_h": round(rec.duration_s / 3600, 2), "beats": int(rec.n_beats)}

    def rr_side():
        return rrkit.clean(rrkit.Recording.from_peak_times(peaks / FS_HZ), method="drr")

    def nk_side():
        return nk_fixpeaks(peaks)

    # Outputs first (also the warm-up), checks before any timing.
    out_rr = rr_side()
    out_nk = nk_side()
    rr_flag = np.asarray(out_rr.labels) != "normal"
    nk_flag = nk_changed_intervals(peaks, out_nk)
    agree_n, total, per_class = 0, 0, {}
    for cls, ev in night.events.items():
        if not len(ev):
            continue
        h_rr = event_hits(rr_flag, ev, SPAN[cls])
        h_nk = event_hits(nk_flag, ev, SPAN[cls])
        per_class[cls] = {"events": len(ev), "agree": float(np.mean(h_rr == h_nk)),
                          "rrkit_found": float(h_rr.mean()), "neurokit2_found": float(h_nk.mean())}
        agree_n += int(np.sum(h_rr == h_nk))
        total += len(ev)
    agree = agree_n / total if total else float("nan")
    res.metrics["agreement_per_class"] = per_class
    res.params["injected_events"] = total
    res.params["events_pct"] = round(100 * total / rec.n_intervals, 2)
    res.params["artifact_labelled_intervals"] = int(idx.size)
    worst = min(per_class.items(), key=lambda kv: kv[1]["agree"]) if per_class else None
    res.checks.append(Check(
        "flags agree on injected artifacts", bool(total) and agree >= AGREE_MIN,
        f"{100 * agree:.1f}% of {total} injected events (need >= {100 * AGREE_MIN:.0f}%; lowest "
        f"class {worst[0]} {100 * worst[1]['agree']:.0f}%)" if worst else "no events", agree))
    truth_rr = night.truth.rr_ms
    e_rr = errors_vs_truth(truth_rr, out_rr.recording.rr_ms[~out_rr.recording.gaps])
    e_nk = errors_vs_truth(truth_rr, np.diff(out_nk) * (1000.0 / FS_HZ))
    e_raw = errors_vs_truth(truth_rr, rec.rr_ms)
    res.metrics["error_vs_truth"] = {"rrkit": e_rr, "neurokit2": e_nk, "uncorrected": e_raw}
    res.metrics["flagged_pct"] = {"rrkit": 100 * rr_flag.mean(), "neurokit2": 100 * nk_flag.mean()}
    closer = abs(e_rr["rmssd_err_pct"]) < abs(e_nk["rmssd_err_pct"])
    res.checks.append(Check(
        "rrkit closer to the truth", bool(closer),
        f"RMSSD error rrkit {e_rr['rmssd_err_pct']:+.2f}% vs neurokit2 "
        f"{e_nk['rmssd_err_pct']:+.2f}% (uncorrected {e_raw['rmssd_err_pct']:+.1f}%); SDNN "
        f"rrkit {e_rr['sdnn_err_pct']:+.2f}% vs neurokit2 {e_nk['sdnn_err_pct']:+.2f}% "
        f"(uncorrected {e_raw['sdnn_err_pct']:+.1f}%)",
        {"rrkit": e_rr["rmssd_err_pct"], "neurokit2": e_nk["rmssd_err_pct"]}))

    t_rr, t_nk_ = time_pair(rr_side, nk_side, repeat=cfg.reps(5, 2))
    res.timings = {"rrkit clean(drr)": t_rr, "neurokit2 signal_fixpeaks": t_nk_}
    r = speed_ratios(t_rr, t_nk_)
    res.ratios = {"speed-up (median)": r["median"], "speed-up (min)": r["min"]}
    res.targets.append(Target("speed-up vs neurokit2", r["median"], ">=", TARGET_X))
    res.elapsed_s = time.perf_counter() - t_case
    return res
