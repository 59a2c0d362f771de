"""`read`: one entry point for every input kind."""

from __future__ import annotations

import os
from pathlib import Path

from .._validation import check_option, check_range
from ..errors import InputError
from ..recording import Recording
from ._checks import check_regular_file
from ._ecg import DEFAULT_DETECTOR, DETECTORS
from ._pulse import DEFAULT_PPG_DETECTOR, PPG_DETECTORS, as_pulse, read_ppg_table
from ._records import (
    WFDB_ANNOTATION_EXTENSIONS,
    read_edf,
    read_wfdb_annotations,
    read_wfdb_record,
)
from ._tabular import read_table

__all__ = ["DEFAULT_BREAK_S", "KINDS", "UNITS", "read"]

KINDS = ("auto", "rr", "peaks", "ecg", "annotations", "pulse", "ppg")
UNITS = ("auto", "ms", "s", "samples")
_EDF_EXTENSIONS = (".edf", ".bdf", ".rec")
_SEPARATORS = (None, ",", ";", "\t", " ", "none")
#: suffixes of text files, never taken for WFDB annotations (any other suffix of a binary file
#: beside a ``.hea`` header of the same record is: annotators name their files freely, ``.wabp``)
_TEXT_SUFFIXES = (".txt", ".csv", ".tsv", ".gz", ".json", ".tab", ".dat", ".hea")
#: default for ``break_s``: uncovered time between timestamps that marks a break (common
#: practice: longer than any beat-to-beat interval, above the 1 s resolution of most exports)
DEFAULT_BREAK_S = 2.0


def _format_of(p: Path) -> str:
    """``"edf"``, ``"wfdb"``, ``"annotations"`` or ``"text"`` from the name and neighbours."""
    suffix = p.suffix.lower()
    if suffix in _EDF_EXTENSIONS:
        return "edf"
    if suffix in (".hea", ".dat"):
        return "wfdb"
    if suffix in WFDB_ANNOTATION_EXTENSIONS:
        return "annotations"
    if (suffix and suffix not in _TEXT_SUFFIXES and p.with_suffix(".hea").is_file()
            and p.is_file() and _binary(p)):
        return "annotations"  # binary, beside the header of its record: an annotator's file
    if suffix == "" and not p.exists() and Path(str(p) + ".hea").is_file():
        return "wfdb"
    return "text"


