"""Compiled loops (numba) for the batched path of `rrkit.analyze`: SampEn counts and DFA
fluctuations of many windows in one call.

`resample_many` is `rrkit.metrics.spectral.resample` (the not-a-knot cubic spline of
`rrkit.metrics._spline`) for many series, with the tridiagonal system solved by the Thomas
algorithm instead of LAPACK's pivoting solver (the same values up to float rounding).

Imported only by `rrkit.metrics._batch`, and only for batches of many windows, so a single
``rrkit.metrics`` call never pays numba's import and compile time. The loops compute exactly
the quantities of the numpy implementations in `rrkit.metrics.nonlinear` (the test suite checks
both agree): SampEn's integer match counts are identical; DFA's box sums come from the same
prefix sums, accumulated in a different order (float rounding only).
"""

from __future__ import annotations

import numba
import numpy as np

__all__ = ["SUM_KEYS", "dfa_fluctuations_many", "resample_many", "sampen_counts_many",
           "sums_many", "tinn_many"]


#: Columns of `sums_many`: the sums of `rrkit.metrics.time._sums`, then the centred sum of
#: squares of the Poincaré sums RR[n+1] + RR[n] (for SD2).
SUM_KEYS = ("mean", "median", "min", "max", "ss_dev", "n_diff", "ss_diff", "ssc_diff", "nn50",
            "nn20", "hist_max", "ssc_sum")


