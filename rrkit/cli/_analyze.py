"""``rrkit analyze``: HRV metrics per analysis window, for one or more files.

Console example::

    $ rrkit analyze morning.txt                               # morning: skip 60 s, analyse 300 s
    $ rrkit analyze night.csv --window slide:5m --format csv -o night_windows.csv
    $ rrkit analyze night.csv --window "clock:04:00-07:00@Europe/Paris,stable=5m"
    $ rrkit analyze lab.txt --window events:protocol.csv --psd ar --format json

Exit codes: 0 every file analysed; 1 some files failed (each named on stderr, the others
written); 2 a usage error or no file could be analysed.
"""

from __future__ import annotations

import functools
import json
import math
import sys
from pathlib import Path

import click

from .._atomic import atomic_write_text
from ..analysis import NOTE_SEPARATOR
from ..errors import InputError
from ..recording import interval_name
from ..windows import SYNTAX_HELP
from . import error_line
from ._options import reading_options
from ._spectral_options import band_option, clean_option, psd_option

CAUTION = ("rrkit is not a medical device and makes no diagnosis. Frequent premature beats are "
           "worth showing to a clinician; decisions rest with clinicians and qualified staff.")

_MAX_NOTE_LINES = 20

#: Columns shown by the readable table (all columns go to csv and json).
TABLE_COLUMNS = (
    "source", "window", "start", "dur_s", "quality", "artifact_pct", "mean_hr_bpm",
    "rmssd_ms", "ln_rmssd", "sdnn_ms", "pnn50_pct", "lf_ms2", "hf_ms2", "lf_hf", "sd1_ms",
    "dfa_alpha1", "sampen",
)


@click.command(name="analyze", context_settings={"max_content_width": 100})
@click.argument("files", nargs=-1, required=True,
                type=click.Path(exists=True, dir_okay=False, path_type=Path))
@click.option("--window", "-w", "window", default="morning", show_default=True,
              help="Analysis window(s), see the syntax above: " + SYNTAX_HELP + ".")
@clean_option("Artifact correction before the metrics (drr: Lipponen & Tarvainen 2019; "
              "none: the intervals as read, quality 'unchecked').")
@psd_option("Spectrum: welch (4 Hz spline, smoothness-priors detrending, Hann, 150-s "
            "segments, 50% overlap), lomb (Lomb-Scargle) or ar (Burg, order 16).")
@band_option()
@click.option("--format", "fmt", type=click.Choice(["table", "csv", "json"]), default=None,
              help="Output format (default: from the -o extension, else table).")
@click.option("-o", "--output", type=click.Path(dir_okay=False, path_type=Path),
              help="Write to this file instead of the terminal.")
@reading_options
@click.option("--start", "start_text", default=None, metavar="ISO-TIME",
              help="Absolute time of the first beat for files that hold no timestamps, e.g. "
                   "2026-01-11T06:28:00+01:00 (needed by clock windows); a file with its own "
                   "start time is an error.")
@click.option("--jobs", type=int, default=1, show_default=True,
              help="Worker processes for several files (the order of the output is kept).")
@click.option("--cluster", metavar="ADDRESS|local-dask", default=None,
              help="Analyse the files on a Dask cluster (see rrkit daily --cluster).")
@click.option("--progress/--no-progress", default=None,
              help="Progress bar (default: on a terminal).")
