"""Text readers: RR lists, delimited tables, peak times, timestamps and gaps, write_rr.

Expected values are tiny hand-computable inputs (the comment beside each check says how) or
round trips of the same numbers through a file.
"""

from __future__ import annotations

import gzip
from datetime import datetime, timedelta, timezone

import numpy as np
import pytest

import rrkit
from rrkit import InputError, read
from rrkit.io import write_rr


def _write(path, text: str, *, encoding="utf-8", newline="\n", gz=False):
    data = text.replace("\n", newline).encode(encoding)
    if gz:
        data = gzip.compress(data)
    path.write_bytes(data)
    return path


# ---------------------------------------------------------------- one value a line
def test_plain_ms_list(tmp_path):
    rec = read(_write(tmp_path / "rr.txt", "812\n790\n805\n821\n"))
    # hand-computed: beat times are the cumulative sums from 0
    assert rec.rr_ms.tolist() == [812.0, 790.0, 805.0, 821.0]
    assert rec.beat_times_s.tolist() == pytest.approx([0, 0.812, 1.602, 2.407, 3.228])
    assert (rec.info.kind, rec.info.unit) == ("rr", "ms")
    assert "median" in rec.info.unit_decided_by
    assert "RR intervals" in rec.info.kind_decided_by
    assert rec.source.endswith("rr.txt")
    assert rrkit.read is read


def test_plain_seconds_list_with_everything(tmp_path):
    # header, comments (whole-line and trailing), blank lines, CRLF, BOM, gzip
    text = "# exported 2026-03-01\nRR\n\n0.812\n0.790 # strap moved\n\n0.805\n0.821\n"
    path = tmp_path / "rr.txt.gz"
    data = ("\ufeff" + text.replace("\n", "\r\n")).encode("utf-8")
    path.write_bytes(gzip.compress(data))
    rec = read(path)
    assert rec.rr_ms == pytest.approx([812, 790, 805, 821])  # seconds x 1000
    assert rec.info.unit == "s"
    ex = rec.info.extra
    assert ex["gzip"]
    assert ex["bom"]
    assert ex["header_line"] == 2
    assert ex["n_comment_lines"] == 1
    assert ex["n_blank_lines"] == 2


def test_decimal_comma_single_column(tmp_path):
    rec = read(_write(tmp_path / "rr.csv", "812,5\n790,25\n805\n821,75\n"))
    assert rec.rr_ms.tolist() == [812.5, 790.25, 805.0, 821.75]
    assert rec.info.extra["decimal"] == ","


def test_semicolon_table_with_decimal_commas(tmp_path):
    text = ("Zeit (s);RR-Intervall (ms);Notiz\n"
            "0,812;812,5;a\n1,602;790;b\n2,407;805;c\n3,228;821;d\n")
    rec = read(_write(tmp_path / "export.csv", text, encoding="cp1252"))
    assert rec.info.column == "RR-Intervall (ms)"
    assert rec.info.kind == "rr"
    assert rec.info.unit == "ms"
    assert rec.rr_ms.tolist() == [812.5, 790.0, 805.0, 821.0]
    assert rec.info.extra["separator"] == "semicolon"


def test_whitespace_and_tab_tables(tmp_path):
    rec = read(_write(tmp_path / "a.txt", "idx  rr_ms\n1  800\n2   810\n3 790\n4 805\n"))
    assert rec.rr_ms.tolist() == [800, 810, 790, 805]
    assert rec.info.column == "rr_ms"
    rec = read(_write(tmp_path / "b.tsv", "ibi\tquality\n800\t1\n810\t1\n790\t0\n805\t1\n"))
    assert rec.rr_ms.tolist() == [800, 810, 790, 805]
    assert rec.info.column == "ibi"


