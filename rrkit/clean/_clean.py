"""`rrkit.clean`: classify every interval, correct the artifacts, keep the audit."""

from __future__ import annotations

import logging

import numpy as np

from ..errors import InputError
from ..recording import Recording
from ._correct import correct, segments_of
from ._detect import NORMAL, detect
from ._result import LABELS, CleanResult, summarize
from ._settings import CleanSettings

__all__ = ["clean"]

log = logging.getLogger("rrkit")

_LABEL_ARRAY = np.array(LABELS)


def clean(
    recording: Recording | CleanResult,
    *,
    method: str | None = None,
    strategy: str | None = None,
    settings: CleanSettings | None = None,
    min_rr_ms: float | None = None,
    max_rr_ms: float | None = None,
    max_corrected_pct: float | None = None,
    iterate: bool | None = None,
    median_max_deviation: float | None = None,
    caution_ectopic_per_hour: float | None = None,
) -> CleanResult:
    """Label every interval, correct the artifacts and report what was done.

    Parameters
    ----------
    recording : Recording or CleanResult
        The intervals to clean. A `CleanResult` is cleaned again from its corrected recording
        (which changes nothing when its run converged).
    method : {"drr", "median", "mad", "none"}, optional
        Detection method; default ``settings.method`` (``"drr"``).

        - ``"drr"``: Lipponen & Tarvainen (2019): successive differences (dRR) and deviations from
          an 11-beat median (mRR), each normalised by 5.2 times its quartile deviation over a
          centred 91-beat window, then the published decision rules for ectopic, long/short,
          missed and extra beats.
        - ``"median"``: an interval more than 20% away from the median of the 11 beats centred on
          it is an artifact (the 20% rule, common practice).
        - ``"mad"``: Berntson et al. (1990) criterion ``(MED + MAD) / 2`` on successive
          differences.
        - ``"none"``: every plausible interval is normal (only the plausible range applies).
    strategy : {"interpolate", "drop"}, optional
        For ectopic, long, short and implausible intervals; default ``settings.strategy``
        (``"interpolate"``). See `CleanSettings`.
    settings : CleanSettings, optional
        All thresholds (defaults cite their sources). The keyword arguments below replace single
        fields.
    min_rr_ms, max_rr_ms : float, optional
        Physiological range in ms (default 250-2000 ms, 240-30 bpm: human heart rates from rest
        to maximal exercise; common practice).
    max_corrected_pct : float, optional
        A result with more corrected intervals than this (%) is flagged (default 5, common
        practice, no single source).
    iterate : bool, optional
        Detect again on the corrected series until nothing changes (bounded by
        ``settings.max_iterations``; default False). ``result.extra["converged"]`` says whether
        the last pass found nothing more.
    median_max_deviation : float, optional
        Relative deviation of the ``"median"`` method (default 0.20).
    caution_ectopic_per_hour : float, optional
        Premature beats per hour above which the summary carries the caution (default 30, from
        memory).

    Returns
    -------
    CleanResult
        ``labels`` (one per input interval, from `LABELS`), ``recording`` (corrected),
        ``origin``, ``changed``, ``summary`` and the ``settings`` used.

    Raises
    ------
    InputError
        For an input that is not a Recording or CleanResult, or an invalid setting.

    Notes
    -----
    Each gap-free segment is classified on its own: no window, difference or spline reaches
    across a gap, and gap intervals stay gaps (labelled ``normal``, never counted).

    Timing. Split missed beats, merged extra beats and re-timed premature beats keep the beats
    around them where they were, so the corrected duration equals the input's. A lone long or
    short interval (one that no compensatory interval balances) takes the spline value and the
    beats after it move by the change until the next recording gap;
    ``result.extra["duration_change_s"]`` reports the net change, and `CleanResult.window`
    selects corrected intervals through ``origin``, so windows stay lined up with the input.

    Labels. ``ectopic``: both intervals around a premature or misplaced beat (the short one that
    ends at it and the compensatory one after it); both are corrected and both count as changed.
    ``missed``: an interval close to ``k`` times the local median (k = 2 in the paper; up to
    ``max_hidden_beats + 1``), split into ``k`` equal intervals. ``extra``: two short intervals
    whose sum is close to the local median (a spurious beat between them), merged into one.
    ``long`` / ``short``: other outliers. ``implausible``: outside ``[min_rr_ms, max_rr_ms]``
    and not explained as a missed or extra beat. An implausibly long interval (a dropout that
    hides more beats than ``max_hidden_beats``) is kept as a gap under either strategy: rrkit
    does not invent beats to fill it.

    The ``"mad"`` method follows Berntson et al. (1990) as quoted by others: MED = 3.32 QD,
    MAD = (median - 2.9 QD) / 3. Which series each quartile deviation is taken of is not verified
    against the paper; rrkit takes the signed successive differences for MED and the intervals
    for MAD (an interval more than ~2.9 QD below the median is a short artifact, and a missed or
    extra beat changes a difference by at least a third of it), and computes them over a centred
    91-beat window rather than the whole series.

    The ``drr`` implementation is vectorised (moving quantiles through `scipy.ndimage`), so an
    8-hour night of about 29,000 beats takes milliseconds.

    References
    ----------
    Lipponen JA, Tarvainen MP (2019). A robust algorithm for heart rate variability time series
    artefact correction using novel beat classification. J Med Eng Technol 43(3):173-181.
    doi:10.1080/03091902.2019.1640306

    Berntson GG, Quigley KS, Jang JF, Boysen ST (1990). An approach to artifact identification:
    application to heart period data. Psychophysiology 27(5):586-598.

    Examples
    --------
    A simulated resting series with one missed beat (intervals 100 and 101 joined):

    >>> import numpy as np
    >>> from rrkit import Recording, clean
    >>> from rrkit.simulate import simulate_rr
    >>> rr = simulate_rr(300, seed=1, as_recording=False)
    >>> rr = np.concatenate((rr[:100], [rr[100] + rr[101]], rr[102:]))
    >>> res = clean(Recording.from_rr(rr))
    >>> str(res.labels[100]), res.summary.counts["missed"], res.recording.n_intervals
    ('missed', 1, 300)
    """
    if isinstance(recording, CleanResult):
        recording = recording.recording
    if not isinstance(recording, Recording):
        raise InputError(f"recording must be a Recording or a CleanResult; got "
                         f"{type(recording).__name__}", hint="build one with Recording.from_rr")
    if settings is None:
        settings = CleanSettings()
    elif not isinstance(settings, CleanSettings):
        raise InputError(f"settings must be a CleanSettings; got {type(settings).__name__}")
    overrides = {k: v for k, v in {
        "method": method, "strategy": strategy, "min_rr_ms": min_rr_ms, "max_rr_ms": max_rr_ms,
        "max_corrected_pct": max_corrected_pct, "iterate": iterate,
        "median_max_deviation": median_max_deviation,
        "caution_ectopic_per_hour": caution_ectopic_per_hour}.items() if v is not None}
    if overrides:
        settings = settings.replace(**overrides)

    codes, changed, out, origin, premature = _one_pass(recording, settings)
    passes = 1
    converged = not changed.any()
    while settings.iterate and not converged and passes < settings.max_iterations:
        codes2, changed2, out2, origin2, premature2 = _one_pass(out, settings)
        if not changed2.any():
            converged = True
            break
        passes += 1
        # intervals flagged again map back to the input through the first origin
        back = origin[np.flatnonzero(codes2 != NORMAL)]
        new = back[codes[back] == NORMAL]
        codes[new] = codes2[np.flatnonzero(codes2 != NORMAL)][codes[back] == NORMAL]
        changed[origin[np.flatnonzero(changed2)]] = True
        if premature2.size and origin.size:
            premature = np.union1d(premature, origin[np.minimum(premature2, origin.size - 1)])
        origin = origin[origin2]
        out = out2
    labels = _LABEL_ARRAY[codes]
    summary = summarize(labels, changed, recording.gaps, recording.rr_ms, int(premature.size),
                        settings)
    log.info("cleaned %d intervals with %r: %.2f%% corrected, quality %s", summary.n_intervals,
             settings.method, summary.corrected_pct, summary.quality)
    shift_s = out.duration_s - recording.duration_s
    if recording.n_intervals and abs(shift_s) * 1000.0 > float(np.median(recording.rr_ms)):
        log.info("correction changed the duration by %+.2f s: lone long or short intervals were "
                 "re-valued and the beats after them moved (use CleanResult.window to line "
                 "windows up with the input)", shift_s)
    return CleanResult(recording, labels, out, origin, changed, summary, settings,
                       {"passes": passes, "converged": converged, "duration_change_s": shift_s},
                       premature)


def _one_pass(rec: Recording, s: CleanSettings):
    """Detect per gap-free segment, then correct the whole recording once."""
    n = rec.n_intervals
    codes = np.zeros(n, np.int8)
    merge = np.zeros(n, bool)
    parts = np.ones(n, int)
    premature = []
    for a, b in segments_of(rec.gaps):
        det = detect(rec.rr_ms[a:b], s)
        codes[a:b] = det.codes
        merge[a:b] = det.merge_next
        parts[a:b] = det.n_parts
        if det.premature.size:
            premature.append(det.premature + a)
    out, origin, changed = correct(rec, codes, merge, parts, s.strategy, max_rr_ms=s.max_rr_ms)
    prem = np.concatenate(premature) if premature else np.zeros(0, np.int64)
    return codes, changed, out, origin, prem
