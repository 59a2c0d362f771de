"""``rrkit plot``: figures of your own files.

Console example::

    $ rrkit plot morning.txt -o morning.png                      # diagnostic of one recording
    $ rrkit plot morning.txt --window start:60+300 -o morning.png
    $ rrkit plot out/daily.csv --kind trend --subject R03 --load load.csv -o r03.png
    $ rrkit plot out/daily.csv --kind overview -o squad.png
"""

from __future__ import annotations

from pathlib import Path

import click

from ..errors import InputError
from ._spectral_options import psd_option

_KINDS = ("diagnostic", "trend", "overview")


@click.command("plot")
@click.argument("file", type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--kind", "kind", type=click.Choice(_KINDS), default="diagnostic", show_default=True,
              help="diagnostic: one recording (tachogram, spectrum, Poincaré); trend: one "
                   "athlete from a daily table CSV; overview: the whole daily table.")
@click.option("-o", "--output", type=click.Path(dir_okay=False, path_type=Path), default=None,
              help="Figure file (.png, .svg or .pdf). Default: FILE's name with _<kind>.png.")
@click.option("--window", "window", default=None, metavar="SPEC",
              help="diagnostic: analysis window for the spectrum and Poincaré plot, e.g. "
                   "start:60+300 (see docs/windows.md). Default: the whole recording.")
@click.option("--clean", "method", default="drr", show_default=True, metavar="METHOD",
              help="diagnostic: artifact method (drr, median, mad, none).")
@psd_option("diagnostic: spectrum method.")
@click.option("--unit", default="auto", show_default=True, type=click.Choice(["auto", "ms", "s"]),
              help="diagnostic: unit of the values in FILE.")
@click.option("--subject", default=None, help="trend: the athlete to draw.")
@click.option("--load", "load_csv", type=click.Path(exists=True, dir_okay=False, path_type=Path),
              default=None, help="trend: training-load CSV (date, subject, load_au).")
def command(file: Path, kind: str, output: Path | None, window: str | None, method: str, psd: str,
            unit: str, subject: str | None, load_csv: Path | None) -> int:
    """Draw a figure of FILE: a recording's diagnostic, or a daily table's trend / overview.

    rrkit is not a medical device and makes no diagnosis.
    """
    out = output or file.with_name(f"{file.name.split('.')[0]}_{kind}.png")
    if kind == "diagnostic":
        _not_a_daily_table(file)
        _diagnostic(file, out, window=window, method=method, psd=psd, unit=unit)
    else:
        daily = _read_daily(file)
        from ..plots import athlete_trend, squad_overview

        if kind == "overview":
            squad_overview(daily, out)
        else:
            # a table of another kind is reported by athlete_trend (its columns are checked
            # first): one clear line instead of a KeyError here
            subjects = (sorted(daily["subject"].astype(str).unique())
                        if "subject" in daily.columns else [])
            if subject is None and "subject" in daily.columns:
                if len(subjects) != 1:
                    raise InputError(f"{file}: the table holds {len(subjects)} subjects; "
                                     "choose one with --subject",
                                     hint=f"subjects: {', '.join(subjects)}")
                subject = subjects[0]
            load = None
            if load_csv is not None:
                import pandas as pd

                load = pd.read_csv(load_csv)
                for col in ("date", "subject", "load_au"):
                    if col not in load.columns:
                        raise InputError(f"{load_csv}: training-load table lacks column {col!r}; "
                                         "expected date, subject, load_au")
            athlete_trend(daily, subject, out, load=load, baselines=_baselines_beside(file))
    click.echo(f"wrote {out}")
    return 0


def _diagnostic(file: Path, out: Path, *, window, method, psd, unit) -> None:
    import rrkit

    from ..plots import recording_diagnostic

    rec = rrkit.read(file, unit=unit)
    result = rrkit.clean(rec, method=method)
    window_s = None
    if window is not None:
        from .. import windows as W

        found = W.resolve_windows(W.parse_window(window), rec, clean_result=result)
        if not found:
            raise InputError(f"window {window!r} does not fit in {file} "
                             f"({rec.duration_s:.0f} s long)")
        window_s = (found[0].start_s, found[0].end_s)
    recording_diagnostic(result, out, window_s=window_s, psd=psd)


def _not_a_daily_table(file: Path) -> None:
    """A daily table given to the diagnostic (the default kind) gets a pointer to --kind."""
    try:
        with open(file, encoding="utf-8", errors="replace") as fh:
            header = fh.readline()
    except OSError:
        return  # the reader reports unreadable files
    names = {c.strip().strip('"') for c in header.split(",")}
    if {"subject", "date", "ln_rmssd_7d"} <= names:
        raise InputError(f"{file} is a daily table, not a recording",
                         hint="draw it with --kind trend --subject ID, or --kind overview")


def _baselines_beside(file: Path):
    """The baseline settings in the provenance.json that `rrkit daily` writes beside its table
    (None when there is none, or it cannot be read: the figure then names the defaults)."""
    import json

    prov = file.with_name("provenance.json")
    try:
        return json.loads(prov.read_text(encoding="utf-8"))["settings"]["baselines"]
    except (OSError, ValueError, KeyError, TypeError):
        return None


def _read_daily(file: Path):
    import pandas as pd

    try:
        daily = pd.read_csv(file)
    except (pd.errors.ParserError, UnicodeDecodeError, pd.errors.EmptyDataError) as exc:
        raise InputError(f"{file}: not a daily table CSV ({exc})") from None
    return daily
