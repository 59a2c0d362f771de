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


def _read_reported(path: Path, metric: str):
    import pandas as pd

    from ..errors import InputError

    try:
        table = pd.read_csv(path, dtype={"subject": str, "date": str})
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read the reported values: {exc}", path=path) from None
    needed = ["subject", "date", metric]
    missing = [c for c in needed if c not in table.columns]
    if missing:
        raise InputError(f"missing column(s) {missing}; expected {needed}", path=path, line=1,
                         hint="name the value column with --metric")
    values = pd.to_numeric(table[metric], errors="coerce")
    bad = values.isna() & table[metric].notna()
    if bad.any():
        i = int(bad.to_numpy().nonzero()[0][0])
        raise InputError(f"{metric} is {table[metric].iloc[i]!r}; expected a number", path=path,
                         line=i + 2)
    table[metric] = values
    return table


def _load_nights(folder: Path, manifest, pattern, tz: str, reported: Path):
    """Read every recording of ``folder`` with subject and start; (nights, problems)."""
    from .. import read
    from ..batch import discover
    from ..batch._discover import assign
    from ..errors import InputError

    if manifest is None and (folder / "manifest.csv").is_file():
        manifest = folder / "manifest.csv"
    exclude = [reported.resolve()]
    disc = discover(folder, manifest=manifest, pattern=pattern, exclude=tuple(exclude))
    problems = list(disc.problems)
    nights = []
    for cand in disc.candidates:
        try:
            rec = read(cand.path)
            subject, start = assign(cand, rec.subject, rec.start, tz, pattern=disc.pattern)
            if not hasattr(start, "hour"):
                raise InputError("only the date of this night is known; a night needs its start "
                                 "time", path=cand.relpath, hint="give start in the manifest")
            nights.append(rec.replace(subject=subject, start=start, source=cand.relpath))
        except (InputError, OSError) as exc:
            problems.append((cand.relpath, type(exc).__name__, " ".join(str(exc).split())))
    return nights, problems


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
@click.option("--by-subject", is_flag=True,
              help="Bland-Altman figure: one marker per subject, with a legend (default: all "
                   "points alike).")
@click.option("--progress/--no-progress", default=None,
              help="Progress bar (default: only on a terminal).")
@click.pass_context
def command(ctx, reported_path, folder, outdir, metric, definition, clean_name, search, ratio,
            multiplier, manifest, pattern, tz, by_subject, progress) -> int:
    """Agreement of a device's nightly values with values recomputed from the raw nights.

    Writes to OUTDIR: agreement_stats.csv (every statistic with its confidence interval),
    agreement_pairs.csv, agreement_summary.txt (readable), bland_altman.png and .svg,
    reference_values.csv, and with --search definition_search.csv (the ranking). Differences
    are reported - reference. Exit code 0, or 1 when some recordings could not be used (listed
    in errors.csv; the rest is analysed).

    rrkit is not a medical device and makes no diagnosis.
    """
    import pandas as pd

    from .. import agreement, reference_table, search_definitions
    from .._agreement_search import REFERENCE_DEFINITIONS, _cleaning, _definition
    from ..errors import InputError

    if not search:
        for option, check, value in (("--definition", _definition, definition),
                                     ("--clean", _cleaning, clean_name)):
            try:
                check(value)
            except InputError as exc:  # name the option the user typed, not the argument
                first = exc.message.split(" ", 1)
                text = option + " " + first[1] if first[0] in ("definition", "clean") \
                    else exc.message
                raise InputError(text, hint=exc.hint) from None
    reported = _read_reported(reported_path, metric)
    nights, problems = _load_nights(folder, manifest, pattern, tz, reported_path)
    if not nights:
        raise InputError(f"no usable night recording in {folder}"
                         + (f"; first problem: {problems[0][0]}: {problems[0][2]}"
                            if problems else ""))
    outdir.mkdir(parents=True, exist_ok=True)
    written = []
    search_text = ""
    if search:
        found = search_definitions(reported, nights, metric=metric, ratio=ratio,
                                   multiplier=multiplier, progress=progress)
        definition, clean_name = found.best
        atomic_write_text(outdir / OUTPUTS["search"], _csv(found.table), fsync=False)
        written.append(OUTPUTS["search"])
        ref = found.reference[(found.reference["definition"] == definition)
                              & (found.reference["cleaning"] == clean_name)]
        search_text = found.summary_text()
    else:
        ref = reference_table(nights, definition=definition, clean=clean_name, metric=metric,
                              progress=progress)
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
        err = pd.DataFrame(problems, columns=["path", "error", "message"])
        atomic_write_text(outdir / OUTPUTS["errors"], _csv(err), fsync=False)
        written.append(OUTPUTS["errors"])
    click.echo(text, nl=False)
    for rel, kind, message in problems:
        click.echo(f"rrkit: skipped {rel}: {kind}: {message}", err=True)
    click.echo(f"\nwrote {len(written)} files to {outdir}: {', '.join(sorted(written))}")
    return 1 if problems else 0
