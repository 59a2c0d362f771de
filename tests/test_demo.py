"""`rrkit demo` end to end: on a reduced squad (every output), and on the committed full squad
(the scenario's effects are found)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from test_plots import assert_png  # tests/ is on sys.path (pytest rootdir import mode)

from rrkit import InputError
from rrkit.cli import main
from rrkit.simulate import squad
from rrkit.simulate._squad_nights import WEARABLE

REPO = Path(__file__).resolve().parents[1]
SAMPLES = REPO / "data_samples"


@pytest.fixture(scope="module")
def small_run(tmp_path_factory):
    """3 athletes x 3 weeks, made by the same generator, run through `rrkit demo`."""
    root = tmp_path_factory.mktemp("demo_small")
    data = root / "data"
    squad.generate_squad(data, settings=squad.SquadSettings(n_athletes=3, n_weeks=3))
    out = root / "out"
    rc = main(["demo", str(out), "--data", str(data), "--jobs", "1", "--quiet"])
    return rc, data, out


def test_small_demo_writes_every_output(small_run):
    rc, _data, out = small_run
    assert rc == 0
    daily = pd.read_csv(out / "daily" / "daily.csv")
    assert sorted(daily["subject"].unique()) == ["R01", "R02", "R03"]
    assert len(daily) == 3 * 21  # every subject gets every date, missing days included
    assert {"ln_rmssd_7d", "ln_rmssd_swc_low", "below_swc"} <= set(daily.columns)
    assert (out / "daily" / "store.h5").stat().st_size > 10_000
    assert (out / "daily" / "errors.csv").is_file()
    assert (out / "lab" / "lab_segments.csv").is_file()
    # the agreement files carry the names `rrkit agree --search` gives them
    from rrkit.cli._agree import OUTPUTS

    for key in ("search", "stats", "pairs", "reference", "summary", "png"):
        assert (out / "agreement" / OUTPUTS[key]).is_file(), OUTPUTS[key]
    assert_png(out / "agreement" / OUTPUTS["png"])
    figs = sorted((out / "figures").glob("*.png"))
    names = {p.name for p in figs}
    assert {"squad_overview.png", "trend_R01.png", "trend_R02.png", "trend_R03.png"} <= names
    assert any(n.startswith("diagnostic_") for n in names)
    for p in figs:
        assert_png(p)
    text = (out / "summary.txt").read_text()
    assert "simulation, not real people" in text
    assert "not a medical device" in text
    assert (out / "report.html").is_file()  # the squad page (tests/test_report.py)
    assert str(out / "report.html") in text


def test_small_demo_lists_the_failed_file(small_run):
    _rc, _data, out = small_run
    errors = pd.read_csv(out / "daily" / "errors.csv")
    # R02's day-9 morning is an error page saved instead of data (the squad's story)
    assert errors["path"].str.startswith("R02/R02_20260114").any()
    text = (out / "summary.txt").read_text()
    assert "no numbers found" in text


def test_demo_finds_the_checkout_data(monkeypatch, tmp_path):
    if not (SAMPLES / "squad.json").is_file():
        pytest.skip(f"committed demo data not found: {SAMPLES}")
    from rrkit.cli._demo import find_data

    monkeypatch.chdir(REPO / "docs")  # a parent folder holds data_samples/
    assert find_data(None) == SAMPLES


def test_demo_data_folder_must_be_a_squad(tmp_path):
    from rrkit.cli._demo import find_data

    with pytest.raises(InputError, match="is not a demo data folder"):
        find_data(tmp_path)
    assert main(["demo", str(tmp_path / "o"), "--data", str(tmp_path)]) == 2


# ------------------------------------------------------------------ full committed squad
@pytest.fixture(scope="module")
def full_run(tmp_path_factory):
    if not (SAMPLES / "squad.json").is_file():
        pytest.skip(f"committed demo data not found: {SAMPLES}")
    out = tmp_path_factory.mktemp("demo_full") / "out"
    rc = main(["demo", str(out), "--data", str(SAMPLES), "--quiet"])
    return rc, out


def test_altitude_camp_puts_most_athletes_below_band(full_run):
    rc, out = full_run
    assert rc == 0
    daily = pd.read_csv(out / "daily" / "daily.csv", parse_dates=["date"])
    # second week of the camp (weeks 6-7 are 9-22 February 2026 in the squad's calendar)
    camp = daily[(daily["date"] >= "2026-02-16") & (daily["date"] <= "2026-02-22")]
    share = camp.groupby("subject")["below_swc"].mean()
    assert (share > 0.5).sum() >= 6, share
    # ... and raises resting heart rate above its band for most of them
    hr_share = camp.groupby("subject")["hr_above_swc"].mean()
    assert (hr_share > 0.5).sum() >= 6, hr_share
    # the two athletes the story makes non-responders stay mostly inside their band
    assert share[["R02", "R07"]].max() < 0.5
    # the baseline weeks are mostly inside the band where it is defined: with the baseline
    # ending 7 days before each date (the default lag) it needs 14 ok days by then, so only
    # the phase's last week has a band, resting on about two weeks. A 7-day mean of
    # independent days has an SD of SD/sqrt(7) = 0.38 SD, and a 14-day baseline mean one of
    # 0.27 SD, so a steady athlete falls below mean - 0.5 SD by chance on about 1 day in 7
    # (normal tail at -0.5 / sqrt(0.38^2 + 0.27^2) = -1.08 SD: 14 %): allow up to a third.
    base = daily[(daily["date"] >= "2026-01-19") & (daily["date"] <= "2026-02-01")]
    defined = base["below_swc"].dropna().astype(bool)
    assert len(defined) >= 40
    assert defined.mean() < 1 / 3


def test_frequent_ectopy_athlete_gets_the_caution(full_run):
    _rc, out = full_run
    text = (out / "summary.txt").read_text()
    cautions = [ln for ln in text.splitlines() if ln.startswith("CAUTION")]
    assert len(cautions) == 1
    assert cautions[0].startswith("CAUTION R05")
    assert "belong with a clinician" in text


def test_failing_files_listed_with_reasons(full_run):
    _rc, out = full_run
    errors = pd.read_csv(out / "daily" / "errors.csv")
    got = dict(zip(errors["path"].str.split("/").str[0], errors["message"], strict=True))
    assert set(got) == {"R01", "R02", "R06", "R07"}
    assert "expected a number" in got["R01"]        # a corrupted value, with its line
    assert "line 162" in got["R01"] or "line" in got["R01"]
    assert "no numbers found" in got["R02"]          # an error page instead of data
    assert "damaged gzip" in got["R06"]              # an upload cut off half way
    assert "empty" in got["R07"]
    text = (out / "summary.txt").read_text()
    for subject in got:
        assert f"{subject}/{subject}_" in text
    # the 40-s recording is read but rejected, with the reason
    daily = pd.read_csv(out / "daily" / "daily.csv")
    rej = daily[daily["quality"] == "rejected"]
    assert (rej["subject"] == "R03").any()
    assert rej["quality_reason"].str.contains("covers").any()


def test_agreement_search_finds_the_hidden_definition(full_run):
    _rc, out = full_run
    table = pd.read_csv(out / "agreement" / "definition_search.csv")
    assert str(table.iloc[0]["definition"]) == WEARABLE["definition"]
    text = (out / "summary.txt").read_text()
    assert f"closest definition {WEARABLE['definition']!r}" in text
    assert np.isfinite(table.iloc[0].filter(like="bias").astype(float)).all()


def test_demo_figure_names_never_leave_the_figure_folder(small_run, tmp_path):
    """A subject id taken from a manifest or file name becomes one safe file-name component
    (no ``..``, no separators), as for the store's group names (rrkit.batch.safe_name)."""
    from types import SimpleNamespace

    from rrkit.batch import safe_name
    from rrkit.cli._demo import _figures

    _rc, data, out = small_run
    table = pd.read_csv(out / "daily" / "daily.csv", parse_dates=["date"])
    table["date"] = table["date"].dt.date
    hostile = "../../escaped"
    table = table[table["subject"] == "R01"].assign(subject=hostile)
    run = SimpleNamespace(table=table, recordings=pd.DataFrame())
    dest = tmp_path / "deep" / "out"
    written = _figures(data, dest, run, load=None, meta={}, ectopy={}, agree=None,
                       note=lambda _t: None)
    fig_dir = (dest / "figures").resolve()
    for p in written:
        assert Path(p).resolve().parent == fig_dir, p
    assert (fig_dir / f"trend_{safe_name(hostile)}.png").is_file()
    assert not (tmp_path / "escaped.png").exists()
    assert not list(tmp_path.glob("trend_*"))
    assert not list((tmp_path / "deep").glob("*.png"))


