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

import numpy as np

from ._ragged import Ragged, segment_sum
from ._settings import MetricsSettings

__all__ = [
    "NONLINEAR_KEYS",
    "dfa_alpha",
    "dfa_alphas",
    "dfa_fluctuations",
    "dfa_many",
    "dfa_slopes",
    "nonlinear_domain",
    "nonlinear_many",
    "nonlinear_values",
    "poincare",
    "poincare_many",
    "sample_entropy",
    "sampen_counts_many",
]

NONLINEAR_KEYS = ("sd1_ms", "sd2_ms", "sd1_sd2", "dfa_alpha1", "dfa_alpha2", "sampen")

_NAN = float("nan")


def poincare_many(rg: Ragged) -> tuple[np.ndarray, np.ndarray]:
    """SD1 and SD2 (ms) of every window (see `poincare`); NaN with fewer than two pairs."""
    x = rg.rr_ms
    j = rg.pairs
    poff = rg.pair_offsets
    k = np.diff(poff).astype(float)
    diff = x[j] - x[j - 1]
    summ = x[j] + x[j - 1]
    pw = np.repeat(np.arange(k.size), np.diff(poff))
    with np.errstate(invalid="ignore", divide="ignore"):
        dc = diff - (segment_sum(diff, poff) / k)[pw]
        sc = summ - (segment_sum(summ, poff) / k)[pw]
        # SD(v / sqrt 2, ddof=1) = sqrt(sum((v - mean)**2) / (2 (k - 1)))
        sd1 = np.sqrt(segment_sum(dc * dc, poff) / (2.0 * (k - 1)))
        sd2 = np.sqrt(segment_sum(sc * sc, poff) / (2.0 * (k - 1)))
    few = k < 2
    sd1[few] = _NAN
    sd2[few] = _NAN
    return sd1, sd2


def poincare(segments: list[np.ndarray]) -> tuple[float, float]:
    """SD1 and SD2 (ms) of the Poincaré plot of successive NN pairs inside each run.

    ``SD1 = SD((RR[n+1] - RR[n]) / sqrt 2)`` and ``SD2 = SD((RR[n+1] + RR[n]) / sqrt 2)``, both
    with ddof=1 (Brennan et al. 2001). NaN with fewer than two pairs. One window of
    `poincare_many`.
    """
    sd1, sd2 = poincare_many(Ragged.from_segments(segments))
    return float(sd1[0]), float(sd2[0])


#: Most profile points (windows x longest window) of one DFA block (bounds its memory).
_DFA_BLOCK = 1 << 18


def _blocks(sizes: np.ndarray, budget: int) -> list[np.ndarray]:
    """Consecutive groups of the windows with ``count x largest size <= budget`` (a window
    larger than the budget is a group of its own)."""
    groups: list[np.ndarray] = []
    i = 0
    n = sizes.size
    while i < n:
        j = i
        big = 0
        while j < n:
            b = max(big, int(sizes[j]))
            if j > i and (j - i + 1) * max(b, 1) > budget:
                break
            big = b
            j += 1
        groups.append(np.arange(i, j))
        i = j
    return groups


def dfa_many(rg: Ragged, scales) -> tuple[np.ndarray, np.ndarray]:
    """DFA ``F(n)`` of every window (rows) at every box size in ``scales`` (columns), and the
    boxes used (see `dfa_fluctuations`). Windows go in blocks of at most `_DFA_BLOCK` profile
    points."""
    sc = np.asarray(scales, dtype=np.int64)
    nw = rg.n_windows
    fl = np.full((nw, sc.size), _NAN)
    nbox = np.zeros((nw, sc.size), np.int64)
    sizes = rg.n_intervals
    for block in _blocks(sizes, _DFA_BLOCK):
        block = block[sizes[block] > 0]
        if block.size:
            sub = rg.take(block) if block.size < nw else rg
            f, b = _dfa_block(sub, sc)
            fl[block] = f
            nbox[block] = b
    return fl, nbox


