"""``rrkit daily``: a folder of morning recordings -> one row per athlete per day, with baselines.

Console example::

    $ rrkit daily mornings/ -o season/                       # names like A01_2026-03-01_0712.txt
    $ rrkit daily mornings/ --manifest mornings/manifest.csv --tz Europe/Berlin -o season/
    $ rrkit daily mornings/ --pattern "{subject}/{date:%d.%m.%Y}*" --jobs 2 -o season/

Exit codes: 0 every file succeeded; 1 some files failed (listed in ``errors.csv``, the rest
written); 2 a usage error.
"""

from __future__ import annotations

import contextlib
import re
from pathlib import Path

import click

from ..daily import DaySelection
from ..errors import InputError
from ._spectral_options import band_option, clean_option, detrend_option, psd_option

ECTOPY_CAUTION = ("rrkit does not diagnose; frequent premature beats are a matter for a "
                  "clinician, please have these recordings reviewed by qualified staff.")
CAUTION = ("rrkit is not a medical device and makes no diagnosis; a value outside the SWC band is "
           "a prompt to look at the data and the context. Training decisions rest with "
           "qualified staff.")


def ectopy_lines(table) -> list[str]:
    """The premature-beat caution lines for the end of a run, one per kind of evidence.

    The days are counted by `rrkit._premature.caution_counts`, the one rule that the demo and
    the trend figure use too: cautioned days (the day's morning window carries the artifact
    stage's caution) out of the days with a morning read. In a 5-minute window three beats
    make the caution's rate, and in a noisy recording some beats labelled premature may be
    noise. So a subject is listed with frequent premature beats when at least one cautioned
    morning is ``ok`` or has premature beats for most of its non-normal intervals; subjects
    whose cautioned mornings are all mostly noise are listed apart, as recordings to look at.
    Both lines defer to a clinician: rrkit does not diagnose either way.

    Parameters
    ----------
    table : pandas.DataFrame
        The daily table, with ``subject``, ``quality``, ``caution``, ``artifact_pct`` (%) and
        ``n_beats``.

    Returns
    -------
    list of str
        Empty when no morning carries the caution.
    """
    from .._premature import caution_counts

    counts = caution_counts(table)
    if not counts:
        return []
    firm = [c for c in counts.values() if c.firm]
    rest = [c for c in counts.values() if not c.firm]
    lines = []
    if firm:
        who = ", ".join(f"{c.subject} on {c.text()}" for c in firm)
        lines.append(f"frequent premature beats ({who}; see the caution column): "
                     + ECTOPY_CAUTION)
    if rest:
        who = ", ".join(f"{c.subject} ({c.text()})" for c in rest)
        lines.append(f"premature beats counted only on noisy mornings, among other artifacts: "
                     f"{who}; the count may come from noise. Look at these recordings and, if "
                     "in doubt, have them reviewed by a clinician; rrkit does not diagnose.")
    return lines


def _wake(text: str) -> tuple[str, str]:
    m = re.fullmatch(r"\s*(\d{1,2}:\d{2})\s*-\s*(\d{1,2}:\d{2})\s*", text or "")
    if not m:
        raise InputError(f"--wake must read HH:MM-HH:MM; got {text!r}",
                         hint="for example 04:00-12:00")
    return tuple(f"{int(t.split(':')[0]):02d}:{t.split(':')[1]}" for t in m.groups())


#: settings names -> the options that set them, so a usage error names what the user typed
_OPTION_OF = {"rolling_min_days": "--min-days", "week_min_days": "--min-days",
              "baseline_days": "--baseline-days", "baseline_min_days": "--baseline-min",
              "baseline_lag_days": "--baseline-lag",
              "swc_sd": "--swc-sd", "first_date": "--from", "last_date": "--to"}


@contextlib.contextmanager
def _as_options():
    """Re-raise an InputError about a setting under the name of its command-line option."""
    try:
        yield
    except InputError as exc:
        name = exc.message.split(" ", 1)[0]
        if name not in _OPTION_OF or exc.path is not None:
            raise
        raise InputError(_OPTION_OF[name] + exc.message[len(name):], hint=exc.hint) from None


def _command_line() -> list[str]:
    """The command as the parsed options say (for the provenance)."""
    ctx = click.get_current_context()
    out = ["rrkit", "daily"]
    for name, value in ctx.params.items():
        if value is None:
            continue
        out.append(f"{name}={value}")
    return out


@click.command(name="daily", context_settings={"max_content_width": 100})
@click.argument("folder", type=click.Path(exists=True, file_okay=False, path_type=Path))
@click.option("-o", "--output", "outdir", required=True,
              type=click.Path(file_okay=False, path_type=Path),
              help="Output folder (created). Re-running into the same folder reuses the work "
                   "already done for unchanged files.")
@click.option("--manifest", type=click.Path(exists=True, dir_okay=False, path_type=Path),
              help="CSV with path, subject and start (or date [+ time]); optional morning, "
                   "position, protocol... Its rows win over the pattern.")
@click.option("--pattern", help="File-name pattern with {subject}, {date}, {time}, {datetime} "
                                "fields, * and [optional] parts. Default without a manifest: "
                                "'{subject}_{date}[_{time}]*'.")
@click.option("--window", "window", default="morning", show_default=True,
              help="Analysis window inside each recording (morning = skip 60 s, analyse 300 s; "
                   "also start:OFFSET+LENGTH, last:LENGTH, whole ...).")
@click.option("--tz", default="UTC", show_default=True,
              help="Time zone of the athletes' clocks (IANA name, e.g. Europe/Berlin); dates are "
                   "local calendar dates there.")
@click.option("--wake", default="04:00-12:00", show_default=True,
              help="Wake-time window in which a morning recording starts (local clock).")
