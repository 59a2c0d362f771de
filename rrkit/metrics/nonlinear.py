"""Nonlinear HRV metrics: Poincaré plot, detrended fluctuation analysis, sample entropy.

Pure functions of NN-interval runs (a list of 1-D float arrays in ms, split at gaps). Nothing
here pairs two intervals across a gap: Poincaré pairs, DFA boxes and SampEn templates all lie
inside one run; statistics over them are pooled.

References
----------
Brennan M, Palaniswami M, Kamen P (2001). Do existing measures of Poincaré plot geometry reflect
nonlinear features of heart rate variability? IEEE Trans Biomed Eng 48(11):1342-1347.
doi:10.1109/10.959330
Peng C-K, Havlin S, Stanley HE, Goldberger AL (1995). Quantification of scaling exponents and
crossover phenomena in nonstationary heartbeat time series. Chaos 5(1):82-87.
doi:10.1063/1.166141
Richman JS, Moorman JR (2000). Physiological time-series analysis using approximate entropy and
sample entropy. Am J Physiol Heart Circ Physiol 278(6):H2039-H2049.
doi:10.1152/ajpheart.2000.278.6.H2039
"""

from __future__ import annotations

import math
from functools import lru_cache

import numpy as np
from scipy.spatial import cKDTree

from ._settings import MetricsSettings

__all__ = [
    "NONLINEAR_KEYS",
    "dfa_alpha",
    "dfa_alphas",
    "dfa_fluctuations",
    "nonlinear_domain",
    "poincare",
    "sample_entropy",
]

NONLINEAR_KEYS = ("sd1_ms", "sd2_ms", "sd1_sd2", "dfa_alpha1", "dfa_alpha2", "sampen")

_NAN = float("nan")


def poincare(segments: list[np.ndarray]) -> tuple[float, float]:
    """SD1 and SD2 (ms) of the Poincaré plot of successive NN pairs inside each run.

    ``SD1 = SD((RR[n+1] - RR[n]) / sqrt 2)`` and ``SD2 = SD((RR[n+1] + RR[n]) / sqrt 2)``, both
    with ddof=1 (Brennan et al. 2001). NaN with fewer than two pairs.
    """
    runs = [s for s in segments if s.size > 1]
    if not runs:
        return _NAN, _NAN
    if len(runs) == 1:
        x = runs[0]
        diff, summ = x[1:] - x[:-1], x[1:] + x[:-1]
    else:
        diff = np.concatenate([s[1:] - s[:-1] for s in runs])
        summ = np.concatenate([s[1:] + s[:-1] for s in runs])
    k = diff.size
    if k < 2:
        return _NAN, _NAN
    dc = diff - float(diff.sum()) / k
    sc = summ - float(summ.sum()) / k
    # SD(v / sqrt 2, ddof=1) = sqrt(sum((v - mean)**2) / (2 (k - 1)))
    return math.sqrt(float(dc @ dc) / (2.0 * (k - 1))), math.sqrt(float(sc @ sc) / (2.0 * (k - 1)))


@lru_cache(maxsize=512)
def _boxes(lengths: tuple[int, ...], scales: tuple[int, ...]):
    """Every non-overlapping box of the runs laid end to end: start, end, scale index, size,
    centre and ``sum (k - centre)**2``; plus the box count per scale. Cached by run lengths."""
    sc = np.asarray(scales, dtype=np.int64)
    starts, which = [], []
    offset = 0
    for n in lengths:
        c = n // sc
        total = int(c.sum())
        if total:
            idx = np.repeat(np.arange(sc.size), c)
            j = np.arange(total) - np.repeat(np.cumsum(c) - c, c)
            starts.append(offset + j * sc[idx])
            which.append(idx)
        offset += n
    if starts:
        start = np.concatenate(starts)
        idx = np.concatenate(which)
    else:
        start = np.zeros(0, np.int64)
        idx = np.zeros(0, np.int64)
    size = sc[idx].astype(float)
    out = (start, start + sc[idx], idx, size, start + (size - 1.0) / 2.0,
           size * (size * size - 1.0) / 12.0, np.bincount(idx, minlength=sc.size))
    for arr in out:
        arr.flags.writeable = False
    return out


