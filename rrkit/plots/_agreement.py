"""The Bland-Altman figure of an `AgreementResult` (matplotlib imported lazily)."""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ._style import INK, new_figure, save

__all__ = ["bland_altman", "line_label"]

# subjects, only when asked: markers (all in the same ink) tell them apart
_MARKERS = ["o", "s", "^", "D", "v", "P", "X", "<", ">", "h"]
_MAX_LEGEND = 12
# readable names of common metric keys for axis labels (other keys are shown as they are)
_READABLE = {"rmssd_ms": "RMSSD", "ln_rmssd": "ln RMSSD", "sdnn_ms": "SDNN",
             "mean_hr_bpm": "mean heart rate", "min_hr_bpm": "lowest heart rate",
             "mean_rr_ms": "mean RR interval", "hf_ms2": "HF power", "lf_ms2": "LF power",
             "pnn50_pct": "pNN50"}
# the three lines: (statistic, words, dash style, width)
_LINES = (("loa_high", "upper limit of agreement", (0, (5, 2.5)), 1.3),
          ("bias", "bias", "-", 1.7),
          ("loa_low", "lower limit of agreement", (0, (5, 2.5)), 1.3))
_MIN_GAP = 0.075  # least vertical distance of two margin labels, in axes fractions


def _fmt(x: float, ratio: bool, decimals: int) -> str:
    return f"{x:.3f}" if ratio else f"{x:.{decimals}f}"


def line_label(name: str, value: float, ci: tuple[float, float], *, unit: str = "",
               ratio: bool = False, decimals: int = 1) -> str:
    """Words for one line of the figure: ``'upper limit of agreement 8.7 ms (7.0 to 12.4)'``.

    In the ratio analysis the values are ratios (no unit): ``'bias ratio 1.050 (...)'``.
    """
    words = {k: w for k, w, _ls, _lw in _LINES}[name]
    if ratio:
        words = words.replace("bias", "bias ratio") if name == "bias" else words + " (ratio)"
    u = f" {unit}" if unit and not ratio else ""
    text = f"{words} {_fmt(value, ratio, decimals)}{u}"
    if np.isfinite(ci[0]) and np.isfinite(ci[1]):
        text += f" ({_fmt(ci[0], ratio, decimals)} to {_fmt(ci[1], ratio, decimals)})"
    return text


def _spread(ys: list[float], gap: float) -> list[float]:
    """Label heights (axes fractions, top first) moved apart to at least ``gap``."""
    out = list(ys)
    for i in range(1, len(out)):
        out[i] = min(out[i], out[i - 1] - gap)
    # if pushed below the axes, shift the whole stack back up
    low = min(out)
    if low < 0.02:
        out = [y + (0.02 - low) for y in out]
    return out


