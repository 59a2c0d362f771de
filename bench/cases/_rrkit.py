"""How the cases call rrkit: one place for the few calls whose spelling the stages decide."""

from __future__ import annotations

from typing import Any

__all__ = ["analyze", "metric_rows", "sliding"]


def sliding(length_s: float, step_s: float) -> Any:
    """A sliding-window spec of ``length_s`` seconds every ``step_s`` seconds."""
    from rrkit.windows import Sliding

    return Sliding(length_s, step_s)


def analyze(recording: Any, windows: Any, *, clean: Any) -> Any:
    """``rrkit.analyze`` with every metric domain and Welch spectra."""
    import rrkit

    return rrkit.analyze(recording, windows=windows, clean=clean, psd="welch")


def metric_rows(table: Any) -> list[dict[str, Any]]:
    """The rows of an ``analyze`` table as dicts (for the comparison)."""
    return table.to_dict("records")
