"""RR intervals, peak times and ECG columns from text tables (plain lists, CSV, TSV, ``;``).

Column choice, when ``column=`` is not given: a header name says what a column holds (``rr_ms``,
``ibi``, ``time_s``, ``sample``, ``ecg``, ``timestamp``, ``symbol``; see `_detect.name_hints`);
without names, the one numeric column that is not a timestamp is used, and several such columns
are an error asking for ``column=``.

Timestamps beside RR intervals stamp the beat that *ends* each interval (the usual export of
chest straps). Where the time between two stamps exceeds the interval that ends at the later
one by more than ``break_s`` seconds, the recording was interrupted: the uncovered time becomes
one interval marked as a gap, so no successive difference joins the two sides.
"""

from __future__ import annotations

from datetime import datetime, timedelta
from typing import Any

import numpy as np

from ..errors import InputError
from ..recording import ReadInfo, Recording
from ._checks import check_enough, peaks_to_seconds, rr_to_ms
from ._detect import decide_kind, decide_peak_unit, decide_rr_unit, name_hints
from ._text import TextTable, column_type, load_table, parse_numbers
from ._timestamps import epoch_scale, parse_timestamps
from ._wfdb_symbols import BEAT_SYMBOLS

__all__ = ["read_table"]

_DST_S = 3600.0  # a daylight-saving clock change


def _resolve_column(table: TextTable, column: str | int, *, what: str) -> int:
    if isinstance(column, (int, np.integer)) and not isinstance(column, bool):
        k = int(column)
        if not 0 <= k < len(table.names):
            raise InputError(
                f"{what}={column!r} is out of range; the file has {len(table.names)} column(s) "
                f"(0-based): {table.names}", path=table.path)
        return k
    want = str(column).strip().lower()
    for k, name in enumerate(table.names):
        if name.strip().lower() == want:
            return k
    if want.isdigit() and int(want) < len(table.names):
        return int(want)
    import difflib

    lowered = {name.strip().lower(): name for name in table.names}
    close = difflib.get_close_matches(want, list(lowered), n=1, cutoff=0.5)
    raise InputError(
        f"{what}={column!r} is not a column of this file; columns: {table.names}",
        path=table.path,
        hint=f"did you mean {lowered[close[0]]!r}?" if close else "pass a name or a 0-based index")


def _sniff_numbers(table: TextTable, col: int) -> np.ndarray | None:
    toks = table.head[col]
    if table.decimal == ",":
        toks = [t.replace(",", ".") for t in toks]
    try:
        return np.array(toks, dtype=np.float64)
    except ValueError:
        return None


def _layout(table: TextTable, timestamp_column: str | int | None) -> dict[str, Any]:
    """Types and roles of the columns; which is the timestamp and which the symbol column."""
    types = [column_type(table, k) for k in range(len(table.names))]
    roles = [name_hints(n) if table.named else {"role": None, "unit": None} for n in table.names]
    ts_col, ts_numeric = None, False
    if timestamp_column is not None:
        ts_col = _resolve_column(table, timestamp_column, what="timestamp_column")
        ts_numeric = types[ts_col] == "number"
    else:
        for k, typ in enumerate(types):
            if typ == "timestamp" or (typ != "number" and roles[k]["role"] == "timestamp"):
                ts_col = k
                break
        if ts_col is None:  # Unix epoch numbers (alone, they are beat times)
            for k, typ in enumerate(types):
                if typ != "number":
                    continue
                sniff = _sniff_numbers(table, k)
                if sniff is not None and epoch_scale(sniff) is not None and (
                        roles[k]["role"] in ("timestamp", None, "peaks")):
                    ts_col, ts_numeric = k, True
                    break
    sym_col = None
    for k, typ in enumerate(types):
        if typ == "text" and k != ts_col and (roles[k]["role"] == "symbol" or not table.named):
            sym_col = k
            break
    return {"types": types, "roles": roles, "ts_col": ts_col, "ts_numeric": ts_numeric,
            "sym_col": sym_col}


