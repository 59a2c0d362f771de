"""The invented demo squad: a seeded simulation written out as the files a coach would collect.

This is a **simulation of invented people** (ids ``R01``-``R08``); no value comes from a real
athlete. It produces the bundled ``data_samples/`` folder that ``rrkit demo`` runs on, and the
end-to-end tests run on reduced copies of it made by the same code.

Regenerate the committed folder from a checkout with one command::

    python -m rrkit.simulate.squad data_samples

What is written (paths relative to the output folder):

``mornings/<subject>/<subject>_<YYYYMMDD>_<HHMM><suffix>``
    One 6-minute supine chest-strap recording per athlete per morning (1 min of settling, then
    the 5-minute window), in the export format of that athlete's app (plain ms, seconds, a time
    stamped table, a semicolon table with decimal commas, gzip). A few mornings are missing and
    a few files are unusable (empty, an error page, 40 s only, a corrupted value).
``mornings/manifest.csv``
    One row per morning file: ``path`` (relative to the manifest), ``subject``, ``start``
    (local ISO time of the first beat) and ``format``.
``training_load.csv``
    Per athlete per day: ``date, subject, sessions, minutes, session_rpe, load_au``.
``daily_log.csv``
    Per athlete per day: ``date, subject, sleep_h, body_mass_kg, wellness_pts`` (see
    `rrkit.simulate._squad_log` for the relations planted in it).
``lab/<subject>_lab.csv`` and ``lab/<subject>_lab_events.csv``
    A lab protocol (supine, standing, paced breathing at 6 breaths/min) with its events table.
``nights/...``
    Two whole nights per athlete and the nightly values a simulated wearable reported.
``squad.json``
    The athletes, their file formats and the training calendar (phases with their dates).

Every random draw comes from a generator seeded with ``(seed, athlete, day, purpose)``, so a
reduced copy (fewer athletes or weeks) contains exactly the same files for the days it covers.
"""

from __future__ import annotations

import argparse
import csv
import io
import json
import logging
import sys
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date, datetime, time, timedelta
from pathlib import Path

import numpy as np

from .._validation import check_int
from ..errors import InputError
from ..recording import Recording
from . import _squad_files as files
from . import _squad_log
from . import _squad_story as story
from ._series import RestingSeries, simulate_rr
from ._squad_nights import TIME_ZONE

__all__ = ["SquadFiles", "SquadSettings", "generate_squad", "main"]

log = logging.getLogger("rrkit")

# purpose codes in the seeds (never reuse one for another purpose; 8 and 9 are the nights and
# the wearable, in _squad_nights)
_P_DAYNOISE, _P_MISSING, _P_SERIES, _P_ARTIFACT, _P_TIME, _P_LOAD, _P_LAB = 1, 2, 3, 4, 5, 6, 7


@dataclass(frozen=True, slots=True)
class SquadSettings:
    """What to generate.

    Attributes
    ----------
    n_athletes : int
        How many of the eight invented athletes (the first ``n_athletes`` of R01-R08).
    n_weeks : int
        Weeks from the first Monday (1-12); the story's phases keep their calendar weeks.
    first_monday : datetime.date
        Date of day 0 (invented).
    seed : int
        Root seed of every draw.
    morning_s : float
        Length of a morning recording, s (1 min settling + 5 min window, plus a few beats).
    missing_rate : float
        Chance that an athlete skips a morning.
    lab_subjects : tuple of str
        Athletes who did the lab protocol (only those among the generated athletes).
    lab_day : int
        0-based day of the lab session.
    night_days : tuple of int
        0-based days whose following night is recorded whole.
    night_hours : float
        Length of each night recording, h.
    nights : bool
        Write the nights and the wearable table (the slowest part).
    """

    n_athletes: int = 8
    n_weeks: int = 12
    first_monday: date = date(2026, 1, 5)
    seed: int = 20260105
    morning_s: float = 365.0
    missing_rate: float = 0.03
    lab_subjects: tuple[str, ...] = ("R03", "R06")
    lab_day: int = 15
    night_days: tuple[int, ...] = (11, 18)
    night_hours: float = 6.5
    nights: bool = True

    def __post_init__(self) -> None:
        check_int("n_athletes", self.n_athletes, low=1, high=len(story.ATHLETES))
        check_int("n_weeks", self.n_weeks, low=1, high=12)

    @property
    def n_days(self) -> int:
        """Number of days covered."""
        return 7 * self.n_weeks


