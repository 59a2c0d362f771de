"""``rrkit agree``: do a device's nightly values agree with values recomputed from raw nights?

Console example::

    $ rrkit agree --reported nights/wearable_reports.csv --recordings nights -o agreement
    $ rrkit agree --reported reports.csv --recordings nights --search --ratio -o agreement
"""

from __future__ import annotations

from pathlib import Path

import click

from .._atomic import atomic_write_text

__all__ = ["command"]

#: Files written to the output folder.
OUTPUTS = {
    "stats": "agreement_stats.csv",
    "pairs": "agreement_pairs.csv",
    "summary": "agreement_summary.txt",
    "png": "bland_altman.png",
    "svg": "bland_altman.svg",
    "search": "definition_search.csv",
    "reference": "reference_values.csv",
    "errors": "errors.csv",
}


def _csv(df) -> str:
    from ..batch import neutralize_cells

    return neutralize_cells(df).to_csv(index=False, lineterminator="\n", float_format="%.6g")


def _reference(reported, nights, search, definition, clean_name, metric, ratio, multiplier,
               progress, executor):
    """(reference table, search or None): the per-night computations, run by ``executor``."""
    from ..agreement import reference_table, search_definitions

    if search:
        found = search_definitions(reported, nights, metric=metric, ratio=ratio,
                                   multiplier=multiplier, progress=progress, executor=executor)
        return None, found
    return reference_table(nights, definition=definition, clean=clean_name, metric=metric,
                           progress=progress, executor=executor), None


@click.command(name="agree")
@click.option("--reported", "reported_path", required=True,
              type=click.Path(exists=True, dir_okay=False, path_type=Path),
              help="CSV of the device's nightly values: subject, date (YYYY-MM-DD, the morning "
                   "the night ends) and the metric column.")
@click.option("--recordings", "folder", required=True,
              type=click.Path(exists=True, file_okay=False, path_type=Path),
              help="Folder of raw night recordings (searched recursively).")
@click.option("-o", "--output", "outdir", required=True, type=click.Path(path_type=Path),
              help="Output folder (created if needed).")
@click.option("--metric", default="rmssd_ms", show_default=True,
              help="Metric the device reports (a column of the CSV and a key of rrkit.metrics).")
@click.option("--definition", default="whole-night", show_default=True,
              help="Reference definition without --search: whole-night, tiles-5min, last-1h, "
                   "last-3h, clock-02-05, lowest-hr-5min, lowest-hr-30min.")
@click.option("--clean", "clean_name", default="drr", show_default=True,
              help="Cleaning of the raw nights without --search: drr, drr-drop, median, mad, "
                   "none.")
@click.option("--search", is_flag=True,
              help="Try every definition x cleaning, rank them by the SD of the differences and "
                   "report the agreement of the closest.")
@click.option("--ratio", is_flag=True,
              help="Log-transformed (ratio) analysis, advised for skewed metrics such as RMSSD.")
@click.option("--multiplier", type=float, default=1.96, show_default=True,
              help="Limits of agreement at bias ± multiplier × SD.")
@click.option("--manifest", type=click.Path(exists=True, dir_okay=False, path_type=Path),
              help="CSV with path, subject and start of each night (default: manifest.csv in "
                   "the recordings folder, when present).")
@click.option("--pattern", help="File-name pattern with {subject}, {date}, {time} fields (see "
                                "`rrkit daily --help`).")
@click.option("--tz", default="UTC", show_default=True,
              help="Time zone of naive start times (IANA name such as Europe/Berlin).")
@click.option("--jobs", type=int, default=1, show_default=True,
              help="Worker processes for the per-night computations.")
@click.option("--cluster", metavar="ADDRESS|local-dask", default=None,
              help="Run the per-night computations on a Dask cluster (see rrkit daily "
                   "--cluster).")
@click.option("--by-subject", is_flag=True,
              help="Bland-Altman figure: one marker per subject, with a legend (default: all "
                   "points alike).")
@click.option("--progress/--no-progress", default=None,
              help="Progress bar (default: only on a terminal).")
