"""The invented demo squad's story: who the athletes are and what each day does to them.

Everything here is a simulation of invented people (ids ``R01`` to ``R08``, no names). The
numbers are chosen to look like a club rowing squad measured supine every morning with a chest
strap, within published ranges for trained adults; none of them comes from a real person.

The story, by week (1-based, Monday to Sunday):

* weeks 1-4: steady training, the baseline;
* week 5: a hard training block (load up, ln-RMSSD drifting down a little);
* weeks 6-7: an altitude camp: ln-RMSSD falls and resting heart rate rises for most athletes
  (two athletes barely respond);
* weeks 8-10: recovery and normal training, with two short illnesses (one athlete each);
* week 11: taper (load down, ln-RMSSD slightly up);
* week 12: normal training, regatta on the last day (Sunday).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "ATHLETES",
    "ILLNESSES",
    "PHASES",
    "UNUSABLE",
    "Athlete",
    "Illness",
    "Unusable",
    "day_state",
    "phase_of_day",
    "training_day",
]


@dataclass(frozen=True, slots=True)
class Athlete:
    """One invented athlete.

    Attributes
    ----------
    subject : str
        Invented id (``R01``...).
    ln_rmssd : float
        Baseline morning ln-RMSSD, ln(ms). Trained rowers at supine rest sit around 4.0-4.7
        (RMSSD 55-110 ms); plausible, not taken from anyone.
    day_sd : float
        Day-to-day SD of ln-RMSSD (about 0.06-0.10, that is a CV of a few percent, as in Plews et
        al. 2012, doi:10.1007/s00421-012-2354-4).
    rr_ms : float
        Baseline morning mean RR interval, ms (46-60 bpm).
    altitude_response : float
        Share of the squad's altitude effect this athlete shows (0 = none, 1 = typical).
    file_format : str
        How this athlete's app exports the mornings (see `rrkit.simulate._squad_files`).
    missed_per_file : float
        Mean number of missed beats per morning (poor strap contact).
    premature_per_file : float
        Mean number of premature beats per morning.
    """

    subject: str
    ln_rmssd: float
    day_sd: float
    rr_ms: float
    altitude_response: float
    file_format: str
    missed_per_file: float = 0.3
    premature_per_file: float = 0.15


#: The squad. R05 has frequent premature beats (about 45 per hour, above the usual caution
#: level of 30 per hour); R06's strap often loses contact. R02 and R07 barely respond to
#: altitude.
ATHLETES: tuple[Athlete, ...] = (
    Athlete("R01", 4.35, 0.07, 1150.0, 1.00, "ms"),
    Athlete("R02", 4.10, 0.09, 1050.0, 0.15, "ms_header"),
    Athlete("R03", 4.55, 0.08, 1250.0, 1.00, "s"),
    Athlete("R04", 4.20, 0.07, 1100.0, 0.90, "table_time"),
    Athlete("R05", 4.40, 0.08, 1200.0, 1.10, "semicolon_comma", premature_per_file=4.5),
    Athlete("R06", 3.95, 0.09, 1000.0, 0.85, "ms_gz", missed_per_file=1.5),
    Athlete("R07", 4.25, 0.08, 1150.0, 0.10, "table_time_gz"),
    Athlete("R08", 4.60, 0.07, 1300.0, 1.00, "ms"),
)

#: Phases as (name, first day, last day), days 0-based from the first Monday.
PHASES: tuple[tuple[str, int, int], ...] = (
    ("baseline", 0, 27),
    ("hard block", 28, 34),
    ("altitude camp", 35, 48),
    ("recovery and normal training", 49, 69),
    ("taper", 70, 76),
    ("race week", 77, 83),
)

#: Day of the regatta (0-based), the last Sunday.
REGATTA_DAY = 83


@dataclass(frozen=True, slots=True)
class Illness:
    """A short illness: ln-RMSSD down and heart rate up on days ``first``..``last``."""

    subject: str
    first: int
    last: int
    ln_drop: float = 0.45
    hr_rise_bpm: float = 9.0


ILLNESSES: tuple[Illness, ...] = (
    Illness("R04", 52, 55),   # week 8, Thursday to Sunday
    Illness("R08", 64, 67),   # week 10, Tuesday to Friday
)


@dataclass(frozen=True, slots=True)
class Unusable:
    """A morning whose file cannot be used, and how it is broken."""

    subject: str
    day: int
    kind: str  # "empty", "garbage", "short", "bad_value", "truncated_gz"


#: Files the batch must report as failed, each broken in its own way.
UNUSABLE: tuple[Unusable, ...] = (
    Unusable("R02", 9, "garbage"),     # the app exported an error page instead of data
    Unusable("R07", 17, "empty"),      # an empty export
    Unusable("R03", 58, "short"),      # strap came off after 40 s
    Unusable("R01", 66, "bad_value"),  # a corrupted line in the middle of the file
    Unusable("R06", 44, "truncated_gz"),  # the upload stopped half way through the gzip file
)


def phase_of_day(day: int) -> str:
    """Name of the phase a 0-based day belongs to."""
    for name, first, last in PHASES:
        if first <= day <= last:
            return name
    return "after"


def day_state(athlete: Athlete, day: int) -> tuple[float, float]:
    """Systematic effect on ``(ln-RMSSD, heart rate in bpm)`` for one athlete on one day.

    Returns the shift from the athlete's baseline, without the day-to-day noise.
    """
    ln = 0.0
    hr = 0.0
    # hard block: fatigue builds over the week
    if 28 <= day <= 34:
        ln -= 0.03 + 0.015 * (day - 28)
        hr += 1.5
    # altitude: two days to settle in, then a steady lowering; back over four days after
    alt_ln, alt_hr = -0.32 * athlete.altitude_response, 6.0 * athlete.altitude_response
    if 35 <= day <= 48:
        ramp = min(1.0, (day - 34) / 2.0)
        ln += alt_ln * ramp
        hr += alt_hr * ramp
    elif 49 <= day <= 52:
        fade = np.exp(-(day - 48) / 1.5)
        ln += alt_ln * fade
        hr += alt_hr * fade
    for ill in ILLNESSES:
        if ill.subject == athlete.subject and ill.first <= day <= ill.last:
            ln -= ill.ln_drop
            hr += ill.hr_rise_bpm
        elif ill.subject == athlete.subject and ill.last < day <= ill.last + 2:
            ln -= ill.ln_drop * 0.4 * (ill.last + 3 - day) / 2
    if 70 <= day <= 76:  # taper
        ln += 0.06
        hr -= 1.0
    if day == REGATTA_DAY:  # race morning nerves
        ln -= 0.10
        hr += 4.0
    return float(ln), float(hr)


def training_day(athlete_index: int, day: int,
                 rng: np.random.Generator) -> tuple[int, float, float]:
    """Sessions, minutes and session RPE (CR-10) of one athlete's training day.

    Session RPE x minutes is the training load in arbitrary units (Foster C et al. 2001,
    J Strength Cond Res 15(1):109-115).
    """
    subject = ATHLETES[athlete_index].subject
    weekday = day % 7
    ill = any(i.subject == subject and i.first <= day <= i.last for i in ILLNESSES)
    if ill:
        return 0, 0.0, 0.0
    if day == REGATTA_DAY:
        return 2, 45.0, 9.5  # heat and final, warm-ups included
    if weekday == 6:  # Sunday rest
        return 0, 0.0, 0.0
    factor = 1.0
    rpe_shift = 0.0
    if 28 <= day <= 34:
        factor, rpe_shift = 1.45, 1.0
    elif 35 <= day <= 48:
        factor, rpe_shift = 0.9, 0.5
    elif 70 <= day <= 76:
        factor, rpe_shift = 0.6, -0.5
    elif 77 <= day <= 82:
        factor, rpe_shift = 0.7, 0.0
    # recovering athletes train lightly for two days after an illness
    if any(i.subject == subject and i.last < day <= i.last + 2 for i in ILLNESSES):
        factor *= 0.5
    sessions = 2 if weekday in (1, 3, 5) else 1
    minutes = float(np.round(rng.uniform(55, 95) * sessions * factor / 5.0) * 5.0)
    rpe = float(np.clip(np.round(rng.normal(5.0 + rpe_shift, 1.0) * 2) / 2, 2.0, 9.5))
    if weekday == 3:  # Thursday: interval session
        rpe = float(min(rpe + 1.5, 9.5))
    return sessions, minutes, rpe
