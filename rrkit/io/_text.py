"""Text files as tables: bytes, gzip, encodings, line ends, comments, header lines, separators.

This module knows nothing about heartbeats. It turns a file into a `TextTable`: one list of
string tokens per column, the 1-based line number of every data row, and a record of every
decision it took (separator, decimal mark, header line, encoding) so the caller can report it.

Rules (each recorded in `TextTable.extra`):

- ``.gz`` content is recognised by its magic bytes, whatever the file name says.
- A NUL byte, or more than 1 % control characters, means the file is binary, not text.
- UTF-16 with a byte-order mark, else UTF-8 (with or without BOM); files that are not valid
  UTF-8 are read as cp1252.
- ``\\r\\n``, ``\\r`` and ``\\n`` all end a line; line numbers count every physical line.
- ``#`` starts a comment (whole line or trailing); blank lines are skipped.
- The data start at the first line that holds a number (or an ISO 8601 date); lines before are
  header lines, and the last of them names the columns when it has as many fields as the data
  rows. A worded preamble with stray numbers followed by a header line is skipped too (see
  `_first_data_row`).
- Separator: ``;`` if the data rows hold one, else tab, else ``,``, else runs of spaces, else a
  single column. A single column whose rows all look like ``812,5`` uses a decimal comma (see
  `_lone_decimal_comma`). With ``;``, tab or space separators a ``,`` inside numbers is a
  decimal comma; so is a ``,`` inside a quoted number of a comma-separated row
  (``"0,0","812,5"``, as ``pandas.read_csv(decimal=",")`` reads it). A separator ending every
  row is dropped.
- Fields are split by the standard library's `csv.reader` (double quotes, ``""`` escapes), so
  quotes are removed before a separator inside them could split a field; the separator is
  chosen from the rows with their quoted parts masked. A quoted field must end on its own line
  (line numbers stay those of the file).
"""

from __future__ import annotations

import csv
import gzip
import itertools
import os
import re
import zlib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ..errors import InputError

__all__ = ["TextTable", "load_table", "parse_numbers", "read_text"]

_GZIP_MAGIC = b"\x1f\x8b"
_SNIFF_BYTES = 65536
_MAX_CONTROL_FRACTION = 0.01
_SNIFF_ROWS = 200

_NUMBER_RE = re.compile(r"^[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?$")
_SPECIAL_RE = re.compile(r"^[+-]?(?:nan|inf|infinity)$", re.IGNORECASE)
_ISO_RE = re.compile(
    r"^\d{4}-\d{2}-\d{2}(?:[T ]\d{2}:\d{2}(?::\d{2}(?:[.,]\d+)?)?)?(?:Z|[+-]\d{2}:?\d{2})?$")
_DECIMAL_COMMA_RE = re.compile(r"^[+-]?\d*,\d+(?:[eE][+-]?\d+)?$")
_TOKEN_SPLIT_RE = re.compile(r"[,;\t '\"]+")
_QUOTED_RE = re.compile(r'"[^"]*"')
_CONTROL_RE = re.compile(r"[\x00-\x08\x0b\x0e-\x1f\x7f]")

_SEP_NAMES = {";": "semicolon", "\t": "tab", ",": "comma", None: "none (one column)", " ": "spaces"}
# the delimiter csv.reader gets: a NUL for one column (read_text refuses text holding one)
_CSV_DELIMITER = {None: "\x00", ",": ",", ";": ";", "\t": "\t", " ": " "}


@dataclass(frozen=True)
class TextTable:
    """A text file split into columns of string tokens.

    Attributes
    ----------
    path : str
        The file.
    names : list of str
        Column names (from the header line, else ``"column 1"``, ``"column 2"``, ...).
    named : bool
        True when the names come from a header line.
    columns : list of list of str
        Tokens per column, stripped of surrounding spaces.
    line_numbers : numpy.ndarray of int
        1-based line number of each data row.
    separator : str or None
        ``";"``, ``"\\t"``, ``","``, ``" "`` (runs of spaces) or None (one column).
    decimal : str
        ``"."`` or ``","``.
    extra : dict
        How the file was read (encoding, gzip, BOM, header line, skipped lines ...).
    """

    path: str
    names: list[str]
    named: bool
    columns: list[list[str]]
    line_numbers: np.ndarray
    separator: str | None
    decimal: str
    extra: dict[str, Any] = field(default_factory=dict)

    @property
    def n_rows(self) -> int:
        return int(self.line_numbers.size)

    def line_of(self, row: int) -> int:
        """1-based file line of data row ``row``."""
        return int(self.line_numbers[row])


