"""Shared fixtures.

Files under ``../shared`` stay there: tests reach them only through the `shared_dir` fixture,
which looks at ``$RRKIT_SHARED`` first, then at ``shared/`` beside the checkout. A test that needs
them is skipped, with the missing path in the reason, only where they are absent (in CI they are
always present).
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pytest

REPO = Path(__file__).resolve().parents[1]


def _shared_path() -> Path:
    env = os.environ.get("RRKIT_SHARED")
    return Path(env) if env else REPO.parent / "shared"


@pytest.fixture(scope="session")
def shared_dir() -> Path:
    """The read-only shared folder (reference data); skips when it is absent."""
    path = _shared_path()
    if not path.is_dir():
        pytest.skip(f"shared reference folder not found: {path}")
    return path


@pytest.fixture(scope="session")
def mitdb100(shared_dir) -> Path:
    """Path prefix of MIT-BIH Arrhythmia Database record 100 (``.../mitdb-100/100``)."""
    folder = shared_dir / "data" / "mitdb-100"
    if not (folder / "100.atr").is_file():
        pytest.skip(f"MIT-BIH record 100 not found: {folder}")
    return folder / "100"


@pytest.fixture
def rng() -> np.random.Generator:
    """A seeded generator (never numpy's global state)."""
    return np.random.default_rng(20261202)
