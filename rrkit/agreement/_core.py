"""`agreement`: paired statistics of reported against reference values (`AgreementResult`)."""

from __future__ import annotations

import logging
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType
from typing import Any

import numpy as np

from .._validation import check_option, check_range
from ..errors import InputError
from . import _stats

__all__ = ["AgreementResult", "agreement", "unit_of"]

log = logging.getLogger("rrkit")

# suffix of a metric name -> unit shown in tables and on axes (rrkit's naming convention)
_UNIT_SUFFIXES = (("_ms2", "ms²"), ("_ms", "ms"), ("_bpm", "bpm"), ("_pct", "%"), ("_hz", "Hz"),
                  ("_s", "s"))

# Koo TK, Li MY 2016, J Chiropr Med 15(2):155-163: bands of the ICC, judged on its 95% CI
_KOO_LI_BANDS = ((0.5, "poor"), (0.75, "moderate"), (0.9, "good"), (math.inf, "excellent"))

# statistic -> (description, unit kind); unit kind: "value", "ratio", "log", "slope", "pct", "-"
_TABLE_ROWS = (
    ("n", "pairs analysed", "-"),
    ("n_subjects", "subjects", "-"),
    ("bias", "mean difference (reported - reference)", "value"),
    ("sd_diff", "SD of the differences", "sd"),
    ("sd_between", "between-subject SD of the differences", "sd"),
    ("sd_within", "within-subject SD of the differences", "sd"),
    ("loa_low", "lower limit of agreement", "value"),
    ("loa_high", "upper limit of agreement", "value"),
    ("proportional_bias_slope", "slope of the differences on the means", "slope"),
    ("proportional_bias_p", "p-value of that slope", "-"),
    ("ccc", "Lin's concordance correlation coefficient", "-"),
    ("icc", "ICC(2,1): two-way, absolute agreement, single measures", "-"),
    ("icc_consistency", "ICC(3,1): two-way, consistency, single measures", "-"),
    ("pearson_r", "Pearson correlation", "-"),
    ("mae", "mean absolute error", "raw"),
    ("mape_pct", "mean absolute percentage error", "pct"),
    ("typical_error", "typical error of the estimate (reference on reported)", "raw"),
    ("mean_reported", "mean of the reported values", "raw"),
    ("mean_reference", "mean of the reference values", "raw"),
)


def unit_of(name: str | None) -> str | None:
    """The unit implied by a metric name's suffix (``"rmssd_ms"`` -> ``"ms"``), or None."""
    if not name:
        return None
    for suffix, unit in _UNIT_SUFFIXES:
        if str(name).endswith(suffix):
            return unit
    return None


