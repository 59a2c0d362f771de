"""One rule for counting an athlete's premature-beat cautions in a daily table.

The artifact stage attaches its caution to a window when premature beats exceed a rate (see
`rrkit.CleanSettings`). Everything that reports how often an athlete's mornings carried that
caution (``rrkit daily``, ``rrkit demo``, the trend figure) counts it here, the same way:

- a **cautioned day** is a row of the daily table (the morning that counts for that day) whose
  analysed window carries the caution;
- out of the **measured days**: rows whose morning was read (quality ``ok``, ``flagged`` or
  ``rejected``), that is every row except ``missing``;
- the count is **firm** when at least one cautioned day is ``ok``, or has premature beats for
  at least half of its non-normal intervals (two intervals per beat: the early one and the
  pause after it); otherwise the premature beats were counted only among other artifacts and
  may be noise.

Recordings that were not picked for their day, and audits of whole recordings rather than of
the analysed window, are not counted.

rrkit is not a medical device and makes no diagnosis: a count is a prompt to have the
recordings looked at by a clinician, never a finding.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

__all__ = ["CautionCount", "caution_counts"]

_PREMATURE_N = re.compile(r"^\s*(\d+) premature beats")


@dataclass(frozen=True, slots=True)
class CautionCount:
    """How often one athlete's mornings carried the premature-beat caution.

    Attributes
    ----------
    subject : str
    n_days : int
        Cautioned days.
    n_measured : int
        Days with a morning that was read (every quality but ``missing``).
    firm : bool
        At least one cautioned day rests on premature beats rather than on noise.
    """

    subject: str
    n_days: int
    n_measured: int
    firm: bool

    @property
    def majority(self) -> bool:
        """More than half of the measured days are cautioned."""
        return self.n_days > self.n_measured / 2

    def text(self) -> str:
        """``'53 of 78 mornings'``."""
        return f"{self.n_days} of {self.n_measured} morning{'' if self.n_measured == 1 else 's'}"


def _rests_on_premature_beats(quality, caution, artifact_pct, n_beats) -> bool:
    if str(quality) == "ok":
        return True
    m = _PREMATURE_N.match(str(caution))
    try:
        n_bad = float(artifact_pct) / 100.0 * float(n_beats)
    except (TypeError, ValueError):
        return True
    if m is None or not n_bad > 0:
        return True  # a count that cannot be read counts as firm: the cautious side
    return 2 * int(m.group(1)) >= 0.5 * n_bad


def caution_counts(table) -> dict[str, CautionCount]:
    """Per subject, the cautioned days of a daily table (see the module's rule).

    Parameters
    ----------
    table : pandas.DataFrame
        The daily table, with ``subject``, ``quality`` and ``caution``; ``artifact_pct`` (%)
        and ``n_beats`` decide `CautionCount.firm` where present.

    Returns
    -------
    dict of str to CautionCount
        Only subjects with at least one cautioned day, sorted by subject.

    Examples
    --------
    >>> import pandas as pd
    >>> t = pd.DataFrame({"subject": ["A", "A", "A"], "quality": ["ok", "ok", "missing"],
    ...                   "caution": ["4 premature beats (48 per hour ...)", "", ""]})
    >>> caution_counts(t)["A"].text()
    '1 of 2 mornings'
    """
    if "caution" not in table.columns or not len(table):
        return {}
    caution = table["caution"].fillna("").astype(str)
    quality = table["quality"].astype(str)
    subject = table["subject"].astype(str)
    measured = quality != "missing"
    marked = measured & (caution != "")
    pct = table["artifact_pct"] if "artifact_pct" in table.columns else None
    beats = table["n_beats"] if "n_beats" in table.columns else None
    out: dict[str, CautionCount] = {}
    for s in sorted(subject[marked].unique()):
        rows = [i for i in range(len(table)) if marked.iloc[i] and subject.iloc[i] == s]
        firm = any(_rests_on_premature_beats(
            quality.iloc[i], caution.iloc[i],
            None if pct is None else pct.iloc[i], None if beats is None else beats.iloc[i])
            for i in rows)
        out[s] = CautionCount(s, len(rows), int((measured & (subject == s)).sum()), firm)
    return out