def dfa_fluctuations(segments: list[np.ndarray], scales) -> tuple[np.ndarray, np.ndarray]:
    """DFA fluctuation ``F(n)`` for each box size ``n`` in ``scales`` (beats).

    Notes
    -----
    Order-1 DFA (Peng et al. 1995): the profile ``y_k = sum_{i<=k} (RR_i - mean RR)`` of each run
    is cut into non-overlapping boxes of ``n`` beats from the run's start (a remainder shorter
    than ``n`` at the end is not used, as in Peng et al.); a least-squares line is removed in
    every box and ``F(n) = sqrt(mean over boxes of the mean squared residual)``. The residuals of
    every box at every scale come at once from cumulative sums of ``y``, ``k y`` and ``y**2``.

    Returns
    -------
    fluct : numpy.ndarray
        ``F(n)`` in ms (NaN where no box fits).
    n_boxes : numpy.ndarray of int
        Boxes used at each scale.
    """
    sc = np.asarray(scales, dtype=np.int64)
    segs = [s for s in segments if s.size]
    if not segs:
        return np.full(sc.size, _NAN), np.zeros(sc.size, np.int64)
    total = sum(x.size for x in segs)
    mean = float(sum(float(x.sum()) for x in segs)) / total
    prof = np.cumsum(segs[0] - mean) if len(segs) == 1 else \
        np.concatenate([np.cumsum(x - mean) for x in segs])
    starts, ends, which, size, centre, stt, n_boxes = _boxes(
        tuple(x.size for x in segs), tuple(int(v) for v in sc))
    if starts.size == 0:
        return np.full(sc.size, _NAN), n_boxes
    # cumulative sums of y, k y and y**2 (one pass), then every box's sums by differences
    cum = np.zeros((3, prof.size + 1))
    cum[0, 1:] = prof
    cum[1, 1:] = prof * np.arange(prof.size)
    cum[2, 1:] = prof * prof
    np.cumsum(cum, axis=1, out=cum)
    sy, sky, syy = cum[:, ends] - cum[:, starts]
    sty = sky - centre * sy                          # sum of (k - centre) * y
    ss = syy - sy * sy / size - sty * sty / stt      # residual sum of squares of the line fit
    with np.errstate(invalid="ignore", divide="ignore"):
        f2 = np.bincount(which, weights=np.maximum(ss, 0.0) / size, minlength=sc.size) / n_boxes
    return np.sqrt(f2), n_boxes


def _slope(scales: np.ndarray, fl: np.ndarray) -> float:
    ok = np.isfinite(fl) & (fl > 0)
    if ok.sum() < 2:
        return _NAN
    x = np.log(scales[ok])
    y = np.log(fl[ok])
    x = x - x.mean()
    return float(np.dot(x, y - y.mean()) / np.dot(x, x))


def dfa_alpha(segments: list[np.ndarray], lo: int, hi: int, *, min_boxes: int = 1) -> float:
    """DFA scaling exponent: least-squares slope of ``log F(n)`` on ``log n`` for every integer
    ``n`` in ``[lo, hi]`` (beats). NaN when fewer than ``min_boxes`` boxes fit at ``n = hi``."""
    return dfa_alphas(segments, [(lo, hi)], min_boxes=min_boxes)[0]


def dfa_alphas(segments: list[np.ndarray], ranges, *, min_boxes: int = 1) -> list[float]:
    """`dfa_alpha` for several box-size ranges from one pass over the union of their scales."""
    lo = min(a for a, _ in ranges)
    hi = max(b for _, b in ranges)
    scales = np.arange(lo, hi + 1)
    fl, nb = dfa_fluctuations(segments, scales)
    out = []
    for a, b in ranges:
        sel = slice(a - lo, b - lo + 1)
        out.append(_NAN if nb[b - lo] < min_boxes else _slope(scales[sel], fl[sel]))
    return out


