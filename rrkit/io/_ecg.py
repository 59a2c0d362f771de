"""R-peak detection in a raw ECG lead, robust to the mess of real recordings.

Steps
-----
1. Unusable stretches: missing samples (NaN), and flat runs (the same value, or the rail value
   of a clipped amplifier, for at least ``0.25 s``: no QRS complex is that flat) are cut out,
   with 0.05 s either side. What remains is split into usable segments; segments shorter than
   2 s are too short to filter and are counted as unusable.
2. Each segment is cleaned with ``neurokit2.ecg_clean`` (method ``"neurokit"``: 0.5 Hz
   high-pass and powerline filter).
3. Inverted lead: in each 2 s window of the cleaned signal the sample of largest magnitude is
   the R (or S) peak; when the median of those samples is negative the lead is upside down and
   is turned over (the rule of ``neurokit2.ecg_invert``, vectorised here). Recorded in
   ``ReadInfo.extra["inverted_lead"]``.
4. R peaks per segment with ``neurokit2.ecg_peaks(method=detector)``; the default detector is
   ``"neurokit"`` (neurokit2's own default: QRS slope envelope with adaptive thresholds).
5. Intervals that span an unusable stretch are marked as gaps in the `Recording`.
   The R-wave amplitudes of the cleaned lead give the breathing-rate series
   (`rrkit._breathing`), kept in ``ReadInfo.extra`` for the window table.
6. Detection quality: the share of detected beats whose QRS (±0.1 s around the largest
   deflection within 0.05 s of the detected peak) correlates at r >= 0.8 with the median beat
   of the record, plus the share of usable signal. A low figure
   warns (`QualityWarning`); no beats at all is an `InputError`.
"""

from __future__ import annotations

import logging
import warnings
from typing import Any

import numpy as np

from .._breathing import breathing_series
from ..errors import InputError, QualityWarning
from ..recording import ReadInfo, Recording
from ._checks import MIN_INTERVALS, check_signal

__all__ = ["DEFAULT_DETECTOR", "DETECTORS", "detect_beats", "recording_from_signal"]

logger = logging.getLogger("rrkit")

#: R-peak detectors of neurokit2.ecg_peaks that rrkit offers
DETECTORS = ("neurokit", "pantompkins1985", "hamilton2002", "zong2003", "martinez2004",
             "christov2004", "gamboa2008", "elgendi2010", "engzeemod2012", "manikandan2012",
             "kalidas2017", "nabian2018", "rodrigues2021", "emrich2023")
DEFAULT_DETECTOR = "neurokit"

_FLAT_MIN_S = 0.25     # a run this long without change is not ECG
_PAD_S = 0.05          # margin cut around an unusable stretch
_MIN_SEGMENT_S = 2.0   # shortest segment worth filtering and searching
_INVERT_WINDOW_S = 2.0
_QRS_HALF_S = 0.1      # QRS template half-width
_ALIGN_S = 0.05        # search for the largest deflection this far around a detected peak
_MATCH_R = 0.8         # beats matching the median beat at least this well count as good
_WARN_QUALITY = 0.7    # warn below this share of well-matching beats
_WARN_USABLE = 0.8     # warn below this share of usable signal
_MIN_FS_HZ = 50.0      # below this a QRS complex is a few samples wide


