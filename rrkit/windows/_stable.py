"""The stable-segment search: the steadiest stretch of a given length inside a window.

Among candidate stretches starting every ``step`` seconds: the fewest corrected beats (input
intervals the cleaning changed or excluded), then the least heart-rate drift (absolute
least-squares slope of 60000/RR on time, bpm/min, over the corrected NN intervals), then the
earliest.
"""

from __future__ import annotations

import math

import numpy as np

from ._model import EPS as _EPS
from ._model import Window, _fmt


def most_stable(win: Window, length: float, step: float, cr) -> Window:
    inp = cr.input
    info = dict(win.extra)
    info["clock_window_s"] = (win.start_s, win.end_s)
    if win.duration_s < length - _EPS:
        info["stable"] = (f"clock window ({win.duration_s:.0f} s) shorter than {length:.0f} s; "
                          "used whole")
        return Window(win.label, win.start_s, win.end_s, extra=info)
    n = math.floor((win.duration_s - length) / step + _EPS) + 1
    starts = win.start_s + np.arange(n) * step
    ends = starts + length
    # corrected beats: input intervals changed or excluded, by the time of their end beat
    t_in = inp.interval_times_s
    cum = np.concatenate(([0], np.cumsum(np.asarray(cr.changed, dtype=np.int64))))
    lo = np.searchsorted(t_in, starts - _EPS, side="left")
    hi = np.searchsorted(t_in, ends + _EPS, side="right")
    corrected = cum[hi] - cum[lo]
    # heart-rate drift: least-squares slope of 60000/RR on time over corrected NN intervals
    rec = cr.recording
    ok = ~rec.gaps
    t = rec.interval_times_s[ok]
    hr = 60000.0 / rec.rr_ms[ok]
    tc = t - win.start_s
    c = [np.concatenate(([0.0], np.cumsum(v)))
         for v in (np.ones_like(tc), tc, hr, tc * tc, tc * hr)]
    a = np.searchsorted(t, starts - _EPS, side="left")
    b = np.searchsorted(t, ends + _EPS, side="right")
    s0, st, sh, stt, sth = (v[b] - v[a] for v in c)
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = (s0 * sth - st * sh) / (s0 * stt - st * st) * 60.0  # bpm per minute
    drift = np.where(np.isfinite(slope) & (s0 >= 3), np.abs(slope), np.inf)
    best = int(np.lexsort((np.arange(n), drift, corrected))[0])
    info.update(stable_corrected_beats=int(corrected[best]),
                stable_hr_drift_bpm_per_min=float(drift[best]), stable_candidates=n)
    return Window(f"{win.label} stable {_fmt(length)}", float(starts[best]), float(ends[best]),
                  extra=info)


