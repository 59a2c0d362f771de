"""Run the rrkit night pipeline on one RR file in a fresh process; print time and memory as JSON.

Used by the ``scaling`` case: a fresh process per size, so that the peak resident memory
(``VmHWM``, see `_rss_mb`) belongs to that size alone. Order: imports, one measured run (its peak
RSS is reported), one run under ``tracemalloc`` (peak of traced allocations, numpy buffers
included), then the timed repetitions.

    python -m bench._scaling_worker FILE [FILE...] --repeat 3

Several files in one process (the ``--quick`` run, to save start-up time) share the process, so
their peak RSS readings are cumulative.
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
    """Peak resident memory of this process so far, in MiB.

    On Linux ``VmHWM`` of ``/proc/self/status``: it belongs to this program's own address space.
    (``ru_maxrss`` is not used there: it carries over the parent's peak through fork and exec,
    so a child started by a large parent would report the parent's size.)
    """
    try:
        with open("/proc/self/status", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) / 1024.0
    except OSError:
        pass
    kb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss  # KiB on Linux, bytes on macOS
    return kb / 1024.0 if sys.platform != "darwin" else kb / 2**20


def measure(path: str, repeat: int, window_s: float) -> dict:
    """Time and memory of the pipeline on one file (see the module notes for the order)."""
    import rrkit

    from .cases import _rrkit

    spec = _rrkit.sliding(window_s, window_s)

    def pipeline():
        return _rrkit.analyze(rrkit.read(path), spec, clean="drr")

    rss_before = _rss_mb()
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
    for _ in range(max(1, repeat)):
        gc.collect()
        t0 = time.perf_counter()
        pipeline()
        times.append(time.perf_counter() - t0)
    return {"times_s": times, "first_run_s": first_s, "n_windows": n_windows,
            "rss_after_imports_mb": rss_before, "peak_rss_mb": rss_peak,
            "tracemalloc_peak_mb": traced_peak / 2**20}


def main(argv=None) -> int:
    p = argparse.ArgumentParser(prog="python -m bench._scaling_worker")
    p.add_argument("files", nargs="+")
    p.add_argument("--repeat", type=int, nargs="+", default=[3],
                   help="repetitions, one for all files or one per file")
    p.add_argument("--window-s", type=float, default=300.0)
    a = p.parse_args(argv)
    reps = a.repeat if len(a.repeat) == len(a.files) else [a.repeat[0]] * len(a.files)
    import rrkit  # noqa: F401  (imports first, so that the first RSS reading includes them)

    out = [measure(f, r, a.window_s) for f, r in zip(a.files, reps, strict=True)]
    print(json.dumps(out))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
