"""Whole nights of the invented squad, and what a simulated wearable reported for them.

Nights come from `rrkit.simulate.simulate_night`, scaled to each athlete's heart rate and
variability; the wearable's nightly values come from `rrkit.simulate.simulate_wearable_reports`
with a definition, bias and noise that the demo data do not reveal (the agreement search has to
find the definition). A simulation of invented people.
"""

from __future__ import annotations

import dataclasses
from datetime import datetime, time, timedelta
from pathlib import Path
from zoneinfo import ZoneInfo

import numpy as np

from ..recording import Recording
from . import _squad_files as files
from . import _squad_story as story

__all__ = ["TIME_ZONE", "WEARABLE", "night_recordings", "write_nights"]

#: The squad's clocks (an invented club in Central Europe).
TIME_ZONE = "Europe/Berlin"

#: The wearable's hidden behaviour: which reference definition it resembles, its bias (ms) and
#: the SD of its noise (ms). Kept out of the data folder on purpose.
WEARABLE = {"definition": "lowest-hr-30min", "bias": 5.0, "noise_sd": 1.5, "metric": "rmssd_ms"}

_P_NIGHT, _P_WEAR = 8, 9


def _rng(settings, athlete: int, day: int, purpose: int) -> np.random.Generator:
    return np.random.default_rng([settings.seed, athlete, day + 1000, purpose])


def night_recordings(settings, *, progress=None) -> list[tuple[str, Recording]]:
    """The nights as (relative path, recording rounded to whole ms) pairs, in a fixed order."""
    from ._night import NightSettings, simulate_night

    tz = ZoneInfo(TIME_ZONE)
    out = []
    for a in range(settings.n_athletes):
        ath = story.ATHLETES[a]
        level = ath.rr_ms / 1150.0
        base = NightSettings()
        ns = dataclasses.replace(
            base, onset_rr_ms=base.onset_rr_ms * level, sleep_rr_ms=base.sleep_rr_ms * level,
            nadir_rr_ms=base.nadir_rr_ms * level, morning_rr_ms=base.morning_rr_ms * level,
            variability=float(np.exp(ath.ln_rmssd - 4.3)))
        for day in settings.night_days:
            if day >= settings.n_days:
                continue
            rng = _rng(settings, a, day, _P_NIGHT)
            lights_off = datetime.combine(settings.first_monday + timedelta(days=day),
                                          time(22, 30), tzinfo=tz)
            lights_off += timedelta(seconds=int(rng.integers(0, 60 * 60)))
            night = simulate_night(duration_h=settings.night_hours, seed=rng, start=lights_off,
                                   subject=ath.subject, settings=ns)
            counts = {"missed": int(rng.poisson(8 * ath.missed_per_file + 4)),
                      "ectopic": int(rng.poisson(ath.premature_per_file * 10 * settings.night_hours
                                                 + 2))}
            from . import inject_artifacts

            bad, _truth = inject_artifacts(night, counts=counts, seed=int(rng.integers(2**31)))
            rr = np.round(np.asarray(bad.rr_ms)).astype(np.int64)
            name = f"{ath.subject}_{lights_off:%Y%m%d_%H%M}.txt.gz"
            rec = Recording.from_rr(rr.astype(float), start=lights_off, subject=ath.subject,
                                    source=f"nights/{name}")
            out.append((f"nights/{name}", rec))
            if progress is not None:
                progress(f"night {ath.subject} {lights_off:%Y-%m-%d}")
    return out


def write_nights(root: Path, settings, *, progress=None) -> list[str]:
    """Write the nights, their manifest and the wearable's table; return the relative paths."""
    from ._night import simulate_wearable_reports

    nights = night_recordings(settings, progress=progress)
    written = []
    rows = ["path,subject,start\n"]
    for rel, rec in nights:
        data = files.render(np.asarray(rec.rr_ms), rec.start.replace(tzinfo=None), "ms_gz")
        path = root / rel
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_bytes(data)
        written.append(rel)
        rows.append(f"{Path(rel).name},{rec.subject},{rec.start.isoformat()}\n")
    (root / "nights").mkdir(parents=True, exist_ok=True)
    (root / "nights" / "manifest.csv").write_bytes("".join(rows).encode("ascii"))
    written.append("nights/manifest.csv")
    if nights:
        reports = simulate_wearable_reports(
            [rec for _rel, rec in nights], definition=WEARABLE["definition"],
            bias=WEARABLE["bias"], noise_sd=WEARABLE["noise_sd"], metric=WEARABLE["metric"],
            seed=_rng(settings, 0, -1, _P_WEAR))
        lines = [f"subject,date,{WEARABLE['metric']}\n"]
        for r in reports.itertuples(index=False):
            lines.append(f"{r.subject},{r.date},{getattr(r, WEARABLE['metric']):.1f}\n")
        (root / "nights" / "wearable_reports.csv").write_bytes("".join(lines).encode("ascii"))
        written.append("nights/wearable_reports.csv")
    return written