@click.option("--pick", type=click.Choice(DaySelection.constraints["pick"].values), default="first",
              show_default=True,
              help="Which recording of a day counts: the first usable one in the wake window, "
                   "or the one the manifest marks (column morning).")
@clean_option("Artifact detection method.")
@psd_option("Spectral estimator of the frequency-domain metrics.")
@detrend_option()
@band_option()
@click.option("--baseline-days", type=int, default=60, show_default=True,
              help="Calendar days of the long baseline (ending --baseline-lag days before each "
                   "date).")
@click.option("--baseline-lag", type=int, default=7, show_default=True,
              help="Days between the end of the long baseline and the date: 7 leaves the "
                   "current 7-day window out, so a sustained fall does not drag the baseline "
                   "down with it; 0 ends the baseline on the date itself.")
@click.option("--baseline-min", type=int, default=14, show_default=True,
              help="ok days the long baseline needs before it is defined.")
@click.option("--min-days", type=int, default=3, show_default=True,
              help="ok days a 7-day value and a weekly value need.")
@click.option("--swc-sd", type=float, default=0.5, show_default=True,
              help="Half-width of the smallest-worthwhile-change (SWC) band in baseline SDs.")
@click.option("--from", "first_date", help="First date of the table (YYYY-MM-DD).")
@click.option("--to", "last_date", help="Last date of the table (YYYY-MM-DD).")
@click.option("--jobs", type=int, default=None,
              help="Worker processes (default: all cores).")
@click.option("--cluster", metavar="ADDRESS|local-dask", default=None,
              help="Run the per-file work on a Dask cluster: a scheduler address "
                   "(tcp://host:8786) or local-dask (a Dask cluster of --jobs workers on this "
                   "machine). Needs the extra rrkit[dask]; see docs/cluster.md.")
@click.option("--time-limit", "time_limit_s", type=float, default=300.0, show_default=True,
              metavar="SECONDS",
              help="Per-file time limit: a file that takes longer is stopped and listed in "
                   "errors.csv (0: no limit).")
@click.option("--wait", "wait_s", type=float, default=0.0, show_default=True, metavar="SECONDS",
              help="When another run is writing the same output folder, wait up to this long "
                   "for it to finish instead of stopping at once.")
@click.option("--progress/--no-progress", default=None,
              help="Progress bar (default: on a terminal for runs of more than 20 files).")
def command(folder, outdir, manifest, pattern, window, tz, wake, pick, clean_method, psd,
            detrend, bands, baseline_days, baseline_lag, baseline_min, min_days, swc_sd,
            first_date, last_date, jobs, cluster, time_limit_s, wait_s, progress) -> int:
    """One row per athlete per day from a folder of recordings, with baselines and flags.

    Finds the recordings under FOLDER (recursively), places each on a subject and a local
    date (manifest, then file-name pattern, then time stamps in the file), picks each day's
    morning recording, cleans it, measures the window and adds the 7-day ln-RMSSD (Plews et
    al. 2012), its CV (Plews et al. 2013), the long baseline and band, flags and weekly
    compliance (Plews et al. 2014). Writes daily.csv (+ daily.parquet), weekly.csv,
    recordings.csv, errors.csv, store.h5 and provenance.json into the output folder.

    rrkit is not a medical device and makes no diagnosis.
    """
    from ..batch import run_daily
    from ..daily import BaselineSettings, DailySettings
    from ..metrics import Bands

    wake_start, wake_end = _wake(wake)
    if jobs is not None and jobs < 1:
        raise InputError(f"--jobs must be at least 1; got {jobs}")
    if not time_limit_s >= 0:
        raise InputError(f"--time-limit must be 0 (none) or a number of seconds; got "
                         f"{time_limit_s}")
    with _as_options():
        baselines = BaselineSettings(rolling_min_days=min_days, baseline_days=baseline_days,
                                     baseline_min_days=baseline_min,
                                     baseline_lag_days=baseline_lag, swc_sd=swc_sd,
                                     week_min_days=min(min_days, 7))
        settings = DailySettings.from_options(
            window=window, tz=tz, wake_start=wake_start, wake_end=wake_end, pick=pick,
            clean=clean_method, psd=psd, detrend=detrend,
            bands=Bands.from_text(bands, name="--band") if bands else None,
            baselines=baselines)
        summary = run_daily(folder, outdir, manifest=manifest, pattern=pattern,
                            settings=settings, jobs=jobs, progress=progress,
                            first_date=first_date, last_date=last_date,
                            command=_command_line(), wait_s=wait_s,
                            time_limit_s=time_limit_s or None, cluster=cluster)
    table = summary.table
    if summary.n_files == 0:
        click.echo(f"no recordings found under {folder} (files ending in .txt, .csv, .tsv, "
                   ".rr, .edf, .hea, or .gz of these)")
    n_subjects = table["subject"].nunique() if len(table) else 0
    click.echo(f"{len(table)} rows ({n_subjects} subjects) -> {outdir / 'daily.csv'}")
    if summary.n_ignored:
        click.echo(f"{summary.n_ignored} files left out (not recordings"
                   f"{' or not in the manifest' if manifest else ''})")
    if summary.n_failed:
        click.echo(f"{summary.n_failed} files failed or could not be placed: see "
                   f"{outdir / 'errors.csv'}")
    if len(table) and "caution" in table.columns:
        for line in ectopy_lines(table):
            click.echo(line)
    if summary.last_date is not None:
        if summary.below_swc:
            click.echo(f"7-day ln-RMSSD below the SWC band on {summary.last_date}: "
                       + ", ".join(summary.below_swc))
        else:
            click.echo(f"7-day ln-RMSSD below the SWC band on {summary.last_date}: nobody")
        click.echo(CAUTION)
    click.echo(summary.counts_line())
    return summary.exit_code
