"""``rrkit ramp``: DFA alpha1 through an incremental exercise test, and the heart rate (and
power or speed) where it crosses 0.75 and 0.5.

Console example::

    $ rrkit ramp data_samples/ramp/R02_ramp.txt --stages data_samples/ramp/R02_stages.csv -o out/
    $ rrkit ramp test.csv --window 2m/10s --levels 0.75,0.5 -o out/
"""

from __future__ import annotations

import json
from pathlib import Path

import click

from .._atomic import atomic_path, atomic_write_text
from ..errors import InputError
from ..exercise import RAMP_CAUTION, RampSettings, ramp_test
from ..io import read, read_loads
from ._options import reading_options

_W = 12


def _levels(text: str) -> tuple[float, ...]:
    try:
        return tuple(float(v) for v in text.split(",") if v.strip())
    except ValueError:
        raise InputError(f"--levels must be numbers separated by commas; got {text!r}",
                         hint="for example --levels 0.75,0.5") from None


def threshold_lines(result) -> list[str]:
    """The printed thresholds of a `RampResult` (also used by ``rrkit demo``)."""
    lines = []
    for _, r in result.thresholds.iterrows():
        name = "heart rate" if r["axis"] == "hr_bpm" else r["axis"].split("_")[0]
        head = f"  alpha1 {r['level']:<5g}{name:<11}"
        if r["verdict"] == "not found":
            lines.append(f"{head}not found: {r['reason']}")
            continue
        fmt = ".0f" if r["unit"] in ("bpm", "W") else ".1f"
        text = (f"{head}{r['value']:{fmt}} {r['unit']} (95% CI {r['ci_low']:{fmt}} to "
                f"{r['ci_high']:{fmt}}), {r['n_windows']} windows, {r['verdict']}")
        if r["verdict"] == "uncertain":
            text += f": {r['reason']}"
        lines.append(text)
    return lines


def write_outputs(result, outdir: Path, *, title: str | None = None) -> dict[str, Path]:
    """Write windows.csv, thresholds.csv, settings.json and ramp.png into ``outdir``."""
    from ..plots import ramp_figure

    outdir.mkdir(parents=True, exist_ok=True)
    paths = {name: outdir / name for name in
             ("windows.csv", "thresholds.csv", "settings.json", "ramp.png")}
    for name, frame in (("windows.csv", result.windows), ("thresholds.csv", result.thresholds)):
        with atomic_path(paths[name], fsync=False) as tmp, open(tmp, "w", newline="") as fh:
            frame.to_csv(fh, index=False, float_format="%.6g")
    atomic_write_text(paths["settings.json"],
                      json.dumps(result.provenance(), indent=2, default=float) + "\n",
                      fsync=False)
    ramp_figure(result, paths["ramp.png"], title=title)
    return paths


@click.command("ramp")
@click.argument("file", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--stages", "stages", type=click.Path(dir_okay=False, path_type=Path),
              default=None, metavar="LOADS.csv",
              help="Power or speed against time on the recording's clock: a header time_s "
                   "(or time as mm:ss) and power_w or speed_kmh, one row per stage or sample.")
@click.option("--window", default="2m/5s", show_default=True, metavar="LENGTH/STEP",
              help="Sliding windows for alpha1 (2-minute windows, Rogers et al. 2021).")
@click.option("--levels", default="0.75,0.5", show_default=True, metavar="A,B",
              help="alpha1 levels whose crossings are reported (0.75 near the first, 0.5 near "
                   "the second ventilatory threshold, Rogers et al. 2021).")
@click.option("--max-artifacts", "max_artifact_pct", type=float, default=5.0,
              show_default=True, metavar="PCT",
              help="Leave windows with more than PCT% artifact beats out of the fit.")
@click.option("--clean", "clean_method", type=click.Choice(["exercise", "drr", "median", "mad",
                                                             "none"]),
              default="exercise", show_default=True,
              help="Artifact cleaning before the windows: exercise is drr (Lipponen & "
                   "Tarvainen 2019) with a stricter stand-out rule for exercise data.")
@click.option("-o", "--out", "outdir", type=click.Path(file_okay=False, path_type=Path),
              default=None, metavar="OUTDIR",
              help="Write windows.csv, thresholds.csv, settings.json and ramp.png here.")
@reading_options
def command(file: Path, stages: Path | None, window: str, levels: str, max_artifact_pct: float,
            clean_method: str, outdir: Path | None, reading: dict) -> int:
    """Follow DFA alpha1 through the incremental exercise test in FILE (RR intervals, peak
    times or ECG) and report the heart rate, and the power or speed with --stages, at which
    alpha1 crosses each level, with a bootstrap 95% CI and a verdict (ok, uncertain, not
    found).

    This is an estimate for training prescription, not a diagnostic test; rrkit is not a
    medical device. Exercise testing follows local safety practice.
    """
    rec = read(file, **reading)
    loads = read_loads(stages) if stages is not None else None
    settings = RampSettings(window=window, levels=_levels(levels),
                            max_artifact_pct=max_artifact_pct,
                            caution_artifact_pct=min(3.0, max_artifact_pct))
    result = ramp_test(rec, loads=loads, clean=clean_method, settings=settings)
    w = result.windows
    click.echo(str(file))
    click.echo(f"  {'intervals':<{_W}}{result.interval_name}"
               + (" (read from a pulse wave; the alpha1 levels were set on ECG or chest-strap "
                  "RR intervals)" if rec.info.pulse_derived else ""))
    click.echo(f"  {'windows':<{_W}}{len(w)} of {window}, {int(w['valid'].sum())} valid, "
               f"{int(w['in_fit'].sum())} in the descending part")
    click.echo(f"  {'heart rate':<{_W}}{w['mean_hr_bpm'].min():.0f} to "
               f"{w['mean_hr_bpm'].max():.0f} bpm (window means)")
    for line in threshold_lines(result):
        click.echo(line)
    if outdir is not None:
        paths = write_outputs(result, outdir, title=f"Exercise test: {file.name}")
        click.echo(f"  {'written':<{_W}}" + ", ".join(str(p) for p in paths.values()))
    click.echo(f"caution: {RAMP_CAUTION}")
    return 0
