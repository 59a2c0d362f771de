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

Large all-numeric files (one column, two columns, a header line; 1 MiB of text and more) go
through pandas' C reader in one call after the first lines have taken the decisions above; a
file it does not take exactly as these rules would (a bad token, a blank or ragged row, quotes,
comments) is read again line by line, which finds the line of the problem. Both paths give the
same table (``tests/test_io_fast.py`` compares them).
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
from ._checks import check_regular_file

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
    line_numbers : numpy.ndarray of int
        1-based line number of each data row.
    separator : str or None
        ``";"``, ``"\\t"``, ``","``, ``" "`` (runs of spaces) or None (one column).
    decimal : str
        ``"."`` or ``","``.
    extra : dict
        How the file was read (encoding, gzip, BOM, header line, skipped lines ...).
    head : list of list of str
        The first tokens of each column (up to 200), for deciding what a column holds.
    values : tuple of numpy.ndarray, optional
        Every column as finite float64 when the compiled parser read the file (see
        `load_table`); `parse_numbers` then returns them without parsing the tokens again.
    columns : list of list of str
        Tokens per column, stripped of surrounding spaces (split on first use when the
        compiled parser read the file).
    """

    path: str
    names: list[str]
    named: bool
    line_numbers: np.ndarray
    separator: str | None
    decimal: str
    extra: dict[str, Any] = field(default_factory=dict)
    head: list[list[str]] = field(default_factory=list)
    tokens: _Tokens | None = field(default=None, repr=False)
    values: tuple[np.ndarray, ...] | None = field(default=None, repr=False)

    @property
    def columns(self) -> list[list[str]]:
        return self.tokens.get(self.path) if self.tokens is not None else []

    @property
    def n_rows(self) -> int:
        return int(self.line_numbers.size)

    def line_of(self, row: int) -> int:
        """1-based file line of data row ``row``."""
        return int(self.line_numbers[row])


def read_text(path: str | os.PathLike[str]) -> tuple[str, dict[str, Any]]:
    """Return the decoded text of ``path`` and how it was decoded; InputError for non-text."""
    p = Path(path)
    check_regular_file(p)
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


@dataclass(frozen=True)
class _Plan:
    """What the first lines decide: where the data start, the header, separator and decimal."""

    first_line: int  # 1-based file line of the first data row
    header: str | None
    header_line: int | None
    n_before: int  # content rows before the data (header and preamble)
    sample: list[str]
    sample_lines: np.ndarray
    sep: str | None
    decimal: str
    n_comment: int


def _content(lines: list[str], *, has_hash: bool) -> tuple[list[str], list[int], int]:
    """Non-blank rows stripped of comments, their 1-based line numbers, the comment count."""
    stripped = [ln.strip() for ln in lines]
    n_comment = 0
    if has_hash:
        for i, ln in enumerate(stripped):
            if "#" in ln:
                if ln.startswith("#"):
                    n_comment += 1
                    stripped[i] = ""
                else:
                    stripped[i] = ln.split("#", 1)[0].rstrip()
    numbers = [i for i, ln in enumerate(stripped, 1) if ln]
    content = [stripped[i - 1] for i in numbers]
    return content, numbers, n_comment


def _plan(content: list[str], numbers: list[int], *, n_comment: int, path: str,
          sep: str | None, decimal: str | None) -> _Plan:
    """The decisions of the module notes, taken on the first rows of ``content``."""
    if not content:
        raise InputError("the file holds only comments and blank lines, expected beat data",
                         path=path)
    first = _first_data_row(content)
    if first == len(content):
        raise InputError(
            f"no numbers found (line {numbers[0]}: {content[0][:60]!r}), expected beat data",
            path=path)
    header = content[first - 1] if first else None
    header_line = numbers[first - 1] if first else None
    sample = content[first:first + _SNIFF_ROWS]
    sample_lines = np.asarray(numbers[first:first + _SNIFF_ROWS], dtype=np.int64)
    if sep is None:
        chosen_sep, chosen_dec = _choose_separator(sample, header, path=path,
                                                   row_lines=sample_lines)
    else:
        chosen_sep = None if sep in ("none", "") else sep
        chosen_dec = _decimal_of(sample, chosen_sep, path=path, row_lines=sample_lines)
    if decimal is not None:
        chosen_dec = decimal
    if chosen_sep == "," and chosen_dec == "," and not any('"' in r for r in sample):
        raise InputError("a comma cannot be both the separator and the decimal mark",
                         path=path, hint="pass sep=';' or decimal='.'")
    return _Plan(numbers[first], header, header_line, first, sample, sample_lines, chosen_sep,
                 chosen_dec, n_comment)


def _header_names(plan: _Plan, n_fields: int, trailing_empty: bool, *,
                  path: str) -> tuple[list[str], bool]:
    names = [f"column {k + 1}" for k in range(n_fields)]
    if plan.header is None:
        return names, False
    fields = (_tokenize([plan.header], plan.sep, path=path)[0]
              if n_fields > 1 or trailing_empty else [plan.header])
    if trailing_empty and fields and not fields[-1]:
        fields.pop()
    if len(fields) != n_fields:
        return names, False
    return [f.strip().strip('"').strip("'") or names[k] for k, f in enumerate(fields)], True


def _finish(plan: _Plan, extra: dict[str, Any], *, named: bool, n_blank: int) -> None:
    """Record the decisions of ``plan`` in ``extra`` (see `TextTable.extra`)."""
    extra["n_comment_lines"] = plan.n_comment
    extra["n_blank_lines"] = n_blank
    extra.update({
        "separator": _SEP_NAMES[plan.sep],
        "decimal": plan.decimal,
        "header_line": plan.header_line if named else None,
        "n_preamble_lines": plan.n_before - named,
    })


def load_table(path: str | os.PathLike[str], *, sep: str | None = None,
               decimal: str | None = None, fast: bool | None = None) -> TextTable:
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
    fast : bool, optional
        Try the compiled parser first (see `_compiled_table`); default: for files of at least
        1 MiB of text. The result is the same either way.

    Raises
    ------
    InputError
        Missing, empty or binary file; no data rows; rows with differing field counts.
    """
    text, extra = read_text(path)
    path_s = str(path)
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    if fast is None:
        fast = len(text) >= _FAST_MIN_CHARS
    if fast:
        table = _compiled_table(text, dict(extra), path_s, sep=sep, decimal=decimal)
        if table is not None:
            return table
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    content, numbers, n_comment = _content(lines, has_hash="#" in text)
    plan = _plan(content, numbers, n_comment=n_comment, path=path_s, sep=sep, decimal=decimal)
    data = content[plan.n_before:]
    data_lines = np.asarray(numbers[plan.n_before:], dtype=np.int64)
    columns = _split_columns(data, plan.sep, data_lines, path_s)
    trailing_empty = len(columns) > 1 and not any(columns[-1])
    if trailing_empty:  # every row ends with a separator ("812;")
        columns.pop()
    names, named = _header_names(plan, len(columns), trailing_empty, path=path_s)
    _finish(plan, extra, named=named, n_blank=len(lines) - len(content) - n_comment)
    head = [c[:_SNIFF_ROWS] for c in columns]
    return TextTable(path_s, names, named, data_lines, plan.sep, plan.decimal, extra,
                     head=head, tokens=_Tokens(columns=columns))


