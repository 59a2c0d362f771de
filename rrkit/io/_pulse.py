"""Pulse-derived beats: pulse peak or onset times, and pulse peaks detected in a raw PPG signal.

A pulse wave (optical PPG, finger or arterial pressure) gives one beat per heartbeat, but each
arrives a pulse-arrival time after the R wave and that delay varies from beat to beat, so
pulse-to-pulse intervals are not RR intervals: pulse-derived short-term variability (RMSSD, HF)
tends to read higher than ECG-derived (Schäfer & Vagedes 2013, Int J Cardiol 166:15-29, from
memory). Every recording read here is marked as pulse-derived (``ReadInfo.pulse_derived``), so
outputs call its intervals "pulse-to-pulse".

Raw PPG follows the ECG rules: the sampling rate has no default, and the peak method is
neurokit2's (``ppg_clean`` then ``ppg_peaks``, method ``"elgendi"``, neurokit2's own default;
Elgendi M et al. 2013, PLoS One 8(10):e76585), recorded in ``ReadInfo.extra``.
"""

from __future__ import annotations

import logging
import re
import warnings
from typing import Any

import numpy as np

from ..errors import InputError, QualityWarning
from ..recording import ReadInfo, Recording
from ._checks import MIN_INTERVALS, check_signal

__all__ = ["DEFAULT_PPG_DETECTOR", "PPG_DETECTORS", "PULSE_ANNOTATORS", "PULSE_WORDS",
           "as_pulse", "read_ppg_table", "recording_from_pulse_signal"]

logger = logging.getLogger("rrkit")

#: peak methods of neurokit2.ppg_peaks that rrkit offers
PPG_DETECTORS = ("elgendi", "bishop", "charlton")
DEFAULT_PPG_DETECTOR = "elgendi"
#: WFDB annotators that mark pulses rather than QRS complexes: ``wabp`` is PhysioNet's
#: arterial-pressure pulse onset detector (Zong W et al. 2003, Comput Cardiol 30:259-262)
PULSE_ANNOTATORS = ("wabp",)

#: words of a column or channel label that name a pulse wave
PULSE_WORDS = ("ppg", "pleth", "pulse", "bvp", "abp", "art", "fingerpres", "finapres")
_MIN_FS_HZ = 20.0       # below this a pulse upstroke is a sample or two wide
_MIN_SIGNAL_S = 5.0     # neurokit2's pulse detector works on windows of about a beat
_WARN_USABLE = 0.8      # warn when fewer beats than this share of the expected ones are found


def as_pulse(rec: Recording, *, why: str) -> Recording:
    """The same beats marked as pulse-derived (``info.extra["pulse_derived"]``, with why)."""
    extra = dict(rec.info.extra)
    extra["pulse_derived"] = True
    extra["pulse_derived_by"] = why
    if rec.info.kind in ("peaks", "rr"):
        extra["pulse_values"] = ("pulse-to-pulse intervals" if rec.info.kind == "rr"
                                 else "pulse peak or onset times")
    kind = "pulse" if rec.info.kind in ("peaks", "rr") else rec.info.kind
    info = ReadInfo(kind=kind, kind_decided_by=rec.info.kind_decided_by, unit=rec.info.unit,
                    unit_decided_by=rec.info.unit_decided_by, fs_hz=rec.info.fs_hz,
                    column=rec.info.column, extra=extra)
    return rec.replace(info=info)


def _pulse_peaks(x: np.ndarray, fs: float, method: str) -> np.ndarray:
    import neurokit2 as nk

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        cleaned = np.asarray(nk.ppg_clean(x, sampling_rate=fs, method="elgendi"))
        _, found = nk.ppg_peaks(cleaned, sampling_rate=fs, method=method,
                                correct_artifacts=False)
    for w in caught:  # neurokit2's notes on its settings: logged, not raised
        logger.info("rrkit: neurokit2 said: %s", w.message)
    peaks = np.asarray(found["PPG_Peaks"], dtype=np.int64)
    return np.unique(peaks[(peaks >= 0) & (peaks < x.size)])


