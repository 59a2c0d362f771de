"""`rrkit report`: the page rendered from a demo-squad run, self-contained, escaped, correct.

The page is parsed with the standard library's `html.parser`; the numbers in its week table
are compared with the run's ``daily.csv`` read independently with the `csv` module (the report
itself reads the HDF5 store), and the week's Monday with `datetime.date.isocalendar`.

The browser tests open the page in Debian's headless Chromium, driven by Playwright, with a
fresh profile and every background service off; they take a screenshot and check what a reader
sees: the section headings, one week-table row per athlete, no console error, no request other
than the file itself, a screenshot that is not blank, the same content with JavaScript off, and
no script run from hostile text. They skip, saying why, where Playwright or Chromium is missing
(`.ci/run` installs Chromium and the test extras Playwright, so in CI they always run).
Playwright's own browser downloads are never used: the system browser is launched by its path.
"""

from __future__ import annotations

import base64
import csv
import datetime as dt
import importlib.util
import os
import re
import shutil
from html.parser import HTMLParser
from pathlib import Path

import pandas as pd
import pytest

from rrkit import InputError
from rrkit.cli import main

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"
HEADINGS = ["The week at a glance", "Squad overview", "Athletes", "Files that failed",
            "Cautions", "Settings and version"]
# a data URI's payload is base64 text, in which '//' or 'http' may occur by chance
_DATA_URI = re.compile(r"data:image/png;base64,[A-Za-z0-9+/=]+")
EVIL_SUBJECT = "<script>alert(1)</script>"
EVIL_FILE = '"><img src=x onerror=alert(2)>.txt'


class Page(HTMLParser):
    """The parts of a page the tests look at (standard-library parser)."""

    def __init__(self, text: str) -> None:
        super().__init__(convert_charrefs=True)
        self.headings: dict[str, list[str]] = {"h1": [], "h2": [], "h3": []}
        self.tables: dict[str, list[list[str]]] = {}
        self.images: list[dict] = []
        self.urls: list[tuple[str, str, str]] = []
        self.n_scripts = 0
        self.policy = ""
        self._heading = None
        self._table = None
        self._row = None
        self._cell = None
        self._in_body = False
        self.feed(text)

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        for name in ("src", "href", "action", "srcset", "poster", "data"):
            if name in a:
                self.urls.append((tag, name, a[name] or ""))
        if tag == "script":
            self.n_scripts += 1
        if tag in self.headings:
            self._heading = [tag, ""]
        if tag == "table":
            self._table = a.get("id", f"table-{len(self.tables)}")
            self.tables[self._table] = []
        if tag == "tbody":
            self._in_body = True
        if tag == "tr" and self._in_body:
            self._row = []
        if tag in ("td", "th") and self._row is not None:
            self._cell = ""
        if tag == "img":
            self.images.append(a)
        if tag == "meta" and "http-equiv" in a:
            self.policy = a.get("content", "")

    def handle_endtag(self, tag):
        if self._heading and tag == self._heading[0]:
            self.headings[tag].append(" ".join(self._heading[1].split()))
            self._heading = None
        if tag in ("td", "th") and self._cell is not None and self._row is not None:
            self._row.append(" ".join(self._cell.split()))
            self._cell = None
        if tag == "tr" and self._row is not None:
            self.tables[self._table].append(self._row)
            self._row = None
        if tag == "tbody":
            self._in_body = False

    def handle_data(self, data):
        if self._heading:
            self._heading[1] += data
        if self._cell is not None:
            self._cell += data


@pytest.fixture(scope="module")
def season(tmp_path_factory):
    """4 invented athletes x 4 weeks of the demo squad's generator, through `run_daily`
    (bands are defined from day 14, so the last weeks have flags)."""
    from rrkit.batch import run_daily
    from rrkit.daily import DailySettings
    from rrkit.simulate import squad

    root = tmp_path_factory.mktemp("report_season")
    data = root / "data"
    squad.generate_squad(data, settings=squad.SquadSettings(n_athletes=4, n_weeks=4,
                                                            nights=False))
    out = root / "daily"
    run = run_daily(data / "mornings", out, manifest=data / "mornings" / "manifest.csv",
                    settings=DailySettings.from_options(tz="Europe/Berlin"), jobs=1,
                    progress=False)
    load = pd.read_csv(data / "training_load.csv")
    return out, run, load


