"""Atomic output files (re-exported from `rrkit._atomic`, where the one implementation lives)."""

from __future__ import annotations

from .._atomic import (
    TMP_SUFFIX,
    atomic_path,
    atomic_write_bytes,
    atomic_write_text,
    remove_stale_temporaries,
)

__all__ = ["TMP_SUFFIX", "atomic_path", "atomic_write_bytes", "atomic_write_text",
           "remove_stale_temporaries"]
