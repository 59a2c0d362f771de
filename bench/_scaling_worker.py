"""Run the rrkit night pipeline on one RR file in a fresh process; print time and memory as JSON.

Used by the ``scaling`` case: a fresh process per size, so that the peak resident memory
(``resource.getrusage``) belongs to that size alone. Order: imports, one measured run (its peak
RSS is reported), one run under ``tracemalloc`` (peak of traced allocations, numpy buffers
included), then the timed repetitions.

    python -m bench._scaling_worker FILE --repeat 3
"""

from __future__ import annotations

import argparse
import gc
import json
import resource
import sys
import time
import tracemalloc


def _rss_mb() -> float:
    kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # KiB on Linux
    return kb / 1024.0 if sys.platform != "darwin" else kb / 2**20


def main(argv=None) -> int:
    p = argparse.ArgumentParser(prog="python -m bench._scaling_worker")
    p.add_argument("file")
    p.add_argument("--repeat", type=int, default=3)
    p.add_argument("--window-s", type=float, default=300.0)
    a = p.parse_args(argv)

    import rrkit

    from .cases import _rrkit

    spec = _rrkit.sliding(a.window_s, a.window_s)

    def pipeline():
        return _rrkit.analyze(rrkit.read(a.file), spec, clean="drr")

    rss_imports = _rss_mb()
    t0 = time.perf_counter()
    table = pipeline()
    first_s = time.perf_counter() - t0
    rss_peak = _rss_mb()
    n_windows = len(table)
    del table
    gc.collect()
    tracemalloc.start()
    pipeline()
    _cur, traced_peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    gc.collect()
    times = []
    for _ in range(max(1, a.repeat)):
        gc.collect()
        t0 = time.perf_counter()
        pipeline()
        times.append(time.perf_counter() - t0)
    print(json.dumps({
        "times_s": times, "first_run_s": first_s, "n_windows": n_windows,
        "rss_after_imports_mb": rss_imports, "peak_rss_mb": rss_peak,
        "tracemalloc_peak_mb": traced_peak / 2**20,
    }))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
