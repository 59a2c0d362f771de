"""Figures: they are drawn, written as valid non-blank PNGs, and reject tables they cannot use."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import rrkit
from rrkit.plots import athlete_trend, recording_diagnostic, squad_overview, swc_position

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"


def assert_png(path, *, min_px=(300, 300)) -> None:
    """A readable PNG of a useful size that is not one flat colour."""
    import matplotlib.image as mpimg

    assert path.read_bytes()[:8] == PNG_MAGIC
    img = mpimg.imread(path)
    assert img.shape[0] >= min_px[0]
    assert img.shape[1] >= min_px[1]
    grey = img[..., :3].mean(axis=2)
    assert grey.std() > 0.02, "the figure is (nearly) blank"
    # some ink: a reasonable share of pixels darker than the white background
    assert (grey < 0.9).mean() > 0.01


def _daily(n_days=70, subjects=("A1", "B2", "C3"), seed=3):
    """A daily table in the shape `rrkit.daily_table` returns, built here from a known truth.

    Band = mean ± 0.5 SD of the first 28 ok days (the convention the daily table uses); the
    last two weeks of B2 are lowered by 0.4 ln units so their 7-day mean falls below it.
    """
    rng = np.random.default_rng(seed)
    rows = []
    days = pd.date_range("2026-01-05", periods=n_days, freq="D")
    for s in subjects:
        ln = 4.2 + rng.normal(0, 0.08, n_days)
        if s == "B2":
            ln[-14:] -= 0.4
        quality = np.array(["ok"] * n_days, dtype=object)
        quality[5] = "flagged"
        quality[9] = "missing"
        quality[20] = "rejected"
        ln = np.where(np.isin(quality, ["missing", "rejected"]), np.nan, ln)
        df = pd.DataFrame({"subject": s, "date": days.date, "quality": quality, "ln_rmssd": ln})
        okv = df["ln_rmssd"].where(df["quality"] == "ok")
        df["ln_rmssd_7d"] = okv.rolling(7, min_periods=3).mean()
        base = okv.iloc[:28]
        df["ln_rmssd_swc_low"] = base.mean() - 0.5 * base.std()
        df["ln_rmssd_swc_high"] = base.mean() + 0.5 * base.std()
        df["below_swc"] = pd.array(df["ln_rmssd_7d"] < df["ln_rmssd_swc_low"], dtype="boolean")
        rows.append(df)
    return pd.concat(rows, ignore_index=True)


def test_band_position_edges():
    # hand-computable: band 4.0-4.2 has its middle at 4.1 and half-width 0.1
    df = pd.DataFrame({"ln_rmssd_7d": [4.0, 4.1, 4.2, 3.9, np.nan],
                       "ln_rmssd_swc_low": 4.0, "ln_rmssd_swc_high": 4.2})
    np.testing.assert_allclose(swc_position(df).to_numpy(), [-1, 0, 1, -2, np.nan], atol=1e-12)


def test_athlete_trend_png(tmp_path):
    from rrkit.daily import BaselineSettings

    daily = _daily()
    load = pd.DataFrame({"date": pd.to_datetime(daily["date"]).astype(str),
                         "subject": daily["subject"], "load_au": 400.0})
    out = tmp_path / "trend.png"
    fig = athlete_trend(daily, "B2", out, load=load,
                        phases=[("base", "2026-01-05", "2026-02-01"),
                                ("block", "2026-02-02", "2026-03-15")],
                        baselines=BaselineSettings(baseline_days=28))
    assert_png(out)
    ax, ax_z = fig.axes[0], fig.axes[1]
    labels = ax.get_legend_handles_labels()[1]
    assert "7-day mean below the SWC band" in labels  # B2's lowered fortnight is marked
    assert "rejected / failed file" in labels
    assert "no recording" in labels
    # the band is the smallest worthwhile change, its baseline and lag named in the legend,
    # drawn hatched in grey (no fill colour)
    swc = [lab for lab in labels if lab.startswith("SWC band")]
    assert swc == ["SWC band: baseline mean ± 0.5 SD (28-day baseline ending 7 days before "
                   "each date)"]
    band = next(c for c in ax.collections if c.get_label() == swc[0])
    assert band.get_hatch() == "////"
    assert band.get_facecolor().size == 0 or band.get_facecolor()[0][3] == 0
    # lower panel: the 7-day mean's distance from the baseline mean in baseline SDs
    d = daily[daily["subject"] == "B2"]
    mid = (d["ln_rmssd_swc_low"] + d["ln_rmssd_swc_high"]) / 2
    sd = (d["ln_rmssd_swc_high"] - d["ln_rmssd_swc_low"])  # band = mean +/- 0.5 SD: width 1 SD
    want = ((d["ln_rmssd_7d"] - mid) / sd).to_numpy()
    np.testing.assert_allclose(ax_z.lines[-1].get_ydata(), want, rtol=1e-12)
    assert np.nanmin(want[-7:]) < -2  # the lowered fortnight is far below
    # nobody cautioned: no caution under the title
    assert "caution" not in fig._suptitle.get_text()


def test_athlete_trend_shows_the_premature_beat_caution_and_off_scale_days():
    daily = _daily()
    b2 = daily.index[daily["subject"] == "B2"]
    daily["caution"] = ""
    daily.loc[b2[[30, 31, 40]], "caution"] = "4 premature beats (48 per hour, above 30 ...)"
    daily.loc[b2[9], "caution"] = "9 premature beats"  # a missing day never counts
    daily.loc[b2[50], ["quality", "ln_rmssd"]] = ["flagged", 7.0]  # far off the axis
    fig = athlete_trend(daily, "B2")
    head = fig._suptitle.get_text()
    measured = int((daily.loc[b2, "quality"] != "missing").sum())
    assert f"the premature-beat caution on 3 of {measured} mornings" in head
    assert "does not diagnose" in head
    assert "clinician" in head
    ax = fig.axes[0]
    labels = ax.get_legend_handles_labels()[1]
    assert "flagged day off scale (above)" in labels
    off = next(c for c in ax.collections if c.get_label() == "flagged day off scale (above)")
    assert off.get_offsets()[0][1] <= ax.get_ylim()[1]  # drawn at the edge, inside the axes
    # another athlete's figure carries no caution
    assert "caution" not in athlete_trend(daily, "A1")._suptitle.get_text()


def test_squad_overview_png(tmp_path):
    out = tmp_path / "overview.png"
    fig = squad_overview(_daily(), out)
    assert_png(out)
    mesh = fig.axes[0].collections[0]
    arr = np.ma.getdata(mesh.get_array()).reshape(3, -1)
    # the lowered athlete's last week sits well below the band's lower edge (-1)
    assert np.nanmean(arr[1, -7:]) < -1.5
    assert abs(np.nanmean(arr[0, 28:])) < 1.5


def test_trend_unknown_subject_and_bad_table(tmp_path):
    with pytest.raises(rrkit.InputError, match="subject 'Z9' is not in the daily table"):
        athlete_trend(_daily(), "Z9")
    with pytest.raises(rrkit.InputError, match=r"lacks the column\(s\) \['ln_rmssd_7d'\]"):
        squad_overview(_daily().drop(columns=["ln_rmssd_7d"]))


def test_recording_diagnostic_png(tmp_path):
    from rrkit.plots import audit_rows
    from rrkit.simulate import inject_artifacts, simulate_rr

    rec = simulate_rr(duration_s=360, seed=5)
    bad, truth = inject_artifacts(rec, counts={"missed": 2, "ectopic": 2, "extra": 2}, seed=1)
    result = rrkit.clean(bad)
    out = tmp_path / "diag.png"
    fig = recording_diagnostic(result, out, window_s=(60.0, 360.0))
    assert_png(out, min_px=(600, 900))
    ax_t, ax_a, ax_p, ax_tab, ax_q = fig.axes
    # the audit strip: one row per class, counted in beats as the simulation planted them
    # (ground truth of inject_artifacts: 2 premature beats, 2 missed, 2 extra)
    rows = {r.label: r for r in audit_rows(result)}
    assert rows["ectopic"].n_beats == truth.premature_beats.size == 2
    assert rows["missed"].n_beats == truth.events["missed"].size == 2
    assert rows["extra"].n_beats == truth.events["extra"].size == 2
    strip = [t.get_text() for t in ax_a.texts]
    assert strip == ["2 premature beats (4 intervals)",
                     "2 missed beats restored (2 intervals split)",
                     "2 extra beats removed (4 intervals merged)"]
    np.testing.assert_allclose(sorted(rows["ectopic"].times_s),
                               sorted(bad.beat_times_s[truth.premature_beats]))
    # the spectrum is an outline (nothing filled) with the band edges marked
    values = rrkit.metrics(result.window(60.0, 360.0))
    assert not ax_p.collections
    assert not ax_p.patches[1:]
    edges = sorted(round(line.get_xdata()[0], 4) for line in ax_p.get_lines()[1:])
    assert edges == [0.0033, 0.04, 0.15, 0.4]
    # band powers in the side table, the same numbers as rrkit.metrics
    table = [t.get_text() for t in ax_tab.texts]
    assert f"{values['lf_ms2']:,.0f}" in table
    assert f"{values['hf_ms2']:,.0f}" in table
    assert "ms²" in table
    assert "0.04-0.15" in table
    assert "SD1" in ax_q.get_title(loc="left")
    # the legend sits outside every data area
    legend = ax_a.get_legend()
    assert legend is not None
    from matplotlib.backends.backend_agg import FigureCanvasAgg

    canvas = FigureCanvasAgg(fig)
    canvas.draw()
    renderer = canvas.get_renderer()
    box = legend.get_window_extent(renderer)
    for ax in (ax_t, ax_a, ax_p, ax_q):
        assert not box.overlaps(ax.get_window_extent(renderer))
    labels = [t.get_text() for t in legend.get_texts()]
    assert "analysis window 60-360 s" in labels


def test_recording_diagnostic_marks_values_off_scale():
    from rrkit.simulate import simulate_rr

    rec = simulate_rr(duration_s=200, seed=2)
    rr = rec.rr_ms.copy()
    rr[50] = 6000.0  # a dropout read as one long interval, far above the axis
    fig = recording_diagnostic(rrkit.Recording.from_rr(rr))
    ax_t = fig.axes[0]
    labels = ax_t.get_legend_handles_labels()[1]
    off = [lab for lab in labels if lab.startswith("off scale")]
    assert off == ["off scale: 1 interval above the axis (up to 6000 ms)"]
    assert ax_t.get_ylim()[1] < 6000.0


def test_plot_command_diagnostic_and_trend(tmp_path):
    from rrkit.cli import main
    from rrkit.io import write_rr
    from rrkit.simulate import simulate_rr

    rr_file = tmp_path / "morning.txt"
    write_rr(rr_file, simulate_rr(duration_s=365, seed=2))
    out = tmp_path / "diag.png"
    assert main(["plot", str(rr_file), "--window", "start:60+300", "-o", str(out)]) == 0
    assert_png(out, min_px=(600, 900))
    daily_csv = tmp_path / "daily.csv"
    _daily().to_csv(daily_csv, index=False)
    assert main(["plot", str(daily_csv), "--kind", "trend", "--subject", "C3",
                 "-o", str(tmp_path / "t.png")]) == 0
    assert_png(tmp_path / "t.png")
    assert main(["plot", str(daily_csv), "--kind", "overview"]) == 0
    assert_png(tmp_path / "daily_overview.png")
    # several subjects and no --subject: a one-line error naming the choices
    assert main(["plot", str(daily_csv), "--kind", "trend"]) == 2


def test_diagnostic_caution_wording_follows_the_evidence():
    """The premature-beat caution reads firm where premature beats make up the artifacts, and
    'may be noise' where they are a minority of a flagged window's artifacts; both defer to a
    clinician (rrkit does not diagnose)."""
    from rrkit.simulate import inject_artifacts, simulate_rr

    rec = simulate_rr(duration_s=360, seed=5)
    pvc, _ = inject_artifacts(rec, counts={"ectopic": 12}, seed=3)  # ~120 per hour, nothing else
    firm = recording_diagnostic(rrkit.clean(pvc))._suptitle.get_text()
    assert "caution: frequent premature beats" in firm
    noisy_rec, _ = inject_artifacts(rec, counts={"ectopic": 4, "missed": 12, "extra": 12},
                                    seed=3)
    noisy = rrkit.clean(noisy_rec)
    assert noisy.summary.caution  # the artifact stage still attaches its caution
    assert noisy.summary.quality == "flagged"
    soft = recording_diagnostic(noisy)._suptitle.get_text()
    assert "may be noise" in soft
    assert "clinician" in soft
    assert "does not diagnose" in soft


def test_plot_command_points_a_daily_table_to_its_kinds(tmp_path, capsys):
    from rrkit.cli import main

    daily_csv = tmp_path / "daily.csv"
    _daily().to_csv(daily_csv, index=False)
    assert main(["plot", str(daily_csv), "-o", str(tmp_path / "d.png")]) == 2
    err = capsys.readouterr().err
    assert "is a daily table, not a recording" in err
    assert "--kind trend --subject" in err
    assert not (tmp_path / "d.png").exists()


def test_plot_trend_of_a_foreign_table_is_one_line(tmp_path, capsys):
    from rrkit.cli import main

    other = tmp_path / "other.csv"
    other.write_text("a,b\n1,2\n")
    assert main(["plot", str(other), "--kind", "trend", "-o", str(tmp_path / "t.png")]) == 2
    err = capsys.readouterr().err
    assert "the daily table lacks the column(s) ['subject'" in err
    assert "Traceback" not in err
