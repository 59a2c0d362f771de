"""Quoted fields in text tables, split by the standard library's csv.reader.

The reference for every value is ``pandas.read_csv`` (the C reader) with the same separator and
decimal mark: a quoted decimal comma such as ``"812,5"`` is one number, as pandas reads it.
"""

from __future__ import annotations

import io

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from rrkit import InputError, read
from rrkit.io._text import load_table, parse_numbers


def _write(path, text: str):
    path.write_text(text, encoding="utf-8")
    return path


def test_quoted_decimal_commas_read_as_pandas_reads_them(tmp_path):
    text = ('"time_s","rr_ms"\n"0,0","812,5"\n"0,8125","790,25"\n"1,60275","805,0"\n'
            '"2,40775","821,75"\n')
    path = _write(tmp_path / "sheet.csv", text)
    rec = read(path)
    ref = pd.read_csv(io.StringIO(text), decimal=",")  # reference: pandas' C reader
    assert rec.info.column == "rr_ms"
    assert rec.info.extra["separator"] == "comma"
    assert rec.info.extra["decimal"] == ","
    np.testing.assert_array_equal(rec.rr_ms, ref["rr_ms"].to_numpy())
    table = load_table(path)
    assert table.names == list(ref.columns)
    np.testing.assert_array_equal(parse_numbers(table, 0), ref["time_s"].to_numpy())


def test_headerless_quoted_rows(tmp_path):
    text = '"0,0","812,5"\n"0,8125","790,25"\n"1,60275","805,0"\n"2,40775","821,75"\n'
    table = load_table(_write(tmp_path / "rows.csv", text))
    ref = pd.read_csv(io.StringIO(text), header=None, decimal=",")
    assert len(table.columns) == 2
    for k in range(2):
        np.testing.assert_array_equal(parse_numbers(table, k), ref[k].to_numpy())
    assert table.line_numbers.tolist() == [1, 2, 3, 4]


def test_one_quoted_column(tmp_path):
    text = '"812,5"\n"790,25"\n"805"\n"821,75"\n'
    rec = read(_write(tmp_path / "one.csv", text))
    ref = pd.read_csv(io.StringIO(text), header=None, decimal=",")
    np.testing.assert_array_equal(rec.rr_ms, ref[0].to_numpy())


def test_quoted_semicolons_and_escaped_quotes(tmp_path):
    # a separator inside quotes is text, "" is a quote inside a quoted field
    text = '"note";"rr_ms"\n"a;b";"812,5"\n"say ""hi""";"790"\n"c";"805"\n"d";"821"\n'
    table = load_table(_write(tmp_path / "notes.csv", text))
    ref = pd.read_csv(io.StringIO(text), sep=";", decimal=",")
    assert table.columns[0] == ref["note"].tolist()
    np.testing.assert_array_equal(parse_numbers(table, 1), ref["rr_ms"].to_numpy())


def test_unquoted_comma_table_is_still_split(tmp_path):
    # without quotes a comma between numbers separates them (as before)
    rec = read(_write(tmp_path / "plain.csv", "time_s,rr_ms\n0.8,800\n1.6,800\n2.4,800\n"))
    assert rec.rr_ms.tolist() == [800.0, 800.0, 800.0]
    assert rec.info.extra["decimal"] == "."


def test_unclosed_quote_names_its_line(tmp_path):
    text = 'rr_ms\n"800"\n"810\n"790"\n"805"\n'
    with pytest.raises(InputError, match=r"line 3\b.*not closed on that line"):
        read(_write(tmp_path / "open.csv", text))


_VALUES = st.floats(min_value=0.2, max_value=3000, allow_nan=False).map(lambda v: round(v, 3))


@settings(max_examples=40, deadline=2000)
@given(rows=st.lists(st.tuples(_VALUES, _VALUES), min_size=4, max_size=30),
       sep=st.sampled_from([",", ";", "\t"]))
def test_quoted_decimal_comma_tables_match_pandas(tmp_path_factory, rows, sep):
    def cell(v: float) -> str:
        return '"' + repr(v).replace(".", ",") + '"'

    text = "".join(f"{cell(a)}{sep}{cell(b)}\n" for a, b in rows)
    path = tmp_path_factory.mktemp("q") / "t.csv"
    table = load_table(_write(path, text))
    ref = pd.read_csv(io.StringIO(text), header=None, sep=sep, decimal=",")
    assert table.decimal == ","
    for k in range(2):
        np.testing.assert_array_equal(parse_numbers(table, k), ref[k].to_numpy(dtype=float))
