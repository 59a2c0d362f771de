"""A simulated second device recording the same heartbeats: clock offset and drift, a pulse
delay with beat-to-beat jitter, dropped and invented beats, all with the ground truth kept."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .._validation import check_range
from ..errors import InputError
from ..recording import ReadInfo, Recording

__all__ = ["DeviceTruth", "simulate_device"]


@dataclass(frozen=True, slots=True)
class DeviceTruth:
    """What `simulate_device` did, beat by beat.

    Attributes
    ----------
    source_beat : numpy.ndarray of int, shape (device.n_beats,)
        For each device beat, the reference beat it records, or -1 for an invented beat.
    dropped : numpy.ndarray of int
        Reference beats inside the device's recording that the device dropped.
    invented : numpy.ndarray of int
        Device beats that record no heartbeat.
    delay_ms : numpy.ndarray
        The pulse delay of each recorded beat (ms), jitter included; NaN for invented beats.
    """

    source_beat: np.ndarray
    dropped: np.ndarray
    invented: np.ndarray
    delay_ms: np.ndarray


def simulate_device(
    reference: Recording,
    *,
    clock_offset_s: float = 0.0,
    drift_ms_per_h: float = 0.0,
    delay_ms: float = 220.0,
    jitter_ms: float | tuple[float, float] = 10.0,
    jitter_period_s: float = 120.0,
    drop_pct: float = 0.0,
    extra_pct: float = 0.0,
    seed: int | np.random.Generator | None = 0,
) -> tuple[Recording, DeviceTruth]:
    """Record ``reference``'s beats again with a second, imperfect device (a simulation).

    Parameters
    ----------
    reference : Recording
        The true beats (reference clock).
    clock_offset_s : float
        Reference time at which the device's clock reads 0; beats before it are not recorded.
    drift_ms_per_h : float
        How many ms per hour the device clock gains on the reference.
    delay_ms : float
        Constant pulse delay added to every beat (0 for a second ECG).
    jitter_ms : float or (float, float)
        SD of the beat-to-beat delay variation, independent between beats (ms); a pair
        ``(low, high)`` lets the SD wander between the two along a sinusoid of period
        ``jitter_period_s`` (as pulse-arrival time does with posture and breathing).
    drop_pct, extra_pct : float
        Share of recorded beats dropped, and of beats invented (placed 30-70% of the way
        through an interval, so they are never within 150 ms of a true beat at rest).
    seed : int or numpy.random.Generator
        Randomness (default 0).

    Returns
    -------
    (Recording, DeviceTruth)
        The device's beats on its own clock (marked pulse-derived when ``delay_ms > 0``),
        and what was done to each beat.

    Examples
    --------
    >>> from rrkit.simulate import simulate_rr
    >>> dev, truth = simulate_device(simulate_rr(200, seed=1), clock_offset_s=5.0, seed=1)
    >>> int((truth.source_beat < 0).sum())
    0
    """
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
    check_range("delay_ms", delay_ms, low=0.0, unit="ms")
    check_range("drop_pct", drop_pct, low=0.0, high=50.0, unit="%")
    check_range("extra_pct", extra_pct, low=0.0, high=50.0, unit="%")
    lo, hi = (jitter_ms, jitter_ms) if np.isscalar(jitter_ms) else jitter_ms
    t = reference.beat_times_s
    sd = (lo + hi) / 2 + (hi - lo) / 2 * np.sin(2 * np.pi * t / jitter_period_s)
    delay = delay_ms + sd * rng.standard_normal(t.size)
    pulse = t + delay / 1000.0
    recorded = np.flatnonzero(pulse >= clock_offset_s)
    if recorded.size < 10:
        raise InputError("the device would record fewer than 10 beats; lower clock_offset_s")
    n_drop = round(drop_pct / 100.0 * recorded.size)
    inner = recorded[1:-1]  # keep the first and last beat so the span stays
    dropped = np.sort(rng.choice(inner, size=min(n_drop, inner.size), replace=False))
    kept = np.setdiff1d(recorded, dropped)
    times = pulse[kept]
    n_extra = round(extra_pct / 100.0 * kept.size)
    at = np.sort(rng.choice(kept.size - 1, size=n_extra, replace=False))
    fake = times[at] + rng.uniform(0.3, 0.7, n_extra) * (times[at + 1] - times[at])
    all_t = np.concatenate((times, fake))
    src = np.concatenate((kept, np.full(n_extra, -1)))
    dly = np.concatenate((delay[kept], np.full(n_extra, np.nan)))
    order = np.argsort(all_t, kind="stable")
    all_t, src, dly = all_t[order], src[order], dly[order]
    t_dev = (all_t - clock_offset_s) * (1.0 + drift_ms_per_h / 3.6e6)
    info = ReadInfo(kind="pulse" if delay_ms > 0 else "peaks", kind_decided_by="simulated",
                    unit="s", unit_decided_by="simulated",
                    extra={"simulated": "rrkit.simulate.simulate_device"})
    dev = Recording.from_peak_times(t_dev, info=info, subject=reference.subject,
                                    source="simulated device")
    truth = DeviceTruth(source_beat=src, dropped=dropped, invented=np.flatnonzero(src < 0),
                        delay_ms=dly)
    return dev, truth
