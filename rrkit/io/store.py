"""The HDF5 store of a batch run: every recording's intervals, labels, corrections and metrics.

The layout (``docs/hdf5-layout.md``) is columnar: one table of recordings and, for all
recordings together, one table of raw intervals, one of corrected intervals and one of
windows; row ranges in the recordings table say which rows belong to which recording::

    /                attrs: format, format_version, rrkit_version, settings, settings_sha256
    /recordings      one row per recording (subject, source, sha256, start, date, offsets ...)
    /intervals       raw intervals of every recording: recording, time_s, rr_ms, gap, label,
                     changed
    /corrected       corrected intervals: recording, time_s, rr_ms, gap, origin
    /windows         one row per analysis window: recording, window, quality, every metric
    /daily/<column>  the daily table, one dataset per column

A few large datasets instead of thousands of small groups keep writing a season of files
fast and reading it into pandas or numpy simple. No subject id or file name becomes an HDF5
name: they are values in the tables; the only names derived from outside text (the daily
table's extra columns) are used only when they are plain identifiers, else replaced by
``column_<index>``. The file is written under a temporary name and renamed when complete.
"""

from __future__ import annotations

import json
import os
import re
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

import numpy as np

from .._atomic import atomic_path
from .._plain import canonical_json, digest
from .._version import __version__
from ..clean._result import LABELS
from ..errors import InputError

__all__ = [
    "STORE_FORMAT",
    "STORE_VERSION",
    "read_store_daily",
    "read_store_index",
    "read_store_recording",
    "read_store_windows",
    "recording_key",
    "write_store",
]

STORE_FORMAT = "rrkit-store"
STORE_VERSION = 1
_BOOL_NA = -1
_REC_TEXT = ("key", "subject", "source", "sha256", "start", "date", "read_info",
             "clean_summary", "warnings")
_REC_INT = ("interval_start", "interval_stop", "corrected_start", "corrected_stop",
            "window_start", "window_stop")


_PLAIN_NAME = re.compile(r"[A-Za-z][A-Za-z0-9_]{0,63}")


def _dataset_name(column: str, index: int) -> str:
    """The column name when it is a plain identifier, else ``column_<index>`` (never a path)."""
    return column if _PLAIN_NAME.fullmatch(column) else f"column_{index:03d}"


def _json(obj: Any) -> str:
    return json.dumps(obj, sort_keys=True, default=str)


def recording_key(start: str | None, sha256: str) -> str:
    """Key of one recording: ``YYYYMMDDTHHMMSS_<sha12>`` (or ``YYYYMMDD_`` / ``undated_``).

    Made only of digits, ``T``, ``_`` and hex digits, whatever the input file was called.

    Examples
    --------
    >>> recording_key("2026-03-01T07:10:00+01:00", "ab" * 32)
    '20260301T071000_abababababab'
    """
    import datetime as dt

    digest = "".join(c for c in str(sha256).lower() if c in "0123456789abcdef")[:12] or "0" * 12
    if not start:
        return f"undated_{digest}"
    text = str(start)
    try:
        if len(text) == 10:
            return f"{dt.date.fromisoformat(text):%Y%m%d}_{digest}"
        return f"{dt.datetime.fromisoformat(text):%Y%m%dT%H%M%S}_{digest}"
    except ValueError:
        return f"undated_{digest}"