def read_text(path: str | os.PathLike[str]) -> tuple[str, dict[str, Any]]:
    """Return the decoded text of ``path`` and how it was decoded; InputError for non-text."""
    p = Path(path)
    if not p.exists():
        raise InputError("file not found", path=p, hint="check the path")
    if p.is_dir():
        raise InputError("is a directory, expected a file", path=p)
    try:
        raw = p.read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read the file ({exc.strerror or exc})", path=p) from None
    info: dict[str, Any] = {"gzip": False}
    if raw[:2] == _GZIP_MAGIC:
        try:
            raw = gzip.decompress(raw)
        except (OSError, EOFError, zlib.error) as exc:
            raise InputError(f"damaged gzip data ({exc}), expected a complete .gz file",
                             path=p) from None
        info["gzip"] = True
    if not raw.strip():
        raise InputError("the file is empty, expected beat data", path=p)
    if raw[:2] in (b"\xff\xfe", b"\xfe\xff"):  # UTF-16 with its byte-order mark
        try:
            text = raw.decode("utf-16")
        except UnicodeDecodeError:
            raise InputError("damaged UTF-16 text, expected a text file", path=p) from None
        info.update(bom=True, encoding="utf-16")
        return text.lstrip("\ufeff"), info
    head = raw[:_SNIFF_BYTES]
    nul = head.find(b"\x00")
    if nul >= 0:
        hint = "EDF and WFDB files are known by their extension: .edf, .hea, .atr"
        if raw[:2] == b"PK":
            hint = "this looks like a zip or spreadsheet file (.xlsx); export it as CSV"
        raise InputError(f"binary data (a NUL byte at byte {nul}), expected a text file",
                         path=p, hint=hint)
    info["bom"] = raw.startswith(b"\xef\xbb\xbf")
    try:
        text = raw.decode("utf-8-sig")
        info["encoding"] = "utf-8"
    except UnicodeDecodeError:
        text = raw.decode("cp1252", errors="replace")
        info["encoding"] = "cp1252"
    sample = text[:_SNIFF_BYTES]
    n_control = len(_CONTROL_RE.findall(sample))
    n_replaced = sample.count("\ufffd") if info["encoding"] == "cp1252" else 0
    if (n_control + n_replaced) > _MAX_CONTROL_FRACTION * max(len(sample), 1):
        raise InputError(
            f"binary data ({n_control + n_replaced} control or undecodable characters in the "
            f"first {len(sample)}), expected a text file", path=p)
    return text, info


def _is_value_token(tok: str) -> bool:
    return bool(_NUMBER_RE.match(tok) or _SPECIAL_RE.match(tok) or _ISO_RE.match(tok))


def _holds_value(line: str) -> bool:
    if _is_value_token(line):
        return True
    return any(_is_value_token(t) for t in _TOKEN_SPLIT_RE.split(line) if t)


