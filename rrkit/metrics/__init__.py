"""HRV metrics in the time, frequency and nonlinear domains.

`metrics` turns a `Recording` (or a `CleanResult`) into a `MetricsResult`: a ``dict`` of floats
under fixed key names, with ``.notes`` saying why any value is NaN and ``.settings`` holding
everything that decided the values. `spectrum` returns the power spectrum for plots. The numeric
kernels (`time`, `spectral`, `nonlinear`) are pure functions of numpy arrays, each working on
many windows at once (`rrkit.metrics._ragged`); `compute_windows` and `metrics_many` are the
entry points for many windows (`rrkit.analyze` uses `compute_windows`), and `metrics` is a batch
of one window.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from types import MappingProxyType
from typing import Any

import numpy as np

from .._validation import check_range
from ..errors import InputError
from ..recording import Recording
from ._edr import ecg_breathing_hz
from ._engine import compute_batch, compute_windows, metrics_many
from ._ragged import Ragged
from ._result import MetricsResult
from ._settings import DOMAINS, PSD_METHODS, TASK_FORCE_BANDS, Bands, MetricsSettings
from .nonlinear import NONLINEAR_KEYS
from .spectral import FREQUENCY_KEYS, band_power, frequency_values_many, psd_many
from .time import TIME_KEYS

__all__ = [
    "ALL_KEYS",
    "DOMAINS",
    "FREQUENCY_KEYS",
    "NONLINEAR_KEYS",
    "PSD_METHODS",
    "TASK_FORCE_BANDS",
    "TIME_KEYS",
    "Bands",
    "MetricsResult",
    "MetricsSettings",
    "Spectrum",
    "ecg_breathing_hz",
    "compute_windows",
    "metrics",
    "metrics_many",
    "spectrum",
]

#: Every metric key, in table order.
ALL_KEYS = TIME_KEYS + FREQUENCY_KEYS + NONLINEAR_KEYS

_DOMAIN_KEYS = {"time": TIME_KEYS, "frequency": FREQUENCY_KEYS, "nonlinear": NONLINEAR_KEYS}


@dataclass(frozen=True, slots=True)
class Spectrum:
    """A power spectrum of NN intervals, for plots and band powers.

    Attributes
    ----------
    freqs_hz : numpy.ndarray
        Frequencies in Hz (uniform grid).
    psd_ms2_hz : numpy.ndarray
        One-sided power spectral density in ms^2/Hz.
    method : str
        ``"welch"``, ``"lomb"`` or ``"ar"``.
    df_hz : float
        Grid step in Hz (band powers are ``sum(psd) * df_hz`` over ``lo <= f < hi``).
    bands : Bands
        Band edges in Hz.
    band_powers_ms2 : Mapping[str, float]
        ``vlf``, ``lf``, ``hf`` and ``total`` powers in ms^2 (unaffected by the minimum lengths:
        check ``notes``).
    settings : MetricsSettings
    notes : tuple of str
    """

    freqs_hz: np.ndarray
    psd_ms2_hz: np.ndarray
    method: str
    df_hz: float
    bands: Bands
    band_powers_ms2: Any
    settings: MetricsSettings
    notes: tuple[str, ...] = field(default=())


def _as_recording(data: Any) -> tuple[Recording, Any]:
    if isinstance(data, Recording):
        return data, None
    rec = getattr(data, "recording", None)
    if isinstance(rec, Recording):  # a CleanResult: use the corrected recording
        return rec, getattr(data, "settings", None)
    raise InputError(f"data must be a Recording or a CleanResult; got {type(data).__name__}")


@lru_cache(maxsize=1)
def _default_settings() -> MetricsSettings:
    return MetricsSettings()


def merge_settings(settings, domains, psd, bands) -> MetricsSettings:
    """``settings`` (default `MetricsSettings()`) with ``domains``, ``psd``, ``bands`` applied."""
    if settings is None:
        settings = _default_settings()
    elif not isinstance(settings, MetricsSettings):
        raise InputError(f"settings must be a MetricsSettings; got {type(settings).__name__}")
    changes: dict[str, Any] = {}
    if domains is not None:
        changes["domains"] = (domains,) if isinstance(domains, str) else tuple(domains)
    if psd is not None:
        changes["psd"] = psd
    if bands is not None:
        changes["bands"] = Bands.coerce(bands)
    return settings.replace(**changes) if changes else settings


def metrics(
    data,
    *,
    domains=None,
    psd: str | None = None,
    bands=None,
    settings: MetricsSettings | None = None,
    breathing_hz: float | None = None,
) -> MetricsResult:
    """HRV metrics of a recording.

    Parameters
    ----------
    data : Recording or CleanResult
        The NN intervals (a `CleanResult` contributes its corrected ``.recording``). Intervals
        marked as gaps are never used and no successive difference crosses one.
    domains : sequence of str, optional
        Any of ``"time"``, ``"frequency"``, ``"nonlinear"`` (default: all three).
    psd : {"welch", "lomb", "ar"}, optional
        Spectral estimator (default ``"welch"``).
    bands : Bands or mapping, optional
        Band edges in Hz (default: Task Force 1996, VLF 0.0033-0.04, LF 0.04-0.15,
        HF 0.15-0.40, ``lo <= f < hi``).
    settings : MetricsSettings, optional
        Every other choice; ``domains``, ``psd`` and ``bands`` given here override its fields.
    breathing_hz : float, optional
        Breathing rate stated for the data (Hz); below the HF band it raises a note.

    Returns
    -------
    MetricsResult
        ``dict[str, float]`` with the keys of the requested domains (`TIME_KEYS`,
        `FREQUENCY_KEYS`, `NONLINEAR_KEYS`, in that order), ``.notes`` and ``.settings``.

    Notes
    -----
    Definitions, units and references of every key are in ``docs/metrics.md`` and in the
    docstrings of `rrkit.metrics.time.time_domain`, `rrkit.metrics.spectral.frequency_domain`
    and `rrkit.metrics.nonlinear.nonlinear_domain`. Too short a recording gives NaN with a note,
    never an exception.

    Examples
    --------
    >>> import rrkit
    >>> rec = rrkit.Recording.from_rr([800, 810, 790, 850, 820, 780, 900, 840])
    >>> m = rrkit.metrics(rec, domains=["time"])
    >>> round(m["rmssd_ms"], 4), round(m["sdnn_ms"], 4)
    (59.2814, 38.8909)
    """
    rec, clean_settings = _as_recording(data)
    s = merge_settings(settings, domains, psd, bands)
    if breathing_hz is not None:
        breathing_hz = check_range("breathing_hz", breathing_hz, low=0.0, low_inclusive=False,
                                   unit="Hz")
    return compute(rec, s, breathing_hz=breathing_hz, clean_settings=clean_settings)


def compute(rec: Recording, s: MetricsSettings, *, breathing_hz: float | None = None,
            clean_settings: Any = None) -> MetricsResult:
    """`metrics` after argument checks: ``rec`` and ``s`` as given (a batch of one window)."""
    rg = Ragged.from_recordings([rec])
    return compute_batch(rg, s, breathing_hz=[breathing_hz], clean_settings=[clean_settings])[0]


def spectrum(
    data,
    *,
    psd: str | None = None,
    bands=None,
    settings: MetricsSettings | None = None,
) -> Spectrum:
    """Power spectral density of the NN intervals (ms^2/Hz) on a uniform grid in Hz.

    Parameters
    ----------
    data : Recording or CleanResult
    psd : {"welch", "lomb", "ar"}, optional
        Estimator (default ``"welch"``).
    bands : Bands or mapping, optional
        Band edges in Hz (Task Force 1996 by default).
    settings : MetricsSettings, optional
        Resampling, detrending, Welch segments, AR order, minimum lengths.

    Returns
    -------
    Spectrum

    Raises
    ------
    InputError
        When no NN run lasts ``settings.min_hf_s`` (60 s by default).

    Examples
    --------
    >>> import numpy as np, rrkit
    >>> t = np.arange(300) * 1.0
    >>> rec = rrkit.Recording.from_rr(1000 + 30 * np.sin(2 * np.pi * 0.1 * t))
    >>> sp = rrkit.spectrum(rec)
    >>> round(float(sp.freqs_hz[sp.psd_ms2_hz.argmax()]), 2)
    0.1
    """
    rec, _ = _as_recording(data)
    s = merge_settings(settings, None, psd, bands)
    rg = Ragged.from_recordings([rec])
    ests = psd_many(rg, s)
    est = ests[0]
    notes = frequency_values_many(rg, ests, s, [None])[0][1]
    if est is None:
        raise InputError(
            f"no NN run of {rec!r} lasts {s.min_hf_s:g} s, the shortest a spectrum is "
            "computed from",
            hint="pass a longer recording or settings=MetricsSettings(min_hf_s=...)")
    b = s.bands
    powers = MappingProxyType({
        "vlf": band_power(est, b.vlf), "lf": band_power(est, b.lf), "hf": band_power(est, b.hf),
        "total": band_power(est, (b.vlf[0], b.hf[1])),
    })
    return Spectrum(est.freqs_hz, est.psd_ms2_hz, est.method, est.df_hz, b, powers, s, tuple(notes))
