"""Correction: split missed beats, merge extra beats, interpolate or drop the rest.

Everything is built with `numpy.repeat` over per-interval counts and values, so the corrected
series, its beat times and the map back to the input come out of a few array operations. Python
loops run only over gap-free segments (to collect their knots); the natural cubic splines of all
segments come from one call of the spline used by the spectral resampling
(`rrkit._spline.spline_many`).
"""

from __future__ import annotations

import logging

import numpy as np

from .._spline import spline_many
from ..recording import Recording
from ._detect import ECTOPIC, IMPLAUSIBLE, LONG, NORMAL, SHORT

__all__ = ["correct", "segments_of"]

log = logging.getLogger("rrkit")

_INTERPOLATED = (ECTOPIC, LONG, SHORT, IMPLAUSIBLE)

# A run of interpolated intervals keeps its span (the beats around it keep their times) when the
# spline values fill that span to within this fraction: the run then holds a misplaced or
# premature beat with a compensatory interval. Otherwise the values stand and later beats shift.
_ANCHOR_TOL = 0.10


def segments_of(gaps: np.ndarray) -> np.ndarray:
    """``(k, 2)`` array of ``[start, stop)`` interval ranges of the gap-free runs."""
    ok = ~np.asarray(gaps, bool)
    edges = np.flatnonzero(np.diff(np.concatenate(([False], ok, [False])).astype(np.int8)))
    return edges.reshape(-1, 2)


def correct(rec: Recording, codes: np.ndarray, merge_next: np.ndarray, n_parts: np.ndarray,
            strategy: str, *, max_rr_ms: float = np.inf
            ) -> tuple[Recording, np.ndarray, np.ndarray]:
    """Apply the correction.

    Parameters
    ----------
    rec : Recording
        Input recording (gaps are kept as they are).
    codes, merge_next, n_parts : numpy.ndarray, shape (rec.n_intervals,)
        Classification (see `Detection`), gap intervals coded normal.
    strategy : {"interpolate", "drop"}
    max_rr_ms : float
        Upper end of the plausible range: an implausible interval above it (a dropout hiding
        more beats than a missed beat may) becomes a gap under either strategy, so that no beats
        are invented and the time axis is kept.

    Returns
    -------
    corrected : Recording
    origin : numpy.ndarray of int, shape (corrected.n_intervals,)
    changed : numpy.ndarray of bool, shape (rec.n_intervals,)

    Notes
    -----
    Missed: the interval is split into ``n_parts`` equal parts (its beats stay where they are).
    Extra: the pair is merged into one interval (the spurious beat between them is removed).
    Interpolate: each run of consecutive ectopic/long/short/implausible intervals is replaced
    by values of a natural cubic spline through the normal intervals of the segment (value at the
    interval's mid-time, over beat time), evaluated at the run's evenly spaced mid-times. When
    the spline values fill the run's span to within 10% (a misplaced or premature beat whose
    compensatory interval restores the rhythm) the values are scaled to fill the span exactly, so
    the beats around the run keep their times. A lone long or short interval is replaced by the
    spline value: the beats after it shift by the change, and the drift is taken out again at the
    next recording gap (whose value absorbs it), so each segment keeps its start time.
    Drop: those intervals are kept as gaps in the corrected recording.
    Dropouts (implausible intervals longer than ``max_rr_ms``) are kept as gaps either way.
    """
    rr = rec.rr_ms
    t = rec.beat_times_s
    n = rr.size
    gaps = rec.gaps
    codes = np.asarray(codes)
    bad = np.isin(codes, _INTERPOLATED) & ~gaps
    changed = (codes != NORMAL) & ~gaps

    counts = np.asarray(n_parts, int).copy()
    values = rr / counts
    first = np.flatnonzero(merge_next)
    values[first] = rr[first] + rr[first + 1]
    counts[first + 1] = 0
    out_gap = gaps.copy()
    dropout = (codes == IMPLAUSIBLE) & (rr > max_rr_ms) & ~gaps
    if strategy == "drop":
        out_gap |= bad
    elif dropout.any():
        out_gap |= dropout
        bad = bad & ~dropout
    if strategy == "interpolate" and bad.any():
        filled, unfilled = _interpolate(rr, t, codes, bad, gaps)
        values[bad] = filled
        out_gap |= unfilled
        if unfilled.any():
            log.warning("%d interval(s) could not be interpolated (fewer than 2 normal intervals "
                        "in their segment) and were dropped as gaps", int(unfilled.sum()))
        values = _absorb_drift(values, counts, rr, gaps | dropout)

    origin = np.repeat(np.arange(n), counts)
    out_rr = np.repeat(values, counts)
    out_gaps = np.repeat(out_gap, counts)
    if n == 0 or (not changed.any() and np.array_equal(out_gaps, gaps)):
        return rec, origin, changed
    # untouched intervals keep their exact values; beat times follow from them (the rounding of
    # the cumulative sum stays far inside Recording's consistency tolerance)
    times = np.empty(out_rr.size + 1)
    times[0] = t[0]
    np.cumsum(out_rr / 1000.0, out=times[1:])
    times[1:] += t[0]
    sym = None
    if rec.beat_symbols is not None:
        # a corrected beat keeps the symbol of the input beat that starts its origin interval,
        # the last beat keeps the last symbol
        sym = np.append(rec.beat_symbols[origin], rec.beat_symbols[-1])
    out = Recording(times, out_rr, start=rec.start, subject=rec.subject, source=rec.source,
                    info=rec.info, gaps=out_gaps, beat_symbols=sym)
    return out, origin, changed


