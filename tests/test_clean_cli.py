"""End-to-end tests of ``rrkit clean`` (called through `rrkit.cli.main`).

Sources: simulated ground truth (planted missed beats at known positions) and MIT-BIH record
100 (reference annotations, through the `mitdb100` fixture).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from rrkit import read
from rrkit.cli import main
from rrkit.io import write_rr
from rrkit.simulate import inject_artifacts, simulate_rr


@pytest.fixture
def dirty_file(tmp_path):
    base = simulate_rr(duration_s=600, seed=21)
    rec, truth = inject_artifacts(base, counts={"missed": 6, "extra": 4}, seed=22)
    path = write_rr(tmp_path / "morning.txt", rec)
    return path, rec, truth


def test_clean_writes_table_and_rr(dirty_file, tmp_path, capsys):
    # source: simulated ground truth (6 missed and 4 extra beats planted)
    path, rec, truth = dirty_file
    out = tmp_path / "labels.csv"
    rr_out = tmp_path / "corrected.txt"
    assert main(["clean", str(path), "-o", str(out), "--rr-out", str(rr_out)]) == 0
    printed = capsys.readouterr().out
    assert "missed" in printed
    assert "quality" in printed
    table = pd.read_csv(out)
    assert list(table.columns) == ["index", "time_s", "rr_ms", "label", "rr_corrected_ms"]
    assert len(table) == rec.n_intervals
    np.testing.assert_allclose(table["rr_ms"], rec.rr_ms, rtol=1e-9)
    for e in truth.events["missed"]:
        assert table["label"][e] == "missed"
        assert table["rr_corrected_ms"][e] == pytest.approx(rec.rr_ms[e] / 2, rel=1e-6)
    corrected = read(rr_out, kind="rr", unit="ms")
    assert corrected.n_intervals == rec.n_intervals + 6 - 4
    # total duration kept within one interval
    assert abs(corrected.rr_ms.sum() - rec.rr_ms.sum()) <= np.median(rec.rr_ms)
    assert not list(tmp_path.glob(".*.tmp"))  # written atomically, nothing left behind


def test_clean_options(dirty_file, capsys):
    path, _, _ = dirty_file
    assert main(["clean", str(path), "-m", "median", "--strategy", "drop",
                 "--max-corrected", "0.5", "--range", "300", "1800"]) == 0
    printed = capsys.readouterr().out
    assert "median" in printed
    assert "strategy drop" in printed
    assert "flagged" in printed  # 10 corrections of ~600 beats exceed 0.5%


def test_clean_mitdb100_prints_the_caution(mitdb100, capsys):
    # source: MIT-BIH record 100 annotations: 34 premature beats in 30 minutes, above 30 per
    # hour (rrkit's caution level), so the caution is printed
    assert main(["clean", str(mitdb100.with_suffix(".atr"))]) == 0
    printed = capsys.readouterr().out
    assert "caution:" in printed
    assert "clinician" in printed


def test_clean_user_errors(tmp_path, capsys):
    assert main(["clean", str(tmp_path / "missing.txt")]) == 2
    assert "rrkit: error:" in capsys.readouterr().err
    path = write_rr(tmp_path / "rr.txt", simulate_rr(100, seed=1))
    assert main(["clean", str(path), "-m", "magic"]) == 2
    assert "magic" in capsys.readouterr().err
    assert main(["clean", str(path), "-o", str(tmp_path / "no" / "such" / "dir.csv")]) == 2
    assert "does not exist" in capsys.readouterr().err


def test_clean_ecg_with_a_chosen_detector(tmp_path, capsys):
    # source: neurokit2's ECG simulator (a reference library) at 65 bpm for 120 s; the command
    # passes --detector to the reader, so its intervals are those read with that detector
    nk = pytest.importorskip("neurokit2")
    ecg = nk.ecg_simulate(duration=120, sampling_rate=250, heart_rate=65, random_state=3)
    path = tmp_path / "ecg.csv"
    np.savetxt(path, ecg, header="ecg", comments="", fmt="%.5f")
    out = tmp_path / "beats.csv"
    args = ["clean", str(path), "--kind", "ecg", "--fs", "250", "-o", str(out)]
    assert main([*args, "--detector", "pantompkins1985"]) == 0
    capsys.readouterr()
    rec = read(path, kind="ecg", fs=250, detector="pantompkins1985")
    assert rec.info.extra["detector"] == "pantompkins1985"
    table = pd.read_csv(out)
    np.testing.assert_allclose(table["rr_ms"], rec.rr_ms, rtol=0, atol=1e-6)
    assert abs(60000 / np.median(rec.rr_ms) - 65) < 3  # the simulated heart rate
    assert main([*args, "--detector", "no-such-detector"]) == 2
    assert "no-such-detector" in capsys.readouterr().err
