"""Options shared by the commands that compute metrics (analyze, daily, plot): ``--clean``,
``--psd`` and ``--band``.

Their choices come from the library's declared constraints (`CleanSettings.constraints`,
`MetricsSettings.constraints`), so the command line offers exactly what the settings accept.
"""

from __future__ import annotations

import click

from ..clean import CleanSettings
from ..metrics import MetricsSettings

CLEAN = CleanSettings.constraints
METRICS = MetricsSettings.constraints

__all__ = ["band_option", "clean_option", "detrend_option", "psd_option"]


def clean_option(help_text: str):
    """``--clean`` (into ``clean_method``): a cleaning method of `rrkit.clean`."""
    return click.option("--clean", "clean_method", type=click.Choice(CLEAN["method"].values),
                        default="drr", show_default=True, help=help_text)


def psd_option(help_text: str, *, default: str | None = "welch"):
    """``--psd``: a spectral estimator of `rrkit.metrics`."""
    return click.option("--psd", type=click.Choice(METRICS["psd"].values), default=default,
                        show_default=default is not None, help=help_text)


def detrend_option():
    """``--detrend``: the detrending before the spectrum."""
    return click.option("--detrend", type=click.Choice(METRICS["detrend"].values),
                        default="smoothness_priors", show_default=True,
                        help="Detrending of the resampled series before the spectrum "
                             "(smoothness_priors: Tarvainen et al. 2002).")


def band_option():
    """``--band NAME=LO-HI`` (repeatable, into ``bands``), read by `rrkit.Bands.from_text`."""
    return click.option("--band", "bands", multiple=True, metavar="NAME=LO-HI",
                        help="Change a frequency band in Hz (repeatable), e.g. --band "
                             "hf=0.15-1.0 for exercise. Default Task Force 1996: vlf "
                             "0.0033-0.04, lf 0.04-0.15, hf 0.15-0.40.")
