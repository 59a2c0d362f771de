"""``rrkit clean``: label every interval of a file, correct the artifacts, print the audit.

Console example::

    $ rrkit clean morning.txt
    $ rrkit clean morning.txt -m median --strategy drop -o morning_labels.csv
    $ rrkit clean ../shared/data/mitdb-100/100.atr -o labels.csv --rr-out corrected.txt
"""

from __future__ import annotations

from pathlib import Path

import click

from .._atomic import atomic_path
from ..clean import METHODS, STRATEGIES, CleanResult, clean
from ..errors import InputError
from ..io import read, write_rr
from ..recording import interval_name
from ._options import reading_options

_METHOD_NAMES = {
    "drr": "drr (Lipponen & Tarvainen 2019)",
    "median": "median (20% from the local median)",
    "mad": "mad (Berntson et al. 1990)",
    "none": "none (plausible range only)",
}
_W = 13


def summary_lines(result: CleanResult) -> list[str]:
    """The printed audit of a cleaning run (also used by other commands)."""
    s = result.summary
    st = result.settings
    lines = [f"  {'method':<{_W}}{_METHOD_NAMES.get(st.method, st.method)}, "
             f"strategy {st.strategy}",
             f"  {'intervals':<{_W}}{s.n_intervals} {interval_name(result)} intervals"
             + (f" (plus {int(result.input.gaps.sum())} gap intervals, left alone)"
                if result.input.has_gaps else "")]
    from ..plots import audit_rows

    def share(n: int) -> str:
        return f"{100.0 * n / s.n_intervals if s.n_intervals else 0.0:.1f}%"

    n = s.counts["normal"]
    lines.append(f"  {'normal':<{_W}}{n} interval{'' if n == 1 else 's'} ({share(n)})")
    # counted as people count them: beats for premature, missed and extra beats
    for row in audit_rows(result):
        lines.append(f"  {row.label:<{_W}}{row.text}, {share(row.n_intervals)} of intervals")
    lines += [
        f"  {'artifacts':<{_W}}{s.artifact_pct:.2f}% of intervals",
        f"  {'corrected':<{_W}}{s.corrected_pct:.2f}% of intervals "
        f"(limit {st.max_corrected_pct:g}%)",
        f"  {'longest run':<{_W}}{s.longest_artifact_run} interval(s)",
        f"  {'premature':<{_W}}{result.ectopic_beats.size} "
        f"beat{'' if result.ectopic_beats.size == 1 else 's'}, {s.ectopic_per_hour:.1f} per hour",
        f"  {'quality':<{_W}}{s.quality}" + (f": {s.quality_reason}" if s.quality_reason else ""),
    ]
    return lines


def _write_table(result: CleanResult, dest: Path) -> None:
    """The per-interval table as CSV, written to a temporary file and moved into place."""
    if not dest.parent.is_dir():
        raise InputError("the folder to write into does not exist", path=dest.parent)
    frame = result.to_frame()
    with atomic_path(dest, fsync=False) as tmp, open(tmp, "w", newline="") as fh:
        frame.to_csv(fh, index=False, float_format="%.6f")


@click.command("clean")
@click.argument("file", type=click.Path(dir_okay=False, path_type=Path))
@click.option("-m", "--method", type=click.Choice(METHODS), default="drr", show_default=True,
              help="Detection method: drr (Lipponen & Tarvainen 2019), median (20% rule), "
                   "mad (Berntson et al. 1990) or none (plausible range only).")
@click.option("--strategy", type=click.Choice(STRATEGIES), default="interpolate",
              show_default=True,
              help="Ectopic, long, short and implausible intervals: replace from a cubic spline "
                   "over beat time, or drop them (kept as gaps). Missed beats are always split "
                   "and extra beats merged.")
@click.option("-o", "--out", "out", type=click.Path(dir_okay=False, path_type=Path),
              default=None, metavar="OUT.csv",
              help="Write one row per input interval: index, time_s, rr_ms, label, "
                   "rr_corrected_ms.")
@click.option("--rr-out", type=click.Path(dir_okay=False, path_type=Path), default=None,
              metavar="RR.txt", help="Write the corrected intervals (ms), one a line.")
@click.option("--max-corrected", "max_corrected_pct", type=float, default=None, metavar="PCT",
              help="Flag the recording when more than PCT% of intervals are corrected "
                   "[default: 5].")
@click.option("--range", "rr_range", type=(float, float), default=None, metavar="MIN MAX",
              help="Plausible intervals in ms [default: 250 2000].")
@click.option("--iterate", is_flag=True,
              help="Detect again on the corrected series until nothing changes (bounded).")
@reading_options
def command(file: Path, method: str, strategy: str, out: Path | None, rr_out: Path | None,
            max_corrected_pct: float | None, rr_range: tuple[float, float] | None,
            iterate: bool, reading: dict) -> int:
    """Label every interval of FILE (normal, ectopic, missed, extra, long, short,
    implausible), correct the artifacts and print the audit: counts, shares, longest run,
    premature beats per hour and the quality verdict.

    rrkit is not a medical device and makes no diagnosis.
    """
    rec = read(file, **reading)
    lo, hi = rr_range if rr_range is not None else (None, None)
    result = clean(rec, method=method, strategy=strategy, max_corrected_pct=max_corrected_pct,
                   min_rr_ms=lo, max_rr_ms=hi, iterate=True if iterate else None)
    click.echo(str(file))
    for line in summary_lines(result):
        click.echo(line)
    if out is not None:
        _write_table(result, out)
        click.echo(f"  {'table':<{_W}}{out}")
    if rr_out is not None:
        write_rr(rr_out, result.recording)
        click.echo(f"  {'rr-out':<{_W}}corrected {interval_name(result)} intervals -> {rr_out}")
    if result.summary.caution:
        click.echo(f"caution: {result.summary.caution}")
    return 0
