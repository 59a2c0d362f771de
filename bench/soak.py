"""Soak of ``rrkit daily``: a large folder, workers killed at random, the run killed and resumed.

Usage::

    python -m bench.soak                       # 20,000 files, 4 interrupted runs + the last one
    python -m bench.soak --files 300 --resumes 2 --json out.json     # the small version (CI)

What it does:

1. writes ``--files`` small morning files (invented RR series, one per subject per day, named
   ``S0001_2026-01-05_0700.txt``) into a work folder, about 3 % of them broken in every way
   rrkit knows of (`BROKEN_KINDS`: empty, binary, truncated gzip, text in the numbers, negative,
   NaN and 1e308 intervals, a header alone, one huge line, too few beats, an impossible date in
   the name, a name that places nothing, a named pipe);
2. runs ``rrkit daily --jobs N`` once undisturbed (the reference);
3. runs it again into a second folder ``--resumes`` times, each time killing a worker process at
   random moments (SIGKILL) and then the whole run (SIGKILL to its process group) once it has
   made some progress, then a last time to the end, still with workers killed at random;
4. checks the final outputs against the reference: ``daily.csv``, ``weekly.csv``,
   ``recordings.csv`` and ``errors.csv`` byte-identical, the same count of files, no file
   listed as lost to a worker death, no temporary file left, the folder lock released.

It prints the figures (files, broken files, wall times, worker kills, run kills, resumes,
result) and exits 0 when every check passed, 1 otherwise. Every process it kills is one it
started (the runs and their worker processes).
"""

from __future__ import annotations

import argparse
import gzip
import json
import os
import random
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

#: The broken-file kinds the soak mixes in (one name per way a file can be bad).
BROKEN_KINDS = ("empty", "binary", "truncated-gzip", "text-in-numbers", "negative", "nan",
                "huge-value", "header-only", "huge-line", "too-few-beats", "impossible-date",
                "unplaceable-name", "named-pipe")
OUTPUTS = ("daily.csv", "weekly.csv", "recordings.csv", "errors.csv")
TMP_SUFFIX = ".rrkit-tmp"


def _series(rng: np.random.Generator, n: int = 400) -> np.ndarray:
    """An invented morning: RR around a personal mean with slow and breathing-rate swings."""
    mean = rng.uniform(850.0, 1150.0)
    t = np.arange(n)
    rr = (mean + 40.0 * np.sin(2 * np.pi * t / rng.uniform(4.0, 6.0))
          + 25.0 * np.sin(2 * np.pi * t / rng.uniform(20.0, 40.0)) + rng.normal(0.0, 12.0, n))
    return np.round(rr).astype(int)


def _text(rr: np.ndarray) -> str:
    return "\n".join(map(str, rr.tolist())) + "\n"


