"""Power spectra of NN-interval series and the frequency-domain metrics.

All functions are pure functions of arrays. A series is given as ``runs``: a list of
``(times_s, nn_ms)`` pairs, one per run of consecutive NN intervals (a recording split at its
gaps); ``times_s`` is the time of the beat that ends each interval. Every run long enough is
analysed on its own and the spectra are averaged on one frequency grid, weighted by the run's
length (Welch: by its number of segments), so nothing is interpolated across a gap.

Three estimators
----------------
``welch``
    Cubic-spline resampling at ``resample_hz`` (4 Hz), detrending (smoothness priors, Tarvainen
    et al. 2002, or linear), Welch's averaged periodogram with a Hann window, segments of
    ``welch_segment_s`` (150 s) overlapping by at least ``welch_overlap`` (50 %) and spread
    evenly from the first sample to the last (`segment_starts`), one-sided density.
``lomb``
    Lomb-Scargle periodogram of the mean-removed intervals at their own beat times (no
    resampling, no detrending beyond the mean), scaled to a one-sided density
    ``PSD(f) = 2 T P(f) / N`` that integrates to the variance (T the run duration, N its
    intervals). `scipy.signal.lombscargle` takes angular frequencies: rrkit passes
    ``2 pi f`` and keeps Hz everywhere else.
``ar``
    Burg autoregressive model of order ``ar_order`` (16) fitted to the resampled, detrended
    series (`statsmodels.regression.linear_model.burg`), one-sided density
    ``PSD(f) = 2 sigma2 / fs / |1 - sum_k rho_k exp(-i 2 pi f k / fs)|**2``. Burg's residual
    variance ``sigma2`` is biased low for short records dominated by a few oscillations (the
    model then integrates to 10-15 % less than the series variance), so by default
    (``ar_calibrate=True``, rrkit's choice) the model spectrum is scaled to integrate, from 0 to
    ``fs / 2``, to the variance of the series it was fitted to (Parseval).

Band powers are rectangle sums ``sum(PSD[lo <= f < hi]) * df`` over the estimator's uniform
grid, in ms^2.

References
----------
Task Force of the ESC and NASPE (1996). Circulation 93(5):1043-1065.
doi:10.1161/01.CIR.93.5.1043
Tarvainen MP, Ranta-aho PO, Karjalainen PA (2002). An advanced detrending method with
application to HRV analysis. IEEE Trans Biomed Eng 49(2):172-175. doi:10.1109/10.979357
Welch PD (1967). IEEE Trans Audio Electroacoust 15(2):70-73. doi:10.1109/TAU.1967.1161901
Lomb NR (1976). Astrophys Space Sci 39:447-462. doi:10.1007/BF00648343
Scargle JD (1982). Astrophys J 263:835-853. doi:10.1086/160554
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np
from scipy.linalg import cholesky_banded
from scipy.linalg.lapack import dpbtrs
from scipy.signal import detrend as _linear_detrend
from scipy.signal import lombscargle

from ._settings import Bands, MetricsSettings
from ._spline import spline_on_grid

__all__ = [
    "FREQUENCY_KEYS",
    "PsdEstimate",
    "band_power",
    "estimate_psd",
    "frequency_domain",
    "resample",
    "smoothness_priors_detrend",
]

FREQUENCY_KEYS = (
    "vlf_ms2", "lf_ms2", "hf_ms2", "total_power_ms2", "lf_nu", "hf_nu", "lf_hf", "ln_lf", "ln_hf",
    "lf_peak_hz", "hf_peak_hz", "resp_hz",
)

_NAN = float("nan")


@dataclass(frozen=True, slots=True)
class PsdEstimate:
    """A one-sided power spectral density on a uniform grid (internal result)."""

    freqs_hz: np.ndarray
    psd_ms2_hz: np.ndarray
    df_hz: float
    method: str
    longest_run_s: float
    runs_used: int
    runs_skipped: int
    #: values already computed from this spectrum (the batched path of `rrkit.analyze`):
    #: ``("power", band)``, ``("peak", band)``, ``("low_peak", start, stop, halfwidth)``
    known: Any = None
    #: `edge_allowance_s` of the longest run (s): how far it may fall short of a band minimum
    edge_allowance_s: float = 0.0


def edge_allowance_s(rr_ms: np.ndarray) -> float:
    """How much shorter than its window the beats of a run may span, in s.

    A window of length ``L`` holds the beats inside it: its first beat comes up to one interval
    after the window's start and its last up to one interval before its end, so the span of the
    beats falls short of ``L`` by up to two intervals. A run counts as lasting a band minimum
    (60 s for HF, 120 s for LF) when its span plus twice its median interval reaches it, so that
    a window of exactly the Task Force length (about 1 and 2 minutes) gets the band.
    """
    return 2.0 * float(np.median(rr_ms)) / 1000.0 if rr_ms.size else 0.0


def run_length_s(times_s: np.ndarray, rr_ms: np.ndarray) -> float:
    """Span of a run's beats in s: from the beat that starts its first interval to its last."""
    return float(times_s[-1] - times_s[0]) + float(rr_ms[0]) / 1000.0


