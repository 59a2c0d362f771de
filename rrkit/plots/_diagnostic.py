"""Recording diagnostic: what was read and corrected, the audit beneath it, spectrum, return map.

The figure is centred on what rrkit adds to a recording: the tachogram as read and as corrected,
with an audit strip beneath it that gives each artifact class its own row, counted in beats
where the class is about beats (premature, missed, extra) and in intervals where it is about
intervals (long, short, implausible). The spectrum (an outline, band edges marked, powers in a
small table beside it) and the return map are secondary panels on the right.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..recording import interval_name
from ._style import INK, LABEL_STYLE, new_figure, save

__all__ = ["AuditRow", "audit_rows", "recording_diagnostic"]

_ORDER = ("ectopic", "missed", "extra", "long", "short", "implausible")


@dataclass(frozen=True, slots=True)
class AuditRow:
    """One artifact class of a cleaning result, as the audit strip draws it.

    Attributes
    ----------
    label : str
        The class (`rrkit.clean` labels).
    times_s : numpy.ndarray
        Where each beat (or interval) of the class sits on the recording's clock, s.
    n_beats : int or None
        Beats of the class (premature beats, missed beats restored, extra beats removed); None
        for classes that are about intervals.
    n_intervals : int
        Input intervals labelled with the class.
    text : str
        ``'4 premature beats (8 intervals)'``, ``'1 long interval'``.
    """

    label: str
    times_s: np.ndarray
    n_beats: int | None
    n_intervals: int
    text: str


def _plural(n: int, word: str) -> str:
    return f"{n} {word}{'' if n == 1 else 's'}"


def audit_rows(result) -> list[AuditRow]:
    """The artifact classes of a `CleanResult`, counted as people count them.

    Premature beats are counted as beats (each premature beat labels two intervals: the early
    one and the pause after it; ``result.ectopic_beats`` lists the beats), a missed beat as
    each beat put back (an interval split into k parts restored k - 1 beats), an extra beat as
    each beat removed (two intervals merged into one); long, short and implausible values are
    counted in intervals. Classes with nothing in them are left out.
    """
    labels = np.asarray(result.labels)
    raw = result.input
    t_int = raw.interval_times_s
    rows = []
    for name in _ORDER:
        idx = np.flatnonzero(labels == name)
        if not idx.size:
            continue
        n_int = int(idx.size)
        if name == "ectopic":
            beats = np.asarray(result.ectopic_beats, dtype=int)
            beats = beats[(beats >= 0) & (beats < raw.beat_times_s.size)]
            n_beats = int(beats.size) if beats.size else (n_int + 1) // 2
            times = raw.beat_times_s[beats] if beats.size else t_int[idx]
            text = f"{_plural(n_beats, 'premature beat')} ({_plural(n_int, 'interval')})"
        elif name == "missed":
            n_beats = int(result.artifact_beats()[idx].sum())
            times = t_int[idx]
            text = (f"{_plural(n_beats, 'missed beat')} restored "
                    f"({_plural(n_int, 'interval')} split)")
        elif name == "extra":
            n_beats = max(n_int // 2, 1)
            times = t_int[idx[::2]] if n_int >= 2 else t_int[idx]
            text = (f"{_plural(n_beats, 'extra beat')} removed "
                    f"({_plural(n_int, 'interval')} merged)")
        else:
            n_beats = None
            times = t_int[idx]
            word = {"long": "long interval", "short": "short interval",
                    "implausible": "implausible interval"}[name]
            text = _plural(n_int, word)
        rows.append(AuditRow(name, np.asarray(times, float), n_beats, n_int, text))
    return rows


def recording_diagnostic(result, path=None, *, window_s=None, psd: str = "welch",
                         title: str | None = None, dpi: int = 120):
    """One figure to judge a recording: what was corrected, its audit, spectrum and return map.

    Parameters
    ----------
    result : CleanResult or Recording
        A cleaning result (``rrkit.clean``). A `Recording` is cleaned with the default method
        first.
    path : str or path-like, optional
        Where to write the figure (PNG, or SVG/PDF by the suffix). Nothing is written when None.
    window_s : (float, float), optional
        Analysis window ``(start_s, end_s)`` on the recording's clock. It is marked by a bar
        above the tachogram, and the spectrum, band powers and return map are computed on it
        only. Default: the whole recording.
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
    Left, large: the tachogram, RR interval (ms) against time (s), as read (light) and as
    corrected (dark; pulse-to-pulse interval for pulse-derived input,
    `rrkit.recording.interval_name`, in the title and on the axes); intervals beyond the axis
    are drawn as arrows at its edge. Beneath it the
    audit strip, one row per artifact class that cleaning found, each mark at the beat or
    interval concerned and each row counted (`audit_rows`). Right: the power spectral density
    (ms²/Hz) as an outline with the band edges marked, and beside it a small table of the band
    powers (ms²); below, the return map (RR[n+1] against RR[n]) of the corrected intervals with
    the SD1/SD2 ellipse (Brennan et al. 2001, IEEE Trans Biomed Eng 48(11):1342-1347,
    doi:10.1109/10.959330). Every legend sits outside the data.
    """
    import rrkit

    if isinstance(result, rrkit.Recording):
        result = rrkit.clean(result)
    part = result if window_s is None else result.window(float(window_s[0]), float(window_s[1]))
    values = rrkit.metrics(part, psd=psd)
    spec = rrkit.spectrum(part.recording, psd=psd)
    rows = audit_rows(result)

    fig = new_figure(12.5, 7.6)
    outer = fig.add_gridspec(1, 2, width_ratios=[1.9, 1.15])
    left = outer[0].subgridspec(2, 1, height_ratios=[3.0, 0.55 + 0.32 * max(len(rows), 1)])
    right = outer[1].subgridspec(2, 1, height_ratios=[1.0, 1.15])
    ax_t = fig.add_subplot(left[0])
    ax_a = fig.add_subplot(left[1], sharex=ax_t)
    spec_grid = right[0].subgridspec(1, 2, width_ratios=[1.45, 1.0])
    ax_p = fig.add_subplot(spec_grid[0])
    ax_tab = fig.add_subplot(spec_grid[1])
    ax_q = fig.add_subplot(right[1])
    _tachogram(ax_t, result, window_s)
    _audit(ax_a, rows, result)
    _spectrum(ax_p, ax_tab, spec, values, psd)
    _return_map(ax_q, part.recording, values)
    rec = result.input
    if title is None:
        bits = [b for b in (rec.subject, rec.source and str(rec.source).rsplit("/", 1)[-1]) if b]
        title = " - ".join(bits) if bits else "recording"
    s = part.summary
    where = "analysis window" if window_s is not None else "whole recording"
    head = (f"{title}\n{interval_name(result)} intervals, {where}: {s.artifact_pct:.1f}% of "
            f"intervals artifacts, "
            f"{s.corrected_pct:.1f}% corrected, quality {s.quality}"
            + (f" ({s.quality_reason})" if s.quality_reason else ""))
    cautioned = s if s.caution else result.summary if result.summary.caution else None
    if cautioned is not None:
        head += "\n" + _caution_line(cautioned)
    fig.suptitle(head, fontsize=11.5)
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
    beats = _plural(int(summary.n_premature), "premature beat")
    if summary.quality == "flagged" and n_bad > 0 and n_ect < 0.5 * n_bad:
        return (f"caution: {beats} counted among many other artifacts (may be noise);\n"
                "rrkit does not diagnose, if in doubt a clinician should see this recording")
    return (f"caution: frequent premature beats ({beats}); rrkit does not diagnose, "
            "a clinician should see this recording")


def _tachogram(ax, result, window_s) -> None:
    raw = result.input
    t = raw.interval_times_s
    ax.plot(t, raw.rr_ms, color=INK["light"], lw=0.9, label="as read")
    cor = result.recording
    rr_c = np.where(~cor.gaps, cor.rr_ms, np.nan)
    ax.plot(cor.interval_times_s, rr_c, color=INK["ink"], lw=1.0, label="corrected")
    labels = np.asarray(result.labels)
    # keep the y range on the physiology: a 3000 ms missed-beat spike should not flatten it
    good = raw.rr_ms[labels == "normal"] if np.any(labels == "normal") else raw.rr_ms
    if good.size:
        lo, hi = np.percentile(good, [0.5, 99.5])
        pad = max(60.0, 0.25 * (hi - lo))
        top = min(max(hi + pad, np.max(raw.rr_ms) + 40.0), 2.2 * hi)
        bottom = max(0.0, min(lo - pad, np.min(raw.rr_ms) - 40.0))
        bottom = max(bottom, 0.45 * lo)
        ax.set_ylim(bottom, top)
        y0, y1 = ax.get_ylim()
        for above, marker in ((True, "^"), (False, "v")):
            off = raw.rr_ms > y1 if above else raw.rr_ms < y0
            if off.any():
                edge = y1 - 0.02 * (y1 - y0) if above else y0 + 0.02 * (y1 - y0)
                far = raw.rr_ms[off].max() if above else raw.rr_ms[off].min()
                ax.scatter(t[off], np.full(int(off.sum()), edge), marker=marker, s=46,
                           color=INK["accent"], zorder=5, clip_on=False,
                           label=f"off scale: {_plural(int(off.sum()), 'interval')} "
                                 f"{'above' if above else 'below'} the axis "
                                 f"({'up to' if above else 'down to'} {far:.0f} ms)")
    if window_s is not None:
        y0, y1 = ax.get_ylim()
        yb = y1 + 0.03 * (y1 - y0)
        ax.plot([window_s[0], window_s[1]], [yb, yb], color=INK["dark"], lw=3.0,
                solid_capstyle="butt", clip_on=False,
                label=f"analysis window {window_s[0]:g}-{window_s[1]:g} s")
        ax.set_ylim(y0, y1)
    ax.set_ylabel(f"{interval_name(raw)} interval (ms)")
    ax.set_title("Intervals as read and corrected", loc="left", fontsize=10, pad=12)
    ax.tick_params(labelbottom=False)
    ax.grid(axis="y", color=INK["faint"], lw=0.6)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)


def _audit(ax, rows, result) -> None:
    """The audit strip: one row per class, marks at its beats, the row's count at the left."""
    if not rows:
        ax.text(0.01, 0.5, "audit: every interval normal, nothing corrected",
                transform=ax.transAxes, va="center", fontsize=9, color=INK["dark"])
        ax.set_yticks([])
    from matplotlib.transforms import blended_transform_factory

    row_text = blended_transform_factory(ax.transAxes, ax.transData)
    for i, row in enumerate(rows):
        colour, marker, _text = LABEL_STYLE[row.label]
        ax.scatter(row.times_s, np.full(row.times_s.size, i), marker=marker, s=30,
                   color=colour, edgecolor=INK["ink"], linewidth=0.4, zorder=3)
        ax.axhline(i, color=INK["faint"], lw=0.8, zorder=1)
        # the row's count above its line, at the left (y grows downwards here)
        ax.text(0.003, i - 0.18, row.text, transform=row_text, va="bottom", ha="left",
                fontsize=8, color=INK["ink"])
    ax.set_yticks([])
    ax.set_ylim(len(rows) - 0.5 if rows else 0.5, -0.75)
    ax.set_xlabel("time since start (s)")
    s = result.summary
    ax.set_title(f"Audit of the whole recording: {s.n_intervals - s.counts.get('normal', 0)} of "
                 f"{s.n_intervals} intervals not normal, {s.corrected_pct:.1f}% corrected",
                 loc="left", fontsize=9)
    for side in ("top", "right", "left"):
        ax.spines[side].set_visible(False)
    ax.tick_params(axis="y", length=0)
    # the tachogram's legend goes under the strip, outside every data area
    handles, labels = ax.figure.axes[0].get_legend_handles_labels()
    ax.legend(handles, labels, loc="upper left", bbox_to_anchor=(0.0, -0.5), fontsize=8,
              ncol=2, frameon=False)


