"""Settings of the cleaning stage: every threshold in one frozen object, defaults with sources."""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from typing import Any, ClassVar

from .._validation import Options, check_int, check_option, check_range
from ..errors import InputError

__all__ = ["CONSTRAINTS", "METHODS", "STRATEGIES", "CleanSettings"]

#: Detection methods, see `rrkit.clean`.
METHODS = ("drr", "median", "mad", "none")
#: Correction strategies for ectopic, long, short and implausible intervals.
STRATEGIES = ("interpolate", "drop")
#: The allowed values of the option fields of `CleanSettings`, declared once (validation,
#: command-line choices, help text).
CONSTRAINTS = {"method": Options(METHODS), "strategy": Options(STRATEGIES)}


@dataclass(frozen=True, slots=True)
class CleanSettings:
    """Every threshold of `rrkit.clean`, with the source of its default.

    The same object is stored in the `CleanResult` it produced (provenance) and can be hashed.

    Parameters
    ----------
    method : {"drr", "median", "mad", "none"}
        Detection method (default ``"drr"``, Lipponen & Tarvainen 2019).
    strategy : {"interpolate", "drop"}
        What happens to ectopic, long, short and implausible intervals: ``"interpolate"``
        replaces them from a cubic spline through the surrounding normal intervals over beat
        time; ``"drop"`` keeps them in the corrected recording as gaps (no metric uses them, no
        successive difference crosses them). Missed beats are always split, extra beats always
        merged.
    min_rr_ms, max_rr_ms : float
        Physiological range, default 250-2000 ms, that is 240-30 bpm: it spans human heart rates
        from deep rest to maximal exercise (common practice, no single source). Intervals outside
        it that are not explained as a missed or an extra beat are labelled ``implausible``.
    drr_alpha : float
        Threshold multiplier on the quartile deviation, 5.2 (Lipponen & Tarvainen 2019).
    drr_qd_window_beats : int
        Centred window of the quartile deviation, 91 beats (Lipponen & Tarvainen 2019).
    drr_median_window_beats : int
        Centred window of the median RR, 11 beats (Lipponen & Tarvainen 2019).
    drr_c1, drr_c2 : float
        Slope and offset of the ectopic decision lines, 0.13 and 0.17 (Lipponen & Tarvainen 2019).
    drr_mrr_limit : float
        Normalised deviation from the median above which a beat is long or short, 3
        (Lipponen & Tarvainen 2019).
    drr_min_mrr : float
        rrkit's refinement of the published rules, 1: a beat flagged by the dRR rules must also
        deviate from the 11-beat median by more than one threshold (``|mRR| > 1``; for an
        ectopic decision, either interval around the beat). In smooth sinus rhythm the dRR
        rules alone flag a few beats whose successive differences only just cross their
        threshold while the intervals sit near the median; planted artifacts and the premature
        beats of MIT-BIH record 100 all deviate far more. Set 0 for the rules exactly as
        published.
    median_window_beats : int
        ``"median"`` method: beats on *each side* whose median is the reference, 5 (rrkit's
        choice: the same 11-beat span as the drr median; the centre beat is part of it, which
        moves the median by at most one rank when that beat is an outlier).
    median_max_deviation : float
        ``"median"`` method: relative deviation from that median that marks an artifact, 0.20
        (the 20% rule, common practice; the value and the median reference are rrkit's choice;
        Machado et al. 2000 use R = 0.2 against the last accepted interval).
    mad_window_beats : int
        ``"mad"`` method: centred window (beats) over which Berntson's quartile deviations and
        median are taken, 91 (rrkit's choice, so that long recordings follow changes in heart
        rate; Berntson et al. 1990 took them over the whole series).
    mad_med_factor, mad_mad_factor : float
        ``"mad"`` method: MED = 3.32 QD and MAD = (median - 2.9 QD) / 3 (Berntson et al. 1990;
        constants as quoted by others, see the Notes of `rrkit.clean`).
    max_hidden_beats : int
        Most beats a single long interval may hide and still be classed ``missed`` (split into
        that many + 1 intervals), 2. Lipponen & Tarvainen test one hidden beat (RR / 2); rrkit
        tests ``RR / k`` for k up to this value + 1 with the same threshold.
    iterate : bool
        Detect again on the corrected series until nothing changes, at most ``max_iterations``
        passes (default False: one classification pass, as published). Later passes see the
        corrected series; with ``strategy="drop"`` they see it split at the dropped intervals.
    max_iterations : int
        Bound on the passes, 5.
    max_corrected_pct : float
        A window with more than this share of corrected intervals is ``flagged``, 5% (common
        practice, no single source).
    caution_ectopic_per_hour : float
        More premature beats per hour than this adds the caution to the summary, 30 (rrkit's
        choice of a level at which a clinician should see the recording; not a clinical
        criterion).
    caution_min_ectopic : int
        ...and at least this many premature beats in the window, 3 (rrkit's choice, so that one
        premature beat in a two-minute window does not read as a rate of 30 per hour).
    """

    method: str = "drr"
    strategy: str = "interpolate"
    min_rr_ms: float = 250.0
    max_rr_ms: float = 2000.0
    drr_alpha: float = 5.2
    drr_qd_window_beats: int = 91
    drr_median_window_beats: int = 11
    drr_c1: float = 0.13
    drr_c2: float = 0.17
    drr_mrr_limit: float = 3.0
    drr_min_mrr: float = 1.0
    median_window_beats: int = 5
    median_max_deviation: float = 0.20
    mad_window_beats: int = 91
    mad_med_factor: float = 3.32
    mad_mad_factor: float = 2.9
    max_hidden_beats: int = 2
    iterate: bool = False
    max_iterations: int = 5
    max_corrected_pct: float = 5.0
    caution_ectopic_per_hour: float = 30.0
    caution_min_ectopic: int = 3

    #: The declared constraints of the option fields (`CONSTRAINTS`).
    constraints: ClassVar[dict] = CONSTRAINTS

    def __post_init__(self) -> None:
        for name in ("method", "strategy"):
            CONSTRAINTS[name].check(name, getattr(self, name))
        lo = check_range("min_rr_ms", self.min_rr_ms, low=0, low_inclusive=False, unit="ms")
        hi = check_range("max_rr_ms", self.max_rr_ms, low=0, low_inclusive=False, unit="ms")
        if hi <= lo:
            raise InputError(f"max_rr_ms must be above min_rr_ms; got {self.min_rr_ms!r} and "
                             f"{self.max_rr_ms!r} ms")
        for name in ("drr_alpha", "drr_mrr_limit", "mad_med_factor"):
            check_range(name, getattr(self, name), low=0, low_inclusive=False)
        for name in ("drr_c1", "drr_c2", "mad_mad_factor", "drr_min_mrr"):
            check_range(name, getattr(self, name), low=0)
        check_range("median_max_deviation", self.median_max_deviation, low=0, high=1,
                    low_inclusive=False, high_inclusive=False)
        check_range("max_corrected_pct", self.max_corrected_pct, low=0, high=100, unit="%")
        check_range("caution_ectopic_per_hour", self.caution_ectopic_per_hour, low=0,
                    unit="beats/h")
        for name in ("drr_qd_window_beats", "drr_median_window_beats", "mad_window_beats"):
            w = check_int(name, getattr(self, name), low=3)
            if w % 2 == 0:
                raise InputError(f"{name} must be odd (a centred window); got {w!r}")
        check_int("median_window_beats", self.median_window_beats, low=1)
        check_int("max_hidden_beats", self.max_hidden_beats, low=1, high=20)
        check_int("max_iterations", self.max_iterations, low=1, high=20)
        check_int("caution_min_ectopic", self.caution_min_ectopic, low=1)
        if not isinstance(self.iterate, bool):
            raise InputError(f"iterate must be True or False; got {self.iterate!r}")

    def replace(self, **changes: Any) -> CleanSettings:
        """A copy with some fields changed (validated again)."""
        names = {f.name for f in dataclasses.fields(self)}
        unknown = sorted(set(changes) - names)
        if unknown:
            check_option("setting", unknown[0], sorted(names))
        return dataclasses.replace(self, **changes)

    def to_dict(self) -> dict[str, Any]:
        """Plain-dict copy (for tables and HDF5 attributes; `rrkit._plain.to_plain` for JSON)."""
        return {f.name: getattr(self, f.name) for f in dataclasses.fields(self)}