def _dfa_block(rg: Ragged, sc: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    w = rg.n_windows
    nsc = sc.size
    off = rg.window_offsets
    sizes = rg.n_intervals
    lmax = int(sizes.max())
    vw = rg.value_window
    x = rg.rr_ms
    mean = segment_sum(x, off) / sizes
    # profile of each run (cumulative sum of the deviations from the window mean), in a row
    # per window: position k of a value is its index among the window's intervals
    pos = np.arange(x.size) - off[:-1][vw]
    prof = np.cumsum(x - mean[vw])
    run_first = rg.run_offsets[:-1]
    before = np.zeros(rg.n_runs)
    later = run_first > 0
    before[later] = prof[run_first[later] - 1]
    prof -= np.repeat(before, rg.run_sizes)
    cum = np.zeros((3, w, lmax + 1))
    cum[0, vw, pos + 1] = prof
    cum[1, vw, pos + 1] = prof * pos
    cum[2, vw, pos + 1] = prof * prof
    np.cumsum(cum, axis=2, out=cum)
    flat = cum.reshape(3, -1)
    # every non-overlapping box of every run at every scale, from the run's start
    rs = rg.run_sizes
    per = rs[:, None] // sc[None, :]                      # boxes per (run, scale)
    cnt = per.ravel()
    total = int(cnt.sum())
    nbox = np.bincount(np.repeat(rg.run_window * nsc, nsc) + np.tile(np.arange(nsc), rs.size),
                       weights=cnt, minlength=w * nsc).astype(np.int64).reshape(w, nsc)
    if total == 0:
        return np.full((w, nsc), _NAN), nbox
    # per (run, scale) pair first, then repeated to its boxes: few passes over all the boxes
    ps = np.repeat(np.tile(np.arange(nsc), rs.size), cnt)
    jj = np.arange(total) - np.repeat(np.cumsum(cnt) - cnt, cnt)
    size_i = sc[ps]
    step = jj * size_i
    run_start = run_first - off[:-1][rg.run_window]   # position of each run in its row
    start = np.repeat(np.repeat(run_start, nsc), cnt) + step
    a_at = np.repeat(np.repeat(rg.run_window * (lmax + 1) + run_start, nsc), cnt) + step
    e_at = a_at + size_i
    scf = sc.astype(float)
    size = scf[ps]
    centre = start + ((scf - 1.0) / 2.0)[ps]
    stt = (scf * (scf * scf - 1.0) / 12.0)[ps]
    cell = np.repeat((rg.run_window[:, None] * nsc + np.arange(nsc)[None, :]).ravel(), cnt)
    c_y, c_ky, c_yy = flat  # three contiguous rows: 1-D gathers are the fast ones
    sy = c_y[e_at] - c_y[a_at]
    sky = c_ky[e_at] - c_ky[a_at]
    syy = c_yy[e_at] - c_yy[a_at]
    sty = sky - centre * sy                          # sum of (k - centre) * y
    ss = syy - sy * sy / size - sty * sty / stt      # residual sum of squares of the line fit
    with np.errstate(invalid="ignore", divide="ignore"):
        f2 = np.bincount(cell, weights=np.maximum(ss, 0.0) / size,
                         minlength=w * nsc).reshape(w, nsc) / nbox
    return np.sqrt(f2), nbox


def dfa_fluctuations(segments: list[np.ndarray], scales) -> tuple[np.ndarray, np.ndarray]:
    """DFA fluctuation ``F(n)`` for each box size ``n`` in ``scales`` (beats).

    Notes
    -----
    Order-1 DFA (Peng et al. 1995): the profile ``y_k = sum_{i<=k} (RR_i - mean RR)`` of each run
    is cut into non-overlapping boxes of ``n`` beats from the run's start (a remainder shorter
    than ``n`` at the end is not used, as in Peng et al.); a least-squares line is removed in
    every box and ``F(n) = sqrt(mean over boxes of the mean squared residual)``. The residuals of
    every box at every scale come at once from cumulative sums of ``y``, ``k y`` and ``y**2``
    (`dfa_many`, one window).

    Returns
    -------
    fluct : numpy.ndarray
        ``F(n)`` in ms (NaN where no box fits).
    n_boxes : numpy.ndarray of int
        Boxes used at each scale.
    """
    fl, nb = dfa_many(Ragged.from_segments(segments), scales)
    return fl[0], nb[0]


def dfa_slopes(fl: np.ndarray, nbox: np.ndarray, scales: np.ndarray, ranges, min_boxes: int
               ) -> list[np.ndarray]:
    """Per range ``(a, b)``: the least-squares slope of ``log F(n)`` on ``log n`` over
    ``a <= n <= b`` for every row, from the finite positive ``F``; NaN when fewer than
    ``min_boxes`` boxes fit at ``n = b`` or fewer than two points remain."""
    lo = int(scales[0])
    logn = np.log(scales.astype(float))
    out = []
    for a, b in ranges:
        sel = slice(a - lo, b - lo + 1)
        f = fl[:, sel]
        ok = np.isfinite(f) & (f > 0)
        x = logn[sel]
        with np.errstate(divide="ignore", invalid="ignore"):
            y = np.where(ok, np.log(np.where(ok, f, 1.0)), 0.0)
            cnt = ok.sum(axis=1)
            xm = (x * ok).sum(axis=1) / cnt
            ym = y.sum(axis=1) / cnt
            xd = np.where(ok, x[None, :] - xm[:, None], 0.0)
            slope = (xd * (y - ym[:, None])).sum(axis=1) / (xd * xd).sum(axis=1)
        slope[(cnt < 2) | (nbox[:, b - lo] < min_boxes)] = _NAN
        out.append(slope)
    return out


def dfa_alpha(segments: list[np.ndarray], lo: int, hi: int, *, min_boxes: int = 1) -> float:
    """DFA scaling exponent: least-squares slope of ``log F(n)`` on ``log n`` for every integer
    ``n`` in ``[lo, hi]`` (beats). NaN when fewer than ``min_boxes`` boxes fit at ``n = hi``."""
    return dfa_alphas(segments, [(lo, hi)], min_boxes=min_boxes)[0]


def dfa_alphas(segments: list[np.ndarray], ranges, *, min_boxes: int = 1) -> list[float]:
    """`dfa_alpha` for several box-size ranges from one pass over the union of their scales."""
    scales = _scales(ranges)
    fl, nb = dfa_many(Ragged.from_segments(segments), scales)
    return [float(v[0]) for v in dfa_slopes(fl, nb, scales, ranges, min_boxes)]


def _scales(ranges) -> np.ndarray:
    return np.arange(min(a for a, _ in ranges), max(b for _, b in ranges) + 1)


#: Up to this many NN intervals SampEn counts matches from the sorted candidate pairs; above it,
#: from k-d trees (memory stays O(N) however many pairs match on the first point).
SORTED_SAMPEN_MAX = 5000
#: Most candidate template pairs per SampEn block (bounds memory: about 50 bytes a pair).
_MAX_PAIRS = 400_000


def _template_starts(lengths: list[int], m: int) -> np.ndarray:
    """Start indices (in the runs laid end to end) of templates of ``m + 1`` points inside a run."""
    starts, offset = [], 0
    for n in lengths:
        if n > m:
            starts.append(offset + np.arange(n - m))
        offset += n
    return np.concatenate(starts) if starts else np.zeros(0, np.int64)


def sampen_counts_many(rg: Ragged, m: int, r: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Template pairs within ``r[i]`` at lengths ``m + 1`` (a) and ``m`` (b) of every window
    (the sorted count of `sample_entropy`), windows in blocks of at most `_MAX_PAIRS` expected
    candidate pairs."""
    nw = rg.n_windows
    a_out = np.zeros(nw, np.int64)
    b_out = np.zeros(nw, np.int64)
    sizes = rg.n_intervals
    use = np.flatnonzero(sizes > m)
    groups: list[list[int]] = []
    pairs = 0
    for j in use.tolist():
        expect = int(sizes[j]) ** 2 // 8
        if not groups or pairs + expect > _MAX_PAIRS:
            groups.append([])
            pairs = 0
        groups[-1].append(j)
        pairs += expect
    for g in groups:
        block = np.asarray(g, dtype=np.int64)
        sub = rg.take(block) if block.size < nw else rg
        a, b = _sampen_block(sub, m, np.asarray(r, dtype=float)[block])
        a_out[block] = a
        b_out[block] = b
    return a_out, b_out


def _sampen_block(rg: Ragged, m: int, r: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Sorted count of one block: each window's values are shifted apart so that no candidate
    pair spans two windows; candidates are then checked exactly on the original values.

    With ``m >= 2`` the templates are also put in cells of width ``r`` by their second point
    (a pair within ``r`` there lies in one cell or two neighbouring ones), so the candidates are
    the pairs close in the first point inside the same or the next cell, not inside the whole
    window: several times fewer pairs to check, the same pairs found."""
    w = rg.n_windows
    x = rg.rr_ms
    rs = rg.run_sizes
    nt = np.maximum(rs - m, 0)                     # templates per run
    starts = np.repeat(rg.run_offsets[:-1] - (np.cumsum(nt) - nt), nt) + np.arange(int(nt.sum()))
    win = np.repeat(rg.run_window, nt)
    a_cnt = np.zeros(w, np.int64)
    b_cnt = np.zeros(w, np.int64)
    if starts.size < 2:
        return a_cnt, b_cnt
    xmin = float(x.min())
    spread = float(x.max() - xmin) + 4.0 * float(r.max()) + 1.0
    rt = r[win]
    if m >= 2 and float(r.min()) > 0.0:
        # cell of the second point, a little wider than r so that rounding never puts two
        # points within r two cells apart; cells never wrap into the next window
        cell = np.floor((x[starts + 1] - xmin) / (rt * (1.0 + 1e-9))).astype(np.int64)
        group = win * (int(cell.max()) + 2) + cell
    else:
        group = win
    key = (x[starts] - xmin) + group * spread
    order = np.argsort(key, kind="stable")
    ks = key[order]
    st = starts[order]
    cols = [x[st + k] for k in range(m + 1)]       # template points in sorted order
    ws = win[order]
    rw = rt[order]
    slack = 8.0 * np.finfo(float).eps * float(ks[-1] + spread)  # a few ulps of the largest key
    reach = rw * (1 + 1e-12) + slack
    first = np.arange(ks.size)
    hi = np.searchsorted(ks, ks + reach, side="right")
    counts = hi - first - 1                        # later templates of the same group
    if group is not win:                           # and the templates of the next cell
        lo2 = np.searchsorted(ks, ks + spread - reach, side="left")
        hi2 = np.searchsorted(ks, ks + spread + reach, side="right")
        counts2 = hi2 - lo2
        pstart = np.concatenate((first + 1, lo2))
        counts = np.concatenate((counts, counts2))
        owner = np.concatenate((first, first))
    else:
        pstart = first + 1
        owner = first
    total = int(counts.sum())
    if total:
        pi = np.repeat(owner, counts)
        pj = np.arange(total) + np.repeat(pstart - (np.cumsum(counts) - counts), counts)
        rp = rw[pi]
        # the later points first (they reject most candidates), then the first point exactly
        # (the candidates were found on shifted keys with a little slack)
        order_k = [*range(1, m), 0]
        ok = np.abs(cols[order_k[0]][pj] - cols[order_k[0]][pi]) <= rp
        for k in order_k[1:]:
            keep = np.flatnonzero(ok)
            pi, pj, rp = pi[keep], pj[keep], rp[keep]
            ok = np.abs(cols[k][pj] - cols[k][pi]) <= rp
        keep = np.flatnonzero(ok)
        pi, pj, rp = pi[keep], pj[keep], rp[keep]
        b_cnt = np.bincount(ws[pi], minlength=w)
        okm = np.abs(cols[m][pj] - cols[m][pi]) <= rp
        a_cnt = np.bincount(ws[pi[okm]], minlength=w)
    return a_cnt, b_cnt


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
    Sorted count (`sampen_counts_many`, one window): templates are sorted by their first point;
    candidate pairs are those whose first points differ by at most ``r`` (a sliding bound on the
    sorted values), and only those are compared on the other points, O(N log N + candidates).
    Dense count: one boolean matrix ``C[i, j] = |x_i - x_j| <= r``; templates ``i`` and ``j``
    match at length ``m`` when ``C[i + k, j + k]`` holds for ``k < m``, so every length comes from
    shifted blocks of the same matrix. Tree count: `scipy.spatial.cKDTree.count_neighbors` with
    the maximum norm (``p=inf``) counts ordered pairs and self-pairs, so
    ``pairs = (count - n_templates) / 2``.
    """
    segs = [np.asarray(x, dtype=np.float64) for x in segments if x.size > m]
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
        a_many, b_many = sampen_counts_many(Ragged.from_segments(segs), m, np.array([r]))
        a, b = int(a_many[0]), int(b_many[0])
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
        from scipy.spatial import cKDTree

        tpl = x[starts[:, None] + np.arange(m + 1)[None, :]]
        tree_b = cKDTree(np.ascontiguousarray(tpl[:, :m]))
        b = (int(tree_b.count_neighbors(tree_b, r, p=np.inf)) - nt) // 2
        tree_a = cKDTree(tpl)
        a = (int(tree_a.count_neighbors(tree_a, r, p=np.inf)) - nt) // 2
    return _sampen_value(a, b), a, b


def _sampen_value(a: int, b: int) -> float:
    return _NAN if a == 0 or b == 0 else float(-math.log(a / b))


def nonlinear_many(rg: Ragged, s: MetricsSettings) -> dict[str, np.ndarray]:
    """SD1, SD2, DFA alpha1/alpha2 and the SampEn counts of every window."""
    sd1, sd2 = poincare_many(rg)
    ranges = (s.dfa_alpha1_beats, s.dfa_alpha2_beats)
    scales = _scales(ranges)
    fl, nb = dfa_many(rg, scales)
    alpha1, alpha2 = dfa_slopes(fl, nb, scales, ranges, s.dfa_min_boxes)
    n = rg.n_intervals
    a = np.zeros(n.size, np.int64)
    b = np.zeros(n.size, np.int64)
    want = n >= s.sampen_min_beats
    sorted_ = np.flatnonzero(want & (n <= SORTED_SAMPEN_MAX))
    if sorted_.size:
        sub = rg.take(sorted_) if sorted_.size < n.size else rg
        x = sub.rr_ms
        off = sub.window_offsets
        nn = sub.n_intervals
        dev = x - (segment_sum(x, off) / nn)[sub.value_window]
        r = s.sampen_r * np.sqrt(segment_sum(dev * dev, off) / (nn - 1))
        a[sorted_], b[sorted_] = sampen_counts_many(sub, s.sampen_m, r)
    for i in np.flatnonzero(want & (n > SORTED_SAMPEN_MAX)).tolist():  # long: k-d trees
        sub = rg.take(np.array([i]))
        segs = np.split(sub.rr_ms, sub.run_offsets[1:-1])
        x = sub.rr_ms
        dev = x - float(x.sum()) / x.size
        r = s.sampen_r * math.sqrt(float(dev @ dev) / (x.size - 1))
        _, a[i], b[i] = sample_entropy(segs, m=s.sampen_m, r=r, method="tree")
    return {"sd1": sd1, "sd2": sd2, "alpha1": alpha1, "alpha2": alpha2, "sampen_a": a,
            "sampen_b": b, "n": n}


def nonlinear_values(row: dict, s: MetricsSettings) -> tuple[dict[str, float], list[str]]:
    """Nonlinear values and notes of one window from its row of `nonlinear_many`."""
    out = dict.fromkeys(NONLINEAR_KEYS, _NAN)
    notes: list[str] = []
    n = int(row["n"])
    sd1, sd2 = float(row["sd1"]), float(row["sd2"])
    out["sd1_ms"], out["sd2_ms"] = sd1, sd2
    if not np.isfinite(sd1):
        notes.append("sd1_ms, sd2_ms, sd1_sd2: NaN, fewer than 2 successive NN pairs")
    elif sd2 > 0:
        out["sd1_sd2"] = sd1 / sd2
    ranges = (s.dfa_alpha1_beats, s.dfa_alpha2_beats)
    for key, (_, hi) in zip(("dfa_alpha1", "dfa_alpha2"), ranges, strict=True):
        value = float(row["alpha1" if key == "dfa_alpha1" else "alpha2"])
        out[key] = value
        if not np.isfinite(value):
            notes.append(f"{key}: NaN, needs {s.dfa_min_boxes} boxes of {hi} beats inside NN runs "
                         f"(at least {s.dfa_min_boxes * hi} NN intervals); the window has {n}")
    if n < s.sampen_min_beats:
        notes.append(f"sampen: NaN, needs at least {s.sampen_min_beats} NN intervals; "
                     f"the window has {n}")
    else:
        a, b = int(row["sampen_a"]), int(row["sampen_b"])
        value = _sampen_value(a, b)
        out["sampen"] = value
        if not np.isfinite(value):
            notes.append(f"sampen: NaN, undefined with {a} matches of length {s.sampen_m + 1} and "
                         f"{b} of length {s.sampen_m}")
    return out, notes


def nonlinear_domain(segments: list[np.ndarray], s: MetricsSettings,
                     ) -> tuple[dict[str, float], list[str]]:
    """Poincaré SD1/SD2, DFA alpha1/alpha2 and SampEn of NN runs, with notes for every NaN
    (one window of `nonlinear_many`).

    Notes
    -----
    ``sampen`` uses ``m = s.sampen_m`` and ``r = s.sampen_r * SD(NN, ddof=1)``. DFA alpha1 uses
    box sizes ``s.dfa_alpha1_beats`` (4-16), alpha2 ``s.dfa_alpha2_beats`` (16-64), non-overlapping
    boxes (see `dfa_fluctuations`).
    """
    many = nonlinear_many(Ragged.from_segments(segments), s)
    return nonlinear_values({k: v[0] for k, v in many.items()}, s)