@dataclass(frozen=True, slots=True)
class SquadFiles:
    """Where `generate_squad` wrote things (paths relative to ``root``)."""

    root: Path
    mornings: tuple[str, ...]
    unusable: tuple[str, ...]
    missing: tuple[tuple[str, str], ...]
    lab: tuple[str, ...]
    nights: tuple[str, ...]
    tables: tuple[str, ...]
    extra: dict = field(default_factory=dict)

    def all_files(self) -> list[str]:
        """Every file written, sorted."""
        return sorted({*self.mornings, *self.lab, *self.nights, *self.tables})


def _rng(settings: SquadSettings, athlete: int, day: int, purpose: int) -> np.random.Generator:
    return np.random.default_rng([settings.seed, athlete, day + 1000, purpose])


# --------------------------------------------------------------------------- mornings
def _day_noise(settings: SquadSettings, a: int) -> np.ndarray:
    """Day-to-day ln-RMSSD noise, AR(1) with coefficient 0.3, over all 84 days.

    Drawn for the full 12 weeks whatever ``n_weeks`` is, so reduced copies agree.
    """
    ath = story.ATHLETES[a]
    rng = _rng(settings, a, -1, _P_DAYNOISE)
    e = rng.normal(0.0, ath.day_sd * np.sqrt(1 - 0.3 ** 2), 84)
    out = np.empty(84)
    prev = 0.0
    for i, x in enumerate(e):
        prev = 0.3 * prev + x
        out[i] = prev
    return out


def _scaled_series(rng: np.random.Generator, *, mean_rr_ms: float, ln_rmssd: float,
                   duration_s: float, resp_hz: float) -> np.ndarray:
    """A resting series whose RMSSD (before artifacts) equals ``exp(ln_rmssd)`` ms."""
    rr = simulate_rr(duration_s=duration_s + 30.0,
                     settings=RestingSeries(mean_rr_ms=mean_rr_ms, resp_hz=resp_hz),
                     seed=rng, as_recording=False)
    rmssd = float(np.sqrt(np.mean(np.diff(rr) ** 2)))
    rr = mean_rr_ms + (rr - rr.mean()) * (np.exp(ln_rmssd) / rmssd)
    rr = np.maximum(rr, 300.0)
    t = np.cumsum(rr) / 1000.0
    return rr[: int(np.searchsorted(t, duration_s, side="right")) + 1]


_RUN = 30  # intervals in a run of junk
_RUN_COUNTS = {"extra": 4, "missed": 3}


def _add_artifacts(rr_ms: np.ndarray, counts: dict[str, int], seed: int) -> np.ndarray:
    """Plant artifacts with the library's injector.

    ``counts`` holds events per class of `rrkit.simulate.inject_artifacts` (missed, extra,
    ectopic, long, short) plus ``noise``: runs of junk from a sliding strap, each made by
    planting extra and missed beats one interval apart in a 30-interval stretch.
    """
    from . import inject_artifacts

    rng = np.random.default_rng(seed)
    rr = np.asarray(rr_ms, dtype=float)
    for _ in range(int(counts.get("noise", 0))):
        k = int(rng.integers(10, max(11, rr.size - 45)))
        seg = Recording.from_rr(rr[k:k + _RUN])
        bad, _truth = inject_artifacts(seg, counts=_RUN_COUNTS, seed=rng, min_spacing=1)
        rr = np.concatenate([rr[:k], bad.rr_ms, rr[k + _RUN:]])
    single = {k: int(v) for k, v in counts.items() if k != "noise" and v > 0}
    if single:
        rec, _truth = inject_artifacts(Recording.from_rr(rr), counts=single, seed=rng)
        rr = np.asarray(rec.rr_ms)
    return rr


