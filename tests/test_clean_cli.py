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
    # hour (a threshold from memory), so the caution is printed
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
