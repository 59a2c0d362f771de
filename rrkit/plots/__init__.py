"""Figures (matplotlib, imported lazily inside each function; PNG, SVG or PDF by the suffix).

- `recording_diagnostic`: tachogram with every artifact class and the corrected series, the
  spectrum with its bands and powers, and the Poincaré plot with SD1/SD2;
- `athlete_trend`: daily ln-RMSSD, its 7-day mean, the smallest-worthwhile-change (SWC) band
  and the distance from baseline in SDs, flagged and rejected days, the training load, and the
  premature-beat caution where the athlete's mornings carry it;
- `bland_altman`: differences of device-reported values against recomputed ones; bias and
  limits of agreement in one ink told apart by dash, named in words with unit and confidence
  interval, the intervals as brackets in the right margin (Bland & Altman 1986);
- `ramp_figure`: an exercise test's DFA alpha1 against heart rate with the fitted crossings;
- `squad_overview`: one row per athlete, one column per day, the 7-day mean relative to the
  band.

Lines that are compared are drawn in rrkit's neutral inks and told apart by dash and width;
colours, where a class needs one, are colour-blind safe (Okabe-Ito, and ColorBrewer's red-blue
for the overview) and each class also has its own marker. Every function returns the
`matplotlib.figure.Figure` and writes it when given a path.
"""

from ._agreement import bland_altman
from ._diagnostic import audit_rows, recording_diagnostic
from ._ramp import ramp_figure
from ._trend import athlete_trend, squad_overview, swc_position

__all__ = ["athlete_trend", "audit_rows", "bland_altman", "ramp_figure", "recording_diagnostic",
           "swc_position", "squad_overview"]
