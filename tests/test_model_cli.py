"""`rrkit model` end to end: on a reduced demo squad (the planted relations are found), and every
bad request gives one line and exit status 2."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from test_plots import assert_png  # tests/ is on sys.path (pytest rootdir import mode)

from rrkit.cli import main
from rrkit.simulate import _squad_log, squad


@pytest.fixture(scope="module")
def season(tmp_path_factory):
    """5 athletes x 4 weeks of the demo squad, through `rrkit daily`."""
    root = tmp_path_factory.mktemp("model_season")
    data = root / "data"
    squad.generate_squad(data, settings=squad.SquadSettings(n_athletes=5, n_weeks=4,
                                                             nights=False))
    rc = main(["daily", str(data / "mornings"), "--manifest",
               str(data / "mornings" / "manifest.csv"), "--tz", "Europe/Berlin", "-o",
               str(root / "season"), "--jobs", "1"])
    assert rc in (0, 1)  # 1: the squad's deliberately broken files
    return data, root / "season" / "daily.csv"


def test_model_on_the_demo_squad_finds_the_planted_relations(season, tmp_path, capsys):
    data, daily = season
    out = tmp_path / "out"
    rc = main(["model", str(daily), "--covariates", str(data / "training_load.csv"),
               "--covariates", str(data / "daily_log.csv"), "--adjust", "sleep_h",
               "--candidates", "load_au_lag1,body_mass_kg", "-o", str(out)])
    text = capsys.readouterr().out
    assert rc == 0
    assert text.startswith("ln_rmssd ~ sleep_h_within + sleep_h_between   [squad, ok days]")
    assert "ln-RMSSD that morning changes by +" in text  # within: more sleep, higher (planted)
    assert "per 0.5 h of that day's sleep, within athletes [mixed" in text
    assert "associations in observational data, not causes" in text
    assert "decisions rest with qualified staff" in text
    coef = pd.read_csv(out / "coefficients.csv")
    w = coef[(coef["model"] == "mixed") & (coef["term"] == "sleep_h_within")].iloc[0]
    assert w["ci_low"] > 0
    assert w["n_athletes"] == 5
    scr = pd.read_csv(out / "screening.csv")
    assert list(scr["candidate"]) == ["load_au_lag1", "body_mass_kg"]
    assert scr["q"].notna().all()
    model = json.loads((out / "model.json").read_text())
    assert model["settings"]["by"] == "squad"
    for png in ("coefficients.png", "partial_effect.png"):
        assert_png(out / png)
    # the previous day's load and the wellness score, within athletes (planted -1.5 / 500 AU)
    rc = main(["model", str(daily), "--covariates", str(data / "training_load.csv"),
               "--covariates", str(data / "daily_log.csv"), "--outcome", "wellness_pts",
               "--adjust", "load_au_lag1,sleep_h", "-o", str(tmp_path / "w")])
    assert rc == 0
    coef = pd.read_csv(tmp_path / "w" / "coefficients.csv").set_index(["model", "term"])
    est = coef.loc[("mixed", "load_au_lag1_within")]
    truth = _squad_log.WELLNESS_PER_500AU / 500
    assert est["ci_low"] <= truth <= est["ci_high"]


def test_n_of_1_model_prints_hac_and_diagnostics(season, tmp_path, capsys):
    data, daily = season
    rc = main(["model", str(daily), "--covariates", str(data / "training_load.csv"),
               "--subject", "R02", "--adjust", "load_au_lag1", "-o", str(tmp_path / "r02")])
    text = capsys.readouterr().out
    assert rc == 0
    assert "R02: ln-RMSSD next morning changes by" in text
    assert "per 500 AU of the previous day's load [ols_hac" in text
    assert "Durbin-Watson" in text
    assert "Ljung-Box" in text
    assert "HAC 2 lags" in text  # floor(4 (n/100)^(2/9)) for about 27 days
    coef = pd.read_csv(tmp_path / "r02" / "coefficients.csv")
    assert set(coef["subject"]) == {"R02"}
    assert coef["se_type"].str.startswith("HAC (Newey-West)").all()
    assert np.isfinite(coef["per_within_sd"].iloc[1])


def test_help_explains_the_options(capsys):
    assert main(["model", "--help"]) == 0
    text = capsys.readouterr().out
    for word in ("--covariates", "--outcome", "--adjust", "--candidates", "--by",
                 "--random-slope", "_lag<k>", "_within", "not causes"):
        assert word in text, word


def _bad(args, capsys) -> str:
    rc = main(args)
    err = capsys.readouterr().err
    assert rc == 2
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1, err
    assert "Traceback" not in err
    return lines[0]


@pytest.mark.parametrize(("extra", "message"), [
    (["--adjust", "sleep_hours"], r"rrkit: error: unknown term 'sleep_hours': 'sleep_hours' is "
                                  r"not a column of the daily table or the covariates"),
    (["--outcome", "hrv", "--adjust", "load_au"], r"unknown outcome 'hrv'"),
    (["--adjust", "flat_au"], r"term 'flat_au' has no variance in the \d+ days used by subject"),
    (["--adjust", "load_au,load_au_lag1,load_au_lag2,load_au_lag3,load_au_sum2,load_au_sum3,"
                  "load_au_mean4,load_au_lag4"],
     r"complete days for 9 parameters .* a model needs more days than parameters"),
    ([], r"give the model's terms with --adjust"),
    (["--adjust", "load_au", "--random-slope", "load_au"],
     r"a random slope needs the squad model"),
    (["--adjust", "load_au", "--random-slope", "sleep_h"],
     r"random slope 'sleep_h' is not a term of the model \(load_au\)"),
])
def test_bad_requests(tmp_path, capsys, extra, message):
    import datetime as dt

    days = [dt.date(2026, 1, 1) + dt.timedelta(days=i) for i in range(9)]
    daily = tmp_path / "daily.csv"
    pd.DataFrame({"subject": ["A"] * 9, "date": days,
                  "ln_rmssd": [4.1, 4.0, 4.3, 4.2, 4.4, 4.0, 4.2, 4.1, 4.3],
                  "quality": "ok"}).to_csv(daily, index=False)
    cov = tmp_path / "load.csv"
    pd.DataFrame({"subject": ["A"] * 9, "date": days, "load_au": [300, 500, 0, 650, 420, 380,
                                                                  0, 510, 450],
                  "flat_au": 5}).to_csv(cov, index=False)
    line = _bad(["model", str(daily), "--covariates", str(cov), *extra, "-o",
                 str(tmp_path / "o")], capsys)
    import re

    assert re.search(message, line), line


def test_bad_files(tmp_path, capsys):
    daily = tmp_path / "daily.csv"
    daily.write_text("subject,date,ln_rmssd\nA,2026-01-01,4.0\n")
    line = _bad(["model", str(tmp_path / "none.csv"), "--adjust", "x", "-o", str(tmp_path)],
                capsys)
    assert "daily table not found" in line
    bad = tmp_path / "cov.csv"
    bad.write_text("subject,date,load_au\nA,2026-01-01,heavy\n")
    line = _bad(["model", str(daily), "--covariates", str(bad), "--adjust", "load_au", "-o",
                 str(tmp_path / "o")], capsys)
    assert line == (f"rrkit: error: {bad}, line 2: column 'load_au': 'heavy' is not a number "
                    "(leave the cell empty (or NA) for a day without a value)")
