"""``rrkit model``: how daily covariates relate to next-morning ln-RMSSD, resting HR and the rest.

Console example (from a checkout, after ``rrkit daily ... -o season/``)::

    $ rrkit model season/daily.csv --covariates data_samples/training_load.csv \\
          --covariates data_samples/daily_log.csv --adjust sleep_h,load_au_lag1 -o model/
    $ rrkit model season/daily.csv --covariates data_samples/training_load.csv \\
          --by subject --subject R01 --adjust load_au_lag1 \\
          --candidates load_au_sum3,load_au_acwr -o r01/

Writes coefficients.csv, [screening.csv], diagnostics.json, model.json, coefficients.png,
partial_effect.png and summary.txt into OUTDIR, and prints the plain-language lines.
"""

from __future__ import annotations

from pathlib import Path

import click

from ..errors import InputError

_DAYS = {"ok": ("ok",), "usable": ("ok", "flagged"), "all": None}
_EPILOG = """\b
Terms are column names of the daily table or of the covariate files, with optional suffixes:
  _lag<k>    k days before (load_au_lag1: the previous day's load)
  _sum<N>    sum over N days; _mean<N> mean over N days
  _ewma<N>   exponentially weighted mean (ewma7 acute, ewma28 chronic)
  _acwr      ewma7 / ewma28 (acute:chronic ratio; see docs/modelling.md for its criticisms)
  _within    deviation from the athlete's own mean; _between the athlete's mean
The squad model splits each term into _within + _between itself (--no-split to stop it).

These are associations in observational data, not causes; decisions rest with qualified staff.
"""


def _terms(values) -> list[str]:
    out = []
    for v in values:
        out += [t.strip() for t in str(v).replace("+", ",").split(",") if t.strip()]
    return out