#: Up to this many NN intervals SampEn counts matches from the sorted candidate pairs; above it,
#: from k-d trees (memory stays O(N) however many pairs match on the first point).
SORTED_SAMPEN_MAX = 5000


def _template_starts(lengths: list[int], m: int) -> np.ndarray:
    """Start indices (in the runs laid end to end) of templates of ``m + 1`` points inside a run."""
    starts, offset = [], 0
    for n in lengths:
        if n > m:
            starts.append(offset + np.arange(n - m))
        offset += n
    return np.concatenate(starts) if starts else np.zeros(0, np.int64)


def _count_sorted(x: np.ndarray, starts: np.ndarray, m: int, r: float) -> tuple[int, int]:
    """Template pairs within ``r`` at lengths ``m`` and ``m + 1`` (see `sample_entropy`)."""
    first = x[starts]
    order = np.argsort(first, kind="stable")
    xs = first[order]
    # candidates: pairs whose first points are within r (found on the sorted first points with a
    # hair of slack, then checked exactly on the original values)
    hi = np.searchsorted(xs, xs + r * (1 + 1e-12) + 1e-300, side="right")
    counts = hi - np.arange(xs.size) - 1
    total = int(counts.sum())
    if total == 0:
        return 0, 0
    pi = np.repeat(np.arange(xs.size), counts)
    pj = pi + 1 + (np.arange(total) - np.repeat(np.cumsum(counts) - counts, counts))
    ia = starts[order[pi]]
    ib = starts[order[pj]]
    ok = np.abs(x[ia] - x[ib]) <= r
    for k in range(1, m):
        ok &= np.abs(x[ia + k] - x[ib + k]) <= r
    b = int(np.count_nonzero(ok))
    ia, ib = ia[ok], ib[ok]
    a = int(np.count_nonzero(np.abs(x[ia + m] - x[ib + m]) <= r))
    return a, b


def sample_entropy(segments: list[np.ndarray], *, m: int = 2, r: float,
                   method: str | None = None) -> tuple[float, int, int]:
    """Sample entropy ``-ln(A / B)`` (Richman & Moorman 2000).

    Parameters
    ----------
    segments : list of numpy.ndarray
        NN runs in ms; templates never span two runs.
    m : int
        Template length.
    r : float
        Tolerance in ms (absolute; rrkit passes 0.2 SD).
    method : {"sorted", "dense", "tree"}, optional
        How matches are counted (the same numbers every way); by default ``"sorted"`` up to
        `SORTED_SAMPEN_MAX` intervals, else ``"tree"``.

    Returns
    -------
    sampen : float
        NaN when ``A`` or ``B`` is 0 (undefined).
    a, b : int
        Pairs of templates (self-matches excluded, each pair once) within ``r`` (Chebyshev
        distance, ``<= r``) at length ``m + 1`` and ``m``, over the same ``N - m`` start points
        of every run.

    Notes
    -----
    Sorted count: templates are sorted by their first point; candidate pairs are those whose
    first points differ by at most ``r`` (a sliding bound on the sorted values), and only those
    are compared on the other points, O(N log N + candidates). Dense count: one boolean matrix
    ``C[i, j] = |x_i - x_j| <= r``; templates ``i`` and ``j``
    match at length ``m`` when ``C[i + k, j + k]`` holds for ``k < m``, so every length comes from
    shifted blocks of the same matrix. Tree count: `scipy.spatial.cKDTree.count_neighbors` with
    the maximum norm (``p=inf``) counts ordered pairs and self-pairs, so
    ``pairs = (count - n_templates) / 2``.
    """
    segs = [x for x in segments if x.size > m]
    if not segs:
        return _NAN, 0, 0
    x = segs[0] if len(segs) == 1 else np.concatenate(segs)
    starts = _template_starts([v.size for v in segs], m)
    nt = starts.size
    if nt < 2:
        return _NAN, 0, 0
    if method is None:
        method = "sorted" if x.size <= SORTED_SAMPEN_MAX else "tree"
    if method == "sorted":
        a, b = _count_sorted(x, starts, m, r)
    elif method == "dense":
        close = np.abs(x[:, None] - x[None, :]) <= r
        if len(segs) == 1:
            blocks = [close[k:k + nt, k:k + nt] for k in range(m + 1)]
        else:
            blocks = [close[np.ix_(starts + k, starts + k)] for k in range(m + 1)]
        match = blocks[0].copy()
        for blk in blocks[1:m]:
            match &= blk
        b = (int(np.count_nonzero(match)) - nt) // 2
        match &= blocks[m]
        a = (int(np.count_nonzero(match)) - nt) // 2
    else:
        tpl = x[starts[:, None] + np.arange(m + 1)[None, :]]
        tree_b = cKDTree(np.ascontiguousarray(tpl[:, :m]))
        b = (int(tree_b.count_neighbors(tree_b, r, p=np.inf)) - nt) // 2
        tree_a = cKDTree(tpl)
        a = (int(tree_a.count_neighbors(tree_a, r, p=np.inf)) - nt) // 2
    if a == 0 or b == 0:
        return _NAN, a, b
    return float(-math.log(a / b)), a, b