def write_store(
    path: str | os.PathLike[str],
    recordings: Iterable[Mapping[str, Any]],
    *,
    daily=None,
    settings: Any = None,
    fsync: bool = True,
) -> list[str]:
    """Write the store atomically.

    Parameters
    ----------
    path : path-like
        The ``.h5`` file (replaced when complete).
    recordings : iterable of mapping
        One per recording: ``subject``, ``source``, ``sha256``, ``start`` (ISO or None),
        ``date`` (ISO or None), ``used_in_daily`` (bool), ``read_info``, ``clean_summary``
        (mappings), ``warnings`` (list of str), ``rows`` (list of dicts, one per window) and
        ``arrays``: ``raw_beat_times_s, raw_rr_ms, raw_gaps, label_codes`` (uint8 indices into
        `rrkit.clean.LABELS`), ``changed,
        corrected_beat_times_s, corrected_rr_ms, corrected_gaps, origin``.
    daily : pandas.DataFrame, optional
        The daily table, stored under ``/daily``.
    settings : DailySettings or mapping, optional
        The settings every recording was processed with: root attribute ``settings``
        (`rrkit._plain.canonical_json`) and ``settings_sha256`` (`rrkit._plain.digest`, the
        same hash as the settings' own ``digest()``).
    fsync : bool
        Flush to disk before the rename.

    Returns
    -------
    list of str
        The recording keys, in the order written.
    """
    import h5py

    recs = list(recordings)
    n = len(recs)
    settings_text = canonical_json({} if settings is None else settings)
    text = h5py.string_dtype("utf-8")
    rec_dtype = np.dtype([*((k, text) for k in _REC_TEXT), ("used_in_daily", np.int8),
                          ("t0_s", np.float64), ("corrected_t0_s", np.float64),
                          *((k, np.int64) for k in _REC_INT)])
    keys: list[str] = []
    seen: set[str] = set()
    cols: dict[str, list] = {k: [] for k in rec_dtype.names}
    raw_t, raw_rr, raw_gap, raw_lab, raw_chg = [], [], [], [], []
    cor_t, cor_rr, cor_gap, cor_org = [], [], [], []
    n_raw, n_cor, win_rows = [], [], []
    for i, rec in enumerate(recs):
        a = rec["arrays"]
        key = recording_key(rec.get("start") or rec.get("date"), rec["sha256"])
        base, k = key, 1
        while key in seen:
            k += 1
            key = f"{base}_{k}"
        seen.add(key)
        keys.append(key)
        rt = np.asarray(a["raw_beat_times_s"], dtype=np.float64)
        ct = np.asarray(a["corrected_beat_times_s"], dtype=np.float64)
        rows = list(rec.get("rows") or [])
        cols["key"].append(key)
        for name in ("subject", "source", "sha256", "start", "date"):
            cols[name].append(str(rec.get(name) or ""))
        cols["read_info"].append(_json(rec.get("read_info") or {}))
        cols["clean_summary"].append(_json(rec.get("clean_summary") or {}))
        cols["warnings"].append(_json(list(rec.get("warnings") or [])))
        cols["used_in_daily"].append(1 if rec.get("used_in_daily") else 0)
        cols["t0_s"].append(rt[0] if rt.size else np.nan)
        cols["corrected_t0_s"].append(ct[0] if ct.size else np.nan)
        raw_t.append(rt[1:])
        raw_rr.append(np.asarray(a["raw_rr_ms"], dtype=np.float64))
        raw_gap.append(np.asarray(a["raw_gaps"], dtype=bool))
        raw_lab.append(np.asarray(a["label_codes"], dtype=np.uint8))
        raw_chg.append(np.asarray(a["changed"], dtype=bool))
        cor_t.append(ct[1:])
        cor_rr.append(np.asarray(a["corrected_rr_ms"], dtype=np.float64))
        cor_gap.append(np.asarray(a["corrected_gaps"], dtype=bool))
        cor_org.append(np.asarray(a["origin"], dtype=np.int64))
        n_raw.append(raw_rr[-1].size)
        n_cor.append(cor_rr[-1].size)
        win_rows.extend({"recording": i, **r} for r in rows)
    n_win = np.bincount([r["recording"] for r in win_rows], minlength=n) if win_rows else \
        np.zeros(n, dtype=np.int64)
    for part, sizes in (("interval", n_raw), ("corrected", n_cor), ("window", n_win)):
        stop = np.cumsum(np.asarray(sizes, dtype=np.int64))
        cols[f"{part}_stop"] = stop
        cols[f"{part}_start"] = stop - np.asarray(sizes, dtype=np.int64)
    table = np.zeros(n, dtype=rec_dtype)
    for name in rec_dtype.names:
        if n:
            table[name] = cols[name]

    def cat(parts, dtype):
        return np.concatenate(parts).astype(dtype, copy=False) if parts else np.zeros(0, dtype)

    ids = np.repeat(np.arange(n, dtype=np.int32), np.asarray(n_raw, dtype=np.int64))
    label_enum = h5py.enum_dtype({name: i for i, name in enumerate(LABELS)}, basetype="u1")
    intervals = np.zeros(ids.size, dtype=[
        ("recording", np.int32), ("time_s", np.float64), ("rr_ms", np.float64),
        ("gap", np.bool_), ("label", label_enum), ("changed", np.bool_)])
    intervals["recording"] = ids
    intervals["time_s"] = cat(raw_t, np.float64)
    intervals["rr_ms"] = cat(raw_rr, np.float64)
    intervals["gap"] = cat(raw_gap, bool)
    intervals["label"] = cat(raw_lab, np.uint8)
    intervals["changed"] = cat(raw_chg, bool)
    cids = np.repeat(np.arange(n, dtype=np.int32), np.asarray(n_cor, dtype=np.int64))
    corrected = np.zeros(cids.size, dtype=[
        ("recording", np.int32), ("time_s", np.float64), ("rr_ms", np.float64),
        ("gap", np.bool_), ("origin", np.int64)])
    corrected["recording"] = cids
    corrected["time_s"] = cat(cor_t, np.float64)
    corrected["rr_ms"] = cat(cor_rr, np.float64)
    corrected["gap"] = cat(cor_gap, bool)
    corrected["origin"] = cat(cor_org, np.int64)

    with atomic_path(path, fsync=fsync) as tmp, h5py.File(tmp, "w", track_order=True) as h5:
        h5.attrs["format"] = STORE_FORMAT
        h5.attrs["format_version"] = STORE_VERSION
        h5.attrs["rrkit_version"] = __version__
        h5.attrs["settings"] = settings_text
        h5.attrs["settings_sha256"] = digest({} if settings is None else settings)
        h5.attrs["n_recordings"] = n
        h5.create_dataset("recordings", data=table)
        h5.create_dataset("intervals", data=intervals)
        h5.create_dataset("corrected", data=corrected)
        h5.create_dataset("windows", data=_rows_array(win_rows))
        if daily is not None:
            _write_table(h5.create_group("daily", track_order=True), daily)
    return keys