def resample(times_s: np.ndarray, nn_ms: np.ndarray, fs_hz: float) -> np.ndarray:
    """Cubic-spline interpolation of ``nn_ms`` (given at ``times_s``) on a ``fs_hz`` grid.

    The grid starts at the first time and has ``floor((t_last - t_first) * fs_hz) + 1`` samples.
    The interpolant is ``scipy.interpolate.CubicSpline(..., bc_type="not-a-knot")``, computed
    without its per-call overhead (`rrkit.metrics._spline`).
    """
    n = math.floor((times_s[-1] - times_s[0]) * fs_hz + 1e-9) + 1
    grid = times_s[0] + np.arange(n) / fs_hz
    return spline_on_grid(times_s, nn_ms, grid)


@lru_cache(maxsize=64)
def _smoothness_factor(n: int, lam: float) -> np.ndarray:
    """Banded Cholesky factor of ``I + lam**2 D2' D2`` (upper form), cached by size."""
    lam2 = lam * lam
    ab = np.zeros((3, n))
    main = np.ones(n)
    main[:-2] += lam2
    main[1:-1] += 4.0 * lam2
    main[2:] += lam2
    off1 = np.zeros(n - 1)
    off1[:-1] -= 2.0 * lam2
    off1[1:] -= 2.0 * lam2
    ab[2] = main
    ab[1, 1:] = off1
    ab[0, 2:] = lam2
    c = cholesky_banded(ab, lower=False, check_finite=False)
    c.flags.writeable = False
    return c


def smoothness_priors_detrend(x: np.ndarray, lam: float) -> np.ndarray:
    """Remove the slow trend ``(I + lam**2 D2' D2)**-1 x`` (Tarvainen et al. 2002).

    ``D2`` is the ``(N - 2, N)`` second-difference matrix; the symmetric pentadiagonal system is
    solved with a banded Cholesky factorisation (`scipy.linalg.cholesky_banded`, cached per
    length, then LAPACK ``dpbtrs``), O(N).

    Examples
    --------
    >>> import numpy as np
    >>> t = np.arange(1200) / 4.0
    >>> y = smoothness_priors_detrend(0.5 * t + np.sin(2 * np.pi * 0.25 * t), 500.0)
    >>> bool(np.abs(y[100:-100] - np.sin(2 * np.pi * 0.25 * t[100:-100])).max() < 0.05)
    True
    """
    n = x.size
    if n < 3:
        return x - x.mean()
    trend, info = dpbtrs(_smoothness_factor(n, float(lam)), x, lower=0)
    if info != 0:  # pragma: no cover - the factor of an SPD matrix always solves
        raise RuntimeError(f"banded Cholesky solve failed (LAPACK info {info})")
    return x - trend


@lru_cache(maxsize=256)
def segment_starts(n: int, nperseg: int, noverlap: int) -> np.ndarray:
    """Start indices of the Welch segments of an ``n``-sample series.

    As many segments as a step of ``nperseg - noverlap`` needs to reach the end, spread evenly
    from the first sample to the last (so no sample is left out and the overlap is at least
    ``noverlap``). A 5-minute series at 4 Hz with 150-s segments gets three, at 0, ~75 and
    ~150 s.
    """
    step = nperseg - noverlap
    nseg = 1 if n <= nperseg else 1 + math.ceil((n - nperseg) / step)
    starts = np.rint(np.linspace(0, n - nperseg, nseg)).astype(np.int64)
    starts.flags.writeable = False
    return starts