def _tokenize(rows: list[str], sep: str | None, *, path: str,
              row_lines: np.ndarray | None = None) -> list[list[str]]:
    """Fields of each row, split by `csv.reader` (quotes removed first), stripped of spaces.

    ``sep=" "`` means runs of spaces or tabs. InputError for quoting `csv` cannot read and for
    a quoted field that does not end on its own line (which would shift every line number).
    """
    if not rows:
        return []
    joined = "\n".join(rows)
    if sep == " " and '"' not in joined:
        return [r.split() for r in rows]
    if sep == " " and "\t" in joined:
        rows = joined.replace("\t", " ").split("\n")
    reader = csv.reader(rows, delimiter=_CSV_DELIMITER[sep], quotechar='"', doublequote=True,
                        skipinitialspace=True, strict=False)
    try:
        out = list(reader)
    except csv.Error as exc:
        at = reader.line_num
        raise InputError(f"unreadable quoting ({exc}), expected quoted fields like \"812,5\"",
                         path=path, line=_row_line(row_lines, at - 1)) from None
    if len(out) != len(rows):  # a quote left open ran into the next line(s)
        j = _unclosed_quote_row(rows, sep)
        raise InputError(
            f"a quote opened in {rows[j][:60]!r} is not closed on that line, expected each "
            "quoted field to end on its own line", path=path, line=_row_line(row_lines, j))
    if " " in joined or (sep != "\t" and "\t" in joined):
        out = [[t.strip() for t in r] for r in out]
    return out


def _row_line(row_lines: np.ndarray | None, j: int) -> int | None:
    if row_lines is None or not 0 <= j < row_lines.size:
        return None
    return int(row_lines[j])


def _unclosed_quote_row(rows: list[str], sep: str | None) -> int:
    """Index of the first row that `csv.reader` cannot read on its own (an open quote)."""
    delimiter = _CSV_DELIMITER[sep]
    for j, row in enumerate(rows):
        reader = csv.reader([row, ""], delimiter=delimiter, skipinitialspace=True)
        if len(list(reader)) != 2:
            return j
    return 0


def _masked(rows: list[str]) -> list[str]:
    """Rows with each quoted part replaced by ``q``, so that separators inside quotes vanish."""
    return [_QUOTED_RE.sub("q", r) if '"' in r else r for r in rows]


def _lone_decimal_comma(rows: list[str]) -> bool:
    """True when rows like ``812,5`` are single numbers with a decimal comma.

    Every row is a number with at most one comma, the whole parts have at most 9 digits (RR and
    peak times in s or ms; Unix epoch times are longer) and they do not count 1, 2, 3, ...
    (that is an index column before a comma separator).
    """
    if not all(_DECIMAL_COMMA_RE.match(r) or (_NUMBER_RE.match(r) and "," not in r and "."
                                              not in r) for r in rows):
        return False
    whole = [r.split(",", 1)[0].lstrip("+-") for r in rows]
    if any(len(w) > 9 for w in whole):
        return False
    ints = [int(w) if w.isdigit() else -1 for w in whole]  # "1e-05": no whole part to count
    return not (len(ints) > 2 and all(b - a == 1 for a, b in itertools.pairwise(ints)))


def _choose_separator(rows: list[str], header: str | None, *, path: str,
                      row_lines: np.ndarray) -> tuple[str | None, str]:
    """Separator and decimal mark from sample data rows (see the module notes)."""
    masked = _masked(rows)

    def share(ch: str) -> float:
        return sum(ch in r for r in masked) / len(masked)

    if share(";") > 0.5:
        sep = ";"
    elif share("\t") > 0.5:
        sep = "\t"
    elif share(",") > 0.5:
        masked_header = _masked([header])[0] if header else None
        if _lone_decimal_comma(rows) and not (masked_header and ("," in masked_header)):
            return None, ","
        sep = ","
    elif any(" " in r for r in masked):
        sep = " "
    else:
        sep = None
    return sep, _decimal_of(rows, sep, path=path, row_lines=row_lines)


def _decimal_of(rows: list[str], sep: str | None, *, path: str, row_lines: np.ndarray) -> str:
    """``","`` when a number among the fields holds a comma (quoted, or beside ``;``/tab)."""
    tokens = (t for r in _tokenize(rows, sep, path=path, row_lines=row_lines) for t in r)
    return "," if any("," in t for t in tokens if _NUMBER_RE.match(t)) else "."


_WORD_RE = re.compile(r"[A-Za-z]{2,}")
_PREAMBLE_MAX_ROWS = 30


