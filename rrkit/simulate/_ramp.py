"""Simulated incremental exercise tests whose DFA alpha1 falls with heart rate in a known way.

The beat-to-beat fluctuations are fractionally integrated noise (ARFIMA(0, d, 0), Hosking 1981,
Biometrika 68:165, doi:10.1093/biomet/68.1.165) with a memory parameter ``d`` that changes
beat by beat: its moving-average weights ``w_0 = 1, w_j = w_(j-1) (j - 1 + d) / j`` are
applied to one stream of Gaussian innovations, so the series changes its correlation structure
smoothly as the heart rate climbs. For a stationary series DFA gives alpha of about ``d + 1/2``
(Peng et al. 1995); over short boxes (4-16 beats) the measured alpha1 is biased upward for
white noise, so the generator calibrates ``d`` against the alpha1 that rrkit's own DFA measures
on long stationary series of each ``d`` and plants the *measured-scale* alpha1. The truth a test
knows is therefore "the alpha1 a stationary series of this structure shows", which is what a
threshold method must recover.

Everything here is invented; no real person's test is described.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from ..errors import InputError
from ..recording import Recording

__all__ = ["RampSimulation", "simulate_ramp"]

_TAPS = 512          # moving-average truncation of the fractional filter (beats)
_D_GRID = np.round(np.arange(-0.45, 0.801, 0.05), 4)


def _ma_weights(d: np.ndarray, taps: int = _TAPS) -> np.ndarray:
    """Moving-average weights of (1 - B)^-d for each ``d`` (rows), normalised to unit variance."""
    d = np.asarray(d, dtype=float).reshape(-1, 1)
    j = np.arange(1, taps, dtype=float)
    w = np.ones((d.shape[0], taps))
    w[:, 1:] = np.cumprod((j - 1.0 + d) / j, axis=1)
    w /= np.sqrt((w * w).sum(axis=1, keepdims=True))
    return w


@lru_cache(maxsize=4)
def _calibration(seg_beats: int) -> tuple[np.ndarray, np.ndarray]:
    """Measured DFA alpha1 (4-16 beats, rrkit's definition) of stationary series for each ``d``.

    Averaged over 40 segments of ``seg_beats`` beats, so the short-window bias of alpha1 is in
    the table. Made monotone (a running maximum) so it can be inverted.
    """
    from ..metrics import metrics

    rng = np.random.default_rng(20260101)
    n_seg = 40
    out = np.empty(_D_GRID.size)
    e = rng.standard_normal(n_seg * seg_beats + _TAPS)
    for i, w in enumerate(_ma_weights(_D_GRID)):
        x = np.convolve(e, w, mode="valid")[: n_seg * seg_beats]
        vals = []
        for k in range(n_seg):
            rr = 500.0 + 5.0 * x[k * seg_beats:(k + 1) * seg_beats]
            vals.append(metrics(Recording.from_rr(rr), domains=["nonlinear"])["dfa_alpha1"])
        out[i] = float(np.nanmean(vals))
    return _D_GRID.copy(), np.maximum.accumulate(out)


def _d_for_alpha(alpha: np.ndarray, seg_beats: int) -> np.ndarray:
    d, a = _calibration(seg_beats)
    return np.interp(alpha, a, d)


@dataclass(frozen=True, slots=True)
class RampSimulation:
    """A simulated incremental test and its ground truth.

    Attributes
    ----------
    recording : Recording
        The RR intervals (ms), first beat at 0 s.
    loads : pandas.DataFrame
        The stage table: ``time_s`` (stage start, s from the recording start) and ``power_w``.
    hr_at : dict of float -> float
        Planted heart rate (bpm) at which alpha1 crosses each level (0.75, 0.5).
    power_at : dict of float -> float
        Planted power (W) at those crossings (the stage power in force when HR reaches it).
    alpha_of_hr : tuple of float
        ``(hr_bpm at 0.75, slope per bpm, floor, ceiling)``: the planted line
        ``alpha1 = clip(0.75 - slope (HR - hr_075), floor, ceiling)``.
    """

    recording: Recording
    loads: object
    hr_at: dict = field(default_factory=dict)
    power_at: dict = field(default_factory=dict)
    alpha_of_hr: tuple = ()


def simulate_ramp(
    *,
    hr_start_bpm: float = 95.0,
    hr_peak_bpm: float = 184.0,
    hr_075_bpm: float = 150.0,
    hr_050_bpm: float = 168.0,
    alpha_ceiling: float = 1.1,
    alpha_floor: float = 0.3,
    warmup_s: float = 240.0,
    ramp_s: float = 1200.0,
    recovery_s: float = 0.0,
    start_power_w: float = 80.0,
    stage_s: float = 60.0,
    stage_step_w: float = 15.0,
    rr_cv: float = 0.012,
    seed: int | np.random.Generator | None = 0,
) -> RampSimulation:
    """Simulate the RR intervals of an incremental test with planted alpha1 crossings.

    Heart rate stays at ``hr_start_bpm`` through the warm-up, climbs linearly to
    ``hr_peak_bpm`` over ``ramp_s`` while the power rises in stages, then (optionally) falls
    during ``recovery_s``. DFA alpha1 follows heart rate: a line through 0.75 at
    ``hr_075_bpm`` and 0.5 at ``hr_050_bpm``, clipped to ``[alpha_floor, alpha_ceiling]``.

    Parameters
    ----------
    hr_start_bpm, hr_peak_bpm : float
        Heart rate in the warm-up and at the end of the ramp (bpm).
    hr_075_bpm, hr_050_bpm : float
        Planted heart rates at which alpha1 crosses 0.75 and 0.5 (bpm).
    alpha_ceiling, alpha_floor : float
        Limits of the planted alpha1.
    warmup_s, ramp_s, recovery_s : float
        Phase durations (s).
    start_power_w, stage_s, stage_step_w : float
        The stage protocol: the first stage's power (W), each stage's length (s) and the step
        (W) between stages. The warm-up is held at the first stage's power.
    rr_cv : float
        SD of the fluctuations as a fraction of the mean interval (default 1.2%, a few ms at
        exercise heart rates; common practice for plausible values, not a published figure).
    seed : int or numpy.random.Generator
        Seed (default 0).

    Returns
    -------
    RampSimulation

    Examples
    --------
    >>> sim = simulate_ramp(seed=1)
    >>> round(sim.hr_at[0.75]), round(sim.hr_at[0.5])
    (150, 168)
    """
    import pandas as pd

    if not hr_start_bpm < hr_075_bpm < hr_050_bpm:
        raise InputError("expected hr_start_bpm < hr_075_bpm < hr_050_bpm; got "
                         f"{hr_start_bpm}, {hr_075_bpm}, {hr_050_bpm}")
    if not 0 < alpha_floor < 0.5 < 0.75 < alpha_ceiling:
        raise InputError("expected 0 < alpha_floor < 0.5 and alpha_ceiling > 0.75; got "
                         f"{alpha_floor}, {alpha_ceiling}")
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)
    total_s = warmup_s + ramp_s + recovery_s

    def hr_of(t):
        t = np.asarray(t, dtype=float)
        up = hr_start_bpm + (hr_peak_bpm - hr_start_bpm) * np.clip((t - warmup_s) / ramp_s, 0, 1)
        down = np.clip((t - warmup_s - ramp_s) / max(recovery_s, 1e-9), 0, 1)
        return up - 0.45 * (hr_peak_bpm - hr_start_bpm) * down

    # beat times from the heart-rate profile (one beat lasts 60/HR s)
    times = [0.0]
    while times[-1] < total_s:
        times.append(times[-1] + 60.0 / float(hr_of(times[-1])))
    t = np.asarray(times)
    mean_rr = np.diff(t) * 1000.0
    hr = 60000.0 / mean_rr
    slope = 0.25 / (hr_050_bpm - hr_075_bpm)
    alpha = np.clip(0.75 - slope * (hr - hr_075_bpm), alpha_floor, alpha_ceiling)
    # calibrated against windows of the default analysis length (2 min at the ramp's mean HR)
    seg = round(120.0 * (hr_075_bpm / 60.0))
    d = _d_for_alpha(alpha, seg)
    e = rng.standard_normal(mean_rr.size + _TAPS - 1)
    w = _ma_weights(d)
    lagged = np.lib.stride_tricks.sliding_window_view(e, _TAPS)[:, ::-1]
    x = np.einsum("ij,ij->i", w, lagged)
    rr = mean_rr * (1.0 + rr_cv * x)
    rec = Recording.from_rr(rr, source="simulated ramp")

    n_stages = math.ceil(ramp_s / stage_s)
    stage_t = np.concatenate([[0.0], warmup_s + stage_s * np.arange(n_stages)])
    stage_p = np.concatenate([[start_power_w], start_power_w + stage_step_w * np.arange(n_stages)])
    if recovery_s > 0:
        stage_t = np.append(stage_t, warmup_s + ramp_s)
        stage_p = np.append(stage_p, start_power_w * 0.5)
    loads = pd.DataFrame({"time_s": stage_t, "power_w": stage_p})

    def power_when(hr_bpm):
        t_hit = warmup_s + ramp_s * (hr_bpm - hr_start_bpm) / (hr_peak_bpm - hr_start_bpm)
        return float(stage_p[np.searchsorted(stage_t, t_hit, side="right") - 1])

    levels = (0.75, 0.5)
    hr_at = {lv: hr_075_bpm + (0.75 - lv) / slope for lv in levels}
    power_at = {lv: power_when(hr_at[lv]) for lv in levels if hr_at[lv] <= hr_peak_bpm}
    hr_at = {lv: v for lv, v in hr_at.items() if v <= hr_peak_bpm}
    return RampSimulation(rec, loads, hr_at, power_at,
                          (hr_075_bpm, slope, alpha_floor, alpha_ceiling))
