"""The HDF5 store of a batch run: every recording's intervals, labels, corrections and metrics.

The layout is described in ``docs/hdf5-layout.md``; in short::

    /                                   attrs: format, format_version, rrkit_version, settings
    /recordings/<subject>/<recording>/  attrs: subject, source, sha256, start, date, ...
        raw/beat_times_s, raw/rr_ms, raw/gaps
        labels, changed
        corrected/beat_times_s, corrected/rr_ms, corrected/gaps, corrected/origin
        windows                         compound table, one row per analysis window
    /daily/<column>                     the daily table, one dataset per column

Group names are made with `rrkit.batch.safe_name` (subject) and from digits and hex digests
(recording), so no subject id or file name can reach outside its group. The original values
are attributes. The file is written to a temporary name and renamed when complete.
"""

from __future__ import annotations

import json
import os
from collections.abc import Iterable, Mapping
from pathlib import Path
from typing import Any

import numpy as np

from .._version import __version__
from ..errors import InputError

__all__ = ["STORE_FORMAT", "STORE_VERSION", "write_store", "read_store_index",
           "read_store_recording", "read_store_daily", "recording_key"]

STORE_FORMAT = "rrkit-store"
STORE_VERSION = 1
_BOOL_NA = -1


def _json(obj: Any) -> str:
    return json.dumps(obj, sort_keys=True, default=str)


