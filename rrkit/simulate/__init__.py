"""Seeded simulations: resting RR series, artifacts, and the invented demo squad.

Everything here is a simulation with a known ground truth; none of it describes real people.
"""

from ._artifacts import ARTIFACT_CLASSES, ArtifactTruth, inject_artifacts
from ._night import NightSettings, simulate_night, simulate_wearable_reports
from ._ramp import RampSimulation, simulate_ramp
from ._series import RestingSeries, simulate_rr

__all__ = ["ARTIFACT_CLASSES", "ArtifactTruth", "NightSettings", "RampSimulation",
           "RestingSeries", "inject_artifacts", "simulate_night", "simulate_ramp", "simulate_rr",
           "simulate_wearable_reports"]
