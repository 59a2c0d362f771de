"""Agreement between device-reported values and values recomputed from the raw intervals.

`agreement` takes paired values (two aligned arrays, or two tables joined on subject and date)
and returns an `AgreementResult`: Bland-Altman bias and limits of agreement with their
confidence intervals, proportional bias, Lin's concordance correlation coefficient, the
ICC(2,1), Pearson's r, mean absolute (percentage) error and the typical error of the estimate,
as a dict, a table and a readable summary, with a Bland-Altman figure.

Differences are always ``reported - reference``: a positive bias means the device reads high.

The reference side can be built from raw nights (`reference_table`: a definition of which part
of the night counts, and a cleaning setting), and `search_definitions` ranks a grid of
definitions x cleanings by how closely the reported values follow each.

The package: ``_core`` (`agreement`, `AgreementResult`), ``_stats`` (the cited statistics),
``_text`` (the readable summary), ``_reference`` (reference definitions as aggregations over
the window table) and ``_search`` (the comparison and ranking of definitions).
"""

from ._core import AgreementResult, agreement, unit_of
from ._files import read_reported
from ._reference import (
    CLEANINGS,
    REFERENCE_DEFINITIONS,
    ReferenceDefinition,
    as_cleaning,
    as_definition,
    night_date,
    reference_table,
)
from ._search import DefinitionSearch, search_definitions

__all__ = [
    "CLEANINGS",
    "REFERENCE_DEFINITIONS",
    "AgreementResult",
    "DefinitionSearch",
    "ReferenceDefinition",
    "agreement",
    "as_cleaning",
    "as_definition",
    "night_date",
    "read_reported",
    "reference_table",
    "search_definitions",
    "unit_of",
]
