"""Benjamini-Hochberg q-values (the one implementation, used by fits and screens)."""

from __future__ import annotations

import numpy as np

from ..errors import InputError

__all__ = ["bh_qvalues"]


def bh_qvalues(p) -> np.ndarray:
    """Benjamini-Hochberg adjusted p-values (q-values) of the step-up procedure.

    ``q_(i) = min_{j >= i} min(1, m p_(j) / j)`` for the sorted p-values; rejecting every
    hypothesis with ``q <= alpha`` controls the false discovery rate at ``alpha`` for independent
    (or positively dependent) tests (Benjamini Y, Hochberg Y 1995, J R Stat Soc B 57:289-300,
    doi:10.1111/j.2517-6161.1995.tb02031.x).

    Parameters
    ----------
    p : array_like
        p-values in [0, 1]; NaN stays NaN and does not count in ``m``.

    Examples
    --------
    >>> bh_qvalues([0.01, 0.04, 0.03]).round(3).tolist()
    [0.03, 0.04, 0.04]
    """
    p = np.asarray(p, dtype=float)
    out = np.full(p.shape, np.nan)
    ok = np.isfinite(p)
    if np.any((p[ok] < 0) | (p[ok] > 1)):
        raise InputError("p-values must lie in [0, 1]")
    v = p[ok]
    m = v.size
    if m == 0:
        return out
    order = np.argsort(v, kind="stable")
    scaled = v[order] * m / np.arange(1, m + 1)
    q = np.minimum.accumulate(scaled[::-1])[::-1]
    res = np.empty(m)
    res[order] = np.minimum(q, 1.0)
    out[ok] = res
    return out
