"""Timing, memory, fitting and reporting utilities shared by every benchmark case.

Measurement rules (the machine is shared and noisy, so only same-run ratios mean anything):

- both sides of a comparison run in the same process, in the same run, on the same inputs;
- repetitions are *interleaved* (rrkit, neurokit2, rrkit, neurokit2, ...) so that a burst of load
  from other users falls on both sides rather than on one;
- the compared outputs are checked first; a case whose check fails still shows its timings, but
  its verdict is ``CHECK FAILED`` and no target can pass on it;
- every case reports the median and the minimum of its repetitions; ratios are formed from the
  medians (the headline) and from the minima (the least disturbed run).
"""

from __future__ import annotations

import dataclasses
import gc
import json
import math
import os
import platform
import statistics
import subprocess
import sys
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

import numpy as np

__all__ = [
    "CaseResult",
    "Check",
    "Target",
    "Timing",
    "fit_exponent",
    "format_table",
    "machine_info",
    "run_worker",
    "time_calls",
    "time_pair",
    "write_results",
]


# --------------------------------------------------------------------------- timings
@dataclass
class Timing:
    """Wall-clock times of repeated calls, in seconds."""

    times_s: list[float]

    @property
    def median_s(self) -> float:
        return float(statistics.median(self.times_s)) if self.times_s else math.nan

    @property
    def min_s(self) -> float:
        return float(min(self.times_s)) if self.times_s else math.nan

    def to_dict(self) -> dict[str, Any]:
        return {"median_s": self.median_s, "min_s": self.min_s, "n": len(self.times_s),
                "times_s": [round(t, 6) for t in self.times_s]}


def _timed(fn: Callable[[], Any]) -> tuple[float, Any]:
    gc.collect()
    t0 = time.perf_counter()
    out = fn()
    return time.perf_counter() - t0, out


def time_calls(fn: Callable[[], Any], repeat: int) -> Timing:
    """Call ``fn`` ``repeat`` times; return the wall-clock times."""
    return Timing([_timed(fn)[0] for _ in range(max(1, repeat))])


def time_pair(
    rrkit_fn: Callable[[], Any],
    nk_fn: Callable[[], Any],
    *,
    repeat: int,
    nk_repeat: int | None = None,
) -> tuple[Timing, Timing]:
    """Time the two sides interleaved: ``repeat`` rounds, each one rrkit call then one neurokit2
    call (neurokit2 runs only in the first ``nk_repeat`` rounds when that is smaller)."""
    nk_repeat = repeat if nk_repeat is None else min(nk_repeat, repeat)
    rr_t: list[float] = []
    nk_t: list[float] = []
    for i in range(max(1, repeat)):
        rr_t.append(_timed(rrkit_fn)[0])
        if i < nk_repeat:
            nk_t.append(_timed(nk_fn)[0])
    return Timing(rr_t), Timing(nk_t)


# --------------------------------------------------------------------------- results
@dataclass
class Check:
    """An equality/quality check of the compared outputs, done before timings are reported."""

    name: str
    passed: bool
    detail: str = ""
    value: Any = None

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "passed": bool(self.passed), "detail": self.detail,
                "value": _jsonable(self.value)}


@dataclass
class Target:
    """A performance target: ``value <op> limit`` (``op`` is ``">="`` or ``"<="``)."""

    name: str
    value: float
    op: str
    limit: float
    unit: str = "x"

    @property
    def passed(self) -> bool:
        if self.value is None or not np.isfinite(self.value):
            return False
        return self.value >= self.limit if self.op == ">=" else self.value <= self.limit

    def to_dict(self) -> dict[str, Any]:
        return {"name": self.name, "value": _jsonable(self.value), "op": self.op,
                "limit": self.limit, "unit": self.unit, "passed": self.passed}


