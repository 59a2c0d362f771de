"""rrkit.covariates: reading (wide, long, Parquet, units), validation messages, the join by
calendar date and the derived terms (against slow obvious loops)."""

from __future__ import annotations

import datetime as dt

import numpy as np
import pandas as pd
import pytest

from rrkit import InputError
from rrkit import covariates as cov


def _write(path, text):
    path.write_text(text, encoding="utf-8")
    return path


def test_read_wide_with_units_from_names(tmp_path):
    p = _write(tmp_path / "c.csv", "subject,date,load_au,sleep_h,mood\n"
               "A,2026-01-02,300,7.5,3\nA,2026-01-01,250,,4\nB,2026-01-01,0,8.25,NA\n")
    c = cov.read(p)
    assert c.variables == ["load_au", "sleep_h", "mood"]
    assert c.units == {"load_au": "AU", "sleep_h": "h", "mood": ""}
    t = c.table
    assert list(t["subject"]) == ["A", "A", "B"]  # sorted by subject and date
    assert t["date"].iloc[0] == dt.date(2026, 1, 1)
    assert np.isnan(t["sleep_h"].iloc[0])
    assert np.isnan(t["mood"].iloc[2])


def test_read_long_and_units_side_table_and_parquet(tmp_path):
    p = _write(tmp_path / "long.csv", "subject,date,variable,value,unit\n"
               "A,2026-01-01,load,250,AU\nA,2026-01-01,mass,80.5,kg\nA,2026-01-02,load,300,AU\n")
    c = cov.read(p)
    assert c.variables == ["load", "mass"]
    assert c.units == {"load": "AU", "mass": "kg"}
    assert np.isnan(c.table["mass"].iloc[1])
    u = _write(tmp_path / "units.csv", "variable,unit\nload,sRPE AU\n")
    assert cov.read(p, units=u).units["load"] == "sRPE AU"
    pq = tmp_path / "c.parquet"
    c.table.assign(date=pd.to_datetime(c.table["date"])).to_parquet(pq)
    back = cov.read(pq)
    pd.testing.assert_frame_equal(back.table, c.table)


@pytest.mark.parametrize(("text", "message"), [
    ("subject,date,load_au\nA,2026-01-01,1\nA,2026-01-01,2\n",
     r"c\.csv, line 3: columns 'subject, date': A 2026-01-01 appears twice \(lines 2 and 3\)"),
    ("subject,date,load_au\nA,2026-01-01,1\nA,2026-01-02,heavy\n",
     r"c\.csv, line 3: column 'load_au': 'heavy' is not a number"),
    ("subject,date,load_au\nA,01/02/2026,1\n",
     r"c\.csv, line 2: column 'date': '01/02/2026' is not an ISO 8601 date"),
    ("athlete,date,load_au\nA,2026-01-01,1\n",
     r"c\.csv: a covariate table needs the key columns 'subject' and 'date'"),
    ("subject,date,load_lag1\nA,2026-01-01,1\n",
     r"column 'load_lag1': a variable name must be a formula identifier"),
    ("subject,date,variable,value\nA,2026-01-01,x,1\nA,2026-01-01,x,2\n",
     r"line 3: columns 'subject, date, variable': A 2026-01-01 'x' appears twice"),
    ("subject,date,load_au\nA,2026-01-01,inf\n",
     r"line 2: column 'load_au': 'inf' is not a finite"),
])
def test_validation_names_file_line_and_column(tmp_path, text, message):
    p = _write(tmp_path / "c.csv", text)
    with pytest.raises(InputError, match=message):
        cov.read(p)


def test_dates_outside_the_season(tmp_path):
    p = _write(tmp_path / "c.csv", "subject,date,load_au\nA,2026-01-01,1\nA,2026-05-01,2\n")
    with pytest.raises(InputError, match=r"line 3: column 'date': 2026-05-01 is outside the "
                                         r"season 2026-01-01 to 2026-03-31"):
        cov.read(p, season=("2026-01-01", "2026-03-31"))


def test_missing_file_and_bad_type(tmp_path):
    with pytest.raises(InputError, match="no such covariate file"):
        cov.read(tmp_path / "nope.csv")
    with pytest.raises(InputError, match=r"unknown covariate file type '\.xlsx'"):
        cov.read(_write(tmp_path / "c.xlsx", "x"))


# ---------------------------------------------------------------------------- derived terms
def _calendar(values, start=dt.date(2026, 1, 1), skip=()):
    rows = []
    for i, v in enumerate(values):
        if i in skip:
            continue
        rows.append({"subject": "A", "date": start + dt.timedelta(days=i), "load_au": v})
    return pd.DataFrame(rows)


