"""Kind and unit detection: what a column of numbers is, and in which unit.

Every rule returns its decision together with a sentence saying why, which ends up in
`rrkit.ReadInfo` (``kind_decided_by``, ``unit_decided_by``). Each decision can be overridden
with ``kind=`` / ``unit=``.

Ranges (common practice: resting to maximal adult heart rates, 20-300 bpm, give RR intervals of
0.2-3 s; the same window is used for the step between successive peak times):

- RR in seconds: median in [0.2, 3.0]; in milliseconds: median in [200, 3000].
- Peak times: strictly increasing values whose median step fits one of those ranges.
"""

from __future__ import annotations

import re

import numpy as np

from ..errors import InputError

__all__ = [
    "RR_RANGE_MS",
    "RR_RANGE_S",
    "decide_kind",
    "decide_peak_unit",
    "decide_rr_unit",
    "is_ecg_lead",
    "name_hints",
]

RR_RANGE_S = (0.2, 3.0)
RR_RANGE_MS = (200.0, 3000.0)
# mixed units in one RR column: values below this are seconds inside a millisecond column, and
# values at or above _S_MAX_IN_S are milliseconds inside a second column (no interval of a
# heartbeat lasts 10 ms or 100 s)
_MS_MIN_IN_MS = 10.0
_S_MAX_IN_S = 100.0

_RR_WORDS = {"rr", "rri", "nn", "nni", "ibi", "interval", "intervals", "rrinterval"}
_PEAK_WORDS = {"peak", "peaks", "rpeak", "rpeaks", "beat", "beats", "time", "times", "t",
               "sample", "samples", "index", "idx", "onset"}
_ECG_WORDS = {"ecg", "ekg", "mlii", "mli", "mliii", "lead", "ii", "iii", "avr", "avl", "avf",
              "v1", "v2", "v3", "v4", "v5", "v6", "signal", "voltage", "mv", "uv"}
# ECG lead names, matched word by word: limb and augmented leads (II, III, aVR, aVL, aVF;
# a bare "I" only as a channel label, see `is_ecg_lead`), chest leads V1-V9 and right-sided
# V3R-V6R, modified chest leads MCL1-MCL6, Holter bipolar leads CM1-CM6 and CC5, modified limb
# leads MLI-MLIII / ML1-ML3, and any word starting with ECG or EKG (common practice in the
# signal labels of WFDB and EDF files)
_LEAD_RE = re.compile(r"(?:i{2,3}|av[rlf]|v[1-9]r?|mcl[1-6]|cm[1-6]|cc5|ml(?:i{1,3}|[1-3])|"
                      r"ecg\w*|ekg\w*)")
_TS_WORDS = {"timestamp", "timestamps", "datetime", "date", "epoch", "unix", "clock",
             "utc", "localtime", "wallclock"}
_SYMBOL_WORDS = {"symbol", "symbols", "label", "labels", "annotation", "annotations", "type",
                 "beattype", "class", "aux"}
_UNIT_WORDS = {"ms": "ms", "msec": "ms", "millisecond": "ms", "milliseconds": "ms",
               "s": "s", "sec": "s", "secs": "s", "second": "s", "seconds": "s",
               "sample": "samples", "samples": "samples", "index": "samples", "idx": "samples"}


def _words(name: str) -> list[str]:
    return [w for w in re.split(r"[^a-z0-9]+", name.lower()) if w]


def is_ecg_lead(label: str) -> bool:
    """True when a signal's label names an ECG lead (case-insensitive; see ``_LEAD_RE``).

    Channel labels of EDF and WFDB records are always signals, so a bare ``I`` (Einthoven lead
    I) counts here, while a text column named ``i`` stays an index.
    """
    return label.strip().lower() == "i" or name_hints(label)["role"] == "ecg"


def name_hints(name: str) -> dict[str, str | None]:
    """What a column name suggests: ``role`` (rr, peaks, ecg, timestamp, symbol) and ``unit``."""
    words = _words(name)
    ws = set(words)
    role = None
    if ws & _TS_WORDS:
        role = "timestamp"
    elif ws & _RR_WORDS:
        role = "rr"
    elif ws & _ECG_WORDS or any(_LEAD_RE.fullmatch(w) for w in ws):
        role = "ecg"
    elif ws & _SYMBOL_WORDS:
        role = "symbol"
    elif ws & _PEAK_WORDS:
        role = "peaks"
    unit = None
    for w in reversed(words):  # the unit usually comes last: "rr_ms", "time (s)"
        if w in _UNIT_WORDS:
            unit = _UNIT_WORDS[w]
            break
    if unit is None and role == "rr" and "rrms" in ws:
        unit = "ms"
    return {"role": role, "unit": unit}


def _in(x: float, lo_hi: tuple[float, float]) -> bool:
    return lo_hi[0] <= x <= lo_hi[1]