def _rows_array(rows: list[Mapping[str, Any]]) -> np.ndarray:
    import h5py

    keys: list[str] = []
    for r in rows:
        keys.extend(k for k in r if k not in keys)
    if not keys:
        keys = ["recording"]
    text = h5py.string_dtype("utf-8")
    fields = []
    for k in keys:
        vals = [r.get(k) for r in rows]
        if k == "recording":
            fields.append((k, np.int32))
        elif all(v is None or (isinstance(v, (int, float, np.integer, np.floating))
                               and not isinstance(v, bool)) for v in vals):
            fields.append((k, np.float64))
        else:
            fields.append((k, text))
    arr = np.zeros(len(rows), dtype=np.dtype(fields))
    for k, kind in fields:
        vals = [r.get(k) for r in rows]
        if kind is text:
            arr[k] = ["" if v is None else str(v) for v in vals]
        else:
            arr[k] = [np.nan if v is None else v for v in vals]
    return arr


def _write_table(g, df) -> None:
    import h5py
    import pandas as pd

    g.attrs["columns"] = _json([str(c) for c in df.columns])
    g.attrs["n_rows"] = len(df)
    text = h5py.string_dtype("utf-8")
    for i, col in enumerate(df.columns):
        s = df[col]
        name = _dataset_name(str(col), i)
        while name in g:  # a manifest column may be called like a replaced one
            name += "_"
        if pd.api.types.is_bool_dtype(s):
            na = s.isna().to_numpy()
            vals = s.fillna(False).astype(bool).to_numpy()
            data = np.where(na, _BOOL_NA, vals.astype(np.int8)).astype(np.int8)
            ds = g.create_dataset(name, data=data)
            ds.attrs["encoding"] = "bool: 1 true, 0 false, -1 unknown"
        elif pd.api.types.is_numeric_dtype(s):
            ds = g.create_dataset(name, data=pd.to_numeric(s).astype("float64").to_numpy(
                dtype=np.float64, na_value=np.nan))
            ds.attrs["encoding"] = "float64, NaN = unknown"
        else:
            vals = ["" if _missing(v) else (v.isoformat() if hasattr(v, "isoformat") else str(v))
                    for v in s]
            ds = g.create_dataset(name, data=np.array(vals, dtype=object), dtype=text)
            ds.attrs["encoding"] = "utf-8 text, '' = unknown"
        ds.attrs["column"] = str(col)


def _missing(v) -> bool:
    import pandas as pd

    return v is None or v is pd.NA or (isinstance(v, float) and np.isnan(v))


def _open(path):
    import h5py

    p = Path(path)
    if not p.is_file():
        raise FileNotFoundError(2, "No such file", str(p))
    h5 = h5py.File(p, "r")
    if h5.attrs.get("format") != STORE_FORMAT:
        found = h5.attrs.get("format")
        h5.close()
        raise InputError(f"not an rrkit store (format attribute {found!r}, expected "
                         f"{STORE_FORMAT!r})", path=p)
    return h5