@dataclass(frozen=True, slots=True, eq=False)
class AgreementResult:
    """Agreement statistics of one set of paired values.

    Attributes
    ----------
    stats : Mapping[str, float]
        Every statistic by name (read-only); intervals as ``<name>_ci_low`` / ``<name>_ci_high``.
        See `agreement` for the list and the scale they are on.
    pairs : pandas.DataFrame
        The pairs analysed: ``subject`` (when known), ``date`` (when joined on dates),
        ``reported``, ``reference``, ``diff`` and ``mean`` (on the analysis scale: log ratios and
        means of logs when ``ratio`` is True).
    notes : tuple of str
        What the reader should know (pairs excluded, repeated nights, small samples, ...).
    metric, unit : str or None
        What was compared and its unit (for labels).
    multiplier, confidence : float
        Limits at ``bias ± multiplier × SD``; level of every interval.
    ratio : bool
        True for the log-transformed (ratio) analysis: bias and limits are ratios
        reported/reference.
    unmatched : pandas.DataFrame or None
        Table rows that found no partner (joined tables only), with the side they came from.
    """

    stats: Mapping[str, float]
    pairs: Any
    notes: tuple[str, ...] = ()
    metric: str | None = None
    unit: str | None = None
    multiplier: float = 1.96
    confidence: float = 0.95
    ratio: bool = False
    unmatched: Any = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "stats", MappingProxyType({str(k): float(v)
                                                            for k, v in self.stats.items()}))
        object.__setattr__(self, "notes", tuple(self.notes))

    # ------------------------------------------------------------------ views
    @property
    def repeated(self) -> bool:
        """True when repeated pairs per subject were analysed as Bland & Altman (2007) describe."""
        return bool(self.stats.get("repeated", 0.0))

    @property
    def table(self):
        """One row per statistic: ``statistic, estimate, ci_low, ci_high, unit, meaning``.

        Returns
        -------
        pandas.DataFrame
        """
        import pandas as pd

        rows = []
        scaled = ("value", "sd", "slope")
        for name, meaning, kind in _TABLE_ROWS:
            if name not in self.stats:
                continue
            value = self.stats[name]
            if name in ("sd_between", "sd_within", "n_subjects") and not np.isfinite(value):
                continue
            rows.append({
                "statistic": name,
                "estimate": value,
                "ci_low": self.stats.get(f"{name}_ci_low", np.nan),
                "ci_high": self.stats.get(f"{name}_ci_high", np.nan),
                "unit": self._unit_for(kind),
                "meaning": meaning + (" (ratio scale)" if self.ratio and kind in scaled else ""),
            })
        return pd.DataFrame(rows, columns=["statistic", "estimate", "ci_low", "ci_high", "unit",
                                           "meaning"])

    def _unit_for(self, kind: str) -> str:
        unit = self.unit or ""
        if kind == "value":
            return "ratio" if self.ratio else unit
        if kind == "sd":
            return "log ratio" if self.ratio else unit
        if kind == "slope":
            return "per log unit" if self.ratio else f"{unit} per {unit}".strip() if unit else ""
        if kind == "raw":
            return unit
        if kind == "pct":
            return "%"
        return ""

    def to_dict(self) -> dict[str, Any]:
        """Plain dict of the statistics plus the settings (for JSON)."""
        out: dict[str, Any] = dict(self.stats)
        out.update(metric=self.metric, unit=self.unit, multiplier=self.multiplier,
                   confidence=self.confidence, ratio=self.ratio, notes=list(self.notes))
        return out

    def icc_band(self) -> str:
        """The ICC's band after Koo & Li (2016), judged on its confidence interval."""
        lo, hi = self.stats.get("icc_ci_low", np.nan), self.stats.get("icc_ci_high", np.nan)
        if not (np.isfinite(lo) and np.isfinite(hi)):
            est = self.stats.get("icc", np.nan)
            return "not assessed" if not np.isfinite(est) else f"{_koo_li(est)} (no interval)"
        a, b = _koo_li(lo), _koo_li(hi)
        return a if a == b else f"{a} to {b}"

    def summary_text(self) -> str:
        """A readable multi-line summary with the interpretation of each statistic."""
        from ._text import summary_text

        return summary_text(self)

    def plot(self, path=None, **options):
        """Draw the Bland-Altman figure (see `rrkit.plots.bland_altman`); returns the Figure."""
        from ..plots._agreement import bland_altman

        return bland_altman(self, path=path, **options)

    def __repr__(self) -> str:
        s = self.stats
        return (f"AgreementResult(metric={self.metric!r}, n={int(s.get('n', 0))}, "
                f"bias={s.get('bias', np.nan):.4g}, loa=({s.get('loa_low', np.nan):.4g}, "
                f"{s.get('loa_high', np.nan):.4g}), ccc={s.get('ccc', np.nan):.3f}, "
                f"ratio={self.ratio})")


def _koo_li(x: float) -> str:
    for edge, name in _KOO_LI_BANDS:
        if x < edge:
            return name
    return _KOO_LI_BANDS[-1][1]


