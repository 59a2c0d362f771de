"""Options shared by the commands that read a recording (info, clean, analyze).

One decorator, so that ``--kind``, ``--unit``, ``--fs``, ``--column`` and ``--detector`` read
the same, with the same defaults, in every command; each maps onto `rrkit.read`'s argument of
the same name.
"""

from __future__ import annotations

import re

import click

from ..io import DEFAULT_DETECTOR, DETECTORS, KINDS, PPG_DETECTORS, UNITS

__all__ = ["reader_keywords", "reading_options", "reading_options_for"]

_OPTIONS = (
    click.option("--kind", type=click.Choice(KINDS), default="auto", show_default=True,
                 help="What the file holds: RR intervals, peak times, raw ECG, WFDB "
                      "annotations, pulse intervals or times (pulse), or a raw pulse wave "
                      "(ppg)."),
    click.option("--unit", type=click.Choice(UNITS), default="auto", show_default=True,
                 help="Unit of the values (samples needs --fs)."),
    click.option("--fs", type=float, default=None, metavar="HZ",
                 help="Sampling rate in Hz, for sample indices and ECG columns in text files."),
    click.option("--column", default=None, metavar="NAME",
                 help="Column name or 0-based index (text), or channel label (EDF, WFDB)."),
    click.option("--detector", type=click.Choice(DETECTORS + PPG_DETECTORS),
                 default=DEFAULT_DETECTOR, show_default=True, metavar="NAME",
                 help="R-peak detector for ECG, one of neurokit2's: "
                      + ", ".join(DETECTORS) + "; for --kind ppg a pulse-peak method: "
                      + ", ".join(PPG_DETECTORS) + " (the ECG default means elgendi)."),
)


def reading_options(command):
    """Add the reader options to a click command (they arrive as keyword arguments)."""
    for option in reversed(_OPTIONS):
        command = option(command)
    return command


def _shared_params() -> list[click.Option]:
    """The options above as click parameters (applied to a throw-away function)."""

    def holder():
        """Collects the parameters."""

    return list(reversed(reading_options(holder).__click_params__))


def reading_options_for(prefix: str, what: str):
    """The same reader options for one of several files: ``--kind`` becomes ``--PREFIX-kind``.

    Built from the one definition above (types, defaults and help), so a command reading two
    files (``rrkit pair``) offers each file every option ``info`` has. They arrive as keyword
    arguments ``PREFIX_kind``, ``PREFIX_unit``...; `reader_keywords` turns them back into
    `rrkit.read` keywords.
    """

    params = _shared_params()
    names = "|".join(re.escape(opt.name.replace("_", "-")) for opt in params)
    own_flag = re.compile(rf"--({names})\b")

    def decorate(command):
        for opt in reversed(params):
            name = opt.name
            flag = f"--{prefix}-{name.replace('_', '-')}"
            info = opt.to_info_dict()
            command = click.option(
                flag, f"{prefix}_{name}", type=opt.type, default=opt.default,
                show_default=opt.show_default, metavar=opt.metavar,
                help=own_flag.sub(rf"--{prefix}-\1", f"{what}: {info.get('help') or ''}"),
            )(command)
        return command

    return decorate


def reader_keywords(values: dict, prefix: str) -> dict:
    """``{"kind": ..., "unit": ...}`` for `rrkit.read` from a command's ``PREFIX_*`` values."""
    names = [opt.name for opt in _shared_params()]
    return {name: values[f"{prefix}_{name}"] for name in names}