def _choose_value_column(table, lay, *, kind, column, fs_hz) -> tuple[int | None, str | None, str]:
    """(column index or None for timestamps-as-beats, kind from the name or None, reason)."""
    if column is not None:
        k = _resolve_column(table, column, what="column")
        role = lay["roles"][k]["role"]
        named_kind = role if role in ("rr", "peaks", "ecg") else None
        return k, named_kind, f"column {table.names[k]!r} given"
    numeric = [k for k, t in enumerate(lay["types"]) if t == "number" and k != lay["ts_col"]]
    by_role: dict[str, list[int]] = {}
    for k in numeric:
        role = lay["roles"][k]["role"]
        if role in ("rr", "peaks", "ecg"):
            by_role.setdefault(role, []).append(k)
    if "peaks" in by_role and len(by_role["peaks"]) > 1:
        # several peak columns (sample index and time): exact samples when fs is given
        units = {k: lay["roles"][k]["unit"] for k in by_role["peaks"]}
        prefer = ["samples", "s", "ms"] if fs_hz is not None else ["s", "ms", None, "samples"]
        by_role["peaks"].sort(key=lambda k: prefer.index(units[k]) if units[k] in prefer else 9)
    # a table with a time column and an ECG column is an ECG table, not peak times
    order = [kind] if kind in ("rr", "peaks", "ecg") else ["rr", "ecg", "peaks"]
    for role in order:
        if by_role.get(role):
            k = by_role[role][0]
            return k, role, f"column name {table.names[k]!r}"
    if len(numeric) == 1:
        k = numeric[0]
        why = "the only numeric column" if len(table.names) > 1 else "one-column file"
        return k, None, why
    if not numeric and lay["ts_col"] is not None and kind in ("auto", "peaks"):
        return None, "peaks", f"only timestamps (column {table.names[lay['ts_col']]!r}): beat times"
    if not numeric:
        raise InputError(f"no numeric column found; columns: {table.names}", path=table.path,
                         hint="pass column=")
    raise InputError(
        f"found {len(numeric)} numeric columns {[table.names[k] for k in numeric]} and none named "
        "as RR intervals, peak times or ECG", path=table.path,
        hint="pass column=, a name or 0-based index")


