"""The benchmark cases, in the order they run. Each module exposes ``NAME``, ``DESCRIPTION`` and
``run(cfg) -> CaseResult``."""

from __future__ import annotations

from . import (
    clean_night,
    cluster_batch,
    fresh_process,
    night_pipeline,
    scaling,
    season_batch,
    windows_night,
)
from ._config import Config

CASES = {m.NAME: m for m in (clean_night, windows_night, night_pipeline, fresh_process,
                              season_batch, cluster_batch, scaling)}

__all__ = ["CASES", "Config"]