def read(
    path: str | os.PathLike[str],
    *,
    kind: str = "auto",
    unit: str = "auto",
    fs: float | None = None,
    column: str | int | None = None,
    subject: str | None = None,
    detector: str = DEFAULT_DETECTOR,
    timestamp_column: str | int | None = None,
    break_s: float | None = DEFAULT_BREAK_S,
    sep: str | None = None,
    decimal: str | None = None,
) -> Recording:
    """Read a beat-to-beat file (RR intervals, peak times, raw ECG or WFDB annotations).

    Parameters
    ----------
    path : str or path-like
        The file. Text (``.txt``, ``.csv``, ``.tsv``, any name; ``.gz`` compressed allowed), EDF
        (``.edf``, ``.bdf``), a WFDB record (``.hea``, ``.dat`` or the record prefix) or a WFDB
        annotation file (``.atr``, ``.qrs``, ... or any other annotator's extension when the
        file lies beside the ``.hea`` header of its record, such as ``.wabp``).
    kind : {"auto", "rr", "peaks", "ecg", "annotations", "pulse", "ppg"}
        What the file holds. ``"auto"`` decides from the file type, the column names, then the
        values (strictly increasing values with heartbeat-sized steps are peak times); the rule
        used is kept in ``info.kind_decided_by``. ``"pulse"``: pulse-to-pulse intervals or
        pulse peak/onset times (text, or WFDB pulse annotations), read like RR intervals or
        R-peak times and marked pulse-derived (``info.pulse_derived``); ``"ppg"``: a raw pulse
        wave (text column, EDF or WFDB channel) whose peaks neurokit2 detects. Annotations
        from the ``wabp`` annotator are marked pulse-derived without asking.
    unit : {"auto", "ms", "s", "samples"}
        Unit of the values (RR intervals or peak times). ``"auto"`` decides from the column name,
        then the range: median RR (or median step between peaks) in 200-3000 is ms, in 0.2-3.0
        is s; a range fitting neither is an error asking for ``unit=``. ``"samples"`` needs
        ``fs``. Kept in ``info.unit_decided_by``.
    fs : float, optional
        Sampling rate in Hz: required for sample indices and for an ECG or PPG column in a text
        file (there is no default). EDF and WFDB files carry it in their header; a different ``fs``
        is an error.
    column : str or int, optional
        Column name or 0-based index of the values (text tables), or channel label or index
        (EDF, WFDB). Default: found from the names (see Notes).
    subject : str, optional
        Subject id stored in the recording.
    detector : str
        R-peak detector of ``neurokit2.ecg_peaks`` for ECG (default ``"neurokit"``,
        neurokit2's own default), or for ``kind="ppg"`` a method of ``neurokit2.ppg_peaks``
        (``"elgendi"``, neurokit2's default and what the ECG default stands for there,
        ``"bishop"``, ``"charlton"``). Kept in ``info.extra["detector"]``.
    timestamp_column : str or int, optional
        Column of ISO 8601 times or Unix epoch numbers; default: found by content.
    break_s : float or None
        With timestamps (or a time column in s or ms) beside RR intervals, uncovered time longer
        than this (s) between two rows is a recording break, kept as one gap interval
        (default 2.0 s). None disables.
    sep, decimal : str, optional
        Force the separator (``","``, ``";"``, ``"\\t"``, ``" "``, ``"none"``) or the decimal
        mark (``"."``, ``","``) of a text file; by default both are found from the data rows.

    Returns
    -------
    Recording
        ``info`` says how the file was read (kind, unit, how each was decided, column, fs, and
        in ``info.extra`` the separator, header line, timestamps, breaks, ECG detector,
        inverted lead and detection quality).

    Raises
    ------
    InputError
        Any file that cannot be read as asked: missing, empty, binary, non-numeric or
        non-finite values, zero or negative intervals, peak times going backwards, mixed units,
        fewer than 3 intervals, a needed sampling rate missing, no beats in an ECG. The message
        names the file, the line, what was found and what was expected.

    Warns
    -----
    QualityWarning
        An ECG whose detected beats match their median shape poorly, or that is largely
        unusable (flat, clipped, missing).

    Notes
    -----
    Values that are possible but implausible (an RR of 150 ms or 4000 ms) are kept: artifact
    correction deals with them. A reader never drops data silently; rows of non-beat
    annotations (``+``, ``~``) in a table with a symbol column are skipped and counted in
    ``info.extra``.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> f = pathlib.Path(tempfile.mkdtemp()) / "rr.txt"
    >>> _ = f.write_text("812\\n790\\n805\\n821\\n")
    >>> rec = read(f)
    >>> rec.rr_ms.tolist(), rec.info.unit
    ([812.0, 790.0, 805.0, 821.0], 'ms')
    """
    kind = check_option("kind", kind, KINDS)
    unit = check_option("unit", unit, UNITS)
    detector = check_option("detector", detector, DETECTORS + PPG_DETECTORS)
    if fs is not None:
        fs = check_range("fs", fs, low=0, low_inclusive=False, unit="Hz")
    if break_s is not None:
        break_s = check_range("break_s", break_s, low=0, low_inclusive=False, unit="s")
    sep = check_option("sep", sep, _SEPARATORS)
    decimal = check_option("decimal", decimal, (None, ".", ","))
    p = Path(os.fspath(path))
    fmt = _format_of(p)
    if fmt != "wfdb":
        check_regular_file(p)
    else:  # the header and signal files of the record, where they exist
        for part in (p.with_suffix(".hea"), p.with_suffix(".dat")) if p.suffix else (
                Path(str(p) + ".hea"), Path(str(p) + ".dat")):
            if os.path.lexists(part):
                check_regular_file(part)
    src = str(p)
    if kind == "pulse" and fmt == "text" and p.suffix.lower() not in _TEXT_SUFFIXES and (
            _binary(p)):
        fmt = "annotations"  # pulse annotations of an annotator, without their header
    if kind == "annotations" or (kind in ("auto", "pulse") and fmt == "annotations"):
        if fmt == "text" and p.suffix.lower() in _TEXT_SUFFIXES:
            raise InputError(
                "kind='annotations' reads WFDB annotation files; a text table of beats is read "
                "with kind='peaks' (or kind='pulse' for pulse times)", path=p)
        if kind == "annotations":
            by = "given"
        elif p.suffix.lower() in WFDB_ANNOTATION_EXTENSIONS:
            by = f"WFDB annotation extension {p.suffix!r}"
        else:
            by = f"file {p.name!r} beside the header {p.with_suffix('.hea').name!r}"
        if fmt == "wfdb":  # record name given: use its reference annotations
            p = Path(str(p.with_suffix("")) + ".atr")
        rec = read_wfdb_annotations(str(p), fs_hz=fs, subject=subject, kind_decided_by=by)
        return as_pulse(rec, why="kind='pulse' given") if kind == "pulse" else rec
    if fmt == "annotations":
        raise InputError(f"WFDB annotation files are read with kind='annotations' or "
                         f"kind='pulse' (got kind={kind!r})", path=p)
    if kind == "ppg":
        detector = _ppg_detector(detector, p)
    elif detector in PPG_DETECTORS:
        raise InputError(f"detector={detector!r} finds pulse peaks in a PPG; it applies to "
                         f"kind='ppg' (got kind={kind!r})", path=p,
                         hint="pass kind='ppg', or an ECG detector such as 'neurokit'")
    if fmt in ("edf", "wfdb"):
        if kind not in ("auto", "ecg", "ppg"):
            raise InputError(f"{fmt.upper()} files hold signals; read them with kind='ecg' or "
                             f"kind='ppg' (got kind={kind!r})", path=p)
        if unit != "auto":
            raise InputError("unit= does not apply to signals (their header gives the unit)",
                             path=p)
        by = ("given" if kind in ("ecg", "ppg")
              else f"{fmt.upper()} file ({p.suffix or 'record name'})")
        signal = "ppg" if kind == "ppg" else "ecg"
        if fmt == "edf":
            return read_edf(src, fs_hz=fs, column=column, detector=detector, subject=subject,
                            kind_decided_by=by, signal=signal)
        return read_wfdb_record(src, fs_hz=fs, column=column, detector=detector,
                                subject=subject, kind_decided_by=by, signal=signal)
    if kind == "ppg":
        if unit != "auto":
            raise InputError("unit= does not apply to a PPG signal (pulse peaks are detected)",
                             path=p)
        return read_ppg_table(src, column=column, fs_hz=fs, detector=detector,
                              subject=subject, sep=sep, decimal=decimal)
    rec = read_table(src, kind="auto" if kind == "pulse" else kind, unit=unit, fs_hz=fs,
                     column=column, timestamp_column=timestamp_column, subject=subject,
                     break_s=break_s, sep=sep, decimal=decimal, detector=detector)
    if kind != "pulse":
        return rec
    if rec.info.kind not in ("rr", "peaks"):
        raise InputError("kind='pulse' reads pulse-to-pulse intervals or pulse peak/onset "
                         f"times, but the column read holds {rec.info.kind} values", path=p,
                         hint="a raw pulse wave is read with kind='ppg'")
    return as_pulse(rec, why="kind='pulse' given")


def _binary(p: Path) -> bool:
    """True when the file's first bytes hold a NUL (no text file does)."""
    with open(p, "rb") as fh:
        return b"\x00" in fh.read(512)


def _ppg_detector(detector: str, p: Path) -> str:
    """The PPG peak method: the ECG default stands for 'not chosen', which is neurokit2's."""
    if detector in PPG_DETECTORS:
        return detector
    if detector == DEFAULT_DETECTOR:
        return DEFAULT_PPG_DETECTOR
    raise InputError(f"detector={detector!r} is an R-peak detector for ECG; a PPG takes one of "
                     f"{list(PPG_DETECTORS)}", path=p,
                     hint=f"leave detector out for neurokit2's {DEFAULT_PPG_DETECTOR!r}")
