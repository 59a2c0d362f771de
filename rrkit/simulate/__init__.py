"""Seeded simulations: resting RR series, artifacts, and the invented demo squad.

Everything here is a simulation with a known ground truth; none of it describes real people.
"""

from ._artifacts import ARTIFACT_CLASSES, ArtifactTruth, inject_artifacts
from ._device import DeviceTruth, simulate_device
from ._night import NightSettings, simulate_night, simulate_wearable_reports
from ._ramp import RampSimulation, simulate_ramp
from ._series import RestingSeries, simulate_rr

__all__ = ["ARTIFACT_CLASSES", "ArtifactTruth", "DeviceTruth", "NightSettings", "RampSimulation",
           "RestingSeries", "inject_artifacts", "simulate_device", "simulate_night",
           "simulate_ramp", "simulate_rr",
           "simulate_wearable_reports"]