def _spectrum(ax, ax_tab, spec, values, psd) -> None:
    f = np.asarray(spec.freqs_hz)
    p = np.asarray(spec.psd_ms2_hz)
    keep = f <= 0.5
    ax.plot(f[keep], p[keep], color=INK["ink"], lw=1.3)
    bands = _bands_of(values)
    ymax = float(np.nanmax(p[keep])) if np.any(keep) and np.isfinite(p[keep]).any() else 1.0
    edges = sorted({e for lo_hi in bands.values() for e in lo_hi})
    for e in edges:
        ax.axvline(e, color=INK["mid"], lw=0.8, ls=(0, (3, 2)))
    for name, (lo, hi) in bands.items():
        ax.text((lo + hi) / 2, 1.0, name.upper(), transform=ax.get_xaxis_transform(),
                ha="center", va="bottom", fontsize=8, color=INK["dark"])
    ax.set_ylim(0, ymax * 1.08)
    ax.set_xlim(0, 0.5)
    ax.set_title(f"Spectrum ({psd})", loc="left", fontsize=10, pad=14)
    ax.set_xlabel("frequency (Hz)")
    ax.set_ylabel("PSD (ms²/Hz)")
    ax.grid(axis="y", color=INK["faint"], lw=0.6)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    # the side table: band, edges, power
    ax_tab.axis("off")
    lines = [("band", "Hz", "ms²")]
    for name, (lo, hi) in bands.items():
        power = values.get(f"{name}_ms2", float("nan"))
        lines.append((name.upper(), f"{lo:g}-{hi:g}",
                      f"{power:,.0f}" if np.isfinite(power) else "n/a"))
    lfhf = values.get("lf_hf", float("nan"))
    lines.append(("LF/HF", "", f"{lfhf:.2f}" if np.isfinite(lfhf) else "n/a"))
    for i, (a, b, c) in enumerate(lines):
        y = 0.92 - 0.14 * i
        weight = "bold" if i == 0 else "normal"
        ax_tab.text(0.0, y, a, transform=ax_tab.transAxes, fontsize=7.5, weight=weight)
        ax_tab.text(0.24, y, b, transform=ax_tab.transAxes, fontsize=7.5, weight=weight,
                    color=INK["dark"])
        ax_tab.text(1.0, y, c, transform=ax_tab.transAxes, fontsize=7.5, weight=weight,
                    ha="right")
    ax_tab.set_title("band powers", loc="left", fontsize=9, pad=14)


