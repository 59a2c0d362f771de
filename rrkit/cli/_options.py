"""Options shared by the commands that read a recording (info, clean, analyze).

One decorator, so that the reader options read the same, with the same defaults, in every
command. Each maps onto `rrkit.read`'s argument of the same name (``--break-s`` is ``break_s``,
``--timestamp-column`` is ``timestamp_column``) and the command receives them together as one
keyword argument ``reading``, a dict to pass on as ``read(path, **reading)``.
"""

from __future__ import annotations

import functools
import re

import click

from ..io import DEFAULT_BREAK_S, DEFAULT_DETECTOR, DETECTORS, KINDS, PPG_DETECTORS, UNITS

__all__ = ["READ_KEYS", "SEPARATOR_NAMES", "reader_keywords", "reading_options",
           "reading_options_for"]

#: separator names on the command line -> `rrkit.read`'s ``sep`` (None: found from the data)
SEPARATOR_NAMES = {"auto": None, "comma": ",", "semicolon": ";", "tab": "\t", "space": " ",
                   "none": "none"}


def _separator(ctx, param, value):
    return SEPARATOR_NAMES[value]


def _auto_none(ctx, param, value):
    return None if value == "auto" else value


def _break_s(ctx, param, value):
    if value is None or isinstance(value, float):
        return value
    text = str(value).strip().lower()
    if text in ("none", "off"):
        return None
    try:
        seconds = float(text)
    except ValueError:
        seconds = float("nan")
    if not seconds > 0 or seconds == float("inf"):
        raise click.BadParameter(f"expected seconds > 0 or 'none', got {value!r}")
    return seconds


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
    click.option("--sep", type=click.Choice(tuple(SEPARATOR_NAMES)), default="auto",
                 show_default=True, callback=_separator,
                 help="Separator of a text table (space: runs of spaces; none: one column)."),
    click.option("--decimal", type=click.Choice(("auto", ".", ",")), default="auto",
                 show_default=True, callback=_auto_none,
                 help="Decimal mark of a text table."),
    click.option("--timestamp-column", default=None, metavar="NAME",
                 help="Column of ISO 8601 times or Unix epoch numbers (default: found by "
                      "content)."),
    click.option("--break-s", type=str, default=DEFAULT_BREAK_S, show_default=True,
                 callback=_break_s, metavar="SECONDS",
                 help="With timestamps beside RR intervals, uncovered time longer than this "
                      "is a recording break (kept as a gap); 'none' turns it off."),
)

#: the keyword arguments of `rrkit.read` that the options above give
READ_KEYS = ("kind", "unit", "fs", "column", "detector", "sep", "decimal", "timestamp_column",
             "break_s")


def reading_options(command):
    """Add the reader options to a click command; they arrive as one dict ``reading``."""
    @functools.wraps(command)
    def gathered(*args, **kwargs):
        reading = {key: kwargs.pop(key) for key in READ_KEYS}
        return command(*args, reading=reading, **kwargs)

    for option in reversed(_OPTIONS):
        gathered = option(gathered)
    return gathered


def _shared_params() -> list[click.Option]:
    """The options above as click parameters (applied to a throw-away function)."""

    def holder():
        """Collects the parameters."""

    for option in reversed(_OPTIONS):
        holder = option(holder)
    return list(reversed(holder.__click_params__))


def reading_options_for(prefix: str, what: str):
    """The same reader options for one of several files: ``--kind`` becomes ``--PREFIX-kind``.

    Built from the one definition above (types, defaults, callbacks and help), so a command
    reading two files (``rrkit pair``) offers each file every option ``info`` has. They arrive
    as keyword arguments ``PREFIX_kind``, ``PREFIX_unit``...; `reader_keywords` turns them back
    into `rrkit.read` keywords.
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
                show_default=opt.show_default, metavar=opt.metavar, callback=opt.callback,
                help=own_flag.sub(rf"--{prefix}-\1", f"{what}: {info.get('help') or ''}"),
            )(command)
        return command

    return decorate


def reader_keywords(values: dict, prefix: str) -> dict:
    """``{"kind": ..., "unit": ...}`` for `rrkit.read` from a command's ``PREFIX_*`` values."""
    return {name: values[f"{prefix}_{name}"] for name in READ_KEYS}
