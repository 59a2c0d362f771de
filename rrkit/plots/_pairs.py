"""Two simultaneous recordings after alignment: both tachograms, and the beat-level difference."""

from __future__ import annotations

import numpy as np

from ._style import LABEL_STYLE, OKABE_ITO, new_figure, save

__all__ = ["paired_recordings"]

_REF_COLOUR = OKABE_ITO["black"]
_DEV_COLOUR = OKABE_ITO["sky"]


def paired_recordings(comparison, *, path=None, width_in: float = 10.0, height_in: float = 6.0,
                      dpi: int = 130):
    """Paired-recordings figure of a `rrkit.pairing.DeviceComparison`.

    Top panel: the reference intervals and the device's intervals on the reference clock (after
    alignment), reference beats the device missed and device beats with no reference beat
    marked (with the markers of rrkit's missed and extra beat classes). Bottom panel: each
    paired interval's difference (device minus reference, ms) over time, with the bias and the
    limits of agreement named in words in the right margin.

    Parameters
    ----------
    comparison : DeviceComparison
        From `rrkit.pairing.compare_devices`.
    path : str or path-like, optional
        Write the figure there (PNG, SVG or PDF by the suffix), atomically.
    width_in, height_in : float
        Figure size in inches.
    dpi : int
        Resolution of raster output.

    Returns
    -------
    matplotlib.figure.Figure
    """
    t = comparison.pairs.table
    name = comparison.interval_name
    fig = new_figure(width_in, height_in)
    top, bottom = fig.subplots(2, 1, sharex=True, height_ratios=(3, 2))
    m = t[t["class"] == "matched"]
    ref_t = m["ref_time_s"].to_numpy(float) / 60.0
    ref_rr = m["ref_interval_ms"].to_numpy(float)
    dev_t = m["dev_aligned_s"].to_numpy(float) / 60.0
    dev_rr = m["dev_interval_ms"].to_numpy(float)
    # the full series of each side as recorded (all beats, not only the paired ones)
    both = t[t["class"] != "outside"].copy()
    ref_side = both[both["ref_time_s"].notna()]
    dev_side = both[both["dev_aligned_s"].notna()].sort_values("dev_aligned_s")
    rt = ref_side["ref_time_s"].to_numpy(float)
    dt = dev_side["dev_aligned_s"].to_numpy(float)
    top.plot(rt[1:] / 60.0, np.diff(rt) * 1000.0, color=_REF_COLOUR, lw=0.9,
             label="reference", zorder=2)
    top.plot(dt[1:] / 60.0, np.diff(dt) * 1000.0, color=_DEV_COLOUR, lw=0.9, alpha=0.9,
             label=f"device ({name}), aligned", zorder=3)
    counts = comparison.pairs.stats
    # each mark sits on the device interval it disturbs: the long one spanning a missed beat,
    # the short one ending at an extra beat
    for cls, times in (("missed", t.loc[t["class"] == "missed", "ref_time_s"]),
                       ("extra", t.loc[t["class"] == "extra", "dev_aligned_s"])):
        x = times.to_numpy(float)
        if x.size == 0 or dt.size < 2:
            continue
        k = np.clip(np.searchsorted(dt, x), 1, dt.size - 1)
        y = (dt[k] - dt[k - 1]) * 1000.0
        colour, marker, _ = LABEL_STYLE[cls]
        what = ("reference beat the device missed" if cls == "missed"
                else "device beat with no reference beat")
        n = counts["n_missed"] if cls == "missed" else counts["n_extra"]
        top.scatter(x / 60.0, y, s=28, marker=marker, facecolor="none", edgecolor=colour,
                    linewidth=1.2, zorder=4, label=f"{what} ({n})")
    top.set_ylabel("interval (ms)")
    a = comparison.alignment
    top.set_title(f"Reference and device after alignment: offset {a.offset_s:.3f} s, drift "
                  f"{a.drift_ms_per_h:+.1f} ms/h, confidence {a.confidence:.2f}; "
                  f"{counts['matched_pct']:.1f}% of reference beats matched within "
                  f"{comparison.pairs.tolerance_ms:g} ms", fontsize=9, loc="left")
    top.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize=8, frameon=False)
    top.grid(axis="y", color=OKABE_ITO["grey"], alpha=0.3, lw=0.5)

    ok = np.isfinite(ref_rr) & np.isfinite(dev_rr)
    diff = dev_rr[ok] - ref_rr[ok]
    bottom.scatter(ref_t[ok], diff, s=4, color=OKABE_ITO["blue"], alpha=0.5, lw=0,
                   label="paired interval")
    res = comparison.beat_agreement
    if res is not None:
        st = res.stats
        for key, style, words in (("bias", "-", "bias"), ("loa_low", "--", "lower limit"),
                                  ("loa_high", "--", "upper limit")):
            bottom.axhline(st[key], color=OKABE_ITO["black"], ls=style, lw=0.9)
            bottom.annotate(f"{words} {st[key]:+.1f} ms", xy=(1.0, st[key]),
                            xycoords=("axes fraction", "data"), xytext=(4, 0),
                            textcoords="offset points", va="center", fontsize=8)
    bottom.axhline(0.0, color=OKABE_ITO["grey"], lw=0.6, zorder=0)
    if dev_t.size:
        bottom.set_xlim(min(rt[0], dt[0]) / 60.0, max(rt[-1], dt[-1]) / 60.0)
    bottom.set_xlabel("time on the reference clock (min)")
    bottom.set_ylabel(f"device - reference\n{name} interval (ms)")
    bottom.grid(axis="y", color=OKABE_ITO["grey"], alpha=0.3, lw=0.5)
    if path is not None:
        save(fig, path, dpi=dpi, tight=True)
    return fig
