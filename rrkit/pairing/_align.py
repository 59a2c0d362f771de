"""Clock alignment of two simultaneous recordings of the same heart.

Model: a device beat at ``t_dev`` seconds on the device's clock happened at

    t_ref = offset_s + slope * t_dev

on the reference clock; ``slope`` carries the linear drift between the two clocks
(``drift_ms_per_h = (1 / slope - 1) * 3.6e6``: positive when the device clock runs fast).

Steps
-----
1. Coarse offset: both interval series (the interval ending at each beat, gaps left out) are
   interpolated linearly on a 4 Hz grid of their own clock, centred, and cross-correlated over
   every lag with at least `MIN_OVERLAP_S` of common time (and `MIN_OVERLAP_SHARE` of the
   shorter recording); the correlation at each lag is the
   Pearson r of the overlapping parts (sums computed for all lags at once by FFT, with masks,
   so gaps and the changing overlap are handled exactly).
2. The best few correlation peaks (at least 5 s apart) are tried on the beat times: the
   constant part of the beat-time residuals is found as the mode of the beat-to-beat time
   differences within 0.5 s, mutual-nearest beats within `_LOCK_S` are paired, and a straight
   line ``t_ref = offset + slope * t_dev`` is fitted to the pairs by least squares, dropping
   pairs beyond 4 robust SD, and repeating until the number of pairs stops growing (at most
   12 rounds: a strong drift first locks the part near the coarse offset, then more).
3. Each candidate is scored by the share of beats it locks times the correlation of the
   intervals between consecutive locked beats (a regular rhythm also locks at a shift of
   whole beats, but then the intervals no longer rise and fall together). The best score wins;
   ``confidence`` is its margin over the best other candidate: near 1 for a sure, unique
   alignment, near 0 when another offset fits as well or nothing fits.

A constant pulse-arrival delay and a clock offset move every beat alike, so no method can tell
them apart from the beats alone: for a pulse-derived device, ``offset_s`` is the clock offset
minus the mean pulse delay. With ``clock_offset_s`` known by other means (synchronised
clocks), ``delay_ms`` gives the delay.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .._validation import check_range
from ..errors import InputError
from ..recording import Recording

__all__ = ["MIN_LOCKED_SHARE", "MIN_OVERLAP_S", "Alignment", "align"]

GRID_HZ = 4.0             # interval series resampled at 4 Hz (common practice for HRV spectra)
MIN_OVERLAP_S = 60.0      # the two recordings must share at least a minute
MIN_OVERLAP_SHARE = 0.25  # ... and a quarter of the shorter one
MIN_LOCKED_SHARE = 0.5    # at least half the overlapping beats must pair after alignment
MIN_CONFIDENCE = 0.25     # ... and clearly better than at any other offset
_LOCK_S = 0.075           # pairs closer than this count as locked (fitting and scoring)
_N_CANDIDATES = 5
_PEAK_SEPARATION_S = 5.0
_MODE_RANGE_S = 0.5
_MODE_BIN_S = 0.005
_MAX_ROUNDS = 12


@dataclass(frozen=True, slots=True)
class Alignment:
    """How a device's clock maps onto the reference clock.

    Attributes
    ----------
    offset_s : float
        Reference time (s) of the device's time 0; includes a constant pulse delay (see the
        module notes).
    slope : float
        ``t_ref = offset_s + slope * t_dev``.
    drift_ms_per_h : float
        How many ms per hour the device clock gains on the reference (negative: loses).
    coarse_offset_s : float
        The offset found by cross-correlating the interval series (step 1).
    xcorr_r : float
        Pearson r of the two resampled interval series at the coarse offset.
    locked_share : float
        Share of the overlapping beats (of the recording with fewer) paired within 75 ms.
    beat_interval_r : float
        Pearson r of the intervals between consecutive paired beats.
    confidence : float
        Score ``locked_share * max(beat_interval_r, 0)`` at the chosen offset minus the best
        score at another candidate offset (0 to 1).
    jitter_ms : float
        Robust SD (1.4826 MAD) of the beat-time residuals after alignment: the beat-to-beat
        variability of the pulse delay, plus detection jitter.
    overlap_s : tuple of float
        Start and end of the common stretch, on the reference clock.
    n_fit : int
        Beat pairs the line was fitted to.
    clock_offset_s : float or None
        The clock offset given by the caller, if any.
    delay_ms : float or None
        ``(clock_offset_s - offset_s) * 1000``: the mean pulse delay, known only with
        ``clock_offset_s``.
    notes : tuple of str
    """

    offset_s: float
    slope: float
    drift_ms_per_h: float
    coarse_offset_s: float
    xcorr_r: float
    locked_share: float
    beat_interval_r: float
    confidence: float
    jitter_ms: float
    overlap_s: tuple[float, float]
    n_fit: int
    clock_offset_s: float | None = None
    delay_ms: float | None = None
    notes: tuple[str, ...] = field(default_factory=tuple)

    def to_reference(self, t_dev_s) -> np.ndarray:
        """Device-clock times (s) on the reference clock."""
        return self.offset_s + self.slope * np.asarray(t_dev_s, dtype=np.float64)

    def to_dict(self) -> dict:
        """Plain dict (for JSON and tables)."""
        return {"offset_s": self.offset_s, "slope": self.slope,
                "drift_ms_per_h": self.drift_ms_per_h, "coarse_offset_s": self.coarse_offset_s,
                "xcorr_r": self.xcorr_r, "locked_share": self.locked_share,
                "beat_interval_r": self.beat_interval_r,
                "confidence": self.confidence, "jitter_ms": self.jitter_ms,
                "overlap_start_s": self.overlap_s[0], "overlap_end_s": self.overlap_s[1],
                "n_fit": self.n_fit, "clock_offset_s": self.clock_offset_s,
                "delay_ms": self.delay_ms}


def _grid_series(rec: Recording) -> tuple[float, np.ndarray, np.ndarray]:
    """(first grid time, centred values, mask) of the interval series on a 4 Hz grid."""
    t_end = rec.interval_times_s
    ok = ~rec.gaps
    t0, t1 = float(rec.beat_times_s[0]), float(rec.beat_times_s[-1])
    grid = t0 + np.arange(int(np.floor((t1 - t0) * GRID_HZ)) + 1) / GRID_HZ
    rr = rec.rr_ms[ok]
    # a dropped or invented beat makes one interval double or half: limit such outliers to
    # median +/- 4 robust SD so that they do not dominate the correlation
    med = float(np.median(rr))
    spread = max(4 * 1.4826 * float(np.median(np.abs(rr - med))), 20.0)
    values = np.interp(grid, t_end[ok], np.clip(rr, med - spread, med + spread))
    mask = np.ones(grid.size)
    # no values across a gap, nor before the first usable interval ends
    for k in np.flatnonzero(rec.gaps):
        mask[(grid > rec.beat_times_s[k]) & (grid < rec.beat_times_s[k + 1])] = 0.0
    mask[grid < t_end[ok][0]] = 0.0
    values = (values - np.mean(values[mask > 0])) * mask
    return float(grid[0]), values, mask


def _xcorr(ref: Recording, dev: Recording) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(lags in s, Pearson r, overlap in s) for t_ref = t_dev + lag."""
    from scipy.signal import correlate, correlation_lags

    r0, x, mx = _grid_series(ref)
    d0, y, my = _grid_series(dev)

    def c(a, b):
        return correlate(a, b, mode="full", method="fft")

    n = c(mx, my)
    sxy, sx, sy = c(x, y), c(x, my), c(mx, y)
    sxx, syy = c(x * x, my), c(mx, y * y)
    lags = r0 - d0 + correlation_lags(x.size, y.size, mode="full") / GRID_HZ
    with np.errstate(invalid="ignore", divide="ignore"):
        num = n * sxy - sx * sy
        den = np.sqrt(np.clip(n * sxx - sx * sx, 0, None) * np.clip(n * syy - sy * sy, 0, None))
        r = np.where(den > 0, num / den, np.nan)
    # scipy's lag k pairs reference grid point m + k with device grid point m, so
    # ref time - dev time = r0 - d0 + k / 4 Hz: t_ref = t_dev + lag
    return lags, r, np.round(n) / GRID_HZ