def _read_daily(path: Path):
    import pandas as pd

    if not path.is_file():
        raise InputError("daily table not found", path=path)
    if path.suffix.lower() in (".parquet", ".pq"):
        return pd.read_parquet(path)
    try:
        return pd.read_csv(path)
    except pd.errors.EmptyDataError as exc:
        raise InputError("the daily table is empty", path=path) from exc
    except (pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise InputError(f"not a readable CSV table ({' '.join(str(exc).split())})",
                         path=path) from exc


@click.command("model", epilog=_EPILOG)
@click.argument("daily", type=click.Path(dir_okay=False, path_type=Path))
@click.option("--covariates", "covariate_files", multiple=True,
              type=click.Path(dir_okay=False, path_type=Path), metavar="FILE",
              help="Covariate table (CSV or Parquet, wide or long, keyed by subject and date); "
                   "repeat for several files.")
@click.option("--units", "units_file", type=click.Path(dir_okay=False, path_type=Path),
              default=None, metavar="FILE",
              help="Side table of units (columns variable,unit) for the covariates.")
@click.option("--outcome", default="ln_rmssd", show_default=True, metavar="COLUMN",
              help="Daily column to model: ln_rmssd, ln_rmssd_7d, mean_hr_bpm, or any other.")
@click.option("--adjust", "adjust", multiple=True, metavar="TERMS",
              help="Terms of the model, comma-separated (for example sleep_h,load_au_lag1).")
@click.option("--candidates", "candidates", multiple=True, metavar="TERMS",
              help="Terms to screen one at a time on top of --adjust, with Benjamini-Hochberg "
                   "q-values across them.")
@click.option("--by", type=click.Choice(["squad", "subject", "pooled"]), default=None,
              help="squad: mixed model over all athletes (default when there are several); "
                   "subject: one n-of-1 model per athlete with HAC errors (default for one "
                   "athlete); pooled: a naive OLS that ignores athletes, for comparison only.")
@click.option("--subject", default=None, metavar="ID", help="Only this athlete.")
@click.option("--random-slope", "random_slope", default=None, metavar="TERM",
              help="Squad model: a random slope per athlete for this term (after the split, "
                   "e.g. load_au_lag1_within).")
@click.option("--no-split", is_flag=True,
              help="Squad model: do not split terms into within- and between-athlete parts.")
@click.option("--days", type=click.Choice(sorted(_DAYS)), default="ok", show_default=True,
              help="Which days: ok only, usable (ok and flagged), or all rows.")
@click.option("--se", type=click.Choice(["hac", "classical"]), default="hac", show_default=True,
              help="n-of-1 standard errors: Newey-West HAC, or classical OLS (for checks).")
@click.option("--hac-lags", type=click.IntRange(0, None), default=None, metavar="N",
              help="HAC lag length (default floor(4 (n/100)^(2/9)) for n days).")
@click.option("--show", "show_term", default=None, metavar="TERM",
              help="Term of the partial-effect figure (default: the first term).")
@click.option("-o", "--outdir", required=True, type=click.Path(file_okay=False, path_type=Path),
              help="Output folder.")
def command(daily: Path, covariate_files, units_file, outcome, adjust, candidates, by, subject,
            random_slope, no_split, days, se, hac_lags, show_term, outdir) -> int:
    """Model a daily table: how covariates relate to next-morning ln-RMSSD and the rest.

    DAILY is the daily table that `rrkit daily` writes (daily.csv or daily.parquet). Covariates
    are joined by subject and calendar date: a covariate dated D sits on the morning of D, and
    its _lag1 term is the day before. The model is OUTCOME ~ the --adjust terms (without
    them, the --candidates together); each candidate is also screened alone on top of --adjust.
    Prints one plain-language line per term, writes the tidy coefficients, diagnostics, the
    exact formula and settings, and two figures to OUTDIR.
    """
    from .. import covariates as cov
    from .. import model

    table = _read_daily(daily)
    units: dict = {}
    for f in covariate_files:
        c = cov.read(f, units=units_file)
        units.update(c.units)
        wanted = _terms(adjust) + _terms(candidates) + ([random_slope] if random_slope else [])
        table = cov.join(table, c, terms=wanted)
    terms = _terms(adjust)
    cands = _terms(candidates)
    if not terms and not cands:
        raise InputError("give the model's terms with --adjust (and/or --candidates)",
                         hint="for example --adjust load_au_lag1")
    n_subjects = (table["subject"].astype(str).nunique() if subject is None else 1) \
        if "subject" in table.columns else 1
    by = by or ("squad" if n_subjects > 1 else "subject")
    qualities = _DAYS[days]
    settings = model.ModelSettings(outcome=outcome, terms=tuple(terms or cands), by=by,
                                   subject=subject, split=not no_split,
                                   random_slope=random_slope, se=se, hac_lags=hac_lags,
                                   qualities=qualities)
    result = model.fit(table, settings=settings, units=units)
    screening = None
    if cands:
        screening = model.screen(table, outcome=outcome, base=terms, candidates=cands, by=by,
                                 subject=subject, split=not no_split, se=se, hac_lags=hac_lags,
                                 qualities=qualities, units=units)
    main_model = {"squad": "mixed"}.get(by)
    lines = model.plain_lines(result, model=main_model)
    if screening is not None:
        lines.append("")
        lines.append(f"Screening ({len(cands)} candidates, one at a time on "
                     f"{' + '.join(terms) or 'the intercept'}):")
        for r in screening.itertuples(index=False):
            who = "" if r.subject == "squad" else f"{r.subject} "
            cmp_ = (f"LR {r.lr_stat:.2f} on {int(r.lr_df)} df" if r.lr_stat == r.lr_stat
                    else f"change in adjusted R^2 {r.delta_r2_adj:+.3f}")
            lines.append(f"  {who}{r.term}: {r.estimate:+.4g} (95% CI {r.ci_low:+.4g} to "
                         f"{r.ci_high:+.4g}), {cmp_}, p = {r.p:.3g}, q = {r.q:.3g}")
    d = result.diagnostics
    diag = []
    for name, v in d.items():
        if "durbin_watson" in v:
            diag.append(f"  {name}: {v['n_days']} days, R^2 adj {v['r2_adj']:.3f}, "
                        f"Durbin-Watson {v['durbin_watson']:.2f}, Ljung-Box p "
                        f"{v['ljung_box_p']:.3g} ({v['ljung_box_lags']} lags)"
                        + (f", HAC {v['hac_lags']} lags" if v.get("hac_lags") is not None
                           else ""))
        else:
            diag.append(f"  {name}: {v['n_days']} days, {v['n_athletes']} athletes, "
                        f"random-intercept SD {v['random_intercept_sd']:.3g}, residual SD "
                        f"{v['residual_sd']:.3g}, mean residual lag-1 autocorrelation "
                        f"{v['mean_residual_lag1_autocorrelation']:.2f}"
                        + ("; WARNING: " + "; ".join(v["optimiser_warnings"])
                           if v["optimiser_warnings"] else ""))
    show = show_term or next((t for t in result.terms), None)
    paths = model.write_outputs(result, outdir, screening=screening, partial_term=show,
                                lines=[*lines, "", "Diagnostics:", *diag])
    click.echo(result.formula + f"   [{by}, {days} days]")
    for line in lines:
        click.echo(line)
    click.echo("Diagnostics:")
    for line in diag:
        click.echo(line)
    click.echo("")
    click.echo(model.CAUTION)
    click.echo(f"Wrote {', '.join(p.name for p in paths.values())} to {outdir}")
    return 0
