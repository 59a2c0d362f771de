"""Options shared by the commands that read a recording (info, clean, analyze).

One decorator, so that ``--kind``, ``--unit``, ``--fs``, ``--column`` and ``--detector`` read
the same, with the same defaults, in every command; each maps onto `rrkit.read`'s argument of
the same name.
"""

from __future__ import annotations

import click

from ..io import DEFAULT_DETECTOR, DETECTORS, KINDS, UNITS

__all__ = ["reading_options"]

_OPTIONS = (
    click.option("--kind", type=click.Choice(KINDS), default="auto", show_default=True,
                 help="What the file holds: RR intervals, peak times, raw ECG or WFDB "
                      "annotations."),
    click.option("--unit", type=click.Choice(UNITS), default="auto", show_default=True,
                 help="Unit of the values (samples needs --fs)."),
    click.option("--fs", type=float, default=None, metavar="HZ",
                 help="Sampling rate in Hz, for sample indices and ECG columns in text files."),
    click.option("--column", default=None, metavar="NAME",
                 help="Column name or 0-based index (text), or channel label (EDF, WFDB)."),
    click.option("--detector", type=click.Choice(DETECTORS), default=DEFAULT_DETECTOR,
                 show_default=True, metavar="NAME",
                 help="R-peak detector for ECG, one of neurokit2's: "
                      + ", ".join(DETECTORS) + "."),
)


def reading_options(command):
    """Add the reader options to a click command (they arrive as keyword arguments)."""
    for option in reversed(_OPTIONS):
        command = option(command)
    return command
