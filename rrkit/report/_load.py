"""Read what a `rrkit daily` run wrote: the daily table, errors.csv and the provenance."""

from __future__ import annotations

import datetime as dt
import json
import os
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..errors import InputError
from ._columns import ERROR_COLUMNS, resolve_columns

__all__ = ["RunFiles", "load_run"]

_STORE_SUFFIXES = (".h5", ".hdf5")
_FLAG_TEXT = {"true": True, "false": False, "1": True, "0": False, "": None, "nan": None,
              "<na>": None, "none": None}
_NUMERIC = ("ln_rmssd", "ln_7d", "ln_low", "ln_high", "hr_7d", "hr_low", "hr_high", "n_ok_7d",
            "n_ok_baseline", "week_days", "week_ok_days")
_FLAGS = ("ln_below", "ln_above", "hr_below", "hr_above")
_TEXT = ("subject", "quality", "quality_reason", "source", "caution")


@dataclass(frozen=True)
class RunFiles:
    """The outputs of one daily run, as the report reads them.

    Attributes
    ----------
    table : pandas.DataFrame
        The daily table (dates as `datetime.date`, flags as nullable booleans).
    columns : dict
        Report name -> column of ``table`` (see `rrkit.report._columns.COLUMNS`).
    errors : pandas.DataFrame
        ``path, error_type, message`` of the files that failed (empty when none failed).
    errors_found : bool
        Whether an ``errors.csv`` was found beside the table.
    settings : dict or None
        The run's settings (provenance or store), None when neither was found.
    provenance : dict
        ``provenance.json`` as read (empty when absent).
    run_version : str or None
        The rrkit version that made the run.
    origin : Path
        The file the daily table was read from.
    """

    table: Any
    columns: dict
    errors: Any
    errors_found: bool
    settings: dict | None
    provenance: dict = field(default_factory=dict)
    run_version: str | None = None
    origin: Path = Path()


def load_run(source: str | os.PathLike[str]) -> RunFiles:
    """Read a run's output folder, its ``store.h5`` or its ``daily.csv``.

    Parameters
    ----------
    source : path-like
        The output folder of `rrkit daily` / `rrkit.run_daily` (its ``store.h5`` is read when
        present, else ``daily.csv``), a store file, or a daily-table CSV. ``errors.csv`` and
        ``provenance.json`` are looked for beside it.

    Returns
    -------
    RunFiles

    Raises
    ------
    InputError
        When no daily table is there, or its columns or values are not those of a daily table.
    FileNotFoundError
        When ``source`` does not exist.
    """
    src = Path(source)
    if not src.exists():
        raise FileNotFoundError(2, "No such file or folder", str(src))
    if src.is_dir():
        folder = src
        store, csv = src / "store.h5", src / "daily.csv"
        if store.is_file():
            origin = store
        elif csv.is_file():
            origin = csv
        else:
            raise InputError(f"{src} holds no daily table (neither store.h5 nor daily.csv)",
                             hint="give the output folder of `rrkit daily`")
    else:
        folder, origin = src.parent, src
    settings, run_version = None, None
    if origin.suffix.lower() in _STORE_SUFFIXES:
        table, settings, run_version = _read_store(origin)
    else:
        table = _read_csv(origin)
    provenance = _read_json(folder / "provenance.json")
    if provenance:
        settings = provenance.get("settings", settings)
        run_version = provenance.get("rrkit_version", run_version)
    cols = resolve_columns(table.columns, where=str(origin))
    table = _normalise(table, cols, origin)
    errors_path = folder / "errors.csv"
    errors = _read_errors(errors_path)
    return RunFiles(table=table, columns=cols, errors=errors,
                    errors_found=errors_path.is_file(), settings=settings,
                    provenance=provenance, run_version=run_version, origin=origin)


def _read_store(path: Path):
    import h5py

    from ..io.store import read_store_daily

    table = read_store_daily(path)
    with h5py.File(path, "r") as h5:
        raw = h5.attrs.get("settings")
        version = h5.attrs.get("rrkit_version")
    settings = json.loads(raw) if isinstance(raw, (str, bytes)) else None
    return table, settings, (None if version is None else str(version))


