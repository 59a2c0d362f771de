"""The daily-table columns the report reads, in one place.

Each key is the report's own name for a quantity; the value lists the daily-table column names
that hold it, the current name first (then the name rrkit 0.1.0 wrote, so older tables still
read). The first name present in a table is used, so a renamed
column (for example a band renamed to the smallest-worthwhile-change wording) needs one edit
here and nothing else in the report. Keys marked optional may be absent: the report then leaves
that part out.
"""

from __future__ import annotations

from ..errors import InputError

__all__ = ["COLUMNS", "ERROR_COLUMNS", "OPTIONAL", "resolve_columns"]

#: report name -> candidate daily-table column names (first present wins)
COLUMNS: dict[str, tuple[str, ...]] = {
    "subject": ("subject",),
    "date": ("date",),
    "quality": ("quality",),
    "quality_reason": ("quality_reason",),
    "source": ("source",),
    "caution": ("caution",),
    "ln_rmssd": ("ln_rmssd",),
    "ln_7d": ("ln_rmssd_7d",),
    "n_ok_7d": ("n_ok_7d",),
    "ln_low": ("ln_rmssd_swc_low", "ln_rmssd_band_low"),
    "ln_high": ("ln_rmssd_swc_high", "ln_rmssd_band_high"),
    "ln_below": ("below_swc", "below_band"),
    "ln_above": ("above_swc", "above_band"),
    "n_ok_baseline": ("n_ok_baseline",),
    "hr_7d": ("mean_hr_bpm_7d",),
    "hr_low": ("hr_swc_low_bpm", "hr_band_low_bpm"),
    "hr_high": ("hr_swc_high_bpm", "hr_band_high_bpm"),
    "hr_below": ("hr_below_swc", "hr_below_band"),
    "hr_above": ("hr_above_swc", "hr_above_band"),
    "week_days": ("week_days",),
    "week_ok_days": ("week_ok_days",),
}

#: report names whose column may be missing from a table (that part of the page is left out)
OPTIONAL = frozenset({"quality_reason", "source", "caution", "n_ok_7d", "n_ok_baseline",
                      "ln_above", "hr_7d", "hr_low", "hr_high", "hr_below", "hr_above",
                      "week_days", "week_ok_days"})


def resolve_columns(columns, *, where: str = "the daily table") -> dict[str, str | None]:
    """Map each report name to the column of a table that holds it.

    Parameters
    ----------
    columns : iterable of str
        The table's column names.
    where : str
        What the table is (named in the error message).

    Returns
    -------
    dict
        Report name -> column name, or None for an optional quantity the table lacks.

    Raises
    ------
    InputError
        When a required quantity has none of its column names in the table.

    Examples
    --------
    >>> resolve_columns(["subject", "date", "quality", "ln_rmssd", "ln_rmssd_7d",
    ...                  "ln_rmssd_swc_low", "ln_rmssd_swc_high", "below_swc"])["ln_low"]
    'ln_rmssd_swc_low'
    """
    present = set(map(str, columns))
    out: dict[str, str | None] = {}
    missing = []
    for key, names in COLUMNS.items():
        found = next((n for n in names if n in present), None)
        if found is None and key not in OPTIONAL:
            missing.append(" or ".join(repr(n) for n in names))
        out[key] = found
    if missing:
        shown = ", ".join(missing[:3]) + (f" and {len(missing) - 3} more" if len(missing) > 3
                                          else "")
        raise InputError(f"{where} is not a daily table: it lacks the column(s) {shown}",
                         hint="give the output folder of `rrkit daily`, its store.h5 or its "
                              "daily.csv")
    return out


#: report name -> candidate ``errors.csv`` column names (first present wins)
ERROR_COLUMNS: dict[str, tuple[str, ...]] = {
    "path": ("path", "file"),
    "error_type": ("error_type", "kind", "type"),
    "message": ("message", "reason"),
}
