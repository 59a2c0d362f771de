"""Daily-table figures: one athlete's trend, and the whole squad at a glance."""

from __future__ import annotations

import numpy as np

from ..errors import InputError
from ._style import DIVERGING_CMAP, OKABE_ITO, new_figure, save

__all__ = ["athlete_trend", "swc_position", "squad_overview"]

_NEEDED = ("subject", "date", "quality", "ln_rmssd", "ln_rmssd_7d")
_LIMIT = 3.0  # colour scale saturates at 3 half-bands from the middle
_BAND_NAMES = (("ln_rmssd_swc_low", "ln_rmssd_swc_high"), ("band_low", "band_high"),
               ("ln_rmssd_band_lo", "ln_rmssd_band_hi"))


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
    raise InputError("the daily table has no ln-RMSSD band columns; expected one of "
                     + ", ".join(f"{lo}/{hi}" for lo, hi in _BAND_NAMES))


def swc_position(daily):
    """Where each day's 7-day ln-RMSSD mean sits in its athlete's normal band.

    Returns a Series: 0 = the middle of the band, -1 its lower edge, +1 its upper edge (below
    -1 means below the band). NaN where the 7-day mean or the band is not defined.
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


def athlete_trend(daily, subject: str, path=None, *, load=None, phases=None,
                  title: str | None = None, dpi: int = 120):
    """One athlete's mornings over time: daily ln-RMSSD, the 7-day mean and the normal band.

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
    title : str, optional
        Figure title (default: the subject).
    dpi : int
        Resolution of a PNG, dots per inch.

    Returns
    -------
    matplotlib.figure.Figure

    Notes
    -----
    Points are the daily ln-RMSSD of ``ok`` days (filled) and ``flagged`` days (open); rejected
    and missing days are ticked along the bottom. The line is the 7-day rolling mean (Plews et
    al. 2012, Eur J Appl Physiol 112:3729-3741, doi:10.1007/s00421-012-2354-4); it is marked
    where it lies below the band. The shaded band is the athlete's normal band from the daily
    table.
    """
    import pandas as pd

    _check(daily)
    lo_c, hi_c = _swc_cols(daily)
    d = daily[daily["subject"].astype(str) == str(subject)].copy()
    if d.empty:
        raise InputError(f"subject {subject!r} is not in the daily table",
                         hint=f"subjects: {sorted(daily['subject'].astype(str).unique())}")
    d["date"] = pd.to_datetime(d["date"])
    d = d.sort_values("date")
    fig = new_figure(11.0, 4.8)
    ax = fig.add_subplot(1, 1, 1)
    if load is not None and len(load):
        lo_ = load[load["subject"].astype(str) == str(subject)].copy()
        lo_["date"] = pd.to_datetime(lo_["date"])
        per_day = lo_.groupby("date")["load_au"].sum()
        ax2 = ax.twinx()
        ax2.bar(per_day.index, per_day.to_numpy(), width=0.8, color=OKABE_ITO["grey"],
                alpha=0.35, label="training load")
        ax2.set_ylabel("training load (session RPE x min, AU)", color="#555555")
        ax2.set_ylim(0, max(float(per_day.max()) * 2.6, 1.0))
        ax2.tick_params(axis="y", colors="#555555")
        ax.set_zorder(ax2.get_zorder() + 1)
        ax.patch.set_visible(False)
    ax.fill_between(d["date"], d[lo_c].astype(float), d[hi_c].astype(float),
                    color=OKABE_ITO["green"], alpha=0.18, lw=0, step="mid",
                    label="normal band")
    q = d["quality"].astype(str)
    ok = q == "ok"
    fl = q == "flagged"
    ax.scatter(d.loc[ok, "date"], d.loc[ok, "ln_rmssd"], s=18, color=OKABE_ITO["blue"],
               zorder=3, label="daily ln-RMSSD")
    # the y range follows the values the mean uses; a flagged value far outside it (an
    # artifact-inflated window) is drawn at the edge of the axis instead of squashing the rest
    vals = pd.concat([d.loc[ok, "ln_rmssd"], d["ln_rmssd_7d"], d[lo_c], d[hi_c]]).astype(float)
    vals = vals[np.isfinite(vals)]
    lo_y, hi_y = (float(vals.min()), float(vals.max())) if vals.size else (0.0, 1.0)
    pad = 0.15 * (hi_y - lo_y + 0.1)
    y_lim = (lo_y - 2 * pad, hi_y + pad)
    if fl.any():
        y_fl = d.loc[fl, "ln_rmssd"].astype(float).clip(y_lim[0] + 0.02 * pad, y_lim[1] - 0.1 * pad)
        off = bool((y_fl != d.loc[fl, "ln_rmssd"].astype(float)).any())
        ax.scatter(d.loc[fl, "date"], y_fl, s=30, facecolor="white",
                   edgecolor=OKABE_ITO["orange"], lw=1.4, marker="^", zorder=3,
                   label="flagged (not in the mean" + ("; off-scale ones at the edge)" if off
                                                      else ")"))
    ax.plot(d["date"], d["ln_rmssd_7d"].astype(float), color=OKABE_ITO["black"], lw=1.8,
            label="7-day mean", zorder=4)
    if "below_swc" in d.columns:
        below = d["below_swc"].fillna(False).astype(bool)
        if below.any():
            ax.scatter(d.loc[below, "date"], d.loc[below, "ln_rmssd_7d"], s=26,
                       color=OKABE_ITO["vermillion"], marker="s", zorder=5,
                       label="7-day mean below band")
    ax.set_ylim(*y_lim)
    y_tick = ax.get_ylim()[0] + 0.04 * (ax.get_ylim()[1] - ax.get_ylim()[0])
    rj = q == "rejected"
    ms = q == "missing"
    if rj.any():
        ax.scatter(d.loc[rj, "date"], np.full(int(rj.sum()), y_tick), marker="x", s=36,
                   color=OKABE_ITO["vermillion"], zorder=3, label="rejected / failed file")
    if ms.any():
        ax.scatter(d.loc[ms, "date"], np.full(int(ms.sum()), y_tick), marker="|", s=60,
                   color=OKABE_ITO["grey"], zorder=3, label="no recording")
    _shade_phases(ax, phases)
    ax.set_ylabel("ln-RMSSD (ln ms)")
    ax.set_xlabel("date")
    ax.grid(alpha=0.3)
    handles, labels = ax.get_legend_handles_labels()
    if load is not None and len(load):
        h2, l2 = fig.axes[-1].get_legend_handles_labels()
        handles, labels = handles + h2, labels + l2
    ax.legend(handles, labels, loc="upper center", bbox_to_anchor=(0.5, -0.13), fontsize=8,
              ncol=5, frameon=False)
    fig.suptitle(title or f"{subject}: morning ln-RMSSD", fontsize=12)
    if path is not None:
        save(fig, path, dpi=dpi)
    return fig


def squad_overview(daily, path=None, *, phases=None, title: str | None = None, dpi: int = 120):
    """The squad at a glance: one row per athlete, one column per day.

    Each cell is the athlete's 7-day ln-RMSSD mean relative to their normal band (see
    `swc_position`): white inside the band's middle, blue above, red below; the band edges
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
                     label="no 7-day mean, or band not defined yet (baseline building up)")]
    if "below_swc" in d.columns:
        b = d[d["below_swc"].fillna(False).astype(bool)]
        xi = (b["date"] - days[0]).dt.days.to_numpy()
        yi = np.array([subjects.index(str(s)) for s in b["subject"]], dtype=float)
        if len(b):
            handles.append(ax.scatter(xi, yi, s=9, color="white", edgecolor="#000000", lw=0.5,
                                      label="below band (flag in the daily table)"))
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
    cb.set_label("7-day ln-RMSSD in the band\n(-1 lower edge, +1 upper edge)", fontsize=8)
    fig.suptitle(title or "Squad overview: 7-day ln-RMSSD relative to each athlete's band",
                 fontsize=12)
    if path is not None:
        save(fig, path, dpi=dpi)
    return fig
