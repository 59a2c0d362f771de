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
    agree = _nights(folder, out, quiet=quiet)

    prog.step(4, "figures")
    load = pd.read_csv(folder / "training_load.csv") if (folder / "training_load.csv").is_file() \
        else None
    ectopy = _ectopy_by_subject(daily_run.outputs["store"])
    figures = _figures(folder, out, daily_run, load=load, meta=meta, ectopy=ectopy, agree=agree,
                       note=prog.note)

    modelling = _modelling(folder, out, daily_run.table, note=prog.note)

    prog.step(5, "summary")
    text = _summary(daily_run, lab=lab, agree=agree, ectopy=ectopy, figures=figures, out=out,
                    meta=meta, folder=folder) + modelling
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
                     settings=DailySettings(tz=tz), jobs=jobs,
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


def _nights(folder: Path, out: Path, *, quiet: bool = True):
    """Recompute the nights under every reference definition and rank them against the
    wearable's reported values; writes the ranking and the best combination's statistics."""
    import pandas as pd

    from .._agreement_search import search_definitions
    from ..batch import read_manifest
    from ..io import read

    nights_dir = folder / "nights"
    if not (nights_dir / "wearable_reports.csv").is_file():
        return None
    reported = pd.read_csv(nights_dir / "wearable_reports.csv")
    entries, problems = read_manifest(nights_dir / "manifest.csv")
    if problems:
        raise InputError(f"{nights_dir / 'manifest.csv'}: {problems[0][2]}")
    nights = []
    for path, (_line, row) in sorted(entries.items()):
        rec = read(path, subject=row["subject"])
        nights.append(rec.replace(start=row["start"], subject=row["subject"]))
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


def _ectopy_by_subject(store_path: Path) -> dict[str, dict]:
    """Premature beats per hour, per subject, from the cleaning audits in the batch's store.

    ``per_hour`` is the mean over the subject's recordings of the audit's premature beats per
    hour (the mornings all last about 6 minutes); ``n_caution`` counts the recordings whose
    audit carries the frequent-premature-beats caution.
    """
    from ..io.store import read_store_index

    index = read_store_index(store_path)
    per: dict[str, dict] = {}
    for row in index.itertuples(index=False):
        summ = json.loads(row.clean_summary) if isinstance(row.clean_summary, str) else {}
        d = per.setdefault(str(row.subject), {"rates": [], "n_files": 0, "n_caution": 0})
        d["rates"].append(float(summ.get("ectopic_per_hour", float("nan"))))
        d["n_files"] += 1
        if summ.get("caution"):
            d["n_caution"] += 1
            d["caution"] = summ["caution"]
    for d in per.values():
        rates = [r for r in d.pop("rates") if r == r]
        d["per_hour"] = sum(rates) / len(rates) if rates else float("nan")
    return per


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


def _modelling(folder: Path, out: Path, table, *, note) -> str:
    """Sleep and load against the mornings, within vs between athletes vs a naive pooled fit,
    with what the simulation planted; writes model/ (tables, figures). Empty without the log."""
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
               __import__("pandas").concat([sleep.assign(outcome="ln_rmssd"),
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
def _since(table, subject: str) -> str | None:
    """First date of the current unbroken run of below-band days for a subject."""
    d = table[table["subject"].astype(str) == subject].sort_values("date")
    flags = d["below_band"].fillna(False).astype(bool).to_numpy()
    if not flags.size or not flags[-1]:
        return None
    i = flags.size - 1
    while i > 0 and flags[i - 1]:
        i -= 1
    return str(d["date"].iloc[i])


def below_band_episodes(table) -> dict[str, list[tuple[str, str]]]:
    """Per subject, the (first, last) dates of each run of consecutive below-band days."""
    out: dict[str, list[tuple[str, str]]] = {}
    for subject, d in table.sort_values("date").groupby("subject"):
        flags = d["below_band"].fillna(False).astype(bool).to_numpy()
        dates = [str(x) for x in d["date"]]
        runs, start = [], None
        for i, f in enumerate(flags):
            if f and start is None:
                start = i
            if (not f or i == flags.size - 1) and start is not None:
                end = i if f else i - 1
                runs.append((dates[start], dates[end]))
                start = None
        out[str(subject)] = runs
    return out


def _summary(run, *, lab, agree, ectopy, figures, out, meta, folder) -> str:
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
            lines.append(f"  {s}: below band since {_since(table, s) or 'earlier this week'}")
    else:
        lines.append("  nobody")
    hr_up = table[(table["date"] >= week_start) & table["hr_above_band"].fillna(False)]
    hr_names = sorted(hr_up["subject"].astype(str).unique())
    lines.append("Resting heart rate (7-day mean) above its band this week: "
                 + (", ".join(hr_names) if hr_names else "nobody"))
    episodes = below_band_episodes(table)
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
