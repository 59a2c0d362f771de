"""The compiled reader (pandas' C parser on all-numeric blocks) against the line-by-line path.

The reference is rrkit's own line-by-line path: for any text, both paths must give the same
table (names, line numbers, separator, decimal mark, what was recorded, every value) or the same
error, word for word. pandas' C reader is the other side's engine.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rrkit import InputError
from rrkit.io._tabular import read_table
from rrkit.io._text import load_table, parse_numbers


def _outcome(path, fast: bool):
    """Everything a reader sees of the table, or the error message."""
    try:
        table = load_table(path, fast=fast)
    except InputError as exc:
        return ("error", str(exc))
    cols = []
    for k in range(len(table.names)):
        try:
            cols.append(parse_numbers(table, k).tolist())
        except InputError as exc:
            cols.append(("error", str(exc)))
    return (table.names, table.named, table.line_numbers.tolist(), table.separator,
            table.decimal, table.extra, table.head, table.columns, cols)


def _record(path, fast: bool):
    try:
        rec = read_table(str(path), kind="auto", unit="auto", fs_hz=None, column=None,
                         timestamp_column=None, subject=None, break_s=2.0, sep=None,
                         decimal=None, detector="neurokit", fast=fast)
    except InputError as exc:
        return ("error", str(exc))
    return (rec.rr_ms.tolist(), rec.gaps.tolist(), rec.info)


_NUMBER = st.one_of(
    st.integers(min_value=0, max_value=5000).map(str),
    st.floats(min_value=0.0, max_value=5000.0, allow_nan=False).map(repr),
    st.floats(min_value=1e-3, max_value=3.0).map(lambda v: f"{v:.4e}"),
    st.integers(min_value=200, max_value=2000).map(lambda v: f"+{v}."),
    st.floats(min_value=0.0, max_value=1.0).map(lambda v: f"{v:.3f}"[1:]),
)
_ODD = st.sampled_from(["", "nan", "NA", "inf", "x", "1_000", "1.5.2", "-", "1e999", "0x10",
                        " ", "1,5", "٣"])


@st.composite
def _numeric_files(draw) -> str:
    n_cols = draw(st.integers(1, 3))
    sep = draw(st.sampled_from([",", ";", "\t", " ", "  "])) if n_cols > 1 else ""
    comma = draw(st.booleans()) and sep not in (",",)
    odd, ragged = draw(st.integers(0, 3)) == 0, draw(st.integers(0, 5)) == 0
    rows = []
    for _ in range(draw(st.integers(3, 40))):
        cells = [draw(_ODD) if odd and draw(st.integers(0, 20)) == 0 else draw(_NUMBER)
                 for _ in range(n_cols)]
        if ragged and draw(st.integers(0, 10)) == 0:  # a row with a field missing or added
            cells = cells[:-1] or ["1", "2"]
        if comma:
            cells = [c.replace(".", ",") for c in cells]
        pad = draw(st.sampled_from(["", "", "", " "]))
        rows.append(pad + sep.join(cells) + pad)
    if draw(st.integers(0, 6)) == 0:
        rows.insert(draw(st.integers(0, len(rows))), "")  # a blank line
    lines = []
    if draw(st.booleans()):
        names = ["time_s", "rr_ms", "quality"][:n_cols] if n_cols > 1 else ["RR (ms)"]
        lines.append((sep or ",").join(names))
    if draw(st.integers(0, 5)) == 0:
        lines = ["", *lines]
    text = "\n".join(lines + rows)
    if draw(st.booleans()):
        text += "\n"
    return text.replace("\n", draw(st.sampled_from(["\n", "\n", "\r\n"])))


@settings(max_examples=150, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(text=_numeric_files())
def test_compiled_path_equals_line_by_line(tmp_path, text):
    path = tmp_path / "t.txt"
    path.write_text(text, encoding="utf-8", newline="")
    assert _outcome(path, fast=True) == _outcome(path, fast=False)
    assert _record(path, fast=True) == _record(path, fast=False)


def test_compiled_path_is_taken_on_common_layouts(tmp_path, rng):
    rr = rng.normal(800, 40, 2000).round(1)
    t = np.cumsum(rr) / 1000
    layouts = {
        "one.txt": "".join(f"{v}\n" for v in rr),
        "two.csv": "".join(f"{a:.3f},{b}\n" for a, b in zip(t, rr, strict=True)),
        "header.csv": "time_s;rr_ms\n" + "".join(
            f"{a:.3f};{b}\n".replace(".", ",") for a, b in zip(t, rr, strict=True)),
    }
    for name, text in layouts.items():
        path = tmp_path / name
        path.write_text(text)
        table = load_table(path, fast=True)
        assert table.values is not None, name  # the C reader took it
        np.testing.assert_array_equal(parse_numbers(table, len(table.names) - 1), rr)
        assert _outcome(path, fast=True) == _outcome(path, fast=False)


def test_bad_token_gets_its_line_from_the_second_pass(tmp_path):
    # the C reader refuses the block; the line-by-line pass names line 1502 and the token
    text = "rr_ms\n" + "800\n" * 1500 + "8l0\n" + "800\n" * 10
    path = tmp_path / "bad.txt"
    path.write_text(text)
    for fast in (True, False):
        with pytest.raises(InputError, match=r"line 1502\b.*found '8l0'"):
            read_table(str(path), kind="auto", unit="auto", fs_hz=None, column=None,
                       timestamp_column=None, subject=None, break_s=2.0, sep=None,
                       decimal=None, detector="neurokit", fast=fast)