def _header_like(line: str) -> bool:
    """Words and at most 20 % digits: ``RR interval (ms)``, ``time_s;rr_ms``, not ``8l5``."""
    alnum = [c for c in line if c.isalnum()]
    return bool(_WORD_RE.search(line)) and sum(c.isdigit() for c in alnum) <= 0.2 * len(alnum)


def _first_data_row(content: list[str]) -> int:
    """Index of the first data row (``len(content)`` when no row holds a value).

    The data start at the first row holding a value, except for a preamble with stray numbers
    (``Strap export 2026-03-01``, ``Device 4711``): when every row before the first value-free
    row holds words, that row looks like a header, and value rows follow it, the data start
    after it. Rows of plain numbers are never skipped this way, so data are not dropped.
    """
    n = len(content)
    first = next((i for i, row in enumerate(content) if _holds_value(row)), n)
    for j in range(first + 1, min(first + _PREAMBLE_MAX_ROWS, n)):
        if _holds_value(content[j]):
            if not _WORD_RE.search(content[j]):
                return first  # a plain data row: this is the data block
            continue
        follows = content[j + 1:j + 4]
        if _header_like(content[j]) and follows and all(_holds_value(r) for r in follows):
            return j + 1
        return first
    return first


def _split_columns(data: list[str], sep: str | None, data_lines: np.ndarray,
                   path: str) -> list[list[str]]:
    """Columns of tokens; InputError at the first row whose field count differs from row 1.

    Rows with quotes go through `csv.reader`. Without a quote in the block, `csv.reader` would
    split exactly at each separator, so the block is split by `str.split` at C speed instead.
    """
    joined = "\n".join(data)
    quoted = '"' in joined
    if sep is None and not quoted:
        return [data]
    if quoted or sep == " ":
        rows = _tokenize(data, sep, path=path, row_lines=data_lines)
        lens = np.fromiter((len(r) for r in rows), dtype=np.int64, count=len(rows))
    else:
        rows = None
        lens = np.fromiter((r.count(sep) for r in data), dtype=np.int64, count=len(data)) + 1
    n_fields = int(lens[0])
    bad = np.flatnonzero(lens != n_fields)
    if bad.size:
        j = int(bad[0])
        raise InputError(
            f"found {lens[j]} fields ({data[j][:60]!r}), expected {n_fields} like line "
            f"{data_lines[0]} ({_SEP_NAMES[sep]}-separated)", path=path, line=int(data_lines[j]))
    if rows is not None:
        if n_fields == 1:
            return [[r[0] for r in rows]]
        return [list(c) for c in zip(*rows, strict=True)]
    # every row has n_fields fields: split the whole block at once (C speed) and deal out
    flat = joined.replace("\n", sep).split(sep)
    columns = [flat[k::n_fields] for k in range(n_fields)]
    if " " in joined or (sep != "\t" and "\t" in joined):
        columns = [[t.strip() for t in c] for c in columns]
    return columns