def _onesided(p: np.ndarray, nfft: int) -> np.ndarray:
    if nfft % 2:
        p[..., 1:] *= 2.0
    else:
        p[..., 1:-1] *= 2.0
    return p


def _welch_density(x: np.ndarray, fs: float, nperseg: int, noverlap: int, nfft: int):
    """One-sided Welch density of ``x``: Hann window, segment means removed, segments from
    `segment_starts`; the scaling of `scipy.signal.welch` (``scaling="density"``)."""
    starts = segment_starts(x.size, nperseg, noverlap)
    segs = np.lib.stride_tricks.sliding_window_view(x, nperseg)[starts]
    win = _hann(nperseg)
    segs = segs - segs.mean(axis=1, keepdims=True)
    spec = np.fft.rfft(segs * win, n=nfft, axis=1)
    p = (spec.real ** 2 + spec.imag ** 2).mean(axis=0) / (fs * float(np.dot(win, win)))
    _onesided(p, nfft)
    f = np.arange(p.size) * (fs / nfft)
    return f, p, starts.size


@lru_cache(maxsize=16)
def _hann(n: int) -> np.ndarray:
    from scipy.signal.windows import hann

    w = hann(n, sym=False)
    w.flags.writeable = False
    return w


def _prepared(times_s, nn_ms, s: MetricsSettings) -> np.ndarray:
    x = resample(times_s, nn_ms, s.resample_hz)
    if s.detrend == "smoothness_priors":
        return smoothness_priors_detrend(x, s.smoothness_lambda)
    return _linear_detrend(x, type="linear")


def _welch(runs, s: MetricsSettings):
    fs = s.resample_hz
    nfft = max(round(s.welch_segment_s * fs), 8)
    acc = None
    weight = 0.0
    for t, rr in runs:
        x = _prepared(t, rr, s)
        nper = min(nfft, x.size)
        nover = int(nper * s.welch_overlap)
        f, p, nseg = _welch_density(x, fs, nper, nover, nfft)
        acc = p * nseg if acc is None else acc + p * nseg
        weight += nseg
    return f, acc / weight, fs / nfft


def _lomb(runs, s: MetricsSettings):
    longest = max(t[-1] - t[0] for t, _ in runs)
    mean_rr_s = np.mean(np.concatenate([rr for _, rr in runs])) / 1000.0
    df = 1.0 / (s.lomb_oversample * longest)
    fmax = max(s.bands.hf[1], 0.5 / mean_rr_s)
    f = np.arange(1, int(fmax / df) + 1) * df
    acc = np.zeros(f.size)
    weight = 0.0
    for t, rr in runs:
        x = rr - rr.mean()
        dur = t[-1] - t[0]
        p = lombscargle(t, x, 2.0 * np.pi * f, normalize=False)  # angular frequency (rad/s)
        acc += (2.0 * dur * p / x.size) * dur
        weight += dur
    return f, acc / weight, df


def _ar(runs, s: MetricsSettings):
    from statsmodels.regression.linear_model import burg

    fs = s.resample_hz
    nfft = 2 * s.ar_n_freqs
    df = fs / nfft
    f = np.arange(s.ar_n_freqs) * df
    acc = np.zeros(f.size)
    weight = 0.0
    for t, rr in runs:
        x = _prepared(t, rr, s)
        rho, sigma2 = burg(x - x.mean(), order=s.ar_order, demean=False)
        # 1 - sum_k rho_k exp(-i 2 pi f k / fs) on the grid, as the FFT of [1, -rho_1, ...]
        denom = np.fft.rfft(np.concatenate(([1.0], -np.asarray(rho))), n=nfft)[: s.ar_n_freqs]
        p = 2.0 * sigma2 / fs / np.abs(denom) ** 2
        if s.ar_calibrate:
            p *= float(np.dot(x - x.mean(), x - x.mean())) / x.size / float(p.sum() * df)
        dur = t[-1] - t[0]
        acc += p * dur
        weight += dur
    return f, acc / weight, df


