"""Benchmark inputs: seeded simulated nights and a season of morning files (invented data).

Everything is made with rrkit's own seeded simulators (`rrkit.simulate.simulate_rr`,
`rrkit.simulate.inject_artifacts`), so each input has a known ground truth. Files that take a
while to write (the season) are cached under ``bench/_cache/`` (ignored by git) and rebuilt when
their parameters change.
"""

from __future__ import annotations

import json
import shutil
from dataclasses import dataclass
from datetime import datetime, timedelta, timezone
from pathlib import Path
from typing import Any

import numpy as np

from ._nk import FS_HZ

__all__ = ["CACHE_DIR", "Night", "make_night", "make_season", "write_rr_file"]

CACHE_DIR = Path(__file__).resolve().parent / "_cache"


@dataclass
class Night:
    """A simulated night with injected artifacts.

    Attributes
    ----------
    truth : rrkit.Recording
        The artifact-free series.
    recording : rrkit.Recording
        The series with artifacts, rebuilt from `peaks` (what both sides receive).
    peaks : numpy.ndarray of int
        Beat positions as sample indices at `FS_HZ` (1 ms resolution).
    artifact_intervals : numpy.ndarray of int
        Indices (into ``recording``'s intervals) of the injected artifacts.
    truth_labels : numpy.ndarray of str
        The true label of every interval of ``recording``.
    events : dict of str -> numpy.ndarray of int
        Per class, the index of the first interval each injected event touches.
    """

    truth: Any
    recording: Any
    peaks: np.ndarray
    artifact_intervals: np.ndarray
    truth_labels: np.ndarray
    events: dict


#: Injected artifact classes, in equal shares (Lipponen & Tarvainen 2019 classes).
ARTIFACT_MIX = ("ectopic", "missed", "extra", "long", "short")


def artifact_rates(total: float) -> dict[str, float]:
    """Per-class rates for `rrkit.simulate.inject_artifacts` summing to ``total`` events."""
    return {c: total / len(ARTIFACT_MIX) for c in ARTIFACT_MIX}


def make_night(*, duration_s: float = 8 * 3600.0, artifact_rate: float = 0.02,
               seed: int = 8) -> Night:
    """A seeded night: ``duration_s`` of resting-like beats with ``artifact_rate`` artifacts."""
    from rrkit import Recording
    from rrkit.simulate import inject_artifacts, simulate_rr

    clean = simulate_rr(duration_s=duration_s, seed=seed, mean_rr_ms=1000.0)
    art, truth = inject_artifacts(clean, rates=artifact_rates(artifact_rate), seed=seed + 1)
    # Same peaks for both sides: integer samples at FS_HZ, as an ECG detector would give them.
    peaks = np.round(np.asarray(art.beat_times_s) * FS_HZ).astype(np.int64)
    if np.any(np.diff(peaks) <= 0):  # cannot happen at 1 kHz for intervals over 250 ms
        raise RuntimeError("rounding to samples merged beats")
    rec = Recording.from_peak_times(peaks / FS_HZ)
    labels = np.asarray(truth.labels).astype(str)
    return Night(truth=truth.clean, recording=rec, peaks=peaks,
                 artifact_intervals=np.flatnonzero(labels != "normal"), truth_labels=labels,
                 events={k: np.asarray(v, dtype=np.int64) for k, v in truth.events.items()})


def write_rr_file(path: Path, recording: Any) -> Path:
    """Write an RR file (ms, one value a line) with rrkit's writer."""
    from rrkit.io import write_rr

    path.parent.mkdir(parents=True, exist_ok=True)
    write_rr(path, recording)
    return path


# --------------------------------------------------------------------------- season
def _stamp(params: dict[str, Any]) -> str:
    return json.dumps(params, sort_keys=True)


