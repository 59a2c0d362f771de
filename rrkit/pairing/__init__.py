"""Simultaneous recordings of one heart by two devices: clock alignment, beat pairing and the
device's beat-level and window-level agreement with the reference."""

from ._align import Alignment, align
from ._beats import BEAT_CLASSES, DEFAULT_TOLERANCE_MS, BeatPairs, pair_beats
from ._compare import COMPARED_METRICS, DeviceComparison, compare_devices

__all__ = ["BEAT_CLASSES", "COMPARED_METRICS", "DEFAULT_TOLERANCE_MS", "Alignment", "BeatPairs",
           "DeviceComparison", "align", "compare_devices", "pair_beats"]