def test_column_by_name_or_index(tmp_path):
    path = _write(tmp_path / "two.csv", "a,b\n800,900\n810,910\n790,890\n805,905\n")
    with pytest.raises(InputError, match="2 numeric columns"):
        read(path)
    assert read(path, column="b").rr_ms.tolist() == [900, 910, 890, 905]
    assert read(path, column=0).rr_ms.tolist() == [800, 810, 790, 805]
    assert read(path, column="1").rr_ms.tolist() == [900, 910, 890, 905]
    with pytest.raises(InputError, match="did you mean 'b'"):
        read(path, column="B2")


def test_implausible_values_are_kept(tmp_path):
    # 150 ms and 4000 ms cannot be normal beats but are possible artifacts: kept for cleaning
    rec = read(_write(tmp_path / "rr.txt", "800\n150\n4000\n810\n790\n"))
    assert rec.rr_ms.tolist() == [800, 150, 4000, 810, 790]
    assert not rec.has_gaps


def test_unit_override_and_samples(tmp_path):
    path = _write(tmp_path / "rr.txt", "200\n210\n190\n205\n")
    # 200 in ms range -> ms by default; as samples at 250 Hz: 200 / 250 s = 800 ms
    assert read(path).info.unit == "ms"
    rec = read(path, unit="samples", fs=250)
    assert rec.rr_ms.tolist() == pytest.approx([800, 840, 760, 820])
    assert rec.info.unit_decided_by == "given"
    assert rec.info.fs_hz == 250


def test_unit_neither_asks_for_unit(tmp_path):
    path = _write(tmp_path / "rr.txt", "50\n52\n49\n51\n")
    with pytest.raises(InputError, match=r"fits neither .*pass unit="):
        read(path)
    assert read(path, unit="ms").rr_ms.tolist() == [50, 52, 49, 51]


# ---------------------------------------------------------------- peaks
def test_peak_times_seconds_detected(tmp_path):
    rec = read(_write(tmp_path / "peaks.txt", "0.5\n1.3\n2.1\n2.95\n3.8\n"))
    assert rec.info.kind == "peaks"
    assert rec.info.unit == "s"
    assert rec.beat_times_s.tolist() == [0.5, 1.3, 2.1, 2.95, 3.8]  # the file's own clock
    assert rec.rr_ms == pytest.approx([800, 800, 850, 850])  # successive differences
    assert "increase" in rec.info.kind_decided_by


def test_peak_times_ms_and_override(tmp_path):
    path = _write(tmp_path / "peaks.txt", "500\n1300\n2100\n2950\n")
    rec = read(path)
    assert (rec.info.kind, rec.info.unit) == ("peaks", "ms")
    assert rec.rr_ms == pytest.approx([800, 800, 850])
    with pytest.raises(InputError, match="fits neither"):  # as RR, the median 1700 ms fits, but
        read(_write(tmp_path / "p2.txt", "5000\n13000\n21000\n29500\n"), kind="rr")
    assert read(path, kind="rr").info.kind_decided_by == "given"


def test_peak_samples_need_fs(tmp_path):
    path = _write(tmp_path / "peaks.csv", "sample\n77\n370\n662\n946\n")
    with pytest.raises(InputError, match="sampling rate"):
        read(path)
    rec = read(path, fs=360)
    # (370 - 77) / 360 s = 813.888... ms
    assert rec.rr_ms[0] == pytest.approx(293 / 360 * 1000)
    assert rec.info.unit == "samples"


def test_symbol_column_skips_non_beats(tmp_path):
    text = "sample,symbol\n18,+\n77,N\n370,N\n662,A\n946,N\n1000,~\n1231,N\n"
    rec = read(_write(tmp_path / "beats.csv", text), fs=360)
    assert rec.beat_symbols.tolist() == ["N", "N", "A", "N", "N"]
    assert rec.info.extra["non_beat_rows_skipped"] == 2
    assert "+ x1" in rec.info.extra["non_beat_symbols"]


