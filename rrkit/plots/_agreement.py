"""The Bland-Altman figure of an `AgreementResult` (matplotlib imported lazily)."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from .._atomic import atomic_path
from ..errors import InputError
from ._style import OKABE_ITO, new_figure

__all__ = ["bland_altman"]

# subject colours (Okabe-Ito without yellow, too pale on white) and markers, cycled together so
# that colour and marker both tell subjects apart
_COLOURS = [OKABE_ITO[k] for k in ("blue", "orange", "green", "vermillion", "purple", "sky",
                                   "black")]
_MARKERS = ["o", "s", "^", "D", "v", "P", "X", "<", ">", "h"]
_MAX_LEGEND = 12
# readable names of common metric keys for axis labels (other keys are shown as they are)
_READABLE = {"rmssd_ms": "RMSSD", "ln_rmssd": "ln RMSSD", "sdnn_ms": "SDNN",
             "mean_hr_bpm": "mean heart rate", "min_hr_bpm": "lowest heart rate",
             "mean_rr_ms": "mean RR interval", "hf_ms2": "HF power", "lf_ms2": "LF power",
             "pnn50_pct": "pNN50"}


def _fmt(x: float, ratio: bool, decimals: int) -> str:
    return f"{x:.3f}" if ratio else f"{x:.{decimals}f}"


def bland_altman(result, *, path=None, ax=None, title: str | None = None,
                 width_in: float = 7.5, height_in: float = 5.0, dpi: int = 150):
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
    solid line is the bias, dashed lines the limits of agreement, and the shaded bands their
    confidence intervals (Bland & Altman 1986). Each subject has its own colour and marker
    (Okabe-Ito palette). When the slope of the differences on the means is significant at the
    result's level, the fitted line is drawn dotted.
    """
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
    decimals = int(min(max(2 - np.floor(np.log10(span)) if span > 0 else 2, 0), 3))

    # ---- bands first (behind the points)
    band_colour = {"bias": OKABE_ITO["blue"], "loa": OKABE_ITO["vermillion"]}
    for name, kind in (("bias", "bias"), ("loa_low", "loa"), ("loa_high", "loa")):
        lo, hi = s.get(f"{name}_ci_low", np.nan), s.get(f"{name}_ci_high", np.nan)
        if np.isfinite(lo) and np.isfinite(hi):
            ax.axhspan(lo, hi, color=band_colour[kind], alpha=0.12, lw=0, zorder=0)
    ax.axhline(1.0 if ratio else 0.0, color=OKABE_ITO["grey"], lw=0.8, zorder=1)
    ax.axhline(s["bias"], color=band_colour["bias"], lw=1.6, zorder=2)
    for name in ("loa_low", "loa_high"):
        ax.axhline(s[name], color=band_colour["loa"], lw=1.4, ls="--", zorder=2)

    # ---- points per subject
    if "subject" in pairs.columns:
        subjects = list(dict.fromkeys(pairs["subject"].astype(str)))
        codes = pairs["subject"].astype(str).map({k: i for i, k in enumerate(subjects)}).to_numpy()
    else:
        subjects, codes = [None], np.zeros(len(pairs), dtype=int)
    for i, subj in enumerate(subjects):
        sel = codes == i
        label = subj if subj is not None and len(subjects) <= _MAX_LEGEND else None
        ax.scatter(x[sel], y[sel], s=30, marker=_MARKERS[i % len(_MARKERS)],
                   facecolor=_COLOURS[i % len(_COLOURS)], edgecolor="white", linewidth=0.5,
                   alpha=0.9, zorder=3, label=label)

    # ---- proportional bias when significant
    p = s.get("proportional_bias_p", np.nan)
    slope_drawn = False
    if np.isfinite(p) and p < 1.0 - result.confidence:
        xm = pairs["mean"].to_numpy()
        grid = np.linspace(xm.min(), xm.max(), 50)
        fit = s["proportional_bias_intercept"] + s["proportional_bias_slope"] * grid
        gx = np.exp(grid) if ratio else grid
        gy = np.exp(fit) if ratio else fit
        ax.plot(gx, gy, color=OKABE_ITO["black"], lw=1.2, ls=":", zorder=4,
                label="proportional bias")
        slope_drawn = True

    if ratio:
        from matplotlib.ticker import FormatStrFormatter, MaxNLocator, NullLocator

        ax.set_yscale("log")
        ax.yaxis.set_major_locator(MaxNLocator(nbins=7))  # plain ratios on the log axis
        ax.yaxis.set_major_formatter(FormatStrFormatter("%.2f"))
        ax.yaxis.set_minor_locator(NullLocator())
    # ---- labels on the lines, at the right edge, outside the data
    trans = ax.get_yaxis_transform()
    m = result.multiplier
    texts = ((s["loa_high"], f"+{m:g} SD  {_fmt(s['loa_high'], ratio, decimals)}", "loa"),
             (s["bias"], f"bias  {_fmt(s['bias'], ratio, decimals)}", "bias"),
             (s["loa_low"], f"−{m:g} SD  {_fmt(s['loa_low'], ratio, decimals)}", "loa"))
    for yv, text, kind in texts:
        ax.text(1.01, yv, text, transform=trans, va="center", ha="left", fontsize=8.5,
                color=band_colour[kind], clip_on=False)
    ymin = min(np.nanmin(y), s.get("loa_low_ci_low", s["loa_low"]), s["loa_low"])
    ymax = max(np.nanmax(y), s.get("loa_high_ci_high", s["loa_high"]), s["loa_high"])
    if ratio:
        pad = (ymax / ymin) ** 0.08
        ax.set_ylim(ymin / pad, ymax * pad)
    else:
        pad = 0.08 * (ymax - ymin if ymax > ymin else 1.0)
        ax.set_ylim(ymin - pad, ymax + pad)

    ax.set_xlabel(f"Mean of reported and reference {metric}{u}")
    if ratio:
        ax.set_ylabel(f"Ratio reported / reference {metric} (log scale)")
    else:
        ax.set_ylabel(f"Difference, reported − reference{u}")
    n = int(s["n"])
    k = s.get("n_subjects", np.nan)
    who = f"{n} pairs" + (f", {int(k)} subjects" if np.isfinite(k) else "")
    ax.set_title(title or f"Bland-Altman: {metric} ({who})", fontsize=11)
    pct = round(100 * result.confidence)
    foot = [f"shaded: {pct}% confidence intervals of the bias and of each limit"]
    if result.repeated:
        foot.append("limits from between- and within-subject variance (Bland & Altman 2007)")
    if ratio:
        foot.append("ratio analysis on log values (Bland & Altman 1999)")
    if slope_drawn:
        foot.append("dotted: least-squares line of the differences on the means (slope "
                    f"{s['proportional_bias_slope']:.3g}, p = {p:.2g})")
    ax.text(0.0, -0.12, "\n".join(foot), transform=ax.transAxes, fontsize=7.5,
            color="#444444", va="top", ha="left", linespacing=1.4)
    ax.grid(True, color="#dddddd", lw=0.6, zorder=0)
    ax.set_axisbelow(True)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    handles, labels = ax.get_legend_handles_labels()
    if handles:
        ax.legend(handles, labels, loc="upper left", bbox_to_anchor=(1.2, 1.0), fontsize=8,
                  frameon=False, title="subject" if len(subjects) > 1 else None,
                  title_fontsize=8.5, alignment="left")
    if path is not None:
        _atomic_save(fig, path, dpi=dpi)
    return fig


def _atomic_save(fig, path, *, dpi: int) -> Path:
    out = Path(path)
    suffix = out.suffix.lower()
    if suffix not in (".png", ".svg", ".pdf"):
        raise InputError(f"figure path {str(out)!r} must end in .png, .svg or .pdf; got "
                         f"{suffix or 'no suffix'!r}")
    out.parent.mkdir(parents=True, exist_ok=True)
    # the temporary name does not end in the figure's suffix: say the format
    with atomic_path(out, fsync=False) as tmp:
        fig.savefig(tmp, format=suffix[1:], dpi=dpi, facecolor="white", bbox_inches="tight")
    return out
