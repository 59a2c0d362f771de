"""Seeded artifact injection with a known ground truth (for testing artifact correction).

Each artifact is made the way it arises in a recording:

- ``missed``: a beat is not detected, so two intervals become one (their sum);
- ``extra``: a spurious beat (noise, a T wave) is detected inside an interval, splitting it at a
  random point (20-80% of the way through);
- ``ectopic``: a premature beat arrives 20-40% early and is followed by a compensatory interval
  that restores the beat grid (the short and the long interval sum to the two originals);
- ``long`` / ``short``: one interval lengthened by 30-60% or shortened by 25-45% (a pause or a
  rushed beat that does not restore the grid; the later beats shift).

Positions are drawn at random with at least ``min_spacing`` untouched intervals between events,
so every event can be scored on its own.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from types import MappingProxyType

import numpy as np

from .._validation import check_int, check_option, check_range
from ..errors import InputError
from ..recording import Recording

__all__ = ["ARTIFACT_CLASSES", "ArtifactTruth", "inject_artifacts"]

#: Classes `inject_artifacts` can plant.
ARTIFACT_CLASSES = ("ectopic", "missed", "extra", "long", "short")

_PREMATURITY = (0.20, 0.40)   # fraction of the interval by which a premature beat is early
_EXTRA_SPLIT = (0.20, 0.80)   # where a spurious beat falls inside its interval
_LONG_FACTOR = (1.30, 1.60)
_SHORT_FACTOR = (0.55, 0.75)


@dataclass(frozen=True, slots=True, eq=False)
class ArtifactTruth:
    """What `inject_artifacts` did.

    Attributes
    ----------
    labels : numpy.ndarray of str, shape (n_out,)
        True class of every interval of the returned recording (``normal`` where untouched).
    clean : Recording
        The artifact-free recording that went in.
    clean_index : numpy.ndarray of int, shape (n_out,)
        For each returned interval, the clean interval it starts in.
    events : Mapping[str, numpy.ndarray]
        Per class, the returned-interval index of each event (the first interval it touches).
    premature_beats : numpy.ndarray of int
        Returned-recording beats that are premature (one per ectopic event).
    """

    labels: np.ndarray
    clean: Recording
    clean_index: np.ndarray
    events: Mapping[str, np.ndarray] = field(default_factory=dict)
    premature_beats: np.ndarray = field(default_factory=lambda: np.zeros(0, np.int64))

    def __post_init__(self) -> None:
        object.__setattr__(self, "events", MappingProxyType(dict(self.events)))

    @property
    def clean_rr_ms(self) -> np.ndarray:
        """The artifact-free intervals (ms)."""
        return self.clean.rr_ms


def inject_artifacts(
    recording: Recording,
    *,
    rates: Mapping[str, float] | None = None,
    counts: Mapping[str, int] | None = None,
    seed: int | np.random.Generator | None = 0,
    min_spacing: int = 3,
) -> tuple[Recording, ArtifactTruth]:
    """Plant artifacts at random, known positions in an artifact-free recording.

    Parameters
    ----------
    recording : Recording
        Artifact-free intervals without gaps (for example from `simulate_rr`).
    rates : mapping of class -> float, optional
        Events per class as a fraction of the input intervals (0.03 = 3%).
    counts : mapping of class -> int, optional
        Events per class as numbers (instead of ``rates``).
    seed : int or numpy.random.Generator
        Seed (default 0).
    min_spacing : int
        Untouched intervals kept between two events (default 3).

    Returns
    -------
    recording : Recording
        With the artifacts; beat times start where the input's do.
    truth : ArtifactTruth
        True label per returned interval, the clean recording and the event positions.

    Raises
    ------
    InputError
        Unknown class, negative rate, a recording with gaps, or more events than fit.

    Examples
    --------
    >>> from rrkit.simulate import simulate_rr, inject_artifacts
    >>> rec, truth = inject_artifacts(simulate_rr(500, seed=1), counts={"missed": 5}, seed=2)
    >>> rec.n_intervals, int((truth.labels == "missed").sum())
    (495, 5)
    """
    if not isinstance(recording, Recording):
        raise InputError(f"recording must be a Recording; got {type(recording).__name__}")
    if recording.has_gaps:
        raise InputError("inject_artifacts needs a recording without gaps; got "
                         f"{int(recording.gaps.sum())} gap interval(s)")
    if (rates is None) == (counts is None):
        raise InputError("give exactly one of rates and counts")
    spacing = check_int("min_spacing", min_spacing, low=0)
    n = recording.n_intervals
    wanted: dict[str, int] = {}
    for cls, v in (rates or counts).items():
        check_option("artifact class", cls, ARTIFACT_CLASSES)
        if rates is not None:
            frac = check_range(f"rates[{cls!r}]", v, low=0, high=1)
            wanted[cls] = round(frac * n)
        else:
            wanted[cls] = check_int(f"counts[{cls!r}]", v, low=0)
    rng = seed if isinstance(seed, np.random.Generator) else np.random.default_rng(seed)

    # every event occupies two clean intervals (i, i + 1) plus the spacing after it
    kinds = np.concatenate([np.full(k, ARTIFACT_CLASSES.index(c)) for c, k in wanted.items()]
                           ).astype(int) if wanted else np.zeros(0, int)
    rng.shuffle(kinds)
    # each event touches two clean intervals (i, i + 1); draw k distinct values r_0 < ... from a
    # reduced range and spread them out: p_j = spacing + r_j + j (1 + spacing) keeps at least
    # `spacing` untouched intervals between events and at both ends
    k = kinds.size
    room = n - 1 - 2 * spacing - max(k - 1, 0) * (1 + spacing)
    if k and room < k:
        raise InputError(f"{k} events do not fit into {n} intervals with min_spacing={spacing}",
                         hint="lower the rates or min_spacing, or simulate more beats")
    r = np.sort(rng.choice(room, size=k, replace=False)) if k else np.zeros(0, int)
    pos = spacing + r + np.arange(k) * (1 + spacing)

    rr = recording.rr_ms.copy()
    cnt = np.ones(n, int)
    lab = np.zeros(n, int)  # code of the first output interval from each clean interval
    lab2 = np.zeros(n, int)  # code of the second output interval (extra split)
    second = np.zeros(n)
    u = rng.uniform(0.0, 1.0, kinds.size)
    names = np.array(("normal", *ARTIFACT_CLASSES))
    code = {c: i + 1 for i, c in enumerate(ARTIFACT_CLASSES)}
    for c in ARTIFACT_CLASSES:
        sel = kinds == ARTIFACT_CLASSES.index(c)
        i = pos[sel]
        f = u[sel]
        if c == "missed":
            rr[i] = rr[i] + rr[i + 1]
            cnt[i + 1] = 0
            lab[i] = code[c]
        elif c == "extra":
            split = _EXTRA_SPLIT[0] + f * (_EXTRA_SPLIT[1] - _EXTRA_SPLIT[0])
            second[i] = rr[i] * (1 - split)
            rr[i] = rr[i] * split
            cnt[i] = 2
            lab[i] = lab2[i] = code[c]
        elif c == "ectopic":
            early = _PREMATURITY[0] + f * (_PREMATURITY[1] - _PREMATURITY[0])
            shift = rr[i] * early
            rr[i] -= shift
            rr[i + 1] += shift
            lab[i] = lab[i + 1] = code[c]
        elif c == "long":
            rr[i] *= _LONG_FACTOR[0] + f * (_LONG_FACTOR[1] - _LONG_FACTOR[0])
            lab[i] = code[c]
        else:
            rr[i] *= _SHORT_FACTOR[0] + f * (_SHORT_FACTOR[1] - _SHORT_FACTOR[0])
            lab[i] = code[c]
    idx = np.repeat(np.arange(n), cnt)
    out = rr[idx]
    out_lab = lab[idx]
    # the second part of each split interval
    is_second = np.zeros(idx.size, bool)
    is_second[1:] = (idx[1:] == idx[:-1])
    out[is_second] = second[idx[is_second]]
    out_lab[is_second] = lab2[idx[is_second]]
    new_pos = np.searchsorted(idx, pos)  # first output interval of each event
    events = {c: np.sort(new_pos[kinds == ARTIFACT_CLASSES.index(c)]) for c in wanted}
    premature = np.sort(new_pos[kinds == ARTIFACT_CLASSES.index("ectopic")] + 1)
    result = Recording.from_rr(out, t0_s=float(recording.beat_times_s[0]) if n else 0.0,
                               start=recording.start, subject=recording.subject,
                               source=recording.source, info=recording.info)
    truth = ArtifactTruth(names[out_lab], recording, idx, events, premature)
    return result, truth
