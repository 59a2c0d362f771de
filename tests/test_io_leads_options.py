"""ECG lead names in signal labels, and the reader options on the command line.

Lead names follow the standard 12-lead nomenclature (Einthoven I-III, Goldberger aVR/aVL/aVF,
Wilson V1-V6) plus the Holter and monitoring leads found in WFDB databases (MLII and V5 in
MIT-BIH record 100, MCL1 in bedside monitoring): common practice. The ECG is neurokit2's
simulator (seeded); the WFDB record is written by wfdb itself, the format's reference writer.
"""

from __future__ import annotations

import numpy as np
import pytest

from rrkit import read
from rrkit.cli import main
from rrkit.io._detect import is_ecg_lead, name_hints

FS_HZ = 250

LEADS = ["I", "II", "III", "aVR", "aVL", "aVF", "V1", "V2", "V3", "V4", "V5", "V6", "V4R",
         "MCL1", "MCL6", "MLII", "ML2", "CM5", "CC5", "ECG", "EKG", "ECG1", "EKG lead II",
         "ecg_mv", "Lead V2"]
NOT_LEADS = ["ABP", "Resp", "PLETH", "SpO2", "EMG", "EEG Fpz-Cz", "time", "V", "V10", "value"]


@pytest.mark.parametrize("label", LEADS)
def test_lead_names_in_any_case(label):
    for text in (label, label.upper(), label.lower()):
        assert is_ecg_lead(text), text


@pytest.mark.parametrize("label", NOT_LEADS)
def test_other_signals_are_not_leads(label):
    assert not is_ecg_lead(label)


def test_bare_i_is_a_lead_only_as_a_channel_label():
    # a text column named "i" is an index, not Einthoven lead I
    assert name_hints("i")["role"] is None
    assert is_ecg_lead("I")


def test_wfdb_channel_chosen_by_lead_name(tmp_path):
    import neurokit2 as nk
    import wfdb

    ecg = np.asarray(nk.ecg_simulate(duration=20, sampling_rate=FS_HZ, heart_rate=70,
                                     random_state=7), dtype=np.float64)
    pressure = 90 + 20 * np.sin(2 * np.pi * 70 / 60 * np.arange(ecg.size) / FS_HZ)
    wfdb.wrsamp("tilt", fs=FS_HZ, units=["mmHg", "mV"], sig_name=["ABP", "MCL1"],
                p_signal=np.column_stack([pressure, ecg]), fmt=["16", "16"],
                write_dir=str(tmp_path))
    rec = read(tmp_path / "tilt.hea")
    assert rec.info.column == "MCL1"  # the lead, not the first channel
    assert "ECG lead" in rec.info.extra["column_chosen_by"]
    # simulator truth: 70 bpm -> 60000 / 70 = 857 ms
    assert rec.rr_ms.mean() == pytest.approx(60000 / 70, rel=0.03)


# ---------------------------------------------------------------- reader options on the CLI
def _info(capsys, *args) -> tuple[int, str, str]:
    code = main(["info", *map(str, args)])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.mark.parametrize("command", ["info", "clean", "analyze"])
def test_every_reading_command_has_the_reader_options(command, capsys):
    assert main([command, "--help"]) == 0
    out = capsys.readouterr().out
    for option in ("--kind", "--unit", "--fs", "--column", "--detector", "--sep", "--decimal",
                   "--timestamp-column", "--break-s"):
        assert option in out, (command, option)


def test_sep_and_decimal_options(tmp_path, capsys):
    path = tmp_path / "f.txt"
    path.write_text("1,812\n2,790\n3,805\n4,821\n")
    # forced: one column with decimal commas, values in s (hand-computed: 1.812 s = 1812 ms)
    code, out, _ = _info(capsys, path, "--sep", "none", "--kind", "rr", "--unit", "s")
    assert code == 0
    assert "separator none (one column), decimal ','" in out
    assert "HR range   12 to 33 bpm" in out  # 60000 / 4821 = 12.4 ... 60000 / 1812 = 33.1
    code, out, _ = _info(capsys, path, "--column", "1", "--decimal", ".")
    assert code == 0
    assert "separator comma, decimal '.'" in out
    # the library's hint is spelled as the command's options
    code, _, err = _info(capsys, path, "--sep", "comma", "--decimal", ",")
    assert code == 2
    assert "--sep semicolon or --decimal ." in err


def test_timestamp_column_and_break_options(tmp_path, capsys):
    # two time columns; 20 s uncovered after the third stamp (hand-computed: 23.2 - 2.4 - 0.8)
    path = tmp_path / "t.csv"
    path.write_text("wall,mark,rr_ms\n"
                    "2026-03-01T07:00:00.8,a,800\n2026-03-01T07:00:01.6,a,800\n"
                    "2026-03-01T07:00:02.4,a,800\n2026-03-01T07:00:23.2,a,800\n"
                    "2026-03-01T07:00:24.0,a,800\n")
    code, out, _ = _info(capsys, path, "--timestamp-column", "wall")
    assert code == 0
    assert "gaps       1 (20.0 s)" in out
    code, out, _ = _info(capsys, path, "--timestamp-column", "wall", "--break-s", "30")
    assert "gaps       none" in out
    code, out, _ = _info(capsys, path, "--break-s", "none")
    assert "gaps       none" in out
    code, _, err = _info(capsys, path, "--break-s", "-1")
    assert code == 2
    assert "--break-s" in err