def recording_key(start: str | None, sha256: str) -> str:
    """Group name of one recording: ``YYYYMMDDTHHMMSS_<sha12>`` (or ``YYYYMMDD_`` / ``undated_``).

    Only digits, ``T``, ``_`` and hex digits, whatever the input file was called.
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
    settings: Mapping[str, Any] | None = None,
    fsync: bool = True,
) -> dict[str, str]:
    """Write the store atomically.

    Parameters
    ----------
    path : path-like
        The ``.h5`` file (replaced when complete).
    recordings : iterable of mapping
        One per recording: ``subject``, ``source``, ``sha256``, ``start`` (ISO or None),
        ``date`` (ISO or None), ``used_in_daily`` (bool), ``read_info``, ``clean_summary``,
        ``settings`` (mappings), ``rows`` (list of dicts, one per window) and ``arrays`` (the
        arrays named in the layout: ``raw_beat_times_s, raw_rr_ms, raw_gaps, labels, changed,
        corrected_beat_times_s, corrected_rr_ms, corrected_gaps, origin``).
    daily : pandas.DataFrame, optional
        The daily table, stored under ``/daily``.
    settings : mapping, optional
        The run's settings (root attribute ``settings``, JSON).
    fsync : bool
        Flush to disk before the rename.

    Returns
    -------
    dict
        Source path -> HDF5 group path of each recording.
    """
    import h5py

    from ..batch._atomic import atomic_path
    from ..batch._safe import safe_name

    groups: dict[str, str] = {}
    with atomic_path(path, fsync=fsync) as tmp, h5py.File(tmp, "w", track_order=True) as h5:
        h5.attrs["format"] = STORE_FORMAT
        h5.attrs["format_version"] = STORE_VERSION
        h5.attrs["rrkit_version"] = __version__
        h5.attrs["settings"] = _json(dict(settings or {}))
        top = h5.create_group("recordings", track_order=True)
        for rec in recordings:
            subj = str(rec["subject"])
            sg_name = safe_name(subj)
            sg = top.get(sg_name)
            if sg is None:
                sg = top.create_group(sg_name, track_order=True)
                sg.attrs["subject"] = subj
            key = recording_key(rec.get("start") or rec.get("date"), rec["sha256"])
            name, k = key, 1
            while name in sg:
                k += 1
                name = f"{key}_{k}"
            g = sg.create_group(name)
            groups[str(rec["source"])] = g.name
            _write_recording(g, rec)
        if daily is not None:
            _write_table(h5.create_group("daily", track_order=True), daily)
    return groups


def _write_recording(g, rec: Mapping[str, Any]) -> None:
    g.attrs["subject"] = str(rec["subject"])
    g.attrs["source"] = str(rec["source"])
    g.attrs["sha256"] = str(rec["sha256"])
    g.attrs["start"] = str(rec.get("start") or "")
    g.attrs["date"] = str(rec.get("date") or "")
    g.attrs["used_in_daily"] = bool(rec.get("used_in_daily", False))
    for k in ("read_info", "clean_summary", "settings"):
        g.attrs[k] = _json(rec.get(k) or {})
    a = rec["arrays"]
    raw = g.create_group("raw")
    raw.create_dataset("beat_times_s", data=np.asarray(a["raw_beat_times_s"], dtype=np.float64))
    raw.create_dataset("rr_ms", data=np.asarray(a["raw_rr_ms"], dtype=np.float64))
    raw.create_dataset("gaps", data=np.asarray(a["raw_gaps"], dtype=bool))
    labels = np.asarray(a["labels"], dtype=str)
    width = max(1, max((len(x) for x in labels), default=1))
    g.create_dataset("labels", data=labels.astype(f"S{width}"))
    g.create_dataset("changed", data=np.asarray(a["changed"], dtype=bool))
    cor = g.create_group("corrected")
    cor.create_dataset("beat_times_s", data=np.asarray(a["corrected_beat_times_s"], np.float64))
    cor.create_dataset("rr_ms", data=np.asarray(a["corrected_rr_ms"], dtype=np.float64))
    cor.create_dataset("gaps", data=np.asarray(a["corrected_gaps"], dtype=bool))
    cor.create_dataset("origin", data=np.asarray(a["origin"], dtype=np.int64))
    _write_rows(g, "windows", rec.get("rows") or [])


def _write_rows(g, name: str, rows: list[Mapping[str, Any]]) -> None:
    import h5py

    keys: list[str] = []
    for r in rows:
        keys.extend(k for k in r if k not in keys)
    text = h5py.string_dtype("utf-8")
    fields = []
    for k in keys:
        vals = [r.get(k) for r in rows]
        if all(isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(v, bool)
               or v is None for v in vals):
            fields.append((k, np.float64))
        else:
            fields.append((k, text))
    arr = np.zeros(len(rows), dtype=np.dtype(fields))
    for k, kind in fields:
        vals = [r.get(k) for r in rows]
        if kind is np.float64:
            arr[k] = [np.nan if v is None else float(v) for v in vals]
        else:
            arr[k] = ["" if v is None else str(v) for v in vals]
    g.create_dataset(name, data=arr)


def _write_table(g, df) -> None:
    import h5py
    import pandas as pd

    from ..batch._safe import safe_name

    g.attrs["columns"] = _json([str(c) for c in df.columns])
    g.attrs["n_rows"] = len(df)
    text = h5py.string_dtype("utf-8")
    for col in df.columns:
        s = df[col]
        name = safe_name(col)
        if pd.api.types.is_bool_dtype(s):
            data = np.where(s.isna().to_numpy(), _BOOL_NA, s.fillna(False).astype(bool).to_numpy()
                            .astype(np.int8)).astype(np.int8)
            ds = g.create_dataset(name, data=data)
            ds.attrs["encoding"] = "bool: 1 true, 0 false, -1 unknown"
        elif pd.api.types.is_numeric_dtype(s):
            ds = g.create_dataset(name, data=pd.to_numeric(s).astype("float64").to_numpy(
                dtype=np.float64, na_value=np.nan))
            ds.attrs["encoding"] = "float64, NaN = unknown"
        else:
            vals = ["" if (v is None or (isinstance(v, float) and np.isnan(v)) or v is pd.NA)
                    else (v.isoformat() if hasattr(v, "isoformat") else str(v)) for v in s]
            ds = g.create_dataset(name, data=np.array(vals, dtype=object), dtype=text)
            ds.attrs["encoding"] = "utf-8 text, '' = unknown"
        ds.attrs["column"] = str(col)


def _open(path):
    import h5py

    p = Path(path)
    if not p.is_file():
        raise FileNotFoundError(2, "No such file", str(p))
    h5 = h5py.File(p, "r")
    if h5.attrs.get("format") != STORE_FORMAT:
        h5.close()
        raise InputError(f"not an rrkit store (format attribute "
                         f"{h5.attrs.get('format')!r}, expected {STORE_FORMAT!r})", path=p)
    return h5


def read_store_index(path: str | os.PathLike[str]):
    """One row per stored recording: ``group, subject, source, sha256, start, date,
    used_in_daily, n_intervals``."""
    import pandas as pd

    rows = []
    with _open(path) as h5:
        for sg in h5["recordings"].values():
            for g in sg.values():
                rows.append({"group": g.name, "subject": g.attrs["subject"],
                             "source": g.attrs["source"], "sha256": g.attrs["sha256"],
                             "start": g.attrs["start"] or None, "date": g.attrs["date"] or None,
                             "used_in_daily": bool(g.attrs["used_in_daily"]),
                             "n_intervals": int(g["raw/rr_ms"].shape[0])})
    return pd.DataFrame(rows, columns=["group", "subject", "source", "sha256", "start", "date",
                                       "used_in_daily", "n_intervals"])


def read_store_recording(path: str | os.PathLike[str], group: str) -> dict[str, Any]:
    """Everything stored for one recording.

    Returns
    -------
    dict
        ``raw`` and ``corrected`` (`Recording`), ``labels`` (str array), ``changed``,
        ``origin``, ``windows`` (DataFrame), ``read_info``, ``clean_summary``, ``settings``
        (dicts) and the scalar attributes.
    """
    import pandas as pd

    from ..recording import Recording

    with _open(path) as h5:
        if group not in h5 or not group.startswith("/recordings/"):
            raise InputError(f"no recording group {group!r} in this store", path=path,
                             hint="list them with read_store_index")
        g = h5[group]
        attrs = {k: g.attrs[k] for k in ("subject", "source", "sha256", "start", "date")}
        raw = Recording(g["raw/beat_times_s"][()], g["raw/rr_ms"][()], gaps=g["raw/gaps"][()],
                        subject=attrs["subject"], source=attrs["source"])
        cor = Recording(g["corrected/beat_times_s"][()], g["corrected/rr_ms"][()],
                        gaps=g["corrected/gaps"][()], subject=attrs["subject"],
                        source=attrs["source"])
        w = g["windows"][()]
        windows = pd.DataFrame({n: ([x.decode() if isinstance(x, bytes) else x for x in w[n]]
                                    if w.dtype[n].kind == "O" else w[n]) for n in w.dtype.names}
                               if w.dtype.names else {})
        out = {
            "raw": raw, "corrected": cor,
            "labels": g["labels"][()].astype(str),
            "changed": g["changed"][()], "origin": g["corrected/origin"][()],
            "windows": windows,
            "used_in_daily": bool(g.attrs["used_in_daily"]),
            **{k: json.loads(g.attrs[k]) for k in ("read_info", "clean_summary", "settings")},
            **attrs,
        }
    return out


def read_store_daily(path: str | os.PathLike[str]):
    """The daily table stored under ``/daily`` (text and flags decoded; dates as text)."""
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