@pytest.fixture(scope="module")
def page(season, tmp_path_factory):
    from rrkit.report import write_report

    out, _run, load = season
    path = write_report(out, tmp_path_factory.mktemp("report_page") / "report.html",
                        load=load)
    return path, path.read_text(encoding="utf-8")


def _csv_rows(path: Path) -> list[dict]:
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


# ------------------------------------------------------------------ content
def test_page_has_every_section_and_one_row_per_athlete(page, season):
    _path, text = page
    _out, run, _load = season
    p = Page(text)
    assert p.headings["h2"] == HEADINGS
    subjects = sorted(run.table["subject"].astype(str).unique())
    assert [r[0] for r in p.tables["week-table"]] == subjects
    assert p.headings["h3"][-len(subjects):] == subjects  # one trend section per athlete
    assert "not a medical device" in text
    assert "go to a clinician" in text


def test_week_table_numbers_are_the_daily_tables(page, season):
    """Each athlete's 7-day ln-RMSSD and resting HR in the page are the values of daily.csv
    (read here with the csv module) on the last date; the week is the ISO week of that date."""
    _path, text = page
    out, _run, _load = season
    rows = _csv_rows(out / "daily.csv")
    last = max(dt.date.fromisoformat(r["date"]) for r in rows)
    iso = last.isocalendar()
    monday = dt.date.fromisocalendar(iso.year, iso.week, 1)
    assert f"Week of {monday:%a} {monday.day} {monday:%b %Y}" in text
    table = {r[0]: r for r in Page(text).tables["week-table"]}
    for r in rows:
        if r["date"] != last.isoformat():
            continue
        cells = table[r["subject"]]
        ln = f"{float(r['ln_rmssd_7d']):.2f}" if r["ln_rmssd_7d"] else "\u2013"
        assert cells[1] == ln
        hr = f"{float(r['mean_hr_bpm_7d']):.1f} bpm" if r["mean_hr_bpm_7d"] else "\u2013 bpm"
        assert cells[3] == hr
        if r["ln_rmssd_swc_low"]:
            assert (f"band {float(r['ln_rmssd_swc_low']):.2f}\u2013"
                    f"{float(r['ln_rmssd_swc_high']):.2f}") in cells[2]
        word = {"True": "below band"}.get(r["below_swc"])
        if word is None and r["above_swc"] == "True":
            word = "above band"
        if word is None and r["ln_rmssd_swc_low"] and r["ln_rmssd_7d"]:
            word = "in band"
        if word is not None:
            assert word in cells[2], (r["subject"], cells[2])
        week_ok = int(r["week_ok_days"])
        assert cells[5].startswith(f"{week_ok} of {int(r['week_days'])}")


def test_figures_are_embedded_pngs_with_text_alternatives(page, season):
    _path, text = page
    _out, run, _load = season
    images = Page(text).images
    assert len(images) == 1 + run.table["subject"].nunique()  # overview + one trend each
    for img in images:
        assert img["src"].startswith("data:image/png;base64,")
        png = base64.b64decode(img["src"].split(",", 1)[1])
        assert png[:8] == PNG_MAGIC
        assert len(img.get("alt", "")) > 80  # a sentence, not a file name
    assert "R01's morning ln-RMSSD" in images[1]["alt"]


def test_failed_files_and_their_reasons_are_listed(page, season):
    _path, text = page
    out, _run, _load = season
    errors = _csv_rows(out / "errors.csv")
    assert errors, "the squad's story puts a broken file in the first weeks"
    listed = {r[0]: r for r in Page(text).tables["errors-table"]}
    for e in errors:
        assert e["path"] in listed
        # the page shows the message without the folder the file was in
        assert listed[e["path"]][2] in e["message"]


def test_settings_and_versions_are_shown(page):
    from rrkit import __version__

    _path, text = page
    assert f"rrkit {__version__}" in text
    assert "Europe/Berlin" in text
    assert "SWC band half-width (baseline SDs)" in text


