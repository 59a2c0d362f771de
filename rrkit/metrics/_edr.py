"""A breathing rate measured from the ECG itself (ECG-derived respiration, EDR).

Breathing moves the heart's electrical axis and the chest impedance, so the height of the R
wave rises and falls with each breath. That amplitude modulation is independent of the RR
intervals, so it can tell slow breathing from a ~0.1 Hz oscillation of heart rate (the
baroreflex rhythm), which the RR spectrum alone cannot. The R peaks come from rrkit's ECG
detection (neurokit2 ``ecg_clean`` and ``ecg_peaks``); the amplitudes are read from the cleaned
lead at the peaks, put on an even 4 Hz grid and their spectrum searched for one dominant peak
inside `PLAUSIBLE_BREATHING_HZ` (`rrkit._breathing`, the one computation).

`rrkit.read` already measures a rate series of every ECG it reads (``ReadInfo.extra``), which the
window table uses; this function measures a stretch of an ECG held in memory, to pass on as a
breathing rate (``rrkit.metrics(..., breathing_hz=rate)``).

References
----------
The R-amplitude principle is common practice in ECG-derived respiration; the 4 Hz grid, the
Welch settings and the 35 % dominance share are rrkit's choice.
"""

from __future__ import annotations

import numpy as np

from .._breathing import amplitude_breathing_hz
from ..errors import InputError

__all__ = ["ecg_breathing_hz"]


def ecg_breathing_hz(ecg, *, fs_hz: float, start_s: float | None = None,
                     end_s: float | None = None, detector: str = "neurokit") -> float | None:
    """The breathing rate of an ECG stretch from its R-wave amplitude modulation, in Hz.

    Parameters
    ----------
    ecg : array_like, shape (n_samples,)
        One raw ECG lead.
    fs_hz : float
        Its sampling rate, Hz.
    start_s, end_s : float, optional
        The stretch to measure, seconds from the first sample (default: all of it).
    detector : str
        R-peak detector of neurokit2 (`rrkit.io.DETECTORS`).

    Returns
    -------
    float or None
        The frequency of the dominant peak of the amplitude series, when it lies inside
        `PLAUSIBLE_BREATHING_HZ` (3-42 per minute) and holds at least 35 % of the power there;
        None when there is no such peak (no clear breathing rhythm in the amplitudes).

    Examples
    --------
    >>> import numpy as np
    >>> fs = 250.0
    >>> t = np.arange(0, 120, 1 / fs)
    >>> beats = (t % 0.85) < 0.02                         # a crude R wave every 0.85 s
    >>> ecg = np.where(beats, 1 + 0.3 * np.sin(2 * np.pi * 0.25 * t), 0.0)
    >>> round(ecg_breathing_hz(ecg, fs_hz=fs), 2)         # doctest: +SKIP
    0.25
    """
    from ..io._ecg import _clean, detect_beats

    sig = np.asarray(ecg, dtype=np.float64).ravel()
    a = 0 if start_s is None else round(float(start_s) * fs_hz)
    b = sig.size if end_s is None else round(float(end_s) * fs_hz)
    if not 0 <= a < b <= sig.size:
        raise InputError(f"start_s/end_s ({start_s}, {end_s}) lie outside the ECG of "
                         f"{sig.size / fs_hz:.1f} s")
    part = sig[a:b]
    peaks, _gaps, info = detect_beats(part, fs_hz=fs_hz, detector=detector, what="ECG",
                                      breathing=False)
    lead = _clean(part, fs_hz)
    if info.get("inverted_lead"):
        lead = -lead
    return amplitude_breathing_hz(peaks / fs_hz, lead[peaks])
