"""``rrkit pair`` end to end, its options and its figure."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import rrkit
from rrkit.cli import main
from rrkit.pairing import compare_devices
from rrkit.simulate import simulate_device, simulate_rr


@pytest.fixture(scope="module")
def two_files(tmp_path_factory):
    folder = tmp_path_factory.mktemp("pair")
    ref = simulate_rr(duration_s=900, seed=41)
    dev, truth = simulate_device(ref, clock_offset_s=12.0, drift_ms_per_h=30.0, delay_ms=210.0,
                                 jitter_ms=10.0, drop_pct=2.0, extra_pct=1.0, seed=42)
    ref_path = folder / "strap_rr.txt"
    ref_path.write_text("\n".join(f"{v:.3f}" for v in ref.rr_ms) + "\n")
    dev_path = folder / "wrist_pulses.csv"
    dev_path.write_text("pulse_time_s\n" + "\n".join(f"{v:.4f}" for v in dev.beat_times_s)
                        + "\n")
    return ref_path, dev_path, truth


def test_pair_writes_every_output(two_files, tmp_path, capsys):
    ref_path, dev_path, truth = two_files
    out = tmp_path / "out"
    rc = main(["pair", str(ref_path), str(dev_path), "--dev-kind", "pulse", "--window",
               "slide:2m", "-o", str(out)])
    assert rc == 0
    printed = capsys.readouterr().out
    assert "pulse-to-pulse" in printed
    assert "RMSSD bias: the device reads" in printed
    assert "not a medical device" in printed
    for name in ("pairs.csv", "windows.csv", "agreement.csv", "summary.txt", "pairs.png"):
        assert (out / name).is_file(), name
    pairs = pd.read_csv(out / "pairs.csv")
    assert set(pairs["class"]) <= {"matched", "missed", "extra", "outside"}
    assert (pairs["class"] == "missed").sum() == truth.dropped.size
    assert (pairs["class"] == "extra").sum() == truth.invented.size
    windows = pd.read_csv(out / "windows.csv")
    assert len(windows) == 7  # 888 s of common stretch in 2-minute windows
    assert {"ref_rmssd_ms", "dev_rmssd_ms", "diff_rmssd_ms"} <= set(windows.columns)
    stats = pd.read_csv(out / "agreement.csv")
    assert {"beat", "beat intervals", "window"} <= set(stats["level"])
    rmssd = stats[(stats["level"] == "window") & (stats["metric"] == "rmssd_ms")]
    assert rmssd.set_index("statistic").loc["bias", "estimate"] > 0
    assert not list(out.glob(".*"))  # no temporary file left behind


def test_pair_unrelated_files_one_line_error(two_files, tmp_path, capsys):
    ref_path, _, _ = two_files
    other = tmp_path / "other.txt"
    other.write_text("\n".join(f"{v:.3f}" for v in simulate_rr(duration_s=900, seed=7).rr_ms))
    rc = main(["pair", str(ref_path), str(other), "-o", str(tmp_path / "o")])
    err = capsys.readouterr().err
    assert rc == 2
    assert err.startswith("rrkit: error: ")
    assert "do not correlate" in err
    assert len(err.strip().splitlines()) == 1
    assert not (tmp_path / "o").exists()


def test_pair_reader_error_names_the_side(two_files, tmp_path, capsys):
    ref_path, dev_path, _ = two_files
    rc = main(["pair", str(ref_path), str(dev_path), "--dev-kind", "ppg", "-o", str(tmp_path)])
    err = capsys.readouterr().err
    assert rc == 2
    assert "device:" in err
    assert "sampling rate" in err
    assert "pass --dev-fs in Hz" in err  # the library's hint as this file's option


def test_pair_has_each_reader_option_once_per_file():
    # the per-file options are derived from the one shared definition (cli/_options.py)
    import click

    from rrkit.cli._info import command as info
    from rrkit.cli._pair import command as pair

    shared = {p.name for p in info.params if isinstance(p, click.Option)} - {"help"}
    names = {p.name for p in pair.params}
    for name in shared:
        assert f"ref_{name}" in names
        assert f"dev_{name}" in names


def test_figure_draws_both_tachograms_and_marks_unpaired_beats(two_files):
    ref_path, dev_path, truth = two_files
    res = compare_devices(rrkit.read(ref_path), rrkit.read(dev_path, kind="pulse"))
    fig = res.plot()
    top, bottom = fig.axes[:2]
    labels = [t.get_text() for t in top.get_legend().get_texts()]
    assert labels[0] == "reference"
    assert labels[1] == "device (pulse-to-pulse), aligned"
    assert f"reference beat the device missed ({truth.dropped.size})" in labels
    assert f"device beat with no reference beat ({truth.invented.size})" in labels
    marks = [c for c in top.collections if len(c.get_offsets())]
    assert sorted(len(c.get_offsets()) for c in marks) == sorted(
        [truth.dropped.size, truth.invented.size])
    texts = [t.get_text() for t in bottom.texts]
    assert any(t.startswith("bias ") and t.endswith(" ms") for t in texts)
    assert any(t.startswith("upper limit ") for t in texts)
    n_points = len(bottom.collections[0].get_offsets())
    assert n_points == res.pairs.stats["n_intervals"]
    assert np.isfinite(res.pairs.stats["extra_per_min"])