@dataclass
class CaseResult:
    """Everything one case reports."""

    name: str
    description: str
    params: dict[str, Any] = field(default_factory=dict)
    timings: dict[str, Timing] = field(default_factory=dict)
    ratios: dict[str, float] = field(default_factory=dict)
    checks: list[Check] = field(default_factory=list)
    targets: list[Target] = field(default_factory=list)
    metrics: dict[str, Any] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)
    error: str | None = None
    elapsed_s: float = math.nan

    @property
    def checks_passed(self) -> bool:
        return self.error is None and all(c.passed for c in self.checks)

    @property
    def verdict(self) -> str:
        if self.error is not None:
            return "ERROR"
        if not self.checks_passed:
            return "CHECK FAILED"
        if not self.targets:
            return "DONE"
        return "PASS" if all(t.passed for t in self.targets) else "MISS"

    def target_verdict(self, target: Target) -> str:
        if not self.checks_passed:
            return "MISS (check failed)"
        return "PASS" if target.passed else "MISS"

    def to_dict(self) -> dict[str, Any]:
        return {
            "name": self.name,
            "description": self.description,
            "verdict": self.verdict,
            "params": _jsonable(self.params),
            "timings": {k: v.to_dict() for k, v in self.timings.items()},
            "ratios": _jsonable(self.ratios),
            "checks": [c.to_dict() for c in self.checks],
            "targets": [dict(t.to_dict(), verdict=self.target_verdict(t)) for t in self.targets],
            "metrics": _jsonable(self.metrics),
            "notes": list(self.notes),
            "error": self.error,
            "elapsed_s": round(self.elapsed_s, 3),
        }


def _jsonable(x: Any) -> Any:
    if isinstance(x, dict):
        return {str(k): _jsonable(v) for k, v in x.items()}
    if isinstance(x, (list, tuple)):
        return [_jsonable(v) for v in x]
    if isinstance(x, (np.bool_, bool)):
        return bool(x)
    if isinstance(x, (np.integer,)):
        return int(x)
    if isinstance(x, (np.floating, float)):
        v = float(x)
        return v if math.isfinite(v) else None
    if isinstance(x, np.ndarray):
        return _jsonable(x.tolist())
    if dataclasses.is_dataclass(x) and not isinstance(x, type):
        return _jsonable(dataclasses.asdict(x))
    return x


def ratio(slow_s: float, fast_s: float) -> float:
    """``slow_s / fast_s`` (NaN when undefined)."""
    if not (fast_s > 0 and math.isfinite(slow_s)):
        return math.nan
    return slow_s / fast_s


def speed_ratios(rr: Timing, nk: Timing) -> dict[str, float]:
    """How many times faster rrkit is: by medians and by minima."""
    return {"median": ratio(nk.median_s, rr.median_s), "min": ratio(nk.min_s, rr.min_s)}


# --------------------------------------------------------------------------- fitting
def fit_exponent(n: Sequence[float], t: Sequence[float]) -> float:
    """Least-squares slope of ``log t`` against ``log n`` (the growth exponent of time)."""
    x = np.log(np.asarray(n, dtype=float))
    y = np.log(np.asarray(t, dtype=float))
    if x.size < 2 or not np.all(np.isfinite(y)):
        return math.nan
    slope, _ = np.polyfit(x, y, 1)
    return float(slope)


# --------------------------------------------------------------------------- subprocesses
def run_worker(module: str, args: Sequence[str], *, timeout_s: float = 900) -> dict[str, Any]:
    """Run ``python -m module args...`` from the repository root; parse the JSON it prints last."""
    root = Path(__file__).resolve().parents[1]
    proc = subprocess.run(
        [sys.executable, "-m", module, *args], cwd=root, capture_output=True, text=True,
        timeout=timeout_s, check=False,
    )
    if proc.returncode != 0:
        raise RuntimeError(f"{module} {' '.join(args)} failed (exit {proc.returncode}):\n"
                           f"{proc.stderr.strip()[-2000:]}")
    lines = [ln for ln in proc.stdout.splitlines() if ln.strip()]
    return json.loads(lines[-1])


# --------------------------------------------------------------------------- machine
def _version(name: str) -> str | None:
    try:
        from importlib.metadata import version

        return version(name)
    except Exception:
        return None


def machine_info() -> dict[str, Any]:
    """Core count, load, platform and library versions (recorded with every run)."""
    try:
        usable = len(os.sched_getaffinity(0))
    except AttributeError:
        usable = os.cpu_count()
    try:
        load = [round(v, 2) for v in os.getloadavg()]
    except OSError:
        load = None
    import rrkit

    return {
        "cpu_count": os.cpu_count(),
        "usable_cores": usable,
        "load_average_1_5_15": load,
        "platform": platform.platform(),
        "processor": platform.processor() or platform.machine(),
        "python": platform.python_version(),
        "versions": {
            "rrkit": getattr(rrkit, "__version__", None),
            "neurokit2": _version("neurokit2"),
            "numpy": _version("numpy"),
            "scipy": _version("scipy"),
            "pandas": _version("pandas"),
            "h5py": _version("h5py"),
        },
        "env": {k: os.environ[k] for k in ("OPENBLAS_CORETYPE", "OMP_NUM_THREADS",
                                           "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS")
                if k in os.environ},
    }


