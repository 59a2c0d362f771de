"""HDF5 store: what a run writes reads back exactly; untrusted names stay inside their place."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import h5py
import numpy as np
import pandas as pd
import pytest

import rrkit
from rrkit.batch import InlineExecutor, neutralize_cell, neutralize_cells, run_daily, safe_name
from rrkit.io.store import (
    read_store_daily,
    read_store_index,
    read_store_recording,
    read_store_windows,
    recording_key,
)
from rrkit.simulate import simulate_rr


def _write(path: Path, seed: int, duration_s: float = 370.0) -> Path:
    path.parent.mkdir(parents=True, exist_ok=True)
    rrkit.write_rr(path, simulate_rr(duration_s=duration_s, seed=seed, as_recording=False))
    return path


@pytest.fixture
def run(tmp_path):
    data = tmp_path / "data"
    for d in range(3):
        _write(data / f"A01_2026-03-0{d + 2}_0700.txt", d)
    summary = run_daily(data, tmp_path / "out", executor=InlineExecutor())
    return data, summary


def test_store_round_trip(run):
    data, summary = run
    store = summary.outputs["store"]
    idx = read_store_index(store)
    assert list(idx["source"]) == [f"A01_2026-03-0{d + 2}_0700.txt" for d in range(3)]
    assert idx["used_in_daily"].all()
    assert idx["key"].iloc[0] == recording_key("2026-03-02T07:00:00+00:00", idx["sha256"].iloc[0])
    for i, src in enumerate(idx["source"]):
        rec = read_store_recording(store, idx["key"].iloc[i])
        # raw intervals: exactly what rrkit.read gives for the file
        original = rrkit.read(data / src)
        np.testing.assert_array_equal(rec["raw"].rr_ms, original.rr_ms)
        np.testing.assert_allclose(rec["raw"].beat_times_s, original.beat_times_s, rtol=0,
                                   atol=1e-12)
        # labels and corrected intervals: exactly what rrkit.clean gives
        cr = rrkit.clean(original)
        np.testing.assert_array_equal(rec["labels"], cr.labels)
        np.testing.assert_array_equal(rec["corrected"].rr_ms, cr.recording.rr_ms)
        np.testing.assert_array_equal(rec["origin"], cr.origin)
        # window metrics: the values of the daily table
        row = summary.table[summary.table["source"] == src].iloc[0]
        assert rec["windows"]["rmssd_ms"].iloc[0] == row["rmssd_ms"]
        assert rec["windows"]["window"].iloc[0] == "morning"
        assert rec["settings"]["baselines"]["swc_sd"] == 0.5
        assert rec["clean_summary"]["quality"] in ("ok", "flagged")
    windows = read_store_windows(store)
    assert list(windows["recording"]) == [0, 1, 2]
    daily = read_store_daily(store)
    assert list(daily.columns) == list(summary.table.columns)
    np.testing.assert_array_equal(daily["ln_rmssd"].to_numpy(dtype=float),
                                  summary.table["ln_rmssd"].to_numpy(dtype=float))
    assert list(daily["below_swc"]) == list(summary.table["below_swc"])
    # the smallest-worthwhile-change (SWC) columns keep their names through the store
    swc = ["ln_rmssd_swc_low", "ln_rmssd_swc_high", "below_swc", "above_swc",
           "hr_swc_low_bpm", "hr_swc_high_bpm", "hr_below_swc", "hr_above_swc"]
    assert set(swc) <= set(daily.columns)
    assert not [c for c in daily.columns if "band" in c]


def test_store_rejects_foreign_file_and_unknown_key(tmp_path, run):
    other = tmp_path / "other.h5"
    with h5py.File(other, "w") as h5:
        h5.attrs["format"] = "something else"
    with pytest.raises(rrkit.InputError, match="not an rrkit store"):
        read_store_index(other)
    with pytest.raises(rrkit.InputError, match="no recording 'nope'"):
        read_store_recording(run[1].outputs["store"], "nope")


# ----------------------------------------------------------------------------- untrusted strings
@pytest.mark.parametrize("text", ["../../etc/passwd", "/abs/path", "..", ".", "a/b\\c", "",
                                  "CON", "x" * 300, "ünï cödé", "\x00nul"])
def test_safe_name_is_one_plain_component(text):
    name = safe_name(text)
    assert name
    assert len(name) <= 64
    assert "/" not in name
    assert "\\" not in name
    assert "\x00" not in name
    assert name not in (".", "..")
    assert not name.startswith((".", "-"))
    assert all(c.isascii() and (c.isalnum() or c in "._-") for c in name)


def test_safe_name_keeps_distinct_ids_distinct():
    assert safe_name("A01") == "A01"
    assert safe_name("a/b") != safe_name("a_b")
    assert safe_name("a_b") == "a_b"


def test_neutralize_only_text_cells():
    # OWASP "CSV injection": text starting with = + - @ (or tab / CR) is prefixed with '
    df = pd.DataFrame({"subject": ["=HYPERLINK(1)", "+1", "-x", "@SUM(A1)", "A01"],
                       "value": [-1.5, 2.0, -3.0, 4.0, 5.0]})
    out = neutralize_cells(df)
    assert list(out["subject"]) == ["'=HYPERLINK(1)", "'+1", "'-x", "'@SUM(A1)", "A01"]
    assert list(out["value"]) == [-1.5, 2.0, -3.0, 4.0, 5.0]  # numbers untouched
    assert neutralize_cell(-2) == -2
    assert neutralize_cell(None) is None


def test_hostile_manifest_values_stay_inside(tmp_path):
    data = tmp_path / "data"
    _write(data / "r1.txt", 1)
    _write(data / "r2.txt", 2)
    _write(data / "r3.txt", 3)
    man = tmp_path / "manifest.csv"
    man.write_text(
        "path,subject,start,=cmd|' /C calc'!A0,../../escape\n"
        "r1.txt,../../evil,2026-03-02T07:00:00,=1+1,@x\n"
        "r2.txt,/abs/evil,2026-03-02T07:05:00,-2,+3\n"
        'r3.txt,"=HYPERLINK(""http://x"")",2026-03-02T07:10:00,safe,text\n')
    out = tmp_path / "deep" / "out"
    summary = run_daily(data, out, manifest=man, executor=InlineExecutor())
    assert summary.exit_code == 0
    # nothing was created outside the output folder (the data folder and the manifest only)
    outside = {p.relative_to(tmp_path).as_posix() for p in tmp_path.rglob("*")
               if out not in p.parents and p != out}
    assert outside == {"data", "data/r1.txt", "data/r2.txt", "data/r3.txt", "manifest.csv", "deep"}
    assert not any("evil" in p.name or "escape" in p.name for p in tmp_path.rglob("*"))
    # HDF5: subjects are values; extra column names became safe dataset names
    with h5py.File(summary.outputs["store"], "r") as h5:
        names = []
        h5.visit(names.append)
        assert all(".." not in n and not n.startswith("/") for n in names)
        cols = [h5["daily"][n].attrs["column"] for n in h5["daily"]]
        by_column = {h5["daily"][n].attrs["column"]: n for n in h5["daily"]}
        assert by_column["../../escape"].startswith("column_")
        assert by_column["ln_rmssd_7d"] == "ln_rmssd_7d"
        assert "../../escape" in cols
        assert "daily/../../escape" not in names
    subjects = set(read_store_index(summary.outputs["store"])["subject"])
    assert subjects == {"../../evil", "/abs/evil", '=HYPERLINK("http://x")'}
    # CSV: formula-like text cells neutralised, numbers untouched
    text = (out / "daily.csv").read_text()
    assert "'=HYPERLINK" in text
    assert ",=HYPERLINK" not in text
    daily = pd.read_csv(out / "daily.csv")
    assert "'=cmd|' /C calc'!A0" in daily.columns
    assert set(daily["'=cmd|' /C calc'!A0"].dropna()) == {"'=1+1", "'-2", "safe"}
    assert set(daily["../../escape"].dropna()) == {"'@x", "'+3", "text"}
    assert pd.api.types.is_float_dtype(daily["ln_rmssd"])
    assert daily["ln_rmssd"].notna().all()
    assert daily.loc[daily["subject"] == "'=HYPERLINK(\"http://x\")", "date"].tolist() == [
        dt.date(2026, 3, 2).isoformat()]


def test_documented_layout_names_every_field(run):
    """docs/hdf5-layout.md names every root attribute, every field of the fixed tables and every
    /daily attribute the store holds; docs/daily.md names every column of the daily table (the
    layout as written by this code is the reference)."""
    import re

    docs = Path(__file__).resolve().parents[1] / "docs"
    layout = docs / "hdf5-layout.md"
    columns_page = docs / "daily.md"
    if not layout.is_file() or not columns_page.is_file():
        pytest.skip(f"documentation not found beside the tests: {docs}")
    text = layout.read_text(encoding="utf-8")
    # names in backticks, and every word of the fenced blocks (the tree of the root attributes)
    named = set(re.findall(r"`([A-Za-z_][A-Za-z0-9_]*)`", text))
    for block in re.findall(r"```.*?\n(.*?)```", text, flags=re.S):
        named |= set(re.findall(r"[A-Za-z_][A-Za-z0-9_]*", block))
    _data, summary = run
    missing = []
    with h5py.File(summary.outputs["store"], "r") as h5:
        missing += [f"/ attr {a}" for a in h5.attrs if a not in named]
        missing += [f"/daily attr {a}" for a in h5["daily"].attrs if a not in named]
        for table in ("recordings", "intervals", "corrected"):
            missing += [f"/{table}.{f}" for f in h5[table].dtype.names if f not in named]
        # /windows: the fixed fields up to `notes`; the metrics after it are "every other metric"
        fields = list(h5["windows"].dtype.names)
        missing += [f"/windows.{f}" for f in fields[:fields.index("notes") + 1]
                    if f not in named]
    assert missing == [], missing
    in_daily = set(re.findall(r"`([A-Za-z_][A-Za-z0-9_]*)`",
                              columns_page.read_text(encoding="utf-8")))
    undocumented = [c for c in summary.table.columns if c not in in_daily]
    assert undocumented == [], undocumented
