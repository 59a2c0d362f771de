"""Fuzzing in the suite: a few examples of each strategy of `tests.fuzz` (the deep run is
``python -m tests.fuzz --minutes N``).

Every outcome must be a valid `Recording` or an `InputError` naming the file, within the time
bound of hypothesis' ``deadline`` (generous here: the machine is shared; the deep run is
stricter), never another exception.
"""

from __future__ import annotations

from datetime import timedelta

from fuzz import bytes_files, check_file, edf_files, text_files, wfdb_files  # tests/ on sys.path
from hypothesis import HealthCheck, given, settings

_SETTINGS = {"deadline": timedelta(seconds=20), "derandomize": True, "database": None,
             "suppress_health_check": [HealthCheck.too_slow, HealthCheck.data_too_large]}


@settings(max_examples=40, **_SETTINGS)
@given(case=bytes_files())
def test_arbitrary_bytes(case):
    check_file(*case)


@settings(max_examples=60, **_SETTINGS)
@given(case=text_files())
def test_near_valid_text(case):
    check_file(*case)


@settings(max_examples=20, **_SETTINGS)
@given(case=wfdb_files())
def test_wfdb_headers(case):
    check_file(*case)


@settings(max_examples=20, **_SETTINGS)
@given(case=edf_files())
def test_edf_headers(case):
    check_file(*case)