def test_lag_and_rolling_follow_the_calendar_not_the_rows():
    t = _calendar([100.0, 200, 300, 400, 500], skip={2})  # day 3 has no row
    out = cov.add_terms(t, ["load_au_lag1", "load_au_sum2", "load_au_mean2"])
    # rows are days 1, 2, 4, 5: the lag of day 4 is day 3 (missing), not day 2
    np.testing.assert_array_equal(out["load_au_lag1"], [np.nan, 100, np.nan, 400])
    np.testing.assert_array_equal(out["load_au_sum2"], [np.nan, 300, np.nan, 900])
    np.testing.assert_array_equal(out["load_au_mean2"], [np.nan, 150, np.nan, 450])


def test_ewma_and_ratio_against_a_slow_loop():
    rng = np.random.default_rng(2)
    x = rng.uniform(0, 900, 60)
    out = cov.add_terms(_calendar(x), ["load_au_ewma7", "load_au_ewma28", "load_au_acwr"])

    def slow(n):  # lambda = 2 / (N + 1), started at the first value (Williams et al. 2017)
        lam, e, res = 2 / (n + 1), x[0], []
        for v in x:
            e = lam * v + (1 - lam) * e
            res.append(e)
        return np.array(res)

    np.testing.assert_allclose(out["load_au_ewma7"], slow(7), rtol=1e-12)
    np.testing.assert_allclose(out["load_au_ewma28"], slow(28), rtol=1e-12)
    np.testing.assert_allclose(out["load_au_acwr"], slow(7) / slow(28), rtol=1e-12)


def test_within_and_between_centring():
    t = pd.DataFrame({"subject": ["A", "A", "B", "B"], "date": ["2026-01-01", "2026-01-02"] * 2,
                      "x": [1.0, 3.0, 10.0, 14.0]})
    out = cov.add_terms(t, ["x_within", "x_between"])
    np.testing.assert_array_equal(out["x_within"], [-1, 1, -2, 2])
    # athlete means 2 and 12, centred on their mean 7
    np.testing.assert_array_equal(out["x_between"], [-5, -5, 5, 5])


def test_parse_term_and_bad_chains():
    assert cov.parse_term("load_au_ewma7") == ("load_au", [("ewma", 7)])
    assert cov.parse_term("load_au_sum7_lag1_within") == ("load_au", [("sum", 7), ("lag", 1),
                                                                      ("within", None)])
    t = _calendar([1.0, 2.0])
    with pytest.raises(InputError, match="_within or _between can only end a term name"):
        cov.add_terms(t, ["load_au_within_lag1"])
    with pytest.raises(InputError, match="_sum needs a window of at least 1 day"):
        cov.add_terms(t, ["load_au_sum0"])
    with pytest.raises(InputError, match=r"term 'mass_kg_lag1': 'mass_kg' is not a column"):
        cov.add_terms(t, ["mass_kg_lag1"])


def test_term_label():
    assert cov.term_label("load_au_lag1", {"load_au": "AU"}) == ("the previous day's load", "AU")
    assert cov.term_label("sleep_h") == ("that day's sleep", "h")
    assert cov.term_label("load_au_acwr")[1] == ""


# ------------------------------------------------------------------------------------ join
def test_join_by_calendar_date_with_the_previous_days_load(tmp_path):
    # the daily table dates a morning; the covariate file reaches back one day before it
    daily = pd.DataFrame({"subject": ["A", "A", "B"], "date": ["2026-01-02", "2026-01-03",
                                                               "2026-01-02"],
                          "ln_rmssd": [4.1, 4.0, 4.3], "quality": "ok"})
    p = _write(tmp_path / "load.csv", "date,subject,load_au\n2026-01-01,A,500\n"
               "2026-01-02,A,0\n2026-01-03,A,250\n2026-01-01,B,100\n")
    c = cov.read(p)
    out = cov.join(daily, c, terms=["load_au_lag1", "load_au_lag1_within"])
    assert list(out.index) == list(daily.index)
    np.testing.assert_array_equal(out["load_au"], [0, 250, np.nan])
    np.testing.assert_array_equal(out["load_au_lag1"], [500, 0, 100])
    assert "load_au_lag1_within" not in out.columns  # centring is the model's, on its days


def test_join_refuses_a_name_clash(tmp_path):
    daily = pd.DataFrame({"subject": ["A"], "date": ["2026-01-02"], "ln_rmssd": [4.0]})
    c = cov.read(_write(tmp_path / "c.csv", "subject,date,ln_rmssd\nA,2026-01-02,1\n"))
    with pytest.raises(InputError, match=r"covariate column\(s\) \['ln_rmssd'\] also exist"):
        cov.join(daily, c)