def test_demo_lab_table_is_spreadsheet_safe(small_run, tmp_path):
    """The lab step takes the subject from the file name (outside text): a name that a
    spreadsheet would run as a formula is written as text (CSV injection, OWASP)."""
    import shutil

    from rrkit.cli._demo import _lab

    _rc, data, _out = small_run
    src = sorted((data / "lab").glob("*_events.csv"))[0]
    rec = src.with_name(src.name.replace("_events.csv", ".csv"))
    folder = tmp_path / "data"
    (folder / "lab").mkdir(parents=True)
    shutil.copy(rec, folder / "lab" / "=cmd_lab.csv")
    shutil.copy(src, folder / "lab" / "=cmd_lab_events.csv")
    lab = _lab(folder, tmp_path / "out")
    assert set(lab["subject"]) == {"=cmd"}  # the table in memory keeps the value
    written = pd.read_csv(tmp_path / "out" / "lab" / "lab_segments.csv")
    assert set(written["subject"]) == {"'=cmd"}
    assert pd.api.types.is_float_dtype(written["rmssd_ms"])


def test_demo_modelling_step_shows_within_between_and_pooled(full_run):
    """The planted within-athlete sleep slope is recovered, the between slope and the naive
    pooled slope are negative (rrkit/simulate/_squad_log.py plants them)."""
    from rrkit.simulate import _squad_log

    _rc, out = full_run
    text = (out / "summary.txt").read_text()
    assert "Modelling the season" in text
    parts = pd.read_csv(out / "model" / "within_between_pooled.csv")
    sleep = parts[parts["outcome"] == "ln_rmssd"].set_index("part")
    assert sleep.loc["within", "ci_low"] <= _squad_log.SLEEP_WITHIN_LN_PER_H \
        <= sleep.loc["within", "ci_high"]
    assert sleep.loc["between", "ci_high"] < 0
    assert sleep.loc["pooled", "estimate"] < 0  # the naive fit reads the wrong sign
    load = parts[parts["outcome"] == "wellness_pts"].set_index("part")
    truth = _squad_log.WELLNESS_PER_500AU / 500
    assert load.loc["within", "ci_low"] <= truth <= load.loc["within", "ci_high"]
    assert "wrong sign" in text
    assert "not causes" in text
    for png in ("coefficients.png", "partial_effect.png"):
        assert_png(out / "model" / png)
