"""Cubic-spline resampling on a uniform grid, without per-call overhead.

The same interpolant as ``scipy.interpolate.CubicSpline(x, y, bc_type="not-a-knot")`` (the test
suite checks it to 1e-9), computed with one LAPACK tridiagonal solve (``dgtsv``) for the knot
slopes and a vectorised Hermite evaluation. `spline_many` does many series at once: their
systems laid end to end form one block-diagonal tridiagonal system (the couplings between
blocks are zero, so the solve of each block is that of its own system), solved by one call.
"""

from __future__ import annotations

import numpy as np

__all__ = ["spline_many", "spline_on_grid"]


def _scipy_spline(x, y, grid):
    from scipy.interpolate import CubicSpline

    return CubicSpline(x, y, bc_type="not-a-knot")(grid)


def spline_on_grid(x: np.ndarray, y: np.ndarray, grid: np.ndarray) -> np.ndarray:
    """Not-a-knot cubic spline through ``(x, y)`` evaluated at ``grid`` (inside ``[x0, xn]``)."""
    if x.size < 4:  # scipy's special cases (a parabola or a line through few points)
        return _scipy_spline(x, y, grid)
    return spline_many([x], [y], [grid])[0]


def spline_many(xs: list[np.ndarray], ys: list[np.ndarray], grids: list[np.ndarray]
                ) -> list[np.ndarray]:
    """`spline_on_grid` of every series ``(xs[k], ys[k])`` at ``grids[k]`` (each with at least
    4 knots), from one tridiagonal solve and one vectorised evaluation."""
    from scipy.linalg.lapack import dgtsv

    sizes = np.array([v.size for v in xs], dtype=np.int64)
    if sizes.size == 0:
        return []
    if sizes.min() < 4:
        raise ValueError("spline_many needs at least 4 knots per series")
    off = np.concatenate(([0], np.cumsum(sizes)))
    x = np.concatenate(xs)
    y = np.concatenate(ys)
    n = x.size
    dx = x[1:] - x[:-1]
    slope = (y[1:] - y[:-1]) / dx
    first = off[:-1]
    last = off[1:] - 1
    # tridiagonal system for the slopes s at the knots (as scipy's CubicSpline builds it);
    # entries that would couple two series are 0
    diag = np.empty(n)
    lower = np.zeros(n - 1)   # A[i + 1, i]
    upper = np.zeros(n - 1)   # A[i, i + 1]
    b = np.empty(n)
    inner = np.ones(n, bool)
    inner[first] = False
    inner[last] = False
    i = np.flatnonzero(inner)
    diag[i] = 2.0 * (dx[i - 1] + dx[i])
    upper[i] = dx[i - 1]
    lower[i - 1] = dx[i]
    b[i] = 3.0 * (dx[i] * slope[i - 1] + dx[i - 1] * slope[i])
    f = first
    d0 = x[f + 2] - x[f]
    diag[f] = dx[f + 1]
    upper[f] = d0
    b[f] = ((dx[f] + 2.0 * d0) * dx[f + 1] * slope[f] + dx[f] ** 2 * slope[f + 1]) / d0
    z = last
    d1 = x[z] - x[z - 2]
    diag[z] = dx[z - 2]
    lower[z - 1] = d1
    b[z] = (dx[z - 1] ** 2 * slope[z - 2] + (2.0 * d1 + dx[z - 1]) * dx[z - 2] * slope[z - 1]) / d1
    _, _, _, s, info = dgtsv(lower, diag, upper, b, overwrite_dl=1, overwrite_d=1,
                             overwrite_du=1, overwrite_b=1)
    if info != 0:  # singular system: never for increasing knots, but stay correct
        return [_scipy_spline(xv, yv, g) for xv, yv, g in zip(xs, ys, grids, strict=True)]
    # interval of every grid point inside its own series, then the Hermite form
    grid = np.concatenate(grids)
    if n < 2 or bool((dx > 0).all()):
        # the series follow each other in time (windows that do not overlap): one search over
        # all knots finds the same interval as a search inside the series, since every grid
        # point lies between its own series' first knot and the next series' first knot
        gsize = np.array([g.size for g in grids], dtype=np.int64)
        idx = np.clip(np.searchsorted(x, grid, side="right") - 1, np.repeat(first, gsize),
                      np.repeat(last - 1, gsize))
    else:
        idx = np.concatenate([
            o + np.clip(np.searchsorted(xv, g, side="right") - 1, 0, xv.size - 2)
            for o, xv, g in zip(first.tolist(), xs, grids, strict=True)])
    h = dx[idx]
    t = grid - x[idx]
    m = slope[idx]
    s0 = s[idx]
    s1 = s[idx + 1]
    c2 = (3.0 * m - 2.0 * s0 - s1) / h
    c3 = (s0 + s1 - 2.0 * m) / (h * h)
    out = y[idx] + t * (s0 + t * (c2 + t * c3))
    return np.split(out, np.cumsum([g.size for g in grids])[:-1])
