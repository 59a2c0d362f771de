"""The small version of the soak (`bench.soak`): a few hundred files, workers and the run killed.

The full version (20,000 files) is ``python -m bench.soak``; see its module notes.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]


@pytest.mark.skipif(not Path("/proc/self/task").is_dir(), reason="finds workers through /proc")
def test_small_soak_resumes_to_the_undisturbed_table(tmp_path):
    out = tmp_path / "soak.json"
    proc = subprocess.run(
        [sys.executable, "-m", "bench.soak", "--files", "300", "--resumes", "2",
         "--worker-kills", "2", "--workdir", str(tmp_path / "work"), "--json", str(out)],
        cwd=REPO, capture_output=True, text=True, timeout=600,
        env=dict(os.environ, PYTHONWARNINGS="ignore"), check=False)
    assert out.is_file(), proc.stdout[-3000:] + proc.stderr[-3000:]
    figures = json.loads(out.read_text())
    assert figures["checks"], "the soak checks its outputs"
    failed = [k for k, v in figures["checks"].items() if not v]
    assert not failed, (failed, figures.get("last_stderr"))
    assert proc.returncode == 0
    assert figures["broken"] >= 13  # every broken kind at least once
    assert figures["run_kills"] >= 1
    assert figures["worker_kills"] >= 1