def _morning_counts(ath: story.Athlete, rng: np.random.Generator, heavy: bool) -> dict[str, int]:
    counts = {
        "missed": int(rng.poisson(ath.missed_per_file)),
        "ectopic": int(rng.poisson(ath.premature_per_file)),
        "extra": int(rng.random() < 0.05),
        "noise": int(rng.random() < 0.04),
    }
    if heavy:  # strap sliding for a while: a long run of junk
        counts["noise"] += 3
        counts["missed"] += 6
    return counts


def _morning(settings: SquadSettings, a: int, day: int, noise: np.ndarray):
    """One morning: (start datetime, rr_ms rounded to whole ms) or None when skipped."""
    ath = story.ATHLETES[a]
    if _rng(settings, a, day, _P_MISSING).random() < settings.missing_rate:
        return None
    for ill in story.ILLNESSES:  # too unwell to bother on the first day
        if ill.subject == ath.subject and day == ill.first:
            return None
    trng = _rng(settings, a, day, _P_TIME)
    wake = datetime.combine(settings.first_monday + timedelta(days=day), time(6, 10))
    start = wake + timedelta(seconds=int(trng.integers(0, 50 * 60)))
    d_ln, d_hr = story.day_state(ath, day)
    ln = ath.ln_rmssd + d_ln + noise[day]
    hr = 60000.0 / ath.rr_ms + d_hr + trng.normal(0.0, 1.2)
    srng = _rng(settings, a, day, _P_SERIES)
    rr = _scaled_series(srng, mean_rr_ms=60000.0 / hr, ln_rmssd=ln, duration_s=settings.morning_s,
                        resp_hz=float(srng.uniform(0.2, 0.27)))
    arng = _rng(settings, a, day, _P_ARTIFACT)
    heavy = arng.random() < 0.025
    rr = _add_artifacts(rr, _morning_counts(ath, arng, heavy), seed=int(arng.integers(2**31)))
    return start, np.round(rr).astype(np.int64)