def git_commit() -> str | None:
    root = Path(__file__).resolve().parents[1]
    try:
        out = subprocess.run(["git", "rev-parse", "--short", "HEAD"], cwd=root,
                             capture_output=True, text=True, timeout=10, check=False)
    except (OSError, subprocess.SubprocessError):
        return None
    return out.stdout.strip() or None


def write_results(path: Path, results: list[CaseResult], *, options: dict[str, Any],
                  machine: dict[str, Any], started: datetime, wall_s: float) -> None:
    """Write the run as JSON (atomically: a temporary file, then a rename)."""
    doc = {
        "date": started.astimezone(timezone.utc).isoformat(timespec="seconds"),
        "wall_s": round(wall_s, 1),
        "git_commit": git_commit(),
        "options": options,
        "machine": machine,
        "load_average_end": [round(v, 2) for v in os.getloadavg()],
        "cases": [r.to_dict() for r in results],
    }
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_text(json.dumps(doc, indent=2, allow_nan=False) + "\n", encoding="utf-8")
    os.replace(tmp, path)


# --------------------------------------------------------------------------- formatting
def _fmt_s(s: float) -> str:
    if s is None or not math.isfinite(s):
        return "-"
    if s < 1e-3:
        return f"{s * 1e6:.0f} µs"
    if s < 1:
        return f"{s * 1e3:.1f} ms"
    return f"{s:.2f} s"


def _fmt_v(v: float, unit: str) -> str:
    if v is None or not math.isfinite(v):
        return "-"
    if unit == "x":  # two decimals below 10x, so that 1.56x never reads as a target of 1.6x
        return f"{v:.1f}x" if v >= 10 else f"{v:.2f}x"
    return f"{v:.3g} {unit}".strip()


def format_case(r: CaseResult) -> str:
    """A readable block for one case: timings, ratios, checks, targets."""
    lines = [f"== {r.name}: {r.description}  [{r.verdict}]"]
    if r.params:
        lines.append("   sizes: " + ", ".join(f"{k}={v}" for k, v in r.params.items()))
    if r.error:
        lines.append(f"   ERROR: {r.error}")
    for c in r.checks:
        lines.append(f"   check {'ok  ' if c.passed else 'FAIL'} {c.name}: {c.detail}")
    if r.timings:
        w = max(len(k) for k in r.timings)
        lines.append(f"   {'timing':<{w}}  {'median':>10}  {'min':>10}  n")
        for k, t in r.timings.items():
            lines.append(f"   {k:<{w}}  {_fmt_s(t.median_s):>10}  {_fmt_s(t.min_s):>10}  "
                         f"{len(t.times_s)}")
    for k, v in r.ratios.items():
        lines.append(f"   ratio {k}: {_fmt_v(v, 'x')}")
    for t in r.targets:
        lines.append(f"   target {t.name}: {_fmt_v(t.value, t.unit)} (target {t.op} "
                     f"{_fmt_v(t.limit, t.unit)})  {r.target_verdict(t)}")
    for n in r.notes:
        lines.append(f"   note: {n}")
    return "\n".join(lines)


def format_table(results: list[CaseResult]) -> str:
    """The summary table: one line per target."""
    rows = [("case", "measure", "value", "target", "verdict")]
    for r in results:
        if r.error or not r.targets:
            rows.append((r.name, "-", "-", "-", r.verdict))
        for t in r.targets:
            rows.append((r.name, t.name, _fmt_v(t.value, t.unit),
                         f"{t.op} {_fmt_v(t.limit, t.unit)}",
                         r.target_verdict(t)))
    widths = [max(len(row[i]) for row in rows) for i in range(5)]
    out = []
    for j, row in enumerate(rows):
        out.append("  ".join(cell.ljust(widths[i]) for i, cell in enumerate(row)).rstrip())
        if j == 0:
            out.append("  ".join("-" * w for w in widths))
    return "\n".join(out)
