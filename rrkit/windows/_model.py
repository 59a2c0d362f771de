"""The window model: `Window` (bounds on the recording clock) and the `WindowSpec` base."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Any

from .._validation import check_range
from ..errors import InputError
from ..recording import Recording

EPS = 1e-9
_EPS = EPS


@dataclass(frozen=True, slots=True)
class Window:
    """One analysis window.

    Attributes
    ----------
    label : str
        Name shown in tables (``"morning"``, ``"tilt"``, ``"2026-03-29 04:00-07:00"``).
    start_s, end_s : float
        Window bounds in s on the recording's clock; beats with ``start_s <= t <= end_s`` belong
        to it.
    breathing_hz : float or None
        Breathing rate stated for the window (events table), in Hz.
    extra : Mapping
        What else resolution recorded (``requested_s`` when clipped, the stable-segment search).
    """

    label: str
    start_s: float
    end_s: float
    breathing_hz: float | None = None
    extra: Mapping[str, Any] = field(default_factory=dict)

    def __post_init__(self) -> None:
        start = check_range("start_s", self.start_s, unit="s")
        end = check_range("end_s", self.end_s, unit="s")
        if end < start:
            raise InputError(
                f"window {self.label!r}: end_s ({end!r}) is before start_s ({start!r})")
        object.__setattr__(self, "start_s", start)
        object.__setattr__(self, "end_s", end)
        object.__setattr__(self, "label", str(self.label))
        if self.breathing_hz is not None:
            object.__setattr__(self, "breathing_hz", check_range(
                "breathing_hz", self.breathing_hz, low=0.0, low_inclusive=False, unit="Hz"))
        object.__setattr__(self, "extra", MappingProxyType(dict(self.extra)))

    @property
    def duration_s(self) -> float:
        """``end_s - start_s`` in s."""
        return self.end_s - self.start_s

    @property
    def clipped(self) -> bool:
        """True when the window was cut to fit the recording."""
        return "requested_s" in self.extra


class WindowSpec:
    """Base of the window specs: ``resolve(recording, clean_result=None) -> list[Window]``."""

    #: Settings record a spec by its ``repr`` (`rrkit._plain.to_plain`).
    _plain_as_repr = True

    def resolve(self, recording: Recording, *, clean_result=None) -> list[Window]:
        raise NotImplementedError


def _span(rec: Recording) -> tuple[float, float] | None:
    if rec.n_beats < 2:
        return None
    return float(rec.beat_times_s[0]), float(rec.beat_times_s[-1])


def _clip(label: str, start: float, end: float, span: tuple[float, float], *,
          breathing_hz: float | None = None, extra: Mapping[str, Any] | None = None) -> Window:
    lo, hi = span
    s = min(max(start, lo), hi)
    e = min(max(end, s), hi)
    info = dict(extra or {})
    if s > start + _EPS or e < end - _EPS:
        info["requested_s"] = (start, end)
    return Window(label, s, e, breathing_hz=breathing_hz, extra=info)



def _fmt(seconds: float) -> str:
    s = float(seconds)
    if s >= 60 and s % 60 == 0:
        return f"{s / 60:g}m"
    return f"{s:g}s"