# ---------------------------------------------------------------------------- the entry point
def agreement(
    reported,
    reference,
    *,
    subject=None,
    multiplier: float = 1.96,
    ratio: bool = False,
    confidence: float = 0.95,
    repeated: str | bool = "auto",
    on: Sequence[str] = ("subject", "date"),
    value: str | tuple[str, str] | None = None,
    metric: str | None = None,
    unit: str | None = None,
) -> AgreementResult:
    """Agreement statistics of device-reported values against reference values.

    Parameters
    ----------
    reported, reference : array_like or pandas.Series or pandas.DataFrame
        Either two aligned 1-D sequences of equal length (paired by position), or two tables
        joined on the ``on`` columns (subject and date by default), each holding the value column
        named by ``value``. Pairs where either value is missing (NaN) are excluded and counted
        in the notes; rows of a table with no partner are listed in ``result.unmatched``.
    subject : array_like, optional
        Subject id of each pair, for aligned sequences (tables use their ``subject`` column).
        With repeated pairs per subject, the limits follow Bland & Altman (2007).
    multiplier : float
        Limits of agreement at ``bias ± multiplier × SD``; default 1.96 (Bland & Altman 1986 used
        2 in their worked example).
    ratio : bool
        Analyse log-transformed values (Bland & Altman 1999, section 7), advised when the
        differences grow with the magnitude, as is usual for RMSSD. Bias, limits and their
        intervals are then back-transformed to ratios reported/reference; ``sd_diff`` is the
        SD of the natural-log ratios. Needs positive values.
    confidence : float
        Level of every confidence interval (default 0.95). pingouin gives the ICC's interval at
        95% only: at other levels ``icc_ci_*`` are NaN with a note.
    repeated : {"auto", True, False}
        ``"auto"`` (default) analyses repeated pairs per subject by their variance components
        when subjects are known and any has more than one pair; False treats all pairs as
        independent (and says so in the notes when that ignores repeats).
    on : sequence of str
        Join columns for tables (default ``("subject", "date")``). Dates are compared as
        calendar dates (``YYYY-MM-DD``).
    value : str or (str, str), optional
        Value column of both tables, or ``(reported_column, reference_column)``. When omitted, each
        table must have exactly one numeric column besides the join columns.
    metric, unit : str, optional
        Labels for tables and the plot; ``metric`` defaults to the value column and ``unit`` to
        the unit its name implies (``rmssd_ms`` -> ms).

    Returns
    -------
    AgreementResult
        ``.stats`` holds ``n``, ``n_subjects``, ``n_excluded``, ``bias``, ``sd_diff``,
        ``loa_low``, ``loa_high``, ``sd_between`` and ``sd_within`` (repeated pairs only),
        ``proportional_bias_slope``, ``proportional_bias_intercept``, ``proportional_bias_p``,
        ``ccc``, ``icc`` (ICC(2,1)), ``icc_consistency`` (ICC(3,1)), ``pearson_r``,
        ``pearson_p``, ``mae``, ``mape_pct``, ``typical_error``, ``mean_reported``,
        ``mean_reference``, ``repeated`` (1.0 or 0.0), and ``<name>_ci_low`` /
        ``<name>_ci_high`` for the bias, the SD, both limits, the slope, the CCC, both ICCs, r,
        MAE, MAPE and the typical error.

    Raises
    ------
    InputError
        Sequences of unequal length, non-numeric values, duplicated keys in a table, a missing
        column, non-positive values with ``ratio=True``, fewer than 3 pairs.

    Notes
    -----
    With ``d = reported - reference`` and ``m = (reported + reference) / 2``:

    * bias ``mean(d)``; SD ``s`` with ddof = 1; limits ``bias ± multiplier s``; SE of the bias
      ``s / sqrt(n)`` and of a limit ``sqrt(3 s^2 / n)``, intervals with ``t(n-1)``
      (Bland & Altman 1986);
    * repeated pairs: ``s^2 = s_b^2 + s_w^2`` from a one-way analysis of variance of ``d`` by
      subject (Bland & Altman 2007); see `rrkit.agreement._stats.bland_altman`;
    * proportional bias: least-squares slope of ``d`` on ``m`` (statsmodels; cluster-robust by
      subject for repeated pairs), on the log scale in the ratio analysis;
    * CCC (Lin 1989) and its interval on Fisher's z with Lin's variance; ICC(2,1) and ICC(3,1)
      (Shrout & Fleiss 1979) from pingouin; Pearson's r with the Fisher-z interval (scipy);
      MAE ``mean|d|``, MAPE ``100 mean(|d| / |reference|)``, each with a t interval; typical
      error of the estimate: residual SD of the reference regressed on the reported value.

    CCC, ICC, r, MAE, MAPE and the typical error are always computed on the original scale, and
    on all pairs even when they are repeated within subjects (their intervals then assume
    independent pairs and are too narrow; the notes say so).

    References
    ----------
    Bland JM, Altman DG (1986). Statistical methods for assessing agreement between two methods
    of clinical measurement. Lancet 327(8476):307-310. doi:10.1016/S0140-6736(86)90837-8

    Bland JM, Altman DG (1999). Measuring agreement in method comparison studies. Stat Methods
    Med Res 8(2):135-160. doi:10.1177/096228029900800204

    Bland JM, Altman DG (2007). Agreement between methods of measurement with multiple
    observations per individual. J Biopharm Stat 17(4):571-582. doi:10.1080/10543400701329422

    Lin LI-K (1989). A concordance correlation coefficient to evaluate reproducibility.
    Biometrics 45(1):255-268. doi:10.2307/2532051

    Shrout PE, Fleiss JL (1979). Intraclass correlations: uses in assessing rater reliability.
    Psychol Bull 86(2):420-428. doi:10.1037/0033-2909.86.2.420

    Koo TK, Li MY (2016). A guideline of selecting and reporting intraclass correlation
    coefficients for reliability research. J Chiropr Med 15(2):155-163.
    doi:10.1016/j.jcm.2016.02.012

    Examples
    --------
    >>> res = agreement([52.0, 61.0, 47.0, 70.0, 58.0], [50.0, 60.0, 49.0, 66.0, 55.0])
    >>> round(res.stats["bias"], 2)
    1.6
    """
    multiplier = check_range("multiplier", multiplier, low=0, low_inclusive=False)
    confidence = check_range("confidence", confidence, low=0, high=1, low_inclusive=False,
                             high_inclusive=False)
    check_option("repeated", repeated, ("auto", True, False))
    ratio = bool(ratio)
    notes: list[str] = []
    rep, ref, subj, dates, unmatched, value_name = _pairs(reported, reference, subject=subject,
                                                         on=tuple(on), value=value, notes=notes)
    metric = metric or value_name
    unit = unit if unit is not None else unit_of(metric)

    ok = np.isfinite(rep) & np.isfinite(ref)
    n_excluded = int((~ok).sum())
    if n_excluded:
        notes.append(f"{n_excluded} pair(s) excluded because a value is missing (NaN)")
        log.info("agreement: %d pair(s) excluded because a value is missing", n_excluded)
    rep, ref = rep[ok], ref[ok]
    subj = None if subj is None else subj[ok]
    dates = None if dates is None else dates[ok]
    if rep.size < 3:
        raise InputError(f"agreement needs at least 3 complete pairs; got {rep.size}")
    if ratio:
        bad = np.flatnonzero((rep <= 0) | (ref <= 0))
        if bad.size:
            i = int(bad[0])
            raise InputError(
                f"ratio=True needs positive values; pair {i} has reported {rep[i]!r} and "
                f"reference {ref[i]!r}", hint="use ratio=False for values that can be <= 0")
        a, b = np.log(rep), np.log(ref)
    else:
        a, b = rep, ref
    diff = a - b
    mean = (a + b) / 2.0

    groups = None
    has_repeats = subj is not None and np.unique(subj).size < subj.size
    if has_repeats:
        if repeated is False:
            notes.append("repeated pairs per subject were treated as independent (repeated=False):"
                         " the limits of agreement and all intervals are too narrow")
        else:
            groups = subj
            notes.append("repeated pairs per subject: the SD of the differences combines between- "
                         "and within-subject variance (Bland & Altman 2007); CCC, ICC, r and the"
                         " error statistics treat the pairs as independent")
    elif subj is None and repeated is True:
        raise InputError("repeated=True needs the subject of each pair",
                         hint="pass subject=... or tables with a 'subject' column")

    out: dict[str, float] = {}
    out.update(_stats.bland_altman(diff, multiplier=multiplier, confidence=confidence,
                                   groups=groups))
    if subj is not None:
        out["n_subjects"] = float(np.unique(subj).size)
    if ratio:
        out["sd_log_ratio"] = out["sd_diff"]
        for key in ("bias", "bias_ci_low", "bias_ci_high", "loa_low", "loa_high",
                    "loa_low_ci_low", "loa_low_ci_high", "loa_high_ci_low", "loa_high_ci_high"):
            out[key] = float(np.exp(out[key]))
    out.update(_stats.proportional_bias(diff, mean, confidence=confidence, groups=groups))
    out.update(_stats.ccc(rep, ref, confidence=confidence))
    out.update(_stats.icc_pingouin(np.column_stack([rep, ref])))
    if not math.isclose(confidence, 0.95):
        for key in ("icc", "icc_consistency"):
            out[f"{key}_ci_low"] = out[f"{key}_ci_high"] = float("nan")
        notes.append("the ICC intervals are available at 95% only (pingouin) and are left empty")
    out.update(_stats.pearson(rep, ref, confidence=confidence))
    out.update(_stats.mean_abs(np.abs(rep - ref), "mae", confidence=confidence))
    nonzero = ref != 0
    if nonzero.all():
        out.update(_stats.mean_abs(100.0 * np.abs(rep - ref) / np.abs(ref), "mape_pct",
                                   confidence=confidence))
    else:
        out.update(mape_pct=np.nan, mape_pct_ci_low=np.nan, mape_pct_ci_high=np.nan)
        notes.append(f"MAPE not computed: {int((~nonzero).sum())} reference value(s) are 0")
    out.update(_stats.typical_error(rep, ref, confidence=confidence))
    out.update(mean_reported=float(rep.mean()), mean_reference=float(ref.mean()),
               n_excluded=float(n_excluded))
    out["n"] = float(rep.size)
    if rep.size < 10:
        notes.append(f"only {rep.size} pairs: the intervals are wide and the normal-theory "
                     "approximations rough")
    p = out.get("proportional_bias_p", np.nan)
    if np.isfinite(p) and p < 1.0 - confidence:
        notes.append("the differences change with the magnitude (proportional bias): the limits"
                     " are not constant over the range" + ("" if ratio else
                                                           "; consider ratio=True"))

    import pandas as pd

    pairs = pd.DataFrame({"reported": rep, "reference": ref, "diff": diff, "mean": mean})
    if dates is not None:
        pairs.insert(0, "date", dates)
    if subj is not None:
        pairs.insert(0, "subject", subj)
    return AgreementResult(stats=out, pairs=pairs, notes=tuple(notes), metric=metric, unit=unit,
                           multiplier=multiplier, confidence=confidence, ratio=ratio,
                           unmatched=unmatched)