_ESTIMATORS = {"welch": _welch, "lomb": _lomb, "ar": _ar}


def estimate_psd(runs: list[tuple[np.ndarray, np.ndarray]], s: MetricsSettings, *,
                 method: str | None = None) -> PsdEstimate | None:
    """PSD (ms^2/Hz) of the runs lasting at least ``s.min_hf_s`` (within `edge_allowance_s`);
    None when none does."""
    method = method or s.psd
    usable = [(t, rr) for t, rr in runs if rr.size >= 4
              and run_length_s(t, rr) + edge_allowance_s(rr) >= s.min_hf_s]
    if not usable:
        return None
    f, p, df = _ESTIMATORS[method](usable, s)
    longest_t, longest_rr = max(usable, key=lambda run: run_length_s(*run))
    f.flags.writeable = False
    p.flags.writeable = False
    return PsdEstimate(f, p, float(df), method, run_length_s(longest_t, longest_rr), len(usable),
                       len(runs) - len(usable), edge_allowance_s=edge_allowance_s(longest_rr))


def _band(f: np.ndarray, band: tuple[float, float]) -> slice:
    """Indices of the increasing grid ``f`` with ``lo <= f < hi``."""
    if f.size > 1:  # uniform grids: cached by (size, first, step)
        return _uniform_band(f.size, float(f[0]), float(f[1] - f[0]), float(band[0]),
                             float(band[1]), f)
    return slice(int(f.searchsorted(band[0], "left")), int(f.searchsorted(band[1], "left")))


_BAND_CACHE: dict[tuple[int, float, float, float, float], slice] = {}


def _uniform_band(n: int, f0: float, step: float, lo: float, hi: float, f: np.ndarray) -> slice:
    key = (n, f0, step, lo, hi)
    sl = _BAND_CACHE.get(key)
    if sl is None:
        sl = slice(int(f.searchsorted(lo, "left")), int(f.searchsorted(hi, "left")))
        if len(_BAND_CACHE) > 4096:
            _BAND_CACHE.clear()
        _BAND_CACHE[key] = sl
    return sl


def band_power(est: PsdEstimate, band: tuple[float, float]) -> float:
    """Power in ``lo <= f < hi`` (ms^2), rectangle rule on the estimator's grid."""
    if est.known is not None:
        v = est.known.get(("power", band))
        if v is not None:
            return v
    return float(est.psd_ms2_hz[_band(est.freqs_hz, band)].sum() * est.df_hz)


def _peak(est: PsdEstimate, band: tuple[float, float]) -> float:
    if est.known is not None:
        v = est.known.get(("peak", band))
        if v is not None:
            return v
    sel = _band(est.freqs_hz, band)
    if sel.stop <= sel.start:
        return _NAN
    return float(est.freqs_hz[sel.start + int(est.psd_ms2_hz[sel].argmax())])