def decide_kind(values: np.ndarray, *, fs_hz: float | None) -> tuple[str, str]:
    """``("peaks" | "rr", reason)`` from the values alone.

    Peak times increase at (nearly) every step, and the step is the size of a heartbeat
    interval; RR intervals go up and down around their mean. A column increasing at >= 95 % of
    its steps with a heartbeat-sized median step is taken as peak times (a backward step then
    raises an error at its line, rather than being read as an interval).
    """
    if values.size < 3:
        return "rr", "too few values to see a trend; read as RR intervals"
    d = np.diff(values)
    up = float(np.mean(d > 0))
    if up >= 0.95:
        step = float(np.median(d[d > 0]))
        fits = _in(step, RR_RANGE_S) or _in(step, RR_RANGE_MS) or (
            fs_hz is not None and _in(step / fs_hz, RR_RANGE_S))
        if fits:
            return "peaks", (f"values increase at {up:.0%} of steps with a median step of "
                             f"{step:g}, the size of a heartbeat: peak times")
    return "rr", (f"values rise at only {up:.0%} of steps (peak times rise at every step): "
                  "RR intervals")


def decide_rr_unit(values: np.ndarray, *, path: str, lines: np.ndarray, column: str,
                   fs_hz: float | None = None) -> tuple[str, str]:
    """Unit of RR intervals from their median; InputError when neither unit fits or they mix.

    With ``fs_hz`` given and whole-number values whose median is a heartbeat interval in
    samples, the unit is samples (the caller gave a sampling rate for a reason).
    """
    med = float(np.median(values))
    if fs_hz is not None and _in(med / fs_hz, RR_RANGE_S) and bool(
            np.all(values == np.round(values))):
        return "samples", (f"whole numbers with fs={fs_hz:g} Hz given; median {med:g} samples "
                           f"= {med / fs_hz:.3g} s")
    if _in(med, RR_RANGE_MS):
        unit = "ms"
        why = f"median {med:g} lies in {RR_RANGE_MS[0]:g}-{RR_RANGE_MS[1]:g}, so milliseconds"
        odd = np.flatnonzero((values > 0) & (values < _MS_MIN_IN_MS))
        other = "seconds"
    elif _in(med, RR_RANGE_S):
        unit = "s"
        why = f"median {med:g} lies in {RR_RANGE_S[0]:g}-{RR_RANGE_S[1]:g}, so seconds"
        odd = np.flatnonzero(values >= _S_MAX_IN_S)
        other = "milliseconds"
    else:
        raise InputError(
            f"RR values in column {column!r} have median {med:g}, which fits neither "
            f"milliseconds ({RR_RANGE_MS[0]:g}-{RR_RANGE_MS[1]:g}) nor seconds "
            f"({RR_RANGE_S[0]:g}-{RR_RANGE_S[1]:g})",
            path=path, hint="pass unit='ms', unit='s' or unit='samples' with fs=")
    if odd.size:
        j = int(odd[0])
        raise InputError(
            f"mixed units in column {column!r}: most values are {unit} but {values[j]:g} looks "
            f"like {other}" + (f" ({odd.size} such values)" if odd.size > 1 else ""),
            path=path, line=int(lines[j]),
            hint="convert the column to one unit, or pass unit= to read the values as they are")
    return unit, why


def decide_peak_unit(values: np.ndarray, *, fs_hz: float | None, path: str,
                     column: str) -> tuple[str, str]:
    """Unit of peak times from their median step (whole numbers with ``fs`` = samples)."""
    d = np.diff(values)
    pos = d[d > 0]
    step = float(np.median(pos)) if pos.size else float("nan")
    whole = bool(np.all(values == np.round(values)))
    if fs_hz is not None and whole and _in(step / fs_hz, RR_RANGE_S):
        return "samples", (f"whole numbers with fs={fs_hz:g} Hz given; median step {step:g} "
                           f"samples = {step / fs_hz:.3g} s")
    if _in(step, RR_RANGE_S):
        return "s", f"median step {step:g} lies in {RR_RANGE_S[0]:g}-{RR_RANGE_S[1]:g}: seconds"
    if _in(step, RR_RANGE_MS):
        return "ms", (f"median step {step:g} lies in {RR_RANGE_MS[0]:g}-{RR_RANGE_MS[1]:g}: "
                      "milliseconds")
    if whole:
        raise InputError(
            f"peak values in column {column!r} step by a median {step:g}, which fits neither "
            "seconds nor milliseconds; whole numbers like these are usually sample indices",
            path=path, hint="pass fs=, the sampling rate in Hz, to read them as samples")
    raise InputError(
        f"peak times in column {column!r} step by a median {step:g}, which fits neither "
        f"seconds ({RR_RANGE_S[0]:g}-{RR_RANGE_S[1]:g}) nor milliseconds "
        f"({RR_RANGE_MS[0]:g}-{RR_RANGE_MS[1]:g})",
        path=path, hint="pass unit='s', unit='ms' or unit='samples' with fs=")