def command(files, window, clean_method, psd, bands, fmt, output, reading, start_text, jobs,
            cluster, progress) -> int:
    """HRV metrics of each analysis window of FILE... (time, frequency, nonlinear domains).

    Reads each file (rrkit info shows how), corrects artifacts over the whole recording, then
    for every window reports the cleaning audit of that window (artifact_pct, corrected_pct,
    quality) and every metric: mean_rr_ms ... rmssd_ms, ln_rmssd, sdnn_ms, pnn50_pct,
    vlf/lf/hf_ms2, lf_hf, sd1_ms, sd2_ms, dfa_alpha1/2, sampen, resp_hz. Values that cannot
    be computed (too short a window) are empty, with the reason in notes.

    \b
    Window syntax (--window, several joined with ';'):
      morning                      skip 60 s, analyse the next 300 s (the default)
      whole                        first to last beat
      start:60+300                 300 s starting 60 s after the first beat
      last:5m                      the last 5 minutes
      slide:5m  slide:5m/1m        5-min windows every 5 min (every 1 min)
      clock:04:00-07:00@Europe/Paris,stable=5m
                                   that wall-clock window each day (its most stable
                                   5 min: fewest corrected beats, then least HR drift)
      events:protocol.csv          rows label,start_s,end_s[,breaths_per_min]

    rrkit is not a medical device and makes no diagnosis.
    """
    import pandas as pd

    from ..batch import map_files
    from ..metrics import Bands
    from ..windows import parse_window

    spec = parse_window(window)
    band_map = Bands.from_text(bands, name="--band") if bands else None
    start = _parse_start(start_text)
    if fmt is None:
        suffix = output.suffix.lower() if output is not None else ""
        fmt = {".csv": "csv", ".json": "json"}.get(suffix, "table")
    if progress is None:
        progress = sys.stderr.isatty()
    if jobs < 1:
        raise InputError(f"--jobs must be at least 1; got {jobs}")
    one = functools.partial(_analyze_one, spec=spec, start=start, start_text=start_text,
                            read_kw=reading,
                            analyze_kw={"clean": None if clean_method == "none"
                                            else clean_method, "psd": psd, "bands": band_map,
                                            "progress": progress and len(files) == 1})
    tables, failed, pulse = [], 0, []
    results = map_files(one, files, jobs=jobs, cluster=cluster,
                        progress=progress and len(files) > 1, desc="analyze", on_lost=_lost)
    for path, (table, message) in zip(files, results, strict=True):
        if table is not None and interval_name(table) != "RR":
            pulse.append((Path(path).name, interval_name(table)))
        if table is None:
            failed += 1
            click.echo(f"rrkit: error: {message}", err=True)
        else:
            tables.append(table)
    if not tables:
        return 2
    df = pd.concat(tables, ignore_index=True) if len(tables) > 1 else tables[0]
    # what the intervals are, per file: a column in csv and json, one line above a table
    df.insert(1, "intervals", [interval_name(t) for t in tables for _ in range(len(t))])
    said = _intervals_line(pulse, len(tables))
    text = _render(df, fmt, _provenance(tables[0]), said)
    if output is not None:
        atomic_write_text(output, text, fsync=False)
        click.echo(f"{len(df)} windows from {len(tables)} file(s) -> {output}", err=True)
    else:
        click.echo(text, nl=not text.endswith("\n"))
    if df["notes"].str.contains("caution:", regex=False).any():
        # after a table on the terminal; on stderr when stdout carries csv or json
        click.echo(CAUTION, err=not (fmt == "table" and output is None))
    return 1 if failed else 0


def _analyze_one(path, *, spec, start, start_text, read_kw, analyze_kw):
    """(window table, None) for one file, or (None, the error line) for a user-level error."""
    from ..analysis import analyze
    from ..io import read

    try:
        rec = read(path, **read_kw)
        if start is not None:
            rec = _with_start(rec, start, start_text)
        return analyze(rec, windows=spec, **analyze_kw), None
    except InputError as exc:
        return None, error_line(exc, "analyze")


def _lost(path, exc) -> tuple[None, str]:
    return None, f"{path}: the worker process died every time it read this file"


def _parse_start(text: str | None):
    """``--start``: an ISO 8601 time (a zone offset or ``Z`` makes it aware)."""
    if text is None:
        return None
    from datetime import datetime

    try:
        return datetime.fromisoformat(text.strip().replace("Z", "+00:00"))
    except ValueError:
        raise InputError(f"--start must be an ISO 8601 time; got {text!r}",
                         hint="for example --start 2026-01-11T06:28:00+01:00") from None


def _with_start(rec, start, text: str):
    if rec.start is not None:
        raise InputError(f"the file has its own start time ({rec.start.isoformat()}); --start "
                         f"{text} would replace it", path=rec.source,
                         hint="leave out --start for files with timestamps")
    return rec.replace(start=start)


def _provenance(df) -> dict:
    """The settings behind every number of a table (`rrkit.analyze` keeps them in attrs)."""
    return {"rrkit_version": df.attrs.get("rrkit_version"),
            "metrics": df.attrs.get("metrics_settings"),
            "clean": df.attrs.get("clean_settings")}


def _render(df, fmt: str, settings: dict | None = None, intervals_line: str | None = None) -> str:
    if fmt == "csv":
        from ..batch import neutralize_cells

        # subject ids and window labels come from files: no text cell runs as a formula
        return neutralize_cells(df).to_csv(index=False)
    if fmt == "json":
        records = _records(df)
        if settings is not None:
            for rec in records:
                rec["settings"] = settings
        return json.dumps(records, indent=2, allow_nan=False) + "\n"
    return _table(df, intervals_line)