def _interpolate(rr, t, codes, bad, gaps):
    """Spline values for the ``bad`` intervals; also which of them could not be filled."""
    filled = np.empty(int(bad.sum()))
    unfilled = np.zeros(rr.size, bool)
    pos = np.flatnonzero(bad)
    mid = 0.5 * (t[:-1] + t[1:])
    # runs of consecutive bad intervals (never across a gap: gaps are not bad)
    starts = np.flatnonzero(np.diff(np.concatenate(([False], bad))).astype(bool) & bad)
    run_id = np.cumsum(np.isin(pos, starts)) - 1
    run_start = pos[np.isin(pos, starts)]
    run_len = np.bincount(run_id)
    run_end = run_start + run_len  # beat index closing the run
    span_s = t[run_end] - t[run_start]
    k = np.arange(pos.size) - np.repeat(np.cumsum(run_len) - run_len, run_len)
    x_eval = t[run_start][run_id] + (k + 0.5) * (span_s / run_len)[run_id]

    normal = (codes == NORMAL) & ~gaps
    xs, ys, grids, where = [], [], [], []
    for a, b in segments_of(gaps):
        sel = (pos >= a) & (pos < b)
        if not sel.any():
            continue
        ok = np.flatnonzero(normal[a:b]) + a
        if ok.size < 2:
            unfilled[pos[sel]] = True
            filled[sel] = rr[pos[sel]]
            continue
        x, y = mid[ok], rr[ok]
        xe = np.clip(x_eval[sel], x[0], x[-1])
        if ok.size > 2:
            xs.append(x)
            ys.append(y)
            grids.append(xe)
            where.append(sel)
        else:
            filled[sel] = np.interp(xe, x, y)
    for sel, values in zip(where, spline_many(xs, ys, grids, bc_type="natural"), strict=True):
        filled[sel] = values
    # never produce a non-positive interval from spline overshoot
    filled = np.maximum(filled, 1.0)
    # anchor runs whose span holds as many intervals as they have
    sums = np.bincount(run_id, weights=filled)
    anchored = (run_len >= 2) & (np.abs(span_s * 1000.0 / sums - 1.0) <= _ANCHOR_TOL)
    scale = np.where(anchored, span_s * 1000.0 / sums, 1.0)
    filled = filled * scale[run_id]
    return filled, unfilled


def _absorb_drift(values, counts, rr, gaps):
    """Give each recording gap the value that puts the next segment back at its input time."""
    g = np.flatnonzero(gaps)
    if g.size == 0:
        return values
    delta = values * counts - rr  # ms each input interval gained (+) or lost (-)
    delta[gaps] = 0.0
    cs = np.cumsum(delta)
    before = cs[g] - np.concatenate(([0.0], cs[g[:-1]]))
    new = rr[g] - before
    out = values.copy()
    out[g] = np.where(new > 0, new, rr[g])
    return out
