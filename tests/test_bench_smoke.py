"""Smoke run of the benchmark suite at tiny sizes, so that it cannot rot.

This is not a timed test: no assertion is made about any time or ratio (at these sizes they mean
nothing). It asserts that every case runs end to end, reports its timings, and that the equality
checks each case makes before timing pass: the metric comparisons are against neurokit2 as the
reference library (``hrv_time``, ``hrv_frequency``, ``entropy_sample``, ``fractal_dfa``,
``signal_fixpeaks``), with the tolerances of the metric tests (1e-9 relative on the exact
definitions, 0.02 on DFA).
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
CASES = ("clean-night", "windows-night", "night-pipeline", "fresh-process", "season-batch",
         "cluster-batch",
         "scaling")


@pytest.fixture(scope="module")
def quick_run(tmp_path_factory):
    tmp = tmp_path_factory.mktemp("bench")
    out = tmp / "results.json"
    env = dict(os.environ, PYTHONWARNINGS="ignore")
    proc = subprocess.run(
        [sys.executable, "-m", "bench", "--quick", "--output", str(out), "--cache-dir",
         str(tmp / "cache")],
        cwd=REPO, capture_output=True, text=True, timeout=300, env=env, check=False,
    )
    return proc, out


def test_quick_run_exits_cleanly_and_writes_results(quick_run):
    proc, out = quick_run
    assert proc.returncode == 0, proc.stdout[-3000:] + proc.stderr[-3000:]
    assert out.is_file()
    doc = json.loads(out.read_text())
    assert doc["options"]["quick"] is True
    assert doc["machine"]["cpu_count"] >= 1
    assert [c["name"] for c in doc["cases"]] == list(CASES)
    # the terminal table lists every case
    for name in CASES:
        assert name in proc.stdout


@pytest.mark.parametrize("name", CASES)
def test_case_reports_timings_and_passes_its_checks(quick_run, name):
    proc, out = quick_run
    if not out.is_file():
        pytest.fail("no results written:\n" + proc.stderr[-3000:])
    case = {c["name"]: c for c in json.loads(out.read_text())["cases"]}[name]
    assert case["error"] is None, case["error"]
    assert case["checks"], "a case must check its outputs before timing them"
    failed = [f"{c['name']}: {c['detail']}" for c in case["checks"] if not c["passed"]]
    assert not failed, failed
    assert case["timings"], "no timings reported"
    for t in case["timings"].values():
        assert t["n"] >= 1
        assert t["median_s"] > 0
        assert t["min_s"] <= t["median_s"]
    assert case["targets"], "every case states its targets"
    for t in case["targets"]:
        assert t["verdict"].startswith(("PASS", "MISS"))


def test_unknown_case_is_a_usage_error():
    proc = subprocess.run([sys.executable, "-m", "bench", "--cases", "no-such-case"],
                          cwd=REPO, capture_output=True, text=True, timeout=120, check=False)
    assert proc.returncode == 2
    assert "unknown case" in proc.stderr