# ------------------------------------------------------------------ self-contained
def test_page_makes_no_external_reference(page):
    _path, text = page
    p = Page(text)
    for tag, name, value in p.urls:
        assert value.startswith(("data:image/png;base64,", "#")), (tag, name, value[:60])
    rest = _DATA_URI.sub("", text)
    # the only 'http' allowed is the name of the meta element's http-equiv attribute
    assert "http" not in rest.replace('http-equiv="Content-Security-Policy"', "")
    assert "//" not in rest
    for pattern in ("url(", "@import", "<link", "<iframe", "<object", "<embed", "src=\"/",
                    "fetch(", "XMLHttpRequest"):
        assert pattern not in rest, pattern
    assert p.n_scripts == 1  # the optional sorting script, nothing else
    # the page forbids every request, and only its own style sheet and script run
    policy = dict(part.strip().split(" ", 1) for part in p.policy.split(";"))
    assert policy["default-src"] == "'none'"
    assert policy["img-src"] == "data:"
    assert policy["script-src"].startswith("'sha256-")
    assert policy["style-src"].startswith("'sha256-")


def test_page_is_written_whole(season, tmp_path):
    from rrkit.report import write_report

    out, _run, _load = season
    path = write_report(out, tmp_path / "sub" / "r.html")
    assert path.read_text(encoding="utf-8").rstrip().endswith("</html>")
    assert not [p for p in path.parent.iterdir() if p.name != "r.html"]  # no temporary left


# ------------------------------------------------------------------ untrusted text
@pytest.fixture(scope="module")
def hostile_folder(season, tmp_path_factory):
    """The run's daily.csv with one subject renamed to a script tag, and errors.csv with a
    file name that closes an attribute and opens an image tag (no store: the CSV is read)."""
    out, _run, _load = season
    folder = tmp_path_factory.mktemp("hostile")
    daily = pd.read_csv(out / "daily.csv", dtype={"subject": str})
    daily["subject"] = daily["subject"].replace({"R01": EVIL_SUBJECT})
    daily.loc[daily["subject"] == "R02", "quality_reason"] = "<b>bold</b> & 'quoted'"
    daily.to_csv(folder / "daily.csv", index=False)
    errors = pd.DataFrame({"path": [EVIL_FILE], "error_type": ["InputError"],
                           "message": [f"/data/{EVIL_FILE}: <svg onload=alert(3)>"]})
    errors.to_csv(folder / "errors.csv", index=False)
    shutil.copy(out / "provenance.json", folder / "provenance.json")
    return folder


def test_subject_ids_and_file_names_are_escaped(hostile_folder, tmp_path):
    from rrkit.report import write_report

    text = write_report(hostile_folder, tmp_path / "r.html").read_text(encoding="utf-8")
    assert EVIL_SUBJECT not in text
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in text
    assert "<img src=x" not in text
    assert "&lt;img src=x onerror=alert(2)&gt;" in text
    assert "<svg onload" not in text
    assert "<b>bold</b>" not in text
    p = Page(text)
    assert p.n_scripts == 1
    assert all(img["src"].startswith("data:") for img in p.images)
    # the id reads back as text where it belongs
    assert EVIL_SUBJECT in [r[0] for r in p.tables["week-table"]]
    assert EVIL_FILE in [r[0] for r in p.tables["errors-table"]]


# ------------------------------------------------------------------ weeks and columns
def test_week_option_picks_the_calendar_week(season, tmp_path):
    from rrkit.report import load_run, render_report

    out, _run, _load = season
    run = load_run(out / "daily.csv")  # the CSV path reads the same table
    text = render_report(run, week="2026-01-14")  # a Wednesday
    assert "Week of Mon 12 Jan 2026 to Sun 18 Jan 2026" in text
    with pytest.raises(InputError, match="outside the daily table"):
        render_report(run, week="2025-06-01")
    with pytest.raises(InputError, match="week must be a date"):
        render_report(run, week="14/01/2026")


