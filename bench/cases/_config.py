"""Run settings shared by the cases, and inputs shared between them (made once per run)."""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .._data import CACHE_DIR, make_night

__all__ = ["Config"]


@dataclass
class Config:
    """What a run asked for.

    Attributes
    ----------
    quick : bool
        Tiny sizes (the smoke test): every code path, seconds instead of minutes.
    repeat : int or None
        Repetitions per timing; None keeps each case's default.
    cache_dir : Path
        Where generated input files live (ignored by git).
    """

    quick: bool = False
    repeat: int | None = None
    cache_dir: Path = CACHE_DIR
    _memo: dict[str, Any] = field(default_factory=dict, repr=False)

    def reps(self, default: int, quick_default: int = 2) -> int:
        """Repetitions for a case whose full-size default is ``default``."""
        if self.repeat is not None:
            return max(1, int(self.repeat))
        return quick_default if self.quick else default

    @property
    def night_s(self) -> float:
        """Length of the shared night: 8 hours (20 minutes when quick), plus two minutes so that
        the last five-minute window is complete."""
        return (1200.0 if self.quick else 8 * 3600.0) + 120.0

    def night(self):
        """The shared night (with 2% artifacts), made once per run."""
        if "night" not in self._memo:
            self._memo["night"] = make_night(duration_s=self.night_s, artifact_rate=0.02, seed=8)
        return self._memo["night"]

    def night_file(self):
        """The shared night written as an RR text file in the cache folder (made once)."""
        if "night_file" not in self._memo:
            from .._data import write_rr_file

            name = "night-quick.txt" if self.quick else "night.txt"
            self._memo["night_file"] = write_rr_file(self.cache_dir / name, self.night().recording)
        return self._memo["night_file"]

    def cleaned_night(self):
        """``rrkit.clean(night, method="drr")`` of the shared night, made once per run."""
        if "cleaned" not in self._memo:
            import rrkit

            self._memo["cleaned"] = rrkit.clean(self.night().recording, method="drr")
        return self._memo["cleaned"]
