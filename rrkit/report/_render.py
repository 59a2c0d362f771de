"""Fill the page template (Jinja2, autoescaped) from a run's outputs and write the file."""

from __future__ import annotations

import base64
import datetime as dt
import hashlib
import json
import math
import os
from pathlib import Path

from .._atomic import atomic_write_text
from .._version import __version__
from ._figures import overview_figure, trend_figure
from ._load import RunFiles, load_run
from ._week import STATUS_TEXT, pick_week, week_rows

__all__ = ["render_report", "write_report"]

_TEMPLATE = "report.html.j2"
_STATUS_RANK = {"below": 0, "above": 1, "inside": 2, "no-band": 3, "no-value": 4}
#: settings (dotted path in the run's settings) -> label on the page, in page order
_KEY_SETTINGS = (
    ("window", "Analysis window in each recording"),
    ("cleaning.method", "Artifact detection"),
    ("cleaning.strategy", "Correction"),
    ("metrics.psd", "Spectrum"),
    ("days.tz", "Time zone of the dates"),
    ("days.wake_start", "Morning recordings start from"),
    ("days.wake_end", "Morning recordings start before"),
    ("days.pick", "Which recording of a day counts"),
    ("quality.reject_corrected_pct", "Rejected above this share of corrected intervals (%)"),
    ("quality.min_coverage", "Share of the window a recording must cover"),
    ("baselines.rolling_days", "Rolling window (days)"),
    ("baselines.rolling_min_days", "Valid mornings a 7-day value needs"),
    ("baselines.baseline_days", "Baseline length (days)"),
    ("baselines.baseline_min_days", "Valid mornings a baseline needs"),
    ("baselines.baseline_lag_days", "Baseline ends this many days before the date"),
    ("baselines.swc_sd", "SWC band half-width (baseline SDs)"),
    ("baselines.week_min_days", "Valid mornings a weekly value needs"),
)