def test_renamed_columns_are_read_through_the_mapping(season):
    """The swc wording of the band columns resolves through the one mapping."""
    from rrkit.report._columns import resolve_columns
    from rrkit.report._load import _normalise
    from rrkit.report._week import pick_week, week_rows

    out, _run, _load = season
    old = pd.read_csv(out / "daily.csv", dtype={"subject": str})
    new = old.rename(columns={"below_band": "below_swc", "above_band": "above_swc",
                              "ln_rmssd_band_low": "ln_rmssd_swc_low",
                              "ln_rmssd_band_high": "ln_rmssd_swc_high"})
    got = {}
    for name, table in (("old", old), ("new", new)):
        cols = resolve_columns(table.columns)
        t = _normalise(table, cols, Path("x"))
        wk = pick_week(t[cols["date"]])
        got[name] = week_rows(t, cols, wk)
    assert got["new"] == got["old"]
    assert resolve_columns(new.columns)["ln_below"] == "below_swc"


def test_not_a_daily_table_is_one_clear_error(season, tmp_path):
    from rrkit.report import load_run

    out, _run, _load = season
    with pytest.raises(InputError, match="is not a daily table: it lacks"):
        load_run(out / "errors.csv")
    with pytest.raises(InputError, match="holds no daily table"):
        load_run(tmp_path)


# ------------------------------------------------------------------ command line
def test_cli_writes_the_report(season, tmp_path, capsys):
    out, _run, _load = season
    dest = tmp_path / "page.html"
    assert main(["report", str(out), "-o", str(dest), "--no-progress"]) == 0
    assert f"wrote {dest}" in capsys.readouterr().out
    assert Page(dest.read_text(encoding="utf-8")).headings["h2"] == HEADINGS
    store = out / "store.h5"
    assert main(["report", str(store), "-o", str(tmp_path / "s.html"),
                 "--week", "2026-01-20", "--no-progress"]) == 0


@pytest.mark.parametrize(("args", "message"), [
    (["--week", "yesterday"], "--week must be a date YYYY-MM-DD"),
    (["--week", "2030-01-01"], "outside the daily table"),
])
def test_cli_usage_errors_are_one_line(season, tmp_path, capsys, args, message):
    out, _run, _load = season
    rc = main(["report", str(out), "-o", str(tmp_path / "r.html"), *args])
    err = capsys.readouterr().err
    assert rc == 2
    assert err.startswith("rrkit: error: ")
    assert message in err
    assert len(err.strip().splitlines()) == 1
    assert not (tmp_path / "r.html").exists()


# ------------------------------------------------------------------ a real browser
CHROMIUM = Path(os.environ.get("RRKIT_CHROMIUM", "/usr/bin/chromium"))
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync"]


def browser(test):
    """Skip, saying why, where Playwright or the system Chromium is missing."""
    test = pytest.mark.skipif(
        importlib.util.find_spec("playwright") is None,
        reason="Playwright for Python is not installed (pip install playwright; it is in the "
               "test extras)")(test)
    return pytest.mark.skipif(
        not CHROMIUM.is_file(),
        reason=f"no Chromium at {CHROMIUM} (Debian: apt-get install chromium; or set "
               "RRKIT_CHROMIUM)")(test)


def _open(pw, profile: Path, *, javascript: bool = True):
    """A fresh browser context on the system Chromium (never a downloaded build)."""
    return pw.chromium.launch_persistent_context(
        str(profile), executable_path=str(CHROMIUM), args=FLAGS, headless=True,
        java_script_enabled=javascript, viewport={"width": 1280, "height": 900},
        offline=True)


def _visit(ctx, path: Path):
    """Open ``path``; return the page and what it logged, requested and popped up."""
    page = ctx.new_page()
    seen = {"console": [], "errors": [], "requests": [], "dialogs": []}
    page.on("console", lambda m: seen["console"].append((m.type, m.text)))
    page.on("pageerror", lambda e: seen["errors"].append(str(e)))
    page.on("request", lambda r: seen["requests"].append(r.url))

    def dialog(d):
        seen["dialogs"].append(d.message)
        d.dismiss()

    page.on("dialog", dialog)
    page.goto(path.resolve().as_uri(), wait_until="load")
    return page, seen


