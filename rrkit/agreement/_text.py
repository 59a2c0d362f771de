"""The readable summary of an `AgreementResult` (text only; the numbers come from the result)."""

from __future__ import annotations

import math

import numpy as np

__all__ = ["CAUTION", "summary_text"]

CAUTION = ("rrkit is not a medical device and makes no diagnosis. Whether a device is accurate "
           "enough for a health or training decision is for qualified staff to judge, within "
           "local regulations.")


def _decimals(scale: float) -> int:
    if not np.isfinite(scale) or scale <= 0:
        return 2
    return int(min(max(2 - math.floor(math.log10(scale)), 0), 4))


def _num(x: float, d: int) -> str:
    return "n/a" if x is None or not np.isfinite(x) else f"{x:.{d}f}"


def _ci(stats, name: str, d: int) -> str:
    lo, hi = stats.get(f"{name}_ci_low", np.nan), stats.get(f"{name}_ci_high", np.nan)
    if not (np.isfinite(lo) and np.isfinite(hi)):
        return ""
    return f"  ({_num(lo, d)} to {_num(hi, d)})"


def summary_text(result) -> str:
    """Build the multi-line summary of ``result`` (an `AgreementResult`)."""
    s = result.stats
    unit = result.unit or ""
    u = f" {unit}" if unit else ""
    pct = round(100 * result.confidence)
    d = _decimals(s.get("sd_diff", np.nan) if not result.ratio else s.get("mae", np.nan))
    dr = 3  # ratios, correlations
    what = result.metric or "values"
    lines = [f"Agreement of reported {what} with the reference "
             f"(differences = reported - reference; intervals at {pct}%)", ""]
    n, k = int(s["n"]), s.get("n_subjects", np.nan)
    who = f"{n} pairs" + (f" from {int(k)} subjects" if np.isfinite(k) else "")
    if result.repeated:
        who += " (repeated per subject: Bland & Altman 2007 variance components)"
    lines.append(f"  {'pairs':<34}{who}")
    lines.append(f"  {'mean reported / reference':<34}{_num(s['mean_reported'], d)} / "
                 f"{_num(s['mean_reference'], d)}{u}")
    lines.append("")
    lines.append("Bland-Altman" + (" (ratio analysis on log values, Bland & Altman 1999)"
                                   if result.ratio else " (Bland & Altman 1986)"))
    if result.ratio:
        lines.append(f"  {'bias (ratio reported/reference)':<34}{_num(s['bias'], dr)}"
                     f"{_ci(s, 'bias', dr)}")
        lines.append(f"  {'SD of log ratios':<34}{_num(s['sd_diff'], dr)}")
        lines.append(f"  {'limits of agreement (ratio)':<34}{_num(s['loa_low'], dr)} to "
                     f"{_num(s['loa_high'], dr)}   (bias ×/÷ exp({result.multiplier:g} SD))")
        dl = dr
    else:
        lines.append(f"  {'bias':<34}{_num(s['bias'], d)}{u}{_ci(s, 'bias', d)}")
        lines.append(f"  {'SD of differences':<34}{_num(s['sd_diff'], d)}{u}{_ci(s, 'sd_diff', d)}")
        if result.repeated:
            lines.append(f"  {'  between / within subjects':<34}{_num(s['sd_between'], d)} / "
                         f"{_num(s['sd_within'], d)}{u}")
        lines.append(f"  {'limits of agreement':<34}{_num(s['loa_low'], d)} to "
                     f"{_num(s['loa_high'], d)}{u}   (bias ± {result.multiplier:g} SD)")
        dl = d
    lines.append(f"  {'  lower limit':<34}{_ci(s, 'loa_low', dl).strip() or 'n/a'}")
    lines.append(f"  {'  upper limit':<34}{_ci(s, 'loa_high', dl).strip() or 'n/a'}")
    p = s.get("proportional_bias_p", np.nan)
    if np.isfinite(p):
        verdict = ("the differences change with the magnitude" if p < 1 - result.confidence
                   else "no evidence that the differences change with the magnitude")
        lines.append(f"  {'proportional bias (slope)':<34}{_num(s['proportional_bias_slope'], dr)}"
                     f"{_ci(s, 'proportional_bias_slope', dr)}, p = {p:.3g}: {verdict}")
    lines.append("")
    lines.append("Correlation and error")
    lines.append(f"  {'CCC (Lin 1989)':<34}{_num(s['ccc'], dr)}{_ci(s, 'ccc', dr)}")
    lines.append(f"  {'ICC(2,1) absolute, single':<34}{_num(s['icc'], dr)}{_ci(s, 'icc', dr)}: "
                 f"{result.icc_band()} (Koo & Li 2016, judged on the interval)")
    lines.append(f"  {'ICC(3,1) consistency, single':<34}{_num(s['icc_consistency'], dr)}"
                 f"{_ci(s, 'icc_consistency', dr)}")
    lines.append(f"  {'Pearson r':<34}{_num(s['pearson_r'], dr)}{_ci(s, 'pearson_r', dr)}")
    lines.append(f"  {'mean absolute error':<34}{_num(s['mae'], d)}{u}{_ci(s, 'mae', d)}")
    lines.append(f"  {'mean absolute percentage error':<34}{_num(s['mape_pct'], 1)} %"
                 f"{_ci(s, 'mape_pct', 1)}")
    lines.append(f"  {'typical error of the estimate':<34}{_num(s['typical_error'], d)}{u}"
                 f"{_ci(s, 'typical_error', d)}")
    lines.append("")
    from scipy.stats import norm

    cover = 100 * (2 * norm.cdf(result.multiplier) - 1)
    lines.append(f"Reading it: about {cover:.0f}% of single differences are expected between the "
                 "limits of agreement (if the differences are roughly normal); whether that range"
                 " is narrow enough is a judgement about the use, not a statistic.")
    if result.notes:
        lines.append("")
        lines.append("Notes")
        lines.extend(f"  - {note}" for note in result.notes)
    lines.append("")
    lines.append(CAUTION)
    return "\n".join(lines) + "\n"
