"""Centred moving quantiles without per-beat Python loops.

Interior positions use `scipy.ndimage.rank_filter` (C, exact order statistics); the first and last
half-windows, where the window shrinks to the beats that exist (as a centred window with
``min_periods=1`` does), are computed together from one NaN-padded strided view. Quantiles use
linear interpolation between order statistics (numpy's default ``"linear"`` method).
"""

from __future__ import annotations

import numpy as np
from numpy.lib.stride_tricks import sliding_window_view
from scipy import ndimage

__all__ = ["rolling_median", "rolling_quantiles"]


def rolling_quantiles(x: np.ndarray, window: int, qs: tuple[float, ...]) -> list[np.ndarray]:
    """Centred moving quantiles of ``x`` over ``window`` (odd) samples, shrinking at the ends.

    Parameters
    ----------
    x : numpy.ndarray, shape (n,)
        Finite values.
    window : int
        Odd window length in samples.
    qs : tuple of float
        Quantiles in [0, 1].

    Returns
    -------
    list of numpy.ndarray, each shape (n,)
    """
    x = np.asarray(x, dtype=np.float64)
    n = x.size
    h = window // 2
    out = [np.empty(n) for _ in qs]
    if n == 0:
        return out
    if n > 2 * h:
        for q, arr in zip(qs, out, strict=True):
            pos = q * (window - 1)
            lo = int(np.floor(pos))
            frac = pos - lo
            a = ndimage.rank_filter(x, lo, size=window, mode="nearest")
            if frac > 0:
                b = ndimage.rank_filter(x, lo + 1, size=window, mode="nearest")
                a = a + frac * (b - a)
            arr[:] = a
        edge = np.r_[0:h, n - h:n]
    else:
        edge = np.arange(n)
    if edge.size:
        # the windows that run past an end, padded with NaN; sorting puts the NaN last, so the
        # c valid values of a row are its first c entries
        padded = np.concatenate((np.full(h, np.nan), x, np.full(h, np.nan)))
        rows = np.sort(sliding_window_view(padded, window)[edge], axis=1)
        c = np.count_nonzero(~np.isnan(rows), axis=1)
        r = np.arange(edge.size)
        for q, arr in zip(qs, out, strict=True):
            pos = q * (c - 1)
            lo = np.floor(pos).astype(int)
            hi = np.minimum(lo + 1, c - 1)
            frac = pos - lo
            arr[edge] = rows[r, lo] + frac * (rows[r, hi] - rows[r, lo])
    return out


def rolling_median(x: np.ndarray, window: int) -> np.ndarray:
    """Centred moving median over ``window`` (odd) samples, shrinking at the ends."""
    return rolling_quantiles(x, window, (0.5,))[0]