# ---------------------------------------------------------------------------- building pairs
def _pairs(reported, reference, *, subject, on, value, notes):
    import pandas as pd

    rep_is_table = isinstance(reported, pd.DataFrame)
    ref_is_table = isinstance(reference, pd.DataFrame)
    if rep_is_table != ref_is_table:
        raise InputError(
            "reported and reference must both be tables or both be sequences; got "
            f"{type(reported).__name__} and {type(reference).__name__}")
    if rep_is_table:
        if subject is not None:
            raise InputError("subject= is for aligned sequences; tables use their own column",
                             hint=f"join columns: {list(on)}")
        return _join_tables(reported, reference, on=on, value=value, notes=notes)
    name = None
    if isinstance(value, str):
        name = value
    elif isinstance(reported, pd.Series) and reported.name is not None:
        name = str(reported.name)
    rep = _as_values("reported", reported)
    ref = _as_values("reference", reference)
    if rep.size != ref.size:
        raise InputError(f"reported and reference must have the same length; got {rep.size} and "
                         f"{ref.size}")
    subj = None
    if subject is not None:
        subj = np.asarray(subject).astype(str)
        if subj.ndim != 1 or subj.size != rep.size:
            raise InputError(f"subject must have one entry per pair ({rep.size}); got shape "
                             f"{subj.shape}")
    return rep, ref, subj, None, None, name


