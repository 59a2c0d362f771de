"""Comparison of rrkit's window metrics with neurokit2's, with the tolerances of the test suite.

- exact definitions (Task Force 1996 time-domain set, sample entropy): relative 1e-9;
- DFA alpha1/alpha2 (Peng et al. 1995): within 0.02 absolute (the implementations fit the same
  scales but differ in details such as window overlap);
- spectral powers: reported, not required equal (rrkit detrends with smoothness priors,
  Tarvainen et al. 2002, neurokit2 does not; the segmenting differs too).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from typing import Any

import numpy as np

from .._harness import Check

__all__ = ["DFA_KEYS", "EXACT_KEYS", "LOOSE_KEYS", "compare_windows"]

#: keys that must agree within 1e-9 relative
EXACT_KEYS = ("mean_rr_ms", "median_rr_ms", "sdnn_ms", "rmssd_ms", "sdsd_ms", "pnn50_pct",
              "pnn20_pct", "cv_rr_pct", "min_hr_bpm", "max_hr_bpm", "sampen")
DFA_KEYS = ("dfa_alpha1", "dfa_alpha2")
DFA_TOL = 0.02
EXACT_REL = 1e-9
#: reported only: the relative difference of each
LOOSE_KEYS = ("vlf_ms2", "lf_ms2", "hf_ms2", "total_power_ms2", "lf_hf", "hrv_triangular_index",
              "tinn_ms")


def _rel(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    den = np.maximum(np.abs(a), np.abs(b))
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0, np.abs(a - b) / den, 0.0)


def compare_windows(
    rr_rows: Sequence[dict[str, Any]],
    nk_rows: Sequence[dict[str, Any]],
    *,
    exact_keys: Sequence[str] = EXACT_KEYS,
) -> tuple[list[Check], dict[str, Any]]:
    """Checks (exact keys, DFA) and a report (every key's largest and median difference)."""
    checks: list[Check] = []
    report: dict[str, Any] = {}
    if len(rr_rows) != len(nk_rows):
        detail = f"rrkit {len(rr_rows)} vs neurokit2 {len(nk_rows)}"
        return [Check("same windows", False, detail)], {}
    checks.append(Check("same windows", len(rr_rows) > 0, f"{len(rr_rows)} windows on both sides"))

    def col(rows, key):
        return np.array([float(r.get(key, math.nan)) for r in rows], dtype=float)

    # Both sides compute over the same windows: any NaN on one side only is a disagreement.
    bad_exact = []
    for key in exact_keys:
        a, b = col(rr_rows, key), col(nk_rows, key)
        both = np.isfinite(a) & np.isfinite(b)
        mismatch_nan = int(np.sum(np.isfinite(a) != np.isfinite(b)))
        rel = _rel(a[both], b[both])
        worst = float(rel.max()) if rel.size else math.nan
        report[key] = {"max_rel_diff": worst, "compared": int(both.sum()),
                       "nan_mismatch": mismatch_nan}
        if mismatch_nan or not both.any() or worst > EXACT_REL:
            bad_exact.append(f"{key} (max rel {worst:.2g}, NaN mismatches {mismatch_nan})")
    checks.append(Check(
        f"exact metrics within {EXACT_REL:g} relative", not bad_exact,
        "all of " + ", ".join(exact_keys) if not bad_exact else "; ".join(bad_exact)))
    bad_dfa = []
    for key in DFA_KEYS:
        a, b = col(rr_rows, key), col(nk_rows, key)
        both = np.isfinite(a) & np.isfinite(b)
        d = np.abs(a[both] - b[both])
        worst = float(d.max()) if d.size else math.nan
        report[key] = {"max_abs_diff": worst,
                       "median_abs_diff": float(np.median(d)) if d.size else math.nan,
                       "compared": int(both.sum())}
        if not both.any() or worst > DFA_TOL:
            bad_dfa.append(f"{key} max |diff| {worst:.3g}")
    detail = ", ".join(f"{k} max |diff| {report[k]['max_abs_diff']:.3g}" for k in DFA_KEYS)
    checks.append(Check(f"DFA within {DFA_TOL}", not bad_dfa,
                        detail if not bad_dfa else "; ".join(bad_dfa)))
    loose = []
    for key in LOOSE_KEYS:
        a, b = col(rr_rows, key), col(nk_rows, key)
        both = np.isfinite(a) & np.isfinite(b)
        rel = _rel(a[both], b[both])
        report[key] = {"median_rel_diff": float(np.median(rel)) if rel.size else math.nan,
                       "max_rel_diff": float(rel.max()) if rel.size else math.nan,
                       "compared": int(both.sum())}
        if rel.size:
            loose.append(f"{key} {100 * report[key]['median_rel_diff']:.1f}%")
    checks.append(Check("spectral/geometric (reported, loose)", True,
                        "median relative difference: " + ", ".join(loose)))
    return checks, report
