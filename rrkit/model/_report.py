"""What a fitted model says: plain-language lines, the two figures, and the output folder."""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np

from .._atomic import atomic_write_text
from ..covariates import parse_term, term_label
from ..errors import InputError

__all__ = ["CAUTION", "outcome_label", "plain_lines", "plot_coefficients", "plot_partial",
           "write_outputs"]

CAUTION = ("These are associations in observational data, not causes: days differ in many "
           "ways a model does not see. rrkit is not a medical device; training and health "
           "decisions rest with qualified staff who know the athlete.")

_OUTCOMES = {"ln_rmssd": "ln-RMSSD", "ln_rmssd_7d": "7-day mean ln-RMSSD",
             "mean_hr_bpm": "resting HR (bpm)", "rmssd_ms": "RMSSD (ms)",
             "wellness_pts": "the wellness score"}


def outcome_label(name: str) -> str:
    """Readable name of an outcome column."""
    return _OUTCOMES.get(name, name.replace("_", " "))


def _num(x: float) -> str:
    if not np.isfinite(x):
        return "n/a"
    a = abs(x)
    digits = 3 if a < 0.1 else (2 if a < 10 else (1 if a < 100 else 0))
    return f"{x:+.{digits}f}"


def plain_lines(result, *, model: str | None = None) -> list[str]:
    """One sentence per term of each fit, then the caution.

    For example: "ln-RMSSD next morning changes by -0.041 (95% CI -0.060 to -0.022) per 500 AU
    of the previous day's load, within athletes".
    """
    coef = result.coefficients
    if model is not None:
        coef = coef[coef["model"] == model]
    out = []
    for r in coef[coef["term"] != "Intercept"].itertuples(index=False):
        _base, steps = parse_term(r.term)
        where = ""
        term = r.term
        if steps and steps[-1][0] == "within":
            where = ", within athletes"
            term = r.term[: r.term.rfind("_")]
        elif steps and steps[-1][0] == "between":
            where = ", between athletes (comparing athletes whose usual values differ so)"
            term = r.term[: r.term.rfind("_")]
        phrase, _unit = term_label(term, result.units)
        lagged = any(op == "lag" for op, _ in parse_term(term)[1])
        when = "next morning" if lagged else "that morning"
        step = r.per_unit / r.estimate if r.estimate else 1.0
        scale = step if np.isfinite(step) else 1.0
        who = "" if r.subject == "squad" else f"{r.subject}: "
        out.append(f"{who}{outcome_label(result.settings.outcome)} {when} changes by "
                   f"{_num(r.estimate * scale)} (95% CI {_num(r.ci_low * scale)} to "
                   f"{_num(r.ci_high * scale)}) per {r.unit} of {phrase}{where} "
                   f"[{r.model}, p = {r.p:.3g}, q = {r.q:.3g}]")
    return out


def _labels(terms, units) -> list[str]:
    out = []
    for t in terms:
        _base, steps = parse_term(t)
        core = t[: t.rfind("_")] if steps and steps[-1][0] in ("within", "between") else t
        phrase, _unit = term_label(core, units)
        tag = {"within": " (within)", "between": " (between)"}.get(
            steps[-1][0] if steps else "", "")
        out.append(f"{phrase}{tag}")
    return out


