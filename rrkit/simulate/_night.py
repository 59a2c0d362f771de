"""Seeded whole nights and the nightly values a simulated wearable reports (simulations only).

A night is built from the resting-series model of `simulate_rr`: its beat-to-beat fluctuations
(breathing, 0.1 Hz and slow components, noise) are rescaled and laid over a sleep-like course of
the mean interval, so that heart rate falls after lights-off to a lowest stretch in the first
half of the night, drifts with ~90-minute sleep cycles, rises towards the morning and jumps in a
few short awakenings, while the beat-to-beat variability grows where the heart rate is low. The
shape is a plausible caricature for testing, not a physiological model.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from datetime import datetime, timedelta, timezone

import numpy as np

from .._validation import check_int, check_range
from ..errors import InputError
from ..recording import ReadInfo, Recording
from ._series import RestingSeries, simulate_rr

__all__ = ["NightSettings", "simulate_night", "simulate_wearable_reports"]

#: Default lights-off: 23:00 on Monday 5 January 2026, Central European Time (UTC+01:00).
DEFAULT_START = datetime(2026, 1, 5, 23, 0, tzinfo=timezone(timedelta(hours=1)))


@dataclass(frozen=True, slots=True)
class NightSettings:
    """Settings of a simulated night (a caricature of sleep, for tests and demos).

    Levels are mean RR intervals in ms; the night-to-night spreads are relative SDs drawn from the
    seed. Defaults give an adult sleeping at 50-60 bpm with an RMSSD of roughly 40-70 ms in
    stable sleep, within the ranges reported for healthy adults (plausibility only).
    """

    onset_rr_ms: float = 880.0       #: at lights-off (about 68 bpm)
    sleep_rr_ms: float = 1060.0      #: settled sleep (about 57 bpm)
    nadir_rr_ms: float = 1190.0      #: the lowest-heart-rate stretch (about 50 bpm)
    morning_rr_ms: float = 960.0     #: just before waking (about 62 bpm)
    settle_min: float = 25.0         #: time constant of the fall after lights-off, minutes
    nadir_at: tuple[float, float] = (0.25, 0.5)  #: range of the nadir's centre, fraction of night
    nadir_width_min: float = 50.0    #: SD of the nadir's Gaussian dip, minutes
    morning_min: float = 60.0        #: length of the rise before waking, minutes
    cycle_min: float = 90.0          #: sleep-cycle period, minutes (common textbook value)
    cycle_rr_ms: float = 25.0        #: swing of the mean RR over a cycle, ms
    cycle_gain: float = 0.25         #: relative swing of the variability over a cycle
    n_awakenings: tuple[int, int] = (2, 4)        #: range (inclusive) of awakenings per night
    awakening_min: tuple[float, float] = (2.0, 8.0)  #: range of their lengths, minutes
    awakening_hr_bpm: float = 18.0   #: heart-rate rise during an awakening, bpm
    awakening_gain: float = 0.5      #: variability factor during an awakening
    variability: float = 1.0         #: overall factor on the beat-to-beat fluctuations
    level_sd: float = 0.04           #: night-to-night relative SD of the RR levels
    variability_sd: float = 0.12     #: night-to-night relative SD of the variability


def _smooth_box(t: np.ndarray, a: float, b: float, edge_s: float = 30.0) -> np.ndarray:
    """1 inside [a, b], 0 outside, with raised-cosine edges of ``edge_s`` seconds."""
    up = np.clip((t - a) / edge_s + 0.5, 0.0, 1.0)
    down = np.clip((b - t) / edge_s + 0.5, 0.0, 1.0)
    return 0.5 - 0.5 * np.cos(np.pi * np.minimum(up, down))


class _Course:
    """Mean RR (ms) and variability factor as functions of time (s) for one night."""

    def __init__(self, s: NightSettings, duration_s: float, rng: np.random.Generator) -> None:
        lv = float(np.exp(rng.normal(0.0, s.level_sd)))
        self.onset, self.sleep = s.onset_rr_ms * lv, s.sleep_rr_ms * lv
        self.nadir, self.morning = s.nadir_rr_ms * lv, s.morning_rr_ms * lv
        self.gain = s.variability * float(np.exp(rng.normal(0.0, s.variability_sd)))
        self.duration_s = duration_s
        self.s = s
        self.nadir_t = float(rng.uniform(*s.nadir_at)) * duration_s
        self.cycle_phase = float(rng.uniform(0.0, 2 * np.pi))
        lo_n, hi_n = s.n_awakenings
        n_aw = int(rng.integers(lo_n, hi_n + 1)) if hi_n > 0 else 0
        self.awakenings: list[tuple[float, float]] = []
        first = min(30 * 60.0, 0.1 * duration_s)
        last = duration_s - min(45 * 60.0, 0.1 * duration_s)
        if n_aw and last > first:
            centres = np.sort(rng.uniform(first, last, n_aw))
            for c in centres:
                length = float(rng.uniform(*s.awakening_min)) * 60.0
                self.awakenings.append((float(c), float(c) + length))

    def at(self, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        s = self.s
        settle = 1.0 - np.exp(-t / (s.settle_min * 60.0))
        base = self.onset + (self.sleep - self.onset) * settle
        base += (self.nadir - self.sleep) * np.exp(-0.5 * ((t - self.nadir_t)
                                                           / (s.nadir_width_min * 60.0)) ** 2)
        ramp = np.clip((t - (self.duration_s - s.morning_min * 60.0)) / (s.morning_min * 60.0),
                       0.0, 1.0)
        base += (self.morning - base) * ramp * ramp
        cyc = np.sin(2 * np.pi * t / (s.cycle_min * 60.0) + self.cycle_phase)
        base += s.cycle_rr_ms * cyc * settle
        gain = self.gain * (base / self.sleep) ** 2 * (1.0 + s.cycle_gain * cyc)
        for a, b in self.awakenings:
            w = _smooth_box(t, a, b)
            awake = 60000.0 / (60000.0 / base + s.awakening_hr_bpm)
            base = base + (awake - base) * w
            gain = gain * (1.0 + (s.awakening_gain - 1.0) * w)
        return base, gain


def simulate_night(
    *,
    duration_h: float = 8.0,
    seed: int | np.random.Generator,
    start: datetime | None = None,
    subject: str | None = None,
    settings: NightSettings | None = None,
    series: RestingSeries | None = None,
) -> Recording:
    """Simulate one night of RR intervals with a sleep-like course.

    Parameters
    ----------
    duration_h : float
        Length of the night in hours (default 8).
    seed : int or numpy.random.Generator
        Seed of everything random in the night (required: nights are reproducible).
    start : datetime, optional
        Lights-off, time-zone aware (default 2026-01-05 23:00 at UTC+01:00).
    subject : str, optional
        Subject id stored on the recording.
    settings : NightSettings, optional
        Course of the night (levels, nadir, cycles, awakenings, night-to-night spreads).
    series : RestingSeries, optional
        Beat-to-beat fluctuation model of `simulate_rr` (breathing at 0.25 Hz by default); its
        ``mean_rr_ms`` is replaced by the night's settled-sleep level.

    Returns
    -------
    Recording
        Intervals in ms with ``start`` and ``subject`` set; ``info.extra`` records
        ``simulated="night"``, the seed, the nadir time (s) and the awakenings as
        ``"start_s-end_s"`` pairs.

    Notes
    -----
    The fluctuation series ``f`` of `simulate_rr` (mean removed) is laid over the course:
    ``rr(t) = m(t) + g(t) f``, with ``m`` the mean RR and ``g`` the variability factor
    (proportional to ``(m / m_sleep)^2``, lower in awakenings). Beat ``k`` of the mean course
    falls where the integral of ``1 / m(t)`` reaches ``k``; the course is then evaluated again
    at the cumulative sum of the intervals themselves. An 8-hour night (about 30,000 beats)
    takes a fraction of a second.

    Examples
    --------
    >>> night = simulate_night(duration_h=1, seed=3)
    >>> round(night.duration_s / 3600, 2)
    1.0
    """
    dur_h = check_range("duration_h", duration_h, low=0.25, high=48.0, unit="h")
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer, np.random.Generator)):
        raise InputError(f"seed must be an int or a numpy Generator; got {seed!r}")
    if start is None:
        start = DEFAULT_START
    elif not isinstance(start, datetime) or start.tzinfo is None:
        raise InputError(f"start must be a time-zone aware datetime; got {start!r}",
                         hint="for example datetime(2026, 1, 5, 23, 0, tzinfo=ZoneInfo(...))")
    s = settings or NightSettings()
    if not isinstance(s, NightSettings):
        raise InputError(f"settings must be a NightSettings; got {type(s).__name__}")
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(int(seed))
    duration_s = dur_h * 3600.0
    course = _Course(s, duration_s, rng)
    fluct = dataclasses.replace(series or RestingSeries(), mean_rr_ms=course.sleep)
    # beat times of the mean course: beat k falls where the integral of 1/m(t) reaches k
    step = 0.5
    grid = np.arange(0.0, duration_s * 1.2 + 120.0, step)
    m_grid, _ = course.at(grid)
    phase = np.concatenate(([0.0], np.cumsum(step * 1000.0 / m_grid[:-1])))
    n = int(phase[-1])
    f = simulate_rr(n, settings=fluct, seed=rng, as_recording=False) - fluct.mean_rr_ms
    t = np.interp(np.arange(n, dtype=float), phase, grid)
    for _ in range(2):  # then evaluate the course at the beats' own times
        m, g = course.at(t)
        rr = m + g * f
        t = np.concatenate(([0.0], np.cumsum(rr[:-1]))) / 1000.0
    rr = np.maximum(rr, 300.0)
    t_end = np.cumsum(rr) / 1000.0
    k = int(np.searchsorted(t_end, duration_s, side="right"))
    rr = rr[:max(k, 2)]
    extra = {
        "simulated": "night",
        "seed": int(seed) if not isinstance(seed, np.random.Generator) else "generator",
        "nadir_s": round(course.nadir_t, 1),
        "awakenings_s": ",".join(f"{a:.0f}-{b:.0f}" for a, b in course.awakenings),
    }
    return Recording.from_rr(rr, start=start, subject=subject,
                             source=f"simulated night{'' if subject is None else ' ' + subject}",
                             info=ReadInfo(kind="array", extra=extra))


def simulate_wearable_reports(
    nights,
    *,
    definition="whole-night",
    bias: float = 0.0,
    noise_sd: float = 0.0,
    scale: float = 1.0,
    metric: str = "rmssd_ms",
    clean="drr",
    seed: int | np.random.Generator,
):
    """The nightly values a simulated wearable would report for some nights.

    The wearable computes ``metric`` with a hidden reference definition and cleaning, then
    reports ``scale * value + bias + noise`` with Gaussian noise of SD ``noise_sd``.

    Parameters
    ----------
    nights : sequence of Recording
        Whole nights with ``start`` (time-zone aware) and ``subject`` set.
    definition : str or ReferenceDefinition
        The hidden definition: a name of `rrkit.agreement.REFERENCE_DEFINITIONS` or a
        `rrkit.ReferenceDefinition`.
    bias : float
        Additive bias in the metric's unit (default 0).
    noise_sd : float
        SD of the Gaussian noise in the metric's unit (default 0).
    scale : float
        Proportional error (default 1: none).
    metric : str
        Metric key of `rrkit.metrics` (default ``"rmssd_ms"``).
    clean : str, CleanSettings, mapping or None
        Cleaning the wearable applies before computing (default ``"drr"``; see
        `rrkit.reference_table`).
    seed : int or numpy.random.Generator
        Seed of the noise.

    Returns
    -------
    pandas.DataFrame
        ``subject``, ``date`` (the night's date: the local date of its last beat, see
        `rrkit.agreement.night_date`) and the metric column, one row per night.
    """
    from ..agreement import reference_table

    bias = check_range("bias", bias)
    noise_sd = check_range("noise_sd", noise_sd, low=0.0)
    scale = check_range("scale", scale, low=0.0, low_inclusive=False)
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(
        check_int("seed", seed))
    table = reference_table(nights, definition=definition, clean=clean, metric=metric)
    values = table[metric].to_numpy(dtype=float)
    noise = rng.normal(0.0, noise_sd, values.size) if noise_sd > 0 else np.zeros(values.size)
    out = table[["subject", "date"]].copy()
    out[metric] = scale * values + bias + noise
    return out.reset_index(drop=True)
