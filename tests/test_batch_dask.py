"""The batch stages on a Dask cluster: same outputs as the process pool, and the faults.

Every test here shares one `distributed.LocalCluster` of 2 worker processes, started by the
module fixture and closed at the end.
"""

from __future__ import annotations

import gzip
import os
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import h5py
import numpy as np
import pandas as pd
import pytest

pytest.importorskip("distributed")

import datetime as dt

import rrkit
from rrkit.batch import DaskExecutor, InlineExecutor, run_daily
from rrkit.batch._run import _PRELOAD
from rrkit.batch._work import CRASH_HOOK_ENV, broken_result
from rrkit.cli import main
from rrkit.daily import DailySettings
from rrkit.simulate import simulate_rr


def _squad_folder(root: Path, *, subjects=("A01", "B02"), n_days: int = 10):
    files = []
    for si, subj in enumerate(subjects):
        for d in range(n_days):
            day = dt.date(2026, 3, 2) + dt.timedelta(days=d)
            path = root / subj / f"{subj}_{day:%Y-%m-%d}_0710.txt"
            path.parent.mkdir(parents=True, exist_ok=True)
            rrkit.write_rr(path, simulate_rr(duration_s=370.0, seed=1000 * si + d,
                                             mean_rr_ms=900 + 60 * si, as_recording=False))
            files.append(path)
    return files


CRASH_MARK = "crash-on-read"
DEMO = Path(__file__).resolve().parents[1] / "data_samples" / "mornings"


@pytest.fixture(scope="module")
def cluster():
    old = os.environ.get(CRASH_HOOK_ENV)
    os.environ[CRASH_HOOK_ENV] = CRASH_MARK  # the workers inherit it when they start
    ex = DaskExecutor(n_workers=2, preload=_PRELOAD, on_broken=broken_result)
    try:
        ex.start()
        yield ex
    finally:
        ex.close()
        if old is None:
            os.environ.pop(CRASH_HOOK_ENV, None)
        else:
            os.environ[CRASH_HOOK_ENV] = old


def _h5_contents(path: Path) -> dict:
    out = {}

    def visit(name, obj):
        out[name + "@attrs"] = {k: (v.tolist() if isinstance(v, np.ndarray) else v)
                                for k, v in obj.attrs.items()}
        if isinstance(obj, h5py.Dataset):
            out[name] = obj[()]

    with h5py.File(path, "r") as f:
        f.visititems(visit)
    return out


def _assert_same_outputs(a: Path, b: Path) -> None:
    for name in ("daily.csv", "recordings.csv", "errors.csv", "weekly.csv"):
        assert (a / name).read_bytes() == (b / name).read_bytes(), name
    ha, hb = _h5_contents(a / "store.h5"), _h5_contents(b / "store.h5")
    assert list(ha) == list(hb)
    for key in ha:
        if isinstance(ha[key], np.ndarray):  # value for value, NaN included
            assert ha[key].dtype == hb[key].dtype, key
            assert repr(ha[key].tolist()) == repr(hb[key].tolist()), key
        else:
            assert ha[key] == hb[key], key
    ca = {p.name: p.read_bytes() for p in (a / ".rrkit-cache").iterdir()}
    cb = {p.name: p.read_bytes() for p in (b / ".rrkit-cache").iterdir()}
    assert ca == cb  # the resume cache too, byte for byte


