"""Argument checks shared by every stage, so that messages always read the same way.

Each check names the argument, says what is allowed (with units) and shows what was received
(``repr``), with a "did you mean" hint for options.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable
from typing import Any

import numpy as np

from .errors import InputError

__all__ = ["Interval", "Options", "as_float_array", "check_constraints", "check_int",
           "check_option", "check_range"]


def check_option(name: str, value: Any, allowed: Iterable[Any]) -> Any:
    """Return ``value`` if it is one of ``allowed``, else raise `InputError` with a hint."""
    allowed = list(allowed)
    if value in allowed:
        return value
    hint = None
    if isinstance(value, str):
        close = difflib.get_close_matches(value, [str(a) for a in allowed], n=1)
        if close:
            hint = f"did you mean {close[0]!r}?"
    listed = ", ".join(repr(a) for a in allowed)
    raise InputError(f"{name} must be one of {listed}; got {value!r}", hint=hint)


def check_range(
    name: str,
    value: Any,
    *,
    low: float | None = None,
    high: float | None = None,
    unit: str = "",
    low_inclusive: bool = True,
    high_inclusive: bool = True,
) -> float:
    """Return ``value`` as float if it lies in the range, else raise `InputError`."""
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be a number{_unit(unit)}; got {value!r}") from None
    if not np.isfinite(x):
        raise InputError(f"{name} must be finite{_unit(unit)}; got {value!r}")
    bad_low = low is not None and (x < low if low_inclusive else x <= low)
    bad_high = high is not None and (x > high if high_inclusive else x >= high)
    if bad_low or bad_high:
        lo = "-inf" if low is None else f"{low:g}"
        hi = "inf" if high is None else f"{high:g}"
        left = "[" if low_inclusive else "("
        right = "]" if high_inclusive else ")"
        raise InputError(f"{name} must be in {left}{lo}, {hi}{right}{_unit(unit)}; got {value!r}")
    return x


def check_int(name: str, value: Any, *, low: int | None = None, high: int | None = None) -> int:
    """Return ``value`` as int if it is a whole number in the range, else raise `InputError`."""
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise InputError(f"{name} must be a whole number; got {value!r}")
    v = int(value)
    if (low is not None and v < low) or (high is not None and v > high):
        lo = "-inf" if low is None else str(low)
        hi = "inf" if high is None else str(high)
        raise InputError(f"{name} must be in [{lo}, {hi}]; got {value!r}")
    return v


def as_float_array(
    name: str, value: Any, *, finite: bool = True, positive: bool = False
) -> np.ndarray:
    """Return a new 1-D float64 array, or raise `InputError` saying what is wrong and where."""
    try:
        arr = np.array(value, dtype=np.float64, copy=True)
    except (TypeError, ValueError):
        got = type(value).__name__
        raise InputError(f"{name} must be a 1-D array of numbers; got {got}") from None
    if arr.ndim != 1:
        raise InputError(f"{name} must be 1-D; got shape {arr.shape}")
    if finite:
        bad = np.flatnonzero(~np.isfinite(arr))
        if bad.size:
            raise InputError(
                f"{name} must be finite; element {bad[0]} is {arr[bad[0]]!r}"
                + (f" ({bad.size} such elements)" if bad.size > 1 else "")
            )
    if positive:
        bad = np.flatnonzero(arr <= 0)
        if bad.size:
            raise InputError(
                f"{name} must be > 0; element {bad[0]} is {arr[bad[0]]!r}"
                + (f" ({bad.size} such elements)" if bad.size > 1 else "")
            )
    return arr


def _unit(unit: str) -> str:
    return f" (in {unit})" if unit else ""


# ---------------------------------------------------------------------------- declared constraints
class Options:
    """A parameter that takes one of a fixed set of values (declared once, used everywhere).

    The same object validates the settings field (`check_option`), gives the command-line
    ``choices`` (`values`) and the text of help and docs (`describe`).
    """

    __slots__ = ("values",)

    def __init__(self, values: Iterable[Any]) -> None:
        self.values = tuple(values)

    def check(self, name: str, value: Any) -> Any:
        return check_option(name, value, self.values)

    def describe(self) -> str:
        """``"one of 'welch', 'lomb', 'ar'"``."""
        return "one of " + ", ".join(repr(v) for v in self.values)


class Interval:
    """A number in a range, with its unit (see `check_range` and `check_int`)."""

    __slots__ = ("high", "high_inclusive", "integer", "low", "low_inclusive", "unit")

    def __init__(self, low: float | None = None, high: float | None = None, *, unit: str = "",
                 low_inclusive: bool = True, high_inclusive: bool = True,
                 integer: bool = False) -> None:
        self.low, self.high, self.unit = low, high, unit
        self.low_inclusive, self.high_inclusive = low_inclusive, high_inclusive
        self.integer = integer

    def check(self, name: str, value: Any) -> Any:
        if self.integer:
            return check_int(name, value, low=self.low, high=self.high)
        return check_range(name, value, low=self.low, high=self.high, unit=self.unit,
                           low_inclusive=self.low_inclusive, high_inclusive=self.high_inclusive)

    def describe(self) -> str:
        lo = "-inf" if self.low is None else f"{self.low:g}"
        hi = "inf" if self.high is None else f"{self.high:g}"
        left = "[" if self.low_inclusive or self.integer else "("
        right = "]" if self.high_inclusive or self.integer else ")"
        kind = "a whole number" if self.integer else "a number"
        return f"{kind} in {left}{lo}, {hi}{right}{_unit(self.unit)}"


def check_constraints(obj: Any, constraints: dict[str, Options | Interval]) -> None:
    """Check every field of ``obj`` named in ``constraints`` (in their order)."""
    for name, constraint in constraints.items():
        constraint.check(name, getattr(obj, name))
