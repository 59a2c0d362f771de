"""Profile rrkit's side of a benchmark case at its benchmark size (cProfile).

    python -m bench.profile night-pipeline          # top functions by own time and cumulative
    python -m bench.profile clean-night --top 30
    python -m bench.profile season-file             # the per-file work of the daily batch

Prints a stage breakdown (plain wall-clock timings of each stage, no profiler) and then the
cProfile tables, so that the overhead of profiling does not distort the breakdown.
"""

from __future__ import annotations

import argparse
import cProfile
import io
import pstats
import statistics
import time
from collections.abc import Callable

from ._data import write_rr_file
from .cases import Config, _rrkit

TARGETS = ("clean-night", "windows-night", "night-pipeline", "season-file")


def _wall(fn: Callable[[], object], n: int) -> float:
    fn()
    times = []
    for _ in range(n):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def _stages(target: str, cfg: Config) -> tuple[dict[str, Callable[[], object]],
                                              Callable[[], object]]:
    import rrkit

    spec = _rrkit.sliding(300.0, 300.0)
    if target == "season-file":
        from rrkit.batch._work import process_file
        from rrkit.daily import DailySettings
        from rrkit.simulate import inject_artifacts, simulate_rr

        from ._data import artifact_rates

        rec, _ = inject_artifacts(simulate_rr(duration_s=360.0, seed=3),
                                  rates=artifact_rates(0.01), seed=4)
        path = write_rr_file(cfg.cache_dir / "profile-morning.txt", rec)
        s = DailySettings()
        one = rrkit.read(path)
        stages = {
            "read": lambda: rrkit.read(path),
            "clean": lambda: rrkit.clean(one),
            "process_file (read+clean+window+metrics)":
                lambda: process_file((str(path), path.name, "0"), settings=s),
        }
        return stages, stages["process_file (read+clean+window+metrics)"]
    night = cfg.night()
    if target == "clean-night":
        rec = night.recording
        stages = {"clean(drr)": lambda: rrkit.clean(rec, method="drr")}
        return stages, stages["clean(drr)"]
    if target == "windows-night":
        cleaned = cfg.cleaned_night()
        stages = {
            "analyze(Recording, clean=None)":
                lambda: _rrkit.analyze(cleaned.recording, spec, clean=None),
            "analyze(CleanResult)": lambda: _rrkit.analyze(cleaned, spec, clean=None),
        }
        return stages, stages["analyze(Recording, clean=None)"]
    path = write_rr_file(cfg.cache_dir / "night.txt", night.recording)
    rec = rrkit.read(path)
    cr = rrkit.clean(rec)
    stages = {
        "read": lambda: rrkit.read(path),
        "clean(drr)": lambda: rrkit.clean(rec),
        "analyze(CleanResult)": lambda: _rrkit.analyze(cr, spec, clean=None),
        "pipeline": lambda: _rrkit.analyze(rrkit.read(path), spec, clean="drr"),
    }
    return stages, stages["pipeline"]


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m bench.profile", description=__doc__.split("\n")[0])
    p.add_argument("target", choices=TARGETS)
    p.add_argument("--top", type=int, default=25, help="rows of each cProfile table")
    p.add_argument("--repeat", type=int, default=5, help="calls timed / profiled")
    a = p.parse_args(argv)
    cfg = Config()
    cfg.cache_dir.mkdir(parents=True, exist_ok=True)
    stages, main_fn = _stages(a.target, cfg)
    print(f"stage breakdown ({a.target}, median of {a.repeat} calls, no profiler):")
    for name, fn in stages.items():
        print(f"  {name:<45} {1e3 * _wall(fn, a.repeat):8.1f} ms")
    prof = cProfile.Profile()
    prof.enable()
    for _ in range(a.repeat):
        main_fn()
    prof.disable()
    for key in ("tottime", "cumulative"):
        buf = io.StringIO()
        pstats.Stats(prof, stream=buf).sort_stats(key).print_stats(a.top)
        print(f"\n--- cProfile, {a.repeat} calls, sorted by {key} ---")
        print("\n".join(ln for ln in buf.getvalue().splitlines() if ln.strip()))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
