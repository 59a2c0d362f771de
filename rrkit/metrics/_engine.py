"""The metric engine: many windows of NN intervals -> one `MetricsResult` per window.

Every metric has one kernel that works on many windows at once (`rrkit.metrics._ragged`:
values plus offsets): `time.time_many` (sums, median, histogram, TINN), `nonlinear.nonlinear_many`
(Poincaré, DFA, SampEn counts) and `spectral.frequency_many` (Welch, Lomb-Scargle or AR spectra
and their band values). `rrkit.metrics` of one recording is a batch of one.

Entry points
------------
`compute_windows`
    Windows of one recording given by beat index ranges (what `rrkit.analyze` uses).
`metrics_many`
    One recording per window.

Both process the windows in chunks of at most `CHUNK_INTERVALS` NN intervals (a longer window
is a chunk of its own), so memory grows with the chunk, not with the recording: the kernels'
temporaries are a few tens of bytes per interval of the chunk (the SampEn and TINN blocks are
bounded separately), and the results a few kB per window.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import numpy as np

from ._ragged import Ragged
from ._result import MetricsResult
from ._settings import MetricsSettings
from .nonlinear import nonlinear_many, nonlinear_values
from .spectral import frequency_many
from .time import time_many, time_values

__all__ = ["CHUNK_INTERVALS", "compute_batch", "compute_windows", "metrics_many"]

#: Most NN intervals per chunk of windows (bounds the memory of the kernels).
CHUNK_INTERVALS = 1 << 16


def compute_batch(rg: Ragged, s: MetricsSettings, *, breathing_hz=None,
                  clean_settings=None) -> list:
    """`MetricsResult` of every window of the batch ``rg`` (no chunking: see
    `compute_windows`)."""
    nw = rg.n_windows
    breathing_hz = [None] * nw if breathing_hz is None else list(breathing_hz)
    clean_settings = [None] * nw if clean_settings is None else list(clean_settings)
    values: list[dict[str, float]] = [{} for _ in range(nw)]
    notes: list[list[str]] = [[] for _ in range(nw)]
    if "time" in s.domains:
        t = time_many(rg)
        cols = {k: v.tolist() for k, v in t.items()}
        nb = rg.n_beats.tolist()
        dur = rg.duration_s.tolist()
        for i in range(nw):
            v, n = time_values({k: c[i] for k, c in cols.items()}, n_beats=nb[i],
                               duration_s=dur[i])
            values[i].update(v)
            notes[i] += n
    if "frequency" in s.domains:
        for i, (v, n) in enumerate(frequency_many(rg, s, breathing_hz)):
            values[i].update(v)
            notes[i] += n
    if "nonlinear" in s.domains:
        nl = nonlinear_many(rg, s)
        cols = {k: v.tolist() for k, v in nl.items()}
        for i in range(nw):
            v, n = nonlinear_values({k: c[i] for k, c in cols.items()}, s)
            values[i].update(v)
            notes[i] += n
    return [MetricsResult(values[i], notes=notes[i], settings=s, clean_settings=clean_settings[i])
            for i in range(nw)]


def _chunks(n_intervals: np.ndarray) -> list[slice]:
    """Consecutive windows with at most `CHUNK_INTERVALS` intervals together."""
    out: list[slice] = []
    cum = np.concatenate(([0], np.cumsum(n_intervals)))
    i = 0
    n = n_intervals.size
    while i < n:
        j = int(np.searchsorted(cum, cum[i] + CHUNK_INTERVALS, side="right")) - 1
        j = min(max(j, i + 1), n)
        out.append(slice(i, j))
        i = j
    return out


def compute_windows(rec, first, stop, s: MetricsSettings, *,
                    breathing_hz: Sequence[float | None] | None = None,
                    clean_settings: Any = None) -> list:
    """Metrics of many windows of one (cleaned) recording.

    Parameters
    ----------
    rec : Recording
        The NN intervals (gaps are never used and no successive difference crosses one).
    first, stop : array of int
        Window ``i`` holds beats ``first[i]`` to ``stop[i] - 1`` and the intervals between
        them (what ``rec.slice_beats(first[i], stop[i])`` holds); fewer than two beats is an
        empty window.
    s : MetricsSettings
    breathing_hz : sequence of float or None, optional
        Stated breathing rate per window (Hz).
    clean_settings : object, optional
        Carried into every result.

    Returns
    -------
    list of MetricsResult
        One per window, equal to ``rrkit.metrics(rec.slice_beats(a, b), settings=s)``.
    """
    first = np.asarray(first, dtype=np.int64)
    stop = np.asarray(stop, dtype=np.int64)
    nw = first.size
    breathing_hz = [None] * nw if breathing_hz is None else list(breathing_hz)
    n_int = np.maximum(stop - first - 1, 0)
    out: list = []
    for sl in _chunks(n_int):
        rg = Ragged.from_ranges(rec.beat_times_s, rec.rr_ms, rec.gaps, first[sl], stop[sl])
        out += compute_batch(rg, s, breathing_hz=breathing_hz[sl],
                             clean_settings=[clean_settings] * rg.n_windows)
    return out


def metrics_many(parts: Sequence, s: MetricsSettings, *,
                 breathing_hz: Sequence[float | None] | None = None,
                 clean_settings: Sequence[Any] | None = None) -> list:
    """Metrics of one recording per window (``parts``), in chunks of `CHUNK_INTERVALS`.

    Returns
    -------
    list of MetricsResult
        Equal to ``[rrkit.metrics(p, settings=s, breathing_hz=b) for p, b in ...]``.
    """
    parts = list(parts)
    nw = len(parts)
    breathing_hz = [None] * nw if breathing_hz is None else list(breathing_hz)
    clean_settings = [None] * nw if clean_settings is None else list(clean_settings)
    n_int = np.array([p.rr_ms.size for p in parts], dtype=np.int64)
    out: list = []
    for sl in _chunks(n_int):
        rg = Ragged.from_recordings(parts[sl])
        out += compute_batch(rg, s, breathing_hz=breathing_hz[sl],
                             clean_settings=clean_settings[sl])
    return out