#: text size from which `load_table` tries the compiled parser first (below it the line-by-line
#: path takes a few milliseconds and importing pandas would cost more than it saves)
_FAST_MIN_CHARS = 1 << 20
#: lines whose decisions the compiled path takes line by line before handing the rest over
_HEAD_LINES = _PREAMBLE_MAX_ROWS + _SNIFF_ROWS + 8


def _compiled_table(text: str, extra: dict[str, Any], path: str, *, sep: str | None,
                    decimal: str | None) -> TextTable | None:
    """The table of an all-numeric block parsed by pandas' C reader, or None to go line by line.

    The first lines take the same decisions as the line-by-line path (data start, header,
    separator, decimal mark); the data block from there to the end goes to
    ``pandas.read_csv`` in one call. Anything the C reader does not take exactly as the
    line-by-line path would (quotes, comments, blank or ragged rows, a token that is not a
    number, a value that is not finite, a decision that needs more lines) returns None, and the
    line-by-line path then reads the file and gives its diagnostics with file lines. The tokens
    are split only when asked for (`TextTable.columns`).
    """
    if '"' in text or "#" in text:
        return None
    parts = text.split("\n", _HEAD_LINES)
    head_lines = parts[:_HEAD_LINES]
    complete = len(parts) <= _HEAD_LINES
    if complete and head_lines and head_lines[-1] == "":
        head_lines.pop()
    content, numbers, n_comment = _content(head_lines, has_hash=False)
    try:
        plan = _plan(content, numbers, n_comment=n_comment, path=path, sep=sep,
                     decimal=decimal)
    except InputError:
        return None
    if not complete and plan.n_before + len(plan.sample) + _PREAMBLE_MAX_ROWS > len(content):
        return None  # the decisions might change with the lines beyond the head
    if not all(_NUMBER_RE.match(t) for t in (t for r in _tokenize(
            plan.sample, plan.sep, path=path) for t in r)):
        return None  # not an all-numeric block: timestamps, symbols, missing values
    offset = sum(len(ln) + 1 for ln in head_lines[:plan.first_line - 1])
    block = text[offset:]
    n_rows = block.count("\n") + (not block.endswith("\n"))
    values = _read_block(block, plan.sep, plan.decimal)
    if values is None or values.shape[0] != n_rows or not np.isfinite(values).all():
        return None
    n_fields = values.shape[1]
    if n_fields != len(_tokenize(plan.sample[:1], plan.sep, path=path)[0]):
        return None
    names, named = _header_names(plan, n_fields, False, path=path)
    n_blank = plan.first_line - 1 - plan.n_before  # no comments: the rest are blank lines
    _finish(plan, extra, named=named, n_blank=n_blank)
    line_numbers = np.arange(plan.first_line, plan.first_line + n_rows, dtype=np.int64)
    head = [list(col) for col in zip(*_tokenize(plan.sample, plan.sep, path=path), strict=True)]
    columns = tuple(np.ascontiguousarray(values[:, k]) for k in range(n_fields))
    return TextTable(path, names, named, line_numbers, plan.sep, plan.decimal, extra,
                     head=head, tokens=_Tokens(block=block, sep=plan.sep, lines=line_numbers),
                     values=columns)