def _environment():
    import jinja2

    env = jinja2.Environment(
        loader=jinja2.PackageLoader("rrkit.report", "templates"),
        autoescape=True,  # every value is escaped unless marked safe here
        undefined=jinja2.StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    env.filters["num"] = _num
    env.filters["sortkey"] = _sortkey
    env.filters["day"] = _day
    env.globals["names"] = _names
    env.globals["quality_text"] = _quality_text
    env.globals["tone"] = _tone
    return env


def _num(value, digits: int = 2) -> str:
    try:
        x = float(value)
    except (TypeError, ValueError):
        return "\u2013"
    return f"{x:.{digits}f}" if math.isfinite(x) else "\u2013"


def _sortkey(value) -> str:
    try:
        x = float(value)
    except (TypeError, ValueError):
        return ""
    return repr(x) if math.isfinite(x) else ""


def _day(value) -> str:
    if isinstance(value, str):
        value = dt.date.fromisoformat(value)
    return f"{value:%a} {value.day} {value:%b %Y}"


def _names(items) -> str:
    items = list(items)
    return ", ".join(items) if items else "nobody"


def _tone(metric: str, status: str) -> str:
    """Shading of a band cell: ``look`` for the direction that asks for a look (ln-RMSSD
    below, resting HR above), ``out`` for the other side, ``none`` without a band or value,
    ``in`` inside. The words and symbol in the cell say the same without colour."""
    if status in ("no-band", "no-value"):
        return "none"
    if status == "inside":
        return "in"
    concern = "below" if metric == "ln" else "above"
    return "look" if status == concern else "out"


def _quality_text(counts: dict) -> str:
    """``'5 ok, 1 flagged, 1 missing'`` (states with no morning left out)."""
    parts = [f"{n} {state}" for state, n in counts.items() if n]
    return ", ".join(parts) if parts else "no days"


def _csp_hash(text: str) -> str:
    digest = hashlib.sha256(text.encode("utf-8")).digest()
    return "'sha256-" + base64.b64encode(digest).decode("ascii") + "'"


def _flatten(obj, prefix: str = "") -> dict[str, object]:
    out: dict[str, object] = {}
    if isinstance(obj, dict):
        for k, v in obj.items():
            out.update(_flatten(v, f"{prefix}{k}."))
    else:
        out[prefix[:-1]] = obj
    return out


def _key_settings(settings: dict | None) -> list[tuple[str, str]]:
    if not settings:
        return []
    flat = _flatten(settings)
    return [(label, str(flat[path])) for path, label in _KEY_SETTINGS if path in flat]


def _setting(settings: dict | None, path: str, default):
    flat = _flatten(settings or {})
    return flat.get(path, default)


def _not_counted(table, cols, week) -> list[dict]:
    c = cols
    d = table[(table[c["date"]] >= week.monday) & (table[c["date"]] <= week.as_of)]
    out = []
    for _, r in d.sort_values([c["subject"], c["date"]]).iterrows():
        q = str(r[c["quality"]])
        reason = str(r[c["quality_reason"]]) if c.get("quality_reason") else ""
        if q in ("flagged", "rejected") or (q == "missing" and reason not in ("",
                                                                               "no recording")):
            out.append({"subject": str(r[c["subject"]]), "date": r[c["date"]], "quality": q,
                        "reason": reason or "\u2013",
                        "source": str(r[c["source"]]) if c.get("source") else ""})
    return out


def _caution_lines(rows) -> list[dict]:
    out = []
    for r in rows:
        if not r.cautions:
            continue
        out.append({"subject": r.subject, "n": len(r.cautions),
                    "dates": ", ".join(f"{d:%a} {d.day} {d:%b}" for d, _t, _q in r.cautions),
                    "noisy": sum(1 for _d, _t, q in r.cautions if q != "ok"),
                    "text": r.cautions[-1][1]})
    return out


def render_report(run: RunFiles, *, week=None, load=None, phases=None, title=None,
                  progress: bool = False) -> str:
    """The report page as text.

    Parameters
    ----------
    run : RunFiles
        What `rrkit.report.load_run` read.
    week, load, phases, title, progress
        As in `write_report`.

    Returns
    -------
    str
        One self-contained HTML document.
    """
    table, cols = run.table, run.columns
    wk = pick_week(table[cols["date"]], week)
    rows = week_rows(table, cols, wk,
                     min_ok_days=_setting(run.settings, "baselines.rolling_min_days", 3))
    overview = overview_figure(table, week=wk, rows=rows, phases=phases)
    athletes = []
    it = rows
    if progress:
        from tqdm import tqdm

        it = tqdm(rows, desc="rrkit report", unit="athlete", leave=False)
    for r in it:
        athletes.append({"row": r, "figure": trend_figure(table, cols, r.subject, week=wk,
                                                          row=r, load=load, phases=phases)})
    env = _environment()
    css = env.loader.get_source(env, "report.css")[0]
    script = env.loader.get_source(env, "sort.js")[0]
    csp = ("default-src 'none'; img-src data:; "
           f"style-src {_csp_hash(css)}; script-src {_csp_hash(script)}; "
           "base-uri 'none'; form-action 'none'")
    totals = {k: sum(r.counts[k] for r in rows) for k in ("ok", "flagged", "rejected",
                                                           "missing")}
    prov = run.provenance
    command = prov.get("command")
    from markupsafe import Markup

    context = {
        "title": title or "Squad report",
        "version": __version__,
        "run_version": run.run_version,
        "generated": dt.datetime.now(dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
        "origin": str(run.origin),
        "command": " ".join(map(str, command)) if isinstance(command, list) else command,
        "week": wk,
        "rows": rows,
        "athletes": athletes,
        "overview": overview,
        "below": [r.subject for r in rows if r.ln_status == "below"],
        "hr_above": [r.subject for r in rows if r.hr_status == "above"],
        "cautioned": [r.subject for r in rows if r.cautions],
        "caution_lines": _caution_lines(rows),
        "totals": totals,
        "not_counted": _not_counted(table, cols, wk),
        "errors": run.errors.to_dict("records"),
        "errors_found": run.errors_found,
        "n_failed": len(run.errors),
        "status_text": STATUS_TEXT,
        "status_rank": _STATUS_RANK,
        "swc_sd": _setting(run.settings, "baselines.swc_sd", 0.5),
        "baseline_days": _setting(run.settings, "baselines.baseline_days", 60),
        "baseline_lag": _setting(run.settings, "baselines.baseline_lag_days", 7),
        "baseline_min": _setting(run.settings, "baselines.baseline_min_days", 14),
        "rolling_min": _setting(run.settings, "baselines.rolling_min_days", 3),
        "key_settings": _key_settings(run.settings),
        "all_settings": (json.dumps(run.settings, indent=1, sort_keys=True)
                         if run.settings else ""),
        # our own stylesheet and script, hashed into the page's content-security policy
        "css": Markup(css),
        "script": Markup(script),
        "csp": csp,
    }
    return env.get_template(_TEMPLATE).render(**context)


def write_report(source: str | os.PathLike[str], path: str | os.PathLike[str] = "report.html",
                 *, week=None, load=None, phases=None, title: str | None = None,
                 progress: bool = False) -> Path:
    """Write the squad report of a daily run as one self-contained HTML file.

    Parameters
    ----------
    source : path-like
        The output folder of `rrkit daily` / `rrkit.run_daily`, its ``store.h5`` or its
        ``daily.csv`` (``errors.csv`` and ``provenance.json`` are read from beside it).
    path : path-like
        The HTML file to write (default ``report.html``); written atomically.
    week : date or ISO string, optional
        Any day of the calendar week (Monday to Sunday) to show; default the week of the
        table's last date.
    load : pandas.DataFrame, optional
        Training load (``date, subject, load_au``) drawn in the athletes' trends.
    phases : sequence of (name, first_date, last_date), optional
        Training phases labelled in the figures.
    title : str, optional
        The page's heading (default "Squad report").
    progress : bool
        Show a progress bar over the athletes' figures on standard error.

    Returns
    -------
    Path
        The file written.

    Notes
    -----
    Figures are embedded as base64 PNG with text alternatives, the style sheet and the small
    optional sorting script are inline, and a content-security policy in the page forbids
    every request, so the page opens offline, can be sent as one attachment and prints on
    A4. Every text that comes from files (subject ids, file names, reasons) is escaped.

    rrkit is not a medical device and makes no diagnosis; the page says so and defers
    premature-beat cautions to a clinician.
    """
    run = load_run(source)
    html = render_report(run, week=week, load=load, phases=phases, title=title,
                         progress=progress)
    out = Path(path)
    if out.parent != Path():
        out.parent.mkdir(parents=True, exist_ok=True)
    atomic_write_text(out, html, fsync=False)
    return out