def make_folder(root: Path, n_files: int, *, broken_share: float = 0.03, seed: int = 11) -> dict:
    """Write the soak folder; returns counts per kind."""
    import datetime as dt

    rng = np.random.default_rng(seed)
    n_subjects = max(1, int(np.ceil(n_files / 120)))
    per = int(np.ceil(n_files / n_subjects))
    n_broken = max(len(BROKEN_KINDS), round(broken_share * n_files))
    broken_at = set(rng.choice(n_files, size=min(n_broken, n_files), replace=False).tolist())
    counts = {"good": 0, **dict.fromkeys(BROKEN_KINDS, 0)}
    k = 0
    day0 = dt.date(2026, 1, 5)
    for i in range(n_files):
        subj = f"S{i // per + 1:04d}"
        day = day0 + dt.timedelta(days=i % per)
        folder = root / subj
        folder.mkdir(parents=True, exist_ok=True)
        name = f"{subj}_{day:%Y-%m-%d}_0700.txt"
        path = folder / name
        if i not in broken_at:
            path.write_text(_text(_series(rng)))
            counts["good"] += 1
            continue
        kind = BROKEN_KINDS[k % len(BROKEN_KINDS)]
        k += 1
        counts[kind] += 1
        rr = _series(rng)
        if kind == "empty":
            path.write_bytes(b"")
        elif kind == "binary":
            path.write_bytes(rng.integers(0, 256, 3000, dtype=np.uint8).tobytes())
        elif kind == "truncated-gzip":
            raw = gzip.compress(_text(rr).encode())
            path.with_name(name + ".gz").write_bytes(raw[: len(raw) // 2])
        elif kind == "text-in-numbers":
            lines = _text(rr).splitlines()
            lines[len(lines) // 2] = "eight hundred"
            path.write_text("\n".join(lines) + "\n")
        elif kind == "negative":
            rr[10] = -800
            path.write_text(_text(rr))
        elif kind == "nan":
            path.write_text(_text(rr).replace("\n", "\nnan\n", 1))
        elif kind == "huge-value":
            path.write_text("1e308\n" + _text(rr))
        elif kind == "header-only":
            path.write_text("RR interval (ms)\n")
        elif kind == "huge-line":
            path.write_text("9" * 200_000 + "\n")
        elif kind == "too-few-beats":
            path.write_text(_text(rr[:4]))
        elif kind == "impossible-date":
            path.with_name(f"{subj}_2026-02-30_0700.txt").write_text(_text(rr))
        elif kind == "unplaceable-name":
            path.with_name(f"notes-{i}.txt").write_text(_text(rr))
        elif kind == "named-pipe":
            if hasattr(os, "mkfifo"):
                os.mkfifo(path)
            else:  # pragma: no cover - no named pipes here
                path.write_bytes(b"")
    return counts


def _cmd(data: Path, out: Path, jobs: int) -> list[str]:
    return [sys.executable, "-m", "rrkit", "daily", str(data), "-o", str(out), "--jobs",
            str(jobs), "--no-progress"]


def _children(pid: int) -> list[int]:
    try:
        text = Path(f"/proc/{pid}/task/{pid}/children").read_text()
    except OSError:
        return []
    return [int(x) for x in text.split()]


def _n_cached(out: Path) -> int:
    cache = out / ".rrkit-cache"
    return len(list(cache.glob("*.npz"))) if cache.is_dir() else 0


def _disturbed_run(data: Path, out: Path, jobs: int, rng: random.Random, *, kill_run: bool,
                   target_cached: int, worker_kills: int, timeout_s: float) -> dict:
    """One run with workers killed at random; the run itself killed at ``target_cached``."""
    proc = subprocess.Popen(_cmd(data, out, jobs), stdout=subprocess.DEVNULL,
                            stderr=subprocess.PIPE, text=True, start_new_session=True,
                            env=dict(os.environ, PYTHONWARNINGS="ignore"))
    killed_workers = 0
    killed_run = False
    t0 = time.monotonic()
    next_kill = time.monotonic()  # the first worker dies as soon as work is under way
    try:
        while proc.poll() is None:
            if time.monotonic() - t0 > timeout_s:
                raise RuntimeError("a run took longer than the soak's time limit")
            now = time.monotonic()
            if killed_workers < worker_kills and now >= next_kill and _n_cached(out) > 0:
                kids = _children(proc.pid)
                if kids:
                    victim = rng.choice(kids)
                    try:
                        os.kill(victim, signal.SIGKILL)
                        killed_workers += 1
                    except ProcessLookupError:
                        pass
                next_kill = now + rng.uniform(0.5, 3.0)
            if kill_run and _n_cached(out) >= target_cached:
                os.killpg(proc.pid, signal.SIGKILL)  # the run and its workers
                killed_run = True
                break
            time.sleep(0.02)
    finally:
        proc.wait()
        err = proc.stderr.read() if proc.stderr else ""
        if proc.stderr:
            proc.stderr.close()
    return {"rc": proc.returncode, "killed_workers": killed_workers, "killed_run": killed_run,
            "wall_s": time.monotonic() - t0, "stderr": err[-2000:]}


def soak(n_files: int = 20_000, *, resumes: int = 4, worker_kills: int = 3, jobs: int = 2,
         seed: int = 11, workdir: Path | None = None, keep: bool = False,
         timeout_s: float = 3600.0) -> dict:
    """Run the soak; returns its figures and checks (see the module notes)."""
    rng = random.Random(seed)
    work = Path(workdir) if workdir else Path(tempfile.mkdtemp(prefix="rrkit-soak-"))
    work.mkdir(parents=True, exist_ok=True)
    data, ref, out = work / "data", work / "ref", work / "out"
    for p in (data, ref, out):
        shutil.rmtree(p, ignore_errors=True)
    figures: dict = {"files": n_files, "jobs": jobs, "resumes": resumes}
    try:
        t = time.monotonic()
        figures["kinds"] = make_folder(data, n_files, seed=seed)
        figures["broken"] = n_files - figures["kinds"]["good"]
        figures["generate_s"] = time.monotonic() - t
        t = time.monotonic()
        done = subprocess.run(_cmd(data, ref, jobs), capture_output=True, text=True,
                              timeout=timeout_s, env=dict(os.environ, PYTHONWARNINGS="ignore"))
        figures["reference_s"] = time.monotonic() - t
        figures["reference_rc"] = done.returncode
        runs = []
        t = time.monotonic()
        n_good = figures["kinds"]["good"]
        for r in range(resumes + 1):
            last = r == resumes
            # each interrupted run gets further: kill it once a share more files are cached
            target = int(n_good * (r + 1) / (resumes + 2))
            runs.append(_disturbed_run(data, out, jobs, rng, kill_run=not last,
                                       target_cached=max(target, _n_cached(out) + 1),
                                       worker_kills=worker_kills, timeout_s=timeout_s))
        figures["disturbed_s"] = time.monotonic() - t
        figures["worker_kills"] = sum(x["killed_workers"] for x in runs)
        figures["run_kills"] = sum(x["killed_run"] for x in runs)
        figures["final_rc"] = runs[-1]["rc"]
        checks = {}
        for name in OUTPUTS:
            a, b = ref / name, out / name
            checks[f"{name} identical"] = a.is_file() and b.is_file() and \
                a.read_bytes() == b.read_bytes()
        prov_ref = json.loads((ref / "provenance.json").read_text())
        prov = json.loads((out / "provenance.json").read_text()) if \
            (out / "provenance.json").is_file() else {}
        # done/skipped differ after resumes; what was considered, failed and left out must not
        keys = ("files", "failed", "ignored")
        checks["same file counts"] = bool(prov) and all(
            prov["counts"][k] == prov_ref["counts"][k] for k in keys)
        errors = (out / "errors.csv").read_text() if (out / "errors.csv").is_file() else ""
        checks["no file lost to a worker death"] = "WorkerDied" not in errors
        checks["no temporary files left"] = not [p for p in out.rglob("*")
                                                 if p.name.endswith(TMP_SUFFIX)]
        lock = out / ".rrkit-lock"
        checks["folder lock released"] = not lock.exists() or lock.read_text() == ""
        checks["last run finished"] = runs[-1]["rc"] in (0, 1) and not runs[-1]["killed_run"]
        checks["reference run finished"] = figures["reference_rc"] in (0, 1)
        figures["retried_in_last_run"] = len(prov.get("retried_after_worker_loss", {}))
        figures["checks"] = checks
        figures["passed"] = all(checks.values())
        if not figures["passed"]:
            figures["last_stderr"] = runs[-1]["stderr"]
    finally:
        if not keep:
            shutil.rmtree(work, ignore_errors=True)
    return figures


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(prog="python -m bench.soak", description=__doc__.split("\n")[0])
    p.add_argument("--files", type=int, default=20_000, help="files to generate (default 20000)")
    p.add_argument("--resumes", type=int, default=4,
                   help="interrupted runs before the last one (default 4)")
    p.add_argument("--worker-kills", type=int, default=3,
                   help="workers killed per run, at random moments (default 3)")
    p.add_argument("--jobs", type=int, default=2, help="rrkit daily --jobs (default 2)")
    p.add_argument("--seed", type=int, default=11)
    p.add_argument("--workdir", type=Path, default=None, help="work folder (default: a new "
                                                              "temporary folder)")
    p.add_argument("--keep", action="store_true", help="keep the work folder")
    p.add_argument("--json", type=Path, default=None, help="also write the figures here")
    a = p.parse_args(argv)
    figures = soak(a.files, resumes=a.resumes, worker_kills=a.worker_kills, jobs=a.jobs,
                   seed=a.seed, workdir=a.workdir, keep=a.keep)
    text = json.dumps(figures, indent=1)
    print(text)
    if a.json:
        a.json.write_text(text + "\n")
    print(f"soak: {figures['files']} files ({figures['broken']} broken), reference "
          f"{figures['reference_s']:.0f} s, disturbed {figures['disturbed_s']:.0f} s, "
          f"{figures['worker_kills']} workers killed, {figures['run_kills']} runs killed and "
          f"resumed: {'PASS' if figures['passed'] else 'FAIL'}")
    return 0 if figures["passed"] else 1


if __name__ == "__main__":
    sys.exit(main())
