"""Round trips (hypothesis): any valid RR series, written in any supported text layout, reads back.

The files are composed here by hand (not by rrkit's writer), so a reader bug cannot cancel a
writer bug. "Equal within float rounding": relative tolerance 1e-9 for RR written directly,
absolute 1e-6 ms for RR recovered as differences of peak times up to 10^5 s (float64 keeps
about 16 significant digits; common practice).
"""

from __future__ import annotations

import gzip

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rrkit import read
from rrkit.io import write_rr

# 250-2000 ms: 30-240 bpm (common practice for the range of real heartbeats). With at least 20
# values in this range no series can look like peak times (19 rising heartbeat-sized steps
# would span more than 3.8 s of range), so auto-detection is exact here.
_FIXTURE_OK = [HealthCheck.function_scoped_fixture]  # tmp_path is reused; each example overwrites
rr_values = st.lists(st.floats(250.0, 2000.0, allow_nan=False, allow_infinity=False),
                     min_size=20, max_size=120)
layout = st.fixed_dictionaries({
    "unit": st.sampled_from(["ms", "s"]),
    "as_peaks": st.booleans(),
    "header": st.booleans(),
    "bom": st.booleans(),
    "crlf": st.booleans(),
    "decimal_comma": st.booleans(),
    "gzip": st.booleans(),
    "t0_s": st.floats(0.0, 1000.0, allow_subnormal=False),
})


def _compose(rr_ms: np.ndarray, lay: dict) -> tuple[bytes, np.ndarray]:
    scale = 1.0 if lay["unit"] == "ms" else 1e-3
    if lay["as_peaks"]:
        t = np.concatenate(([lay["t0_s"]], lay["t0_s"] + np.cumsum(rr_ms) / 1000.0))
        values = t * 1000.0 * scale
        expected = np.diff(t) * 1000.0
        name = f"peak_time_{lay['unit']}"
    else:
        values = rr_ms * scale
        expected = rr_ms
        name = f"rr_{lay['unit']}"
    lines = [repr(float(v)) for v in values]
    if lay["decimal_comma"]:
        lines = [v.replace(".", ",") for v in lines]
    if lay["header"]:
        lines.insert(0, name)
    nl = "\r\n" if lay["crlf"] else "\n"
    text = ("\ufeff" if lay["bom"] else "") + nl.join(lines) + nl
    data = text.encode("utf-8")
    if lay["gzip"]:
        data = gzip.compress(data)
    return data, expected


@settings(max_examples=150, deadline=None, suppress_health_check=_FIXTURE_OK)
@given(rr=rr_values, lay=layout)
def test_any_layout_reads_back(tmp_path, rr, lay):
    rr_ms = np.array(rr)
    data, expected = _compose(rr_ms, lay)
    path = tmp_path / ("rr.txt.gz" if lay["gzip"] else "rr.txt")
    path.write_bytes(data)
    rec = read(path)  # everything decided automatically
    assert rec.info.kind == ("peaks" if lay["as_peaks"] else "rr")
    assert rec.info.unit == lay["unit"]
    if lay["as_peaks"]:
        np.testing.assert_allclose(rec.rr_ms, expected, rtol=0, atol=1e-6)
        assert rec.beat_times_s[0] == pytest.approx(lay["t0_s"], abs=1e-9)
    else:
        np.testing.assert_allclose(rec.rr_ms, expected, rtol=1e-9)
    assert rec.info.extra["gzip"] == lay["gzip"]
    assert rec.info.extra["bom"] == lay["bom"]


@settings(max_examples=60, deadline=None, suppress_health_check=_FIXTURE_OK)
@given(rr=st.lists(st.floats(150.0, 4000.0), min_size=3, max_size=60),
       unit=st.sampled_from(["ms", "s"]), gz=st.booleans())
def test_write_rr_reads_back(tmp_path, rr, unit, gz):
    # short series and implausible values (150 / 4000 ms): kind given, as a user would for them
    path = write_rr(tmp_path / ("w.txt.gz" if gz else "w.txt"), rr, unit=unit,
                    header=f"rr_{unit}")
    rec = read(path, kind="rr")
    np.testing.assert_allclose(rec.rr_ms, rr, rtol=1e-13)
    assert rec.info.unit == unit


@settings(max_examples=40, deadline=None, suppress_health_check=_FIXTURE_OK)
@given(rr=rr_values, crlf=st.booleans())
def test_semicolon_table_reads_back(tmp_path, rr, crlf):
    # a spreadsheet export: time;RR with decimal commas, RR chosen by its column name
    rr_ms = np.array(rr)
    t = np.cumsum(rr_ms) / 1000.0
    pairs = zip(t.tolist(), rr_ms.tolist(), strict=True)
    rows = ["Zeit;RR"] + [f"{ti!r};{v!r}".replace(".", ",") for ti, v in pairs]
    nl = "\r\n" if crlf else "\n"
    path = tmp_path / "export.csv"
    path.write_text(nl.join(rows) + nl, encoding="utf-8", newline="")
    rec = read(path)
    assert rec.info.column == "RR"
    assert rec.info.extra["decimal"] == ","
    np.testing.assert_allclose(rec.rr_ms, rr_ms, rtol=1e-12)
