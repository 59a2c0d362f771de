"""Beat classification: one function per method, each on one gap-free run of intervals.

Every detector returns a `Detection`: an integer code per interval (the index into `LABELS`),
which intervals start a pair to merge (extra beats), into how many intervals each missed
interval is split, and the beats judged premature. The decision rules are vectorised over all
beats; nothing here loops over beats in Python.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ._result import LABELS
from ._rolling import rolling_median, rolling_quantiles
from ._settings import CleanSettings

__all__ = ["CODE", "Detection", "detect"]

#: label -> integer code (index into LABELS)
CODE = {name: i for i, name in enumerate(LABELS)}
NORMAL, ECTOPIC, MISSED, EXTRA, LONG, SHORT, IMPLAUSIBLE = (CODE[k] for k in LABELS)

# Smallest threshold (ms) a moving quartile deviation may give: a perfectly flat stretch has
# QD = 0, and any deviation from it is then an outlier rather than a division by zero.
_MIN_THRESHOLD_MS = 1e-6


@dataclass(frozen=True, slots=True)
class Detection:
    """Classification of one gap-free run of ``m`` intervals.

    Attributes
    ----------
    codes : numpy.ndarray of int8, shape (m,)
        Index into `LABELS` per interval.
    merge_next : numpy.ndarray of bool, shape (m,)
        True on the first interval of an extra-beat pair (merged with the next one).
    n_parts : numpy.ndarray of int, shape (m,)
        Number of intervals each interval becomes (> 1 for a missed beat, else 1).
    premature : numpy.ndarray of int
        Beats (indices into the run's beats, 0..m) judged premature: each ends one ectopic
        interval and starts the next.
    """

    codes: np.ndarray
    merge_next: np.ndarray
    n_parts: np.ndarray
    premature: np.ndarray


def detect(rr_ms: np.ndarray, settings: CleanSettings) -> Detection:
    """Classify one gap-free run of intervals with ``settings.method``."""
    rr = np.asarray(rr_ms, dtype=np.float64)
    if settings.method == "drr":
        return _detect_drr(rr, settings)
    if settings.method == "median":
        return _detect_median(rr, settings)
    if settings.method == "mad":
        return _detect_mad(rr, settings)
    none = np.zeros(rr.size, bool)
    return _finish(rr, settings, np.ones(rr.size), none, none, none, none, np.ones(rr.size, int),
                   np.zeros(rr.size))


# ---------------------------------------------------------------------------------- drr
def _detect_drr(rr: np.ndarray, s: CleanSettings) -> Detection:
    """Lipponen & Tarvainen (2019) decision rules, vectorised.

    ``dRR[n] = RR[n] - RR[n-1]`` is centred on beat ``n`` (the beat shared by intervals ``n-1``
    and ``n``). An ectopic decision at ``n`` therefore marks beat ``n`` as premature (or
    misplaced) and both intervals around it as ectopic. The first difference, which has no
    earlier interval, is taken against the local median instead (rrkit's choice).
    """
    m = rr.size
    if m == 0:
        return _empty()
    med = rolling_median(rr, s.drr_median_window_beats)
    drr = np.empty(m)
    drr[0] = rr[0] - med[0]
    drr[1:] = np.diff(rr)
    d = drr / _threshold(drr, s.drr_alpha, s.drr_qd_window_beats)
    mrr = rr - med
    mrr = np.where(mrr < 0, 2.0 * mrr, mrr)
    th2 = _threshold(mrr, s.drr_alpha, s.drr_qd_window_beats)
    dm = mrr / th2

    # neighbours of d with the series reflected at both ends
    dp = np.pad(d, 2, mode="reflect") if m > 2 else np.pad(d, 2, mode="edge")
    prev, nxt, nxt2 = dp[1:m + 1], dp[3:m + 3], dp[4:m + 4]
    s12 = np.where(d > 0, np.maximum(prev, nxt), np.where(d < 0, np.minimum(prev, nxt), 0.0))
    s22 = np.where(d >= 0, np.minimum(nxt, nxt2), np.maximum(nxt, nxt2))

    c1, c2 = s.drr_c1, s.drr_c2
    ectopic_at = ((d > 1) & (s12 < -c1 * d - c2)) | ((d < -1) & (s12 > -c1 * d + c2))
    if s.drr_min_mrr > 0:
        # rrkit's refinement: the beat must also stand out from the local median (an ectopic
        # decision at beat n looks at both intervals around it)
        stands_out = np.abs(dm) > s.drr_min_mrr
        around = stands_out.copy()
        around[1:] |= stands_out[:-1]
        ectopic_at &= around
    else:
        stands_out = np.ones(m, bool)
    cand = ~ectopic_at & ((np.abs(d) > 1) | (np.abs(dm) > s.drr_mrr_limit))
    # a candidate also puts the following beat under test when its difference is the smaller
    follow = np.zeros(m, bool)
    follow[1:] = cand[:-1] & (np.abs(nxt[:-1]) < np.abs(nxt2[:-1]))
    check = cand | (follow & ~ectopic_at)
    is_long = (d > 1) & (s22 < -1)
    is_short = (d < -1) & (s22 > 1)
    flagged = check & (is_long | is_short | (np.abs(dm) > s.drr_mrr_limit)) & stands_out

    pair_sum = np.empty(m)
    pair_sum[:-1] = rr[:-1] + rr[1:]
    pair_sum[-1] = np.inf
    extra = flagged & is_short & (np.abs(pair_sum - med) < th2)
    k = np.clip(np.rint(rr / med), 2, s.max_hidden_beats + 1)
    missed = flagged & is_long & ~extra & (np.abs(rr / k - med) < th2) & (rr > 1.5 * med)
    longshort = flagged & ~extra & ~missed
    return _finish(rr, s, med, ectopic_at, extra, missed, longshort, k.astype(int), np.abs(d))


def _threshold(x: np.ndarray, alpha: float, window: int) -> np.ndarray:
    q1, q3 = rolling_quantiles(np.abs(x), window, (0.25, 0.75))
    return np.maximum(alpha * (q3 - q1) / 2.0, _MIN_THRESHOLD_MS)


# ---------------------------------------------------------------------------------- median
def _detect_median(rr: np.ndarray, s: CleanSettings) -> Detection:
    """Relative deviation from the median of the ``2w + 1`` beats centred on each interval."""
    if rr.size == 0:
        return _empty()
    ref = rolling_median(rr, 2 * s.median_window_beats + 1)
    tol = s.median_max_deviation * ref
    flagged = np.abs(rr - ref) > tol
    return _classify_relative(rr, s, ref, tol, flagged)


# ---------------------------------------------------------------------------------- mad
def _detect_mad(rr: np.ndarray, s: CleanSettings) -> Detection:
    """Berntson et al. (1990) MED/MAD criterion over a centred moving window.

    ``MED = 3.32 QD(dRR)`` (maximum expected difference between veridical beats, with QD the
    quartile deviation of the signed successive differences), ``MAD = (median RR - 2.9 QD(RR))
    / 3`` (minimal artifact difference, with QD that of the intervals), criterion
    ``(MED + MAD) / 2``. A successive difference above the criterion flags whichever of its two
    intervals lies further from the 11-beat median.
    """
    m = rr.size
    if m == 0:
        return _empty()
    w = s.mad_window_beats
    drr = np.zeros(m)
    drr[1:] = np.diff(rr)
    if m > 1:
        drr[0] = drr[1]
    dq1, dq3 = rolling_quantiles(drr, w, (0.25, 0.75))
    rq1, rmed, rq3 = rolling_quantiles(rr, w, (0.25, 0.5, 0.75))
    med_diff = s.mad_med_factor * (dq3 - dq1) / 2.0
    min_art = (rmed - s.mad_mad_factor * (rq3 - rq1) / 2.0) / 3.0
    crit = np.maximum((med_diff + min_art) / 2.0, _MIN_THRESHOLD_MS)
    ref = rolling_median(rr, 11)
    flagged = np.zeros(m, bool)
    if m > 1:
        # a jump larger than the criterion marks whichever of its two intervals lies further
        # from the local median
        jump = np.flatnonzero(np.abs(np.diff(rr)) > crit[1:])
        dev = np.abs(rr - ref)
        later = dev[jump + 1] >= dev[jump]
        flagged[jump[later] + 1] = True
        flagged[jump[~later]] = True
    return _classify_relative(rr, s, ref, crit, flagged)


def _classify_relative(rr: np.ndarray, s: CleanSettings, ref: np.ndarray, tol: np.ndarray,
                       flagged: np.ndarray) -> Detection:
    """Beat classes for methods that only say *which* intervals deviate (median, mad).

    With ``ref`` the local reference interval and ``tol`` the allowed deviation (ms):

    - extra: a short flagged interval whose sum with a neighbour is within ``tol / 2`` of
      ``ref`` (the neighbour giving the closer sum);
    - ectopic: a flagged interval whose sum with the next (or the previous) one is within
      ``tol`` of ``2 ref``, on the other side of ``ref`` and differing from it by more than
      ``tol``: a premature or misplaced beat lies between them;
    - missed: a long one within ``tol / 2`` of ``k ref`` (k = 2 .. max_hidden_beats + 1);
    - long or short: the rest.

    The halved tolerances keep a long interval of 1.6 ``ref`` from reading as a missed beat.
    """
    m = rr.size
    nxt = np.append(rr[1:], np.inf)
    prv = np.insert(rr[:-1], 0, np.inf)
    short = flagged & (rr < ref)
    long_ = flagged & (rr > ref)
    err_next = np.abs(rr + nxt - ref)
    err_prev = np.abs(rr + prv - ref)
    # extra pairs start at j (with j + 1) or at j - 1 (with j), whichever sums closer to ref
    half = tol / 2.0
    extra_fwd = short & (err_next < half) & (err_next <= err_prev)
    extra_bwd = short & (err_prev < half) & (err_prev < err_next)
    extra = extra_fwd.copy()
    extra[:-1] |= extra_bwd[1:]
    side = np.sign(rr - ref)
    side_next = np.append(side[1:], 0)
    pair = (flagged & (np.abs(rr + nxt - 2 * ref) < tol) & (side * side_next < 0)
            & (np.abs(nxt - rr) > tol))
    side_prev = np.insert(side[:-1], 0, 0)
    pair_back = (flagged & (np.abs(rr + prv - 2 * ref) < tol) & (side * side_prev < 0)
                 & (np.abs(rr - prv) > tol))
    ectopic_at = np.zeros(m, bool)  # premature beat j between intervals j - 1 and j
    ectopic_at[1:] = pair[:-1] & ~extra[:-1]
    ectopic_at |= pair_back & ~extra
    k = np.clip(np.rint(rr / ref), 2, s.max_hidden_beats + 1)
    missed = long_ & (np.abs(rr / k - ref) < half) & (rr > 1.5 * ref)
    longshort = flagged & ~missed
    strength = np.zeros(m)
    strength[1:] = np.abs(np.diff(rr))
    return _finish(rr, s, ref, ectopic_at, extra, missed, longshort, k.astype(int), strength)


# ---------------------------------------------------------------------------------- common
def _finish(rr, s, ref, ectopic_at, extra, missed, longshort, k, strength) -> Detection:
    """Resolve overlapping decisions by priority and apply the plausible range.

    Ectopic decisions on adjacent beats describe one premature beat (the pattern around a
    premature beat also satisfies the rule, more weakly, one beat earlier or later): within a
    run of adjacent decisions the beats are kept strongest first (largest ``strength``, the
    normalised successive difference), skipping any beat next to one already kept (rrkit's
    refinement of the published rule).
    Priority: ectopic pair > extra pair > missed > long/short. An interval outside
    ``[min_rr_ms, max_rr_ms]`` that is not explained as part of a missed or extra beat (or an
    ectopic pair) is ``implausible``.
    """
    m = rr.size
    codes = np.zeros(m, np.int8)
    # ectopic decision at beat n marks intervals n - 1 and n
    beats = _strongest_of_runs(np.flatnonzero(ectopic_at), strength)
    codes[beats] = ECTOPIC
    codes[beats[beats > 0] - 1] = ECTOPIC
    premature = beats
    # extra pairs (j, j + 1), neither already taken; the first of two overlapping pairs wins
    merge = np.zeros(m, bool)
    cand = np.flatnonzero(extra[:-1]) if m > 1 else np.zeros(0, int)
    if cand.size:
        free = (codes[cand] == NORMAL) & (codes[cand + 1] == NORMAL)
        cand = cand[free]
        if cand.size > 1 and np.any(np.diff(cand) == 1):
            # overlapping candidates (j, j + 1) and (j + 1, j + 2): the first wins; the loop
            # runs over the few flagged beats only
            keep = np.ones(cand.size, bool)
            last = -2
            for i, c in enumerate(cand):
                if c == last + 1:
                    keep[i] = False
                else:
                    last = c
            cand = cand[keep]
        total = rr[cand] + rr[cand + 1]
        cand = cand[(total >= s.min_rr_ms) & (total <= s.max_rr_ms)]
        merge[cand] = True
        codes[cand] = EXTRA
        codes[cand + 1] = EXTRA
    n_parts = np.ones(m, int)
    mis = missed & (codes == NORMAL)
    parts = rr / k
    mis &= (parts >= s.min_rr_ms) & (parts <= s.max_rr_ms)
    codes[mis] = MISSED
    n_parts[mis] = k[mis]
    ls = longshort & (codes == NORMAL)
    codes[ls & (rr >= ref)] = LONG
    codes[ls & (rr < ref)] = SHORT
    out = ((rr < s.min_rr_ms) | (rr > s.max_rr_ms)) & np.isin(codes, (NORMAL, LONG, SHORT))
    codes[out] = IMPLAUSIBLE
    return Detection(codes, merge, n_parts, premature.astype(int))


def _strongest_of_runs(idx: np.ndarray, strength: np.ndarray) -> np.ndarray:
    """Thin runs of consecutive indices: strongest first, never two neighbours."""
    if idx.size < 2:
        return idx
    brk = np.flatnonzero(np.diff(idx) != 1) + 1
    starts = np.concatenate(([0], brk))
    ends = np.concatenate((brk, [idx.size]))
    multi = np.flatnonzero(ends - starts > 1)
    if multi.size == 0:
        return idx
    keep = np.ones(idx.size, bool)
    for r in multi:  # loops over runs of flagged beats only
        a, b = starts[r], ends[r]
        keep[a:b] = False
        # strongest first; a beat is kept unless a neighbour already is (so a burst of
        # alternating intervals keeps every other beat and all its intervals stay ectopic)
        for j in a + np.argsort(-strength[idx[a:b]], kind="stable"):
            if not ((j > a and keep[j - 1]) or (j + 1 < b and keep[j + 1])):
                keep[j] = True
    return idx[keep]


def _empty() -> Detection:
    return Detection(np.zeros(0, np.int8), np.zeros(0, bool), np.zeros(0, int), np.zeros(0, int))