def plot_coefficients(result, path=None):
    """Forest figure: each term's effect per step (the round step of the table's ``unit``
    column, near one SD of the term) with its 95% CI, for each fit of the result."""
    import textwrap

    from ..plots._style import OKABE_ITO, new_figure, save

    coef = result.coefficients[result.coefficients["term"] != "Intercept"].copy()
    fits = list(dict.fromkeys(zip(coef["model"], coef["subject"], strict=True)))
    terms = list(dict.fromkeys(coef["term"]))
    colours = [OKABE_ITO[k] for k in ("blue", "vermillion", "green", "purple", "orange", "sky",
                                      "black", "grey")]
    markers = ["o", "s", "D", "^", "v", "P", "X", "*"]
    n = len(fits)
    height = 2.2 + 0.28 * len(terms) * max(1, min(n, 4))
    fig = new_figure(8.0, min(height, 11.0))
    ax = fig.add_subplot(1, 1, 1)
    offsets = np.linspace(-0.3, 0.3, n) if n > 1 else np.zeros(1)
    for j, (model, subject) in enumerate(fits):
        d = coef[(coef["model"] == model) & (coef["subject"] == subject)]
        y = np.array([terms.index(t) for t in d["term"]], dtype=float) + offsets[j]
        est = d["estimate"].to_numpy(dtype=float)
        step = np.where(est != 0, d["per_unit"].to_numpy(dtype=float) / np.where(est != 0, est,
                                                                                   1.0), 1.0)
        lo = d["ci_low"].to_numpy(dtype=float) * step
        hi = d["ci_high"].to_numpy(dtype=float) * step
        mid = est * step
        ax.errorbar(mid, y, xerr=[mid - lo, hi - mid], fmt=markers[j % len(markers)],
                    color=colours[j % len(colours)], ms=5, capsize=2.5, lw=1.2,
                    label=f"{subject}, {model}" if subject != "squad" else model)
    ax.axvline(0.0, color=OKABE_ITO["grey"], lw=0.9, zorder=0)
    first = coef.drop_duplicates("term").set_index("term")
    labels = [f"{lab}\nper {first.loc[t, 'unit']}" for t, lab in
              zip(terms, _labels(terms, result.units), strict=True)]
    ax.set_yticks(range(len(terms)), labels, fontsize=8)
    ax.invert_yaxis()
    ax.set_xlabel(f"change in {outcome_label(result.settings.outcome)} (95% CI)\n"
                  "associations in observational data, not causes", fontsize=8.5)
    ax.set_title("\n".join(textwrap.wrap(result.formula, 80)), fontsize=8.5, loc="left")
    ax.grid(axis="x", color="#e6e6e6", lw=0.6)
    ax.spines[["top", "right"]].set_visible(False)
    if n > 1:
        ax.legend(fontsize=7.5, frameon=False, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    if path is not None:
        save(fig, path)
    return fig


def plot_partial(result, term: str, path=None):
    """Partial-effect figure for one term: partial residuals against the term, with the fitted
    line and its 95% confidence band (first fit of the result: the mixed model for a squad)."""
    from ..plots._style import OKABE_ITO, new_figure, save

    if term not in result.terms:
        raise InputError(f"partial effect: {term!r} is not a term of {result.formula!r}")
    data = result.data
    key = "mixed" if "mixed" in result.fits else next(iter(result.fits))
    res = result.fits[key]
    rows = data if key in ("mixed", "ols_cluster", "ols_pooled") else data[data["subject"] == key]
    b = float(res.params[term])
    se = float(res.bse[term])
    x = rows[term].to_numpy(dtype=float)
    from ._fit import residuals

    resid = residuals(res)
    partial = resid + b * (x - x.mean())
    fig = new_figure(6.4, 4.4)
    ax = fig.add_subplot(1, 1, 1)
    subjects = rows["subject"].astype(str).to_numpy()
    colours = [OKABE_ITO[k] for k in ("blue", "vermillion", "green", "purple", "orange", "sky",
                                      "black", "grey")]
    markers = ["o", "s", "D", "^", "v", "P", "X", "*"]
    for i, s in enumerate(sorted(set(subjects))):
        m = subjects == s
        ax.scatter(x[m], partial[m], s=12, alpha=0.6, color=colours[i % 8],
                   marker=markers[i % 8], lw=0, label=s)
    gx = np.linspace(np.nanmin(x), np.nanmax(x), 50)
    from scipy import stats

    df = max(int(getattr(res, "df_resid", len(x) - 2)), 1)
    tq = stats.norm.ppf(0.975) if key == "mixed" else stats.t.ppf(0.975, df)
    fit_line = b * (gx - x.mean())
    band = tq * se * np.abs(gx - x.mean())
    ax.fill_between(gx, fit_line - band, fit_line + band, color=OKABE_ITO["sky"], alpha=0.3,
                    lw=0, label="95% CI of the slope")
    ax.plot(gx, fit_line, color=OKABE_ITO["black"], lw=1.6, label="fitted")
    ax.axhline(0.0, color=OKABE_ITO["grey"], lw=0.7, zorder=0)
    phrase, unit = term_label(term[: term.rfind("_")] if parse_term(term)[1] and
                              parse_term(term)[1][-1][0] in ("within", "between") else term,
                              result.units)
    ax.set_xlabel(f"{_labels([term], result.units)[0]}" + (f" ({unit})" if unit else ""),
                  fontsize=9)
    ax.set_ylabel(f"{outcome_label(result.settings.outcome)}, partial residual", fontsize=9)
    coef = result.coefficients
    row = coef[(coef["term"] == term)
               & (coef["subject"] == ("squad" if key in ("mixed", "ols_cluster", "ols_pooled")
                                      else key))].iloc[0]
    step = row["per_unit"] / b if b else 1.0
    ax.set_title(f"{term}: {b * step:+.3g} per {row['unit']} (95% CI {(b - tq * se) * step:+.3g}"
                 f" to {(b + tq * se) * step:+.3g})  [{key}]", fontsize=9, loc="left")
    ax.spines[["top", "right"]].set_visible(False)
    if len(set(subjects)) <= 10:
        ax.legend(fontsize=7, frameon=False, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    del phrase
    if path is not None:
        save(fig, path)
    return fig


def _csv(path: Path, df) -> None:
    atomic_write_text(path, df.to_csv(index=False, lineterminator="\n"), fsync=False)


def write_outputs(result, outdir, *, screening=None, partial_term: str | None = None,
                  lines=None) -> dict:
    """Write coefficients.csv, diagnostics.json, model.json, [screening.csv], the figures and
    summary.txt into ``outdir`` (each file atomically). Returns name -> path."""
    out = Path(outdir)
    out.mkdir(parents=True, exist_ok=True)
    paths = {"coefficients": out / "coefficients.csv", "diagnostics": out / "diagnostics.json",
             "model": out / "model.json", "forest": out / "coefficients.png",
             "partial": out / "partial_effect.png", "summary": out / "summary.txt"}
    _csv(paths["coefficients"], result.coefficients)
    atomic_write_text(paths["diagnostics"], json.dumps(result.diagnostics, indent=2,
                                                       default=float) + "\n", fsync=False)
    prov = result.provenance()
    prov["caution"] = CAUTION
    atomic_write_text(paths["model"], json.dumps(prov, indent=2) + "\n", fsync=False)
    if screening is not None:
        paths["screening"] = out / "screening.csv"
        _csv(paths["screening"], screening)
    plot_coefficients(result, paths["forest"])
    term = partial_term or next(t for t in result.terms)
    plot_partial(result, term, paths["partial"])
    text = "\n".join([result.formula, *(lines or plain_lines(result)), "", CAUTION]) + "\n"
    atomic_write_text(paths["summary"], text, fsync=False)
    return paths
