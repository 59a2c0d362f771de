"""Daily-table figures: one athlete's trend, and the whole squad at a glance."""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ._style import DIVERGING_CMAP, INK, new_figure, save

__all__ = ["athlete_trend", "squad_overview", "swc_label", "swc_position"]

_NEEDED = ("subject", "date", "quality", "ln_rmssd", "ln_rmssd_7d")
_LIMIT = 3.0  # colour scale saturates at 3 half-bands from the middle
# the daily table's names first; then the names of tables written before the SWC names
_BAND_NAMES = (("ln_rmssd_swc_low", "ln_rmssd_swc_high"), ("ln_rmssd_band_low",
                                                          "ln_rmssd_band_high"),
               ("band_low", "band_high"), ("ln_rmssd_band_lo", "ln_rmssd_band_hi"))


def _check(daily, needed=_NEEDED) -> None:
    missing = [c for c in needed if c not in daily.columns]
    if missing:
        raise InputError(f"the daily table lacks the column(s) {missing}; expected the table "
                         "that rrkit.daily_table / `rrkit daily` writes",
                         hint=f"columns found: {list(daily.columns)[:12]}...")


def _swc_cols(daily) -> tuple[str, str]:
    for lo, hi in _BAND_NAMES:
        if lo in daily.columns and hi in daily.columns:
            return lo, hi
    raise InputError("the daily table has no ln-RMSSD SWC band columns; expected one of "
                     + ", ".join(f"{lo}/{hi}" for lo, hi in _BAND_NAMES))


def swc_position(daily):
    """Where each day's 7-day ln-RMSSD mean sits in its athlete's SWC band.

    Returns a Series: 0 = the middle of the band (the baseline mean), -1 its lower edge, +1
    its upper edge (below -1 means below the band); multiplied by ``swc_sd`` it is the distance
    from the baseline mean in baseline SDs. NaN where the 7-day mean or the band is not
    defined.
    """
    lo_c, hi_c = _swc_cols(daily)
    lo = daily[lo_c].astype(float)
    hi = daily[hi_c].astype(float)
    mid = (lo + hi) / 2.0
    half = (hi - lo) / 2.0
    with np.errstate(invalid="ignore", divide="ignore"):
        return (daily["ln_rmssd_7d"].astype(float) - mid) / half.where(half > 0)


def _shade_phases(ax, phases) -> None:
    import pandas as pd

    if not phases:
        return
    for i, (name, first, last) in enumerate(phases):
        a = pd.Timestamp(first)
        b = pd.Timestamp(last) + pd.Timedelta(days=1)
        if i % 2:
            ax.axvspan(a, b, color="#000000", alpha=0.04, lw=0, zorder=0)
        ax.text(a + (b - a) / 2, 1.0, name, transform=ax.get_xaxis_transform(), ha="center",
                va="bottom", fontsize=8, color="#444444", clip_on=False)


def _baselines(baselines):
    from ..daily import BaselineSettings

    if baselines is None:
        return BaselineSettings()
    if isinstance(baselines, BaselineSettings):
        return baselines
    if isinstance(baselines, dict):
        known = {k: v for k, v in baselines.items() if k in BaselineSettings.__slots__}
        return BaselineSettings(**known)
    raise InputError(f"baselines must be a BaselineSettings or its dict; got {baselines!r}")


def swc_label(baselines=None) -> str:
    """The legend text of the SWC band, with the baseline it rests on and its lag."""
    b = _baselines(baselines)
    lag = (f"ending {b.baseline_lag_days} day{'' if b.baseline_lag_days == 1 else 's'} before "
           "each date" if b.baseline_lag_days else "ending on each date")
    return (f"SWC band: baseline mean ± {b.swc_sd:g} SD "
            f"({b.baseline_days}-day baseline {lag})")


