"""The report's figures: drawn by `rrkit.plots`, embedded as base64 PNG, each with a text
alternative written from the same numbers."""

from __future__ import annotations

import base64
import math
import tempfile
from dataclasses import dataclass
from datetime import date
from pathlib import Path

from ..daily import flag_runs

__all__ = ["Embedded", "overview_figure", "trend_figure"]


@dataclass(frozen=True, slots=True)
class Embedded:
    """A figure ready for an ``<img>``: its PNG as base64 text and its text alternative."""

    png_base64: str
    alt: str

    @property
    def data_uri(self) -> str:
        """``data:image/png;base64,...`` (no request leaves the page)."""
        return "data:image/png;base64," + self.png_base64


def _png(draw, *args, **kwargs) -> str:
    """Draw with one of `rrkit.plots`' functions into a temporary PNG and return it as base64.

    The figure functions write their own files (their look and saving options stay theirs);
    the PNG is read back and the temporary folder removed.
    """
    with tempfile.TemporaryDirectory(prefix="rrkit-report-") as tmp:
        path = Path(tmp) / "figure.png"
        draw(*args, path=path, **kwargs)
        return base64.b64encode(path.read_bytes()).decode("ascii")


def _date(d) -> str:
    return f"{d:%d %b %Y}".lstrip("0")


def _names(items) -> str:
    items = list(items)
    return ", ".join(items) if items else "nobody"


def overview_figure(table, *, week, rows, phases=None) -> Embedded:
    """The squad overview (`rrkit.plots.squad_overview`) of the whole table."""
    from ..plots import squad_overview

    png = _png(squad_overview, table, phases=phases)
    below = [r.subject for r in rows if r.ln_status == "below"]
    alt = (f"Squad overview: one row per athlete ({len(rows)}), one column per day from "
           f"{_date(week.first_date)} to {_date(week.last_date)}. Each cell shades the "
           "athlete's 7-day ln-RMSSD against their own band (the colour key beside it runs "
           "from below the band to above it; cells without a band yet are blank or grey); a "
           "dot marks the days flagged below the band. Below the band on "
           f"{_date(week.as_of)}: {_names(below)}. The table 'The week at a glance' gives "
           "this week's numbers as text.")
    return Embedded(png, alt)


def trend_figure(table, cols, subject: str, *, week, row, load=None, phases=None) -> Embedded:
    """One athlete's trend (`rrkit.plots.athlete_trend`) over the whole table."""
    from ..plots import athlete_trend

    png = _png(athlete_trend, table, subject, load=load, phases=phases)
    mine = table[table[cols["subject"]].astype(str) == subject]
    q = mine[cols["quality"]].astype(str)
    runs = [(date.fromisoformat(a[:10]), date.fromisoformat(b[:10])) for found in
            flag_runs(mine, column=cols["ln_below"]).values() for a, b in found]
    if math.isfinite(row.ln_7d):
        now = f"7-day mean {row.ln_7d:.2f} on {_date(week.as_of)}"
        if math.isfinite(row.ln_low):
            now += f" (band {row.ln_low:.2f} to {row.ln_high:.2f}: {_word(row.ln_status)})"
        else:
            now += " (band not defined yet)"
    else:
        now = f"no 7-day mean on {_date(week.as_of)}"
    spells = ("; below the band " + ", ".join(
        f"{_date(a)} to {_date(b)}" if a != b else _date(a) for a, b in runs)
        if runs else "; never below the band")
    alt = (f"Trend of {subject}'s morning ln-RMSSD from {_date(week.first_date)} to "
           f"{_date(week.last_date)}: daily values, the 7-day mean and the normal band"
           f"{' with the training load as bars' if load is not None else ''}. {now}{spells}. "
           f"{int((q == 'ok').sum())} ok, {int((q == 'flagged').sum())} flagged, "
           f"{int((q == 'rejected').sum())} rejected and {int((q == 'missing').sum())} "
           "missing mornings.")
    return Embedded(png, alt)


def _word(status: str) -> str:
    from ._week import STATUS_TEXT

    return STATUS_TEXT[status][1]
