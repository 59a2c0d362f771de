"""Many windows of NN intervals as ragged arrays: the input of every metric kernel.

A batch of windows is held as flat arrays plus offsets, so that one numpy call works on every
window at once:

- ``rr_ms`` and ``times_s``: the NN intervals (ms) of every run of every window, laid end to
  end, and the time (s) of the beat that ends each one;
- ``run_offsets`` (``n_runs + 1``): where each run starts in ``rr_ms``; a run is a stretch of
  consecutive usable intervals (a window split at its gaps, as `Recording.nn_segments`);
- ``window_runs`` (``n_windows + 1``): which runs belong to each window;
- ``n_beats`` and ``duration_s``: per window, beats and first-to-last beat time (gaps included).

A window with no usable interval has no run. A single recording is a batch of one window.
"""

from __future__ import annotations

from functools import cached_property

import numpy as np

__all__ = ["Ragged", "segment_max", "segment_min", "segment_sum"]


def _ranges(first: np.ndarray, count: np.ndarray) -> np.ndarray:
    """Concatenation of ``arange(first[i], first[i] + count[i])`` for every i."""
    total = int(count.sum())
    if total == 0:
        return np.zeros(0, np.int64)
    starts = np.cumsum(count) - count
    return np.repeat(first - starts, count) + np.arange(total)


def segment_sum(x: np.ndarray, offsets: np.ndarray) -> np.ndarray:
    """Sum of ``x[offsets[i]:offsets[i + 1]]`` per segment (0 for an empty one)."""
    n = offsets.size - 1
    out = np.zeros(n)
    size = np.diff(offsets)
    ne = size > 0
    if ne.any():
        out[ne] = np.add.reduceat(x, offsets[:-1][ne])
    return out


def _segment_reduce(ufunc, x: np.ndarray, offsets: np.ndarray, empty: float) -> np.ndarray:
    out = np.full(offsets.size - 1, empty)
    ne = np.diff(offsets) > 0
    if ne.any():
        out[ne] = ufunc.reduceat(x, offsets[:-1][ne])
    return out


def segment_min(x: np.ndarray, offsets: np.ndarray) -> np.ndarray:
    """Minimum per segment (NaN for an empty one)."""
    return _segment_reduce(np.minimum, x, offsets, np.nan)


def segment_max(x: np.ndarray, offsets: np.ndarray) -> np.ndarray:
    """Maximum per segment (NaN for an empty one)."""
    return _segment_reduce(np.maximum, x, offsets, np.nan)