def _decode(arr: np.ndarray):
    import pandas as pd

    data = {}
    for name in arr.dtype.names:
        col = arr[name]
        if col.dtype.kind in ("O", "S"):
            data[name] = [x.decode() if isinstance(x, bytes) else x for x in col]
        else:
            data[name] = col
    return pd.DataFrame(data)


def read_store_index(path: str | os.PathLike[str]):
    """The ``/recordings`` table as a DataFrame (one row per recording, in stored order)."""
    with _open(path) as h5:
        df = _decode(h5["recordings"][()])
    df["used_in_daily"] = df["used_in_daily"].astype(bool)
    return df


def read_store_windows(path: str | os.PathLike[str]):
    """The ``/windows`` table (one row per window; ``recording`` is the row in the index)."""
    with _open(path) as h5:
        return _decode(h5["windows"][()])


def read_store_recording(path: str | os.PathLike[str], key: str | int) -> dict[str, Any]:
    """Everything stored for one recording.

    Parameters
    ----------
    key : str or int
        The recording's ``key`` (see `recording_key`) or its row in the index.

    Returns
    -------
    dict
        ``raw`` and ``corrected`` (`Recording`), ``labels`` (str array), ``changed``,
        ``origin``, ``windows`` (DataFrame), ``read_info``, ``clean_summary``, ``settings``
        (dicts) and the index row's text fields.
    """
    from ..recording import Recording

    with _open(path) as h5:
        idx = h5["recordings"]
        keys = [k.decode() if isinstance(k, bytes) else k for k in idx["key"]]
        if isinstance(key, (int, np.integer)) and not isinstance(key, bool):
            i = int(key)
            if not 0 <= i < len(keys):
                raise InputError(f"recording index {i} is outside 0..{len(keys) - 1}", path=path)
        elif key in keys:
            i = keys.index(key)
        else:
            raise InputError(f"no recording {key!r} in this store", path=path,
                             hint="list them with read_store_index")
        row = idx[i]
        iv = h5["intervals"][int(row["interval_start"]):int(row["interval_stop"])]
        cv = h5["corrected"][int(row["corrected_start"]):int(row["corrected_stop"])]
        wv = h5["windows"][int(row["window_start"]):int(row["window_stop"])]
        settings = json.loads(h5.attrs["settings"])
    text = {k: (row[k].decode() if isinstance(row[k], bytes) else row[k]) for k in _REC_TEXT}

    def _rec(t0, block):
        if block.size == 0:
            return Recording(np.zeros(0), np.zeros(0), subject=text["subject"],
                             source=text["source"])
        t = np.concatenate(([t0], block["time_s"]))
        return Recording(t, block["rr_ms"], gaps=block["gap"], subject=text["subject"],
                         source=text["source"])

    return {
        "raw": _rec(float(row["t0_s"]), iv),
        "corrected": _rec(float(row["corrected_t0_s"]), cv),
        "labels": np.asarray(LABELS)[iv["label"].astype(np.intp)],
        "changed": iv["changed"].astype(bool),
        "origin": cv["origin"].astype(np.int64),
        "windows": _decode(wv),
        "used_in_daily": bool(row["used_in_daily"]),
        "settings": settings,
        "read_info": json.loads(text["read_info"]),
        "clean_summary": json.loads(text["clean_summary"]),
        "warnings": json.loads(text["warnings"]),
        **{k: text[k] for k in ("key", "subject", "source", "sha256", "start", "date")},
    }


def read_store_daily(path: str | os.PathLike[str]):
    """The daily table stored under ``/daily`` (flags as nullable booleans, dates as text)."""
    import pandas as pd

    with _open(path) as h5:
        if "daily" not in h5:
            raise InputError("this store holds no daily table", path=path)
        g = h5["daily"]
        data = {}
        for name in g:
            ds = g[name]
            col = ds.attrs["column"]
            enc = ds.attrs["encoding"]
            v = ds[()]
            if enc.startswith("bool"):
                data[col] = pd.array([None if x == _BOOL_NA else bool(x) for x in v],
                                     dtype="boolean")
            elif enc.startswith("utf-8"):
                data[col] = [None if x in (b"", "") else
                             (x.decode() if isinstance(x, bytes) else x) for x in v]
            else:
                data[col] = v
        order = json.loads(g.attrs["columns"])
    return pd.DataFrame(data)[[c for c in order if c in data]]