def frequency_domain(runs: list[tuple[np.ndarray, np.ndarray]], s: MetricsSettings, *,
                     breathing_hz: float | None = None, estimate: PsdEstimate | None = None,
                     ) -> tuple[dict[str, float], list[str], PsdEstimate | None]:
    """Frequency-domain metrics of NN-interval runs.

    Parameters
    ----------
    runs : list of (times_s, nn_ms)
        Runs of consecutive NN intervals: end-beat times in s and intervals in ms.
    s : MetricsSettings
        PSD method, bands, resampling, detrending, minimum lengths, breathing-peak rule.
    breathing_hz : float, optional
        Breathing rate stated for the window (protocol, events table), in Hz.
    estimate : PsdEstimate, optional
        The spectrum of these runs, already computed (the batched path of `rrkit.analyze`).

    Returns
    -------
    values : dict
        The keys of `FREQUENCY_KEYS` (NaN where the run is too short).
    notes : list of str
        Why a value is NaN, and the slow-breathing note.
    estimate : PsdEstimate or None
        The spectrum the values come from.

    Notes
    -----
    ``total_power_ms2`` is the power from the VLF lower edge to the HF upper edge;
    ``lf_nu = 100 LF / (LF + HF)`` and ``hf_nu`` likewise (the Task Force form
    ``100 LF / (TP - VLF)`` with TP integrated to the HF upper edge and no ULF);
    ``ln_lf``, ``ln_hf`` are natural logs of the powers in ms^2. The band minimums apply to the
    longest run: HF needs ``min_hf_s``, LF ``min_lf_s``, VLF ``min_vlf_s``.

    ``resp_hz`` estimates the breathing rate: the HF peak frequency (respiratory sinus
    arrhythmia), or the LF-band peak nearest a given breathing rate below the HF band. When one
    narrow peak (``+/- resp_peak_halfwidth_hz``) below the HF band holds at least
    ``resp_peak_share`` of the total power and no breathing rate is given, the spectrum cannot
    tell slow breathing from a strong ~0.1 Hz oscillation: a note says so and ``resp_hz`` is
    NaN. Rates outside `PLAUSIBLE_BREATHING_HZ` are never reported (see `_breathing`).
    """
    out = dict.fromkeys(FREQUENCY_KEYS, _NAN)
    notes: list[str] = []
    b: Bands = s.bands
    est = estimate_psd(runs, s) if estimate is None else estimate
    if est is None:
        longest = max(((t[-1] - t[0]) + rr[0] / 1000.0 for t, rr in runs if rr.size), default=0.0)
        notes.append(
            f"frequency domain: NaN, the longest NN run lasts {longest:.1f} s; HF needs at least "
            f"{s.min_hf_s:g} s, LF {s.min_lf_s:g} s (Task Force 1996)")
        return out, notes, None
    if est.runs_skipped:
        notes.append(f"frequency domain: {est.runs_skipped} NN run(s) shorter than "
                     f"{s.min_hf_s:g} s between gaps left out of the spectrum")
    length = est.longest_run_s
    hf = band_power(est, b.hf)
    out["hf_ms2"] = hf
    out["ln_hf"] = math.log(hf) if hf > 0 else _NAN
    out["hf_peak_hz"] = _peak(est, b.hf)
    reach = length + est.edge_allowance_s  # see `edge_allowance_s`
    has_lf = reach >= s.min_lf_s
    if has_lf:
        lf = band_power(est, b.lf)
        out["lf_ms2"] = lf
        out["ln_lf"] = math.log(lf) if lf > 0 else _NAN
        out["lf_peak_hz"] = _peak(est, b.lf)
        out["total_power_ms2"] = band_power(est, (b.vlf[0], b.hf[1]))
        if lf + hf > 0:
            out["lf_nu"] = 100.0 * lf / (lf + hf)
            out["hf_nu"] = 100.0 * hf / (lf + hf)
        if hf > 0:
            out["lf_hf"] = lf / hf
    else:
        notes.append(f"lf_ms2, ln_lf, lf_peak_hz, total_power_ms2, lf_nu, hf_nu, lf_hf: NaN, the "
                     f"longest NN run lasts {length:.1f} s; LF needs at least {s.min_lf_s:g} s "
                     f"(Task Force 1996)")
    if reach >= s.min_vlf_s:
        out["vlf_ms2"] = band_power(est, b.vlf)
    else:
        notes.append(f"vlf_ms2: NaN, rrkit assesses VLF from NN runs of {s.min_vlf_s:g} s or "
                     f"more (the Task Force 1996 advises against VLF from recordings of 5 min "
                     f"or less)")
    if hf == 0:
        notes.append("ln_hf, lf_hf: NaN, no power in the HF band")
    out["resp_hz"] = out["hf_peak_hz"]
    if has_lf:
        _breathing(est, s, out, notes, breathing_hz)
    return out, notes, est


#: Breathing rates rrkit will report or use, Hz: 3 to 42 breaths per minute (rrkit's choice: it
#: covers paced slow breathing, about 4-7 per minute, resting rates of 12-20 and light exercise;
#: a spectral peak outside it is not called a breathing rate).
PLAUSIBLE_BREATHING_HZ = (0.05, 0.70)


