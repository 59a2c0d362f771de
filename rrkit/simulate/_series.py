"""Seeded generator of realistic resting RR series (a simulation, not real people).

The interval sequence is built beat by beat from an instantaneous-period model: a mean RR, a
respiratory sinus arrhythmia component, a 0.1 Hz (baroreflex, LF) component, a slow drift and
correlated noise. Sinusoids are evaluated at the beat times, so their frequencies are in Hz of
real time, as in a recording.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._validation import check_int, check_range
from ..recording import Recording

__all__ = ["RestingSeries", "simulate_rr"]


@dataclass(frozen=True, slots=True)
class RestingSeries:
    """Settings of a simulated resting series.

    Defaults give an adult at supine rest: 60 bpm, RMSSD near 40 ms, SDNN near 50 ms, in the
    range of Nunan et al. (2010) normal short-term values.
    """

    mean_rr_ms: float = 1000.0
    resp_hz: float = 0.25       #: breathing rate (15 breaths/min)
    resp_amp_ms: float = 30.0   #: RSA amplitude
    lf_hz: float = 0.1          #: baroreflex oscillation
    lf_amp_ms: float = 25.0
    drift_amp_ms: float = 15.0  #: slow random drift (VLF), SD in ms
    noise_ms: float = 8.0       #: beat-to-beat noise SD, AR(1) with coefficient 0.5
    freq_jitter: float = 0.05   #: relative random-walk jitter of the breathing frequency


def simulate_rr(
    n_beats: int | None = None,
    *,
    duration_s: float | None = None,
    settings: RestingSeries | None = None,
    seed: int | np.random.Generator | None = 0,
    t0_s: float = 0.0,
    as_recording: bool = True,
    **overrides: float,
):
    """Simulate a resting RR series.

    Parameters
    ----------
    n_beats : int, optional
        Number of intervals to generate. Give this or ``duration_s``.
    duration_s : float, optional
        Generate intervals until this duration (s) is reached.
    settings : RestingSeries, optional
        Model settings; ``overrides`` (for example ``mean_rr_ms=850``) replace single fields.
    seed : int or numpy.random.Generator, optional
        Seed (default 0) for a reproducible series.
    t0_s : float
        Time of the first beat, in seconds.
    as_recording : bool
        Return a `Recording` (default) or the RR array in ms.

    Returns
    -------
    Recording or numpy.ndarray

    Examples
    --------
    >>> rec = simulate_rr(300, seed=1)
    >>> rec.n_intervals
    300
    """
    import dataclasses

    s = settings or RestingSeries()
    if overrides:
        s = dataclasses.replace(s, **overrides)
    if (n_beats is None) == (duration_s is None):
        from ..errors import InputError

        raise InputError("give exactly one of n_beats and duration_s")
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
    if n_beats is not None:
        n = check_int("n_beats", n_beats, low=1)
    else:
        dur = check_range("duration_s", duration_s, low=0, low_inclusive=False, unit="s")
        n = int(dur * 1000.0 / s.mean_rr_ms * 1.3) + 10
    rr = _generate(n, s, rng)
    if duration_s is not None:
        t = np.cumsum(rr) / 1000.0
        k = int(np.searchsorted(t, duration_s, side="right"))
        rr = rr[:max(k, 1)]
    if not as_recording:
        return rr
    return Recording.from_rr(rr, t0_s=t0_s)


def _generate(n: int, s: RestingSeries, rng: np.random.Generator) -> np.ndarray:
    # Noise terms are drawn once for all beats (vectorised); the beat times come from a cumulative
    # sum of a first pass, which is accurate because the modulations are small against the mean.
    phase_resp = rng.uniform(0, 2 * np.pi)
    phase_lf = rng.uniform(0, 2 * np.pi)
    e = rng.normal(0.0, s.noise_ms * np.sqrt(1 - 0.25), n)
    noise = _ar1(e, 0.5)
    drift = _ar1(rng.normal(0.0, 1.0, n), 0.995)
    drift *= s.drift_amp_ms / max(drift.std(), 1e-12)
    jitter = np.cumsum(rng.normal(0.0, s.freq_jitter / np.sqrt(max(n, 1)) * 3, n))
    rr = np.full(n, s.mean_rr_ms)
    for _ in range(2):
        t = np.concatenate(([0.0], np.cumsum(rr)[:-1])) / 1000.0
        f_resp = s.resp_hz * (1.0 + np.clip(jitter, -0.2, 0.2))
        steps = np.cumsum(f_resp[:-1] * np.diff(t))
        phi_resp = phase_resp + 2 * np.pi * np.concatenate(([0.0], steps))
        rr = (s.mean_rr_ms + s.resp_amp_ms * np.sin(phi_resp)
              + s.lf_amp_ms * np.sin(2 * np.pi * s.lf_hz * t + phase_lf) + drift + noise)
    return np.maximum(rr, 250.0)


def _ar1(e: np.ndarray, a: float) -> np.ndarray:
    from scipy.signal import lfilter

    return lfilter([1.0], [1.0, -a], e)
