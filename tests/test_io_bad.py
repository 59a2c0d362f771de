"""Bad input: every file in tests/data/bad/ gives an InputError naming the file, line and problem.

The corpus and the expected messages are listed in tests/data/bad/README.md (hand-written
cases, no outside source).
"""

from __future__ import annotations

from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from rrkit import InputError, read

BAD = Path(__file__).parent / "data" / "bad"

# (file, read() keywords, expected line or None, phrase in the message)
CASES = [
    ("empty.txt", {}, None, "the file is empty"),
    ("only_comments.txt", {}, None, "only comments and blank lines"),
    ("binary.txt", {}, None, r"binary data \(a NUL byte"),
    ("garbage.txt", {}, None, "binary data"),
    ("truncated.txt.gz", {}, None, "damaged gzip data"),
    ("non_numeric.txt", {}, 3, "found '8l5' in column 'column 1', expected a number"),
    ("nan.csv", {}, 4, "found 'NaN' in column 'rr_ms', expected a finite number"),
    ("inf.csv", {}, 5, "found 'inf' in column 'rr_ms', expected a finite number"),
    ("zero_interval.txt", {}, 4, "RR interval of 0 .*expected intervals > 0"),
    ("negative_interval.txt", {}, 2, "RR interval of -790 .*expected intervals > 0"),
    ("peaks_backwards.csv", {}, 5, r"peak time 1.95 .*goes backwards from 2.131 \(line 4\)"),
    ("mixed_units.txt", {}, 4, "mixed units .* 0.812 looks like seconds"),
    ("too_few_beats.txt", {}, None, r"found 2 intervals .*at least 3 .*too few beats"),
    ("unit_neither.txt", {}, None, r"median 50.5, which fits neither .*pass unit="),
    ("samples_without_fs.csv", {}, None, "sample indices, which need the sampling rate"),
    ("ecg_without_fs.csv", {}, None, "ECG needs its sampling rate; there is no default"),
    ("ragged.csv", {}, 3, "found 3 fields .*expected 2"),
    ("bad_timestamp.csv", {}, 4, "found 'yesterday' in timestamp column .*expected an ISO 8601"),
    ("timestamps_backwards.csv", {}, 4, "timestamp goes backwards by 1.195 s from line 3"),
    ("not_edf.edf", {}, None, r"not_edf.edf: cannot read as EDF \((?!.*not_edf)"),
    ("damaged.atr", {}, None, "cannot read the WFDB annotation file"),
    # found by the fuzzer (tests/fuzz.py); each record is read through its header and its data
    ("fuzz_no_signal_name.hea", {}, None, "cannot read the WFDB record"),
    ("fuzz_no_signal_name.dat", {}, None, "cannot read the WFDB record"),
    ("fuzz_format_0.hea", {}, None, r"cannot read the WFDB record \(unsupported value '0'\)"),
    ("fuzz_format_0.dat", {}, None, r"cannot read the WFDB record \(unsupported value '0'\)"),
    ("fuzz_fs_1e9.hea", {}, None, "sampling rate 1.0 Hz, expected at least 50 Hz"),
    ("fuzz_fs_1e9.dat", {}, None, "sampling rate 1.0 Hz, expected at least 50 Hz"),
]


def test_corpus_is_complete():
    # every file of the corpus has a case here and a row in its README
    files = {p.name for p in BAD.iterdir() if p.name != "README.md"}
    assert files == {c[0] for c in CASES}
    readme = (BAD / "README.md").read_text()
    assert all(f"`{name}`" in readme for name in files)


@pytest.mark.parametrize(("name", "kwargs", "line", "phrase"), CASES, ids=[c[0] for c in CASES])
def test_bad_file(name, kwargs, line, phrase):
    path = BAD / name
    with pytest.raises(InputError, match=phrase) as caught:
        read(path, **kwargs)
    err = caught.value
    assert isinstance(err, ValueError)  # InputError is a ValueError
    assert err.path == str(path)
    assert str(path) in str(err)
    assert err.line == line
    if line is not None:
        assert f", line {line}: " in str(err)


def test_missing_file(tmp_path):
    with pytest.raises(InputError, match="file not found") as caught:
        read(tmp_path / "nope.txt")
    assert caught.value.path.endswith("nope.txt")


def test_directory(tmp_path):
    with pytest.raises(InputError, match="is a directory"):
        read(tmp_path)


def test_too_few_peaks(tmp_path):
    path = tmp_path / "p.txt"
    path.write_text("peak_s\n0.5\n1.3\n2.1\n")
    with pytest.raises(InputError, match=r"found 2 intervals .*too few beats"):
        read(path)


def test_bad_options(tmp_path):
    path = tmp_path / "rr.txt"
    path.write_text("800\n810\n790\n805\n")
    with pytest.raises(InputError, match="did you mean 'peaks'"):
        read(path, kind="peak")
    with pytest.raises(InputError, match="unit must be one of"):
        read(path, unit="min")
    with pytest.raises(InputError, match="fs must be in"):
        read(path, fs=0)
    with pytest.raises(InputError, match="detector must be one of"):
        read(path, detector="magic")


def test_ecg_kind_on_non_signal_formats(tmp_path):
    path = tmp_path / "x.edf"
    path.write_text("x")
    with pytest.raises(InputError, match="read them with kind='ecg'"):
        read(path, kind="rr")


# fragments of real files, shuffled: whatever comes out, read() returns a Recording or raises
# InputError (never IndexError, ValueError of numpy, or a warning)
_FRAGMENTS = [*"0123456789.,;\t -+eE\n\r#abcNV:TZ\"'", "nan", "inf", "2026-03-01T07:00:00",
              "rr_ms", "time_s", "sample", "ecg", "symbol", "\ufeff", "800\n", "0.8\n"]


@settings(max_examples=300, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])  # file overwritten
@given(text=st.lists(st.sampled_from(_FRAGMENTS), max_size=120).map("".join),
       raw=st.binary(max_size=64), as_text=st.booleans())
def test_garbage_gives_input_error_only(tmp_path, text, raw, as_text):
    path = tmp_path / "garbage.txt"
    path.write_bytes(text.encode("utf-8") if as_text else raw)
    err = None
    try:
        rec = read(path)
    except InputError as caught:
        err = caught
    if err is None:
        assert rec.n_intervals >= 3
    else:
        assert err.path == str(path)  # every message names the file
