"""Readers and writers: RR intervals, peak times, ECG and WFDB annotations into a `Recording`.

`read` is the one entry point; `write_rr` writes a plain one-value-a-line RR file. The HDF5
store lives in `rrkit.io.store`.
"""

from ._ecg import DEFAULT_DETECTOR, DETECTORS
from ._events import read_events_table
from ._loads import LOAD_COLUMNS, Loads, read_loads
from ._pulse import DEFAULT_PPG_DETECTOR, PPG_DETECTORS
from ._read import DEFAULT_BREAK_S, KINDS, UNITS, read
from ._wfdb_symbols import BEAT_SYMBOLS
from ._write import write_rr

__all__ = ["BEAT_SYMBOLS", "DEFAULT_BREAK_S", "DEFAULT_DETECTOR", "DEFAULT_PPG_DETECTOR",
           "DETECTORS", "KINDS", "LOAD_COLUMNS", "PPG_DETECTORS", "UNITS", "Loads", "read",
           "read_events_table", "read_loads", "write_rr"]
