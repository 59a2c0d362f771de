"""The demo squad's daily log: sleep, body mass and a wellness score (invented, seeded).

A simulation of invented people, written to ``data_samples/daily_log.csv`` with columns
``date, subject, sleep_h, body_mass_kg, wellness_pts`` (empty cell: not logged that day).
Dating follows `rrkit.covariates`: ``sleep_h`` on date D is the night that ended on morning D,
``wellness_pts`` the questionnaire filled in on morning D, ``body_mass_kg`` the morning weighing.

What the generator plants (the ground truth the demo and the docs can show):

* **sleep and ln-RMSSD, within athletes**: on a night an athlete sleeps one hour more than
  usual, the next morning's ln-RMSSD is higher by `SLEEP_WITHIN_LN_PER_H` (+0.07) on average.
  The mornings were simulated before this log existed, so the log is built to fit them: each
  night's sleep is the morning's known deviation of ln-RMSSD from the athlete's baseline
  (training phases, altitude, illness and day-to-day noise) times a constant plus a part
  orthogonal to it, so that over the 84 days the regression of that deviation on sleep within
  an athlete has exactly this slope (the measured ln-RMSSD adds measurement error and missing
  days, which the estimate has to see through). Sleep is therefore shorter at altitude too.
* **sleep between athletes runs the other way**: athletes with a higher usual ln-RMSSD sleep
  *less* on average (`SLEEP_BETWEEN_H_PER_LN`: -1.5 h per ln unit of usual ln-RMSSD, plus an
  invented offset of up to 0.25 h per athlete; about -0.6 ln per hour of usual sleep), so a
  pooled regression that ignores who is who reads a negative slope.
* **load and wellness, within athletes**: each 500 AU of the previous day's training load
  (``load_au`` of training_load.csv) lowers the wellness score by `WELLNESS_PER_500AU`
  (1.5 points on the 5-25 scale) against that athlete's usual score; an hour more sleep raises
  it by 0.8 points. Wellness is a sum of five 1-5 items (fatigue, sleep quality, soreness,
  stress, mood: a common questionnaire shape, invented here), rounded to whole points.
* **body mass**: each athlete's own level (lightweight and heavyweight rowers, 68-93 kg), a
  slow drift, 0.3 kg less the morning after each 500 AU (fluid), and 0.4 kg of day noise.

Every draw comes from a generator seeded with ``(seed, athlete, day, purpose)`` like the rest
of the squad, so a reduced copy holds the same values for the days it covers.
"""

from __future__ import annotations

import numpy as np

__all__ = ["LOG_COLUMNS", "SLEEP_BETWEEN_H_PER_LN", "SLEEP_WITHIN_LN_PER_H",
           "WELLNESS_PER_500AU", "log_rows"]

LOG_COLUMNS = ("date", "subject", "sleep_h", "body_mass_kg", "wellness_pts")
#: planted within-athlete slope of morning ln-RMSSD on the night's sleep, ln(ms) per hour
SLEEP_WITHIN_LN_PER_H = 0.07
#: planted between-athlete relation: usual sleep (h) per ln unit of usual ln-RMSSD
SLEEP_BETWEEN_H_PER_LN = -1.5
#: planted within-athlete change of the wellness score per 500 AU of the previous day's load
WELLNESS_PER_500AU = -1.5
_SLEEP_SD_H = 0.6          # within-athlete SD of a night's sleep
_MASS_KG = (79.0, 72.5, 88.0, 70.5, 84.0, 68.5, 92.5, 86.0)  # invented, R01..R08
_SLEEP_OFFSET_H = (0.15, -0.20, 0.10, 0.25, -0.10, -0.15, 0.20, -0.25)  # not all is ln-RMSSD
_WELLNESS_MEAN = (17.0, 15.5, 18.0, 16.5, 17.5, 14.5, 16.0, 18.5)
# purpose codes of the seeds (the squad uses 1-9)
_P_SLEEP, _P_WELLNESS, _P_MASS, _P_GAPS = 10, 11, 12, 13


def _rng(seed: int, athlete: int, day: int, purpose: int) -> np.random.Generator:
    return np.random.default_rng([seed, athlete, day + 1000, purpose])


def _ar1(rng: np.random.Generator, n: int, phi: float, sd: float) -> np.ndarray:
    e = rng.normal(0.0, sd * np.sqrt(1.0 - phi ** 2), n)
    out = np.empty(n)
    prev = 0.0
    for i, x in enumerate(e):
        prev = phi * prev + x
        out[i] = prev
    return out


