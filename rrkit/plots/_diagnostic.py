"""Recording diagnostic: tachogram with the artifact classes, the spectrum, the Poincaré plot."""

from __future__ import annotations

import numpy as np

from ._style import LABEL_STYLE, OKABE_ITO, new_figure, save

__all__ = ["recording_diagnostic"]

_BAND_COLOURS = {"vlf": OKABE_ITO["grey"], "lf": OKABE_ITO["sky"], "hf": OKABE_ITO["orange"]}


def recording_diagnostic(result, path=None, *, window_s=None, psd: str = "welch",
                         title: str | None = None, dpi: int = 120):
    """One figure to judge a recording: what was corrected, its spectrum and its Poincaré plot.

    Parameters
    ----------
    result : CleanResult or Recording
        A cleaning result (``rrkit.clean``). A `Recording` is cleaned with the default method
        first.
    path : str or path-like, optional
        Where to write the figure (PNG, or SVG/PDF by the suffix). Nothing is written when None.
    window_s : (float, float), optional
        Analysis window ``(start_s, end_s)`` on the recording's clock. It is shaded on the
        tachogram, and the spectrum, band powers and Poincaré plot are computed on it only.
        Default: the whole recording.
    psd : {"welch", "lomb", "ar"}
        Spectrum method, passed to `rrkit.spectrum` and `rrkit.metrics`.
    title : str, optional
        Figure title (default: the subject and source of the recording).
    dpi : int
        Resolution of a PNG, dots per inch.

    Returns
    -------
    matplotlib.figure.Figure

    Notes
    -----
    Top: the tachogram, RR interval (ms) against time (s) as read, with every interval that
    cleaning did not label ``normal`` marked by class (colour and marker), and the corrected
    series drawn over it. Bottom left: the power spectral density (ms²/Hz) with the VLF, LF and
    HF bands shaded and their powers (ms²) written in. Bottom right: the Poincaré plot
    (RR[n+1] against RR[n]) of the corrected intervals with the SD1/SD2 ellipse (Brennan et al.
    2001, IEEE Trans Biomed Eng 48(11):1342-1347, doi:10.1109/10.959330).
    """
    import rrkit

    if isinstance(result, rrkit.Recording):
        result = rrkit.clean(result)
    part = result if window_s is None else result.window(float(window_s[0]), float(window_s[1]))
    values = rrkit.metrics(part, psd=psd)
    spec = rrkit.spectrum(part.recording, psd=psd)

    fig = new_figure(11.0, 7.5)
    grid = fig.add_gridspec(2, 3, height_ratios=[1.0, 1.1])
    ax_t = fig.add_subplot(grid[0, :])
    ax_p = fig.add_subplot(grid[1, :2])
    ax_q = fig.add_subplot(grid[1, 2])
    _tachogram(ax_t, result, window_s)
    _spectrum(ax_p, spec, values, psd)
    _poincare(ax_q, part.recording, values)
    rec = result.input
    if title is None:
        bits = [b for b in (rec.subject, rec.source and str(rec.source).rsplit("/", 1)[-1]) if b]
        title = " - ".join(bits) if bits else "recording"
    s = part.summary
    head = (f"{title}\n{s.artifact_pct:.1f}% artifacts, {s.corrected_pct:.1f}% corrected, "
            f"quality {s.quality}" + (f" ({s.quality_reason})" if s.quality_reason else ""))
    cautioned = s if s.caution else result.summary if result.summary.caution else None
    if cautioned is not None:
        head += "\n" + _caution_line(cautioned)
    fig.suptitle(head, fontsize=12)
    if path is not None:
        save(fig, path, dpi=dpi)
    return fig


def _caution_line(summary) -> str:
    """The figure's premature-beat caution; softer where noise dominates a flagged window.

    In a flagged window whose ``ectopic`` intervals are less than half of its non-normal ones,
    some beats labelled premature may be noise (the same rule as ``rrkit daily``'s report).
    """
    n_bad = summary.n_intervals - summary.counts.get("normal", 0)
    n_ect = summary.counts.get("ectopic", 0)
    if summary.quality == "flagged" and n_bad > 0 and n_ect < 0.5 * n_bad:
        return ("caution: premature beats counted among many other artifacts (may be noise);\n"
                "rrkit does not diagnose, if in doubt a clinician should see this recording")
    return ("caution: frequent premature beats; rrkit does not diagnose, "
            "a clinician should see this recording")


def _tachogram(ax, result, window_s) -> None:
    raw = result.input
    t = raw.interval_times_s
    ax.plot(t, raw.rr_ms, color=OKABE_ITO["grey"], lw=0.8, label="as read")
    cor = result.recording
    ok = ~cor.gaps
    rr_c = np.where(ok, cor.rr_ms, np.nan)
    ax.plot(cor.interval_times_s, rr_c, color=OKABE_ITO["black"], lw=1.0, label="corrected")
    labels = np.asarray(result.labels)
    for name, (colour, marker, text) in LABEL_STYLE.items():
        idx = np.flatnonzero(labels == name)
        if idx.size:
            ax.scatter(t[idx], raw.rr_ms[idx], s=42, color=colour, marker=marker,
                       edgecolor="white", linewidth=0.5, zorder=3,
                       label=f"{text} ({idx.size} interval{'' if idx.size == 1 else 's'})")
    if window_s is not None:
        ax.axvspan(window_s[0], window_s[1], color=OKABE_ITO["sky"], alpha=0.12, lw=0,
                   label="analysis window")
    # keep the y range on the physiology: a 3000 ms missed-beat spike should not flatten it
    good = raw.rr_ms[labels == "normal"] if np.any(labels == "normal") else raw.rr_ms
    if good.size:
        lo, hi = np.percentile(good, [0.5, 99.5])
        pad = max(60.0, 0.25 * (hi - lo))
        top = max(hi + pad, np.max(raw.rr_ms) + 40.0) if raw.rr_ms.size else hi + pad
        ax.set_ylim(max(0.0, min(lo - pad, np.min(raw.rr_ms) - 40.0)), min(top, 2.2 * hi))
    ax.set_xlabel("time since start (s)")
    ax.set_ylabel("RR interval (ms)")
    ax.set_title("Tachogram: intervals as read, artifact classes, corrected series", loc="left",
                 fontsize=10)
    ax.legend(loc="upper right", fontsize=8, ncol=4, framealpha=0.9)
    ax.grid(alpha=0.3)


