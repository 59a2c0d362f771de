"""``rrkit demo``: the whole job on the bundled invented squad, in one command.

Console example (from a checkout of the repository)::

    $ rrkit demo                       # writes rrkit-demo-output/
    $ rrkit demo /tmp/out --data data_samples --jobs 2

The data are a simulation of invented people (see ``data_samples/README.md``).
"""

from __future__ import annotations

import json
import time
from pathlib import Path

import click

from .._atomic import atomic_write_text
from ..errors import InputError

DEFAULT_OUTDIR = "rrkit-demo-output"
_MARKER = "squad.json"
_STEPS = 5


def find_data(given: Path | None) -> Path:
    """The demo data folder: ``--data``, else ``data_samples/`` here or in a parent folder,
    else beside the installed package (an editable install from a checkout)."""
    if given is not None:
        if not (given / _MARKER).is_file():
            raise InputError(f"{given} is not a demo data folder (no {_MARKER} in it)",
                             hint="regenerate one with: python -m rrkit.simulate.squad DIR")
        return given
    here = Path.cwd().resolve()
    for folder in (here, *here.parents):
        cand = folder / "data_samples"
        if (cand / _MARKER).is_file():
            return cand
    cand = Path(__file__).resolve().parents[2] / "data_samples"
    if (cand / _MARKER).is_file():
        return cand
    raise InputError(
        f"the demo data folder data_samples/ was not found in {here} or its parents",
        hint="run rrkit demo from a checkout of the repository, pass --data DIR, or write the "
             "data with: python -m rrkit.simulate.squad data_samples")


def _write_csv(path: Path, df) -> None:
    """A CSV written whole or not at all, its text cells safe for spreadsheets (subject ids and
    segment labels come from file names and events tables)."""
    from ..batch import neutralize_cells

    atomic_write_text(path, neutralize_cells(df).to_csv(index=False, lineterminator="\n"),
                      fsync=False)


class _Progress:
    def __init__(self, quiet: bool) -> None:
        self.quiet = quiet
        self.t0 = time.monotonic()

    def step(self, i: int, text: str) -> None:
        if not self.quiet:
            click.echo(f"[{i}/{_STEPS}] {text}", err=True)

    def note(self, text: str) -> None:
        if not self.quiet:
            click.echo(f"      {text}", err=True)

    def elapsed(self) -> float:
        return time.monotonic() - self.t0


@click.command("demo")
@click.argument("outdir", required=False, type=click.Path(file_okay=False, path_type=Path),
                default=DEFAULT_OUTDIR)
@click.option("--data", "data", type=click.Path(file_okay=False, exists=True, path_type=Path),
              default=None, help="Demo data folder (default: data_samples/ of the checkout).")
@click.option("--jobs", type=click.IntRange(1, None), default=None,
              help="Worker processes for the morning batch (default: all cores).")
@click.option("--quiet", is_flag=True, help="Only print the summary.")
def command(outdir: Path, data: Path | None, jobs: int | None, quiet: bool) -> int:
    """Run the whole job on the bundled demo squad (invented athletes) and summarise it.

    Cleans every morning recording, builds the daily table with baselines, analyses the lab
    protocol, checks the simulated wearable against the raw nights, draws every figure, and
    prints what a coach would want to know first, with where everything was written
    (default OUTDIR: rrkit-demo-output).

    rrkit is not a medical device and makes no diagnosis.
    """
    import pandas as pd

    from ..daily import premature_beat_rates

    folder = find_data(data)
    meta = json.loads((folder / _MARKER).read_text(encoding="utf-8"))
    tz = meta.get("time_zone", "UTC")
    out = Path(outdir)
    out.mkdir(parents=True, exist_ok=True)
    prog = _Progress(quiet)

    prog.step(1, f"mornings: cleaning and measuring every file in {folder / 'mornings'}")
    daily_run = _mornings(folder, out, tz=tz, jobs=jobs, quiet=quiet)
    prog.note(daily_run.counts_line())

    prog.step(2, "lab protocol: segments from the events table")
    lab = _lab(folder, out)

    prog.step(3, "nights: which window definition do the wearable's values resemble?")
    agree = _nights(folder, out, tz=tz, quiet=quiet)

    prog.step(4, "figures")
    load = pd.read_csv(folder / "training_load.csv") if (folder / "training_load.csv").is_file() \
        else None
    ectopy = premature_beat_rates(daily_run.outputs["store"])
    figures = _figures(folder, out, daily_run, load=load, meta=meta, ectopy=ectopy, agree=agree,
                       note=prog.note)

    prog.step(5, "summary")
    text = _summary(daily_run, lab=lab, agree=agree, ectopy=ectopy, figures=figures, out=out,
                    meta=meta, folder=folder)
    atomic_write_text(out / "summary.txt", text, fsync=False)
    click.echo(text)
    return 0