# ---------------------------------------------------------------- timestamps and gaps
def test_iso_timestamps_give_aware_start(tmp_path):
    text = ("time,rr\n2026-03-01T07:00:00.800+01:00,800\n2026-03-01T07:00:01.610+01:00,810\n"
            "2026-03-01T07:00:02.400+01:00,790\n2026-03-01T07:00:03.205+01:00,805\n")
    rec = read(_write(tmp_path / "ts.csv", text))
    # the first stamp ends the first interval: start = 07:00:00.800 - 800 ms, in +01:00
    assert rec.start == datetime(2026, 3, 1, 7, 0, 0, tzinfo=timezone(timedelta(hours=1)))
    assert rec.start.utcoffset() == timedelta(hours=1)
    assert not rec.has_gaps
    assert rec.info.extra["timestamp_column"] == "time"


def test_naive_timestamps_give_naive_start(tmp_path):
    text = ("timestamp;RR\n2026-03-01 07:00:01;1000\n2026-03-01 07:00:02;1000\n"
            "2026-03-01 07:00:03;1000\n2026-03-01 07:00:04;1000\n")
    rec = read(_write(tmp_path / "ts.csv", text))
    assert rec.start == datetime(2026, 3, 1, 7, 0, 0)
    assert rec.start.tzinfo is None


def test_epoch_timestamps(tmp_path):
    t0 = 1767250800  # 2026-01-01T07:00:00Z
    rows = [f"{(t0 + 0.8 * (i + 1)) * 1000:.0f},800" for i in range(5)]
    rec = read(_write(tmp_path / "epoch.csv", "\n".join(rows) + "\n"))
    assert rec.start == datetime(2026, 1, 1, 7, 0, 0, tzinfo=timezone.utc)
    assert rec.info.column == "column 2"
    assert "epoch ms" in rec.info.extra["timestamps"]


def test_break_in_timestamps_is_a_gap(tmp_path):
    # 07:00:00.8 .. 07:00:02.4 three beats, then 30 s of nothing, then three more
    stamps = [0.8, 1.6, 2.4, 33.2, 34.0, 34.8]
    rows = [f"2026-03-01T07:00:{s:06.3f}Z,800" for s in stamps]
    rec = read(_write(tmp_path / "drop.csv", "ts,rr_ms\n" + "\n".join(rows) + "\n"))
    # hand-computed: between the stamps 2.4 and 33.2 (30.8 s) the 800 ms interval ending at 33.2
    # covers 0.8 s, so 30.0 s are uncovered: one gap interval of 30000 ms between the two sides
    assert rec.rr_ms.tolist() == pytest.approx([800, 800, 800, 30000, 800, 800, 800])
    assert rec.gaps.tolist() == [False, False, False, True, False, False, False]
    assert rec.beat_times_s[-1] == pytest.approx(34.8)  # beat times follow the stamps
    assert [s.tolist() for s in rec.nn_segments()] == [[800] * 3, [800] * 3]
    assert rec.info.extra["n_breaks"] == 1
    no_break = read(tmp_path / "drop.csv", break_s=None)
    assert not no_break.has_gaps
    assert no_break.n_intervals == 6


def test_timestamps_only_are_beat_times(tmp_path):
    text = "\n".join(f"2026-03-01T07:00:{s:06.3f}" for s in (1.0, 1.8, 2.61, 3.4)) + "\n"
    rec = read(_write(tmp_path / "beats.txt", text))
    assert rec.info.kind == "peaks"
    assert rec.rr_ms == pytest.approx([800, 810, 790])
    assert rec.start == datetime(2026, 3, 1, 7, 0, 1)


def test_kind_and_unit_are_recorded(tmp_path):
    rec = read(_write(tmp_path / "rr.csv", "rr_s\n0.8\n0.81\n0.79\n"))
    info = rec.info.to_dict()
    assert info["kind"] == "rr"
    assert info["kind_decided_by"] == "column name 'rr_s'"
    assert info["unit"] == "s"
    assert info["unit_decided_by"] == "column name 'rr_s'"
    assert info["column"] == "rr_s"