def _bands_of(values) -> dict[str, tuple[float, float]]:
    settings = getattr(values, "settings", None)
    bands = getattr(settings, "bands", None)
    if bands is not None:
        return {"vlf": tuple(bands.vlf), "lf": tuple(bands.lf), "hf": tuple(bands.hf)}
    # Task Force of the ESC and NASPE (1996) bands
    return {"vlf": (0.0033, 0.04), "lf": (0.04, 0.15), "hf": (0.15, 0.40)}


def _return_map(ax, rec, values) -> None:
    xs, ys = [], []
    for seg in rec.nn_segments():
        if seg.size >= 2:
            xs.append(seg[:-1])
            ys.append(seg[1:])
    x = np.concatenate(xs) if xs else np.zeros(0)
    y = np.concatenate(ys) if ys else np.zeros(0)
    ax.scatter(x, y, s=6, color=INK["dark"], alpha=0.45, lw=0)
    sd1 = values.get("sd1_ms", float("nan"))
    sd2 = values.get("sd2_ms", float("nan"))
    if x.size and np.isfinite(sd1) and np.isfinite(sd2):
        from matplotlib.patches import Ellipse

        c = float(np.mean(np.concatenate([x, y])))
        ax.add_patch(Ellipse((c, c), 2 * sd2, 2 * sd1, angle=45, fill=False,
                             color=INK["accent"], lw=1.2, ls=(0, (4, 2))))
    if x.size:
        lo = float(min(x.min(), y.min()))
        hi = float(max(x.max(), y.max()))
        pad = 0.05 * (hi - lo + 1.0)
        ax.plot([lo - pad, hi + pad], [lo - pad, hi + pad], color=INK["light"], lw=0.6)
        ax.set_xlim(lo - pad, hi + pad)
        ax.set_ylim(lo - pad, hi + pad)
    ax.set_aspect("equal", adjustable="box")
    name = interval_name(rec)
    ax.set_xlabel(f"{name} interval n (ms)")
    ax.set_ylabel(f"{name} interval n+1 (ms)")
    sd = (f": SD1 {sd1:.1f} ms, SD2 {sd2:.1f} ms" if np.isfinite(sd1) and np.isfinite(sd2)
          else "")
    ax.set_title(f"Return map, corrected{sd}", loc="left", fontsize=9.5)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
