"""`rrkit agree` end to end, and the Bland-Altman figure files."""

from __future__ import annotations

from datetime import datetime
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd
import pytest

from rrkit import agreement
from rrkit.cli import main
from rrkit.io import write_rr
from rrkit.simulate import simulate_night, simulate_wearable_reports

ZONE = ZoneInfo("Europe/Berlin")


@pytest.fixture(scope="module")
def night_folder(tmp_path_factory):
    """3 subjects x 2 nights of 2 h as RR text files + a manifest, and a wearable's table."""
    root = tmp_path_factory.mktemp("agree")
    folder = root / "nights"
    folder.mkdir()
    rows = ["path,subject,start\n"]
    nights = []
    for s in range(3):
        for d in range(2):
            start = datetime(2026, 3, 28 + d, 23, 15, tzinfo=ZONE)  # across the DST change
            night = simulate_night(duration_h=2, seed=50 + 10 * s + d, start=start,
                                   subject=f"R{s}")
            name = f"R{s}_{start:%Y%m%d}.txt"
            write_rr(folder / name, night)
            rows.append(f"{name},R{s},{start.replace(tzinfo=None).isoformat()}\n")
            nights.append(night)
    (folder / "manifest.csv").write_text("".join(rows), encoding="ascii")
    # the wearable: the last hour, 5 ms high, 0.5 ms noise (known truth)
    reported = simulate_wearable_reports(nights, definition="last-1h", bias=5.0, noise_sd=0.5,
                                         seed=9)
    reported.to_csv(root / "reported.csv", index=False)
    return root