# ---------------------------------------------------------------- write_rr
def test_write_rr_plain_and_gz(tmp_path):
    rr = np.array([812.0, 790.5, 805.25, 821.0])
    p = write_rr(tmp_path / "out.txt", rr)
    assert p.read_text() == "812\n790.5\n805.25\n821\n"
    p = write_rr(tmp_path / "out.txt.gz", rrkit.Recording.from_rr(rr), unit="s", header="rr_s")
    assert gzip.decompress(p.read_bytes()).decode().splitlines()[:2] == ["rr_s", "0.812"]
    assert read(p).rr_ms == pytest.approx(rr)
    assert not list(tmp_path.glob(".*tmp"))  # no temporary file left behind


def test_write_rr_notes_gaps(tmp_path):
    rec = rrkit.Recording.from_rr([800, 5000, 810, 790], gaps=[False, True, False, False])
    p = write_rr(tmp_path / "g.txt", rec)
    assert p.read_text().startswith("# 1 of these intervals are gaps")
    assert read(p).rr_ms.tolist() == [800, 5000, 810, 790]


def test_write_rr_rejects_bad_values(tmp_path):
    with pytest.raises(InputError, match="must be > 0"):
        write_rr(tmp_path / "x.txt", [800, -1, 800])
    with pytest.raises(InputError, match="unit must be one of"):
        write_rr(tmp_path / "x.txt", [800, 800], unit="min")


def test_rr_in_samples_when_fs_is_given(tmp_path):
    path = _write(tmp_path / "rr.txt", "200\n210\n190\n205\n")
    # whole numbers and fs given: 200 samples at 250 Hz = 0.8 s, a heartbeat interval
    rec = read(path, fs=250)
    assert rec.info.unit == "samples"
    assert "fs=250" in rec.info.unit_decided_by
    assert rec.rr_ms.tolist() == pytest.approx([800, 840, 760, 820])


def test_epoch_column_beside_rr_and_symbols(tmp_path):
    # epoch seconds (UTC) with a symbol column: the symbol labels the beat ending each interval
    text = "epoch,rr_ms,type\n1767250800.8,800,N\n1767250801.6,800,V\n1767250802.5,900,N\n" \
           "1767250803.3,800,N\n"
    rec = read(_write(tmp_path / "e.csv", text))
    assert rec.start == datetime(2026, 1, 1, 7, 0, 0, tzinfo=timezone.utc)
    assert rec.beat_symbols.tolist() == ["", "N", "V", "N", "N"]
    assert rec.info.extra["beat_symbol_counts"] == "N x3, V x1"


def test_large_file_reads(tmp_path, rng):
    # 10^5 intervals with a timestamp column: exercises the block splitting path
    rr = rng.normal(800, 40, 100_000).round(1)
    t = 1767250800 + np.cumsum(rr) / 1000
    lines = "\n".join(f"{a:.3f},{b:.1f}" for a, b in zip(t.tolist(), rr.tolist(), strict=True))
    rec = read(_write(tmp_path / "big.csv", "unix_time,rr_ms\n" + lines + "\n"))
    np.testing.assert_allclose(rec.rr_ms, rr)
    assert not rec.has_gaps


def test_spreadsheet_quirks(tmp_path):
    # quoted fields, a separator ending each row, UTF-16 with BOM
    text = '"time";"RR";\n"0,8";"800";\n"1,61";"810";\n"2,4";"790";\n"3,205";"805";\n'
    path = tmp_path / "sheet.csv"
    path.write_bytes(text.encode("utf-16"))
    rec = read(path)
    assert rec.info.column == "RR"
    assert rec.rr_ms.tolist() == [800, 810, 790, 805]
    assert rec.info.extra["encoding"] == "utf-16"


