"""The one CSV loop behind the side tables (events table, exercise load table)."""

from __future__ import annotations

import csv
import io

import pytest

from rrkit.errors import InputError
from rrkit.io import read_events_table, read_loads
from rrkit.io._csvrows import csv_rows


def _no_check(header, cells, *, path, line):
    return None


def test_rows_keep_their_file_line_numbers_and_quoted_fields(tmp_path):
    text = ('# protocol of an invented session\n'
            '\n'
            'Label , start_s,end_s\n'
            '"supine, quiet",0,300\n'
            '# a comment between rows\n'
            'stand,300,600\n')
    got = list(csv_rows(text, path=tmp_path / "t.csv", check_header=_no_check))
    assert [n for n, _ in got] == [4, 6]  # counted by hand on the text above
    # the standard library's reader is the reference for how a quoted field splits
    expected = next(csv.reader(io.StringIO('"supine, quiet",0,300')))
    assert got[0][1] == dict(zip(("label", "start_s", "end_s"), expected, strict=True))


def test_header_check_gets_the_header_and_its_line(tmp_path):
    seen = []

    def check(header, cells, *, path, line):
        seen.append((header, cells, line))

    rows = list(csv_rows("# c\nTime_S,Power_W\n", path=tmp_path / "x.csv", check_header=check))
    assert rows == []
    assert seen == [(["time_s", "power_w"], ["Time_S", "Power_W"], 2)]


def test_a_short_row_names_file_and_line(tmp_path):
    with pytest.raises(InputError, match=r"x\.csv.*line 3.*expected 3 columns"):
        list(csv_rows("a,b,c\n1,2,3\n1,2\n", path=tmp_path / "x.csv", check_header=_no_check))


def test_both_tables_read_through_the_one_loop(tmp_path):
    ev = tmp_path / "protocol.csv"
    ev.write_text('label,start_s,end_s,breaths_per_min\n"paced, 6/min",60,360,6\n')
    (row,) = read_events_table(ev)
    assert row["label"] == "paced, 6/min"
    assert row["line"] == 2
    assert row["breathing_hz"] == pytest.approx(0.1)  # 6 per minute = 0.1 Hz
    loads = tmp_path / "stages.csv"
    loads.write_text("# invented ramp\ntime,power_w\n0:00,100\n1:00,125\n")
    got = read_loads(loads)
    assert got.time_s.tolist() == [0.0, 60.0]
    assert got.value.tolist() == [100.0, 125.0]


def test_a_table_that_is_not_utf8_is_an_input_error(tmp_path):
    for name, reader, what in (("ev.csv", read_events_table, "events table"),
                               ("ld.csv", read_loads, "load table")):
        p = tmp_path / name
        p.write_bytes(b"label,start_s,end_s\n\xff\xfe,0,1\n")
        with pytest.raises(InputError, match=f"{what} is not UTF-8 text"):
            reader(p)
