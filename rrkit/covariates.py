"""Daily covariates (training load, sleep, body mass, wellness...) and the terms derived from them.

A covariate table is keyed by ``subject, date`` and holds one number per variable per day. It
comes in one of two shapes:

* **wide**: ``subject, date`` and one column per variable (``load_au, sleep_h, body_mass_kg``);
* **long**: ``subject, date, variable, value`` and optionally ``unit``.

Units live in the column names (``_au``, ``_h``, ``_kg``, ``_min``, ``_pts``...), in a ``unit``
column of a long table, or in a side table (``variable,unit``) given as ``units=``.

**Dating.** A covariate row dated D describes calendar day D (the training done that day, the
night that ended that morning, the wellness questionnaire filled in that morning). The daily
table dates a recording by the morning it ends (see `rrkit.daily_table`). So on the daily row of
morning D, ``load_au`` is the load of day D itself (usually trained *after* the recording) and
``load_au_lag1`` is the load of the day before: the load that can have shaped that morning.

**Derived terms** are named by suffixes that can be chained, so every name in a model can be
re-created from the covariate table alone (`derived_terms` lists the rules):

``x_lag<k>``
    x of k calendar days before (``load_au_lag1``: the previous day).
``x_sum<N>``, ``x_mean<N>``
    sum / mean over the N calendar days ending on the row's day (all N days must be present).
``x_ewma<N>``
    exponentially weighted moving average with decay ``lambda = 2 / (N + 1)`` (Williams S et
    al. 2017, Br J Sports Med 51:209-210, doi:10.1136/bjsports-2016-096589); ``x_ewma7`` is the
    "acute" and ``x_ewma28`` the "chronic" load. A missing day counts as no information (the
    average carries on over it).
``x_acwr``
    acute:chronic workload ratio ``x_ewma7 / x_ewma28``. Known criticisms (see
    docs/modelling.md): a ratio of two quantities that share their most recent days is
    mathematically coupled (Lolli L et al. 2019, Br J Sports Med 53:921-922), a ratio hides
    which of acute or chronic load changed, its relation to outcomes is unstable between
    studies, and its use to predict injury has been questioned (Impellizzeri FM et al. 2020,
    Int J Sports Physiol Perform 15:907-913). rrkit offers it because it is widely reported,
    not as a recommendation.
``x_within``, ``x_between``
    within-athlete deviation from the athlete's own mean, and that athlete mean (minus the mean
    of all athletes' means, which moves only the intercept), over the days used in the model
    (Curran PJ, Bauer DJ 2011, Annu Rev Psychol 62:583-619,
    doi:10.1146/annurev.psych.093008.100356): entered together they separate the within-athlete
    effect (how a day differs from that athlete's usual day) from the between-athlete effect
    (how athletes with different usual values differ).

Examples
--------
>>> import pandas as pd
>>> t = pd.DataFrame({"subject": ["A"] * 3, "date": ["2026-01-01", "2026-01-02", "2026-01-03"],
...                   "load_au": [100.0, 200.0, 400.0]})
>>> add_terms(t, ["load_au_lag1", "load_au_sum2"])[["load_au_lag1", "load_au_sum2"]].values.tolist()
[[nan, nan], [100.0, 300.0], [200.0, 600.0]]
"""

from __future__ import annotations

import datetime as dt
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import InputError

__all__ = ["CovariateTable", "add_terms", "derived_terms", "join", "parse_term", "read",
           "term_label"]

_KEYS = ("subject", "date")
#: unit suffix of a column name -> unit text
UNIT_SUFFIXES = {"au": "AU", "h": "h", "kg": "kg", "min": "min", "pts": "points", "pct": "%",
                 "km": "km", "m": "m", "bpm": "bpm", "ms": "ms", "s": "s", "l": "l",
                 "kcal": "kcal", "rpe": "RPE"}
_SUFFIX = re.compile(r"_(lag|sum|mean|ewma)(\d+)$|_(acwr|within|between)$")
_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")


@dataclass(frozen=True)
class CovariateTable:
    """A validated covariate table in wide form.

    Attributes
    ----------
    table : pandas.DataFrame
        ``subject`` (str), ``date`` (`datetime.date`) and one float column per variable,
        sorted by subject and date, one row per key.
    units : dict
        Variable -> unit text (``"AU"``, ``"h"``); ``""`` where none is known.
    source : str
        The file it was read from.
    """

    table: object
    units: dict = field(default_factory=dict)
    source: str = ""

    @property
    def variables(self) -> list[str]:
        """The variable columns."""
        return [c for c in self.table.columns if c not in _KEYS]