def _read_block(block: str, sep: str | None, decimal: str) -> np.ndarray | None:
    """(rows, fields) float64 from pandas' C reader, or None where it refuses the block."""
    import csv as csv_quoting
    import io

    import pandas as pd

    if sep is None:  # one column: any character absent from the block separates nothing
        sep = next((c for c in ";|\t" if c not in block), None)
        if sep is None:
            return None
    elif sep == " ":
        sep = r"\s+"
    try:
        frame = pd.read_csv(io.StringIO(block), sep=sep, header=None, decimal=decimal,
                            dtype=np.float64, na_filter=False, skip_blank_lines=False,
                            engine="c", quoting=csv_quoting.QUOTE_NONE, index_col=False,
                            comment=None, low_memory=False)
    except (ValueError, OverflowError, TypeError):  # pandas' ParserError is a ValueError
        return None
    return frame.to_numpy(dtype=np.float64)


class _Tokens:
    """The token columns of a table, split on first use when the compiled parser read it."""

    __slots__ = ("_block", "_columns", "_lines", "_sep")

    def __init__(self, *, columns: list[list[str]] | None = None, block: str = "",
                 sep: str | None = None, lines: np.ndarray | None = None) -> None:
        self._columns = columns
        self._block, self._sep, self._lines = block, sep, lines

    def get(self, path: str) -> list[list[str]]:
        if self._columns is None:
            rows = self._block.split("\n")
            if rows and rows[-1] == "":
                rows.pop()
            self._columns = _split_columns([r.strip() for r in rows], self._sep,
                                           self._lines, path)
            self._block = ""
        return self._columns


def parse_numbers(table: TextTable, col: int, *, what: str = "a number") -> np.ndarray:
    """Column ``col`` as float64; InputError at the first token that is not a finite number."""
    if table.values is not None:
        return table.values[col].copy()
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
    toks = table.head[col]
    if all(_ISO_RE.match(t) for t in toks):
        return "timestamp"
    numeric = sum(bool(_NUMBER_RE.match(t) or _SPECIAL_RE.match(t)) for t in toks)
    if numeric >= 0.5 * len(toks):
        return "number"
    return "text"