def test_spreadsheet_binary_hint(tmp_path):
    path = tmp_path / "book.xlsx"
    path.write_bytes(b"PK\x03\x04\x14\x00\x06\x00\x08\x00\x00\x00!\x00")
    with pytest.raises(InputError, match="export it as CSV"):
        read(path)


def test_preamble_with_numbers_before_header(tmp_path):
    text = "Strap export 2026-03-01 07:00\nDevice 4711\nRR interval (ms)\n800\n810\n790\n805\n"
    rec = read(_write(tmp_path / "pre.txt", text))
    assert rec.rr_ms.tolist() == [800, 810, 790, 805]
    assert rec.info.column == "RR interval (ms)"  # a one-column header with spaces
    assert rec.info.extra["n_preamble_lines"] == 2


def test_relative_time_column_shows_breaks(tmp_path):
    # time_s stamps the end of each interval on the recording's clock; 20 s missing after 2.4 s
    text = "time_s,rr_ms\n0.8,800\n1.6,800\n2.4,800\n23.2,800\n24.0,800\n"
    rec = read(_write(tmp_path / "rel.csv", text))
    assert rec.info.column == "rr_ms"
    assert rec.start is None
    # hand-computed: 23.2 - 2.4 = 20.8 s, of which the 800 ms interval covers 0.8 s: 20 s gap
    assert rec.rr_ms.tolist() == pytest.approx([800, 800, 800, 20000, 800, 800])
    assert rec.gaps.tolist() == [False, False, False, True, False, False]


def test_epoch_beat_times_alone(tmp_path):
    # one column of Unix epoch seconds: beat times with an absolute (UTC) start
    rec = read(_write(tmp_path / "beats.txt", "1767250801.0\n1767250801.8\n1767250802.61\n"
                                              "1767250803.4\n"))
    assert rec.info.kind == "peaks"
    assert rec.start == datetime(2026, 1, 1, 7, 0, 1, tzinfo=timezone.utc)
    assert rec.rr_ms == pytest.approx([800, 810, 790], abs=1e-3)


@pytest.mark.parametrize("hour_step", [-1, 1])
def test_daylight_saving_change_in_local_times(tmp_path, hour_step):
    # local wall-clock times (no offset) across a clock change: 03:00 -> 02:00 (autumn) or
    # 02:00 -> 03:00 (spring); the intervals show no time was lost, so this is no break
    base = datetime(2026, 10, 25, 2, 59, 58)
    times, t = [], base
    for k in range(6):
        t = t + timedelta(seconds=1)
        if k == 3:
            t = t + timedelta(hours=hour_step)
        times.append(t)
    text = "time,rr_ms\n" + "".join(f"{x.isoformat()},1000\n" for x in times)
    rec = read(_write(tmp_path / "dst.csv", text))
    assert not rec.has_gaps
    assert rec.info.extra["clock_changes"] == 1
    assert rec.duration_s == pytest.approx(6.0)
    # with a UTC offset the same jump is real time: a backward step is an error
    aware = text.replace(",1000", "+00:00,1000")
    if hour_step < 0:
        with pytest.raises(InputError, match="timestamp goes backwards by 3599 s"):
            read(_write(tmp_path / "dst_utc.csv", aware))
    else:
        assert read(_write(tmp_path / "dst_utc.csv", aware)).has_gaps


def test_forced_separator_and_decimal(tmp_path):
    path = _write(tmp_path / "f.txt", "1,812\n2,790\n3,805\n4,821\n")
    # counting 1, 2, 3 before the comma: an index column, comma-separated
    assert read(path, column=1).rr_ms.tolist() == [812, 790, 805, 821]
    # forced: one column with decimal commas (values in s)
    rec = read(path, sep="none", kind="rr", unit="s")
    assert rec.rr_ms.tolist() == pytest.approx([1812, 2790, 3805, 4821])
    with pytest.raises(InputError, match="both the separator and the decimal mark"):
        read(path, sep=",", decimal=",")
