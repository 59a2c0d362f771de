"""``rrkit pair``: a device against a reference recorded at the same time.

Console example::

    $ rrkit pair ../shared/data/mitdb-100/100.atr watch_pulses.csv --dev-kind pulse -o pair/
    $ rrkit pair chest_ecg.edf finger.csv --dev-kind ppg --dev-fs 100 --window slide:2m -o pair/
"""

from __future__ import annotations

import re
import warnings
from pathlib import Path

import click

from .._atomic import atomic_write_text
from ..clean import METHODS
from ..errors import InputError, QualityWarning
from ..io import read
from ..pairing import DEFAULT_TOLERANCE_MS, compare_devices
from ._options import reader_keywords, reading_options_for

#: files written into OUTDIR
OUTPUTS = ("pairs.csv", "windows.csv", "agreement.csv", "summary.txt", "pairs.png")


def _own_options(text: str, keywords: dict, prefix: str) -> str:
    """The library's keyword hints (``pass fs= in Hz``) as this file's options (``--dev-fs``)."""
    names = "|".join(re.escape(k) for k in keywords)
    return re.sub(rf"\b({names})=(?:'([^']*)'|(\d+(?:\.\d+)?))?",
                  lambda m: f"--{prefix}-{m.group(1)}" + (
                      f" {m.group(2) or m.group(3)}" if (m.group(2) or m.group(3)) else ""),
                  text)


def _read_one(path: Path, keywords: dict, what: str, prefix: str):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", QualityWarning)
        try:
            rec = read(path, **keywords)
        except InputError as exc:
            raise InputError(f"{what}: " + _own_options(str(exc), keywords, prefix)) from None
    for w in caught:
        if issubclass(w.category, QualityWarning):
            click.echo(f"rrkit: warning: {what}: {w.message}", err=True)
        else:
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    return rec


@click.command("pair")
@click.argument("reference", type=click.Path(dir_okay=False, path_type=Path))
@click.argument("device", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--window", "window", default="slide:5m", show_default=True, metavar="SPEC",
              help="Windows compared on both recordings (rrkit's window syntax).")
@click.option("--tolerance", type=float, default=DEFAULT_TOLERANCE_MS, show_default=True,
              metavar="MS", help="Largest distance between paired beats after alignment "
                                 "(ANSI/AAMI EC57 uses 150 ms).")
@click.option("--max-offset", type=float, default=None, metavar="S",
              help="Search clock offsets only this many seconds around the expected one "
                   "(--clock-offset, else the start times' difference, else 0). Default: any.")
@click.option("--clock-offset", type=float, default=None, metavar="S",
              help="Known clock offset (reference time of device time 0), to report the "
                   "constant pulse delay.")
@click.option("--clean", type=click.Choice(METHODS), default="drr", show_default=True,
              help="Cleaning of both recordings in every window.")
@reading_options_for("ref", "reference")
@reading_options_for("dev", "device")
@click.option("-o", "--outdir", required=True, type=click.Path(file_okay=False, path_type=Path),
              help="Folder for pairs.csv, windows.csv, agreement.csv, summary.txt, pairs.png.")
def command(reference: Path, device: Path, window: str, tolerance: float,
            max_offset: float | None, clock_offset: float | None, clean: str, outdir: Path,
            **reader_values) -> int:
    """Align two simultaneous recordings of one heart (REFERENCE, e.g. an ECG, and DEVICE,
    e.g. a wrist PPG), pair their beats and measure the device against the reference: matched,
    missed and extra beats, paired-interval agreement, and the same windows' metrics compared.

    Reader options apply to one file each: --ref-kind, --ref-fs, ... for REFERENCE and
    --dev-kind, --dev-fs, ... for DEVICE (each as `rrkit info` has it).

    rrkit is not a medical device and makes no diagnosis.
    """
    ref = _read_one(reference, reader_keywords(reader_values, "ref"), "reference", "ref")
    dev = _read_one(device, reader_keywords(reader_values, "dev"), "device", "dev")
    result = compare_devices(ref, dev, windows=window, tolerance_ms=tolerance,
                             max_offset_s=max_offset, clock_offset_s=clock_offset,
                             clean=None if clean == "none" else clean)
    from ..batch import neutralize_cells  # window labels can come from a user's events table

    outdir.mkdir(parents=True, exist_ok=True)
    atomic_write_text(outdir / "pairs.csv", result.pairs.table.to_csv(index=False))
    atomic_write_text(outdir / "windows.csv", neutralize_cells(result.windows).to_csv(index=False))
    atomic_write_text(outdir / "agreement.csv",
                      neutralize_cells(result.stats_table()).to_csv(index=False))
    text = (f"reference: {reference}  ({ref.info.interval_name})\n"
            f"device:    {device}  ({dev.info.interval_name})\n\n" + result.summary_text())
    atomic_write_text(outdir / "summary.txt", text + "\n")
    result.plot(outdir / "pairs.png")
    click.echo(text)
    click.echo("")
    for name in OUTPUTS:
        click.echo(f"wrote {outdir / name}")
    return 0