def _read_csv(path: Path):
    import pandas as pd

    try:
        return pd.read_csv(path, dtype={"subject": str}, keep_default_na=True)
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise InputError(f"not a daily table CSV ({' '.join(str(exc).split())})",
                         path=path) from None


def _read_json(path: Path) -> dict:
    if not path.is_file():
        return {}
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"not a provenance file ({exc})", path=path) from None
    return doc if isinstance(doc, dict) else {}


def _normalise(table, cols: dict, origin: Path):
    """Dates as `datetime.date`, flags as nullable booleans, numbers as float, text as str."""
    import numpy as np
    import pandas as pd

    t = table.copy()
    try:
        dates = pd.to_datetime(t[cols["date"]].astype(str), format="%Y-%m-%d")
    except (ValueError, TypeError):
        bad = next((v for v in t[cols["date"]].astype(str)
                    if not _is_iso_date(v)), t[cols["date"]].iloc[0])
        raise InputError(f"column {cols['date']!r} holds {bad!r}, expected dates YYYY-MM-DD",
                         path=origin) from None
    t[cols["date"]] = [d.date() for d in dates]
    for key in _NUMERIC:
        c = cols.get(key)
        if c is None:
            continue
        try:
            t[c] = pd.to_numeric(t[c]).astype("float64")
        except (ValueError, TypeError):
            raise InputError(f"column {c!r} holds text where numbers were expected",
                             path=origin) from None
    for key in _FLAGS:
        c = cols.get(key)
        if c is None:
            continue
        t[c] = _flag_array(t[c], c, origin)
    for key in _TEXT:
        c = cols.get(key)
        if c is None:
            continue
        t[c] = [("" if v is None or (isinstance(v, float) and np.isnan(v)) or v is pd.NA
                 else str(v)) for v in t[c]]
    return t


def _is_iso_date(text: str) -> bool:
    try:
        dt.date.fromisoformat(text)
    except ValueError:
        return False
    return True


def _flag_array(values, name: str, origin: Path):
    import pandas as pd

    if isinstance(values.dtype, pd.BooleanDtype):
        return values
    out = []
    for v in values:
        if v is None or v is pd.NA or (isinstance(v, float) and v != v):
            out.append(None)
        elif isinstance(v, bool) or type(v).__name__ == "bool_":
            out.append(bool(v))
        else:
            key = str(v).strip().lower()
            if key not in _FLAG_TEXT:
                raise InputError(f"column {name!r} holds {v!r}, expected True, False or empty",
                                 path=origin)
            out.append(_FLAG_TEXT[key])
    return pd.array(out, dtype="boolean")


def _read_errors(path: Path):
    """``errors.csv`` with the report's column names; each message without the file's path
    (the table shows the path beside it)."""
    import pandas as pd

    empty = pd.DataFrame(columns=list(ERROR_COLUMNS))
    if not path.is_file():
        return empty
    try:
        raw = pd.read_csv(path, dtype=str, keep_default_na=False)
    except pd.errors.EmptyDataError:
        return empty
    except (pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise InputError(f"not an errors table ({' '.join(str(exc).split())})",
                         path=path) from None
    out = {}
    for key, names in ERROR_COLUMNS.items():
        found = next((n for n in names if n in raw.columns), None)
        if found is None:
            raise InputError(f"errors table lacks a {' or '.join(map(repr, names))} column",
                             path=path)
        out[key] = raw[found].astype(str)
    errors = pd.DataFrame(out)
    errors["message"] = [_without_path(m, p)
                         for m, p in zip(errors["message"], errors["path"], strict=True)]
    return errors


def _without_path(message: str, path: str) -> str:
    """``'/data/R01/a.txt, line 3: bad'`` -> ``'line 3: bad'`` when the message starts with
    the file's own path (any folder before it); otherwise the message unchanged."""
    i = message.find(path) if path else -1
    if i < 0 or " " in message[:i]:
        return message
    rest = message[i + len(path):].lstrip(":, ")
    return rest or message