# ----------------------------------------------------------------------------------- steps
def _mornings(folder: Path, out: Path, *, tz: str, jobs, quiet: bool):
    from ..batch import run_daily
    from ..daily import DailySettings

    mornings = folder / "mornings"
    manifest = mornings / "manifest.csv"
    return run_daily(mornings, out / "daily", manifest=manifest if manifest.is_file() else None,
                     settings=DailySettings.from_options(tz=tz), jobs=jobs,
                     progress=None if not quiet else False,
                     command=["rrkit", "demo", str(out)])


def _lab(folder: Path, out: Path):
    import pandas as pd

    from ..analysis import analyze
    from ..io import read
    from ..windows import Events

    tables = []
    for events in sorted((folder / "lab").glob("*_events.csv")):
        rec_path = events.with_name(events.name.replace("_events.csv", ".csv"))
        subject = rec_path.stem.split("_")[0]
        rec = read(rec_path, subject=subject)
        tables.append(analyze(rec, windows=Events.from_csv(events)))
    lab = pd.concat(tables, ignore_index=True) if tables else pd.DataFrame()
    (out / "lab").mkdir(parents=True, exist_ok=True)
    _write_csv(out / "lab" / "lab_segments.csv", lab)
    return lab


def _nights(folder: Path, out: Path, *, tz: str, quiet: bool = True):
    """Recompute the nights under every reference definition and rank them against the
    wearable's reported values; writes the ranking and the best combination's statistics."""

    from ..agreement import read_reported, search_definitions
    from ..batch import read_nights

    nights_dir = folder / "nights"
    reports = nights_dir / "wearable_reports.csv"
    if not reports.is_file():
        return None
    reported = read_reported(reports, metric="rmssd_ms")
    nights, problems = read_nights(nights_dir, tz=tz, exclude=[reports])
    if problems:
        raise InputError(f"{problems[0][0]}: {problems[0][2]}", path=nights_dir)
    search = search_definitions(reported, nights, metric="rmssd_ms",
                                progress=None if not quiet else False)
    agree_dir = out / "agreement"
    agree_dir.mkdir(parents=True, exist_ok=True)
    _write_csv(agree_dir / "definition_search.csv", search.table)
    best = search.results[search.best]
    _write_csv(agree_dir / "agreement_best.csv", best.table)
    atomic_write_text(agree_dir / "agreement.txt",
                      search.summary_text() + "\n" + best.summary_text(), fsync=False)
    return search


def _phases(meta):
    return [(p["phase"], p["first_day"], p["last_day"]) for p in meta.get("calendar", [])]


