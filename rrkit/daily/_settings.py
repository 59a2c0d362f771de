"""The settings tree of a daily run: one frozen object holding each stage's own settings.

``DailySettings`` does not repeat any setting of another stage: it holds the stage objects as
they are (`CleanSettings`, `MetricsSettings`, `QualityRules`, `DaySelection`,
`BaselineSettings`), and each stage receives its node unchanged. `DailySettings.from_options`
builds the tree from flat options (the command line's), naming each node it fills.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from typing import Any, ClassVar

from .._plain import digest, fields_plain, to_plain
from .._time import zone_of
from .._validation import Options
from .._version import __version__
from ..analysis import QualityRules
from ..clean import CleanSettings
from ..errors import InputError
from ..metrics import MetricsSettings
from ._baselines import BaselineSettings

__all__ = ["DAILY_METRICS", "PICK_RULES", "QUALITY_STATES", "DailySettings", "DaySelection"]

#: Metric columns of the daily table, in order.
DAILY_METRICS = ("mean_hr_bpm", "rmssd_ms", "ln_rmssd", "sdnn_ms", "pnn50_pct", "hf_ms2",
                 "lf_ms2", "lf_hf", "sd1_ms", "dfa_alpha1")
#: Values of the ``quality`` column.
QUALITY_STATES = ("ok", "flagged", "rejected", "missing")
#: Rules that pick a subject's morning recording of the day.
PICK_RULES = ("first", "marked")
#: The allowed values of `DaySelection.pick` (validation, command-line choices, help).
PICK = Options(PICK_RULES)


def clock(name: str, text: str) -> dt.time:
    """``"HH:MM"`` -> `datetime.time`, or `InputError` naming the option."""
    try:
        return dt.time.fromisoformat(str(text))
    except ValueError:
        raise InputError(f"{name} must be a clock time 'HH:MM'; got {text!r}") from None


@dataclass(frozen=True, slots=True)
class DaySelection:
    """Which recording is a subject's morning recording of a local calendar day.

    Parameters
    ----------
    tz : str
        IANA time zone of the athletes' clocks (default ``"UTC"``). Dates are local calendar
        dates in this zone; naive times (file names, manifests, files) are local times in it,
        read with rrkit's daylight-saving policy (`rrkit.daily.localize`).
    wake_start, wake_end : str
        ``"HH:MM"`` local clock times of the wake-time window in which a morning recording
        starts (default 04:00 to 12:00, rrkit's choice); ``wake_start <= t < wake_end``.
    pick : {"first", "marked"}
        ``"first"``: the first recording of the day starting inside the wake window whose
        window is usable (ok or flagged); when none is usable, the first one. ``"marked"``: the
        recording a manifest marks (column ``morning`` true).
    """

    tz: str = "UTC"
    wake_start: str = "04:00"
    wake_end: str = "12:00"
    pick: str = "first"

    #: The declared constraints of the option fields.
    constraints: ClassVar[dict] = {"pick": PICK}

    def __post_init__(self) -> None:
        zone_of(self.tz)
        start = clock("wake_start", self.wake_start)
        end = clock("wake_end", self.wake_end)
        if not start < end:
            raise InputError(f"wake_start must be before wake_end; got {self.wake_start!r} and "
                             f"{self.wake_end!r}")
        PICK.check("pick", self.pick)


@dataclass(frozen=True, slots=True)
class DailySettings:
    """Everything that decides a daily table, as a tree of each stage's own settings.

    Parameters
    ----------
    window : str or window spec, optional
        The analysis window inside each recording, in the syntax of `rrkit.windows.parse_window`
        or a spec object; None (default) is `rrkit.windows.MORNING` (skip 60 s, analyse 300 s,
        after Bourdillon et al. 2017: a 1-minute stabilisation, then a 5-minute window).
    cleaning : CleanSettings
        The cleaning of every recording (default ``CleanSettings()``: dRR method, Lipponen &
        Tarvainen 2019, interpolation).
    metrics : MetricsSettings
        The metrics of every window (default ``MetricsSettings()``: Welch, Task Force bands,
        smoothness-priors detrending); band edges, detrending, estimator and every other
        metric setting are taken from here as they are.
    quality : QualityRules
        When a window is ``rejected`` (default: more than 20 % corrected, less than 90 % of the
        window covered, or ln-RMSSD undefined).
    days : DaySelection
        Time zone, wake window and pick rule.
    baselines : BaselineSettings
        Rolling, baseline, band and weekly rules.
    kind, unit : str
        Passed to `rrkit.read` (default ``"auto"``).

    Examples
    --------
    >>> s = DailySettings.from_options(tz="Europe/Berlin", psd="lomb", bands={"lf": (0.05, 0.15)})
    >>> s.metrics.psd, s.metrics.bands.lf, s.days.tz
    ('lomb', (0.05, 0.15), 'Europe/Berlin')
    """

    window: Any = None
    cleaning: CleanSettings = field(default_factory=CleanSettings)
    metrics: MetricsSettings = field(default_factory=MetricsSettings)
    quality: QualityRules = field(default_factory=QualityRules)
    days: DaySelection = field(default_factory=DaySelection)
    baselines: BaselineSettings = field(default_factory=BaselineSettings)
    kind: str = "auto"
    unit: str = "auto"

    def __post_init__(self) -> None:
        for name, cls in (("cleaning", CleanSettings), ("metrics", MetricsSettings),
                          ("quality", QualityRules), ("days", DaySelection),
                          ("baselines", BaselineSettings)):
            if not isinstance(getattr(self, name), cls):
                raise InputError(f"{name} must be a {cls.__name__}; got "
                                 f"{getattr(self, name)!r}",
                                 hint="DailySettings.from_options(...) builds the tree from "
                                      "flat options")
        self.window_spec()  # a bad window text is a usage error, before any file is read

    @classmethod
    def from_options(cls, *, window=None, tz: str | None = None, wake_start: str | None = None,
                     wake_end: str | None = None, pick: str | None = None,
                     clean: str | None = None, strategy: str | None = None,
                     psd: str | None = None, detrend: str | None = None, bands=None,
                     reject_corrected_pct: float | None = None,
                     min_coverage: float | None = None,
                     baselines: BaselineSettings | None = None, kind: str = "auto",
                     unit: str = "auto") -> DailySettings:
        """The tree from flat options; an option left None keeps its node's default.

        ``tz, wake_start, wake_end, pick`` fill `DaySelection`; ``clean`` (the method) and
        ``strategy`` fill `CleanSettings`; ``psd``, ``detrend`` and ``bands`` (a `Bands` or a
        mapping ``{"hf": (lo_hz, hi_hz)}``) fill `MetricsSettings`; ``reject_corrected_pct`` and
        ``min_coverage`` fill `QualityRules`.
        """
        def given(**kw):
            return {k: v for k, v in kw.items() if v is not None}

        metrics = given(psd=psd, detrend=detrend, bands=bands)
        return cls(window=window,
                   cleaning=CleanSettings(**given(method=clean, strategy=strategy)),
                   metrics=MetricsSettings(**metrics),
                   quality=QualityRules(**given(reject_corrected_pct=reject_corrected_pct,
                                                min_coverage=min_coverage)),
                   days=DaySelection(**given(tz=tz, wake_start=wake_start, wake_end=wake_end,
                                             pick=pick)),
                   baselines=baselines if baselines is not None else BaselineSettings(),
                   kind=kind, unit=unit)

    @property
    def tz(self) -> str:
        """The athletes' time zone (``days.tz``)."""
        return self.days.tz

    def window_spec(self):
        """The window spec object (parsed from text when given as text)."""
        from .. import windows

        if self.window is None:
            return windows.MORNING
        if isinstance(self.window, str):
            return windows.parse_window(self.window)
        return self.window

    def file_part(self) -> dict[str, Any]:
        """The settings that decide a single file's result (its resume-cache key, `digest`)."""
        return {"rrkit_version": __version__, "window": to_plain(self.window_spec()),
                "kind": self.kind, "unit": self.unit, "cleaning": to_plain(self.cleaning),
                "metrics": to_plain(self.metrics), "quality": to_plain(self.quality)}

    def to_plain(self) -> dict[str, Any]:
        """Every setting as plain data (JSON, the store, provenance), the window as its spec."""
        out = fields_plain(self)
        out["window"] = to_plain(self.window_spec())
        out["rrkit_version"] = __version__
        return out

    def to_dict(self) -> dict[str, Any]:
        """Same as `to_plain` (kept for callers of the earlier name)."""
        return self.to_plain()

    def digest(self) -> str:
        """SHA-256 of `to_plain` (`rrkit._plain.digest`)."""
        return digest(self.to_plain())
