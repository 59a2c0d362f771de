"""The squad report: one self-contained HTML page a coach can open, send and print.

`write_report` reads what `rrkit daily` wrote (the daily table from ``store.h5`` or
``daily.csv``, ``errors.csv``, ``provenance.json``) and writes one HTML file: the week at a
glance (each athlete's 7-day ln-RMSSD and resting heart rate against their bands, valid
mornings, data quality, cautions), the squad overview and every athlete's trend (drawn by
`rrkit.plots`, embedded as PNG with text alternatives), the files that failed and why, the
settings and versions, and the cautions. Jinja2 is imported only when a report is made.

The daily-table columns the report reads are named in one place,
`rrkit.report._columns.COLUMNS`.

rrkit is not a medical device and makes no diagnosis.
"""

from ._load import RunFiles, load_run
from ._render import render_report, write_report

__all__ = ["RunFiles", "load_run", "render_report", "write_report"]