def read_table(path: str, *, kind: str, unit: str, fs_hz: float | None, column,
               timestamp_column, subject: str | None, break_s: float | None,
               sep: str | None, decimal: str | None, detector: str,
               fast: bool | None = None) -> Recording:
    """Read a text table as RR intervals, peak times or an ECG column (see the module notes).

    ``fast`` is passed to `load_table` (tests compare both paths with it).
    """
    table = load_table(path, sep=sep, decimal=decimal, fast=fast)
    lay = _layout(table, timestamp_column)
    col, named_kind, col_why = _choose_value_column(table, lay, kind=kind, column=column,
                                                    fs_hz=fs_hz)
    extra: dict[str, Any] = dict(table.extra)
    extra["column_chosen_by"] = col_why
    if lay["ts_col"] is not None:
        extra["timestamp_column"] = table.names[lay["ts_col"]]

    if col is None:  # a column of beat timestamps only
        t_s, start, how = parse_timestamps(table, lay["ts_col"], numeric=lay["ts_numeric"])
        extra["timestamps"] = how
        t_s = peaks_to_seconds(t_s, unit="s", fs_hz=None, path=table.path,
                               lines=table.line_numbers, column=table.names[lay["ts_col"]])
        check_enough(t_s.size - 1, path=table.path, what="timestamps")
        info = ReadInfo(kind="peaks", kind_decided_by=col_why if kind == "auto" else "given",
                        unit="s", unit_decided_by=how, fs_hz=fs_hz,
                        column=table.names[lay["ts_col"]], extra=extra)
        return Recording.from_peak_times(t_s, start=start, subject=subject, source=table.path,
                                         info=info)

    name = table.names[col]
    role_unit = lay["roles"][col]["unit"]
    if kind == "ecg" or (kind == "auto" and named_kind == "ecg"):
        from ._ecg import recording_from_signal

        if fs_hz is None:
            raise InputError(
                "reading ECG needs its sampling rate; there is no default", path=table.path,
                hint=_fs_hint(table, lay, col))
        values = parse_numbers(table, col, what="an ECG sample value")
        kind_by = "given" if kind == "ecg" else col_why
        return recording_from_signal(values, fs_hz=fs_hz, path=table.path, detector=detector,
                                     subject=subject, start=None, kind_decided_by=kind_by,
                                     column=name, extra=extra)

    values = parse_numbers(table, col, what="a number")
    lines = table.line_numbers
    # rows of non-beat annotations (WFDB-style one-character symbols such as '+', '~')
    keep = None
    symbols = None
    if lay["sym_col"] is not None:
        sym = np.array(table.columns[lay["sym_col"]], dtype=str)
        extra["symbol_column"] = table.names[lay["sym_col"]]
        if np.all(np.char.str_len(sym) == 1):
            keep = np.isin(sym, list(BEAT_SYMBOLS))
            if not keep.all():
                dropped, counts = np.unique(sym[~keep], return_counts=True)
                extra["non_beat_rows_skipped"] = int((~keep).sum())
                extra["non_beat_symbols"] = ", ".join(
                    f"{s} x{c}" for s, c in zip(dropped.tolist(), counts.tolist(), strict=True))
            values, lines, sym = values[keep], lines[keep], sym[keep]
            if values.size == 0:
                raise InputError(
                    f"every row is a non-beat annotation ({extra['non_beat_symbols']}) in column "
                    f"{table.names[lay['sym_col']]!r}, expected beat rows", path=table.path)
        symbols = sym
        names_, counts_ = np.unique(sym, return_counts=True)
        order = np.argsort(-counts_, kind="stable")
        extra["beat_symbol_counts"] = ", ".join(
            f"{names_[i]} x{counts_[i]}" for i in order.tolist())

    if kind in ("rr", "peaks"):
        use_kind, kind_by = kind, "given"
    elif named_kind in ("rr", "peaks"):
        use_kind, kind_by = named_kind, col_why
    else:
        use_kind, kind_by = decide_kind(values, fs_hz=fs_hz)
    check_enough(values.size - (use_kind == "peaks"), path=table.path, what=f"column {name!r}")

    if unit != "auto":
        use_unit, unit_by = unit, "given"
    elif role_unit is not None and not (role_unit == "samples" and use_kind == "rr"):
        use_unit, unit_by = role_unit, f"column name {name!r}"
    elif use_kind == "rr":
        use_unit, unit_by = decide_rr_unit(values, path=table.path, lines=lines, column=name,
                                           fs_hz=fs_hz)
    else:
        use_unit, unit_by = decide_peak_unit(values, fs_hz=fs_hz, path=table.path, column=name)
    if use_unit == "samples" and fs_hz is None:
        raise InputError(f"column {name!r} holds sample indices, which need the sampling rate",
                         path=table.path, hint="pass fs=, the sampling rate in Hz")

    start: datetime | None = None
    gaps = None
    if use_kind == "peaks":
        t_s = peaks_to_seconds(values, unit=use_unit, fs_hz=fs_hz, path=table.path,
                               lines=lines, column=name)
        check_enough(t_s.size - 1, path=table.path, what=f"column {name!r}")
        if lay["ts_col"] is not None:
            ts, ts_start, how = _timestamps_kept(table, lay, keep)
            extra["timestamps"] = how
            start = ts_start - timedelta(seconds=float(t_s[0]))
        info = ReadInfo(kind="peaks", kind_decided_by=kind_by, unit=use_unit,
                        unit_decided_by=unit_by, fs_hz=fs_hz, column=name, extra=extra)
        return Recording.from_peak_times(t_s, start=start, subject=subject, source=table.path,
                                         info=info, beat_symbols=symbols)

    rr_ms = rr_to_ms(values, unit=use_unit, fs_hz=fs_hz, path=table.path, lines=lines, column=name)
    check_enough(rr_ms.size, path=table.path, what=f"column {name!r}")
    beat_symbols = None
    if symbols is not None:  # each row's symbol labels the beat ending its interval
        beat_symbols = np.concatenate(([""], symbols))
    clock = _relative_clock(table, lay, col, keep) if lay["ts_col"] is None else None
    if lay["ts_col"] is not None or clock is not None:
        if clock is None:
            ts, ts_start, how = _timestamps_kept(table, lay, keep)
        else:
            ts, how = clock
            ts_start = None
        extra["timestamps"] = how
        local = ts_start is not None and ts_start.tzinfo is None  # wall-clock times
        rr_ms, gaps, beat_symbols, n_breaks, lost_s, n_clock = _insert_breaks(
            rr_ms, ts, lines, break_s=break_s, path=table.path, beat_symbols=beat_symbols,
            local_clock=local)
        if n_clock:
            extra["clock_changes"] = n_clock
        extra["n_breaks"] = n_breaks
        extra["break_time_s"] = lost_s
        extra["break_s"] = break_s
        if ts_start is not None:
            start = ts_start - timedelta(milliseconds=float(rr_ms[0]))
    info = ReadInfo(kind="rr", kind_decided_by=kind_by, unit=use_unit, unit_decided_by=unit_by,
                    fs_hz=fs_hz, column=name, extra=extra)
    return Recording.from_rr(rr_ms, start=start, subject=subject, source=table.path, info=info,
                             gaps=gaps, beat_symbols=beat_symbols)