def _unusable_bytes(kind: str, rr: np.ndarray, start: datetime, file_format: str) -> bytes:
    """A broken export of one morning."""
    if kind == "empty":
        return b""
    if kind == "garbage":
        return (b"<html><head><title>Export failed</title></head>\n"
                b"<body>Session could not be exported (sync error 0x3F).</body></html>\n")
    if kind == "short":
        t = np.cumsum(rr) / 1000.0
        return files.render(rr[: int(np.searchsorted(t, 40.0))], start, file_format)
    if kind == "bad_value":
        data = files.render(rr, start, file_format)
        lines = data.decode("ascii").splitlines(keepends=True)
        k = len(lines) // 2
        lines[k] = lines[k].replace("0", "O", 1) if "0" in lines[k] else "??\n"
        return "".join(lines).encode("ascii")
    if kind == "truncated_gz":
        data = files.render(rr, start, file_format)
        return data[: len(data) // 2]
    raise KeyError(kind)


# --------------------------------------------------------------------------- training load
def _load_rows(settings: SquadSettings, a: int) -> list[list]:
    ath = story.ATHLETES[a]
    rows = []
    for day in range(settings.n_days):
        sessions, minutes, rpe = story.training_day(a, day, _rng(settings, a, day, _P_LOAD))
        d = settings.first_monday + timedelta(days=day)
        rows.append([d.isoformat(), ath.subject, sessions, f"{minutes:.0f}", f"{rpe:.1f}",
                     f"{minutes * rpe:.0f}"])
    return rows


# --------------------------------------------------------------------------- lab
#: (label, duration s, mean RR ms, ln-RMSSD shift, breathing Hz, RSA scale)
_LAB_PROTOCOL = (
    ("settle", 60.0, 0.0, 0.0, 0.24, 1.0),
    ("supine", 300.0, 0.0, 0.0, 0.24, 1.0),
    ("stand_up", 60.0, -250.0, -0.5, 0.26, 0.8),
    ("standing", 300.0, -300.0, -0.7, 0.26, 0.8),
    ("sit_down", 60.0, -50.0, -0.1, 0.22, 1.0),
    ("paced_6_per_min", 300.0, -20.0, 0.35, 0.10, 1.0),
)


def _lab(settings: SquadSettings, a: int) -> tuple[bytes, bytes]:
    ath = story.ATHLETES[a]
    day = settings.lab_day
    rng = _rng(settings, a, day, _P_LAB)
    start = datetime.combine(settings.first_monday + timedelta(days=day), time(9, 30))
    parts = []
    events = ["label,start_s,end_s,breaths_per_min\n"]
    t0 = 0.0
    for label, dur, d_rr, d_ln, resp_hz, _ in _LAB_PROTOCOL:
        rr = _scaled_series(rng, mean_rr_ms=ath.rr_ms * 0.95 + d_rr, ln_rmssd=ath.ln_rmssd + d_ln,
                            duration_s=dur, resp_hz=resp_hz)
        parts.append(rr)
        seg = float(np.sum(rr)) / 1000.0
        if label not in ("settle", "stand_up", "sit_down"):
            paced = f"{resp_hz * 60:g}" if label.startswith("paced") else ""
            events.append(f"{label},{t0:.3f},{t0 + seg:.3f},{paced}\n")
        t0 += seg
    rr = np.concatenate(parts)
    rr = _add_artifacts(rr, {"missed": 2, "ectopic": 1}, seed=int(rng.integers(2**31)))
    rr = np.round(rr).astype(np.int64)
    return files.render(rr, start, "table_time"), "".join(events).encode("ascii")


# --------------------------------------------------------------------------- writing
def _write(root: Path, rel: str, data: bytes) -> str:
    path = root / rel
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_bytes(data)
    return rel


def _csv_bytes(header: Sequence[str], rows: Sequence[Sequence]) -> bytes:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(header)
    w.writerows(rows)
    return buf.getvalue().encode("ascii")


def generate_squad(outdir, *, settings: SquadSettings | None = None, progress=None) -> SquadFiles:
    """Write the invented demo squad into ``outdir``.

    Parameters
    ----------
    outdir : str or path-like
        Output folder (created). Existing files of the same names are overwritten; nothing else
        in it is touched.
    settings : SquadSettings, optional
        What to generate (default: the full squad, 8 athletes x 12 weeks).
    progress : callable, optional
        Called as ``progress(step_name)`` after each athlete's mornings and each night, for a
        progress display.

    Returns
    -------
    SquadFiles
        The files written, by kind.

    Notes
    -----
    A simulation: nothing describes a real person. Deterministic: the same settings give the
    same bytes.
    """
    s = settings or SquadSettings()
    root = Path(outdir)
    root.mkdir(parents=True, exist_ok=True)
    mornings, unusable, missing, manifest = [], [], [], []
    load_rows: list[list] = []
    broken = {(u.subject, u.day): u.kind for u in story.UNUSABLE}
    for a in range(s.n_athletes):
        ath = story.ATHLETES[a]
        noise = _day_noise(s, a)
        for day in range(s.n_days):
            got = _morning(s, a, day, noise)
            d = s.first_monday + timedelta(days=day)
            if got is None:
                missing.append((ath.subject, d.isoformat()))
                continue
            start, rr = got
            name = f"{ath.subject}_{start:%Y%m%d_%H%M}{files.suffix(ath.file_format)}"
            rel = f"mornings/{ath.subject}/{name}"
            kind = broken.get((ath.subject, day))
            if kind is None:
                data = files.render(rr, start, ath.file_format)
            else:
                data = _unusable_bytes(kind, rr, start, ath.file_format)
                unusable.append(rel)
            mornings.append(_write(root, rel, data))
            manifest.append([rel.removeprefix("mornings/"), ath.subject,
                             start.isoformat(timespec="seconds"), ath.file_format])
        load_rows.extend(_load_rows(s, a))
        if progress is not None:
            progress(f"mornings {ath.subject}")
    tables = [
        _write(root, "mornings/manifest.csv",
               _csv_bytes(["path", "subject", "start", "format"], manifest)),
        _write(root, "training_load.csv",
               _csv_bytes(["date", "subject", "sessions", "minutes", "session_rpe", "load_au"],
                          sorted(load_rows, key=lambda r: (r[0], r[1])))),
        _write(root, "daily_log.csv", _csv_bytes(*_squad_log.log_table(  # sleep, mass, wellness
            s, ln_noise=[_day_noise(s, a) for a in range(s.n_athletes)],
            loads_au=[np.array([float(r[-1]) for r in _load_rows(s, a)])
                      for a in range(s.n_athletes)]))),
    ]
    lab = []
    for a in range(s.n_athletes):
        subject = story.ATHLETES[a].subject
        if subject in s.lab_subjects and s.lab_day < s.n_days:
            rec, ev = _lab(s, a)
            lab.append(_write(root, f"lab/{subject}_lab.csv", rec))
            lab.append(_write(root, f"lab/{subject}_lab_events.csv", ev))
    from ._squad_ramps import write_ramps

    lab += write_ramps(root, {story.ATHLETES[a].subject for a in range(s.n_athletes)})
    nights: list[str] = []
    if s.nights:
        from ._squad_nights import write_nights

        nights = write_nights(root, s, progress=progress)
    tables.append(_write(root, "squad.json", _describe(s)))
    log.info("demo squad: %d mornings (%d unusable, %d missing), %d lab files, %d night files "
             "written to %s", len(mornings), len(unusable), len(missing), len(lab), len(nights),
             root)
    return SquadFiles(root=root, mornings=tuple(mornings), unusable=tuple(unusable),
                      missing=tuple(missing), lab=tuple(lab), nights=tuple(nights),
                      tables=tuple(tables))


def _describe(s: SquadSettings) -> bytes:
    """squad.json: what a coach knows about the squad (not the simulation's hidden truths)."""
    def day(i):
        return (s.first_monday + timedelta(days=i)).isoformat()

    doc = {
        "description": "Simulation of an invented club rowing squad; not real people.",
        "regenerate": "python -m rrkit.simulate.squad data_samples",
        "time_zone": TIME_ZONE,
        "first_day": day(0),
        "last_day": day(s.n_days - 1),
        "athletes": [{"subject": a.subject, "file_format": a.file_format,
                      "format_description": files.FORMATS[a.file_format][1]}
                     for a in story.ATHLETES[: s.n_athletes]],
        "calendar": [{"phase": name, "first_day": day(lo), "last_day": day(min(hi, s.n_days - 1))}
                     for name, lo, hi in story.PHASES if lo < s.n_days],
        "regatta_day": day(story.REGATTA_DAY) if s.n_days > story.REGATTA_DAY else None,
        "morning_protocol": "supine, chest strap, 6 min: 1 min settling then the 5-min window",
        "lab_protocol": [p[0] for p in _LAB_PROTOCOL],
    }
    return (json.dumps(doc, indent=2) + "\n").encode("ascii")


def main(argv: Sequence[str] | None = None) -> int:
    """``python -m rrkit.simulate.squad OUTDIR``: regenerate the demo squad."""
    p = argparse.ArgumentParser(prog="python -m rrkit.simulate.squad",
                                description="Write the invented demo squad (a simulation).")
    p.add_argument("outdir", help="output folder, for example data_samples")
    p.add_argument("--athletes", type=int, default=8, help="how many athletes (1-8)")
    p.add_argument("--weeks", type=int, default=12, help="how many weeks (1-12)")
    p.add_argument("--no-nights", action="store_true", help="skip the whole nights")
    args = p.parse_args(argv)
    try:
        s = SquadSettings(n_athletes=args.athletes, n_weeks=args.weeks, nights=not args.no_nights)
    except InputError as exc:
        p.error(str(exc))
    out = generate_squad(args.outdir, settings=s,
                         progress=lambda step: sys.stderr.write(f"  {step}\n"))
    sys.stderr.write(f"wrote {len(out.all_files())} files to {args.outdir}\n")
    return 0


if __name__ == "__main__":  # pragma: no cover
    raise SystemExit(main())
