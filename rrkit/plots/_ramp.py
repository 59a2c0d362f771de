"""The exercise-test figure: alpha1 against heart rate with the fitted crossings, and the test
over time."""

from __future__ import annotations

import math

import numpy as np

from ..errors import InputError
from ..recording import interval_name
from ._style import OKABE_ITO, new_figure, save

__all__ = ["ramp_figure"]

_INK = "#222222"
_MUTED = "#8a8a8a"


def _classes(windows, settings):
    art = windows["artifact_beats_pct"].to_numpy(float)
    valid = windows["valid"].to_numpy(bool)
    fit = windows["in_fit"].to_numpy(bool)
    noisy = art > settings.caution_artifact_pct
    return (
        ("fitted", fit & ~noisy, {"marker": "o", "s": 16, "color": _INK, "alpha": 0.75, "lw": 0}),
        (f"fitted, {settings.caution_artifact_pct:g}-{settings.max_artifact_pct:g}% artifact "
         "beats", fit & noisy,
         {"marker": "^", "s": 22, "facecolors": "none", "edgecolors": OKABE_ITO["vermillion"],
          "lw": 1.0}),
        ("outside the descending part", valid & ~fit,
         {"marker": "o", "s": 12, "facecolors": "none", "edgecolors": _MUTED, "lw": 0.7}),
        (f"left out: > {settings.max_artifact_pct:g}% artifact beats", ~valid,
         {"marker": "x", "s": 14, "color": OKABE_ITO["vermillion"], "lw": 0.8, "alpha": 0.6}),
    )


def ramp_figure(result, path=None, *, title: str | None = None, dpi: int = 120):
    """Draw an exercise test: alpha1 against heart rate (fit, crossings with 95% CIs, windows
    marked by artifact share) and, beneath, heart rate and load over time.

    Parameters
    ----------
    result : rrkit.exercise.RampResult
        From `rrkit.exercise.ramp_test`.
    path : str or path-like, optional
        Where to write the figure (PNG, or SVG/PDF by the suffix).
    title : str, optional
        Figure title.
    dpi : int
        Resolution of a PNG (default 120).

    Returns
    -------
    matplotlib.figure.Figure
    """
    w = result.windows
    if not {"mean_hr_bpm", "dfa_alpha1", "valid", "in_fit"} <= set(w.columns):
        raise InputError("ramp_figure needs a RampResult from rrkit.exercise.ramp_test")
    s = result.settings
    fig = new_figure(8.6, 7.4)
    grid = fig.add_gridspec(2, 1, height_ratios=(3.0, 1.5))
    ax = fig.add_subplot(grid[0])
    for label, mask, style in _classes(w, s):
        if mask.any():
            ax.scatter(w["mean_hr_bpm"][mask], w["dfa_alpha1"][mask], label=label, zorder=3,
                       **style)
    th = result.thresholds
    hr_rows = th[th["axis"] == "hr_bpm"]
    fit = result.fits.get("hr_bpm", {})
    if np.isfinite(fit.get("slope", math.nan)):
        xs = np.array([fit["x_min"], fit["x_max"]])
        ax.plot(xs, fit["intercept"] + fit["slope"] * xs, color=OKABE_ITO["blue"], lw=2.0,
                zorder=4, label="least-squares line over the descending part")
    lines = []
    for _, r in hr_rows.iterrows():
        ax.axhline(r["level"], color=_MUTED, lw=0.8, ls=(0, (2, 3)), zorder=1)
        if np.isfinite(r["value"]):
            ax.errorbar([r["value"]], [r["level"]],
                        xerr=[[r["value"] - r["ci_low"]], [r["ci_high"] - r["value"]]],
                        fmt="D", ms=7, color=OKABE_ITO["blue"], mfc="white", mew=1.6,
                        capsize=5, lw=1.6, zorder=5)
            lines += [f"alpha1 {r['level']:g} at {r['value']:.0f} bpm ({r['verdict']})",
                      f"  95% CI {r['ci_low']:.0f} to {r['ci_high']:.0f} bpm"]
        else:
            lines += [f"alpha1 {r['level']:g}: not found"]
    ax.set_xlabel("mean heart rate of the window (bpm)")
    ax.set_ylabel("DFA alpha1 (4-16 beats)")
    ax.grid(True, color="#e6e6e6", lw=0.6)
    ax.set_axisbelow(True)
    lo = min(0.2, float(np.nanmin(w["dfa_alpha1"])) - 0.05) if w["dfa_alpha1"].notna().any() \
        else 0.2
    hi = max(1.4, float(np.nanmax(w["dfa_alpha1"])) + 0.05) if w["dfa_alpha1"].notna().any() \
        else 1.4
    ax.set_ylim(lo, hi)
    # the legend and the crossings sit outside the data, to the right
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=7.5, frameon=False,
              title="windows", title_fontsize=8)
    lines += ["", "Estimate for training prescription,", "not a diagnostic test.",
              "rrkit is not a medical device."]
    ax.text(1.02, 0.02, "\n".join(lines), transform=ax.transAxes, fontsize=7.5, va="bottom",
            ha="left", color=_INK, wrap=True)

    bx = fig.add_subplot(grid[1])
    bx.plot(w["mid_s"] / 60.0, w["mean_hr_bpm"], color=_INK, lw=1.4, label="heart rate")
    fitted = w["in_fit"].to_numpy(bool)
    if fitted.any():
        t = w["mid_s"].to_numpy() / 60.0
        bx.axvspan(t[fitted].min(), t[fitted].max(), color="#000000", alpha=0.06, lw=0,
                   label="descending part (fitted)")
    for _, r in hr_rows.iterrows():
        if np.isfinite(r["value"]):
            bx.axhline(r["value"], color=OKABE_ITO["blue"], lw=0.9, ls=(0, (5, 2)))
            bx.text(0.005, r["value"], f" alpha1 {r['level']:g}", color=OKABE_ITO["blue"],
                    fontsize=7, va="bottom", transform=bx.get_yaxis_transform())
    bx.set_xlabel("time from the first beat (min)")
    bx.set_ylabel("heart rate (bpm)")
    bx.grid(True, color="#e6e6e6", lw=0.6)
    load_col = next((c for c in ("power_w", "speed_kmh") if c in w.columns), None)
    handles, labels = bx.get_legend_handles_labels()
    if load_col is not None:
        cx = bx.twinx()
        cx.step(w["mid_s"] / 60.0, w[load_col], where="mid", color=OKABE_ITO["orange"],
                lw=1.2, ls=(0, (1, 1)))
        unit = "W" if load_col == "power_w" else "km/h"
        cx.set_ylabel(f"{'power' if unit == 'W' else 'speed'} ({unit}), window mean")
        from matplotlib.lines import Line2D
        handles.append(Line2D([], [], color=OKABE_ITO["orange"], lw=1.2, ls=(0, (1, 1))))
        labels.append(f"{'power' if unit == 'W' else 'speed'}")
    bx.legend(handles, labels, loc="upper left", bbox_to_anchor=(1.13, 1.0), fontsize=7.5,
              frameon=False)
    head = title or "Exercise test: DFA alpha1 against heart rate"
    fig.suptitle(f"{head}\nfrom {interval_name(result)} intervals", fontsize=11)
    if path is not None:
        save(fig, path, dpi=dpi)
    return fig