def athlete_trend(daily, subject: str, path=None, *, load=None, phases=None, baselines=None,
                  title: str | None = None, dpi: int = 120):
    """One athlete's mornings over time: daily ln-RMSSD, the 7-day mean and the SWC band.

    Parameters
    ----------
    daily : pandas.DataFrame
        The daily table (`rrkit.daily_table`, or the ``daily.csv`` that `rrkit daily` writes).
    subject : str
        The athlete to draw.
    path : str or path-like, optional
        Where to write the figure (PNG, or SVG/PDF by the suffix).
    load : pandas.DataFrame, optional
        Training load with columns ``date``, ``subject`` and ``load_au`` (session RPE x
        minutes, arbitrary units; Foster et al. 2001, J Strength Cond Res 15(1):109-115), drawn
        as bars on a second axis. Several rows of one day are summed.
    phases : sequence of (name, first_date, last_date), optional
        Training phases to label along the top.
    baselines : BaselineSettings or dict, optional
        The settings the table was made with (``provenance.json`` holds them), for the
        legend's description of the band and its baseline lag; default `BaselineSettings()`.
    title : str, optional
        Figure title (default: the subject).
    dpi : int
        Resolution of a PNG, dots per inch.

    Returns
    -------
    matplotlib.figure.Figure

    Notes
    -----
    Top panel: the daily ln-RMSSD of ``ok`` days (dots) and ``flagged`` days (open diamonds,
    not in any mean; values beyond the axis are drawn at its edge as arrows), the 7-day rolling
    mean (Plews et al. 2012, Eur J Appl Physiol 112:3729-3741, doi:10.1007/s00421-012-2354-4)
    with triangles where it lies below or above the band, and the smallest-worthwhile-change
    (SWC) band, baseline mean ± 0.5 baseline SD (the sports-science convention after Hopkins'
    smallest worthwhile change, used for ln-RMSSD in the line of Plews et al. 2012; common
    practice), hatched in grey. Rejected and missing days are ticked along the
    bottom. Lower panel: the 7-day mean's distance from the baseline mean in baseline SDs, with
    the band's edges at ± ``swc_sd``. When the athlete's mornings carry the premature-beat
    caution (counted as in `rrkit.daily` tables, one rule everywhere), the caution is written
    under the title.
    """
    import pandas as pd

    from .._premature import caution_counts

    _check(daily)
    lo_c, hi_c = _swc_cols(daily)
    b = _baselines(baselines)
    d = daily[daily["subject"].astype(str) == str(subject)].copy()
    if d.empty:
        raise InputError(f"subject {subject!r} is not in the daily table",
                         hint=f"subjects: {sorted(daily['subject'].astype(str).unique())}")
    d["date"] = pd.to_datetime(d["date"])
    d = d.sort_values("date")
    fig = new_figure(11.0, 6.4)
    grid = fig.add_gridspec(2, 1, height_ratios=[3.0, 1.0])
    ax = fig.add_subplot(grid[0])
    ax_z = fig.add_subplot(grid[1], sharex=ax)
    ax2 = None
    if load is not None and len(load):
        lo_ = load[load["subject"].astype(str) == str(subject)].copy()
        lo_["date"] = pd.to_datetime(lo_["date"])
        per_day = lo_.groupby("date")["load_au"].sum()
        ax2 = ax.twinx()
        ax2.bar(per_day.index, per_day.to_numpy(), width=0.8, color=INK["faint"],
                edgecolor=INK["light"], lw=0.3, label="training load (right axis)")
        ax2.set_ylabel("training load (session RPE x min, AU)", color=INK["mid"])
        ax2.set_ylim(0, max(float(per_day.max()) * 3.5, 1.0))  # bars stay in the lower part
        ax2.tick_params(axis="y", colors=INK["mid"])
        ax.set_zorder(ax2.get_zorder() + 1)
        ax.patch.set_visible(False)
    low = d[lo_c].astype(float)
    high = d[hi_c].astype(float)
    ax.fill_between(d["date"], low, high, step="mid", facecolor="none", edgecolor=INK["light"],
                    hatch="////", lw=0.0, zorder=1, label=swc_label(b))
    for edge in (low, high):
        ax.step(d["date"], edge, where="mid", color=INK["mid"], lw=0.7, zorder=1)
    q = d["quality"].astype(str)
    ok = q == "ok"
    fl = q == "flagged"
    ax.scatter(d.loc[ok, "date"], d.loc[ok, "ln_rmssd"], s=14, color=INK["dark"], lw=0,
               zorder=3, label="daily ln-RMSSD")
    # the y range follows the values the mean uses; a flagged value far outside it (an
    # artifact-inflated window) is drawn at the edge of the axis as an arrow
    vals = pd.concat([d.loc[ok, "ln_rmssd"], d["ln_rmssd_7d"], low, high]).astype(float)
    vals = vals[np.isfinite(vals)]
    lo_y, hi_y = (float(vals.min()), float(vals.max())) if vals.size else (0.0, 1.0)
    pad = 0.15 * (hi_y - lo_y + 0.1)
    y_lim = (lo_y - 2 * pad, hi_y + pad)
    if fl.any():
        y_raw = d.loc[fl, "ln_rmssd"].astype(float)
        inside = (y_raw >= y_lim[0]) & (y_raw <= y_lim[1])
        if inside.any():
            ax.scatter(d.loc[fl, "date"][inside], y_raw[inside], s=26, facecolor="white",
                       edgecolor=INK["dark"], lw=1.0, marker="D", zorder=3,
                       label="flagged day (not in any mean)")
        for up, marker in ((True, "^"), (False, "v")):
            off = ~inside & ((y_raw > y_lim[1]) if up else (y_raw < y_lim[0]))
            if off.any():
                edge = y_lim[1] - 0.06 * pad if up else y_lim[0] + 0.35 * pad
                ax.scatter(d.loc[fl, "date"][off], np.full(int(off.sum()), edge), s=40,
                           marker=marker, color=INK["accent"], zorder=5,
                           label=f"flagged day off scale ({'above' if up else 'below'})")
    ax.plot(d["date"], d["ln_rmssd_7d"].astype(float), color=INK["ink"], lw=2.0,
            label="7-day mean", zorder=4)
    for col, marker, text in (("below_swc", "v", "7-day mean below the SWC band"),
                              ("above_swc", "^", "7-day mean above the SWC band")):
        if col in d.columns:
            sel = d[col].fillna(False).astype(bool)
            if sel.any():
                ax.scatter(d.loc[sel, "date"], d.loc[sel, "ln_rmssd_7d"], s=22,
                           color=INK["accent"] if col == "below_swc" else "white",
                           edgecolor=INK["accent"], lw=0.8, marker=marker, zorder=5,
                           label=text)
    ax.set_ylim(*y_lim)
    y_tick = y_lim[0] + 0.04 * (y_lim[1] - y_lim[0])
    rj = q == "rejected"
    ms = q == "missing"
    if rj.any():
        ax.scatter(d.loc[rj, "date"], np.full(int(rj.sum()), y_tick), marker="x", s=30,
                   color=INK["ink"], lw=1.0, zorder=3, label="rejected / failed file")
    if ms.any():
        ax.scatter(d.loc[ms, "date"], np.full(int(ms.sum()), y_tick), marker="|", s=50,
                   color=INK["light"], zorder=3, label="no recording")
    _shade_phases(ax, phases)
    ax.set_ylabel("ln-RMSSD (ln ms)")
    ax.tick_params(labelbottom=False)
    ax.grid(axis="y", color=INK["faint"], lw=0.6)
    # lower panel: distance from baseline in baseline SDs
    z = swc_position(d) * b.swc_sd
    ax_z.axhspan(-b.swc_sd, b.swc_sd, facecolor="none", edgecolor=INK["light"], hatch="////",
                 lw=0.0)
    ax_z.axhline(0.0, color=INK["mid"], lw=0.7)
    ax_z.plot(d["date"], z, color=INK["ink"], lw=1.4)
    zmax = float(np.nanmax(np.abs(z))) if np.isfinite(z).any() else 1.0
    ax_z.set_ylim(-max(1.5, 1.1 * zmax), max(1.5, 1.1 * zmax))
    ax_z.set_ylabel("7-day mean −\nbaseline (SD)", fontsize=8.5)
    ax_z.set_xlabel("date")
    ax_z.grid(axis="y", color=INK["faint"], lw=0.6)
    for a_ in (ax, ax_z):
        a_.spines["top"].set_visible(False)
        if ax2 is None or a_ is ax_z:
            a_.spines["right"].set_visible(False)
    handles, labels = ax.get_legend_handles_labels()
    if ax2 is not None:
        h2, l2 = ax2.get_legend_handles_labels()
        handles, labels = handles + h2, labels + l2
    ax_z.legend(handles, labels, loc="upper center", bbox_to_anchor=(0.5, -0.45), fontsize=8,
                ncol=3, frameon=False)
    head = title or f"{subject}: morning ln-RMSSD"
    count = caution_counts(d).get(str(subject))
    if count is not None:
        head += ("\ncaution: the premature-beat caution on " + count.text()
                 + ("" if count.firm else " (counted among other artifacts, may be noise)")
                 + "; rrkit does not diagnose, a clinician should see these recordings")
    fig.suptitle(head, fontsize=11 if count is not None else 12)
    if path is not None:
        save(fig, path, dpi=dpi)
    return fig


