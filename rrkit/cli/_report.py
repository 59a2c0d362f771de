"""``rrkit report``: the squad report of a daily run, as one HTML page a coach can open.

Console example::

    $ rrkit daily mornings/ -o season/
    $ rrkit report season/ -o report.html                 # the week of the last date
    $ rrkit report season/store.h5 --week 2026-03-09 -o week11.html
    $ rrkit report season/ --load training_load.csv -o report.html
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import click

from ..errors import InputError


def _week(text: str | None) -> dt.date | None:
    if text is None:
        return None
    try:
        return dt.date.fromisoformat(text.strip())
    except ValueError:
        raise InputError(f"--week must be a date YYYY-MM-DD; got {text!r}",
                         hint="any day of the week to show, e.g. 2026-03-23") from None


def _load(path: Path | None):
    if path is None:
        return None
    import pandas as pd

    try:
        load = pd.read_csv(path)
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise InputError(f"not a training-load CSV ({' '.join(str(exc).split())})",
                         path=path) from None
    missing = [c for c in ("date", "subject", "load_au") if c not in load.columns]
    if missing:
        raise InputError(f"training-load table lacks column(s) {missing}; expected date, "
                         "subject, load_au", path=path)
    return load


@click.command("report", context_settings={"max_content_width": 100})
@click.argument("source", metavar="DAILY_DIR_OR_STORE",
                type=click.Path(exists=True, path_type=Path))
@click.option("-o", "--output", type=click.Path(dir_okay=False, path_type=Path),
              default=Path("report.html"), show_default=True, help="The HTML file to write.")
@click.option("--week", "week", metavar="YYYY-MM-DD", default=None,
              help="Any day of the calendar week (Monday to Sunday) to report. Default: the "
                   "week of the table's last date.")
@click.option("--load", "load_csv", type=click.Path(exists=True, dir_okay=False, path_type=Path),
              default=None, help="Training-load CSV (date, subject, load_au) for the trends.")
@click.option("--title", default=None, help="Heading of the page (default: Squad report).")
@click.option("--progress/--no-progress", default=None,
              help="Progress bar over the athletes' figures (default: on a terminal).")
def command(source: Path, output: Path, week: str | None, load_csv: Path | None,
            title: str | None, progress: bool | None) -> int:
    """Write one self-contained HTML page from a daily run: the week at a glance, figures,
    failed files, settings and cautions.

    DAILY_DIR_OR_STORE is the output folder of `rrkit daily` (or its store.h5 or daily.csv).
    The page needs no network and no JavaScript, can be sent as one file, and prints on A4.

    rrkit is not a medical device and makes no diagnosis.
    """
    import sys

    from ..report import write_report

    show = progress if progress is not None else sys.stderr.isatty()
    path = write_report(source, output, week=_week(week), load=_load(load_csv), title=title,
                        progress=show)
    click.echo(f"wrote {path}")
    return 0
