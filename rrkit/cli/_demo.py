"""``rrkit demo``: the whole job on the bundled invented squad, in one command.

Console example (from a checkout of the repository)::

    $ rrkit demo                       # writes rrkit-demo-output/
    $ rrkit demo /tmp/out --data data_samples --jobs 2

The data are a simulation of invented people (see ``data_samples/README.md``).
"""

from __future__ import annotations

import json
import time
from datetime import timedelta
from pathlib import Path

import click

from .._atomic import atomic_write_text
from ..errors import InputError

DEFAULT_OUTDIR = "rrkit-demo-output"
_MARKER = "squad.json"
_STEPS = 6


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

    prog.step(4, "exercise tests: DFA alpha1 thresholds of the ramp tests")
    ramps = _ramps(folder, out)

    prog.step(5, "figures")
    load = pd.read_csv(folder / "training_load.csv") if (folder / "training_load.csv").is_file() \
        else None
    ectopy = premature_beat_rates(daily_run.outputs["store"])
    figures = _figures(folder, out, daily_run, load=load, meta=meta, ectopy=ectopy, agree=agree,
                       note=prog.note)

    report = _report(out, load=load, meta=meta)
    prog.note(f"squad report {report}")
    modelling = _modelling(folder, out, daily_run.table, note=prog.note)

    prog.step(6, "summary")
    text = _summary(daily_run, lab=lab, agree=agree, ectopy=ectopy, figures=figures, out=out,
                    meta=meta, folder=folder, report=report, ramps=ramps, modelling=modelling)
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


def _ramps(folder: Path, out: Path) -> dict:
    """Analyse every ``ramp/<subject>_ramp.txt`` with its stage table; subject -> result."""
    from ..exercise import ramp_test
    from ..io import read, read_loads
    from ._ramp import write_outputs

    results = {}
    for path in sorted((folder / "ramp").glob("*_ramp.txt")):
        subject = path.name.removesuffix("_ramp.txt")
        stages = path.with_name(f"{subject}_stages.csv")
        res = ramp_test(read(path, subject=subject),
                        loads=read_loads(stages) if stages.is_file() else None)
        write_outputs(res, out / "ramp" / subject, title=f"Exercise test {subject} (invented)")
        results[subject] = res
    planted = folder / "ramp" / "planted.json"
    truth = json.loads(planted.read_text(encoding="utf-8")) if planted.is_file() else {}
    return {"results": results, "planted": truth}