def bland_altman(result, *, path=None, ax=None, title: str | None = None,
                 subjects: bool = False, width_in: float = 8.5, height_in: float = 5.0,
                 dpi: int = 150):
    """Bland-Altman figure: differences against means, bias and limits with their intervals.

    Parameters
    ----------
    result : AgreementResult
        From `rrkit.agreement`.
    path : str or path-like, optional
        Write the figure there (PNG, SVG or PDF by the suffix; written to a temporary file in the
        same folder, then renamed, so no half-written figure is left).
    ax : matplotlib.axes.Axes, optional
        Draw into these axes instead of a new figure.
    title : str, optional
        Figure title (default names the metric and the number of pairs).
    subjects : bool
        Tell subjects apart by marker, with a legend (default False: one marker for every
        pair; up to 12 subjects get a legend).
    width_in, height_in : float
        Size of a new figure, inches.
    dpi : int
        Resolution of raster output.

    Returns
    -------
    matplotlib.figure.Figure

    Notes
    -----
    Points are the pairs (``x`` = mean of the two values, ``y`` = reported - reference; in the
    ratio analysis ``y`` = reported / reference on a log axis, after Bland & Altman 1999). The
    bias is the solid line, the limits of agreement the dashed ones, all in one neutral ink;
    each is named in words at the right with its value, unit and confidence interval, and its
    interval is drawn there as a bracket (Bland & Altman 1986). When the slope of the
    differences on the means is significant at the result's level, the fitted line is drawn
    dotted.
    """
    from matplotlib.collections import LineCollection
    from matplotlib.transforms import blended_transform_factory

    # duck-typed, so that the figures never import the agreement stage that draws them
    if not all(hasattr(result, k) for k in ("stats", "pairs", "ratio", "summary_text")):
        raise InputError(f"result must be an AgreementResult; got {type(result).__name__}",
                         hint="build it with rrkit.agreement(reported, reference)")
    s = result.stats
    pairs = result.pairs
    ratio = result.ratio
    unit = result.unit or ""
    u = f" ({unit})" if unit else ""
    metric = _READABLE.get(result.metric, result.metric or "value")
    if ax is None:
        fig = new_figure(width_in, height_in)
        ax = fig.add_subplot(1, 1, 1)
    else:
        fig = ax.figure

    x = (pairs["reported"].to_numpy() + pairs["reference"].to_numpy()) / 2.0
    y = np.exp(pairs["diff"].to_numpy()) if ratio else pairs["diff"].to_numpy()
    span = float(np.nanstd(y)) if not ratio else float(s["sd_diff"])
    # one decimal for a spread of a few units (SD 2 ms: '8.7 ms'), fewer or more with the scale
    decimals = int(min(max(1 - np.floor(np.log10(span)) if span > 0 else 1, 0), 3))

    # ---- the no-difference line and the three lines, one ink, told apart by dash and width
    ax.axhline(1.0 if ratio else 0.0, color=INK["light"], lw=0.8, zorder=1)
    for name, _words, ls, lw in _LINES:
        ax.axhline(s[name], color=INK["ink"], lw=lw, ls=ls, zorder=2)

    # ---- points: one marker, or one per subject when asked
    if subjects and "subject" in pairs.columns:
        names = list(dict.fromkeys(pairs["subject"].astype(str)))
        codes = pairs["subject"].astype(str).map({k: i for i, k in enumerate(names)}).to_numpy()
    else:
        names, codes = [None], np.zeros(len(pairs), dtype=int)
    for i, subj in enumerate(names):
        sel = codes == i
        label = subj if subj is not None and len(names) <= _MAX_LEGEND else None
        ax.scatter(x[sel], y[sel], s=26, marker=_MARKERS[i % len(_MARKERS)],
                   facecolor=INK["mid"] if subj is None else "white",
                   edgecolor=INK["dark"], linewidth=0.8, alpha=0.9, zorder=3, label=label)

    # ---- proportional bias when significant
    p = s.get("proportional_bias_p", np.nan)
    slope_drawn = False
    if np.isfinite(p) and p < 1.0 - result.confidence:
        xm = pairs["mean"].to_numpy()
        grid = np.linspace(xm.min(), xm.max(), 50)
        fit = s["proportional_bias_intercept"] + s["proportional_bias_slope"] * grid
        gx = np.exp(grid) if ratio else grid
        gy = np.exp(fit) if ratio else fit
        ax.plot(gx, gy, color=INK["dark"], lw=1.2, ls=":", zorder=4,
                label="proportional bias")
        slope_drawn = True

    if ratio:
        from matplotlib.ticker import FormatStrFormatter, MaxNLocator, NullLocator

        ax.set_yscale("log")
        ax.yaxis.set_major_locator(MaxNLocator(nbins=7))  # plain ratios on the log axis
        ax.yaxis.set_major_formatter(FormatStrFormatter("%.2f"))
        ax.yaxis.set_minor_locator(NullLocator())
    ymin = min(np.nanmin(y), s.get("loa_low_ci_low", s["loa_low"]), s["loa_low"])
    ymax = max(np.nanmax(y), s.get("loa_high_ci_high", s["loa_high"]), s["loa_high"])
    if ratio:
        pad = (ymax / ymin) ** 0.08
        ax.set_ylim(ymin / pad, ymax * pad)
    else:
        pad = 0.08 * (ymax - ymin if ymax > ymin else 1.0)
        ax.set_ylim(ymin - pad, ymax + pad)

    # ---- the right margin: each line's interval as a bracket, and its name in words
    trans = blended_transform_factory(ax.transAxes, ax.transData)
    brackets = []
    label_y = []
    for name, _w, _ls, _lw in _LINES:
        lo, hi = s.get(f"{name}_ci_low", np.nan), s.get(f"{name}_ci_high", np.nan)
        if np.isfinite(lo) and np.isfinite(hi):
            brackets += [[(1.02, lo), (1.02, hi)], [(1.01, lo), (1.03, lo)],
                         [(1.01, hi), (1.03, hi)], [(1.0, s[name]), (1.03, s[name])]]
        label_y.append(s[name])
    ax.add_collection(LineCollection(brackets, colors=INK["ink"], linewidths=1.0,
                                     transform=trans, clip_on=False, zorder=5,
                                     label="_confidence brackets"))
    # positions of the labels in axes fractions, kept apart
    lo_lim, hi_lim = ax.get_ylim()
    if ratio:
        frac = [(np.log(v) - np.log(lo_lim)) / (np.log(hi_lim) - np.log(lo_lim)) for v in label_y]
    else:
        frac = [(v - lo_lim) / (hi_lim - lo_lim) for v in label_y]
    for (name, _w, _ls, _lw), fy in zip(_LINES, _spread(frac, _MIN_GAP), strict=True):
        ci = (s.get(f"{name}_ci_low", np.nan), s.get(f"{name}_ci_high", np.nan))
        ax.text(1.045, fy, line_label(name, s[name], ci, unit=unit, ratio=ratio,
                                      decimals=decimals),
                transform=ax.transAxes, va="center", ha="left", fontsize=8.5,
                color=INK["ink"], clip_on=False)

    ax.set_xlabel(f"Mean of reported and reference {metric}{u}")
    if ratio:
        ax.set_ylabel(f"Ratio reported / reference {metric} (log scale)")
    else:
        ax.set_ylabel(f"Difference, reported − reference{u}")
    n = int(s["n"])
    k = s.get("n_subjects", np.nan)
    who = f"{n} pairs" + (f", {int(k)} subjects" if np.isfinite(k) else "")
    ax.set_title(title or f"Agreement of {metric}: reported against reference ({who})",
                 fontsize=11, loc="left")
    pct = round(100 * result.confidence)
    m = result.multiplier
    foot = [f"solid: bias (mean difference); dashed: limits of agreement, bias ± {m:g} SD",
            f"brackets at the right: their {pct}% confidence intervals (Bland & Altman 1986)"]
    if result.repeated:
        foot.append("limits from between- and within-subject variance (Bland & Altman 2007)")
    if ratio:
        foot.append("ratio analysis on log values (Bland & Altman 1999)")
    if slope_drawn:
        foot.append("dotted: least-squares line of the differences on the means (slope "
                    f"{s['proportional_bias_slope']:.3g}, p = {p:.2g})")
    ax.text(0.0, -0.13, "\n".join(foot), transform=ax.transAxes, fontsize=7.5,
            color=INK["dark"], va="top", ha="left", linespacing=1.4)
    ax.grid(True, axis="y", color=INK["faint"], lw=0.6, zorder=0)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    handles, labels = ax.get_legend_handles_labels()
    if handles:
        ax.legend(handles, labels, loc="upper left", bbox_to_anchor=(1.04, -0.04),
                  fontsize=7.5, frameon=False, ncol=2 if len(handles) > 6 else 1,
                  title="subject" if len(names) > 1 else None, title_fontsize=8,
                  alignment="left")
    if path is not None:
        save(fig, path, dpi=dpi, tight=True)
    return fig