def _not_blank(png: Path) -> None:
    import matplotlib.image as mpimg

    img = mpimg.imread(png)
    grey = img[..., :3].mean(axis=2)
    assert img.shape[0] >= 800
    assert img.shape[1] >= 1200
    assert grey.std() > 0.05, "the screenshot is (nearly) one flat colour"
    assert (grey < 0.5).mean() > 0.005, "the screenshot has (nearly) no dark text"


@browser
def test_report_in_chromium(page, season, tmp_path):
    from playwright.sync_api import sync_playwright

    path, _text = page
    _out, run, _load = season
    subjects = sorted(run.table["subject"].astype(str).unique())
    with sync_playwright() as pw:
        ctx = _open(pw, tmp_path / "profile")
        try:
            tab, seen = _visit(ctx, path)
            shot = tmp_path / "report.png"
            tab.screenshot(path=str(shot))
            full = tmp_path / "report_full.png"
            tab.screenshot(path=str(full), full_page=True)
            assert tab.locator("h1").inner_text().strip()
            assert [h.strip() for h in tab.locator("h2").all_inner_texts()] == HEADINGS
            rows = tab.locator("#week-table tbody tr")
            assert rows.count() == len(subjects)
            heads = [t.strip() for t in tab.locator("#week-table tbody th").all_inner_texts()]
            assert heads == subjects
            # every figure decoded and laid out (a broken image has no natural width)
            widths = tab.eval_on_selector_all("img", "els => els.map(e => e.naturalWidth)")
            assert len(widths) == 1 + len(subjects)
            assert min(widths) > 300
            # the optional script sorts the week table: the first heading twice -> reversed
            button = tab.locator("#week-table thead th").first.locator("button.sort")
            button.click()
            button.click()
            again = [t.strip() for t in tab.locator("#week-table tbody th").all_inner_texts()]
            assert again == subjects[::-1]
            # print layout renders (A4) without errors
            tab.emulate_media(media="print")
            tab.pdf(path=str(tmp_path / "report.pdf"), format="A4")
        finally:
            ctx.close()
    problems = [(k, t) for k, t in seen["console"] if k in ("error", "warning")]
    assert not problems, problems
    assert not seen["errors"]
    assert seen["requests"] == [path.resolve().as_uri()]  # the figures are inline
    _not_blank(shot)
    _not_blank(full)
    assert (tmp_path / "report.pdf").read_bytes()[:5] == b"%PDF-"


@browser
def test_report_reads_without_javascript(page, season, tmp_path):
    from playwright.sync_api import sync_playwright

    path, _text = page
    _out, run, _load = season
    with sync_playwright() as pw:
        ctx = _open(pw, tmp_path / "profile", javascript=False)
        try:
            tab, seen = _visit(ctx, path)
            assert [h.strip() for h in tab.locator("h2").all_inner_texts()] == HEADINGS
            assert tab.locator("#week-table tbody tr").count() == run.table["subject"].nunique()
            assert tab.locator("button.sort").count() == 0  # only the script adds them
            tab.screenshot(path=str(tmp_path / "nojs.png"))
        finally:
            ctx.close()
    assert not seen["errors"]
    _not_blank(tmp_path / "nojs.png")


@browser
def test_hostile_text_runs_no_script(hostile_folder, tmp_path):
    from playwright.sync_api import sync_playwright

    from rrkit.report import write_report

    path = write_report(hostile_folder, tmp_path / "hostile.html")
    with sync_playwright() as pw:
        ctx = _open(pw, tmp_path / "profile")
        try:
            tab, seen = _visit(ctx, path)
            heads = [t.strip() for t in tab.locator("#week-table tbody th").all_inner_texts()]
            n_img = tab.locator("img").count()
            n_script = tab.locator("script").count()
        finally:
            ctx.close()
    assert EVIL_SUBJECT in heads  # shown as text
    assert not seen["dialogs"]    # alert() never ran
    assert n_script == 1
    assert n_img == len(heads) + 1  # no image tag came from a file name
    assert not [(k, t) for k, t in seen["console"] if k == "error"]
