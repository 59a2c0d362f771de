"""Incremental exercise tests: rolling DFA alpha1, and the heart rate and load at its thresholds.

During an incremental test the short-term fractal correlation of the RR intervals (DFA alpha1,
Peng et al. 1995) falls with intensity. The heart rate at which alpha1 crosses 0.75 lies close
to the first ventilatory threshold (Rogers et al. 2021, Front Physiol 11:596567: 152 vs 154 bpm)
and where it crosses 0.5 close to the second (Rogers et al. 2021, J Funct Morphol Kinesiol 6:38;
from memory). `ramp_test` computes alpha1 in short sliding windows of the cleaned recording
(through `rrkit.analyze`, the one window table), marks each window's artifact share, fits alpha1
against heart rate (and against power or speed when a load table is given) over its descending
part and reports each crossing with a bootstrap 95% confidence interval and a verdict.

This is an estimate for training prescription, not a diagnostic test; exercise testing follows
local safety practice and qualified supervision.
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ._plain import to_plain
from ._validation import check_int, check_range
from ._version import __version__
from .clean import CleanResult, CleanSettings
from .errors import InputError
from .io import Loads
from .recording import Recording

__all__ = ["EXERCISE_CLEANING", "RAMP_CAUTION", "VERDICTS", "RampResult", "RampSettings",
           "ramp_test"]

#: Verdict of one threshold: found with a tight CI, found but uncertain, or not reached.
VERDICTS = ("ok", "uncertain", "not found")

RAMP_CAUTION = (
    "These thresholds are estimates from heart-rate dynamics for training prescription, not a "
    "diagnostic test; rrkit is not a medical device. Exercise testing follows local safety "
    "practice under qualified supervision, and decisions rest with qualified staff."
)

#: Cleaning for exercise recordings: Lipponen & Tarvainen 2019 with a stricter stand-out rule
#: (``drr_min_mrr=2``: a flagged beat must also lie two thresholds from the 11-beat median).
#: At high intensity the RR series becomes nearly uncorrelated and the published rules flag
#: about 1.3% of normal beats as ectopic (their short-long test fires on Gaussian noise); the
#: interpolation of those false flags smooths the series and lifts alpha1. On rrkit's simulated
#: ramps this setting cuts the false flags to under 0.1% and still finds every planted missed,
#: extra and premature beat (tests/test_exercise.py); the value 2 is rrkit's own choice.
EXERCISE_CLEANING = CleanSettings(method="drr", drr_min_mrr=2.0)



@dataclass(frozen=True, slots=True)
class RampSettings:
    """How an exercise test is analysed.

    Parameters
    ----------
    window : str
        Sliding windows: ``LENGTH/STEP`` or the window syntax ``slide:LENGTH/STEP`` (default
        ``"slide:2m/5s"``: 2-minute windows every
        5 s, the length used by Rogers et al. 2021; the 5-s step is rrkit's choice, fine enough
        to follow a ramp).
    levels : tuple of float
        The alpha1 levels whose crossings are reported (default 0.75 and 0.5, Rogers et al.
        2021).
    max_artifact_pct : float
        Windows with more than this share of artifact beats (percent of beats, after
        correction) are left out of the fit (default 5). Resting windows are only flagged
        above 5% of intervals corrected; here they are excluded outright, because alpha1 during
        exercise is biased by a few percent of artifacts even after correction (Rogers et al.
        2021, Sensors 21:821, as quoted secondhand: bias small below about 3%).
    caution_artifact_pct : float
        Windows above this share (default 3, the same source) stay in the fit but are marked;
        when most fit windows are above it the verdict is at best ``uncertain``.
    fit_alpha : tuple of float
        The descending part that is fitted (default 0.4 to 1.0): the valid windows up to the
        highest heart rate, after the last one whose smoothed alpha1 is still at or above the
        upper value and up to the last one still at or above the lower value.
    min_windows : int
        Fewer valid windows in the fit than this: ``not found`` (default 12, one minute of 5-s
        steps; rrkit's choice).
    max_ci_bpm : float
        A heart-rate CI wider than this (bpm) makes the verdict ``uncertain`` (default 10).
    max_ci_rel : float
        A load CI wider than this fraction of the estimate makes it ``uncertain`` (default 0.15).
    n_boot : int
        Bootstrap resamples for the CIs (default 1000).
    seed : int
        Seed of the bootstrap (default 0).
    """

    window: str = "slide:2m/5s"
    levels: tuple[float, ...] = (0.75, 0.5)
    max_artifact_pct: float = 5.0
    caution_artifact_pct: float = 3.0
    fit_alpha: tuple[float, float] = (0.4, 1.0)
    min_windows: int = 12
    max_ci_bpm: float = 10.0
    max_ci_rel: float = 0.15
    n_boot: int = 1000
    seed: int = 0

    def __post_init__(self) -> None:
        levels = tuple(float(v) for v in self.levels)
        if not levels:
            raise InputError("levels: give at least one alpha1 level")
        for v in levels:
            check_range("levels", v, low=0.0, high=2.0, low_inclusive=False)
        object.__setattr__(self, "levels", levels)
        check_range("max_artifact_pct", self.max_artifact_pct, low=0.0, high=100.0)
        check_range("caution_artifact_pct", self.caution_artifact_pct, low=0.0,
                    high=self.max_artifact_pct)
        lo, hi = (float(v) for v in self.fit_alpha)
        if not 0 <= lo < hi:
            raise InputError(f"fit_alpha must be (low, high) with 0 <= low < high; got "
                             f"{self.fit_alpha!r}")
        object.__setattr__(self, "fit_alpha", (lo, hi))
        check_int("min_windows", self.min_windows, low=3)
        check_range("max_ci_bpm", self.max_ci_bpm, low=0.0, low_inclusive=False)
        check_range("max_ci_rel", self.max_ci_rel, low=0.0, low_inclusive=False)
        check_int("n_boot", self.n_boot, low=100)



@dataclass(frozen=True, slots=True)
class RampResult:
    """Windows, fits and thresholds of one exercise test.

    Attributes
    ----------
    windows : pandas.DataFrame
        One row per window: ``window, start_s, end_s, mid_s, n_beats, mean_hr_bpm,
        dfa_alpha1, artifact_beats_pct, valid, alpha1_smooth, in_fit`` and the mean load
        (``power_w`` or ``speed_kmh``) when a load table was given.
    thresholds : pandas.DataFrame
        One row per level and axis: ``level, axis, unit, value, ci_low, ci_high, n_windows,
        verdict, reason``.
    fits : dict
        Per axis, the fitted line ``alpha1 = intercept + slope x`` and its range.
    settings : RampSettings
    caution : str
        `RAMP_CAUTION`.
    interval_name : str
        ``"RR"``, or ``"pulse-to-pulse"`` when the test was recorded from a pulse wave
        (`rrkit.recording.interval_name`).
    """

    windows: Any
    thresholds: Any
    fits: dict = field(default_factory=dict)
    settings: RampSettings = field(default_factory=RampSettings)
    caution: str = RAMP_CAUTION
    interval_name: str = "RR"

    def provenance(self) -> dict[str, Any]:
        """Settings and version, for the files the command writes."""
        return {"rrkit": __version__, "settings": to_plain(self.settings), "fits": self.fits,
                "intervals": self.interval_name}


def _artifact_beats_pct(cr: CleanResult | None, start_s, end_s, n_beats) -> np.ndarray:
    if cr is None:
        return np.zeros(len(start_s))
    w = cr.artifact_beats()
    t_end = cr.input.beat_times_s[1:]      # an interval belongs where it ends
    cum = np.concatenate([[0.0], np.cumsum(w)])
    i0 = np.searchsorted(t_end, np.asarray(start_s), side="right")
    i1 = np.searchsorted(t_end, np.asarray(end_s), side="right")
    with np.errstate(invalid="ignore", divide="ignore"):
        return 100.0 * (cum[i1] - cum[i0]) / np.maximum(np.asarray(n_beats, float), 1.0)


def _fit(x: np.ndarray, y: np.ndarray) -> tuple[float, float]:
    xm = x.mean()
    sxx = float(((x - xm) ** 2).sum())
    if sxx == 0:
        return math.nan, math.nan
    slope = float(((x - xm) * (y - y.mean())).sum()) / sxx
    return slope, float(y.mean() - slope * xm)


def _boot_fits(x: np.ndarray, y: np.ndarray, block: int, n_boot: int, seed: int):
    """Moving-block bootstrap of the line fit (Kuensch 1989, Ann Stat 17:1217): consecutive
    windows overlap, so blocks of one window length are resampled together."""
    n = x.size
    # a block of one window length, but at least five blocks so the resamples differ
    block = max(1, min(block, n // 5))
    n_blocks = math.ceil(n / block)
    rng = np.random.default_rng(seed)
    starts = rng.integers(0, n - block + 1, size=(n_boot, n_blocks))
    idx = (starts[:, :, None] + np.arange(block)).reshape(n_boot, -1)[:, :n]
    xb, yb = x[idx], y[idx]
    xm = xb.mean(axis=1, keepdims=True)
    ym = yb.mean(axis=1, keepdims=True)
    sxx = ((xb - xm) ** 2).sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = ((xb - xm) * (yb - ym)).sum(axis=1) / sxx
    return slope, ym[:, 0] - slope * xm[:, 0]


def _thresholds(x, y, y_smooth, axis, unit, s: RampSettings, block: int, rel: bool,
                noisy: float):
    rows = []
    fit = {"axis": axis, "unit": unit, "n_windows": int(x.size)}
    if x.size >= 3:
        slope, icpt = _fit(x, y)
        fit.update(slope=slope, intercept=icpt, x_min=float(x.min()), x_max=float(x.max()))
        b_slope, b_icpt = _boot_fits(x, y, block, s.n_boot, s.seed)
    else:
        slope = icpt = math.nan
    for level in s.levels:
        row = {"level": level, "axis": axis, "unit": unit, "value": math.nan,
               "ci_low": math.nan, "ci_high": math.nan, "n_windows": int(x.size),
               "verdict": "not found", "reason": ""}
        rows.append(row)
        if x.size < s.min_windows:
            row["reason"] = (f"{x.size} valid window(s) in the descending part; "
                             f"{s.min_windows} needed")
            continue
        if not slope < 0:
            row["reason"] = "alpha1 does not fall with " + axis.replace("_", " ")
            continue
        if not (y_smooth.min() <= level <= y_smooth.max()):
            side = "never falls to" if y_smooth.min() > level else "starts below"
            row["reason"] = f"alpha1 {side} {level:g} in the valid windows (no extrapolation)"
            continue
        value = (level - icpt) / slope
        if not (x.min() <= value <= x.max()):
            row["reason"] = (f"the fitted crossing {value:.1f} {unit} lies outside the range "
                             f"covered ({x.min():.1f} to {x.max():.1f} {unit})")
            continue
        with np.errstate(invalid="ignore", divide="ignore"):
            boot = (level - b_icpt) / b_slope
        good = np.isfinite(boot) & (b_slope < 0)
        # normal-approximation bootstrap interval, its SD taken robustly from the quartiles
        # (Efron & Tibshirani 1993, ch. 13): a ratio of fitted coefficients has a skewed
        # bootstrap distribution that leaves percentile intervals off-centre
        if good.sum() >= 0.9 * boot.size:
            q1, q3 = np.percentile(boot[good], [25.0, 75.0])
            half = 1.959964 * (q3 - q1) / 1.34898
            lo, hi = value - half, value + half
        else:
            lo = hi = math.nan
        row.update(value=float(value), ci_low=float(lo), ci_high=float(hi), verdict="ok")
        width = hi - lo
        limit = s.max_ci_rel * abs(value) if rel else s.max_ci_bpm
        if not np.isfinite(width):
            row.update(verdict="uncertain", reason="the bootstrap fit often did not fall")
        elif width > limit:
            row.update(verdict="uncertain",
                       reason=f"95% CI {width:.1f} {unit} wide (more than {limit:.1f} {unit})")
        elif noisy > 0.5:
            row.update(verdict="uncertain",
                       reason=f"{100 * noisy:.0f}% of the fitted windows carry more than "
                              f"{s.caution_artifact_pct:g}% artifact beats")
    return rows, fit


def ramp_test(
    recording,
    *,
    loads: Loads | None = None,
    clean: str | CleanSettings | None = "exercise",
    settings: RampSettings | None = None,
    window: str | None = None,
):
    """Rolling DFA alpha1 over an incremental test and the heart rate (and load) at its levels.

    Parameters
    ----------
    recording : Recording or CleanResult
        The RR intervals of the test (or an already cleaned result).
    loads : Loads, optional
        Power or speed against the recording's clock (`rrkit.io.read_loads`); adds the mean
        load to every window and fits alpha1 against it too.
    clean : {"exercise", "drr", "median", "mad", "none"}, CleanSettings or None
        Cleaning before the windows (default ``"exercise"``: `EXERCISE_CLEANING`, Lipponen &
        Tarvainen 2019 with a stricter stand-out rule). ``None`` or ``"none"`` analyses the
        intervals as they are (not advised: artifacts collapse alpha1).
    settings : RampSettings, optional
        Window, levels, artifact limit, fit range, bootstrap.
    window : str, optional
        Shortcut for ``settings.window``.

    Returns
    -------
    RampResult

    Notes
    -----
    Windows come from `rrkit.analyze` (the recording is cleaned once; alpha1 is DFA over 4-16
    beats, Peng et al. 1995). A window is *valid* when its alpha1 is finite and at most
    ``max_artifact_pct`` of its beats are artifacts (premature and extra beats count once
    for the two intervals they touch). The fit takes the valid windows up to the highest
    heart rate of the test (the recovery is left out) whose alpha1 lies in ``fit_alpha``, and
    fits ``alpha1 = a + b x`` by least squares (x = mean HR, or mean load). Each level's
    crossing is ``x = (level - a) / b``; its 95% CI comes from a moving-block bootstrap with
    blocks of one window length (overlapping windows are not independent; Kuensch 1989), as
    the estimate +/- 1.96 robust bootstrap SDs. A crossing is
    ``not found`` when alpha1 never reaches the level in the valid windows, when the line
    does not fall, or when too few windows remain: it is never extrapolated. It is
    ``uncertain`` when the CI is wider than ``max_ci_bpm`` (HR) or ``max_ci_rel`` of the
    estimate (load).

    References
    ----------
    Peng C-K, Havlin S, Stanley HE, Goldberger AL (1995). Chaos 5(1):82-87.
    doi:10.1063/1.166141
    Rogers B, Giles D, Draper N, Hoos O, Gronwald T (2021). A new detection method defining the
    aerobic threshold for endurance exercise and training prescription based on fractal
    correlation properties of heart rate variability. Front Physiol 11:596567.
    doi:10.3389/fphys.2020.596567

    Examples
    --------
    >>> from rrkit.simulate import simulate_ramp
    >>> sim = simulate_ramp(seed=1)
    >>> res = ramp_test(sim.recording, settings=RampSettings(n_boot=200))
    >>> res.thresholds[["level", "verdict"]].values.tolist()
    [[0.75, 'ok'], [0.5, 'ok']]
    """
    import pandas as pd

    from .analysis import analyze
    from .windows import Sliding, parse_window

    s = settings or RampSettings()
    if window is not None:
        s = dataclasses.replace(s, window=window)
    text = s.window.strip()
    spec = parse_window(f"slide:{text}" if text[:1].isdigit() else text)
    if not isinstance(spec, Sliding):
        raise InputError(f"window must be sliding windows (slide:LENGTH/STEP); got {s.window!r}",
                         hint="for example slide:2m/5s")
    if loads is not None and not isinstance(loads, Loads):
        raise InputError(f"loads must be a Loads table (rrkit.io.read_loads); got "
                         f"{type(loads).__name__}")
    if isinstance(recording, CleanResult):
        cr = recording
    elif isinstance(recording, Recording):
        from .clean import clean as clean_fn
        if clean is None or clean == "none":
            cr = None
        elif isinstance(clean, CleanSettings):
            cr = clean_fn(recording, settings=clean)
        elif clean == "exercise":
            cr = clean_fn(recording, settings=EXERCISE_CLEANING)
        else:
            cr = clean_fn(recording, method=clean)
    else:
        raise InputError(f"recording must be a Recording or CleanResult; got "
                         f"{type(recording).__name__}")
    table = analyze(cr if cr is not None else recording, windows=spec,
                    clean=None, domains=["time", "nonlinear"])
    if table.empty or "dfa_alpha1" not in table or table["n_beats"].isna().all():
        raise InputError("the recording is shorter than one analysis window "
                         f"({s.window}); an exercise test needs several minutes",
                         path=getattr(recording, "source", None))
    start = table["start_s"].to_numpy(float)
    end = table["end_s"].to_numpy(float)
    n_beats = table["n_beats"].to_numpy(float)
    out = pd.DataFrame({
        "window": table["window"].to_numpy(), "start_s": start, "end_s": end,
        "mid_s": (start + end) / 2.0, "n_beats": n_beats,
        "mean_hr_bpm": table["mean_hr_bpm"].to_numpy(float),
        "dfa_alpha1": table["dfa_alpha1"].to_numpy(float),
        "artifact_beats_pct": _artifact_beats_pct(cr, start, end, n_beats),
    })
    if loads is not None:
        out[loads.column] = loads.mean_between(start, end)
    valid = np.isfinite(out["dfa_alpha1"]) & np.isfinite(out["mean_hr_bpm"]) & (
        out["artifact_beats_pct"] <= s.max_artifact_pct)
    out["valid"] = valid.to_numpy()
    hr = out["mean_hr_bpm"].to_numpy()
    peak = int(np.nanargmax(np.where(valid, hr, np.nan))) if valid.any() else -1
    a = out["dfa_alpha1"].to_numpy()
    block = max(1, round(spec.length_s / (spec.step_s or spec.length_s)))
    # the descending part is chosen on smoothed alpha1 (a running median over one window
    # length), then every valid window in it is fitted: selecting windows on their own noisy
    # alpha1 would flatten the fitted line (selection on the outcome)
    ok_idx = np.flatnonzero(valid.to_numpy() & (np.arange(len(out)) <= peak))
    smooth = np.full(len(out), np.nan)
    if ok_idx.size:
        smooth[ok_idx] = (pd.Series(a[ok_idx]).rolling(block, center=True, min_periods=1)
                          .median().to_numpy())
    lo, hi = s.fit_alpha
    in_fit = np.zeros(len(out), bool)
    # the final descent: it ends at the last window still at or above `lo` and starts after
    # the last window before that at or above `hi` (an early dip below `hi` is not the descent)
    above_lo = ok_idx[smooth[ok_idx] >= lo]
    if above_lo.size:
        last = above_lo[-1]
        high = ok_idx[(ok_idx < last) & (smooth[ok_idx] >= hi)]
        first = high[-1] + 1 if high.size else ok_idx[0]
        in_fit[ok_idx[(ok_idx >= first) & (ok_idx <= last)]] = True
    out["alpha1_smooth"] = smooth
    out["in_fit"] = in_fit
    rows, fits = [], {}
    axes = [("mean_hr_bpm", "bpm", False)]
    if loads is not None:
        axes.append((loads.column, loads.unit, True))
    art = out["artifact_beats_pct"].to_numpy()[in_fit]
    noisy = float((art > s.caution_artifact_pct).mean()) if art.size else 0.0
    for col, unit, rel in axes:
        x = out[col].to_numpy()[in_fit]
        r, f = _thresholds(x, a[in_fit], smooth[in_fit],
                           "hr_bpm" if col == "mean_hr_bpm" else col, unit, s, block, rel, noisy)
        rows += r
        fits[f["axis"]] = f
    return RampResult(out, pd.DataFrame(rows), fits, s, interval_name=table.attrs["interval_name"])
