"""``python -m bench``: run the benchmark cases side by side with neurokit2 and report.

Examples
--------
    python -m bench                          # every case, full sizes, writes bench/results.json
    python -m bench --cases clean-night,scaling --repeat 3
    python -m bench --quick                  # tiny sizes (what the smoke test runs)
"""

from __future__ import annotations

import argparse
import logging
import sys
import time
import traceback
from datetime import datetime, timezone
from pathlib import Path

from ._harness import format_case, format_table, machine_info, write_results
from .cases import CASES, Config

HERE = Path(__file__).resolve().parent


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="python -m bench",
        description=("Benchmark rrkit against neurokit2 on the same inputs, in one run: checks "
                     "that the compared outputs agree, then times both sides (median and min of "
                     "interleaved repetitions) and prints the ratios with their targets."),
        epilog="Cases: " + ", ".join(CASES) + ". Results: bench/results.json (full runs) or "
               "bench/results-quick.json (--quick), unless --output is given.",
    )
    p.add_argument("--cases", default="all",
                   help="comma-separated case names to run (default: all)")
    p.add_argument("--quick", action="store_true",
                   help="tiny sizes: every code path in seconds (used by the smoke test); "
                        "timings at these sizes mean nothing")
    p.add_argument("--repeat", type=int, default=None, metavar="N",
                   help="repetitions per timing (default: each case's own, 2-5)")
    p.add_argument("--output", type=Path, default=None, metavar="PATH",
                   help="where to write the JSON results")
    p.add_argument("--cache-dir", type=Path, default=None, metavar="DIR",
                   help="where generated input files go (default: bench/_cache, ignored by git)")
    p.add_argument("--no-json", action="store_true", help="print only, write no JSON")
    p.add_argument("--list", action="store_true", help="list the cases and exit")
    return p


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)
    if args.list:
        for name, mod in CASES.items():
            print(f"{name:<16} {mod.DESCRIPTION}")
        return 0
    if args.cases == "all":
        names = list(CASES)
    else:
        names = [n.strip() for n in args.cases.split(",") if n.strip()]
        unknown = [n for n in names if n not in CASES]
        if unknown:
            print(f"bench: unknown case(s) {', '.join(unknown)}; known: {', '.join(CASES)}",
                  file=sys.stderr)
            return 2
    if args.repeat is not None and args.repeat < 1:
        print("bench: --repeat must be at least 1", file=sys.stderr)
        return 2
    logging.getLogger("rrkit").setLevel(logging.ERROR)
    cfg = Config(quick=args.quick, repeat=args.repeat)
    if args.cache_dir is not None:
        cfg.cache_dir = args.cache_dir
    cfg.cache_dir.mkdir(parents=True, exist_ok=True)

    started = datetime.now(timezone.utc)
    t0 = time.perf_counter()
    machine = machine_info()
    print(f"rrkit bench {started:%Y-%m-%d %H:%M} UTC  |  {machine['usable_cores']} cores usable "
          f"({machine['cpu_count']} total), load {machine['load_average_1_5_15']}  |  rrkit "
          f"{machine['versions']['rrkit']}, neurokit2 {machine['versions']['neurokit2']}"
          + ("  |  QUICK (tiny sizes: timings mean nothing)" if args.quick else ""), flush=True)
    results = []
    for name in names:
        mod = CASES[name]
        print(f"\n.. running {name} ...", flush=True)
        t_case = time.perf_counter()
        try:
            res = mod.run(cfg)
        except Exception as exc:  # a broken stage must not hide the other cases
            from ._harness import CaseResult

            res = CaseResult(name, mod.DESCRIPTION, error=f"{type(exc).__name__}: {exc}")
            traceback.print_exc(limit=8)
        res.elapsed_s = time.perf_counter() - t_case
        results.append(res)
        print(format_case(res), flush=True)
    wall = time.perf_counter() - t0
    print(f"\nSummary ({wall:.0f} s; ratios are neurokit2 time / rrkit time, medians of "
          "interleaved repetitions)\n")
    print(format_table(results))
    if not args.no_json:
        out = args.output or (HERE / ("results-quick.json" if args.quick else "results.json"))
        write_results(out, results, options={"cases": names, "quick": args.quick,
                                             "repeat": args.repeat},
                      machine=machine, started=started, wall_s=wall)
        print(f"\nresults written to {out}")
        if names == list(CASES) and not args.quick and args.output is None:
            from .section import main as write_section

            write_section([str(out), "-o", str(HERE / "PERFORMANCE_SECTION.md")])
    return 1 if any(r.error for r in results) else 0


if __name__ == "__main__":
    raise SystemExit(main())