def _as_values(name: str, values) -> np.ndarray:
    try:
        arr = np.array(values, dtype=np.float64, copy=True)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be a 1-D sequence of numbers; got "
                         f"{type(values).__name__}") from None
    if arr.ndim != 1:
        raise InputError(f"{name} must be 1-D; got shape {arr.shape}")
    bad = np.flatnonzero(np.isinf(arr))
    if bad.size:
        raise InputError(f"{name} must be finite or NaN (missing); element {bad[0]} is "
                         f"{arr[bad[0]]!r}")
    return arr


def _value_column(table, side: str, on, value) -> str:
    if value is not None:
        col = value if isinstance(value, str) else value[0 if side == "reported" else 1]
        if col not in table.columns:
            raise InputError(f"{side} table has no column {col!r}; columns: {list(table.columns)}")
        return col
    numeric = [c for c in table.columns if c not in on and np.issubdtype(table[c].dtype,
                                                                          np.number)]
    if len(numeric) != 1:
        raise InputError(f"{side} table: cannot tell which column holds the values "
                         f"(numeric columns {numeric})", hint="pass value='column_name'")
    return numeric[0]


def _normalise_keys(table, on, side: str):
    import pandas as pd

    missing = [c for c in on if c not in table.columns]
    if missing:
        raise InputError(f"{side} table has no column(s) {missing} to join on; columns: "
                         f"{list(table.columns)}")
    keys = pd.DataFrame(index=table.index)
    for col in on:
        s = table[col]
        if col == "date" or pd.api.types.is_datetime64_any_dtype(s):
            # ISO 8601 only: a day-first or month-first text date (03/04/2026) is refused
            # rather than guessed
            parsed = s if pd.api.types.is_datetime64_any_dtype(s) else pd.to_datetime(
                s.astype(str), format="ISO8601", errors="coerce")
            bad = parsed.isna() & s.notna()
            if bad.any():
                i = int(np.flatnonzero(bad.to_numpy())[0])
                raise InputError(f"{side} table, row {i + 1}: {col} {s.iloc[i]!r} is not a date; "
                                 "expected YYYY-MM-DD")
            keys[col] = parsed.dt.strftime("%Y-%m-%d")
        else:
            keys[col] = s.astype(str)
    dup = keys.duplicated(keep=False)
    if dup.any():
        i = int(np.flatnonzero(dup.to_numpy())[0])
        raise InputError(f"{side} table, row {i + 1}: {dict(keys.iloc[i])} appears more than once;"
                         " expected one value per key")
    return keys


