"""Untrusted strings at the output boundary: safe names and spreadsheet-safe CSV cells.

Subject ids, manifest values and file names come from outside. Two things can go wrong when
they reach the output folder:

* used as a file or HDF5 group name, a value such as ``../../etc`` or ``/tmp/x`` could point
  outside the output folder or into another group. `safe_name` turns any text into one plain
  path component (letters, digits, ``.``, ``_``, ``-``), never ``.`` or ``..``, and appends a
  short hash of the original whenever it had to change something, so two different ids never
  share a name.
* a CSV text cell starting with ``=``, ``+``, ``-`` or ``@`` (or a tab or carriage return) is
  run as a formula by common spreadsheet programs (the "CSV injection" problem described by the
  OWASP Foundation). `neutralize_cells` prefixes such *text* cells with a single quote, which
  spreadsheets show as text; numeric columns are never touched, so ``-0.5`` stays a number.
"""

from __future__ import annotations

import hashlib
import re
import unicodedata

__all__ = ["neutralize_cell", "neutralize_cells", "safe_name"]

_ALLOWED = re.compile(r"[^A-Za-z0-9._-]+")
# device names that some file systems refuse as file names (common practice to avoid them)
_RESERVED = {"con", "prn", "aux", "nul", *(f"com{i}" for i in range(10)),
             *(f"lpt{i}" for i in range(10))}
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def safe_name(text: object, *, max_len: int = 64) -> str:
    """Turn any value into one safe path component (file or HDF5 group name).

    Parameters
    ----------
    text : object
        The untrusted value (converted with ``str``).
    max_len : int
        Longest result, in characters (default 64).

    Returns
    -------
    str
        Only ``A-Z a-z 0-9 . _ -``; never empty, never starting with ``.`` or ``-``, never a
        reserved device name. When the result differs from ``str(text)``, an 8-character hex
        digest of the original is appended (``-1a2b3c4d``), so distinct inputs stay distinct.

    Examples
    --------
    >>> safe_name("A01")
    'A01'
    >>> safe_name("../../etc/passwd").startswith("etc_passwd-")
    True
    """
    raw = str(text)
    norm = unicodedata.normalize("NFKC", raw)
    name = _ALLOWED.sub("_", norm)
    name = re.sub(r"\.{2,}", "_", name)
    name = re.sub(r"_+", "_", name).strip("_").lstrip(".-").strip("_")
    if not name or set(name) <= {"."}:
        name = "x"
    if name.split(".")[0].lower() in _RESERVED:
        name = "x_" + name
    digest_len = 9  # "-" + 8 hex digits
    changed = name != raw
    limit = max_len - digest_len if changed else max_len
    if len(name) > limit:
        name = name[:max(limit, 1)]
        changed = True
        limit = max_len - digest_len
        name = name[:max(limit, 1)]
    if changed:
        name = f"{name}-{hashlib.sha256(raw.encode('utf-8', 'surrogatepass')).hexdigest()[:8]}"
    return name


def neutralize_cell(value: object) -> object:
    """Prefix a text value that a spreadsheet would run as a formula with ``'``.

    Non-strings (numbers, missing values) are returned unchanged.

    Examples
    --------
    >>> neutralize_cell("=1+1"), neutralize_cell("-x"), neutralize_cell(-0.5)
    ("'=1+1", "'-x", -0.5)
    """
    if isinstance(value, str) and value.startswith(_FORMULA_START):
        return "'" + value
    return value


def neutralize_cells(df):
    """Copy of a DataFrame whose text cells are neutralised (numeric columns untouched).

    Parameters
    ----------
    df : pandas.DataFrame

    Returns
    -------
    pandas.DataFrame
    """
    import pandas as pd

    out = df.copy()
    for col in out.columns:
        s = out[col]
        if pd.api.types.is_numeric_dtype(s) or pd.api.types.is_bool_dtype(s):
            continue
        if pd.api.types.is_datetime64_any_dtype(s):
            continue
        out[col] = s.map(neutralize_cell, na_action="ignore")
    if not all(isinstance(c, str) for c in out.columns):
        return out
    out.columns = [neutralize_cell(c) for c in out.columns]
    return out