def test_agree_with_a_given_definition(night_folder, tmp_path, capsys):
    out = tmp_path / "out"
    rc = main(["agree", "--reported", str(night_folder / "reported.csv"), "--recordings",
               str(night_folder / "nights"), "--definition", "last-1h", "--tz", "Europe/Berlin",
               "--no-progress", "-o", str(out)])
    assert rc == 0
    printed = capsys.readouterr().out
    assert "Reference: last-1h" in printed
    stats = pd.read_csv(out / "agreement_stats.csv").set_index("statistic")
    # known truth of the simulation: bias 5 ms inside its CI, SD of differences near 0.5 ms
    assert stats.loc["bias", "ci_low"] < 5.0 < stats.loc["bias", "ci_high"]
    assert int(stats.loc["n", "estimate"]) == 6
    assert (out / "bland_altman.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert b"<svg" in (out / "bland_altman.svg").read_bytes()[:400]
    assert "limits of agreement" in (out / "agreement_summary.txt").read_text(encoding="utf-8")
    # subjects in the figure only when asked: the two PNGs differ (markers and a legend)
    plain = (out / "bland_altman.png").read_bytes()
    out2 = tmp_path / "out2"
    assert main(["agree", "--reported", str(night_folder / "reported.csv"), "--recordings",
                 str(night_folder / "nights"), "--definition", "last-1h", "--tz",
                 "Europe/Berlin", "--no-progress", "--by-subject", "-o", str(out2)]) == 0
    capsys.readouterr()
    assert (out2 / "bland_altman.png").read_bytes() != plain
    pairs = pd.read_csv(out / "agreement_pairs.csv")
    assert set(pairs["subject"]) == {"R0", "R1", "R2"}
    # nothing half-written left behind (temporary files start with a dot)
    assert not [p for p in out.iterdir() if p.name.startswith(".")]


def test_agree_search_ranks_the_hidden_definition(night_folder, tmp_path):
    out = tmp_path / "out"
    rc = main(["agree", "--reported", str(night_folder / "reported.csv"), "--recordings",
               str(night_folder / "nights"), "--search", "--tz", "Europe/Berlin",
               "--no-progress", "-o", str(out)])
    assert rc == 0
    table = pd.read_csv(out / "definition_search.csv")
    assert table.loc[0, "definition"] == "last-1h"
    assert table.loc[0, "rank"] == 1
    assert "Closest: last-1h" in (out / "agreement_summary.txt").read_text(encoding="utf-8")


def test_agree_reports_unusable_files_and_goes_on(night_folder, tmp_path, capsys):
    folder = tmp_path / "nights"
    folder.mkdir()
    for p in (night_folder / "nights").iterdir():
        (folder / p.name).write_bytes(p.read_bytes())
    (folder / "R9_20260330.txt").write_text("800\nabc\n", encoding="ascii")
    with (folder / "manifest.csv").open("a", encoding="ascii") as fh:
        fh.write("R9_20260330.txt,R9,2026-03-30T23:00:00\n")
    out = tmp_path / "out"
    rc = main(["agree", "--reported", str(night_folder / "reported.csv"), "--recordings",
               str(folder), "--tz", "Europe/Berlin", "--no-progress", "-o", str(out)])
    assert rc == 1
    errors = pd.read_csv(out / "errors.csv")
    assert errors["path"].tolist() == ["R9_20260330.txt"]
    assert "skipped R9_20260330.txt" in capsys.readouterr().err


def test_agree_bad_input_is_one_line(night_folder, tmp_path, capsys):
    bad = tmp_path / "reported.csv"
    bad.write_text("subject,date,rmssd\nR0,2026-03-29,40\n", encoding="ascii")
    rc = main(["agree", "--reported", str(bad), "--recordings", str(night_folder / "nights"),
               "-o", str(tmp_path / "out")])
    assert rc == 2
    err = capsys.readouterr().err
    assert "rrkit: error:" in err
    assert "missing column(s) ['rmssd_ms']" in err
    rc = main(["agree", "--reported", str(night_folder / "reported.csv"), "--recordings",
               str(night_folder / "nights"), "--definition", "tiles5", "-o",
               str(tmp_path / "out")])
    assert rc == 2
    err = capsys.readouterr().err
    assert "did you mean 'tiles-5min'" in err
    assert "--definition must be one of" in err  # the option as typed
    rc = main(["agree", "--reported", str(night_folder / "reported.csv"), "--recordings",
               str(night_folder / "nights"), "--clean", "mud", "-o", str(tmp_path / "out")])
    assert rc == 2
    assert "--clean must be one of" in capsys.readouterr().err


def test_plot_returns_figure_with_expected_lines(tmp_path):
    # peak-flow data of Bland & Altman 1986 (REFERENCES.md section 6)
    a = [494, 395, 516, 434, 476, 557, 413, 442, 650, 433, 417, 656, 267, 478, 178, 423, 427]
    b = [512, 430, 520, 428, 500, 600, 364, 380, 658, 445, 432, 626, 260, 477, 259, 350, 451]
    res = agreement(a, b, unit="l/min", metric="peak flow")
    fig = res.plot(tmp_path / "ba.png")
    ax = fig.axes[0]
    levels = sorted(round(line.get_ydata()[0], 3) for line in ax.get_lines())
    # zero line, lower limit, bias, upper limit (no proportional-bias line: p = 0.75)
    assert levels == sorted([0.0, round(res.stats["loa_low"], 3), round(res.stats["bias"], 3),
                             round(res.stats["loa_high"], 3)])
    assert "(l/min)" in ax.get_ylabel()
    # the lines are one ink, told apart by dash style: solid bias, dashed limits
    styles = {round(line.get_ydata()[0], 3): line.get_linestyle() for line in ax.get_lines()}
    assert styles[round(res.stats["bias"], 3)] == "-"
    assert styles[round(res.stats["loa_high"], 3)] == styles[round(res.stats["loa_low"], 3)] == "--"
    assert len({line.get_color() for line in ax.get_lines() if line.get_ydata()[0] != 0}) == 1
    # each line is named in words, with its unit and confidence interval (computed here from
    # the stats: limits of the peak-flow data -78.1 and 73.9, REFERENCES.md section 6)
    texts = [t.get_text() for t in ax.texts]
    s = res.stats
    assert (f"upper limit of agreement {s['loa_high']:.0f} l/min "
            f"({s['loa_high_ci_low']:.0f} to {s['loa_high_ci_high']:.0f})") in texts
    assert f"lower limit of agreement {s['loa_low']:.0f} l/min" in " ".join(texts)
    assert any(t.startswith("bias -2 l/min (") for t in texts)
    # the intervals are brackets in the right margin (outside the data), not full-width bands
    assert not [p for p in ax.patches if p.get_width() > 0.5]
    brackets = next(c for c in ax.collections if c.get_label() == "_confidence brackets")
    segs = brackets.get_segments()
    assert len(segs) == 12  # 3 lines x (bracket, two caps, tick to the line)
    spans = sorted(round(abs(seg[1][1] - seg[0][1]), 6) for seg in segs if seg[0][0] == seg[1][0])
    want = sorted(round(s[f"{k}_ci_high"] - s[f"{k}_ci_low"], 6) for k in ("loa_low", "bias",
                                                                           "loa_high"))
    assert spans == want
    assert all(seg[0][0] >= 1.0 for seg in segs)  # axes fraction: right of the plot area
    # one marker for every pair unless subjects are asked for
    assert ax.get_legend() is None
    assert (tmp_path / "ba.png").stat().st_size > 10_000
    with pytest.raises(ValueError, match=r"must end in .png, .svg or .pdf"):
        res.plot(tmp_path / "ba.jpeg")


def test_plot_draws_proportional_bias_when_significant(rng, tmp_path):
    ref = rng.uniform(20, 120, 40)
    rep = 1.2 * ref + rng.normal(0, 2, 40)
    res = agreement(rep, ref, subject=np.repeat(["a", "b", "c", "d"], 10), metric="rmssd_ms")
    fig = res.plot(tmp_path / "ba.svg", subjects=True)
    styles = [line.get_linestyle() for line in fig.axes[0].get_lines()]
    assert ":" in styles
    legend = [t.get_text() for t in fig.axes[0].get_legend().get_texts()]
    assert legend[:4] == ["a", "b", "c", "d"]