def squad_overview(daily, path=None, *, phases=None, title: str | None = None, dpi: int = 120):
    """The squad at a glance: one row per athlete, one column per day.

    Each cell is the athlete's 7-day ln-RMSSD mean relative to their SWC band (see
    `swc_position`): white at the baseline mean, blue above, red below; the band edges
    are at -1 and +1 (the colours saturate at -3 and +3). Days whose 7-day mean is not
    defined are grey. A dot marks the days the daily table flags as below the band.

    Parameters
    ----------
    daily : pandas.DataFrame
        The daily table.
    path : str or path-like, optional
        Where to write the figure.
    phases : sequence of (name, first_date, last_date), optional
        Training phases, drawn as vertical separators with their names.
    title : str, optional
        Figure title.
    dpi : int
        Resolution of a PNG.

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib as mpl
    import pandas as pd

    _check(daily)
    d = daily.copy()
    d["date"] = pd.to_datetime(d["date"])
    d["_pos"] = swc_position(d)
    grid = d.pivot_table(index="subject", columns="date", values="_pos", aggfunc="mean",
                         dropna=False)
    subjects = sorted(d["subject"].astype(str).unique())
    days = pd.date_range(d["date"].min(), d["date"].max(), freq="D")
    grid = grid.reindex(index=subjects, columns=days)
    z = np.ma.masked_invalid(grid.to_numpy(dtype=float))
    fig = new_figure(max(8.0, 0.09 * len(days) + 3.0), 1.0 + 0.42 * len(subjects) + 1.2)
    ax = fig.add_subplot(1, 1, 1)
    cmap = mpl.colormaps[DIVERGING_CMAP].with_extremes(bad="#DDDDDD")
    norm = mpl.colors.Normalize(vmin=-_LIMIT, vmax=_LIMIT)
    x = np.arange(len(days) + 1) - 0.5
    y = np.arange(len(subjects) + 1) - 0.5
    mesh = ax.pcolormesh(x, y, np.clip(z, -_LIMIT, _LIMIT), cmap=cmap, norm=norm,
                         edgecolors="white",
                         linewidth=0.3)
    from matplotlib.patches import Patch

    handles = [Patch(facecolor="#DDDDDD", edgecolor="white",
                     label="no 7-day mean, or SWC band not defined yet (baseline building up)")]
    if "below_swc" in d.columns:
        b = d[d["below_swc"].fillna(False).astype(bool)]
        xi = (b["date"] - days[0]).dt.days.to_numpy()
        yi = np.array([subjects.index(str(s)) for s in b["subject"]], dtype=float)
        if len(b):
            handles.append(ax.scatter(xi, yi, s=9, color="white", edgecolor="#000000", lw=0.5,
                                      label="below the SWC band (below_swc in the daily table)"))
    ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, -0.09), fontsize=8,
              ncol=2, frameon=False)
    ax.set_yticks(np.arange(len(subjects)), subjects)
    ax.invert_yaxis()
    mondays = [i for i, day in enumerate(days) if day.weekday() == 0]
    ax.set_xticks(mondays, [days[i].strftime("%d %b") for i in mondays], rotation=0, fontsize=8)
    if phases:
        for name, first, _last in phases:
            xi = (pd.Timestamp(first) - days[0]).days - 0.5
            if -0.5 <= xi <= len(days):
                ax.axvline(xi, color="#000000", lw=1.0)
                ax.text(xi + 0.5, -0.6, name, fontsize=8, va="bottom", ha="left")
    ax.set_xlabel("date (weeks start on Monday)")
    cb = fig.colorbar(mesh, ax=ax, shrink=0.9, pad=0.01, ticks=[-3, -2, -1, 0, 1, 2, 3])
    cb.set_label("7-day ln-RMSSD in the SWC band\n(-1 lower edge, +1 upper edge)", fontsize=8)
    fig.suptitle(title or "Squad overview: 7-day ln-RMSSD relative to each athlete's SWC band",
                 fontsize=12)
    if path is not None:
        save(fig, path, dpi=dpi)
    return fig