def _candidates(lags, r, *, n: int) -> list[int]:
    order = np.argsort(-np.nan_to_num(r, nan=-np.inf))
    picked: list[int] = []
    for k in order:
        if not np.isfinite(r[k]):
            break
        if all(abs(lags[k] - lags[j]) >= _PEAK_SEPARATION_S for j in picked):
            picked.append(int(k))
            if len(picked) == n:
                break
    return picked


def _nearest(sorted_t: np.ndarray, x: np.ndarray) -> np.ndarray:
    """Index of the nearest element of ``sorted_t`` for each ``x``."""
    j = np.clip(np.searchsorted(sorted_t, x), 1, sorted_t.size - 1)
    left = sorted_t[j - 1]
    return np.where(np.abs(x - left) <= np.abs(sorted_t[j] - x), j - 1, j)


def mutual_pairs(r: np.ndarray, u: np.ndarray, tol_s: float) -> tuple[np.ndarray, np.ndarray]:
    """Indices (i into r, j into u) of mutual-nearest beats closer than ``tol_s``."""
    if r.size < 2 or u.size < 2:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    j = _nearest(u, r)
    i = _nearest(r, u)
    k = np.arange(r.size)
    ok = (i[j] == k) & (np.abs(u[j] - r) <= tol_s)
    return k[ok], j[ok]