def _figures(folder, out, run, *, load, meta, ectopy, agree, note):
    from ..batch import safe_name
    from ..clean import clean
    from ..io import read
    from ..plots import athlete_trend, recording_diagnostic, squad_overview

    fig_dir = out / "figures"
    fig_dir.mkdir(parents=True, exist_ok=True)
    written = []
    table = run.table
    phases = _phases(meta)
    written.append(squad_overview(table, fig_dir / "squad_overview.png", phases=phases) and
                   fig_dir / "squad_overview.png")
    for subject in sorted(table["subject"].astype(str).unique()):
        # subject ids are untrusted text: one safe file-name component, never a path
        path = fig_dir / f"trend_{safe_name(subject)}.png"
        athlete_trend(table, subject, path, load=load, phases=phases)
        written.append(path)
    note(f"{len(written)} trend and overview figures")
    # diagnostics: the most-corrected usable morning, and a morning of the athlete with the most
    # premature beats
    recs = run.recordings
    picks = []
    usable = recs[recs["quality"].isin(["ok", "flagged"])] if len(recs) else recs
    if len(usable):
        picks.append(("most_corrected", usable.sort_values("corrected_pct").iloc[-1]))
        if ectopy:
            top = max(ectopy, key=lambda s: ectopy[s]["per_hour"])
            mine = usable[usable["subject"].astype(str) == top]
            if len(mine):
                middle = mine.sort_values("source").iloc[len(mine) // 2]
                picks.append((f"ectopy_{safe_name(top)}", middle))
    for tag, row in picks:
        src = folder / "mornings" / str(row["source"])
        result = clean(read(src, subject=str(row["subject"])))
        path = fig_dir / f"diagnostic_{tag}.png"
        recording_diagnostic(result, path, window_s=(float(row["start_s"]), float(row["end_s"])),
                             title=f"{row['subject']} {row['date']} ({src.name})")
        written.append(path)
    if agree is not None:
        path = fig_dir / "bland_altman_nights.png"
        agree.results[agree.best].plot(path)
        written.append(path)
    note(f"{len(written)} figures in {fig_dir}")
    return written


# --------------------------------------------------------------------------------- summary
def _summary(run, *, lab, agree, ectopy, figures, out, meta, folder) -> str:
    from ..daily import flag_runs, run_since

    table = run.table
    lines = []
    lines.append("rrkit demo: the invented rowing squad (a simulation, not real people)")
    lines.append(f"data: {folder}")
    lines.append("")
    n_sub = table["subject"].nunique()
    first, last = min(table["date"]), max(table["date"])
    q = table["quality"].value_counts()
    lines.append(f"Mornings: {n_sub} athletes, {first} to {last}; "
                 + ", ".join(f"{int(q.get(k, 0))} {k}" for k in ("ok", "flagged", "rejected",
                                                                   "missing")))
    lines.append(f"  files: {run.counts_line()}")
    # below band this week
    week_start = last - __import__("datetime").timedelta(days=last.weekday())
    this_week = table[(table["date"] >= week_start) & table["below_band"].fillna(False)]
    lines.append("")
    lines.append(f"Below their ln-RMSSD band this week (from {week_start}):")
    names = sorted(this_week["subject"].astype(str).unique())
    if names:
        for s in names:
            lines.append(f"  {s}: below band since {run_since(table, s) or 'earlier this week'}")
    else:
        lines.append("  nobody")
    hr_up = table[(table["date"] >= week_start) & table["hr_above_band"].fillna(False)]
    hr_names = sorted(hr_up["subject"].astype(str).unique())
    lines.append("Resting heart rate (7-day mean) above its band this week: "
                 + (", ".join(hr_names) if hr_names else "nobody"))
    episodes = flag_runs(table)
    long_runs = {s: [r for r in runs if r[0] != r[1]] for s, runs in episodes.items()}
    lines.append("Every run of 7-day ln-RMSSD below the band this season (first - last day):")
    for s in sorted(long_runs):
        if long_runs[s]:
            lines.append(f"  {s}: " + "; ".join(f"{a} - {b}" for a, b in long_runs[s]))
    # failures
    lines.append("")
    errs = run.errors
    lines.append(f"Files that failed ({len(errs)}), see {run.outputs['errors_csv']}:")
    for r in errs.itertuples(index=False):
        msg = str(r.message)
        full = str(folder / "mornings" / str(r.path))
        if msg.startswith(full):  # the message names the file again: keep the rest
            msg = msg[len(full):].lstrip(":, ")
        lines.append(f"  {r.path}: {msg}")
    rej = table[table["quality"] == "rejected"]
    if len(rej):
        lines.append(f"Mornings rejected after reading ({len(rej)}):")
        for r in rej.itertuples(index=False):
            lines.append(f"  {r.subject} {r.date} {r.source}: {r.quality_reason}")
    # ectopy caution
    lines.append("")
    frequent = {s: d for s, d in ectopy.items() if d.get("n_caution", 0) > d["n_files"] / 2}
    if frequent:
        for s, d in sorted(frequent.items()):
            lines.append(f"CAUTION {s}: frequent premature beats, {d['per_hour']:.0f} per hour "
                         f"over {d['n_files']} mornings ({d['n_caution']} above the caution "
                         "level).")
        lines.append("  rrkit does not diagnose. Frequent premature beats belong with a "
                     "clinician: pass these recordings on, and do not read more into them here.")
    else:
        lines.append("No athlete's mornings show frequent premature beats.")
    # lab
    if lab is not None and len(lab):
        lines.append("")
        lines.append("Lab protocol (segments from the events table):")
        for r in lab.itertuples(index=False):
            lines.append(f"  {r.subject} {r.window:<18} HR {r.mean_hr_bpm:5.1f} bpm  "
                         f"RMSSD {r.rmssd_ms:6.1f} ms  LF/HF {r.lf_hf:5.2f}"
                         + ("  (note: breathing below the HF band)" if "breath" in str(r.notes)
                            else ""))
    # agreement
    if agree is not None:
        lines.append("")
        name, cleaning = agree.best
        st = agree.results[agree.best].stats
        lines.append(f"Wearable vs raw nights ({int(st['n'])} nights): closest definition "
                     f"{name!r} (cleaning {cleaning!r})")
        lines.append(f"  bias {st['bias']:+.1f} ms (95% CI {st['bias_ci_low']:+.1f} to "
                     f"{st['bias_ci_high']:+.1f}), limits of agreement {st['loa_low']:+.1f} to "
                     f"{st['loa_high']:+.1f} ms")
        ru = agree.runner_up
        if ru is not None:
            row = agree.table[(agree.table["definition"] == ru[0])
                              & (agree.table["cleaning"] == ru[1])].iloc[0]
            lines.append(f"  next: {ru[0]!r}, SD of differences {row['sd_ratio_to_best']:.1f} "
                         "times larger")
    lines.append("")
    lines.append(f"Outputs in {out}:")
    for k in ("daily_csv", "store", "errors_csv", "provenance"):
        if k in run.outputs:
            lines.append(f"  {k:<12} {run.outputs[k]}")
    lines.append(f"  {'figures':<12} {out / 'figures'} ({len(figures)} PNG files)")
    lines.append("")
    lines.append("rrkit is not a medical device and makes no diagnosis. Flags are prompts to "
                 "look; training decisions rest with qualified staff (docs/cautions.md).")
    return "\n".join(lines) + "\n"
