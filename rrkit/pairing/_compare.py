"""A device against a reference recorded at the same time: beat level and window level.

`compare_devices` aligns the two recordings (`align`), pairs their beats (`pair_beats`), then

- beat level: the share of reference beats matched, the device's extra beats per minute, and
  the agreement of the paired intervals (`rrkit.agreement`: bias, SD, MAE, limits of
  agreement with their intervals);
- window level: the same windows (resolved once on the reference, over the common stretch) go
  through rrkit's cleaning and metrics on both recordings (`rrkit.analyze`, the device on the
  reference clock), and each metric is compared with `rrkit.agreement`.

Pulse-derived RMSSD tends to read higher than ECG RMSSD because the pulse-arrival time varies
from beat to beat (Schäfer & Vagedes 2013, Int J Cardiol 166:15-29, from memory): with an
independent delay jitter of SD σ, each interval gains a variance of 2σ² and each successive
difference 6σ², so RMSSD² rises by about 6σ². The bias is always reported, never corrected.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..agreement import AgreementResult, agreement
from ..analysis import analyze
from ..errors import InputError
from ..recording import Recording
from ..windows import resolve_windows
from ._align import Alignment, align
from ._beats import DEFAULT_TOLERANCE_MS, BeatPairs, pair_beats

__all__ = ["COMPARED_METRICS", "DeviceComparison", "compare_devices"]

#: window metrics compared by default (frequency-domain ones need windows of 2 min or more)
COMPARED_METRICS = ("mean_hr_bpm", "mean_rr_ms", "sdnn_ms", "rmssd_ms", "ln_rmssd", "pnn50_pct",
                    "lf_ms2", "hf_ms2")
_MIN_WINDOWS = 3  # rrkit.agreement needs at least 3 pairs


@dataclass(frozen=True, slots=True, eq=False)
class DeviceComparison:
    """Everything `compare_devices` found.

    Attributes
    ----------
    alignment : Alignment
    pairs : BeatPairs
        The beat table (``pairs.table``) and beat-level counts (``pairs.stats``).
    beat_agreement : AgreementResult or None
        Paired intervals, device minus reference (None with fewer than 3 paired intervals).
    windows : pandas.DataFrame
        One row per window: ``window``, ``start_s``, ``end_s``, ``ref_quality``,
        ``dev_quality``, then ``ref_<metric>``, ``dev_<metric>`` and ``diff_<metric>``.
    window_agreement : dict of str to AgreementResult
        Per compared metric with at least 3 usable windows.
    interval_name : str
        ``"pulse-to-pulse"`` when the device is pulse-derived, else ``"RR"``.
    notes : tuple of str
    """

    alignment: Alignment
    pairs: BeatPairs
    beat_agreement: AgreementResult | None
    windows: Any
    window_agreement: dict
    interval_name: str = "RR"
    notes: tuple[str, ...] = field(default_factory=tuple)

    @property
    def rmssd_bias_ms(self) -> float:
        """Window-level RMSSD bias, device minus reference (ms); NaN when not computed."""
        res = self.window_agreement.get("rmssd_ms")
        return float(res.stats["bias"]) if res is not None else float("nan")

    def stats_table(self):
        """One row per statistic: ``level`` (beat, beat intervals, window), ``metric``, then the
        columns of `AgreementResult.table` (``statistic, estimate, ci_low, ci_high, unit,
        meaning``).

        Returns
        -------
        pandas.DataFrame
        """
        import pandas as pd

        rows = [{"level": "beat", "metric": "beats", "statistic": k, "estimate": float(v),
                 "ci_low": np.nan, "ci_high": np.nan, "unit": _beat_unit(k), "meaning": m}
                for k, v, m in _beat_rows(self)]
        frames = [pd.DataFrame(rows)]
        if self.beat_agreement is not None:
            t = self.beat_agreement.table.copy()
            t.insert(0, "metric", f"{self.interval_name} interval (ms)")
            t.insert(0, "level", "beat intervals")
            frames.append(t)
        for metric, res in self.window_agreement.items():
            t = res.table.copy()
            t.insert(0, "metric", metric)
            t.insert(0, "level", "window")
            frames.append(t)
        return pd.concat(frames, ignore_index=True)

    def summary_text(self) -> str:
        """A readable summary: alignment, beats, intervals, windows and the RMSSD bias."""
        a, s = self.alignment, self.pairs.stats
        name = self.interval_name
        where = "device time 0 on the reference clock"
        if name == "pulse-to-pulse":
            where += "; the constant pulse delay is part of it"
        lines = [
            "Alignment",
            f"  offset {a.offset_s:.3f} s ({where})",
            f"  drift {a.drift_ms_per_h:+.1f} ms per hour of the device clock",
            f"  confidence {a.confidence:.2f} ({a.locked_share:.1%} of beats locked, paired "
            f"intervals r = {a.beat_interval_r:.3f}); beat-time jitter {a.jitter_ms:.1f} ms",
        ]
        if a.delay_ms is not None:
            lines.append(f"  mean pulse delay {a.delay_ms:.1f} ms (clock offset given: "
                         f"{a.clock_offset_s:g} s)")
        lines += [
            "",
            f"Beats (common stretch {s['overlap_min']:.1f} min, tolerance "
            f"{self.pairs.tolerance_ms:g} ms)",
            f"  reference beats matched {s['n_matched']} of {s['n_matched'] + s['n_missed']} "
            f"({s['matched_pct']:.2f}%), missed {s['n_missed']} "
            f"({s['missed_per_min']:.2f} per min)",
            f"  device extra beats {s['n_extra']} ({s['extra_per_min']:.2f} per min); "
            f"{s['device_ppv_pct']:.2f}% of device beats are true beats",
        ]
        if self.beat_agreement is not None:
            st = self.beat_agreement.stats
            lines.append(
                f"  {name} intervals (device - reference, {int(st['n'])} pairs): bias "
                f"{st['bias']:+.2f} ms, SD {st['sd_diff']:.2f} ms, MAE {st['mae']:.2f} ms, "
                f"limits of agreement {st['loa_low']:+.1f} to {st['loa_high']:+.1f} ms")
        lines += ["", f"Windows ({len(self.windows)})"]
        for metric, res in self.window_agreement.items():
            st = res.stats
            lines.append(f"  {metric}: bias {st['bias']:+.3g} ({st['bias_ci_low']:+.3g} to "
                         f"{st['bias_ci_high']:+.3g}), limits {st['loa_low']:+.3g} to "
                         f"{st['loa_high']:+.3g}, CCC {st['ccc']:.3f}, MAPE "
                         f"{st['mape_pct']:.1f}%")
        lines += ["", _rmssd_sentence(self)]
        if self.notes:
            lines += ["", "Notes"] + [f"  - {n}" for n in self.notes]
        lines += ["", "rrkit is not a medical device and makes no diagnosis."]
        return "\n".join(lines)

    def plot(self, path=None, **options):
        """The paired tachograms and beat-level differences (`rrkit.plots.paired_recordings`)."""
        from ..plots._pairs import paired_recordings

        return paired_recordings(self, path=path, **options)


def _beat_rows(c: DeviceComparison):
    s = c.pairs.stats
    a = c.alignment
    return [
        ("offset_s", a.offset_s, "device time 0 on the reference clock"),
        ("drift_ms_per_h", a.drift_ms_per_h, "device clock gain per hour"),
        ("confidence", a.confidence, "alignment confidence (0 to 1)"),
        ("jitter_ms", a.jitter_ms, "robust SD of the beat-time residuals"),
        ("n_matched", s["n_matched"], "reference beats matched"),
        ("n_missed", s["n_missed"], "reference beats without a device beat"),
        ("n_extra", s["n_extra"], "device beats without a reference beat"),
        ("matched_pct", s["matched_pct"], "share of reference beats matched"),
        ("device_ppv_pct", s["device_ppv_pct"], "share of device beats that are true beats"),
        ("extra_per_min", s["extra_per_min"], "device extra beats per minute"),
        ("overlap_min", s["overlap_min"], "length of the common stretch"),
    ]


def _beat_unit(key: str) -> str:
    for suffix, unit in (("_per_min", "per min"), ("_pct", "%"), ("_ms_per_h", "ms/h"),
                         ("_ms", "ms"), ("_s", "s"), ("_min", "min")):
        if key.endswith(suffix):
            return unit
    return ""


def _rmssd_sentence(c: DeviceComparison) -> str:
    res = c.window_agreement.get("rmssd_ms")
    if res is None:
        return "RMSSD bias: not computed (fewer than 3 windows with RMSSD on both sides)."
    st = res.stats
    word = "higher" if st["bias"] > 0 else "lower"
    text = (f"RMSSD bias: the device reads {abs(st['bias']):.1f} ms {word} than the reference "
            f"(95% CI {st['bias_ci_low']:+.1f} to {st['bias_ci_high']:+.1f} ms, "
            f"{int(st['n'])} windows).")
    if c.interval_name == "pulse-to-pulse":
        text += (" Pulse-derived RMSSD is known to read higher than ECG RMSSD because the "
                 "pulse-arrival time varies from beat to beat; this bias is reported, not "
                 "corrected.")
    return text


def _aligned_device(device: Recording, alignment: Alignment) -> Recording:
    return Recording.from_peak_times(alignment.to_reference(device.beat_times_s),
                                     subject=device.subject, source=device.source,
                                     info=device.info, gaps=device.gaps,
                                     beat_symbols=device.beat_symbols)


def compare_devices(
    reference: Recording,
    device: Recording,
    *,
    windows="slide:5m",
    tolerance_ms: float = DEFAULT_TOLERANCE_MS,
    max_offset_s: float | None = None,
    clock_offset_s: float | None = None,
    clean: str | None = "drr",
    metrics: tuple[str, ...] = COMPARED_METRICS,
) -> DeviceComparison:
    """Align, pair and compare a device with a reference recorded at the same time.

    Parameters
    ----------
    reference, device : Recording
        The reference (ECG, chest strap) and the device under test (pulse sensor, second strap).
    windows : window spec or str
        Windows compared on both recordings (default ``"slide:5m"``: consecutive 5-minute
        windows). Resolved once on the reference's common stretch, so both sides use the very
        same stretches of time.
    tolerance_ms : float
        Beat pairing tolerance (default 150 ms, ANSI/AAMI EC57; see `pair_beats`).
    max_offset_s, clock_offset_s : float, optional
        Offset search range and known clock offset (see `align`).
    clean : {"drr", "median", "mad", "none"} or None
        Cleaning applied to both recordings in every window (`rrkit.analyze`).
    metrics : tuple of str
        Window metrics compared (default `COMPARED_METRICS`).

    Returns
    -------
    DeviceComparison

    Raises
    ------
    InputError
        Recordings that do not overlap or do not correlate (`align`), a bad tolerance or
        window spec, or a metric rrkit does not compute.

    Examples
    --------
    >>> from rrkit.simulate import simulate_rr, simulate_device
    >>> ref = simulate_rr(duration_s=960, seed=4)
    >>> dev, _ = simulate_device(ref, clock_offset_s=3.0, delay_ms=200, jitter_ms=10, seed=5)
    >>> result = compare_devices(ref, dev)
    >>> len(result.windows), result.rmssd_bias_ms > 0
    (3, True)
    """
    alignment = align(reference, device, max_offset_s=max_offset_s,
                      clock_offset_s=clock_offset_s)
    pairs = pair_beats(reference, device, alignment=alignment, tolerance_ms=tolerance_ms)
    notes = list(alignment.notes) + list(pairs.notes)
    name = device.info.interval_name

    ref_i, dev_i, _ = pairs.paired_intervals()
    beat_res = None
    if ref_i.size >= 3:
        beat_res = agreement(dev_i, ref_i, metric=f"{name} interval", unit="ms",
                             repeated=False)
        notes.append("paired intervals follow each other in time: their confidence intervals, "
                     "computed as if independent, are too narrow")

    lo, hi = alignment.overlap_s
    ref_o = reference.slice(lo, hi)
    dev_o = _aligned_device(device, alignment).slice(lo, hi)
    wins = resolve_windows(windows, ref_o)
    if not wins:
        raise InputError(f"the window spec {windows!r} gives no window in the common stretch "
                         f"({(hi - lo) / 60:.1f} min)", hint="use shorter windows")
    ta = analyze(ref_o, windows=wins, clean=clean)
    tb = analyze(dev_o, windows=wins, clean=clean)
    missing = [m for m in metrics if m not in ta.columns]
    if missing:
        raise InputError(f"metrics {missing} are not computed by rrkit.analyze; choose from "
                         f"{[c for c in ta.columns if c not in ('window', 'source')]}")
    import pandas as pd

    table = pd.DataFrame({"window": ta["window"], "start_s": ta["start_s"],
                          "end_s": ta["end_s"], "ref_quality": ta["quality"],
                          "dev_quality": tb["quality"],
                          "ref_artifact_pct": ta["artifact_pct"],
                          "dev_artifact_pct": tb["artifact_pct"]})
    window_res: dict[str, AgreementResult] = {}
    for m in metrics:
        a = ta[m].to_numpy(float)
        b = tb[m].to_numpy(float)
        table[f"ref_{m}"] = a
        table[f"dev_{m}"] = b
        table[f"diff_{m}"] = b - a
        usable = np.isfinite(a) & np.isfinite(b)
        if usable.sum() >= _MIN_WINDOWS:
            window_res[m] = agreement(b, a, metric=m, repeated=False)
        else:
            notes.append(f"{m}: {int(usable.sum())} windows with a value on both sides, fewer "
                         f"than {_MIN_WINDOWS}: not compared")
    if name == "pulse-to-pulse":
        notes.append("the device is pulse-derived: its short-term variability (RMSSD, pNN50, "
                     "HF) includes pulse-arrival-time variability")
    return DeviceComparison(alignment=alignment, pairs=pairs, beat_agreement=beat_res,
                            windows=table, window_agreement=window_res, interval_name=name,
                            notes=tuple(notes))
