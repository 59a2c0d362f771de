"""The demo squad's exercise tests: one invented incremental cycling test for each of two
athletes, with planted alpha1 thresholds (written beside them in ``ramp/planted.json``)."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from ._artifacts import inject_artifacts
from ._ramp import simulate_ramp

__all__ = ["RAMP_TESTS", "write_ramps"]

#: subject -> planted test: HR at alpha1 0.75 and 0.5, peak HR, start power, seed. Invented.
RAMP_TESTS = {
    "R02": {"hr_075_bpm": 149.0, "hr_050_bpm": 167.0, "hr_peak_bpm": 183.0,
            "start_power_w": 80.0, "stage_step_w": 12.0, "seed": 2026_02},
    "R07": {"hr_075_bpm": 156.0, "hr_050_bpm": 171.0, "hr_peak_bpm": 186.0,
            "start_power_w": 100.0, "stage_step_w": 12.0, "seed": 2026_07},
}


def write_ramps(root: Path, subjects) -> list[str]:
    """Write ``ramp/<subject>_ramp.txt`` (RR in ms, one a line), ``ramp/<subject>_stages.csv``
    and ``ramp/planted.json`` for the tests whose athlete is in ``subjects``; return the
    relative paths."""
    out: list[str] = []
    planted = {}
    folder = root / "ramp"
    folder.mkdir(parents=True, exist_ok=True)
    for subject, spec in RAMP_TESTS.items():
        if subject not in subjects:
            continue
        spec = dict(spec)
        seed = spec.pop("seed")
        sim = simulate_ramp(ramp_s=1500.0, recovery_s=120.0, seed=seed, **spec)
        # a chest strap during a test: a few missed and extra beats (0.4% each)
        rec, _ = inject_artifacts(sim.recording, rates={"missed": 0.004, "extra": 0.004},
                                  seed=seed + 1)
        text = "".join(f"{v:.0f}\n" for v in np.round(rec.rr_ms))
        (folder / f"{subject}_ramp.txt").write_text(text, encoding="utf-8", newline="\n")
        stages = "time_s,power_w\n" + "".join(
            f"{t:.0f},{p:.0f}\n" for t, p in zip(sim.loads["time_s"], sim.loads["power_w"],
                                                   strict=True))
        (folder / f"{subject}_stages.csv").write_text(stages, encoding="utf-8", newline="\n")
        out += [f"ramp/{subject}_ramp.txt", f"ramp/{subject}_stages.csv"]
        planted[subject] = {"hr_bpm": {f"{k:g}": round(v, 1) for k, v in sim.hr_at.items()},
                            "power_w": {f"{k:g}": round(v, 1) for k, v in sim.power_at.items()}}
    if planted:
        (folder / "planted.json").write_text(json.dumps(planted, indent=2, sort_keys=True)
                                             + "\n", encoding="utf-8", newline="\n")
        out.append("ramp/planted.json")
    return out
