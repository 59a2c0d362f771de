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

import numpy as np

from .._breathing import PLAUSIBLE_BREATHING_HZ
from .._spline import spline_many, spline_on_grid
from ._ragged import Ragged
from ._settings import MetricsSettings

__all__ = [
    "FREQUENCY_KEYS",
    "PsdEstimate",
    "band_power",
    "estimate_psd",
    "band_table",
    "frequency_domain",
    "frequency_many",
    "frequency_values_many",
    "psd_many",
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
    return float(_allowance_s(np.median(rr_ms))) if rr_ms.size else 0.0


def _allowance_s(median_rr_ms):
    """`edge_allowance_s` from the median interval(s) in ms."""
    return 2.0 * median_rr_ms / 1000.0


def resample(times_s: np.ndarray, nn_ms: np.ndarray, fs_hz: float) -> np.ndarray:
    """Cubic-spline interpolation of ``nn_ms`` (given at ``times_s``) on a ``fs_hz`` grid.

    The grid starts at the first time and has ``floor((t_last - t_first) * fs_hz) + 1`` samples.
    The interpolant is ``scipy.interpolate.CubicSpline(..., bc_type="not-a-knot")``, computed
    without its per-call overhead (`rrkit._spline`).
    """
    return spline_on_grid(times_s, nn_ms, _grid(times_s, fs_hz))


def _grid(times_s: np.ndarray, fs_hz: float) -> np.ndarray:
    n = math.floor((times_s[-1] - times_s[0]) * fs_hz + 1e-9) + 1
    return times_s[0] + np.arange(n) / fs_hz


@lru_cache(maxsize=64)
def _smoothness_factor(n: int, lam: float) -> np.ndarray:
    """Banded Cholesky factor of ``I + lam**2 D2' D2`` (upper form), cached by size."""
    from scipy.linalg import cholesky_banded

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


def _smoothness_rows(rows: np.ndarray, lam: float) -> np.ndarray:
    """`smoothness_priors_detrend` of every row of ``rows`` (equal lengths), one LAPACK solve."""
    from scipy.linalg.lapack import dpbtrs

    n = rows.shape[1]
    if n < 3:
        return rows - rows.mean(axis=1, keepdims=True)
    # the transpose of C-ordered rows is the Fortran-ordered (n, k) right-hand side LAPACK wants
    trend, info = dpbtrs(_smoothness_factor(n, float(lam)), rows.T, lower=0)
    if info != 0:  # pragma: no cover - the factor of an SPD matrix always solves
        raise RuntimeError(f"banded Cholesky solve failed (LAPACK info {info})")
    return rows - trend.T


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
    return _smoothness_rows(np.asarray(x, dtype=np.float64)[None, :], lam)[0]


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


@lru_cache(maxsize=16)
def _hann(n: int) -> np.ndarray:
    """Periodic Hann window, as ``scipy.signal.windows.hann(n, sym=False)`` computes it (the
    cosine sum over ``linspace(-pi, pi, n + 1)``, last point dropped) without importing
    `scipy.signal`; the test suite checks the two are equal."""
    if n == 1:
        w = np.ones(1)
    else:
        fac = np.linspace(-np.pi, np.pi, n + 1)
        w = np.zeros(n + 1)
        w += 0.5 * np.cos(0.0 * fac)
        w += 0.5 * np.cos(fac)
        w = w[:-1].copy()
    w.flags.writeable = False
    return w


def welch_segments(series: list[np.ndarray], fs: float, nperseg: list[int], noverlap: list[int],
                   nfft: int) -> tuple[np.ndarray, np.ndarray]:
    """One-sided Welch density of each series (rows): Hann window, segment means removed,
    segments from `segment_starts`, zero-padded to ``nfft``; the scaling of
    `scipy.signal.welch` (``scaling="density"``). Every segment of every series with the same
    segment length goes through one FFT. Returns the densities and the segments per series."""
    out = np.empty((len(series), nfft // 2 + 1))
    nseg = np.zeros(len(series), np.int64)
    groups: dict[tuple[int, int], list[int]] = {}
    for i, (p, o) in enumerate(zip(nperseg, noverlap, strict=True)):
        groups.setdefault((p, o), []).append(i)
    for (nper, nover), members in groups.items():
        win = _hann(nper)
        sizes = np.array([series[i].size for i in members])
        first = np.concatenate(([0], np.cumsum(sizes)[:-1]))
        starts = [segment_starts(int(n), nper, nover) for n in sizes]
        counts = np.array([st.size for st in starts])
        seg0 = np.concatenate([f0 + st for f0, st in zip(first.tolist(), starts, strict=True)])
        allseg = np.concatenate([series[i] for i in members])[seg0[:, None] +
                                                             np.arange(nper)[None, :]]
        allseg -= allseg.mean(axis=1, keepdims=True)
        allseg *= win
        spec = np.fft.rfft(allseg, n=nfft, axis=1)
        power = spec.real ** 2 + spec.imag ** 2
        bounds = np.concatenate(([0], np.cumsum(counts)[:-1]))
        psd = np.add.reduceat(power, bounds, axis=0) / counts[:, None].astype(float)
        psd /= fs * float(np.dot(win, win))
        _onesided(psd, nfft)
        out[members] = psd
        nseg[members] = counts
    return out, nseg


def _detrended(series: list[np.ndarray], s: MetricsSettings) -> list[np.ndarray]:
    """Each resampled series detrended (smoothness priors: one solve per series length)."""
    out: list[np.ndarray] = [np.zeros(0)] * len(series)
    by_len: dict[int, list[int]] = {}
    for i, x in enumerate(series):
        by_len.setdefault(x.size, []).append(i)
    for _, members in by_len.items():
        rows = np.stack([series[i] for i in members])
        if s.detrend == "smoothness_priors":
            rows = _smoothness_rows(rows, s.smoothness_lambda)
        else:
            from scipy.signal import detrend

            rows = detrend(rows, axis=1, type="linear")
        for r, i in enumerate(members):
            out[i] = rows[r]
    return out


def _run_series(rg: Ragged, runs: np.ndarray, s: MetricsSettings) -> list[np.ndarray]:
    """Resampled, detrended series of the runs ``runs``."""
    t, y, off = rg.times_s, rg.rr_ms, rg.run_offsets
    fs = s.resample_hz
    xs = [t[off[k]:off[k + 1]] for k in runs.tolist()]
    ys = [y[off[k]:off[k + 1]] for k in runs.tolist()]
    grids = [_grid(v, fs) for v in xs]  # the grids of `resample`, every series in one solve
    return _detrended(spline_many(xs, ys, grids), s)


def _welch_many(rg: Ragged, runs: np.ndarray, s: MetricsSettings):
    fs = s.resample_hz
    nfft = max(round(s.welch_segment_s * fs), 8)
    series = _run_series(rg, runs, s)
    nper = [min(nfft, x.size) for x in series]
    nover = [int(p * s.welch_overlap) for p in nper]
    p, nseg = welch_segments(series, fs, nper, nover, nfft)
    f = np.arange(nfft // 2 + 1) * (fs / nfft)
    return f, p, nseg.astype(float), fs / nfft


def _lomb(runs, s: MetricsSettings):
    from scipy.signal import lombscargle

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


def _ar(runs, s: MetricsSettings, series: list[np.ndarray]):
    from statsmodels.regression.linear_model import burg

    fs = s.resample_hz
    nfft = 2 * s.ar_n_freqs
    df = fs / nfft
    f = np.arange(s.ar_n_freqs) * df
    acc = np.zeros(f.size)
    weight = 0.0
    for (t, _), x in zip(runs, series, strict=True):
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


def run_spans(rg: Ragged) -> tuple[np.ndarray, np.ndarray]:
    """Span (s) and `edge_allowance_s` of every run of the batch. The span of a run's beats
    runs from the beat that starts its first interval to its last beat."""
    first = rg.run_offsets[:-1]
    last = rg.run_offsets[1:] - 1
    length = rg.times_s[last] - rg.times_s[first] + rg.rr_ms[first] / 1000.0
    return length, _allowance_s(rg.run_median)


def psd_many(rg: Ragged, s: MetricsSettings, *, method: str | None = None
             ) -> list[PsdEstimate | None]:
    """PSD (ms^2/Hz) of every window from its runs lasting at least ``s.min_hf_s`` (within
    `edge_allowance_s`); None for a window without such a run.

    Welch: every usable run of every window resampled and detrended (one banded solve per
    series length), every segment of every run through one FFT per segment length, then each
    window's runs averaged weighted by their segments. Lomb-Scargle and AR: run by run.
    """
    method = method or s.psd
    nw = rg.n_windows
    out: list[PsdEstimate | None] = [None] * nw
    if rg.n_runs == 0:
        return out
    length, allow = run_spans(rg)
    usable = (rg.run_sizes >= 4) & (length + allow >= s.min_hf_s)
    runs = np.flatnonzero(usable)
    if runs.size == 0:
        return out
    rw = rg.run_window[runs]
    used = np.bincount(rw, minlength=nw)
    total = np.diff(rg.window_runs)
    # longest usable run per window (the first of equals)
    order = np.lexsort((runs, -length[runs], rw))
    head = np.ones(order.size, bool)
    head[1:] = rw[order][1:] != rw[order][:-1]
    longest = dict(zip(rw[order][head].tolist(), runs[order][head].tolist(), strict=True))
    t, y, off = rg.times_s, rg.rr_ms, rg.run_offsets
    if method == "welch":
        f, p, nseg, df = _welch_many(rg, runs, s)
        f.flags.writeable = False
        starts = np.concatenate(([0], np.cumsum(used)))
        for w in np.flatnonzero(used).tolist():
            a, b = starts[w], starts[w + 1]
            psd = p[a] if b - a == 1 else (p[a:b] * nseg[a:b, None]).sum(axis=0) / nseg[a:b].sum()
            psd.flags.writeable = False
            k = longest[w]
            out[w] = PsdEstimate(f, psd, float(df), "welch", float(length[k]), int(used[w]),
                                 int(total[w] - used[w]), edge_allowance_s=float(allow[k]))
        return out
    for w in np.flatnonzero(used).tolist():
        mine = runs[rw == w]
        pairs = [(t[off[k]:off[k + 1]], y[off[k]:off[k + 1]]) for k in mine.tolist()]
        if method == "lomb":
            f, psd, df = _lomb(pairs, s)
        else:
            f, psd, df = _ar(pairs, s, _run_series(rg, mine, s))
        f.flags.writeable = False
        psd.flags.writeable = False
        k = longest[w]
        out[w] = PsdEstimate(f, psd, float(df), method, float(length[k]), int(used[w]),
                             int(total[w] - used[w]), edge_allowance_s=float(allow[k]))
    return out


def estimate_psd(runs: list[tuple[np.ndarray, np.ndarray]], s: MetricsSettings, *,
                 method: str | None = None) -> PsdEstimate | None:
    """PSD (ms^2/Hz) of one window's runs (`psd_many`, one window); None when no run lasts
    ``s.min_hf_s`` (within `edge_allowance_s`)."""
    rg = Ragged.from_segments([rr for _, rr in runs], times=[t for t, _ in runs])
    return psd_many(rg, s, method=method)[0]


def _band(f: np.ndarray, band: tuple[float, float]) -> slice:
    """Indices of the increasing grid ``f`` with ``lo <= f < hi``."""
    return slice(int(f.searchsorted(band[0], "left")), int(f.searchsorted(band[1], "left")))


def band_power(est: PsdEstimate, band: tuple[float, float]) -> float:
    """Power in ``lo <= f < hi`` (ms^2), rectangle rule on the estimator's grid."""
    return float(est.psd_ms2_hz[_band(est.freqs_hz, band)].sum() * est.df_hz)


def _peak(est: PsdEstimate, band: tuple[float, float]) -> float:
    sel = _band(est.freqs_hz, band)
    if sel.stop <= sel.start:
        return _NAN
    return float(est.freqs_hz[sel.start + int(est.psd_ms2_hz[sel].argmax())])


def band_table(f: np.ndarray, psd: np.ndarray, df: float, s: MetricsSettings
               ) -> dict[str, np.ndarray]:
    """Band powers (ms^2), band peaks (Hz) and the dominant low-frequency peak with the power
    within ``s.resp_peak_halfwidth_hz`` of it, for every row of ``psd`` (spectra on the grid
    ``f``)."""
    b = s.bands
    k = psd.shape[0]
    out: dict[str, np.ndarray] = {}
    for name, band in (("vlf", b.vlf), ("lf", b.lf), ("hf", b.hf), ("total", (b.vlf[0], b.hf[1]))):
        out[name] = psd[:, _band(f, band)].sum(axis=1) * df
    for name, band in (("lf_peak", b.lf), ("hf_peak", b.hf)):
        sl = _band(f, band)
        out[name] = (f[sl.start + psd[:, sl].argmax(axis=1)] if sl.stop > sl.start
                     else np.full(k, _NAN))
    low = _band(f, (b.vlf[0], b.hf[0]))
    out["low_peak"] = np.full(k, _NAN)
    out["low_near"] = np.full(k, _NAN)
    if low.stop > low.start:
        hw = s.resp_peak_halfwidth_hz
        fpk = f[low.start + psd[:, low].argmax(axis=1)]
        a = np.searchsorted(f, fpk - hw, side="left")
        z = np.searchsorted(f, fpk + hw, side="right")
        near = np.array([psd[i, a[i]:z[i]].sum() for i in range(k)]) * df
        out["low_peak"] = fpk
        out["low_near"] = near
    return out


def frequency_values(est: PsdEstimate | None, row: dict | None, runs_longest_s: float,
                     s: MetricsSettings, *, breathing_hz: float | None = None,
                     ) -> tuple[dict[str, float], list[str]]:
    """Frequency-domain values and notes of one window from its spectrum and its row of
    `band_table` (``runs_longest_s``: its longest run, for the note when ``est`` is None)."""
    out = dict.fromkeys(FREQUENCY_KEYS, _NAN)
    notes: list[str] = []
    if est is None:
        notes.append(
            f"frequency domain: NaN, the longest NN run lasts {runs_longest_s:.1f} s; HF needs "
            f"at least {s.min_hf_s:g} s, LF {s.min_lf_s:g} s (Task Force 1996)")
        return out, notes
    if est.runs_skipped:
        notes.append(f"frequency domain: {est.runs_skipped} NN run(s) shorter than "
                     f"{s.min_hf_s:g} s between gaps left out of the spectrum")
    length = est.longest_run_s
    hf = float(row["hf"])
    out["hf_ms2"] = hf
    out["ln_hf"] = math.log(hf) if hf > 0 else _NAN
    out["hf_peak_hz"] = float(row["hf_peak"])
    reach = length + est.edge_allowance_s  # see `edge_allowance_s`
    has_lf = reach >= s.min_lf_s
    if has_lf:
        lf = float(row["lf"])
        out["lf_ms2"] = lf
        out["ln_lf"] = math.log(lf) if lf > 0 else _NAN
        out["lf_peak_hz"] = float(row["lf_peak"])
        out["total_power_ms2"] = float(row["total"])
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
        out["vlf_ms2"] = float(row["vlf"])
    else:
        notes.append(f"vlf_ms2: NaN, rrkit assesses VLF from NN runs of {s.min_vlf_s:g} s or "
                     f"more (the Task Force 1996 advises against VLF from recordings of 5 min "
                     f"or less)")
    if hf == 0:
        notes.append("ln_hf, lf_hf: NaN, no power in the HF band")
    out["resp_hz"] = out["hf_peak_hz"]
    if has_lf:
        _breathing(est, row, s, out, notes, breathing_hz)
    return out, notes



def _per_min(hz: float) -> str:
    return f"{hz * 60:.1f}/min"


def _breathing(est: PsdEstimate, row: dict, s: MetricsSettings, out: dict,
               notes: list[str],
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
    total = float(row["total"])
    dominant = None
    if np.isfinite(row["low_peak"]) and total > 0:
        share = float(row["low_near"]) / total
        if share >= s.resp_peak_share:
            dominant = (float(row["low_peak"]), share)
    lo_ok, hi_ok = PLAUSIBLE_BREATHING_HZ
    # a measured rate says how it was measured (rrkit._breathing.MeasuredHz); a plain one is given
    how = getattr(breathing_hz, "how", "given")
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
                f"breathing at {breathing_hz:.3f} Hz ({_per_min(breathing_hz)}, {how}) lies below "
                f"the HF band ({b.hf[0]:g} Hz): respiratory power falls into LF, so LF, HF and "
                f"LF/HF do not carry their usual meaning")
        elif dominant is not None and abs(dominant[0] - breathing_hz) > 0.03:
            notes.append(
                f"a dominant narrow peak at {dominant[0]:.3f} Hz below the HF band holds "
                f"{100 * dominant[1]:.0f}% of the total power while breathing is at "
                f"{breathing_hz:.3f} Hz ({_per_min(breathing_hz)}, {how}): a strong oscillation "
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


def frequency_many(rg: Ragged, s: MetricsSettings, breathing_hz) -> list[tuple[dict, list[str]]]:
    """Frequency-domain values and notes of every window (``breathing_hz``: one per window)."""
    return frequency_values_many(rg, psd_many(rg, s), s, breathing_hz)


def frequency_values_many(rg: Ragged, ests: list[PsdEstimate | None], s: MetricsSettings,
                          breathing_hz) -> list[tuple[dict, list[str]]]:
    """Values and notes of every window of ``rg`` from its spectra ``ests`` (`psd_many`)."""
    rows: list[dict | None] = [None] * len(ests)
    have = [i for i, e in enumerate(ests) if e is not None]
    if have and s.psd == "welch":  # one grid: every window's bands at once
        e0 = ests[have[0]]
        tab = band_table(e0.freqs_hz, np.stack([ests[i].psd_ms2_hz for i in have]), e0.df_hz, s)
        for j, i in enumerate(have):
            rows[i] = {k: v[j] for k, v in tab.items()}
    else:
        for i in have:
            e = ests[i]
            tab = band_table(e.freqs_hz, e.psd_ms2_hz[None, :], e.df_hz, s)
            rows[i] = {k: v[0] for k, v in tab.items()}
    longest = np.zeros(rg.n_windows)
    if rg.n_runs:
        length, _ = run_spans(rg)
        np.maximum.at(longest, rg.run_window, length)
    return [frequency_values(e, r, float(lg), s, breathing_hz=br)
            for e, r, lg, br in zip(ests, rows, longest, breathing_hz, strict=True)]


def frequency_domain(runs: list[tuple[np.ndarray, np.ndarray]], s: MetricsSettings, *,
                     breathing_hz: float | None = None,
                     ) -> tuple[dict[str, float], list[str], PsdEstimate | None]:
    """Frequency-domain metrics of NN-interval runs (one window of `frequency_many`).

    Parameters
    ----------
    runs : list of (times_s, nn_ms)
        Runs of consecutive NN intervals: end-beat times in s and intervals in ms.
    s : MetricsSettings
        PSD method, bands, resampling, detrending, minimum lengths, breathing-peak rule.
    breathing_hz : float, optional
        Breathing rate stated for the window (protocol, events table), in Hz.

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
    rg = Ragged.from_segments([rr for _, rr in runs], times=[t for t, _ in runs])
    ests = psd_many(rg, s)
    values, notes = frequency_values_many(rg, ests, s, [breathing_hz])[0]
    return values, notes, ests[0]