def _unit_from_name(name: str) -> str:
    tail = name.rsplit("_", 1)[-1].lower() if "_" in name else ""
    return UNIT_SUFFIXES.get(tail, "")


def _read_frame(path: Path):
    import pandas as pd

    suffix = "".join(path.suffixes[-2:]).lower()
    if path.suffix.lower() in (".parquet", ".pq"):
        try:
            return pd.read_parquet(path)
        except ImportError as exc:  # pragma: no cover - pyarrow is a dependency
            raise InputError("reading Parquet needs pyarrow", path=path,
                             hint="pip install pyarrow") from exc
        except Exception as exc:
            raise InputError(f"not a readable Parquet file ({exc})", path=path) from exc
    if not suffix.endswith((".csv", ".csv.gz", ".txt")):
        raise InputError(f"unknown covariate file type {path.suffix!r}", path=path,
                         hint="give a .csv or .parquet file")
    try:
        return pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True)
    except pd.errors.EmptyDataError as exc:
        raise InputError("the file is empty", path=path) from exc
    except (pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise InputError(f"not a readable CSV table ({' '.join(str(exc).split())})",
                         path=path) from exc


def _line(path: Path, i: int) -> int | None:
    """1-based file line of data row ``i`` (CSV: header on line 1); None for Parquet."""
    return None if path.suffix.lower() in (".parquet", ".pq") else i + 2


def _parse_dates(values, path: Path) -> list[dt.date]:
    out = []
    for i, v in enumerate(values):
        if isinstance(v, dt.datetime):
            out.append(v.date())
            continue
        if isinstance(v, dt.date):
            out.append(v)
            continue
        text = str(v).strip()
        try:
            out.append(dt.date.fromisoformat(text[:10]))
        except ValueError:
            raise InputError(f"column 'date': {text!r} is not an ISO 8601 date (YYYY-MM-DD)",
                             path=path, line=_line(path, i)) from None
    return out


def _numbers(col, name: str, path: Path) -> np.ndarray:
    out = np.empty(len(col))
    for i, v in enumerate(col):
        if v is None or (isinstance(v, float) and np.isnan(v)):
            out[i] = np.nan
            continue
        text = str(v).strip()
        if text in ("", "NA", "NaN", "nan"):
            out[i] = np.nan
            continue
        try:
            x = float(text)
        except ValueError:
            raise InputError(f"column {name!r}: {text!r} is not a number", path=path,
                             line=_line(path, i),
                             hint="leave the cell empty (or NA) for a day without a value"
                             ) from None
        if not np.isfinite(x):
            raise InputError(f"column {name!r}: {text!r} is not a finite number", path=path,
                             line=_line(path, i))
        out[i] = x
    return out


def _read_units(units, known: Iterable[str]) -> dict:
    if units is None:
        return {}
    if isinstance(units, dict):
        return {str(k): str(v) for k, v in units.items()}
    import pandas as pd

    upath = Path(units)
    df = pd.read_csv(upath, dtype=str, keep_default_na=False)
    if not {"variable", "unit"} <= set(df.columns):
        raise InputError(f"a units table needs columns 'variable' and 'unit'; got "
                         f"{list(df.columns)!r}", path=upath)
    out = {}
    known = set(known)
    for i, (var, unit) in enumerate(zip(df["variable"], df["unit"], strict=True)):
        if var not in known:
            raise InputError(f"column 'variable': {var!r} is not a variable of the covariate "
                             f"table ({sorted(known)!r})", path=upath, line=i + 2)
        out[var] = unit
    return out


def read(path, *, units=None, season: tuple | None = None) -> CovariateTable:
    """Read a covariate table (CSV or Parquet, wide or long) and validate it.

    Parameters
    ----------
    path : str or path-like
        ``.csv`` (optionally ``.csv.gz``) or ``.parquet`` file.
    units : str, path-like or dict, optional
        Side table of units: a CSV with columns ``variable,unit``, or a dict. Without it, units
        come from a long table's ``unit`` column or from the column-name suffix.
    season : (date, date), optional
        First and last date allowed (inclusive); a row outside is an error.

    Returns
    -------
    CovariateTable

    Raises
    ------
    InputError
        Missing ``subject``/``date`` columns, a date that is not ISO 8601, a duplicated
        ``(subject, date)`` key (or ``(subject, date, variable)`` in a long table), a value that
        is not a number, a date outside ``season``, a column name that cannot be used in a
        formula. Each message names the file, the line (CSV) and the column.
    """
    import pandas as pd

    path = Path(path)
    if not path.is_file():
        raise InputError("no such covariate file", path=path)
    df = _read_frame(path)
    df.columns = [str(c).strip() for c in df.columns]
    missing = [k for k in _KEYS if k not in df.columns]
    if missing:
        raise InputError(f"a covariate table needs the key columns 'subject' and 'date'; "
                         f"missing {missing!r} in columns {list(df.columns)!r}", path=path,
                         hint="rename the athlete id column to 'subject'")
    subjects = [str(s).strip() for s in df["subject"]]
    for i, s in enumerate(subjects):
        if not s:
            raise InputError("column 'subject': empty subject id", path=path, line=_line(path, i))
    dates = _parse_dates(df["date"], path)
    long_form = {"variable", "value"} <= set(df.columns)
    unit_col = {}
    if long_form:
        extra = [c for c in df.columns if c not in (*_KEYS, "variable", "value", "unit")]
        if extra:
            raise InputError(f"a long covariate table has columns subject, date, variable, "
                             f"value (and unit); unexpected {extra!r}", path=path)
        variables = [str(v).strip() for v in df["variable"]]
        values = _numbers(df["value"], "value", path)
        seen: dict[tuple, int] = {}
        for i, key in enumerate(zip(subjects, dates, variables, strict=True)):
            if key in seen:
                raise InputError(f"columns 'subject, date, variable': {key[0]} {key[1]} "
                                 f"{key[2]!r} appears twice (lines {_line(path, seen[key])} and "
                                 f"{_line(path, i)})", path=path, line=_line(path, i))
            seen[key] = i
        if "unit" in df.columns:
            for v, u in zip(variables, df["unit"], strict=True):
                if str(u).strip():
                    unit_col.setdefault(v, str(u).strip())
        long = pd.DataFrame({"subject": subjects, "date": dates, "variable": variables,
                             "value": values})
        # keys are unique (checked above), so pivot cannot aggregate
        wide = long.pivot(index=["subject", "date"], columns="variable", values="value")  # noqa: PD010
        wide.columns.name = None
        wide = wide.reset_index()
        names = sorted(set(variables))
    else:
        names = [c for c in df.columns if c not in _KEYS]
        if not names:
            raise InputError("the covariate table has no variable columns besides subject and "
                             "date", path=path)
        wide = pd.DataFrame({"subject": subjects, "date": dates})
        for c in names:
            wide[c] = _numbers(df[c], c, path)
        seen = {}
        for i, key in enumerate(zip(subjects, dates, strict=True)):
            if key in seen:
                raise InputError(f"columns 'subject, date': {key[0]} {key[1]} appears twice "
                                 f"(lines {_line(path, seen[key])} and {_line(path, i)})",
                                 path=path, line=_line(path, i))
            seen[key] = i
    for c in names:
        if not _NAME.match(c) or _SUFFIX.search(c):
            raise InputError(f"column {c!r}: a variable name must be a formula identifier "
                             "(letters, digits, '_', not starting with a digit) and must not end "
                             "in a derived-term suffix (_lag1, _sum7, _within...)", path=path,
                             hint="rename the column")
    if season is not None:
        lo, hi = (d if isinstance(d, dt.date) else dt.date.fromisoformat(str(d)) for d in season)
        for i, d in enumerate(dates):
            if not lo <= d <= hi:
                raise InputError(f"column 'date': {d} is outside the season {lo} to {hi}",
                                 path=path, line=_line(path, i))
    given = _read_units(units, names)
    unit_map = {c: given.get(c, unit_col.get(c, _unit_from_name(c))) for c in names}
    wide = wide.sort_values(list(_KEYS), kind="stable").reset_index(drop=True)
    return CovariateTable(table=wide, units=unit_map, source=str(path))


# ----------------------------------------------------------------------------- derived terms
def parse_term(name: str) -> tuple[str, list[tuple[str, int | None]]]:
    """Split a term name into its base variable and its chain of derivations.

    >>> parse_term("load_au_lag1_within")
    ('load_au', [('lag', 1), ('within', None)])
    """
    steps: list[tuple[str, int | None]] = []
    base = name
    while True:
        m = _SUFFIX.search(base)
        if not m:
            break
        if m.group(1):
            steps.append((m.group(1), int(m.group(2))))
        else:
            steps.append((m.group(3), None))
        base = base[: m.start()]
    return base, steps[::-1]


def derived_terms() -> dict[str, str]:
    """The suffix rules, as short text (for --help and the docs)."""
    return {
        "_lag<k>": "value k calendar days before",
        "_sum<N>": "sum over the N calendar days ending that day (all N present)",
        "_mean<N>": "mean over the N calendar days ending that day (all N present)",
        "_ewma<N>": "exponentially weighted mean, lambda = 2/(N+1) (7: acute, 28: chronic)",
        "_acwr": "ewma7 / ewma28 (acute:chronic ratio; see the criticisms in the docs)",
        "_within": "deviation from the athlete's own mean over the days modelled",
        "_between": "the athlete's own mean over the days modelled (minus the squad's mean)",
    }


def _ewma(x: np.ndarray, n: int) -> np.ndarray:
    lam = 2.0 / (n + 1.0)
    out = np.full(x.size, np.nan)
    prev = np.nan
    for i, v in enumerate(x):
        if np.isfinite(v):
            prev = v if not np.isfinite(prev) else lam * v + (1 - lam) * prev
        out[i] = prev
    return out


def _time_step(values: np.ndarray, op: str, k: int | None) -> np.ndarray:
    """One time derivation on a complete calendar (one value per consecutive day)."""
    import pandas as pd

    s = pd.Series(values)
    if op == "lag":
        return s.shift(k).to_numpy(dtype=float)
    if op == "sum":
        return s.rolling(k, min_periods=k).sum().to_numpy(dtype=float)
    if op == "mean":
        return s.rolling(k, min_periods=k).mean().to_numpy(dtype=float)
    if op == "ewma":
        return _ewma(values, k)
    if op == "acwr":
        chronic = _ewma(values, 28)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = _ewma(values, 7) / chronic
        return np.where(chronic > 0, ratio, np.nan)
    raise KeyError(op)


def _check_steps(name: str, steps) -> None:
    kinds = [op for op, _ in steps]
    centring = [i for i, op in enumerate(kinds) if op in ("within", "between")]
    if len(centring) > 1 or (centring and centring[0] != len(kinds) - 1):
        raise InputError(f"term {name!r}: _within or _between can only end a term name")
    for op, k in steps:
        if op in ("sum", "mean", "ewma") and (k is None or k < 1):
            raise InputError(f"term {name!r}: _{op} needs a window of at least 1 day")
        if op == "lag" and k is not None and k > 366:
            raise InputError(f"term {name!r}: a lag of {k} days is longer than a year")


def add_terms(table, names: Sequence[str], *, centre_rows=None):
    """Add derived term columns to a table keyed by ``subject, date``.

    Parameters
    ----------
    table : pandas.DataFrame
        Needs ``subject`` and ``date`` and the base variables. Time derivations (lag, rolling,
        EWMA, ratio) are computed per subject on a complete calendar (missing days are missing,
        never zero), then read back onto the table's rows.
    names : sequence of str
        Term names (see the module notes). Names already present as columns are left alone.
    centre_rows : array of bool, optional
        Rows over which ``_within`` / ``_between`` take the athlete mean (default: the rows where
        the term's value is present).

    Returns
    -------
    pandas.DataFrame
        A copy with the new columns.
    """
    import pandas as pd

    out = table.copy()
    dates = pd.to_datetime(pd.Series([str(d)[:10] for d in out["date"]], index=out.index))
    for name in names:
        if name in out.columns:
            continue
        base, steps = parse_term(name)
        _check_steps(name, steps)
        if base not in out.columns:
            raise InputError(f"term {name!r}: {base!r} is not a column", hint="see the columns "
                             "of the daily table and the covariate table")
        time_steps = [(op, k) for op, k in steps if op not in ("within", "between")]
        inner = name[: name.rfind("_")] if steps and steps[-1][0] in ("within", "between") \
            else None
        if inner is not None and inner in out.columns:  # centre a column already there
            time_steps = []
            base = inner
        col = out[base].to_numpy(dtype=float)
        if time_steps:
            col = np.full(len(out), np.nan)
            for _subject, idx in out.groupby("subject", sort=False).groups.items():
                d = dates.loc[idx]
                if d.duplicated().any():
                    raise InputError(f"term {name!r}: subject {_subject!r} has two rows on one "
                                     "date; time terms need one row per day")
                cal = pd.date_range(d.min(), d.max(), freq="D")
                v = pd.Series(out.loc[idx, base].to_numpy(dtype=float), index=d.values)
                full = v.reindex(cal).to_numpy(dtype=float)
                for op, k in time_steps:
                    full = _time_step(full, op, k)
                col[out.index.get_indexer(idx)] = pd.Series(full, index=cal).loc[d.values].values
        if steps and steps[-1][0] in ("within", "between"):
            use = np.isfinite(col) if centre_rows is None else (np.asarray(centre_rows)
                                                                & np.isfinite(col))
            means = (pd.Series(np.where(use, col, np.nan), index=out.index)
                     .groupby(out["subject"]).transform("mean").to_numpy(dtype=float))
            if steps[-1][0] == "within":
                col = col - means
            else:  # athlete mean, centred on the mean of the athlete means (grand centring)
                per = pd.Series(means).groupby(out["subject"].to_numpy()).first()
                col = np.where(np.isfinite(col), means - float(per.mean()), np.nan)
        out[name] = col
    return out


def join(daily, covariates: CovariateTable, *, terms: Sequence[str] = ()):
    """Join covariates onto a daily table by subject and calendar date, adding derived terms.

    Time terms are computed on the covariate table's own calendar (so the first morning of the
    season gets the previous day's load when the covariate file has it), then joined; centring
    terms (``_within`` / ``_between``) are left to the model, which takes the athlete means over
    the days it uses.

    Parameters
    ----------
    daily : pandas.DataFrame
        A daily table (or its CSV read back): needs ``subject`` and ``date``.
    covariates : CovariateTable
    terms : sequence of str
        Derived terms to add (base variables are always joined).

    Returns
    -------
    pandas.DataFrame
        The daily table's rows, in its order, with the covariate columns added (NaN where a
        day has none).

    Raises
    ------
    InputError
        A covariate variable with the name of a daily-table column, a daily table without
        ``subject``/``date``.
    """
    import pandas as pd

    for k in _KEYS:
        if k not in daily.columns:
            raise InputError(f"the daily table needs a {k!r} column; got {list(daily.columns)!r}")
    clash = [v for v in covariates.variables if v in daily.columns]
    if clash:
        raise InputError(f"covariate column(s) {clash!r} also exist in the daily table",
                         path=covariates.source, hint="rename them in the covariate file")
    cov = covariates.table
    time_terms = []
    for t in terms:
        base, steps = parse_term(t)
        if base in covariates.variables and steps:
            inner = t
            if steps[-1][0] in ("within", "between"):
                inner = t[: t.rfind("_")]
            if inner != base:
                time_terms.append(inner)
    if time_terms:  # the calendar covers the daily table's days too (a lag reaches past them)
        keys = pd.DataFrame({"subject": daily["subject"].astype(str),
                             "date": _parse_dates(daily["date"], Path("the daily table"))})
        keys = keys.drop_duplicates()
        cov = (cov.merge(keys, on=["subject", "date"], how="outer")
               .sort_values(["subject", "date"], kind="stable").reset_index(drop=True))
        cov = add_terms(cov, list(dict.fromkeys(time_terms)))
    left = daily.copy()
    left["_key_date"] = [str(d)[:10] for d in left["date"]]
    left["_key_subject"] = left["subject"].astype(str)
    right = cov.drop(columns=["subject", "date"]).assign(
        _key_date=[str(d)[:10] for d in cov["date"]], _key_subject=cov["subject"].astype(str))
    merged = left.merge(right, on=["_key_subject", "_key_date"], how="left", sort=False,
                        validate="many_to_one")
    merged.index = daily.index
    return merged.drop(columns=["_key_date", "_key_subject"])


# ------------------------------------------------------------------------------ plain words
def term_label(name: str, units: dict | None = None) -> tuple[str, str]:
    """Plain words for a term and its unit: ``("the previous day's load", "AU")``."""
    base, steps = parse_term(name)
    unit = (units or {}).get(base, _unit_from_name(base))
    words = base
    tail = base.rsplit("_", 1)
    if len(tail) == 2 and tail[1].lower() in UNIT_SUFFIXES:
        words = tail[0]
    words = words.replace("_", " ")
    phrase = words
    for op, k in steps:
        if op == "lag":
            phrase = (f"the previous day's {phrase}" if k == 1 else
                      f"the {phrase} of {k} days before")
        elif op in ("sum", "mean"):
            phrase = f"the {k}-day {'total' if op == 'sum' else 'mean'} of {phrase}"
        elif op == "ewma":
            phrase = f"the {k}-day weighted mean of {phrase}"
        elif op == "acwr":
            phrase = f"the acute:chronic ratio of {phrase}"
            unit = ""
    if not steps:
        phrase = f"that day's {phrase}"
    return phrase, unit