def load_table(path: str | os.PathLike[str], *, sep: str | None = None,
               decimal: str | None = None) -> TextTable:
    """Split a text file into columns of tokens (see the module notes for the rules).

    Parameters
    ----------
    path : path-like
        The file (``.gz`` allowed).
    sep : str, optional
        Force the separator (``","``, ``";"``, ``"\\t"``, ``" "`` for runs of spaces, or
        ``"none"`` for one column).
    decimal : str, optional
        Force the decimal mark (``"."`` or ``","``).

    Raises
    ------
    InputError
        Missing, empty or binary file; no data rows; rows with differing field counts.
    """
    text, extra = read_text(path)
    path_s = str(path)
    lines = text.replace("\r\n", "\n").replace("\r", "\n").split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    stripped = [ln.strip() for ln in lines]
    n_comment = 0
    if "#" in text:
        for i, ln in enumerate(stripped):
            if "#" in ln:
                if ln.startswith("#"):
                    n_comment += 1
                    stripped[i] = ""
                else:
                    stripped[i] = ln.split("#", 1)[0].rstrip()
    numbers = [i for i, ln in enumerate(stripped, 1) if ln]
    content = [stripped[i - 1] for i in numbers]
    extra["n_comment_lines"] = n_comment
    extra["n_blank_lines"] = len(lines) - len(content) - n_comment
    if not content:
        raise InputError("the file holds only comments and blank lines, expected beat data",
                         path=path_s)
    first = _first_data_row(content)
    if first == len(content):
        raise InputError(
            f"no numbers found (line {numbers[0]}: {content[0][:60]!r}), expected beat data",
            path=path_s)
    header = content[first - 1] if first else None
    header_line = numbers[first - 1] if first else None
    data = content[first:]
    data_lines = np.asarray(numbers[first:], dtype=np.int64)
    sample = data[:_SNIFF_ROWS]
    if sep is None:
        chosen_sep, chosen_dec = _choose_separator(sample, header, path=path_s,
                                                   row_lines=data_lines)
    else:
        chosen_sep = None if sep in ("none", "") else sep
        chosen_dec = _decimal_of(sample, chosen_sep, path=path_s, row_lines=data_lines)
    if decimal is not None:
        chosen_dec = decimal
    if chosen_sep == "," and chosen_dec == "," and not any('"' in r for r in sample):
        raise InputError("a comma cannot be both the separator and the decimal mark",
                         path=path_s, hint="pass sep=';' or decimal='.'")
    columns = _split_columns(data, chosen_sep, data_lines, path_s)
    trailing_empty = len(columns) > 1 and not any(columns[-1])
    if trailing_empty:  # every row ends with a separator ("812;")
        columns.pop()
    n_fields = len(columns)
    names = [f"column {k + 1}" for k in range(n_fields)]
    named = False
    n_preamble = first
    if header is not None:
        fields = (_tokenize([header], chosen_sep, path=path_s)[0]
                  if n_fields > 1 or trailing_empty else [header])
        if trailing_empty and fields and not fields[-1]:
            fields.pop()
        if len(fields) == n_fields:
            names = [f.strip().strip('"').strip("'") or names[k] for k, f in enumerate(fields)]
            named = True
            n_preamble -= 1
    extra.update({
        "separator": _SEP_NAMES[chosen_sep],
        "decimal": chosen_dec,
        "header_line": header_line if named else None,
        "n_preamble_lines": n_preamble,
    })
    return TextTable(path_s, names, named, columns, data_lines, chosen_sep, chosen_dec, extra)


def parse_numbers(table: TextTable, col: int, *, what: str = "a number") -> np.ndarray:
    """Column ``col`` as float64; InputError at the first token that is not a finite number."""
    tokens = table.columns[col]
    if table.decimal == ",":
        tokens = "\n".join(tokens).replace(",", ".").split("\n")
    try:
        values = np.array(tokens, dtype=np.float64)
    except ValueError:
        values = None
    if values is not None and values.shape != (len(tokens),):
        values = None
    if values is None:
        for j, tok in enumerate(tokens):
            try:
                float(tok)
            except ValueError:
                raise InputError(
                    f"found {table.columns[col][j]!r} in column {table.names[col]!r}, "
                    f"expected {what}", path=table.path, line=table.line_of(j)) from None
        values = np.array([float(t) for t in tokens], dtype=np.float64)
    bad = np.flatnonzero(~np.isfinite(values))
    if bad.size:
        j = int(bad[0])
        more = f" ({bad.size} such values)" if bad.size > 1 else ""
        raise InputError(
            f"found {table.columns[col][j]!r} in column {table.names[col]!r}{more}, expected a "
            f"finite number", path=table.path, line=table.line_of(j),
            hint="remove or fix missing values; a reader never drops rows silently")
    return values


def column_type(table: TextTable, col: int) -> str:
    """``"number"``, ``"timestamp"`` or ``"text"`` from the first rows of column ``col``."""
    toks = table.columns[col][:_SNIFF_ROWS]
    if all(_ISO_RE.match(t) for t in toks):
        return "timestamp"
    numeric = sum(bool(_NUMBER_RE.match(t) or _SPECIAL_RE.match(t)) for t in toks)
    if numeric >= 0.5 * len(toks):
        return "number"
    return "text"
