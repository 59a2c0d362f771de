"""Batch processing of a folder of recordings into a daily table.

Public entry point: `run_daily` (also the ``rrkit daily`` command). The parts:

* discovery (`discover`, `read_manifest`, `FilenamePattern`): which files are recordings and
  whose and when each one is (manifest > file-name pattern > time stamps in the file);
* executors (`Executor`, `LocalExecutor`, `InlineExecutor`, `DaskExecutor` on a Dask cluster,
  `make_executor`): where the per-file work runs;
* resume: per-input results cached by SHA-256 and settings hash in the output folder;
* outputs, all written atomically: daily table (CSV, Parquet), weekly and per-recording
  tables, ``errors.csv``, the HDF5 store and the provenance;
* one run at a time per output folder (`FolderLock`, an operating-system file lock);
* untrusted strings (`safe_name`, `neutralize_cells`).
"""

from .._atomic import atomic_path, atomic_write_bytes, atomic_write_text
from ._choose import make_executor
from ._dask import LOCAL_DASK, DaskExecutor
from ._discover import DEFAULT_EXTENSIONS, Candidate, Discovery, discover, read_manifest
from ._executor import Executor, InlineExecutor, LocalExecutor, default_jobs
from ._lock import FolderLock
from ._map import map_files
from ._nights import read_nights
from ._pattern import DEFAULT_PATTERN, FilenamePattern
from ._run import OUTPUT_NAMES, RunSummary, run_daily
from ._safe import neutralize_cell, neutralize_cells, safe_name

__all__ = [
    "DEFAULT_EXTENSIONS",
    "DEFAULT_PATTERN",
    "LOCAL_DASK",
    "OUTPUT_NAMES",
    "Candidate",
    "DaskExecutor",
    "Discovery",
    "Executor",
    "FilenamePattern",
    "FolderLock",
    "InlineExecutor",
    "LocalExecutor",
    "RunSummary",
    "atomic_path",
    "atomic_write_bytes",
    "atomic_write_text",
    "default_jobs",
    "discover",
    "make_executor",
    "map_files",
    "neutralize_cell",
    "neutralize_cells",
    "read_manifest",
    "read_nights",
    "run_daily",
    "safe_name",
]
