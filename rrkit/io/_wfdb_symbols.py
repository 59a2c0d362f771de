"""WFDB annotation symbols that mark a heartbeat.

From the PhysioBank annotation table (Goldberger et al., Circulation 101(23):e215-e220, 2000;
the MIT-BIH Arrhythmia Database uses these codes): normal and bundle-branch-block beats, atrial,
nodal, supraventricular and ventricular premature or escape beats, paced, fusion and
unclassifiable beats. Every other symbol (rhythm change ``+``, noise ``~``, isolated QRS-like
artefact ``|``, signal quality, comments, waveform boundaries ...) is not a beat.
"""

from __future__ import annotations

__all__ = ["BEAT_SYMBOLS"]

#: N L R B A a J S V r F e j n E / f Q ?
BEAT_SYMBOLS = frozenset("NLRBAaJSVrFejnE/fQ?")