def _spectrum(ax, spec, values, psd) -> None:
    f = np.asarray(spec.freqs_hz)
    p = np.asarray(spec.psd_ms2_hz)
    keep = f <= 0.5
    ax.plot(f[keep], p[keep], color=OKABE_ITO["black"], lw=1.2)
    bands = _bands_of(values)
    ymax = float(np.nanmax(p[keep])) if np.any(keep) and np.isfinite(p[keep]).any() else 1.0
    for name, (lo, hi) in bands.items():
        sel = (f >= lo) & (f <= hi)
        if sel.any():
            ax.fill_between(f[sel], p[sel], color=_BAND_COLOURS[name], alpha=0.45, lw=0)
        power = values.get(f"{name}_ms2", float("nan"))
        txt = f"{name.upper()}\n{power:,.0f} ms²" if np.isfinite(power) else f"{name.upper()}\nn/a"
        ax.text((lo + hi) / 2, ymax * 1.02, txt, ha="center", va="bottom", fontsize=9)
        ax.axvline(lo, color=OKABE_ITO["grey"], lw=0.6, ls=":")
    ax.set_ylim(0, ymax * 1.3)
    ax.set_xlim(0, 0.5)
    lfhf = values.get("lf_hf", float("nan"))
    ax.set_title(f"Power spectral density ({psd}); LF/HF {lfhf:.2f}" if np.isfinite(lfhf)
                 else f"Power spectral density ({psd})", loc="left", fontsize=10)
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("PSD (ms²/Hz)")
    ax.grid(alpha=0.3)


def _bands_of(values) -> dict[str, tuple[float, float]]:
    settings = getattr(values, "settings", None)
    bands = getattr(settings, "bands", None)
    if bands is not None:
        return {"vlf": tuple(bands.vlf), "lf": tuple(bands.lf), "hf": tuple(bands.hf)}
    # Task Force of the ESC and NASPE (1996) bands
    return {"vlf": (0.0033, 0.04), "lf": (0.04, 0.15), "hf": (0.15, 0.40)}


def _poincare(ax, rec, values) -> None:
    xs, ys = [], []
    for seg in rec.nn_segments():
        if seg.size >= 2:
            xs.append(seg[:-1])
            ys.append(seg[1:])
    x = np.concatenate(xs) if xs else np.zeros(0)
    y = np.concatenate(ys) if ys else np.zeros(0)
    ax.scatter(x, y, s=8, color=OKABE_ITO["blue"], alpha=0.5, lw=0)
    sd1 = values.get("sd1_ms", float("nan"))
    sd2 = values.get("sd2_ms", float("nan"))
    if x.size and np.isfinite(sd1) and np.isfinite(sd2):
        from matplotlib.patches import Ellipse

        c = float(np.mean(np.concatenate([x, y])))
        ax.add_patch(Ellipse((c, c), 2 * sd2, 2 * sd1, angle=45, fill=False,
                             color=OKABE_ITO["vermillion"], lw=1.5))
        u = np.array([1.0, 1.0]) / np.sqrt(2)
        v = np.array([-1.0, 1.0]) / np.sqrt(2)
        ax.plot([c, c + sd2 * u[0]], [c, c + sd2 * u[1]], color=OKABE_ITO["vermillion"],
                lw=1.5)
        ax.plot([c, c + sd1 * v[0]], [c, c + sd1 * v[1]], color=OKABE_ITO["green"], lw=1.5)
        ax.text(0.03, 0.97,
                f"SD1 {sd1:.1f} ms (short semi-axis)\nSD2 {sd2:.1f} ms (long semi-axis)",
                transform=ax.transAxes, va="top", fontsize=9,
                bbox={"facecolor": "white", "alpha": 0.85, "lw": 0})
    if x.size:
        lo = float(min(x.min(), y.min()))
        hi = float(max(x.max(), y.max()))
        pad = 0.05 * (hi - lo + 1.0)
        ax.plot([lo - pad, hi + pad], [lo - pad, hi + pad], color=OKABE_ITO["grey"], lw=0.6,
                ls="--")
        ax.set_xlim(lo - pad, hi + pad)
        ax.set_ylim(lo - pad, hi + pad)
    ax.set_aspect("equal", adjustable="box")
    ax.set_xlabel("RR[n] (ms)")
    ax.set_ylabel("RR[n+1] (ms)")
    ax.set_title("Poincaré plot (corrected)", loc="left", fontsize=10)
    ax.grid(alpha=0.3)
