"""Seeded simulations: resting RR series, artifacts, and the invented demo squad.

Everything here is a simulation with a known ground truth; none of it describes real people.
"""

from ._night import NightSettings, simulate_night, simulate_wearable_reports
from ._series import RestingSeries, simulate_rr

__all__ = ["NightSettings", "RestingSeries", "simulate_night", "simulate_rr",
           "simulate_wearable_reports"]
