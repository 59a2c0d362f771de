"""The recording model: beat times (s) and RR intervals (ms) that always agree with each other.

A `Recording` is immutable: its arrays are read-only copies and every operation returns a new
object. Beat times are seconds on the recording's own clock (0 = recording start); slicing keeps
that clock, so a window's times still say where it lies in the recording.

Gaps
----
``gaps`` marks intervals that are *not* usable NN intervals: a break in the recording (a Bluetooth
dropout, a paused strap) seen by a reader, or an artifact interval that cleaning with
``strategy="drop"`` excluded. Their beat times are kept, so the duration stays right, but no
metric uses such an interval and no successive difference is formed across one.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import datetime, timedelta, timezone
from types import MappingProxyType
from typing import Any

import numpy as np

from ._validation import as_float_array
from .errors import InputError

__all__ = ["ReadInfo", "Recording", "interval_name"]

# |diff(beat_times_s) * 1000 - rr_ms| allowed, in ms: float rounding of a cumulative sum over a
# million beats stays below 1e-6 ms; anything larger means the two arrays disagree.
_CONSISTENCY_TOL_MS = 1e-4


@dataclass(frozen=True, slots=True)
class ReadInfo:
    """How a file was read: what rrkit decided, and why, so that nothing is guessed silently.

    Attributes
    ----------
    kind : str
        ``"rr"``, ``"peaks"``, ``"ecg"``, ``"annotations"``, ``"pulse"`` (pulse intervals or
        times), ``"ppg"`` (pulses detected in a pulse wave) or ``"array"`` (built in Python).
    kind_decided_by : str
        ``"given"`` when the caller passed it, else the rule that decided it.
    unit : str or None
        ``"ms"``, ``"s"`` or ``"samples"`` of the values in the file.
    unit_decided_by : str
        ``"given"`` or the rule that decided it (for example the range of the values).
    fs_hz : float or None
        Sampling rate in Hz for sample indices and ECG.
    column : str or None
        The table column the values came from.
    extra : Mapping
        Anything else a reader records (ECG detector, inverted lead, detection quality,
        timestamp column, number of gaps found, ...). Read-only.
    """

    kind: str = "array"
    kind_decided_by: str = "given"
    unit: str | None = "ms"
    unit_decided_by: str = "given"
    fs_hz: float | None = None
    column: str | None = None
    extra: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        object.__setattr__(self, "extra", MappingProxyType(dict(self.extra)))

    @property
    def pulse_derived(self) -> bool:
        """True when the beats come from a pulse wave (PPG, pressure), not from an ECG."""
        return self.kind in ("pulse", "ppg") or bool(self.extra.get("pulse_derived"))

    @property
    def interval_name(self) -> str:
        """``"pulse-to-pulse"`` for pulse-derived beats, else ``"RR"`` (for labels and texts)."""
        return "pulse-to-pulse" if self.pulse_derived else "RR"

    def to_dict(self) -> dict[str, Any]:
        """Plain-dict copy (for JSON, HDF5 attributes and tables)."""
        out = {f.name: getattr(self, f.name) for f in dataclasses.fields(self) if f.name != "extra"}
        out.update({f"extra.{k}": v for k, v in self.extra.items()})
        return out

    def __reduce__(self):
        return (_rebuild_info, (self.kind, self.kind_decided_by, self.unit, self.unit_decided_by,
                                self.fs_hz, self.column, dict(self.extra)))


def interval_name(source) -> str:
    """What the intervals of ``source`` are called in labels and texts: ``"RR"`` or
    ``"pulse-to-pulse"`` (`ReadInfo.interval_name`).

    The one answer every output asks (table headers, audits, figure titles and axes), so that a
    recording read from a pulse wave is never described as RR intervals.

    Parameters
    ----------
    source : ReadInfo, Recording, or a result of a later stage
        A `ReadInfo`; a `Recording` (its ``info``); a cleaning result (its ``input``); or any
        result that carries the answer as an ``interval_name`` attribute or, for a table, in
        ``attrs["interval_name"]``. Anything else (an array, None) is ``"RR"``.

    Examples
    --------
    >>> interval_name(ReadInfo(kind="ppg"))
    'pulse-to-pulse'
    >>> interval_name(Recording.from_rr([800, 810, 790]))
    'RR'
    """
    if isinstance(source, ReadInfo):
        return source.interval_name
    if isinstance(source, Recording):
        return source.info.interval_name
    own = getattr(source, "interval_name", None)
    if isinstance(own, str):
        return own
    attrs = getattr(source, "attrs", None)
    if isinstance(attrs, Mapping) and isinstance(attrs.get("interval_name"), str):
        return attrs["interval_name"]
    inner = getattr(source, "input", None)
    if isinstance(inner, Recording):
        return inner.info.interval_name
    return "RR"


def _rebuild_info(kind, kind_by, unit, unit_by, fs_hz, column, extra):
    return ReadInfo(kind, kind_by, unit, unit_by, fs_hz, column, extra)


def _readonly(arr: np.ndarray) -> np.ndarray:
    arr.flags.writeable = False
    return arr


@dataclass(frozen=True, slots=True, eq=False)
class Recording:
    """Beat-to-beat intervals of one recording.

    Parameters
    ----------
    beat_times_s : array_like, shape (n_intervals + 1,)
        Beat times in seconds on the recording's clock (0 = recording start), strictly increasing.
    rr_ms : array_like, shape (n_intervals,)
        RR intervals in milliseconds; ``rr_ms[i]`` is the time from beat ``i`` to beat ``i + 1``.
    start : datetime, optional
        Absolute time of ``beat_times_s == 0`` (time-zone aware when the source says so).
    subject : str, optional
        Subject id.
    source : str, optional
        Path (or description) of where the data came from.
    info : ReadInfo, optional
        How the data were read. Defaults to ``ReadInfo()`` (an array given in ms).
    gaps : array_like of bool, shape (n_intervals,), optional
        True where an interval is not a usable NN interval (see the module notes).
    beat_symbols : array_like of str, shape (n_intervals + 1,), optional
        Per-beat annotation symbols (for example WFDB ``N``, ``A``, ``V``), when known.

    Notes
    -----
    Both arrays are validated (1-D, finite, positive intervals, increasing times, consistent within
    1e-4 ms) and stored read-only. A recording may be empty (no beats), which is what a window
    outside the data gives; metrics then return NaN with a note.

    Examples
    --------
    >>> rec = Recording.from_rr([500, 750, 1000])
    >>> rec.beat_times_s.tolist()
    [0.0, 0.5, 1.25, 2.25]
    >>> rec.n_intervals, rec.duration_s
    (3, 2.25)
    """

    beat_times_s: np.ndarray
    rr_ms: np.ndarray
    start: datetime | None = None
    subject: str | None = None
    source: str | None = None
    info: ReadInfo = field(default_factory=ReadInfo)
    gaps: np.ndarray | None = None
    beat_symbols: np.ndarray | None = None

    def __post_init__(self) -> None:
        t = as_float_array("beat_times_s", self.beat_times_s)
        rr = as_float_array("rr_ms", self.rr_ms)
        if t.size == 0 and rr.size == 0:
            pass
        elif t.size != rr.size + 1:
            raise InputError(
                f"beat_times_s must have one more element than rr_ms; got {t.size} and {rr.size}"
            )
        else:
            dt = np.diff(t)
            bad = np.flatnonzero(dt <= 0)
            if bad.size:
                raise InputError(
                    f"beat_times_s must strictly increase; beat {bad[0] + 1} at "
                    f"{t[bad[0] + 1]!r} s "
                    f"follows {t[bad[0]]!r} s"
                )
            as_float_array("rr_ms", rr, positive=True)
            err = np.abs(dt * 1000.0 - rr)
            if err.size and err.max() > _CONSISTENCY_TOL_MS:
                i = int(err.argmax())
                raise InputError(
                    f"rr_ms[{i}] = {rr[i]!r} ms disagrees with the beat times "
                    f"({dt[i] * 1000.0!r} ms between beats {i} and {i + 1})"
                )
        object.__setattr__(self, "beat_times_s", _readonly(t))
        object.__setattr__(self, "rr_ms", _readonly(rr))
        if self.gaps is None:
            gaps = np.zeros(rr.size, dtype=bool)
        else:
            gaps = np.array(self.gaps, dtype=bool, copy=True)
            if gaps.shape != rr.shape:
                raise InputError(f"gaps must have shape {rr.shape}; got {gaps.shape}")
        object.__setattr__(self, "gaps", _readonly(gaps))
        if self.beat_symbols is not None:
            sym = np.array(self.beat_symbols, dtype=str, copy=True)
            if sym.shape != t.shape:
                raise InputError(f"beat_symbols must have shape {t.shape}; got {sym.shape}")
            object.__setattr__(self, "beat_symbols", _readonly(sym))
        if self.start is not None and not isinstance(self.start, datetime):
            raise InputError(f"start must be a datetime; got {self.start!r}")
        if self.subject is not None:
            object.__setattr__(self, "subject", str(self.subject))
        if self.source is not None:
            object.__setattr__(self, "source", str(self.source))
        if not isinstance(self.info, ReadInfo):
            raise InputError(f"info must be a ReadInfo; got {type(self.info).__name__}")

    # ------------------------------------------------------------------ constructors
    @classmethod
    def from_rr(
        cls,
        rr_ms,
        *,
        t0_s: float = 0.0,
        start: datetime | None = None,
        subject: str | None = None,
        source: str | None = None,
        info: ReadInfo | None = None,
        gaps=None,
        beat_symbols=None,
    ) -> Recording:
        """Build a recording from RR intervals in ms; the first beat is at ``t0_s`` seconds.

        Examples
        --------
        >>> Recording.from_rr([1000, 1000]).beat_times_s.tolist()
        [0.0, 1.0, 2.0]
        """
        rr = as_float_array("rr_ms", rr_ms, positive=True)
        if rr.size == 0:
            t = np.zeros(0)
        else:
            t = np.empty(rr.size + 1)
            t[0] = t0_s
            np.cumsum(rr / 1000.0, out=t[1:])
            t[1:] += t0_s
        return cls(t, rr, start=start, subject=subject, source=source,
                   info=info or ReadInfo(), gaps=gaps, beat_symbols=beat_symbols)

    @classmethod
    def from_peak_times(
        cls,
        times_s,
        *,
        start: datetime | None = None,
        subject: str | None = None,
        source: str | None = None,
        info: ReadInfo | None = None,
        gaps=None,
        beat_symbols=None,
    ) -> Recording:
        """Build a recording from R-peak (beat) times in seconds.

        Examples
        --------
        >>> Recording.from_peak_times([0.5, 1.3, 2.1]).rr_ms.tolist()
        [800.0, 800.0]
        """
        t = as_float_array("times_s", times_s)
        rr = np.diff(t) * 1000.0
        return cls(t, rr, start=start, subject=subject, source=source,
                   info=info or ReadInfo(kind="peaks", unit="s"), gaps=gaps,
                   beat_symbols=beat_symbols)

    # ------------------------------------------------------------------ properties
    @property
    def n_beats(self) -> int:
        """Number of beats (``n_intervals + 1``, or 0 for an empty recording)."""
        return int(self.beat_times_s.size)

    @property
    def n_intervals(self) -> int:
        """Number of intervals, gaps included."""
        return int(self.rr_ms.size)

    @property
    def duration_s(self) -> float:
        """Time from the first to the last beat, in seconds (gaps included)."""
        if self.beat_times_s.size < 2:
            return 0.0
        return float(self.beat_times_s[-1] - self.beat_times_s[0])

    @property
    def has_gaps(self) -> bool:
        """True when any interval is marked as a gap."""
        return bool(self.gaps.any())

    @property
    def interval_times_s(self) -> np.ndarray:
        """Time of the beat that *ends* each interval, in seconds (shape ``(n_intervals,)``)."""
        return self.beat_times_s[1:]

    def absolute_times(self) -> np.ndarray:
        """Beat times as ``datetime64[ns]`` (UTC when ``start`` is aware); needs ``start``."""
        if self.start is None:
            raise InputError("this recording has no absolute start time", hint="pass start=...")
        start = self.start
        if start.tzinfo is not None:
            start = start.astimezone(timezone.utc).replace(tzinfo=None)
        base = np.datetime64(start, "ns")
        return base + (self.beat_times_s * 1e9).astype("timedelta64[ns]")

    # ------------------------------------------------------------------ operations
    def replace(self, **changes) -> Recording:
        """Return a copy with some fields changed (validated again)."""
        return dataclasses.replace(self, **changes)

    def slice(self, start_s: float | None = None, end_s: float | None = None) -> Recording:
        """Beats with ``start_s <= t <= end_s`` and the intervals between them, on the same clock.

        An interval belongs to the slice when both of its beats do. Times are seconds on this
        recording's clock (not relative to its first beat). Returns an empty recording when fewer
        than two beats fall inside.
        """
        t = self.beat_times_s
        lo = 0 if start_s is None else int(np.searchsorted(t, start_s - 1e-9, side="left"))
        hi = t.size if end_s is None else int(np.searchsorted(t, end_s + 1e-9, side="right"))
        return self._take(lo, hi)

    def slice_beats(self, first: int, stop: int) -> Recording:
        """Beats ``first`` to ``stop - 1`` (slice semantics) and the intervals between them."""
        lo, hi, _ = slice(first, stop).indices(self.n_beats)
        return self._take(lo, hi)

    def _take(self, lo: int, hi: int) -> Recording:
        if hi - lo < 2:
            lo = hi = 0
            t = np.zeros(0)
            rr = np.zeros(0)
            gaps = np.zeros(0, dtype=bool)
            sym = None if self.beat_symbols is None else np.zeros(0, dtype=str)
        else:
            t = self.beat_times_s[lo:hi]
            rr = self.rr_ms[lo:hi - 1]
            gaps = self.gaps[lo:hi - 1]
            sym = None if self.beat_symbols is None else self.beat_symbols[lo:hi]
        return self._valid_part(t, rr, gaps, sym)

    def _valid_part(self, t: np.ndarray, rr: np.ndarray, gaps: np.ndarray,
                    sym: np.ndarray | None) -> Recording:
        """A recording with this one's metadata and arrays already known to be valid.

        For contiguous parts of this recording's own arrays (or empty arrays): a slice of valid
        arrays is valid (times still increase, intervals still agree with them), so the checks of
        ``__post_init__`` are skipped. The arrays are copied and made read-only, as the
        constructor does; ``gaps`` must be bool and ``sym`` (or None) of this recording's dtype.
        """
        out = object.__new__(Recording)
        put = object.__setattr__
        put(out, "beat_times_s", _readonly(np.array(t, dtype=np.float64, copy=True)))
        put(out, "rr_ms", _readonly(np.array(rr, dtype=np.float64, copy=True)))
        put(out, "gaps", _readonly(np.array(gaps, dtype=bool, copy=True)))
        put(out, "beat_symbols", None if sym is None else _readonly(np.array(sym, copy=True)))
        put(out, "start", self.start)
        put(out, "subject", self.subject)
        put(out, "source", self.source)
        put(out, "info", self.info)
        return out

    def nn_segments(self) -> list[np.ndarray]:
        """The runs of consecutive usable intervals (split at gaps), as views of ``rr_ms``."""
        if self.rr_ms.size == 0:
            return []
        if not self.gaps.any():
            return [self.rr_ms]
        ok = ~self.gaps
        edges = np.flatnonzero(np.diff(np.concatenate(([False], ok, [False])).astype(np.int8)))
        return [self.rr_ms[a:b] for a, b in zip(edges[::2], edges[1::2], strict=True)]

    def to_frame(self):
        """One row per interval: ``time_s`` (end beat), ``rr_ms``, ``gap``, and ``time`` when known.

        Returns
        -------
        pandas.DataFrame
        """
        import pandas as pd

        data = {"time_s": self.interval_times_s, "rr_ms": self.rr_ms, "gap": self.gaps}
        if self.beat_symbols is not None and self.beat_symbols.size:
            data["symbol"] = self.beat_symbols[1:]
        df = pd.DataFrame(data)
        if self.start is not None:
            offsets = pd.to_timedelta(self.interval_times_s, unit="s")
            df.insert(0, "time", pd.Timestamp(self.start) + offsets)
        return df

    def end_time(self) -> datetime | None:
        """Absolute time of the last beat, when ``start`` is known."""
        if self.start is None or self.n_beats == 0:
            return None
        return self.start + timedelta(seconds=float(self.beat_times_s[-1]))

    def __repr__(self) -> str:
        parts = [f"n_beats={self.n_beats}", f"duration_s={self.duration_s:.1f}"]
        if self.subject:
            parts.append(f"subject={self.subject!r}")
        if self.start is not None:
            parts.append(f"start={self.start.isoformat()}")
        if self.has_gaps:
            parts.append(f"gaps={int(self.gaps.sum())}")
        if self.source:
            parts.append(f"source={self.source!r}")
        return f"Recording({', '.join(parts)})"

    def __reduce__(self):
        return (_rebuild_recording, (np.array(self.beat_times_s), np.array(self.rr_ms), self.start,
                                     self.subject, self.source, self.info, np.array(self.gaps),
                                     None if self.beat_symbols is None
                                     else np.array(self.beat_symbols)))


def _rebuild_recording(t, rr, start, subject, source, info, gaps, sym):
    return Recording(t, rr, start=start, subject=subject, source=source, info=info, gaps=gaps,
                     beat_symbols=sym)