def nonlinear_domain(segments: list[np.ndarray], s: MetricsSettings, *,
                     dfa: tuple[float, float] | None = None,
                     sampen: tuple[float, int, int] | None = None,
                     sd12: tuple[float, float] | None = None,
                     ) -> tuple[dict[str, float], list[str]]:
    """Poincaré SD1/SD2, DFA alpha1/alpha2 and SampEn of NN runs, with notes for every NaN.

    Notes
    -----
    ``sampen`` uses ``m = s.sampen_m`` and ``r = s.sampen_r * SD(NN, ddof=1)``. DFA alpha1 uses
    box sizes ``s.dfa_alpha1_beats`` (4-16), alpha2 ``s.dfa_alpha2_beats`` (16-64), non-overlapping
    boxes (see `dfa_fluctuations`). ``dfa``, ``sampen`` and ``sd12`` pass values already
    computed for these intervals (the batched path of `rrkit.analyze`).
    """
    out = dict.fromkeys(NONLINEAR_KEYS, _NAN)
    notes: list[str] = []
    segs = [x for x in segments if x.size]
    n = sum(x.size for x in segs)
    sd1, sd2 = poincare(segs) if sd12 is None else sd12
    out["sd1_ms"], out["sd2_ms"] = sd1, sd2
    if not np.isfinite(sd1):
        notes.append("sd1_ms, sd2_ms, sd1_sd2: NaN, fewer than 2 successive NN pairs")
    elif sd2 > 0:
        out["sd1_sd2"] = sd1 / sd2
    ranges = (s.dfa_alpha1_beats, s.dfa_alpha2_beats)
    alphas = dfa_alphas(segs, ranges, min_boxes=s.dfa_min_boxes) if dfa is None else dfa
    for key, (_, hi), value in zip(("dfa_alpha1", "dfa_alpha2"), ranges, alphas, strict=True):
        out[key] = value
        if not np.isfinite(value):
            notes.append(f"{key}: NaN, needs {s.dfa_min_boxes} boxes of {hi} beats inside NN runs "
                         f"(at least {s.dfa_min_boxes * hi} NN intervals); the window has {n}")
    if n < s.sampen_min_beats:
        notes.append(f"sampen: NaN, needs at least {s.sampen_min_beats} NN intervals; "
                     f"the window has {n}")
    else:
        if sampen is None:
            nn = segs[0] if len(segs) == 1 else np.concatenate(segs)
            dev = nn - float(nn.sum()) / n
            sd = math.sqrt(float(dev @ dev) / (n - 1))
            value, a, b = sample_entropy(segs, m=s.sampen_m, r=s.sampen_r * sd)
        else:
            value, a, b = sampen
        out["sampen"] = value
        if not np.isfinite(value):
            notes.append(f"sampen: NaN, undefined with {a} matches of length {s.sampen_m + 1} and "
                         f"{b} of length {s.sampen_m}")
    return out, notes