@numba.njit(cache=True, nogil=True)
def sums_many(x, offsets, sizes, bin_ms):  # pragma: no cover - compiled
    """Per window (n >= 2): the columns of `SUM_KEYS`."""
    nw = sizes.size
    out = np.full((nw, 12), np.nan)
    for w in range(nw):
        o = offsets[w]
        n = sizes[w]
        v = x[o:o + n]
        tot = 0.0
        lo = v[0]
        hi = v[0]
        for i in range(n):
            tot += v[i]
            lo = min(lo, v[i])
            hi = max(hi, v[i])
        mean = tot / n
        ss = 0.0
        for i in range(n):
            ss += (v[i] - mean) ** 2
        nd = n - 1
        sd = 0.0
        ssum = 0.0
        for i in range(nd):
            sd += v[i + 1] - v[i]
            ssum += v[i + 1] + v[i]
        md = sd / nd
        ms = ssum / nd
        ssd = 0.0
        sscd = 0.0
        sscs = 0.0
        c50 = 0
        c20 = 0
        for i in range(nd):
            d = v[i + 1] - v[i]
            ssd += d * d
            sscd += (d - md) ** 2
            sscs += (v[i + 1] + v[i] - ms) ** 2
            if abs(d) > 50.0:
                c50 += 1
            if abs(d) > 20.0:
                c20 += 1
        b0 = np.int64(lo // bin_ms)
        counts = np.zeros(np.int64(hi // bin_ms) - b0 + 1, np.int64)
        for i in range(n):
            counts[np.int64(v[i] // bin_ms) - b0] += 1
        out[w, 0] = mean
        out[w, 1] = np.median(v)
        out[w, 2] = lo
        out[w, 3] = hi
        out[w, 4] = ss
        out[w, 5] = nd
        out[w, 6] = ssd
        out[w, 7] = sscd
        out[w, 8] = c50
        out[w, 9] = c20
        out[w, 10] = counts.max()
        out[w, 11] = sscs
    return out


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
        order = np.argsort(x[o:o + nt])
        # the template points in sorted order, contiguous: cols[k, ii] = x[start of ii + k]
        cols = np.empty((m + 1, nt))
        for ii in range(nt):
            i = o + order[ii]
            for k in range(m + 1):
                cols[k, ii] = x[i + k]
        a = 0
        b = 0
        for ii in range(nt):
            x0 = cols[0, ii]
            for jj in range(ii + 1, nt):
                if cols[0, jj] - x0 > rw:
                    break
                ok = True
                for k in range(1, m):
                    if abs(cols[k, jj] - cols[k, ii]) > rw:
                        ok = False
                        break
                if ok:
                    b += 1
                    if abs(cols[m, jj] - cols[m, ii]) <= rw:
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
        # profile and the prefix sums of y, k y and y**2 (k the index in the window)
        c_y = np.zeros(n + 1)
        c_ky = np.zeros(n + 1)
        c_yy = np.zeros(n + 1)
        acc = 0.0
        for i in range(n):
            acc += x[o + i] - mean
            c_y[i + 1] = c_y[i] + acc
            c_ky[i + 1] = c_ky[i] + i * acc
            c_yy[i + 1] = c_yy[i] + acc * acc
        for si in range(ns):
            s = scales[si]
            nb = n // s
            nbox[w, si] = nb
            if nb == 0:
                continue
            stt = s * (s * s - 1.0) / 12.0
            total = 0.0
            for j in range(nb):
                a = j * s
                e = a + s
                sy = c_y[e] - c_y[a]
                sky = c_ky[e] - c_ky[a]
                syy = c_yy[e] - c_yy[a]
                sty = sky - (a + (s - 1) / 2.0) * sy
                ss = syy - sy * sy / s - sty * sty / stt
                if ss > 0.0:
                    total += ss / s
            fl[w, si] = np.sqrt(total / nb)
    return fl, nbox


@numba.njit(cache=True, nogil=True)
def resample_many(t, y, offsets, sizes, fs, out, out_offsets, out_sizes):  # pragma: no cover
    """Not-a-knot cubic spline of each series ``(t, y)[o:o+n]`` (n >= 4) evaluated at
    ``t0 + k / fs`` for ``k < out_sizes[w]``, written to ``out[out_offsets[w]:]``."""
    nw = sizes.size
    for w in range(nw):
        o = offsets[w]
        n = sizes[w]
        x = t[o:o + n]
        v = y[o:o + n]
        dx = np.empty(n - 1)
        sl = np.empty(n - 1)
        for i in range(n - 1):
            dx[i] = x[i + 1] - x[i]
            sl[i] = (v[i + 1] - v[i]) / dx[i]
        diag = np.empty(n)
        lower = np.empty(n - 1)
        upper = np.empty(n - 1)
        b = np.empty(n)
        for i in range(1, n - 1):
            diag[i] = 2.0 * (dx[i - 1] + dx[i])
            upper[i] = dx[i - 1]
            lower[i - 1] = dx[i]
            b[i] = 3.0 * (dx[i] * sl[i - 1] + dx[i - 1] * sl[i])
        d0 = x[2] - x[0]
        diag[0] = dx[1]
        upper[0] = d0
        b[0] = ((dx[0] + 2.0 * d0) * dx[1] * sl[0] + dx[0] ** 2 * sl[1]) / d0
        d1 = x[n - 1] - x[n - 3]
        diag[n - 1] = dx[n - 3]
        lower[n - 2] = d1
        b[n - 1] = (dx[n - 2] ** 2 * sl[n - 3]
                    + (2.0 * d1 + dx[n - 2]) * dx[n - 3] * sl[n - 2]) / d1
        for i in range(1, n):  # Thomas algorithm
            f = lower[i - 1] / diag[i - 1]
            diag[i] -= f * upper[i - 1]
            b[i] -= f * b[i - 1]
        s = np.empty(n)
        s[n - 1] = b[n - 1] / diag[n - 1]
        for i in range(n - 2, -1, -1):
            s[i] = (b[i] - upper[i] * s[i + 1]) / diag[i]
        oo = out_offsets[w]
        i = 0
        x0 = x[0]
        for k in range(out_sizes[w]):
            g = x0 + k / fs
            while i < n - 2 and x[i + 1] <= g:
                i += 1
            h = dx[i]
            tt = g - x[i]
            m = sl[i]
            c2 = (3.0 * m - 2.0 * s[i] - s[i + 1]) / h
            c3 = (s[i] + s[i + 1] - 2.0 * m) / (h * h)
            out[oo + k] = v[i] + tt * (s[i] + tt * (c2 + tt * c3))


@numba.njit(cache=True, nogil=True)
def tinn_many(x, offsets, sizes, bin_ms):  # pragma: no cover - compiled
    """`rrkit.metrics.time.tinn` of each window (NaN with fewer than 3 histogram bins)."""
    nw = sizes.size
    out = np.full(nw, np.nan)
    for w in range(nw):
        o = offsets[w]
        n = sizes[w]
        if n < 3:
            continue
        v = x[o:o + n]
        lo = np.int64(v[0] // bin_ms)
        hi = lo
        for i in range(n):
            b = np.int64(v[i] // bin_ms)
            lo = min(lo, b)
            hi = max(hi, b)
        nb = hi - lo + 1
        if nb < 3:
            continue
        c = np.zeros(nb)
        for i in range(n):
            c[np.int64(v[i] // bin_ms) - lo] += 1.0
        xm = 0
        for j in range(nb):
            if c[j] > c[xm]:
                xm = j
        y = c[xm]
        xc = xm + 0.5
        best_l = np.inf
        foot = 0
        for f in range(xm + 1):
            err = 0.0
            for j in range(xm + 1):
                q = y * ((j + 0.5) - f) / (xc - f)
                if q < 0.0:
                    q = 0.0
                err += (c[j] - q) ** 2
            if err < best_l:
                best_l = err
                foot = f
        best_r = np.inf
        end = xm + 1
        for e in range(xm + 1, nb + 1):
            err = 0.0
            for j in range(xm + 1, nb):
                q = y * (e - (j + 0.5)) / (e - xc)
                if q < 0.0:
                    q = 0.0
                err += (c[j] - q) ** 2
            if err < best_r:
                best_r = err
                end = e
        out[w] = (end - foot) * bin_ms
    return out
