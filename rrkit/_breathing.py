"""A breathing rate from the R-wave amplitude of an ECG (ECG-derived respiration): the one
computation behind the reader (a rate series measured while the ECG is at hand), the window
table (the rate of each window) and `rrkit.metrics.ecg_breathing_hz`.

Breathing moves the heart's electrical axis and the chest impedance, so the height of the R wave
rises and falls with each breath. That amplitude modulation does not depend on the RR intervals,
so it tells slow breathing from a ~0.1 Hz oscillation of heart rate (the baroreflex rhythm),
which the RR spectrum alone cannot. The amplitudes at the R peaks are put on an even 4 Hz grid
(cubic spline), detrended, and their Welch spectrum searched for one dominant peak inside
`PLAUSIBLE_BREATHING_HZ`.

The reader measures the rate on stretches of `STRETCH_S` seconds every `STEP_S` seconds and
keeps that series in ``ReadInfo.extra`` (plain numbers, so it travels with the recording into
the store and the resume cache); a window then takes the median of the stretches centred inside
it. Only the ECG is read once: nothing is detected again.

References
----------
The R-amplitude principle is common practice in ECG-derived respiration; the 4 Hz grid, the
Welch settings, the 35 % dominance share and the 120-s stretches every 60 s are rrkit's choice.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

__all__ = ["MEASURED_BY", "PLAUSIBLE_BREATHING_HZ", "STEP_S", "STRETCH_S", "MeasuredHz",
           "amplitude_breathing_hz", "breathing_series", "window_breathing_hz"]

#: Breathing rates rrkit will report or use, Hz: 3 to 42 breaths per minute (rrkit's choice: it
#: covers paced slow breathing, about 4-7 per minute, resting rates of 12-20 and light exercise;
#: a spectral peak outside it is not called a breathing rate).
PLAUSIBLE_BREATHING_HZ = (0.05, 0.70)

#: Length and step of the stretches a recording's rate series is measured on, s (rrkit's choice:
#: two 64-s Welch segments at half overlap fit in a stretch; a 5-minute window holds five).
STRETCH_S = 120.0
STEP_S = 60.0

_GRID_HZ = 4.0
_MIN_SPAN_S = 30.0
_MIN_BEATS = 8
#: share of the plausible-band power that the peak (+/- 0.03 Hz) must hold (rrkit's choice)
_MIN_SHARE = 0.35

#: How a measured rate is described (``ReadInfo.extra["breathing_measured_by"]`` and notes).
MEASURED_BY = "measured from the ECG's R-wave amplitude"


class MeasuredHz(float):
    """A breathing rate in Hz that says how it was obtained (``how``), for the breathing note.

    A plain float is a *given* rate (protocol, events table); the window table passes a measured
    one as ``MeasuredHz(rate, how=MEASURED_BY)`` so that the note does not call it given.
    """

    __slots__ = ("how",)

    def __new__(cls, value: float, *, how: str = MEASURED_BY) -> MeasuredHz:
        obj = super().__new__(cls, value)
        obj.how = how
        return obj


def amplitude_breathing_hz(t_s, amplitude) -> float | None:
    """The breathing rate of one stretch of R-wave amplitudes, Hz.

    Parameters
    ----------
    t_s : array_like
        R-peak times, s, increasing.
    amplitude : array_like
        The cleaned lead's value at each R peak (any unit).

    Returns
    -------
    float or None
        The frequency of the dominant peak of the amplitude spectrum, when it lies inside
        `PLAUSIBLE_BREATHING_HZ` and holds at least 35 % of the power there; None when there is no
        such peak, or fewer than 8 beats or 30 s.
    """
    from scipy.interpolate import CubicSpline
    from scipy.signal import detrend, welch

    t = np.asarray(t_s, dtype=np.float64)
    amp = np.asarray(amplitude, dtype=np.float64)
    if t.size < _MIN_BEATS or t[-1] - t[0] < _MIN_SPAN_S:
        return None
    grid = np.arange(t[0], t[-1], 1.0 / _GRID_HZ)
    x = detrend(CubicSpline(t, amp)(grid))
    f, p = welch(x, fs=_GRID_HZ, nperseg=min(x.size, int(64 * _GRID_HZ)), detrend="constant")
    lo, hi = PLAUSIBLE_BREATHING_HZ
    band = (f >= lo) & (f <= hi)
    if not band.any() or p[band].sum() <= 0:
        return None
    fb, pb = f[band], p[band]
    fpk = float(fb[int(pb.argmax())])
    share = float(pb[np.abs(fb - fpk) <= 0.03].sum() / pb.sum())
    return fpk if share >= _MIN_SHARE else None


def breathing_series(t_s, amplitude, *, gaps=None) -> dict[str, Any]:
    """The breathing-rate series of a recording, as plain numbers for ``ReadInfo.extra``.

    Parameters
    ----------
    t_s, amplitude : array_like
        R-peak times (s) and the R-wave amplitude at each.
    gaps : array_like of bool, optional
        True for the intervals that span an unusable stretch of the ECG; no stretch measured
        crosses one.

    Returns
    -------
    dict
        ``breathing_hz`` (the median of the stretches' rates when at least half of them have
        one, else None), ``breathing_series`` (a tuple of ``(start_s, end_s, hz or None)``, one
        per stretch of `STRETCH_S` every `STEP_S` s while half a stretch remains, the last one
        ending at the last beat; a recording shorter than a stretch is one stretch) and
        ``breathing_measured_by``.
    """
    t = np.asarray(t_s, dtype=np.float64)
    amp = np.asarray(amplitude, dtype=np.float64)
    bad = np.zeros(max(t.size - 1, 0), dtype=bool) if gaps is None else np.asarray(gaps, bool)
    cum_bad = np.concatenate(([0], np.cumsum(bad)))
    series = []
    if t.size:
        span = t[-1] - t[0]
        # every STEP_S s while at least half a stretch remains (the last one may end early)
        starts = (np.arange(0.0, span - 0.5 * STRETCH_S + 1e-9, STEP_S) + t[0]
                  if span >= STRETCH_S else np.array([t[0]]))
        for a in starts:
            b = min(a + STRETCH_S, t[-1])
            i0, i1 = np.searchsorted(t, a, "left"), np.searchsorted(t, b, "right")
            crosses = i1 - i0 >= 2 and cum_bad[i1 - 1] - cum_bad[i0] > 0
            hz = None if crosses else amplitude_breathing_hz(t[i0:i1], amp[i0:i1])
            series.append((round(float(a), 3), round(float(b), 3), hz))
    rates = [hz for _, _, hz in series if hz is not None]
    whole = float(np.median(rates)) if rates and 2 * len(rates) >= len(series) else None
    return {"breathing_hz": whole, "breathing_series": tuple(series),
            "breathing_measured_by": f"{MEASURED_BY} (ECG-derived respiration; {STRETCH_S:g}-s "
                                     f"stretches every {STEP_S:g} s)"}


def window_breathing_hz(extra: Mapping[str, Any], start_s: float,
                        end_s: float) -> MeasuredHz | None:
    """The measured breathing rate of a window from a recording's ``ReadInfo.extra``, Hz.

    The median of the rates of the stretches centred inside ``[start_s, end_s]``, when at least
    half of those stretches have a rate, as a `MeasuredHz`; None when the recording has no
    measured series (not read from an ECG) or the window has no such stretch.
    """
    series = extra.get("breathing_series")
    if not series:
        return None
    inside = [hz for a, b, hz in series if start_s <= 0.5 * (a + b) <= end_s]
    rates = [hz for hz in inside if hz is not None]
    if not rates or 2 * len(rates) < len(inside):
        return None
    return MeasuredHz(float(np.median(rates)))