def _fs_hint(table: TextTable, lay, value_col: int) -> str:
    """'pass fs=' with the rate a time column beside the ECG suggests, when there is one."""
    for k, typ in enumerate(lay["types"]):
        role = lay["roles"][k]
        if k == value_col or typ != "number" or role["unit"] not in ("s", "ms"):
            continue
        sniff = _sniff_numbers(table, k)
        if sniff is None or sniff.size < 3:
            continue
        step = float(np.median(np.diff(sniff))) * (1.0 if role["unit"] == "s" else 1e-3)
        if step > 0:
            return (f"pass fs= in Hz; column {table.names[k]!r} steps by {step * 1000:g} ms, "
                    f"which would be fs={1.0 / step:g}")
    return "pass fs= in Hz, for example fs=250"


def _relative_clock(table, lay, value_col, keep):
    """(seconds, how) from a numeric time column in s or ms beside RR values, else None.

    A column named as a time in seconds or milliseconds (``time_s``, ``t (ms)``) stamps each
    row on the recording's own clock: it shows breaks just as absolute timestamps do.
    """
    for k, typ in enumerate(lay["types"]):
        role = lay["roles"][k]
        if k == value_col or typ != "number" or role["role"] != "peaks":
            continue
        if role["unit"] not in ("s", "ms"):
            continue
        values = parse_numbers(table, k, what="a time")
        if keep is not None:
            values = values[keep]
        scale = 1.0 if role["unit"] == "s" else 1e-3
        return values * scale, f"times in {role['unit']} in column {table.names[k]!r}"
    return None


def _timestamps_kept(table, lay, keep):
    ts, start, how = parse_timestamps(table, lay["ts_col"], numeric=lay["ts_numeric"])
    if keep is not None and not keep.all():
        first = int(np.flatnonzero(keep)[0])
        start = start + timedelta(seconds=float(ts[first]))
        ts = ts[keep] - ts[first]
    return ts, start, how


def _insert_breaks(rr_ms, ts_s, lines, *, break_s, path, beat_symbols, local_clock=False):
    """Insert one gap interval wherever the timestamps show uncovered time > ``break_s``.

    With local clock times (no UTC offset), a step of one hour forward or back where the
    intervals say no time was lost is a daylight-saving change of the clock, not a break: it is
    taken out (and counted) rather than raising an error or inserting a one-hour gap.
    """
    d = np.diff(ts_s)
    n_clock = 0
    if local_clock and rr_ms.size > 1:
        tol = 2.0 if break_s is None else max(break_s, 2.0)
        shift = d - rr_ms[1:] / 1000.0
        change = np.abs(np.abs(shift) - _DST_S) <= tol
        if change.any():
            d = d - np.sign(shift) * _DST_S * change
            n_clock = int(change.sum())
    back = np.flatnonzero(d < 0)
    if back.size:
        j = int(back[0]) + 1
        raise InputError(
            f"timestamp goes backwards by {-d[j - 1]:g} s from line {int(lines[j - 1])}, expected "
            "times that never decrease", path=path, line=int(lines[j]))
    if break_s is None or rr_ms.size < 2:
        return rr_ms, None, beat_symbols, 0, 0.0, n_clock
    excess_s = d - rr_ms[1:] / 1000.0  # time before interval i+1 that no interval covers
    brk = np.flatnonzero(excess_s > break_s) + 1  # interval index that follows a break
    if brk.size == 0:
        return rr_ms, None, beat_symbols, 0, 0.0, n_clock
    gap_ms = excess_s[brk - 1] * 1000.0
    out = np.insert(rr_ms, brk, gap_ms)
    gaps = np.zeros(out.size, dtype=bool)
    gaps[brk + np.arange(brk.size)] = True
    if beat_symbols is not None:
        # the beat that starts the interval after a break was not annotated in the file
        beat_symbols = np.insert(beat_symbols, brk + 1, "")
    return out, gaps, beat_symbols, int(brk.size), float(gap_ms.sum() / 1000.0), n_clock