@click.pass_context
def command(ctx, reported_path, folder, outdir, metric, definition, clean_name, search, ratio,
            multiplier, manifest, pattern, tz, jobs, cluster, by_subject, progress) -> int:
    """Agreement of a device's nightly values with values recomputed from the raw nights.

    Writes to OUTDIR: agreement_stats.csv (every statistic with its confidence interval),
    agreement_pairs.csv, agreement_summary.txt (readable), bland_altman.png and .svg,
    reference_values.csv, and with --search definition_search.csv (the ranking). Differences
    are reported - reference. Exit code 0, or 1 when some recordings could not be used (listed
    in errors.csv; the rest is analysed).

    rrkit is not a medical device and makes no diagnosis.
    """
    import pandas as pd

    from ..agreement import (
        REFERENCE_DEFINITIONS,
        agreement,
        as_cleaning,
        as_definition,
        read_reported,
    )
    from ..batch import read_nights
    from ..errors import ERROR_COLUMNS, InputError

    if not search:  # a usage error before any night is read, named as the user typed it
        as_definition(definition, name="--definition")
        as_cleaning(clean_name, name="--clean")
    reported = read_reported(reported_path, metric=metric)
    nights, problems = read_nights(folder, manifest=manifest, pattern=pattern, tz=tz,
                                   exclude=[reported_path])
    if not nights:
        raise InputError(f"no usable night recording in {folder}"
                         + (f"; first problem: {problems[0][0]}: {problems[0][2]}"
                            if problems else ""))
    outdir.mkdir(parents=True, exist_ok=True)
    written = []
    search_text = ""
    if jobs < 1:
        raise InputError(f"--jobs must be at least 1; got {jobs}")
    from ..batch import InlineExecutor, make_executor

    with (InlineExecutor() if jobs == 1 and cluster is None
          else make_executor(jobs, cluster)) as ex:
        ref, found = _reference(reported, nights, search, definition, clean_name, metric, ratio,
                                multiplier, progress, ex)
    if search:
        definition, clean_name = found.best
        atomic_write_text(outdir / OUTPUTS["search"], _csv(found.table), fsync=False)
        written.append(OUTPUTS["search"])
        ref = found.reference[(found.reference["definition"] == definition)
                              & (found.reference["cleaning"] == clean_name)]
        search_text = found.summary_text()
    res = agreement(reported[["subject", "date", metric]], ref[["subject", "date", metric]],
                    value=metric, ratio=ratio, multiplier=multiplier)
    stats = res.table
    stats.insert(0, "definition", definition)
    stats.insert(1, "cleaning", clean_name)
    atomic_write_text(outdir / OUTPUTS["stats"], _csv(stats), fsync=False)
    atomic_write_text(outdir / OUTPUTS["pairs"], _csv(res.pairs), fsync=False)
    atomic_write_text(outdir / OUTPUTS["reference"], _csv(ref), fsync=False)
    desc = REFERENCE_DEFINITIONS[definition].description if definition in \
        REFERENCE_DEFINITIONS else ""
    header = (f"Reference: {definition} ({desc}), cleaning {clean_name}; "
              f"{len(nights)} nights read from {folder}\n\n")
    text = header + res.summary_text()
    if search_text:
        text = search_text + "\n" + "=" * 78 + "\n\n" + text
    atomic_write_text(outdir / OUTPUTS["summary"], text, fsync=False)
    res.plot(outdir / OUTPUTS["png"], subjects=by_subject)
    res.plot(outdir / OUTPUTS["svg"], subjects=by_subject)
    written += [OUTPUTS[k] for k in ("stats", "pairs", "reference", "summary", "png", "svg")]
    if problems:
        err = pd.DataFrame(problems, columns=list(ERROR_COLUMNS))
        atomic_write_text(outdir / OUTPUTS["errors"], _csv(err), fsync=False)
        written.append(OUTPUTS["errors"])
    click.echo(text, nl=False)
    for rel, kind, message in problems:
        click.echo(f"rrkit: skipped {rel}: {kind}: {message}", err=True)
    click.echo(f"\nwrote {len(written)} files to {outdir}: {', '.join(sorted(written))}")
    return 1 if problems else 0
