"""`MetricsResult`: metric values with the notes and settings that produced them."""

from __future__ import annotations

from typing import Any

from ._settings import MetricsSettings

__all__ = ["MetricsResult"]


class MetricsResult(dict):
    """Metric values (``dict[str, float]``) with the notes and settings that produced them.

    Attributes
    ----------
    notes : list of str
        One line per reason a value is NaN or needs care (too short for a band, too few beats,
        breathing below the HF band).
    settings : MetricsSettings
        Everything that decided the values (PSD method, resampling, detrending, Welch segments,
        band edges, DFA box sizes, SampEn m and r, rrkit version).
    clean_settings : object or None
        The cleaning settings when the input was a `CleanResult`.
    """

    def __init__(self, values: dict[str, float], *, notes: list[str], settings: MetricsSettings,
                 clean_settings: Any = None) -> None:
        super().__init__(values)
        self.notes = list(notes)
        self.settings = settings
        self.clean_settings = clean_settings

    def __repr__(self) -> str:
        return f"MetricsResult({dict.__repr__(self)}, notes={self.notes!r})"

    def __reduce__(self):
        return (_rebuild_result, (dict(self), self.notes, self.settings, self.clean_settings))


def _rebuild_result(values, notes, settings, clean_settings):
    return MetricsResult(values, notes=notes, settings=settings, clean_settings=clean_settings)
