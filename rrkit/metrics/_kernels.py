"""Compiled loops (numba) for the batched path of `rrkit.analyze`: SampEn counts and DFA
fluctuations of many windows in one call.

Imported only by `rrkit.metrics._batch`, and only for batches of many windows, so a single
``rrkit.metrics`` call never pays numba's import and compile time. The loops compute exactly
the quantities of the numpy implementations in `rrkit.metrics.nonlinear` (the test suite checks
both agree): SampEn's integer match counts are identical; DFA's sums are taken box by box
instead of from cumulative sums, which differs only by float rounding.
"""

from __future__ import annotations

import numba
import numpy as np

__all__ = ["dfa_fluctuations_many", "sampen_counts_many"]


@numba.njit(cache=True, nogil=True)
def sampen_counts_many(x, offsets, sizes, m, r):  # pragma: no cover - compiled
    """Pairs of templates within ``r[w]`` at lengths ``m`` (b) and ``m + 1`` (a) per window.

    Templates start at the first ``size - m`` points of each window; pairs are counted once,
    self-matches excluded, Chebyshev distance ``<= r``. Candidates come from the templates
    sorted by their first point: for each template the scan stops at the first later template
    whose first point is more than ``r`` away (floating subtraction is monotone, so the stop is
    exact).
    """
    nw = sizes.size
    a_out = np.zeros(nw, np.int64)
    b_out = np.zeros(nw, np.int64)
    for w in range(nw):
        o = offsets[w]
        nt = sizes[w] - m
        if nt < 2:
            continue
        rw = r[w]
        first = x[o:o + nt]
        order = np.argsort(first, kind="mergesort")
        a = 0
        b = 0
        for ii in range(nt):
            i = o + order[ii]
            xi = x[i]
            for jj in range(ii + 1, nt):
                j = o + order[jj]
                if x[j] - xi > rw:
                    break
                ok = True
                for k in range(1, m):
                    if abs(x[i + k] - x[j + k]) > rw:
                        ok = False
                        break
                if ok:
                    b += 1
                    if abs(x[i + m] - x[j + m]) <= rw:
                        a += 1
        a_out[w] = a
        b_out[w] = b
    return a_out, b_out


@numba.njit(cache=True, nogil=True)
def dfa_fluctuations_many(x, offsets, sizes, scales):  # pragma: no cover - compiled
    """DFA ``F(n)`` per window and box size (non-overlapping boxes from each window's start,
    order-1 detrending) and the number of boxes; NaN where no box fits."""
    nw = sizes.size
    ns = scales.size
    fl = np.full((nw, ns), np.nan)
    nbox = np.zeros((nw, ns), np.int64)
    for w in range(nw):
        o = offsets[w]
        n = sizes[w]
        if n == 0:
            continue
        mean = 0.0
        for i in range(n):
            mean += x[o + i]
        mean /= n
        prof = np.empty(n)
        acc = 0.0
        for i in range(n):
            acc += x[o + i] - mean
            prof[i] = acc
        for si in range(ns):
            s = scales[si]
            nb = n // s
            nbox[w, si] = nb
            if nb == 0:
                continue
            c = (s - 1) / 2.0
            stt = s * (s * s - 1.0) / 12.0
            total = 0.0
            for j in range(nb):
                base = j * s
                sy = 0.0
                for k in range(s):
                    sy += prof[base + k]
                ym = sy / s
                syy = 0.0
                sty = 0.0
                for k in range(s):
                    d = prof[base + k] - ym
                    syy += d * d
                    sty += (k - c) * d
                ss = syy - sty * sty / stt
                if ss > 0.0:
                    total += ss / s
            fl[w, si] = np.sqrt(total / nb)
    return fl, nbox
