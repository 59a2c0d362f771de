"""Settings of the metric computations: one frozen object that travels with every result.

Defaults cite their source; where a default is rrkit's own choice, the docstring says so.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any, ClassVar

from .._validation import Interval, Options, check_constraints, check_int, check_option, check_range
from .._version import __version__
from ..errors import InputError

__all__ = ["CONSTRAINTS", "DETRENDS", "DOMAINS", "PSD_METHODS", "TASK_FORCE_BANDS", "Bands",
           "MetricsSettings"]

DOMAINS = ("time", "frequency", "nonlinear")
PSD_METHODS = ("welch", "lomb", "ar")
DETRENDS = ("smoothness_priors", "linear")

#: The allowed values of the simple `MetricsSettings` fields, declared once: they validate the
#: settings, give the command line its ``choices`` and the help its text.
CONSTRAINTS = {
    "psd": Options(PSD_METHODS),
    "detrend": Options(DETRENDS),
    "smoothness_lambda": Interval(0.0, low_inclusive=False),
    "welch_segment_s": Interval(0.0, low_inclusive=False, unit="s"),
    "welch_overlap": Interval(0.0, 1.0, high_inclusive=False),
    "lomb_oversample": Interval(1, 64, integer=True),
    "ar_order": Interval(1, 200, integer=True),
    "ar_n_freqs": Interval(64, integer=True),
    "min_hf_s": Interval(0.0, unit="s"),
    "min_lf_s": Interval(0.0, unit="s"),
    "min_vlf_s": Interval(0.0, unit="s"),
}


@dataclass(frozen=True, slots=True)
class Bands:
    """Frequency bands in Hz; a frequency ``f`` belongs to a band when ``lo <= f < hi``.

    Defaults are the Task Force of the ESC and NASPE (1996) bands with the common 1/300 s VLF
    edge: VLF 0.0033-0.04 Hz, LF 0.04-0.15 Hz, HF 0.15-0.40 Hz. Exercise, children and animals
    need other edges: pass them here (the bands must be contiguous and increasing).

    Examples
    --------
    >>> Bands(hf=(0.15, 1.0)).hf
    (0.15, 1.0)
    """

    vlf: tuple[float, float] = (0.0033, 0.04)
    lf: tuple[float, float] = (0.04, 0.15)
    hf: tuple[float, float] = (0.15, 0.40)
    edge: str = "lo <= f < hi"

    def __post_init__(self) -> None:
        for name in ("vlf", "lf", "hf"):
            value = getattr(self, name)
            try:
                lo, hi = (float(v) for v in value)
            except (TypeError, ValueError):
                raise InputError(
                    f"bands.{name} must be a pair (lo_hz, hi_hz); got {value!r}") from None
            check_range(f"bands.{name} low edge", lo, low=0.0, unit="Hz")
            if not hi > lo:
                raise InputError(f"bands.{name} must have hi > lo (in Hz); got {value!r}")
            object.__setattr__(self, name, (lo, hi))
        if not (self.vlf[1] <= self.lf[0] + 1e-12 and self.lf[1] <= self.hf[0] + 1e-12):
            raise InputError(
                f"bands must not overlap and must increase VLF < LF < HF; got VLF {self.vlf}, "
                f"LF {self.lf}, HF {self.hf} (in Hz)")
        check_option("bands.edge", self.edge, ("lo <= f < hi",))

    @classmethod
    def from_text(cls, items, *, name: str = "bands") -> Bands:
        """Bands from texts ``"NAME=LO-HI"`` in Hz (``["hf=0.15-1.0"]``); others default.

        Examples
        --------
        >>> Bands.from_text(["hf=0.15-1.0"]).hf
        (0.15, 1.0)
        """
        items = [items] if isinstance(items, str) else list(items or ())
        out = {}
        for item in items:
            band, eq, span = str(item).partition("=")
            lo, dash, hi = span.partition("-")
            try:
                if not eq or not dash:
                    raise ValueError
                out[band.strip().lower()] = (float(lo), float(hi))
            except ValueError:
                raise InputError(f"{name} must read NAME=LO-HI in Hz (NAME vlf, lf or hf); got "
                                 f"{item!r}", hint=f"for example {name} hf=0.15-1.0") from None
        return cls.coerce(out)

    @classmethod
    def coerce(cls, value: Any) -> Bands:
        """Accept a `Bands`, a mapping ``{"lf": (lo, hi), ...}`` or None (the defaults)."""
        if value is None:
            return cls()
        if isinstance(value, cls):
            return value
        if isinstance(value, Mapping):
            unknown = set(value) - {"vlf", "lf", "hf"}
            if unknown:
                raise InputError(f"bands keys must be 'vlf', 'lf', 'hf'; got {sorted(unknown)!r}")
            return cls(**{k: tuple(v) for k, v in value.items()})
        raise InputError(f"bands must be a Bands or a mapping of (lo_hz, hi_hz); got {value!r}")


#: The Task Force of the ESC and NASPE (1996) bands (VLF edge at 1/300 s, a common convention).
TASK_FORCE_BANDS = Bands()


@dataclass(frozen=True, slots=True)
class MetricsSettings:
    """Everything that decides a metric value (stored with every result).

    Attributes
    ----------
    domains : tuple of str
        Any of ``"time"``, ``"frequency"``, ``"nonlinear"``.
    psd : str
        ``"welch"``, ``"lomb"`` or ``"ar"``.
    bands : Bands
        Band edges in Hz (Task Force 1996 by default), edge convention ``lo <= f < hi``.
    resample_hz : float
        Rate of the cubic-spline resampling used by Welch and AR, 4 Hz (common practice).
    detrend : str
        ``"smoothness_priors"`` (Tarvainen, Ranta-aho & Karjalainen 2002) or ``"linear"``.
    smoothness_lambda : float
        Regularisation of the smoothness-priors detrending, 500 (Tarvainen et al. 2002 use
        lambda = 500 on 4 Hz series: a high-pass cut-off near 0.035 Hz, under the LF edge).
    welch_segment_s : float
        Welch segment length in s, 150 s (rrkit's choice: a 5-minute window gives three
        half-overlapping Hann segments that use every sample; resolution 1/150 Hz). A shorter
        run is analysed as one segment, zero-padded to the same frequency grid.
    welch_overlap : float
        Least fraction of overlap between Welch segments, 0.5 (the usual choice for a Hann
        window); segments are spread evenly from the first sample to the last, so none is left
        out.
    lomb_oversample : int
        Lomb-Scargle frequency grid step ``1 / (oversample * T)``, 4 (common practice).
    ar_order : int
        Burg autoregressive model order, 16 (common practice; Boardman et al. 2002, Physiol
        Meas 23:325-336, compare order-selection criteria on short HRV segments).
    ar_calibrate : bool
        Scale the AR spectrum to integrate to the variance of the fitted series, True (rrkit's
        choice; see `rrkit.metrics.spectral`).
    ar_n_freqs : int
        Points of the AR spectrum grid from 0 to ``resample_hz / 2``, 65536 (a fine grid: an
        AR model of a strong oscillation has a very narrow peak, which a coarse grid misses).
    min_hf_s, min_lf_s, min_vlf_s : float
        Shortest NN run for HF (60 s), LF (120 s) and VLF (600 s). The Task Force (1996) asks for
        about 1 min for HF and 2 min for LF and advises against VLF from recordings of 5 min or
        less; rrkit requires 10 min for VLF (its choice). A run whose beats span up to two
        of its (median) intervals less still counts, since that is what a window of exactly
        the minimum length holds (`rrkit.metrics.spectral.edge_allowance_s`).
    dfa_alpha1_beats, dfa_alpha2_beats : tuple of int
        Inclusive box-size ranges in beats, (4, 16) and (16, 64) (the usual HRV convention,
        Peng et al. 1995 for the method). Every integer box size in the range is used.
    dfa_min_boxes : int
        Minimum number of boxes at the largest box size of a range, 3 (rrkit's choice): alpha1
        needs 48 NN intervals, alpha2 192.
    sampen_m : int
        Template length, 2 (Richman & Moorman 2000).
    sampen_r : float
        Tolerance as a fraction of the SD (ddof=1) of the NN intervals, 0.2 (Richman & Moorman
        2000).
    sampen_min_beats : int
        Fewest NN intervals for SampEn, 100 (rrkit's choice: 10**m templates for m = 2).
    resp_peak_halfwidth_hz : float
        Half-width around a low-frequency peak counted as "narrow", 0.02 Hz (rrkit's choice).
    resp_peak_share : float
        Share of the total power that narrow peak must hold to be called dominant, 0.5.
    version : str
        rrkit version that computed the result.
    """

    domains: tuple[str, ...] = DOMAINS
    psd: str = "welch"
    bands: Bands = field(default_factory=Bands)
    resample_hz: float = 4.0
    detrend: str = "smoothness_priors"
    smoothness_lambda: float = 500.0
    welch_segment_s: float = 150.0
    welch_overlap: float = 0.5
    lomb_oversample: int = 4
    ar_order: int = 16
    ar_calibrate: bool = True
    ar_n_freqs: int = 65536
    min_hf_s: float = 60.0
    min_lf_s: float = 120.0
    min_vlf_s: float = 600.0
    dfa_alpha1_beats: tuple[int, int] = (4, 16)
    dfa_alpha2_beats: tuple[int, int] = (16, 64)
    dfa_min_boxes: int = 3
    sampen_m: int = 2
    sampen_r: float = 0.2
    sampen_min_beats: int = 100
    resp_peak_halfwidth_hz: float = 0.02
    resp_peak_share: float = 0.5
    version: str = __version__

    #: The declared constraints of the simple fields (`CONSTRAINTS`).
    constraints: ClassVar[dict] = CONSTRAINTS

    def __post_init__(self) -> None:
        doms = (self.domains,) if isinstance(self.domains, str) else tuple(self.domains)
        if not doms:
            raise InputError(f"domains must name at least one of {DOMAINS!r}; got {self.domains!r}")
        for d in doms:
            check_option("domains", d, DOMAINS)
        object.__setattr__(self, "domains", tuple(d for d in DOMAINS if d in doms))
        CONSTRAINTS["psd"].check("psd", self.psd)
        object.__setattr__(self, "bands", Bands.coerce(self.bands))
        check_range("resample_hz", self.resample_hz, low=0.0, low_inclusive=False, unit="Hz")
        if self.resample_hz / 2 <= self.bands.hf[1]:
            raise InputError(f"resample_hz must exceed twice the HF upper edge "
                             f"({2 * self.bands.hf[1]:g} Hz); got {self.resample_hz!r}")
        check_constraints(self, {k: c for k, c in CONSTRAINTS.items() if k != "psd"})
        for name in ("dfa_alpha1_beats", "dfa_alpha2_beats"):
            value = getattr(self, name)
            try:
                lo, hi = (int(v) for v in value)
            except (TypeError, ValueError):
                raise InputError(
                    f"{name} must be a pair of box sizes in beats; got {value!r}") from None
            if not 2 <= lo < hi:
                raise InputError(f"{name} must satisfy 2 <= lo < hi (beats); got {value!r}")
            object.__setattr__(self, name, (lo, hi))
        check_int("dfa_min_boxes", self.dfa_min_boxes, low=1)
        check_int("sampen_m", self.sampen_m, low=1, high=10)
        check_range("sampen_r", self.sampen_r, low=0.0, low_inclusive=False)
        check_int("sampen_min_beats", self.sampen_min_beats, low=self.sampen_m + 2)
        check_range("resp_peak_halfwidth_hz", self.resp_peak_halfwidth_hz, low=0.0,
                    low_inclusive=False, unit="Hz")
        check_range("resp_peak_share", self.resp_peak_share, low=0.0, high=1.0)

    def replace(self, **changes: Any) -> MetricsSettings:
        """Copy with some fields changed (validated again)."""
        return dataclasses.replace(self, **changes)

    def to_dict(self) -> dict[str, Any]:
        """Flat plain dict (for JSON output and table attributes)."""
        out: dict[str, Any] = {}
        for f in dataclasses.fields(self):
            v = getattr(self, f.name)
            if isinstance(v, Bands):
                out.update({f"bands.{k}_hz": list(getattr(v, k)) for k in ("vlf", "lf", "hf")})
                out["bands.edge"] = v.edge
            elif isinstance(v, tuple):
                out[f.name] = list(v)
            else:
                out[f.name] = v
        return out