def _join_tables(reported, reference, *, on, value, notes):
    import pandas as pd

    rcol = _value_column(reported, "reported", on, value)
    fcol = _value_column(reference, "reference", on, value)
    left = _normalise_keys(reported, on, "reported")
    left["reported"] = pd.to_numeric(reported[rcol], errors="coerce")
    right = _normalise_keys(reference, on, "reference")
    right["reference"] = pd.to_numeric(reference[fcol], errors="coerce")
    for side, table, col, frame in (("reported", reported, rcol, left),
                                    ("reference", reference, fcol, right)):
        bad = frame[side].isna() & table[col].notna()
        if bad.any():
            i = int(np.flatnonzero(bad.to_numpy())[0])
            raise InputError(f"{side} table, row {i + 1}: {col} is {table[col].iloc[i]!r}; "
                             "expected a number")
    merged = left.merge(right, on=list(on), how="outer", indicator=True, sort=True)
    both = merged[merged["_merge"] == "both"]
    lonely = merged[merged["_merge"] != "both"]
    unmatched = None
    if len(lonely):
        unmatched = lonely[list(on)].copy()
        unmatched["side"] = np.where(lonely["_merge"] == "left_only", "reported", "reference")
        unmatched = unmatched.reset_index(drop=True)
        n_rep = int((unmatched["side"] == "reported").sum())
        n_ref = len(unmatched) - n_rep
        notes.append(f"{n_rep} reported and {n_ref} reference row(s) had no partner and are not "
                     "analysed (see result.unmatched)")
        log.info("agreement: %d unmatched rows", len(unmatched))
    if both.empty:
        raise InputError(f"the tables share no {'/'.join(on)} key; nothing to compare")
    subj = both["subject"].to_numpy(dtype=str) if "subject" in on else None
    dates = both["date"].to_numpy(dtype=str) if "date" in on else None
    name = rcol if rcol == fcol else f"{rcol} vs {fcol}"
    return (both["reported"].to_numpy(dtype=float), both["reference"].to_numpy(dtype=float), subj,
            dates, unmatched, name)