def _clean_value(v):
    if v is None:
        return None
    if hasattr(v, "isoformat"):
        try:
            import pandas as pd

            if pd.isna(v):
                return None
        except (TypeError, ValueError):
            pass
        return v.isoformat()
    if isinstance(v, float) and not math.isfinite(v):
        return None
    if hasattr(v, "item"):  # numpy scalars
        v = v.item()
        if isinstance(v, float) and not math.isfinite(v):
            return None
    return v


def _records(df) -> list[dict]:
    out = []
    for row in df.to_dict("records"):
        rec = {k: _clean_value(v) for k, v in row.items()}
        if isinstance(rec.get("n_beats"), float) and rec["n_beats"].is_integer():
            rec["n_beats"] = int(rec["n_beats"])  # a count (float in the table beside NaN rows)
        rec["notes"] = [n for n in (row["notes"] or "").split(NOTE_SEPARATOR) if n]
        out.append(rec)
    return out


def _intervals_line(pulse: list[tuple[str, str]], n_files: int) -> str | None:
    """The one line above a table naming the files read from a pulse wave (``pulse``: their
    (file name, interval name)); None when there are none (every file holds RR intervals)."""
    if not pulse:
        return None
    name = pulse[0][1]
    which = "all files" if len(pulse) == n_files else ", ".join(f for f, _ in pulse)
    return (f"intervals: {name} ({which}, read from a pulse wave): the metrics describe "
            f"{name} intervals, not RR intervals")


def _table(df, intervals_line: str | None = None) -> str:
    import pandas as pd

    view = pd.DataFrame({
        "source": [Path(s).name if isinstance(s, str) else "" for s in df["source"]],
        "window": df["window"],
        "start": [_start(t, s) for t, s in zip(df["start_time"], df["start_s"], strict=True)],
        "dur_s": df["end_s"] - df["start_s"],
    })
    for col in TABLE_COLUMNS[4:]:
        if col in df.columns:
            view[col] = df[col]
    if "resp_hz" in df.columns:  # the breathing-rate estimate, as people count breaths
        view["resp_per_min"] = df["resp_hz"].astype(float) * 60.0
    formats = {"dur_s": "{:.0f}", "artifact_pct": "{:.1f}", "mean_hr_bpm": "{:.1f}",
               "rmssd_ms": "{:.1f}", "ln_rmssd": "{:.2f}", "sdnn_ms": "{:.1f}",
               "pnn50_pct": "{:.1f}", "lf_ms2": "{:.0f}", "hf_ms2": "{:.0f}", "lf_hf": "{:.2f}",
               "sd1_ms": "{:.1f}", "dfa_alpha1": "{:.2f}", "sampen": "{:.2f}",
               "resp_per_min": "{:.1f}"}
    for col, f in formats.items():
        if col in view.columns:
            view[col] = [("-" if not isinstance(v, (int, float)) or not math.isfinite(v)
                          else f.format(v)) for v in view[col]]
    lines = [view.to_string(index=False)]
    if intervals_line is not None:
        lines.insert(0, intervals_line)
    by_text: dict[str, list[str]] = {}
    several = len(set(view["source"])) > 1
    for src, w, n in zip(view["source"], df["window"], df["notes"], strict=True):
        for part in (n or "").split(NOTE_SEPARATOR):
            if part:
                by_text.setdefault(part, []).append(f"{src} {w}" if several else str(w))
    if by_text:
        lines.append("")
        lines.append("notes (- marks a value that could not be computed):")
        items = list(by_text.items())
        for text, wins in items[:_MAX_NOTE_LINES]:
            where = wins[0] if len(wins) == 1 else (
                "all windows" if len(wins) == len(df) else f"{len(wins)} windows")
            lines.append(f"  {where}: {text}")
        if len(items) > _MAX_NOTE_LINES:
            lines.append(f"  ... {len(items) - _MAX_NOTE_LINES} more (see --format csv or json)")
    return "\n".join(lines) + "\n"


def _start(t, s) -> str:
    try:
        import pandas as pd

        if t is not None and not pd.isna(t):
            return pd.Timestamp(t).strftime("%Y-%m-%d %H:%M:%S")
    except (TypeError, ValueError):
        pass
    return "-" if s is None or not math.isfinite(float(s)) else f"{float(s):.0f} s"
