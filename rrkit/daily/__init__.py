"""One row per subject per day: the morning recording, its metrics, rolling baselines and flags.

The pipeline for each recording is read -> clean -> window -> metrics (`measure_recording`);
`daily_table` then picks each subject's morning recording per local calendar day, lists the
days without a usable one as ``missing``, and adds the baseline columns (`add_baselines`).

Baselines use only days whose quality is ``ok``; flagged, rejected and missing days are shown
but never enter a mean, and a gap is never filled with zero or carried forward.

rrkit is not a medical device and makes no diagnosis. A day outside an athlete's SWC band is a
prompt to look at the data and the context; training decisions rest with qualified staff.

References
----------
Plews DJ, Laursen PB, Kilding AE, Buchheit M (2012). Heart rate variability and training
intensity distribution in elite rowers. Eur J Appl Physiol 112(11):3729-3741.
https://doi.org/10.1007/s00421-012-2354-4 (7-day rolling mean of ln-RMSSD).

Plews DJ, Laursen PB, Stanley J, Kilding AE, Buchheit M (2013). Training adaptation and heart
rate variability in elite endurance athletes: opening the door to effective monitoring.
Sports Med 43(9):773-781. https://doi.org/10.1007/s40279-013-0071-8 (7-day CV of ln-RMSSD).

Plews DJ, Laursen PB, Le Meur Y, Hausswirth C, Kilding AE, Buchheit M (2014). Monitoring
training with heart-rate variability: how much compliance is needed for valid assessment?
Int J Sports Physiol Perform 9(5):783-790. https://doi.org/10.1123/ijspp.2013-0455
(about 3 valid days a week suffice).
"""


from .._time import localize, zone_of
from ._baselines import BaselineSettings, add_baselines, weekly_summary
from ._days import select_days
from ._flags import flag_runs, premature_beat_rates, run_since
from ._settings import DAILY_METRICS, PICK_RULES, QUALITY_STATES, DailySettings, DaySelection
from ._table import daily_table, measure_recording

__all__ = [
    "DAILY_METRICS",
    "PICK_RULES",
    "QUALITY_STATES",
    "BaselineSettings",
    "DailySettings",
    "DaySelection",
    "add_baselines",
    "daily_table",
    "flag_runs",
    "localize",
    "measure_recording",
    "premature_beat_rates",
    "run_since",
    "select_days",
    "weekly_summary",
    "zone_of",
]
