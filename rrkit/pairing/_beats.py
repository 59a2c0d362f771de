"""Beat pairing after alignment: matched, missed and extra beats, and paired intervals.

Each reference beat is paired with at most one device beat, and each device beat with at most
one reference beat, when the two lie within the tolerance on the reference clock (after the
alignment, which also removes the constant pulse delay; see `rrkit.pairing.align`). Pairs are
mutual nearest neighbours (each is the other's closest beat), found again among the beats still
unpaired until none is left, so a spurious device beat next to a true one cannot take its
place when the true one is closer.

Default tolerance: 150 ms, the match window of ANSI/AAMI EC57 for beat detectors (secondary
source, REFERENCES.md 5). It is also at most half of the shortest interval up to 200 bpm
(300 ms), so two neighbouring reference beats never compete for one device beat at rest and in
most exercise.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .._validation import check_range
from ..recording import Recording
from ._align import Alignment, align, mutual_pairs

__all__ = ["BEAT_CLASSES", "DEFAULT_TOLERANCE_MS", "BeatPairs", "pair_beats"]

DEFAULT_TOLERANCE_MS = 150.0
#: classes of pairs.csv rows; "outside" beats lie outside the common stretch
BEAT_CLASSES = ("matched", "missed", "extra", "outside")


@dataclass(frozen=True, slots=True, eq=False)
class BeatPairs:
    """Beat-by-beat pairing of a device against a reference.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per beat (`BEAT_CLASSES`), in time order: ``class``, ``ref_beat`` and
        ``dev_beat`` (indices in each recording, missing where there is none), ``ref_time_s``,
        ``dev_time_s`` (device clock), ``dev_aligned_s`` (on the reference clock),
        ``time_diff_ms`` (aligned device minus reference), and for a matched beat that ends a
        matched interval on both sides ``ref_interval_ms``, ``dev_interval_ms`` and
        ``interval_diff_ms`` (device minus reference), plus ``ref_symbol`` when known.
    stats : dict
        Beat-level figures: ``n_ref``, ``n_dev`` (in the common stretch), ``n_matched``,
        ``n_missed``, ``n_extra``, ``matched_pct`` (share of reference beats matched),
        ``device_ppv_pct`` (share of device beats that are true beats), ``extra_per_min``,
        ``missed_per_min``, ``overlap_min``, ``time_diff_sd_ms``, ``n_intervals`` paired.
    alignment : Alignment
    tolerance_ms : float
    interval_name : str
        ``"pulse-to-pulse"`` when the device is pulse-derived, else ``"RR"``.
    notes : tuple of str
    """

    table: Any
    stats: dict
    alignment: Alignment
    tolerance_ms: float
    interval_name: str = "RR"
    notes: tuple[str, ...] = field(default_factory=tuple)

    def paired_intervals(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """(reference ms, device ms, time s on the reference clock) of the paired intervals."""
        t = self.table
        ok = t["interval_diff_ms"].notna().to_numpy()
        return (t["ref_interval_ms"].to_numpy(float)[ok], t["dev_interval_ms"].to_numpy(float)[ok],
                t["ref_time_s"].to_numpy(float)[ok])


def _pair_all(r: np.ndarray, u: np.ndarray, tol_s: float) -> tuple[np.ndarray, np.ndarray]:
    """Mutual-nearest pairs within ``tol_s``, repeated among the unpaired beats."""
    ii, jj = [], []
    free_r = np.arange(r.size)
    free_u = np.arange(u.size)
    while free_r.size >= 2 and free_u.size >= 2:
        i, j = mutual_pairs(r[free_r], u[free_u], tol_s)
        if i.size == 0:
            break
        ii.append(free_r[i])
        jj.append(free_u[j])
        free_r = np.setdiff1d(free_r, free_r[i])
        free_u = np.setdiff1d(free_u, free_u[j])
    if not ii:
        return np.zeros(0, dtype=np.int64), np.zeros(0, dtype=np.int64)
    i = np.concatenate(ii)
    j = np.concatenate(jj)
    order = np.argsort(i)
    return i[order], j[order]


def pair_beats(
    reference: Recording,
    device: Recording,
    *,
    alignment: Alignment | None = None,
    tolerance_ms: float = DEFAULT_TOLERANCE_MS,
    max_offset_s: float | None = None,
) -> BeatPairs:
    """Pair the beats of two simultaneous recordings after aligning their clocks.

    Parameters
    ----------
    reference, device : Recording
        The reference (ECG, chest strap) and the device under test.
    alignment : Alignment, optional
        From `align`; computed here when omitted (with ``max_offset_s``).
    tolerance_ms : float
        Largest distance (ms, reference clock) between paired beats; default 150 ms (see the
        module notes).
    max_offset_s : float, optional
        Passed to `align` when ``alignment`` is omitted.

    Returns
    -------
    BeatPairs

    Raises
    ------
    InputError
        From `align` (no overlap, no correlation), or a tolerance outside 1-500 ms.

    Examples
    --------
    >>> from rrkit.simulate import simulate_rr, simulate_device
    >>> ref = simulate_rr(duration_s=600, seed=1)
    >>> dev, truth = simulate_device(ref, delay_ms=200, drop_pct=2, seed=2)
    >>> pairs = pair_beats(ref, dev)
    >>> pairs.stats["n_missed"] == truth.dropped.size
    True
    """
    import pandas as pd

    tol = check_range("tolerance_ms", tolerance_ms, low=1.0, high=500.0, unit="ms")
    if alignment is None:
        alignment = align(reference, device, max_offset_s=max_offset_s)
    r = reference.beat_times_s
    u = alignment.to_reference(device.beat_times_s)
    lo, hi = alignment.overlap_s
    i, j = _pair_all(r, u, tol / 1000.0)
    r_in = (r >= lo - tol / 1000.0) & (r <= hi + tol / 1000.0)
    u_in = (u >= lo - tol / 1000.0) & (u <= hi + tol / 1000.0)
    matched_r = np.zeros(r.size, dtype=bool)
    matched_r[i] = True
    matched_u = np.zeros(u.size, dtype=bool)
    matched_u[j] = True
    missed = np.flatnonzero(~matched_r & r_in)
    extra = np.flatnonzero(~matched_u & u_in)
    out_r = np.flatnonzero(~matched_r & ~r_in)
    out_u = np.flatnonzero(~matched_u & ~u_in)

    # paired intervals: consecutive reference beats paired to consecutive device beats, and
    # neither interval a gap
    n_m = i.size
    ref_int = np.full(n_m, np.nan)
    dev_int = np.full(n_m, np.nan)
    if n_m > 1:
        cons = (np.diff(i) == 1) & (np.diff(j) == 1)
        cons &= ~reference.gaps[i[:-1]] & ~device.gaps[j[:-1]]
        k = np.flatnonzero(cons) + 1
        ref_int[k] = reference.rr_ms[i[k] - 1]
        dev_int[k] = (u[j[k]] - u[j[k] - 1]) * 1000.0

    def block(cls, ri, dj, n):
        return {
            "class": np.full(n, cls, dtype=object),
            "ref_beat": ri, "dev_beat": dj,
        }

    nan = np.full
    parts = []
    parts.append(pd.DataFrame({
        **block("matched", i, j, n_m),
        "ref_time_s": r[i], "dev_time_s": device.beat_times_s[j], "dev_aligned_s": u[j],
        "time_diff_ms": (u[j] - r[i]) * 1000.0,
        "ref_interval_ms": ref_int, "dev_interval_ms": dev_int,
        "interval_diff_ms": dev_int - ref_int}))
    for cls, idx in (("missed", missed), ("outside", out_r)):
        parts.append(pd.DataFrame({
            **block(cls, idx, nan(idx.size, -1), idx.size), "ref_time_s": r[idx],
            "dev_time_s": nan(idx.size, np.nan), "dev_aligned_s": nan(idx.size, np.nan)}))
    for cls, idx in (("extra", extra), ("outside", out_u)):
        parts.append(pd.DataFrame({
            **block(cls, nan(idx.size, -1), idx, idx.size), "ref_time_s": nan(idx.size, np.nan),
            "dev_time_s": device.beat_times_s[idx], "dev_aligned_s": u[idx]}))
    table = pd.concat([p for p in parts if len(p)], ignore_index=True)
    for col in ("ref_beat", "dev_beat"):
        table[col] = table[col].astype("Int64").where(table[col] >= 0)
    table["sort_time"] = table["ref_time_s"].fillna(table["dev_aligned_s"])
    table = table.sort_values("sort_time", kind="stable").drop(columns="sort_time")
    if reference.beat_symbols is not None:
        sym = pd.Series(reference.beat_symbols)
        table["ref_symbol"] = [sym[k] if pd.notna(k) else "" for k in table["ref_beat"]]
    table = table.reset_index(drop=True)

    overlap_min = (hi - lo) / 60.0
    n_ref = int(r_in.sum())
    n_dev = int(u_in.sum())
    in_pairs = r_in[i] | u_in[j]
    n_matched = int(in_pairs.sum())
    td = (u[j] - r[i]) * 1000.0
    stats = {
        "n_ref": n_ref, "n_dev": n_dev, "n_matched": n_matched,
        "n_missed": int(missed.size), "n_extra": int(extra.size),
        "matched_pct": 100.0 * n_matched / max(n_matched + missed.size, 1),
        "device_ppv_pct": 100.0 * n_matched / max(n_matched + extra.size, 1),
        "extra_per_min": extra.size / overlap_min if overlap_min > 0 else float("nan"),
        "missed_per_min": missed.size / overlap_min if overlap_min > 0 else float("nan"),
        "overlap_min": overlap_min,
        "time_diff_sd_ms": float(np.std(td, ddof=1)) if td.size > 1 else float("nan"),
        "n_intervals": int(np.isfinite(ref_int).sum()),
        "tolerance_ms": tol,
    }
    notes = []
    if tol > 0.5 * float(np.min(reference.rr_ms)):
        notes.append(f"tolerance {tol:g} ms exceeds half the shortest reference interval "
                     f"({np.min(reference.rr_ms):.0f} ms): neighbouring beats may compete")
    return BeatPairs(table=table, stats=stats, alignment=alignment, tolerance_ms=tol,
                     interval_name=device.info.interval_name, notes=tuple(notes))