def _mode_shift(r: np.ndarray, u: np.ndarray) -> float:
    """Most common ``t_ref - t_dev`` within ±0.5 s (histogram of all near beat pairs)."""
    lo = np.searchsorted(r, u - _MODE_RANGE_S)
    hi = np.searchsorted(r, u + _MODE_RANGE_S)
    diffs = [r[a:b] - x for a, b, x in zip(lo, hi, u, strict=True) if b > a]
    if not diffs:
        return 0.0
    d = np.concatenate(diffs)
    edges = np.arange(-_MODE_RANGE_S, _MODE_RANGE_S + _MODE_BIN_S, _MODE_BIN_S)
    h, _ = np.histogram(d, bins=edges)
    h = np.convolve(h, np.ones(3), mode="same")
    return float(edges[int(np.argmax(h))] + _MODE_BIN_S / 2)


def _refine(r: np.ndarray, t_dev: np.ndarray, lag: float):
    """(offset, slope, locked share, robust SD s, n pairs) starting from a coarse lag."""
    u = t_dev + lag
    inside = (u >= r[0] - _MODE_RANGE_S) & (u <= r[-1] + _MODE_RANGE_S)
    if inside.sum() < 3:
        return lag, 1.0, 0.0, np.nan, 0, np.nan
    offset = lag + _mode_shift(r, u[inside])
    slope = 1.0
    sd = _LOCK_S
    i = j = np.zeros(0, dtype=np.int64)
    n_before = -1
    for _ in range(_MAX_ROUNDS):  # a strong drift locks part of the recording first, then more
        u = offset + slope * t_dev
        i, j = mutual_pairs(r, u, min(max(4 * sd, 0.02), _LOCK_S))
        if i.size < 3:
            return offset, slope, 0.0, np.nan, 0, np.nan
        if i.size <= n_before:
            break
        n_before = i.size
        a, b = np.polyfit(t_dev[j], r[i], 1) if i.size > 10 else (1.0, np.median(
            r[i] - t_dev[j]))
        res = r[i] - (b + a * t_dev[j])
        sd = max(1.4826 * float(np.median(np.abs(res - np.median(res)))), 1e-4)
        offset, slope = float(b), float(a)
    u = offset + slope * t_dev
    lo, hi = max(r[0], u[0]), min(r[-1], u[-1])
    n_overlap = min(int(np.sum((r >= lo) & (r <= hi))), int(np.sum((u >= lo) & (u <= hi))))
    i, j = mutual_pairs(r, u, _LOCK_S)
    share = float(i.size) / max(n_overlap, 1)
    res = r[i] - u[j]
    sd = 1.4826 * float(np.median(np.abs(res - np.median(res)))) if res.size else np.nan
    return offset, slope, min(share, 1.0), sd, int(i.size), _paired_interval_r(r, u, i, j)


def _paired_interval_r(r, u, i, j) -> float:
    """Pearson r of the intervals between consecutive paired beats (NaN when too few)."""
    both = (np.diff(i) == 1) & (np.diff(j) == 1)
    if both.sum() < 10:
        return float("nan")
    a = np.diff(r[i])[both]
    b = np.diff(u[j])[both]
    if np.std(a) == 0 or np.std(b) == 0:
        return float("nan")
    return float(np.corrcoef(a, b)[0, 1])