def make_season(
    root: Path,
    *,
    n_subjects: int = 12,
    n_days: int = 180,
    seconds: float = 360.0,
    artifact_rate: float = 0.01,
    n_nights: int = 0,
    night_s: float = 8 * 3600.0,
    seed: int = 5,
) -> dict[str, Any]:
    """Write a season of morning RR files (one per subject per day) and a manifest CSV.

    Layout: ``root/files/<subject>/<subject>_<YYYY-MM-DD>.txt`` plus ``root/manifest.csv``
    (``path, subject, start``), ``root/truth.csv`` (``path, rmssd_true_ms``: RMSSD of the
    artifact-free series over the morning window, 60-360 s) and, when ``n_nights`` > 0,
    ``root/nights/`` with its own
    ``manifest.csv``. Reused when ``root/params.json`` matches the parameters.
    """
    from rrkit.simulate import inject_artifacts, simulate_rr

    params = {"n_subjects": n_subjects, "n_days": n_days, "seconds": seconds,
              "artifact_rate": artifact_rate, "n_nights": n_nights, "night_s": night_s,
              "seed": seed, "layout": 3}
    stamp = root / "params.json"
    if stamp.is_file() and stamp.read_text() == _stamp(params):
        return _season_index(root)
    if root.exists():
        shutil.rmtree(root)
    (root / "files").mkdir(parents=True)
    rng = np.random.default_rng(seed)
    day0 = datetime(2026, 3, 2, tzinfo=timezone.utc)
    rows = ["path,subject,start"]
    truth_rows = ["path,rmssd_true_ms"]
    for s in range(n_subjects):
        subject = f"S{s + 1:02d}"
        base_rr = rng.uniform(900.0, 1200.0)
        base_amp = rng.uniform(15.0, 45.0)
        for d in range(n_days):
            start = day0 + timedelta(days=d, hours=6, minutes=int(rng.integers(0, 90)))
            rec = simulate_rr(duration_s=seconds, seed=rng,
                              mean_rr_ms=base_rr + rng.normal(0, 30.0),
                              resp_amp_ms=max(5.0, base_amp * rng.lognormal(0.0, 0.15)))
            truth_rmssd = _window_rmssd(rec, 60.0, 360.0)
            if artifact_rate > 0:
                rec, _ = inject_artifacts(rec, rates=artifact_rates(artifact_rate), seed=rng)
            rel = Path("files") / subject / f"{subject}_{start:%Y-%m-%d}.txt"
            write_rr_file(root / rel, rec)
            rows.append(f"{rel.as_posix()},{subject},{start.isoformat()}")
            truth_rows.append(f"{rel.as_posix()},{truth_rmssd!r}")
    (root / "manifest.csv").write_text("\n".join(rows) + "\n")
    (root / "truth.csv").write_text("\n".join(truth_rows) + "\n")
    if n_nights:
        (root / "nights").mkdir()
        nrows = ["path,subject,start"]
        for k in range(n_nights):
            subject = f"S{k % n_subjects + 1:02d}"
            start = day0 + timedelta(days=k, hours=-1)
            rec = simulate_rr(duration_s=night_s, seed=rng)
            if artifact_rate > 0:
                rec, _ = inject_artifacts(rec, rates=artifact_rates(artifact_rate), seed=rng)
            rel = Path(f"night_{k:02d}_{subject}.txt")
            write_rr_file(root / "nights" / rel, rec)
            nrows.append(f"{rel.as_posix()},{subject},{start.isoformat()}")
        (root / "nights" / "manifest.csv").write_text("\n".join(nrows) + "\n")
    stamp.write_text(_stamp(params))
    return _season_index(root)


def _window_rmssd(rec: Any, start_s: float, end_s: float) -> float:
    """RMSSD (ms) of the intervals whose beats lie in ``[start_s, end_s]`` (Task Force 1996)."""
    t = np.asarray(rec.beat_times_s)
    rr = np.asarray(rec.rr_ms)[(t[:-1] >= start_s) & (t[1:] <= end_s)]
    return float(np.sqrt(np.mean(np.diff(rr) ** 2)))


def _season_index(root: Path) -> dict[str, Any]:
    files = sorted((root / "files").rglob("*.txt"))
    nights = sorted((root / "nights").glob("*.txt")) if (root / "nights").is_dir() else []
    return {"root": root, "files": files, "manifest": root / "manifest.csv",
            "truth": root / "truth.csv",
            "nights": nights, "nights_manifest": root / "nights" / "manifest.csv"}