def recording_from_pulse_signal(signal, *, fs_hz: float | None, path: str | None,
                                detector: str, subject: str | None, start,
                                kind_decided_by: str, column: str | None,
                                extra: dict | None = None, what: str = "PPG") -> Recording:
    """Detect pulse peaks in a raw PPG (or other pulse wave) and wrap them as a `Recording`.

    Parameters
    ----------
    signal : array_like, shape (n_samples,)
        The raw pulse wave, any unit. Missing samples (NaN) are an error: interpolate or cut
        them first (rrkit does not fill a pulse wave silently).
    fs_hz : float
        Sampling rate in Hz; required (no default).
    detector : str
        One of `PPG_DETECTORS`.

    Raises
    ------
    InputError
        No sampling rate, a signal too short, missing samples, or too few pulses found.
    """
    sig, fs, detector = check_signal(signal, fs_hz=fs_hz, detector=detector,
                                     detectors=PPG_DETECTORS, min_fs_hz=_MIN_FS_HZ,
                                     min_s=_MIN_SIGNAL_S, what=what, path=path, fs_example=100)
    bad = np.flatnonzero(~np.isfinite(sig))
    if bad.size:
        raise InputError(f"the {what} has {bad.size} missing or non-finite samples (first at "
                         f"sample {bad[0]}, {bad[0] / fs:.2f} s), expected a continuous signal",
                         path=path, hint="cut the recording at the dropout or fill it yourself")
    if float(np.ptp(sig)) == 0.0:
        raise InputError(f"the {what} is flat throughout: no pulses can be detected", path=path,
                         hint="check the sensor contact and the column chosen")
    peaks = _pulse_peaks(sig, fs, detector)
    if peaks.size < MIN_INTERVALS + 1:
        raise InputError(f"found {peaks.size} pulses in the {what}, expected at least "
                         f"{MIN_INTERVALS + 1}; the signal may be noisy or not a pulse wave",
                         path=path, hint="check the column, or try another detector=")
    # plausibility: pulses expected from the median interval over the signal's length
    med_s = float(np.median(np.diff(peaks))) / fs
    expected = sig.size / fs / med_s
    share = min(peaks.size / expected, 1.0)
    info_extra: dict[str, Any] = dict(extra or {})
    info_extra.update({"detector": detector, "clean_method": "elgendi",
                       "detection_coverage": round(share, 4), "pulse_derived": True,
                       "pulse_derived_by": f"pulse peaks detected in a {what}"})
    if share < _WARN_USABLE:
        warnings.warn(f"{path or what}: {peaks.size} pulses found where the median interval "
                      f"suggests {expected:.0f}; check the pulses before trusting the "
                      "intervals", QualityWarning, stacklevel=5)
    info = ReadInfo(kind="ppg", kind_decided_by=kind_decided_by, unit=None,
                    unit_decided_by=f"pulse peaks detected at {fs:g} Hz", fs_hz=fs,
                    column=column, extra=info_extra)
    return Recording.from_peak_times(peaks / fs, start=start, subject=subject, source=path,
                                     info=info)


def _is_pulse_label(label: str) -> bool:
    words = [w for w in re.split(r"[^a-z0-9]+", str(label).lower()) if w]
    return any(w.startswith(PULSE_WORDS) for w in words)


def pick_pulse_channel(labels: list[str]) -> int | None:
    """Index of the first channel whose label names a pulse wave, or None."""
    for k, lab in enumerate(labels):
        if _is_pulse_label(lab):
            return k
    return None


def read_ppg_table(path: str, *, column, fs_hz: float | None, detector: str,
                   subject: str | None, sep: str | None, decimal: str | None) -> Recording:
    """A raw pulse wave from a text column: the given ``column``, else the one numeric column
    or the one whose name says pulse (``ppg``, ``pleth``, ``bvp``, ``abp``...)."""
    from ._tabular import _resolve_column
    from ._text import column_type, load_table, parse_numbers

    table = load_table(path, sep=sep, decimal=decimal)
    if column is not None:
        k = _resolve_column(table, column, what="column")
        why = f"column {table.names[k]!r} given"
    else:
        numeric = [j for j in range(len(table.names)) if column_type(table, j) == "number"]
        named = [j for j in numeric if table.named and _is_pulse_label(table.names[j])]
        if named:
            k, why = named[0], f"column name {table.names[named[0]]!r}"
        elif len(numeric) == 1:
            k, why = numeric[0], "the only numeric column"
        else:
            raise InputError(f"found {len(numeric)} numeric columns and none named as a pulse "
                             f"wave; columns: {table.names}", path=table.path,
                             hint="pass column=, a name or 0-based index")
    values = parse_numbers(table, k, what="a pulse-wave sample value")
    extra: dict[str, Any] = dict(table.extra)
    extra["column_chosen_by"] = why
    return recording_from_pulse_signal(values, fs_hz=fs_hz, path=table.path, detector=detector,
                                       subject=subject, start=None, kind_decided_by="given",
                                       column=table.names[k], extra=extra)