def _ramp_summary(ramps: dict, out: Path) -> str:
    from ..exercise import RAMP_CAUTION
    from ._ramp import threshold_lines

    if not ramps["results"]:
        return ""
    lines = ["", "Exercise tests (DFA alpha1 in 2-minute windows; thresholds planted in the "
             "simulation shown for comparison):"]
    for subject, res in ramps["results"].items():
        hr = ramps["planted"].get(subject, {}).get("hr_bpm", {})
        lines.append(f"  {subject}: planted "
                     + ", ".join(f"alpha1 {k} at {v:.0f} bpm" for k, v in sorted(hr.items(),
                                                                                reverse=True)))
        lines += [f"    {line.strip()}" for line in threshold_lines(res)]
        lines.append(f"    figure and tables: {out / 'ramp' / subject}")
    lines.append(f"  {RAMP_CAUTION}")
    return "\n".join(lines) + "\n"


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
    from ._agree import OUTPUTS  # the same file names as `rrkit agree --search`

    agree_dir = out / "agreement"
    agree_dir.mkdir(parents=True, exist_ok=True)
    _write_csv(agree_dir / OUTPUTS["search"], search.table)
    best = search.results[search.best]
    stats = best.table
    stats.insert(0, "definition", search.best[0])
    stats.insert(1, "cleaning", search.best[1])
    _write_csv(agree_dir / OUTPUTS["stats"], stats)
    _write_csv(agree_dir / OUTPUTS["pairs"], best.pairs)
    ref = search.reference[(search.reference["definition"] == search.best[0])
                           & (search.reference["cleaning"] == search.best[1])]
    _write_csv(agree_dir / OUTPUTS["reference"], ref)
    atomic_write_text(agree_dir / OUTPUTS["summary"],
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
    if agree is not None:  # beside the agreement tables, named as `rrkit agree` names it
        from ._agree import OUTPUTS

        path = out / "agreement" / OUTPUTS["png"]
        agree.results[agree.best].plot(path)
        written.append(path)
    note(f"{len(written)} figures in {fig_dir}")
    return written


def _report(out: Path, *, load, meta) -> Path:
    """The squad report page of the demo's daily run (`rrkit report` on ``out/daily``)."""
    from ..report import write_report

    return write_report(out / "daily", out / "report.html", load=load, phases=_phases(meta),
                        title="Demo squad report (invented athletes)")


def _modelling(folder: Path, out: Path, table, *, note) -> str:
    """Sleep and load against the mornings, within vs between athletes vs a naive pooled fit,
    with what the simulation planted; writes model/ (tables, figures). Empty without the log."""
    import pandas as pd

    from .. import covariates as cov
    from ..model import CAUTION, compare_pooled, plain_lines, write_outputs
    from ..simulate import _squad_log as planted

    paths = [folder / "training_load.csv", folder / "daily_log.csv"]
    if not all(p.is_file() for p in paths):
        return ""
    tabs = [cov.read(p) for p in paths]
    units = {**tabs[0].units, **tabs[1].units}
    joined = cov.join(cov.join(table, tabs[0], terms=["load_au_lag1"]), tabs[1])
    try:
        sleep, sleep_lines, fit_sleep = compare_pooled(joined, term="sleep_h",
                                                       adjust=("load_au_lag1",), units=units)
        load, load_lines, _fit = compare_pooled(joined, term="load_au_lag1",
                                                outcome="wellness_pts", adjust=("sleep_h",),
                                                units=units)
    except InputError as exc:  # a reduced squad too small for the squad model
        note(f"modelling skipped: {exc}")
        return f"\nModelling skipped: {exc}\n"

    folder_out = out / "model"
    write_outputs(fit_sleep, folder_out, partial_term="sleep_h_within",
                  lines=sleep_lines + load_lines)
    _write_csv(folder_out / "within_between_pooled.csv",
               pd.concat([sleep.assign(outcome="ln_rmssd"),
                          load.assign(outcome="wellness_pts")]))
    note(f"modelling: within vs between athletes vs pooled, in {folder_out}")
    half = planted.SLEEP_WITHIN_LN_PER_H / 2
    lines = ["", "Modelling the season (rrkit model; the simulation planted the true relations):",
             f"  The night's sleep and that morning's ln-RMSSD, {fit_sleep.formula}",
             *(f"    {x}" for x in sleep_lines),
             f"    planted: {half:+.3f} per 0.5 h within athletes; between athletes the ones "
             "with higher ln-RMSSD sleep less.",
             "  Previous day's load and the wellness score (5-25):",
             *(f"    {x}" for x in load_lines[:1]),
             f"    planted: {planted.WELLNESS_PER_500AU:+.2f} per 500 AU within athletes.",
             "  The same load against ln-RMSSD (the mornings were simulated with training "
             "phases but no day-to-day load term):",
             *(f"    {x}" for x in plain_lines(fit_sleep, model="mixed")
               if "previous day's load, within" in x),
             f"  {CAUTION}"]
    return "\n".join(lines) + "\n"


# --------------------------------------------------------------------------------- summary
def _breathing_remark(notes: str) -> str:
    """The lab line's short remark on the breathing note of its window."""
    if "breathing at " in notes and "below the HF band" in notes:
        return "  (breathing given below the HF band: LF/HF holds respiratory power)"
    if "dominant narrow peak" in notes:
        return "  (a dominant slow peak: slow breathing or a ~0.1 Hz oscillation)"
    return ""


def _summary(run, *, lab, agree, ectopy, figures, out, meta, folder, report=None,
             ramps=None, modelling: str = "") -> str:
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
    week_start = last - timedelta(days=last.weekday())
    this_week = table[(table["date"] >= week_start) & table["below_swc"].fillna(False)]
    lines.append("")
    lines.append(f"Below their ln-RMSSD SWC band this week (from {week_start}):")
    names = sorted(this_week["subject"].astype(str).unique())
    if names:
        for s in names:
            lines.append(f"  {s}: below the SWC band since "
                         f"{run_since(table, s) or 'earlier this week'}")
    else:
        lines.append("  nobody")
    hr_up = table[(table["date"] >= week_start) & table["hr_above_swc"].fillna(False)]
    hr_names = sorted(hr_up["subject"].astype(str).unique())
    lines.append("Resting heart rate (7-day mean) above its SWC band this week: "
                 + (", ".join(hr_names) if hr_names else "nobody"))
    episodes = flag_runs(table)
    long_runs = {s: [r for r in runs if r[0] != r[1]] for s, runs in episodes.items()}
    lines.append("Every run of 7-day ln-RMSSD below the SWC band this season (first - last day):")
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
    from .._premature import caution_counts

    # one counting rule with `rrkit daily` and the trend figures: the day's morning window
    counts = caution_counts(table)
    frequent = {s: c for s, c in counts.items() if c.firm and c.majority}
    if frequent:
        for s, c in sorted(frequent.items()):
            rate = ectopy.get(s, {}).get("per_hour", float("nan"))
            lines.append(f"CAUTION {s}: the premature-beat caution on {c.text()}"
                         + (f" (about {rate:.0f} premature beats per hour)" if rate == rate
                            else "") + ".")
        lines.append("  rrkit does not diagnose. Frequent premature beats belong with a "
                     "clinician: pass these recordings on, and do not read more into them here.")
    else:
        lines.append("No athlete's mornings show frequent premature beats.")
    # lab
    if lab is not None and len(lab):
        lines.append("")
        lines.append("Lab protocol (segments from the events table):")
        for r in lab.itertuples(index=False):
            resp = (f"  breathing {r.resp_hz * 60:4.1f}/min" if r.resp_hz == r.resp_hz
                    else "  breathing    -    ")
            lines.append(f"  {r.subject} {r.window:<18} HR {r.mean_hr_bpm:5.1f} bpm  "
                         f"RMSSD {r.rmssd_ms:6.1f} ms  LF/HF {r.lf_hf:5.2f}{resp}"
                         + _breathing_remark(str(r.notes)))
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
    if ramps:
        lines += _ramp_summary(ramps, out).rstrip("\n").split("\n")
    if modelling:
        lines += modelling.rstrip("\n").split("\n")
    lines.append("")
    lines.append(f"Outputs in {out}:")
    for k in ("daily_csv", "store", "errors_csv", "provenance"):
        if k in run.outputs:
            lines.append(f"  {k:<12} {run.outputs[k]}")
    lines.append(f"  {'agreement':<12} {out / 'agreement'} (the files of rrkit agree --search)")
    n_fig = sum(1 for f in figures if Path(f).parent == out / "figures")
    lines.append(f"  {'figures':<12} {out / 'figures'} ({n_fig} PNG files)")
    if report is not None:
        lines.append(f"  {'report':<12} {report} (open it in a browser)")
    lines.append("")
    lines.append("rrkit is not a medical device and makes no diagnosis. Flags are prompts to "
                 "look; training decisions rest with qualified staff (docs/cautions.md).")
    return "\n".join(lines) + "\n"