def _per_min(hz: float) -> str:
    return f"{hz * 60:.1f}/min"


def _breathing(est: PsdEstimate, s: MetricsSettings, out: dict, notes: list[str],
               breathing_hz: float | None) -> None:
    """The breathing note and ``resp_hz``.

    The spectrum alone cannot tell slow breathing from a strong ~0.1 Hz oscillation of heart
    rate (the baroreflex rhythm that standing strengthens): both put one narrow peak below the
    HF band. So the note claims breathing only for a breathing rate that is given (protocol,
    events table, or measured, such as an ECG-derived rate); a dominant low peak without one is
    described as what it is, and ``resp_hz`` is then NaN rather than a guess. A rate outside
    `PLAUSIBLE_BREATHING_HZ` is never reported.
    """
    b = s.bands
    f, p = est.freqs_hz, est.psd_ms2_hz
    total = band_power(est, (b.vlf[0], b.hf[1]))
    low = _band(f, (b.vlf[0], b.hf[0]))
    dominant = None
    if low.stop > low.start and total > 0:
        hw = s.resp_peak_halfwidth_hz
        known = None if est.known is None else est.known.get(("low_peak", low.start, low.stop, hw))
        if known is None:
            fpk = float(f[low.start + int(p[low].argmax())])
            near = slice(int(f.searchsorted(fpk - hw, "left")),
                         int(f.searchsorted(fpk + hw, "right")))
            near_power = float(p[near].sum() * est.df_hz)
        else:
            fpk, near_power = known
        share = near_power / total
        if share >= s.resp_peak_share:
            dominant = (fpk, share)
    lo_ok, hi_ok = PLAUSIBLE_BREATHING_HZ
    if breathing_hz is not None and not lo_ok <= breathing_hz <= hi_ok:
        notes.append(f"the given breathing rate {breathing_hz:.3f} Hz ({_per_min(breathing_hz)}) "
                     f"is outside the plausible {_per_min(lo_ok)} to {_per_min(hi_ok)} and was "
                     "not used")
        breathing_hz = None
    if breathing_hz is not None:
        if breathing_hz < b.hf[0]:
            pk = _peak(est, (max(b.vlf[0], breathing_hz - 0.03),
                             min(b.hf[0], breathing_hz + 0.03)))
            out["resp_hz"] = pk if np.isfinite(pk) else breathing_hz
            notes.append(
                f"breathing at {breathing_hz:.3f} Hz ({_per_min(breathing_hz)}, given) lies below "
                f"the HF band ({b.hf[0]:g} Hz): respiratory power falls into LF, so LF, HF and "
                f"LF/HF do not carry their usual meaning")
        elif dominant is not None and abs(dominant[0] - breathing_hz) > 0.03:
            notes.append(
                f"a dominant narrow peak at {dominant[0]:.3f} Hz below the HF band holds "
                f"{100 * dominant[1]:.0f}% of the total power while breathing is at "
                f"{breathing_hz:.3f} Hz ({_per_min(breathing_hz)}, given): a strong oscillation "
                f"of heart rate (such as the baroreflex rhythm), not breathing")
    elif dominant is not None:
        fpk, share = dominant
        out["resp_hz"] = _NAN
        notes.append(
            f"a dominant narrow peak at {fpk:.3f} Hz ({fpk * 60:.1f} cycles/min) below the HF "
            f"band holds {100 * share:.0f}% of the total power: slow breathing, or a strong "
            f"~0.1 Hz oscillation of heart rate (the baroreflex rhythm, strengthened by "
            f"standing); the spectrum alone cannot tell which. If it is breathing, LF, HF and "
            f"LF/HF do not carry their usual meaning. resp_hz: NaN; give the breathing rate "
            f"(events table breathing_hz or breaths_per_min) to decide")
    r = out.get("resp_hz", _NAN)
    if np.isfinite(r) and not lo_ok <= r <= hi_ok:
        notes.append(f"resp_hz: NaN, the peak at {r:.3f} Hz ({_per_min(r)}) is outside the "
                     f"plausible breathing rates ({_per_min(lo_ok)} to {_per_min(hi_ok)})")
        out["resp_hz"] = _NAN
