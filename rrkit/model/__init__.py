"""Modelling the daily table: how daily covariates relate to ln-RMSSD, resting HR and the rest.

* `fit` with ``by="subject"``: one n-of-1 OLS per athlete with Newey-West HAC errors
  (`hac_lag_rule`), Durbin-Watson and Ljung-Box on the residuals;
* `fit` with ``by="squad"``: a linear mixed model (random intercept per athlete, optionally a
  random slope) with each covariate split into its within- and between-athlete parts, and a
  cluster-robust OLS cross-check;
* `compare_pooled`: within, between and naive pooled slopes of one term side by side;
* `screen`: candidates one at a time on a base model, with Benjamini-Hochberg q-values;
* `plot_coefficients`, `plot_partial`, `plain_lines`, `write_outputs`: what it says.

Formulas are statsmodels/patsy formulas (``ln_rmssd ~ load_au_lag1_within + ...``) and are
printed with every result, so a model can be pasted into a notebook. See docs/modelling.md.

These are associations in observational data, not causes (`CAUTION`).
"""

from ._compare import compare_pooled
from ._fit import BY, SE_TYPES, ModelResult, ModelSettings, fit, hac_lag_rule, nice_step, prepare
from ._report import (
    CAUTION,
    outcome_label,
    plain_lines,
    plot_coefficients,
    plot_partial,
    write_outputs,
)
from ._screen import bh_qvalues, screen

__all__ = ["BY", "CAUTION", "SE_TYPES", "ModelResult", "ModelSettings", "bh_qvalues",
           "compare_pooled", "fit",
           "hac_lag_rule", "nice_step", "outcome_label", "plain_lines", "plot_coefficients",
           "plot_partial", "prepare", "screen", "write_outputs"]