def test_import_rrkit_never_imports_dask():
    code = ("import sys, rrkit, rrkit.batch, rrkit.cli; "
            "bad = sorted(m for m in sys.modules if m.split('.')[0] in ('dask', 'distributed')); "
            "print(bad); sys.exit(1 if bad else 0)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                          timeout=120)
    assert done.returncode == 0, done.stdout + done.stderr


def test_demo_mornings_same_as_one_job(tmp_path, cluster):
    s = DailySettings.from_options(tz="Europe/Berlin")
    # two athletes of the demo squad (a manifest of their rows; paths resolve under DEMO)
    lines = (DEMO / "manifest.csv").read_text().splitlines()
    man = tmp_path / "manifest.csv"
    man.write_text("\n".join([lines[0], *[ln for ln in lines[1:]
                                          if ln.split(",")[1] in ("R01", "R02")]]) + "\n")
    one = run_daily(DEMO, tmp_path / "one", manifest=man, settings=s, jobs=1)
    dsk = run_daily(DEMO, tmp_path / "dask", manifest=man, settings=s, executor=cluster)
    assert dsk.n_done == one.n_done > 100
    pd.testing.assert_frame_equal(one.table, dsk.table)
    _assert_same_outputs(tmp_path / "one", tmp_path / "dask")


def _broken_folder(root: Path) -> None:
    good = _squad_folder(root, subjects=("A01", "B02", "C03"), n_days=8)
    raw = gzip.compress(good[0].read_bytes())
    (root / "A01" / "A01_2026-03-20_0700.txt.gz").write_bytes(raw[: len(raw) // 2])
    (root / "B02" / "B02_2026-03-20_0700.txt").write_bytes(bytes(range(256)) * 8)
    (root / "B02" / "B02_2026-03-21_0700.txt").write_bytes(b"")
    (root / "C03" / "C03_2026-03-20_0700.txt").write_text("RR\n800\n-5\nabc\n")
    (root / "C03" / "nobody.txt").write_bytes(good[1].read_bytes())
    if hasattr(os, "mkfifo"):
        os.mkfifo(root / "C03" / "C03_2026-03-22_0700.txt")


def test_broken_files_same_as_one_job_and_cli(tmp_path, cluster, capsys):
    data = tmp_path / "data"
    _broken_folder(data)
    one = run_daily(data, tmp_path / "one", executor=InlineExecutor())
    dsk = run_daily(data, tmp_path / "dask", executor=cluster)
    assert dsk.n_failed == one.n_failed >= 5
    _assert_same_outputs(tmp_path / "one", tmp_path / "dask")
    # the command line, connected to the running cluster by its scheduler's address
    address = cluster._ensure().scheduler.address
    assert address.startswith("tcp://127.0.0.1:")
    rc = main(["daily", str(data), "-o", str(tmp_path / "cli"), "--cluster", address])
    assert rc == 1
    assert "failed" in capsys.readouterr().out
    for name in ("daily.csv", "errors.csv"):
        assert (tmp_path / "cli" / name).read_bytes() == (tmp_path / "one" / name).read_bytes()


def test_worker_killed_mid_run_costs_nothing(tmp_path, cluster):
    import json

    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01", "B02", "C03", "D04", "E05"), n_days=40)  # 200 files
    ref = run_daily(data, tmp_path / "ref", jobs=2)
    out = tmp_path / "out"
    got = {}
    th = threading.Thread(target=lambda: got.update(s=run_daily(data, out, executor=cluster)))
    pids = cluster._ensure().run(os.getpid)
    th.start()
    cache = out / ".rrkit-cache"
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and th.is_alive():
        if cache.is_dir() and len(list(cache.glob("*.npz"))) >= 20:
            break
        time.sleep(0.005)
    assert th.is_alive(), "the run ended before a worker could be killed"
    os.kill(next(iter(pids.values())), signal.SIGKILL)
    th.join(120)
    summary = got["s"]
    assert summary.n_failed == 0
    assert summary.n_done == 200
    _assert_same_outputs(tmp_path / "ref", out)
    pd.testing.assert_frame_equal(ref.table, summary.table)
    prov = json.loads((out / "provenance.json").read_text())
    assert prov["retried_after_worker_loss"], "the retried files are recorded"
    assert set(prov["retried_after_worker_loss"]) <= {i["path"] for i in prov["inputs"]}


def test_a_file_that_kills_its_worker_every_time_ends_in_errors_csv(tmp_path, cluster):
    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01",), n_days=5)
    crash = data / "A01" / f"A01_2026-03-20_0700_{CRASH_MARK}.txt"
    crash.write_bytes((data / "A01" / "A01_2026-03-02_0710.txt").read_bytes())
    summary = run_daily(data, tmp_path / "out", executor=cluster)
    assert (summary.n_done, summary.n_failed) == (5, 1)
    errors = pd.read_csv(tmp_path / "out" / "errors.csv")
    assert errors["path"].tolist() == [crash.relative_to(data).as_posix()]
    assert errors["error_type"].tolist() == ["WorkerDied"]
    assert "died every time" in errors["message"][0]


def test_unreachable_scheduler_one_line_exit_2(tmp_path, capsys, monkeypatch):
    from rrkit.batch import _dask

    monkeypatch.setattr(_dask, "CONNECT_TIMEOUT_S", 1.0)
    data = tmp_path / "data"
    _squad_folder(data, subjects=("A01",), n_days=2)
    # port 1 on the loopback address: nothing listens there
    rc = main(["daily", str(data), "-o", str(tmp_path / "out"), "--cluster", "tcp://127.0.0.1:1"])
    err = capsys.readouterr().err
    assert rc == 2
    lines = err.strip().splitlines()
    assert len(lines) == 1
    assert lines[0].startswith("rrkit: error: cannot reach the Dask "
                                                   "scheduler at tcp://127.0.0.1:1")
    assert not (tmp_path / "out" / "daily.csv").exists()