def align(
    reference: Recording,
    device: Recording,
    *,
    max_offset_s: float | None = None,
    clock_offset_s: float | None = None,
) -> Alignment:
    """Find the clock offset and drift of ``device`` against ``reference``.

    Parameters
    ----------
    reference, device : Recording
        Two simultaneous recordings of the same heart (for example an ECG and a wrist PPG).
    max_offset_s : float, optional
        Search offsets only within this many seconds of the expected one (``clock_offset_s``
        when given, else the difference of the recordings' start times when both have one,
        else 0). Default: every offset that leaves a minute of overlap.
    clock_offset_s : float, optional
        The clock offset (reference time of device time 0), when known by other means; the
        search is centred on it and ``delay_ms`` reports the constant pulse delay.

    Returns
    -------
    Alignment

    Raises
    ------
    InputError
        Recordings that do not overlap by `MIN_OVERLAP_S` within the search range, or that do
        not correlate (fewer than half of the beats pair at the best offset, or another offset
        fits almost as well): most likely two different recordings.

    Notes
    -----
    See the module notes for the method. Drift resolution: with beat-time jitter σ over a
    recording of length T and n pairs, the slope's standard error is about
    σ / (sqrt(n) · T / sqrt(12)).

    Examples
    --------
    >>> import rrkit
    >>> from rrkit.simulate import simulate_rr, simulate_device
    >>> ref = simulate_rr(duration_s=600, seed=1)
    >>> dev, truth = simulate_device(ref, clock_offset_s=12.5, delay_ms=0, jitter_ms=0, seed=2)
    >>> round(rrkit.align(ref, dev).offset_s, 3)
    12.5
    """
    for name, rec in (("reference", reference), ("device", device)):
        if not isinstance(rec, Recording):
            raise InputError(f"{name} must be a Recording (rrkit.read gives one); got "
                             f"{type(rec).__name__}")
        if rec.n_intervals < 10 or (~rec.gaps).sum() < 10:
            raise InputError(f"the {name} recording has {rec.n_intervals} intervals, expected "
                             "at least 10 to align", path=rec.source)
    notes: list[str] = []
    centre = 0.0
    if clock_offset_s is not None:
        centre = check_range("clock_offset_s", clock_offset_s, unit="s")
    elif reference.start is not None and device.start is not None:
        try:
            centre = (device.start - reference.start).total_seconds()
            notes.append(f"search centred on the start times' difference ({centre:.3f} s)")
        except TypeError:  # one time-zone aware, the other not
            notes.append("start times not comparable (one has a time zone): not used")
    if max_offset_s is not None:
        max_offset_s = check_range("max_offset_s", max_offset_s, low=0.0, unit="s")
    lags, r, overlap = _xcorr(reference, device)
    # short overlaps correlate well by chance: ask for a quarter of the shorter recording too
    need_s = max(MIN_OVERLAP_S, MIN_OVERLAP_SHARE * min(reference.duration_s,
                                                        device.duration_s))
    ok = overlap >= need_s
    if max_offset_s is not None:
        ok &= np.abs(lags - centre) <= max_offset_s
    where = (f"within {max_offset_s:g} s of an offset of {centre:g} s"
             if max_offset_s is not None else "at any offset")
    if not ok.any():
        raise InputError(
            f"the recordings do not overlap by {need_s:.0f} s {where} (reference "
            f"{reference.duration_s:.0f} s, device {device.duration_s:.0f} s)",
            path=device.source, hint="check that both files record the same session; widen "
                                     "max_offset_s")
    r = np.where(ok, r, np.nan)
    cands = _candidates(lags, r, n=_N_CANDIDATES)
    t_ref = reference.beat_times_s
    t_dev = device.beat_times_s
    tried = []
    for k in cands:
        row = _refine(t_ref, t_dev, float(lags[k]))
        # a regular rhythm locks beats at a shift of whole beats too; the intervals of truly
        # paired beats also rise and fall together: score = locked share x interval r
        tried.append((k, *row, row[2] * max(np.nan_to_num(row[5]), 0.0)))
    tried.sort(key=lambda row: -row[7])
    k, offset, slope, share, sd_s, n_fit, beat_r, score = tried[0]
    other = max((row[7] for row in tried[1:]
                 if abs(row[1] - offset) >= _PEAK_SEPARATION_S / 2), default=0.0)
    confidence = max(score - other, 0.0)
    if share < MIN_LOCKED_SHARE or confidence < MIN_CONFIDENCE:
        raise InputError(
            f"the recordings do not correlate: at the best offset ({offset:.2f} s) only "
            f"{share:.0%} of the beats pair within {_LOCK_S * 1000:.0f} ms and their "
            f"intervals correlate at r = {beat_r:.2f} (confidence {confidence:.2f}); expected "
            f"at least {MIN_LOCKED_SHARE:.0%} paired with intervals that rise and fall "
            f"together, clearly better than at any other offset (confidence >= "
            f"{MIN_CONFIDENCE:g})",
            path=device.source, hint="these look like two different recordings; check the "
                                     "files, or narrow max_offset_s around the known offset")
    u = offset + slope * t_dev
    lo, hi = max(t_ref[0], u[0]), min(t_ref[-1], u[-1])
    if hi - lo < MIN_OVERLAP_S:
        raise InputError(f"the aligned recordings overlap for {max(hi - lo, 0):.0f} s, expected "
                         f"at least {MIN_OVERLAP_S:g} s", path=device.source)
    drift = (1.0 / slope - 1.0) * 3.6e6
    delay = None if clock_offset_s is None else (float(clock_offset_s) - offset) * 1000.0
    if n_fit < 100:
        notes.append(f"drift fitted on {n_fit} beat pairs only: treat it as rough")
    return Alignment(offset_s=float(offset), slope=float(slope), drift_ms_per_h=float(drift),
                     coarse_offset_s=float(lags[k]), xcorr_r=float(r[k]),
                     locked_share=float(share), beat_interval_r=float(beat_r),
                     confidence=float(confidence),
                     jitter_ms=float(sd_s) * 1000.0, overlap_s=(float(lo), float(hi)),
                     n_fit=int(n_fit), clock_offset_s=None if clock_offset_s is None
                     else float(clock_offset_s), delay_ms=delay, notes=tuple(notes))
