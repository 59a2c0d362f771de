"""``rrkit info``: what is in a file, and how rrkit read it.

Console example::

    $ rrkit info morning.txt
    $ rrkit info ../shared/data/mitdb-100/100.atr ../shared/data/mitdb-100/100.hea
    $ rrkit info strap_export.csv --column "RR (ms)" --unit ms
    $ rrkit info peaks.txt --kind peaks --unit samples --fs 250
"""

from __future__ import annotations

import warnings
from pathlib import Path

import click
import numpy as np

from ..errors import InputError, QualityWarning
from ..io import read
from ..recording import Recording, interval_name
from . import error_line
from ._options import reading_options

_LABEL_WIDTH = 11


def _duration(seconds: float) -> str:
    h, rem = divmod(seconds, 3600.0)
    m, s = divmod(rem, 60.0)
    clock = f"{int(h)}:{int(m):02d}:{s:04.1f}" if h >= 1 else f"{int(m)}:{s:04.1f}"
    return f"{clock} ({seconds:.1f} s)"


def _hr_range(rec: Recording) -> str:
    """Heart-rate range after artifact correction first (what the heart did), then as read (a
    raw range includes missed and extra beats: '26 to 229 bpm' alarms more than it informs)."""
    ok = rec.rr_ms[~rec.gaps]
    if ok.size == 0:
        return "no usable intervals"
    hr = 60000.0 / ok
    raw = f"{hr.min():.0f} to {hr.max():.0f} bpm"
    try:
        from ..clean import clean

        cor = clean(rec).recording
        c = 60000.0 / cor.rr_ms[~cor.gaps]
    except InputError:
        c = np.zeros(0)
    if c.size == 0:
        return (f"{raw}, median {np.median(hr):.0f} bpm (from {ok.size} intervals, as read: "
                "artifact correction was not possible)")
    return (f"{c.min():.0f} to {c.max():.0f} bpm, median {np.median(c):.0f} bpm after artifact "
            f"correction (default cleaning); as read {raw} (from {ok.size} intervals)")


def _breathing_text(ex) -> str:
    """The breathing rate measured from the ECG at read time (ReadInfo.extra)."""
    series = ex.get("breathing_series") or ()
    n_rate = sum(hz is not None for _, _, hz in series)
    found = f"{n_rate} of {len(series)} stretches with a clear rhythm"
    hz = ex.get("breathing_hz")
    if hz is None:
        return f"no steady rate ({found}), {ex['breathing_measured_by']}"
    return f"{60 * hz:.1f}/min ({hz:.3f} Hz), {ex['breathing_measured_by']}; {found}"


def _yes_no(flag) -> str:
    return "yes" if flag else "no"


def describe(rec: Recording) -> list[tuple[str, str]]:
    """(label, text) rows describing a recording and how it was read."""
    info = rec.info
    ex = dict(info.extra)
    rows = [("kind", f"{info.kind}  (decided by: {info.kind_decided_by})")]
    if info.unit is None:  # ECG: the beats are detected, there is no unit to decide
        rows.append(("unit", f"none  ({info.unit_decided_by})"))
    else:
        rows.append(("unit", f"{info.unit}  (decided by: {info.unit_decided_by})"))
    if info.column is not None:
        how = ex.get("column_chosen_by")
        rows.append(("column", info.column + (f"  ({how})" if how else "")))
    if info.fs_hz is not None:
        rows.append(("fs", f"{info.fs_hz:g} Hz"))
    if "separator" in ex:
        text = f"separator {ex['separator']}, decimal {ex['decimal']!r}"
        if ex.get("header_line"):
            text += f", header on line {ex['header_line']}"
        skipped = [f"{ex[k]} {label}" for k, label in (
            ("n_comment_lines", "comment"), ("n_blank_lines", "blank"),
            ("n_preamble_lines", "preamble")) if ex.get(k)]
        if skipped:
            text += "; skipped lines: " + ", ".join(skipped)
        flags = [name for name, key in (("gzip", "gzip"), ("BOM", "bom")) if ex.get(key)]
        if flags:
            text += "; " + ", ".join(flags)
        rows.append(("text", text))
    rows.append(("beats", f"{rec.n_beats} beats, {rec.n_intervals} intervals"))
    rows.append(("duration", _duration(rec.duration_s)))
    rows.append(("start", rec.start.isoformat() if rec.start is not None else
                 "not in the file (times are relative)"))
    rows.append(("HR range", _hr_range(rec)))
    if rec.has_gaps:
        n = int(rec.gaps.sum())
        lost = float(rec.rr_ms[rec.gaps].sum()) / 1000.0
        rows.append(("gaps", f"{n} ({lost:.1f} s); no successive difference crosses them"))
    else:
        rows.append(("gaps", "none"))
    if "timestamps" in ex:
        rows.append(("times", str(ex["timestamps"])))
    if info.pulse_derived:
        why = ex.get("pulse_derived_by", info.kind)
        rows.append(("intervals", f"{interval_name(info)}, not RR ({why})"))
    if "detector" in ex and info.kind == "ppg":
        found = 100 * ex.get("detection_coverage", 0)
        rows.append(("PPG", f"detector {ex['detector']}; {found:.1f}% of the pulses the median "
                            "interval implies were found"))
    elif "detector" in ex:
        rows.append(("ECG", (
            f"detector {ex['detector']}; inverted lead {_yes_no(ex.get('inverted_lead'))}; "
            f"{100 * ex.get('detection_quality', 0):.1f}% of beats match the median beat; "
            f"{ex.get('usable_signal_pct', 0):.1f}% of the signal usable")))
    if "breathing_measured_by" in ex:
        rows.append(("breathing", _breathing_text(ex)))
    if "beat_symbol_counts" in ex:
        rows.append(("symbols", str(ex["beat_symbol_counts"])))
    skipped = ex.get("non_beat_annotations_skipped") or ex.get("non_beat_rows_skipped")
    if skipped:
        rows.append(("non-beats", f"{skipped} skipped ({ex.get('non_beat_symbols', '')})"))
    if rec.subject:
        rows.append(("subject", rec.subject))
    return rows


@click.command("info")
@click.argument("files", nargs=-1, required=True,
                type=click.Path(dir_okay=False, path_type=Path))
@reading_options
@click.pass_context
def command(ctx: click.Context, files: tuple[Path, ...], reading: dict) -> int:
    """Show what each FILE holds and how rrkit read it: kind, unit and how each was decided,
    beats, duration, start, heart-rate range, gaps and (for ECG) the detection quality.

    rrkit is not a medical device and makes no diagnosis.
    """
    debug = bool((ctx.obj or {}).get("debug"))
    failed = 0
    for k, path in enumerate(files):
        if k:
            click.echo()
        try:
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always", QualityWarning)
                rec = read(path, **reading)
        except InputError as exc:
            if debug or len(files) == 1:
                raise
            click.echo(f"rrkit: error: {error_line(exc, 'info')}", err=True)
            failed += 1
            continue
        click.echo(str(path))
        for label, text in describe(rec):
            click.echo(f"  {label:<{_LABEL_WIDTH}}{text}")
        for w in caught:
            if issubclass(w.category, QualityWarning):
                click.echo(f"rrkit: warning: {w.message}", err=True)
            else:
                warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    return 2 if failed else 0