def _runs(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start and stop (exclusive) indices of the True runs of a boolean array."""
    edges = np.flatnonzero(np.diff(np.concatenate(([0], mask.astype(np.int8), [0]))))
    return edges[::2], edges[1::2]


def _unusable(sig: np.ndarray, fs: float) -> tuple[np.ndarray, dict[str, Any]]:
    """Boolean mask of unusable samples (NaN, flat, rail) and what was found."""
    n = sig.size
    nan = ~np.isfinite(sig)
    finite = sig[~nan]
    if finite.size == 0:
        return np.ones(n, dtype=bool), {"flat_s": 0.0, "missing_s": n / fs, "clipped_pct": 0.0}
    lo, hi = float(finite.min()), float(finite.max())
    tol = 1e-9 * max(hi - lo, 1e-12)
    filled = np.where(nan, lo, sig)
    same = np.abs(np.diff(filled)) <= tol
    bad = nan.copy()
    min_len = max(round(_FLAT_MIN_S * fs), 2)
    starts, stops = _runs(same)
    long_run = (stops - starts + 1) >= min_len  # b - a equal steps span b - a + 1 samples
    flat_samples = int((stops - starts + 1)[long_run].sum())
    for a, b in zip(starts[long_run], stops[long_run], strict=True):
        bad[a:b + 1] = True
    rail = (np.abs(filled - hi) <= tol) | (np.abs(filled - lo) <= tol)
    clipped_pct = 100.0 * float(np.mean(rail & ~nan & np.concatenate(([False], same))))
    pad = round(_PAD_S * fs)
    if pad and bad.any():  # widen every bad stretch by `pad` samples each side (running sum)
        c = np.concatenate(([0], np.cumsum(bad, dtype=np.int64)))
        idx = np.arange(n)
        bad = (c[np.minimum(idx + pad + 1, n)] - c[np.maximum(idx - pad, 0)]) > 0
    return bad, {"flat_s": flat_samples / fs, "missing_s": float(nan.sum()) / fs,
                 "clipped_pct": clipped_pct}


def _is_inverted(segments: list[np.ndarray], fs: float) -> tuple[bool, float]:
    """(inverted?, share of windows whose largest deflection is negative)."""
    w = round(_INVERT_WINDOW_S * fs)
    picks = []
    for x in segments:
        k = x.size // w
        if k == 0:
            continue
        blocks = x[:k * w].reshape(k, w) - np.mean(x)
        picks.append(blocks[np.arange(k), np.argmax(blocks * blocks, axis=1)])
    if not picks:
        return False, 0.0
    v = np.concatenate(picks)
    return bool(np.median(v) < 0), float(np.mean(v < 0))


def _clean(x: np.ndarray, fs: float) -> np.ndarray:
    import neurokit2 as nk

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        out = np.asarray(nk.ecg_clean(x, sampling_rate=fs, method="neurokit"), dtype=np.float64)
    for w in caught:  # neurokit2's notes on its filter settings: logged, not raised
        logger.info("rrkit: neurokit2 said: %s", w.message)
    return out


def _peaks(x: np.ndarray, fs: float, detector: str) -> np.ndarray:
    import neurokit2 as nk

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            _, found = nk.ecg_peaks(x, sampling_rate=fs, method=detector, correct_artifacts=False)
            peaks = np.asarray(found["ECG_R_Peaks"], dtype=np.int64)
        except (ValueError, IndexError, ZeroDivisionError) as exc:
            # neurokit2 fails on segments without any QRS-like wave; that segment has no beats
            logger.info("rrkit: detector %s found no beats in a %.1f s segment (%s)",
                        detector, x.size / fs, exc)
            peaks = np.zeros(0, dtype=np.int64)
    for w in caught:
        logger.info("rrkit: neurokit2 said: %s", w.message)
    return np.unique(peaks[(peaks >= 0) & (peaks < x.size)])


def _quality(segments_clean: list[np.ndarray], seg_peaks: list[np.ndarray], fs: float) -> float:
    """Share of beats whose QRS correlates at r >= 0.8 with the record's median beat."""
    half = round(_QRS_HALF_S * fs)
    look = round(_ALIGN_S * fs)
    offs = np.arange(-half, half + 1)
    near = np.arange(-look, look + 1)
    beats = []
    for x, p in zip(segments_clean, seg_peaks, strict=True):
        p = p[(p >= half + look) & (p < x.size - half - look)]
        if p.size:
            # detectors mark different points of the QRS: centre each beat on its largest
            # deflection nearby, so the figure rates the beats, not the detector's fiducial
            p = p + near[np.argmax(np.abs(x[p[:, None] + near]), axis=1)]
            beats.append(x[p[:, None] + offs])
    if not beats:
        return 0.0
    b = np.concatenate(beats)
    template = np.median(b, axis=0)
    bc = b - b.mean(axis=1, keepdims=True)
    tc = template - template.mean()
    denom = np.sqrt((bc * bc).sum(axis=1) * (tc * tc).sum())
    with np.errstate(invalid="ignore", divide="ignore"):
        r = np.where(denom > 0, (bc @ tc) / denom, 0.0)
    return float(np.mean(r >= _MATCH_R))


def detect_beats(signal, *, fs_hz: float | None, detector: str = DEFAULT_DETECTOR,
                 path: str | None = None, what: str = "ECG",
                 breathing: bool = True) -> tuple[np.ndarray, np.ndarray, dict]:
    """Detect R peaks in one ECG lead.

    Parameters
    ----------
    signal : array_like, shape (n_samples,)
        The raw lead, any physical unit.
    fs_hz : float
        Sampling rate in Hz (required; there is no default).
    detector : str
        One of `DETECTORS` (default ``"neurokit"``).
    path : str, optional
        File name for messages.
    breathing : bool
        Also measure the breathing-rate series from the R-wave amplitude of the cleaned lead
        (`rrkit._breathing.breathing_series`, while the signal is at hand; default True).

    Returns
    -------
    peaks : numpy.ndarray of int
        Sample indices of the R peaks, increasing.
    gaps : numpy.ndarray of bool, shape (len(peaks) - 1,)
        True for intervals spanning an unusable stretch.
    extra : dict
        Detector, inverted lead, detection quality, usable share, flat and missing seconds;
        with ``breathing``, ``breathing_hz``, ``breathing_series`` and ``breathing_measured_by``.

    Raises
    ------
    InputError
        Missing sampling rate, a signal too short, or no (or too few) beats found.
    """
    sig, fs, detector = check_signal(signal, fs_hz=fs_hz, detector=detector,
                                     detectors=DETECTORS, min_fs_hz=_MIN_FS_HZ,
                                     min_s=_MIN_SEGMENT_S, what=what, path=path, fs_example=250)
    bad, found = _unusable(sig, fs)
    starts, stops = _runs(~bad)
    long_enough = (stops - starts) >= _MIN_SEGMENT_S * fs
    starts, stops = starts[long_enough], stops[long_enough]
    usable = float((stops - starts).sum()) / sig.size
    extra: dict[str, Any] = {
        "detector": detector,
        "clean_method": "neurokit",
        "usable_signal_pct": round(100.0 * usable, 2),
        "flat_s": round(found["flat_s"], 3),
        "missing_s": round(found["missing_s"], 3),
        "clipped_pct": round(found["clipped_pct"], 3),
        "n_segments": int(starts.size),
    }
    if starts.size == 0:
        raise InputError(
            f"no usable {what}: the signal is flat, clipped or missing throughout (no clean "
            f"stretch of {_MIN_SEGMENT_S:g} s or more; {found['flat_s']:.1f} s flat, "
            f"{found['missing_s']:.1f} s missing), so no heartbeats can be detected", path=path,
            hint="check the electrode contact and the channel chosen")
    cleaned = [_clean(sig[a:b], fs) for a, b in zip(starts, stops, strict=True)]
    inverted, neg_share = _is_inverted(cleaned, fs)
    if inverted:
        cleaned = [-x for x in cleaned]
    extra["inverted_lead"] = inverted
    extra["negative_peak_share"] = round(neg_share, 3)
    seg_peaks = [_peaks(x, fs, detector) for x in cleaned]
    n_found = sum(p.size for p in seg_peaks)
    if n_found < MIN_INTERVALS + 1:
        raise InputError(
            f"found {n_found} heartbeat{'s' if n_found != 1 else ''} in the {what} "
            f"({usable:.0%} of it usable), expected at least {MIN_INTERVALS + 1} (too few "
            f"beats); the lead may be noisy, flat or disconnected", path=path,
            hint="try another channel with column= or another detector with detector=")
    peaks = np.concatenate([p + a for p, a in zip(seg_peaks, starts, strict=True)])
    seg_id = np.concatenate([np.full(p.size, k) for k, p in enumerate(seg_peaks)])
    gaps = np.diff(seg_id) != 0
    quality = _quality(cleaned, seg_peaks, fs)
    extra["detection_quality"] = round(quality, 4)
    extra["n_gaps"] = int(gaps.sum())
    if breathing:  # the R-wave amplitudes exist only now, on the cleaned (upright) lead
        amp = np.concatenate([x[p] for x, p in zip(cleaned, seg_peaks, strict=True)])
        extra.update(breathing_series(peaks / fs, amp, gaps=gaps))
    if inverted:
        logger.info("rrkit: %s: the ECG lead is inverted; turned it over before detection",
                    path or what)
    if quality < _WARN_QUALITY or usable < _WARN_USABLE:
        warnings.warn(
            f"{path or what}: weak ECG: {quality:.0%} of {peaks.size} detected beats match the "
            f"median beat (r >= {_MATCH_R}), {usable:.0%} of the signal usable; check the "
            "beats before trusting the intervals", QualityWarning, stacklevel=5)
    return peaks, gaps, extra


def recording_from_signal(signal, *, fs_hz: float | None, path: str | None, detector: str,
                          subject: str | None, start, kind_decided_by: str,
                          column: str | None, extra: dict | None = None,
                          what: str = "ECG") -> Recording:
    """Detect beats in ``signal`` and wrap them as a `Recording` (beat times from sample 0)."""
    peaks, gaps, found = detect_beats(signal, fs_hz=fs_hz, detector=detector, path=path,
                                      what=what)
    fs = float(fs_hz)
    info_extra = dict(extra or {})
    info_extra.update(found)
    info = ReadInfo(kind="ecg", kind_decided_by=kind_decided_by, unit=None,
                    unit_decided_by=f"R peaks detected at {fs:g} Hz", fs_hz=fs, column=column,
                    extra=info_extra)
    return Recording.from_peak_times(peaks / fs, start=start, subject=subject, source=path,
                                     info=info, gaps=gaps)