class Ragged:
    """NN runs of many windows (see the module docstring for the layout).

    Build with `Ragged.from_ranges` (windows of one recording, by beat index) or
    `Ragged.from_recordings` (one recording per window).
    """

    def __init__(self, rr_ms, times_s, run_offsets, window_runs, n_beats, duration_s) -> None:
        self.rr_ms = np.asarray(rr_ms, dtype=np.float64)
        self.times_s = np.asarray(times_s, dtype=np.float64)
        self.run_offsets = np.asarray(run_offsets, dtype=np.int64)
        self.window_runs = np.asarray(window_runs, dtype=np.int64)
        self.n_beats = np.asarray(n_beats, dtype=np.int64)
        self.duration_s = np.asarray(duration_s, dtype=np.float64)

    # ------------------------------------------------------------------ construction
    @classmethod
    def from_ranges(cls, beat_times_s: np.ndarray, rr_ms: np.ndarray, gaps: np.ndarray,
                    first: np.ndarray, stop: np.ndarray) -> Ragged:
        """Windows ``beats[first[i]:stop[i]]`` of one recording (slice semantics).

        A window of fewer than two beats is empty (as `Recording.slice`). Its intervals are
        ``rr_ms[first:stop - 1]``; those marked in ``gaps`` are left out and split the runs.
        """
        first = np.asarray(first, dtype=np.int64)
        stop = np.asarray(stop, dtype=np.int64)
        nw = first.size
        n_beats = stop - first
        empty = n_beats < 2
        n_beats = np.where(empty, 0, n_beats)
        n_int = np.maximum(n_beats - 1, 0)
        idx = _ranges(first, n_int)
        win = np.repeat(np.arange(nw), n_int)
        keep = ~gaps[idx]
        if not keep.all():
            idx, win = idx[keep], win[keep]
        new = np.ones(idx.size, bool)
        if idx.size > 1:
            new[1:] = (win[1:] != win[:-1]) | (idx[1:] != idx[:-1] + 1)
        starts = np.flatnonzero(new)
        run_offsets = np.append(starts, idx.size)
        per_window = np.bincount(win[starts], minlength=nw)
        window_runs = np.concatenate(([0], np.cumsum(per_window)))
        t = beat_times_s
        last = np.where(empty, first, stop - 1)
        duration = np.where(empty, 0.0, t[np.minimum(last, t.size - 1)] -
                            t[np.minimum(first, t.size - 1)]) if t.size else np.zeros(nw)
        return cls(rr_ms[idx], t[idx + 1], run_offsets, window_runs, n_beats, duration)

    @classmethod
    def from_recordings(cls, parts) -> Ragged:
        """One window per recording (anything with ``beat_times_s``, ``rr_ms``, ``gaps``)."""
        if not parts:
            return cls.from_ranges(np.zeros(0), np.zeros(0), np.zeros(0, bool),
                                   np.zeros(0, np.int64), np.zeros(0, np.int64))
        # beats laid end to end; one dummy gap interval after each part keeps the interval
        # array aligned with the beats (interval i lies between beats i and i + 1)
        ts, rrs, gs, first = [], [], [], []
        at = 0
        for p in parts:
            n = int(p.beat_times_s.size)
            first.append(at)
            ts.append(p.beat_times_s)
            rrs.append(p.rr_ms)
            gs.append(p.gaps)
            fill = n - int(p.rr_ms.size)  # 1, or 0 for an empty part
            if fill:
                rrs.append(np.zeros(fill))
                gs.append(np.ones(fill, bool))
            at += n
        first = np.asarray(first, dtype=np.int64)
        stop = first + np.array([p.beat_times_s.size for p in parts], dtype=np.int64)
        return cls.from_ranges(np.concatenate(ts), np.concatenate(rrs), np.concatenate(gs),
                               first, stop)

    @classmethod
    def from_segments(cls, segments, *, n_beats: int = 0, duration_s: float = 0.0,
                      times: list[np.ndarray] | None = None) -> Ragged:
        """One window made of the given runs (``times``: end-beat times per run, optional)."""
        segs = [np.asarray(s, dtype=np.float64) for s in segments]
        keep = [i for i, s in enumerate(segs) if s.size]
        vals = [segs[i] for i in keep]
        sizes = np.array([v.size for v in vals], dtype=np.int64)
        x = np.concatenate(vals) if vals else np.zeros(0)
        if times is None:
            t = np.zeros(x.size)
        else:
            tt = [np.asarray(times[i], dtype=np.float64) for i in keep]
            t = np.concatenate(tt) if tt else np.zeros(0)
        return cls(x, t, np.concatenate(([0], np.cumsum(sizes))), [0, len(vals)], [n_beats],
                   [duration_s])

    # ------------------------------------------------------------------ derived layout
    @property
    def n_windows(self) -> int:
        return int(self.window_runs.size - 1)

    @property
    def n_runs(self) -> int:
        return int(self.run_offsets.size - 1)

    @cached_property
    def window_offsets(self) -> np.ndarray:
        """Where each window's intervals start in ``rr_ms`` (``n_windows + 1``)."""
        return self.run_offsets[self.window_runs]

    @cached_property
    def n_intervals(self) -> np.ndarray:
        """Usable NN intervals per window."""
        return np.diff(self.window_offsets)

    @cached_property
    def run_sizes(self) -> np.ndarray:
        return np.diff(self.run_offsets)

    @cached_property
    def run_window(self) -> np.ndarray:
        """Window of each run."""
        return np.repeat(np.arange(self.n_windows), np.diff(self.window_runs))

    @cached_property
    def value_window(self) -> np.ndarray:
        """Window of each interval."""
        return np.repeat(np.arange(self.n_windows), self.n_intervals)

    @cached_property
    def pairs(self) -> np.ndarray:
        """Index ``j`` of every successive pair ``(j - 1, j)`` inside one run."""
        ok = np.ones(self.rr_ms.size, bool)
        ok[self.run_offsets[:-1]] = False
        return np.flatnonzero(ok)

    @cached_property
    def pair_offsets(self) -> np.ndarray:
        """Where each window's successive pairs start in `pairs` (``n_windows + 1``)."""
        return np.searchsorted(self.pairs, self.window_offsets)

    def ragged_sort(self, offsets: np.ndarray) -> np.ndarray:
        """``rr_ms`` sorted inside each segment ``offsets[i]:offsets[i + 1]``.

        Segments of similar sizes are sorted as the rows of one padded array (padding +inf,
        sorted last); very unequal ones by one lexicographic sort."""
        n = np.diff(offsets)
        x = self.rr_ms
        if n.size == 0 or x.size == 0:
            return x.copy()
        width = int(n.max())
        if n.size * width > 2 * x.size + 1024:
            seg = np.repeat(np.arange(n.size), n)
            return x[np.lexsort((x, seg))]
        seg = np.repeat(np.arange(n.size), n)
        pos = np.arange(x.size) - np.repeat(offsets[:-1], n)
        pad = np.full((n.size, width), np.inf)
        pad[seg, pos] = x
        pad.sort(axis=1)
        return pad[seg, pos]

    def median(self, offsets: np.ndarray) -> np.ndarray:
        """Median (as `numpy.median`) per segment of ``rr_ms``; NaN for an empty one."""
        srt = self.ragged_sort(offsets)
        n = np.diff(offsets)
        out = np.full(n.size, np.nan)
        ne = n > 0
        lo = offsets[:-1][ne] + (n[ne] - 1) // 2
        hi = offsets[:-1][ne] + n[ne] // 2
        a, b = srt[lo], srt[hi]
        out[ne] = np.where(lo == hi, a, 0.5 * (a + b))
        return out

    @cached_property
    def window_median(self) -> np.ndarray:
        return self.median(self.window_offsets)

    @cached_property
    def run_median(self) -> np.ndarray:
        per = np.diff(self.window_runs)
        if per.size and per.max() <= 1:  # every run is a whole window
            return self.window_median[self.run_window]
        return self.median(self.run_offsets)

    def take(self, windows: np.ndarray) -> Ragged:
        """The windows ``windows`` (increasing indices) as a new batch."""
        windows = np.asarray(windows, dtype=np.int64)
        runs = _ranges(self.window_runs[windows], np.diff(self.window_runs)[windows])
        sizes = self.run_sizes[runs]
        idx = _ranges(self.run_offsets[runs], sizes)
        per = np.diff(self.window_runs)[windows]
        return Ragged(self.rr_ms[idx], self.times_s[idx],
                      np.concatenate(([0], np.cumsum(sizes))),
                      np.concatenate(([0], np.cumsum(per))), self.n_beats[windows],
                      self.duration_s[windows])