def usual_sleep_h(ln_rmssd: float) -> float:
    """An athlete's usual sleep from their usual ln-RMSSD (the planted between pattern)."""
    return 7.9 + SLEEP_BETWEEN_H_PER_LN * (ln_rmssd - 4.3)


def log_rows(*, seed: int, athletes, n_days: int, first_monday, ln_noise, loads_au) -> list[list]:
    """Rows of the daily log for the first ``len(athletes)`` athletes.

    Parameters
    ----------
    seed : int
        The squad's root seed.
    athletes : sequence of `rrkit.simulate._squad_story.Athlete`
    n_days : int
    first_monday : datetime.date
    ln_noise : sequence of arrays
        Per athlete, the day-to-day ln-RMSSD deviation the mornings were simulated with (84
        days).
    loads_au : sequence of arrays
        Per athlete, the daily training load (AU) of training_load.csv (``n_days`` values).

    Returns
    -------
    list of rows ``[date, subject, sleep_h, body_mass_kg, wellness_pts]`` (strings; ``""`` for
    a day not logged).
    """
    from datetime import timedelta

    rows = []
    b = SLEEP_WITHIN_LN_PER_H
    for a, ath in enumerate(athletes):
        from ._squad_story import day_state

        noise = np.asarray(ln_noise[a], dtype=float)[:84]
        # the morning's true deviation from the athlete's baseline: phases, illness, day noise
        dev = noise + np.array([day_state(ath, day)[0] for day in range(84)])
        # sleep deviation s = k t + u over the whole season, u orthogonal to t, Var(s) = SD^2
        # and Cov(t, s) / Var(s) = b exactly in these 84 days (not only in expectation)
        nc = dev - dev.mean()
        var_n = float(np.mean(nc ** 2))
        k = b * _SLEEP_SD_H ** 2 / var_n
        u = _rng(seed, a, -1, _P_SLEEP).normal(0.0, 1.0, 84)
        u = u - u.mean()
        u -= nc * (u @ nc) / (nc @ nc)
        sd_u = float(np.sqrt(max(_SLEEP_SD_H ** 2 - k ** 2 * var_n, 0.0)))
        u *= sd_u / np.sqrt(np.mean(u ** 2))
        usual = usual_sleep_h(ath.ln_rmssd) + _SLEEP_OFFSET_H[a]
        wel = _ar1(_rng(seed, a, -1, _P_WELLNESS), 84, 0.4, 1.3)
        drift = _ar1(_rng(seed, a, -1, _P_MASS), 84, 0.97, 0.6)
        load = np.asarray(loads_au[a], dtype=float)
        mean_load = 518.0  # the squad's usual daily load, AU (centring constant, invented)
        for day in range(n_days):
            d = first_monday + timedelta(days=day)
            sleep = usual + k * nc[day] + u[day]
            prev_load = load[day - 1] if day > 0 else mean_load
            well = (_WELLNESS_MEAN[a] + WELLNESS_PER_500AU * (prev_load - mean_load) / 500.0
                    + 0.8 * (sleep - usual) + wel[day])
            well = float(np.clip(np.round(well), 5, 25))
            mrng = _rng(seed, a, day, _P_MASS)
            mass = (_MASS_KG[a] + drift[day] - 0.3 * (prev_load - mean_load) / 500.0
                    + mrng.normal(0.0, 0.4))
            gaps = _rng(seed, a, day, _P_GAPS).random(3)
            rows.append([
                d.isoformat(), ath.subject,
                "" if gaps[0] < 0.04 else f"{np.clip(sleep, 3.0, 11.5):.2f}",
                "" if gaps[1] < 0.08 else f"{mass:.1f}",
                "" if gaps[2] < 0.05 else f"{well:.0f}",
            ])
    return rows


def log_table(settings, *, ln_noise, loads_au) -> tuple[tuple[str, ...], list[list]]:
    """Columns and rows of ``daily_log.csv`` for a `SquadSettings`, sorted by date and subject.

    ``ln_noise`` and ``loads_au`` are each athlete's day-to-day ln-RMSSD deviations and daily
    loads, from the squad generator (`generate_squad` passes them, so this module never imports
    it back).
    """
    from . import _squad_story as story

    n = settings.n_athletes
    rows = log_rows(seed=settings.seed, athletes=story.ATHLETES[:n], n_days=settings.n_days,
                    first_monday=settings.first_monday, ln_noise=ln_noise, loads_au=loads_au)
    return LOG_COLUMNS, sorted(rows, key=lambda r: (r[0], r[1]))
