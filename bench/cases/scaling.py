"""scaling: the night pipeline (read + clean + 5-minute windows, every domain) at 10^3 to 10^6
beats; time and peak memory per size, and the fitted growth exponent of time.

Each size runs in a fresh process (`bench._scaling_worker`) so that its peak resident memory is
its own. The exponent is the least-squares slope of log(median time) against log(beats) from
10^4 to 10^6 beats (at the small sizes fixed costs dominate). Inputs: seeded simulated series
with 2% injected artifacts, written once to the cache folder.
"""

from __future__ import annotations

import time

from .._data import write_rr_file
from .._harness import CaseResult, Check, Target, Timing, fit_exponent, run_worker

NAME = "scaling"
DESCRIPTION = "pipeline at 10^3..10^6 beats: time, peak memory, growth exponent"
SIZES = (1_000, 10_000, 100_000, 1_000_000)
QUICK_SIZES = (300, 1_000, 3_000)
REPEATS = {1_000: 5, 10_000: 5, 100_000: 3, 1_000_000: 2}
EXPONENT_MAX = 1.1
MEMORY_MAX_MB = 400.0


def _input(cfg, n: int):
    from rrkit.simulate import inject_artifacts, simulate_rr

    from .._data import artifact_rates

    path = cfg.cache_dir / "scaling" / f"beats_{n}.txt"
    if not path.is_file():
        rec = simulate_rr(n, seed=n)
        rec, _ = inject_artifacts(rec, rates=artifact_rates(0.02), seed=n + 1)
        tmp = write_rr_file(path.with_suffix(".part"), rec)
        tmp.replace(path)
    return path


def run(cfg) -> CaseResult:
    res = CaseResult(NAME, DESCRIPTION)
    t_case = time.perf_counter()
    sizes = QUICK_SIZES if cfg.quick else SIZES
    per_size = {}
    paths = [_input(cfg, n) for n in sizes]
    reps = [cfg.reps(REPEATS.get(n, 3), 1) for n in sizes]
    if cfg.quick:  # one process for all sizes: saves start-up time, memory readings cumulative
        outs = run_worker("bench._scaling_worker", [*map(str, paths), "--repeat", *map(str, reps)])
        res.notes.append("quick run: all sizes in one process (peak RSS readings cumulative)")
    else:  # a fresh process per size: each peak RSS reading is that size's own
        outs = [run_worker("bench._scaling_worker", [str(p), "--repeat", str(r)])[0]
                for p, r in zip(paths, reps, strict=True)]
    for n, out in zip(sizes, outs, strict=True):
        timing = Timing(out["times_s"])
        res.timings[f"{n:>9,d} beats"] = timing
        per_size[n] = {**out, "median_s": timing.median_s, "min_s": timing.min_s,
                       "us_per_beat": 1e6 * timing.median_s / n}
    res.metrics["per_size"] = per_size
    res.params = {"sizes": list(sizes)}
    fit_from = sizes[1:]
    expo = fit_exponent(fit_from, [per_size[n]["median_s"] for n in fit_from])
    big = sizes[-1]
    res.ratios = {}
    res.checks.append(Check(
        "windows cover every size", all(per_size[n]["n_windows"] > 0 for n in sizes),
        ", ".join(f"{n}: {per_size[n]['n_windows']} windows" for n in sizes)))
    res.targets.append(Target(f"time exponent {fit_from[0]:,}..{big:,} beats", expo, "<=",
                              EXPONENT_MAX, unit=""))
    res.targets.append(Target(f"peak RSS at {big:,} beats", per_size[big]["peak_rss_mb"], "<=",
                              MEMORY_MAX_MB, unit="MB"))
    res.notes.append(
        "peak RSS includes the interpreter and imports ("
        f"{per_size[big]['rss_after_imports_mb']:.0f} MB after imports); tracemalloc peak of the "
        f"pipeline alone at {big:,} beats: {per_size[big]['tracemalloc_peak_mb']:.0f} MB")
    res.notes.append("time per beat: " + ", ".join(
        f"{n:,}: {per_size[n]['us_per_beat']:.1f} µs" for n in sizes))
    res.elapsed_s = time.perf_counter() - t_case
    return res
