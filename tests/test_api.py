"""The public API, pinned: an unintended change to what ``rrkit`` exports fails here.

Add a name on purpose by adding it below (and to CHANGELOG.md); remove one only with a
deprecation cycle.
"""

import inspect

import rrkit

PUBLIC = {
    "AgreementResult", "Bands", "BaselineSettings", "CleanResult", "CleanSettings", "CleanSummary",
    "DailySettings", "DefinitionSearch", "InputError", "MORNING", "MetricsResult",
    "MetricsSettings", "QualityWarning", "ReadInfo", "Recording", "ReferenceDefinition",
    "RrkitWarning", "Spectrum", "Window", "__version__", "agreement", "analyze", "clean",
    "daily_table", "metrics", "parse_window", "read", "reference_table", "resolve_windows",
    "run_daily", "search_definitions", "spectrum", "windows", "write_rr",
    # simultaneous recordings of one heart
    "Alignment", "BeatPairs", "DeviceComparison", "align", "compare_devices", "pair_beats",
    # the settings tree of a daily run and the one window table
    "DaySelection", "QualityRules", "window_rows",
    "covariates", "model",
}


def test_all_is_the_pinned_public_api():
    assert set(rrkit.__all__) == PUBLIC
    assert len(rrkit.__all__) == len(set(rrkit.__all__)), "a name is listed twice in __all__"


def test_every_public_name_exists():
    for name in rrkit.__all__:
        assert hasattr(rrkit, name), name


def test_public_functions_take_options_by_keyword_only():
    # STYLE.md: options after `*`; only the data arguments may be positional
    positional_ok = {
        "read": {"path"}, "write_rr": {"path", "rr"}, "clean": {"recording"},
        "metrics": {"data"}, "spectrum": {"data"}, "analyze": {"recording"},
        "parse_window": {"text"}, "resolve_windows": {"spec", "recording"},
        "agreement": {"reported", "reference"}, "reference_table": {"nights"},
        "search_definitions": {"reported", "nights"}, "daily_table": {"recordings"},
        "run_daily": {"root", "outdir"}, "window_rows": {"recording"},
        "align": {"reference", "device"}, "pair_beats": {"reference", "device"},
        "compare_devices": {"reference", "device"},
    }
    for name, allowed in positional_ok.items():
        sig = inspect.signature(getattr(rrkit, name))
        positional = {p.name for p in sig.parameters.values()
                      if p.kind in (p.POSITIONAL_ONLY, p.POSITIONAL_OR_KEYWORD)}
        extra = sorted(positional - allowed)
        assert not extra, f"rrkit.{name}: {extra} should be keyword-only"


def test_public_callables_have_numpydoc_docstrings():
    for name in rrkit.__all__:
        obj = getattr(rrkit, name)
        if inspect.isfunction(obj) or inspect.isclass(obj):
            doc = inspect.getdoc(obj) or ""
            assert doc.strip(), f"rrkit.{name} has no docstring"
        if inspect.isfunction(obj):
            doc = inspect.getdoc(obj)
            assert "Parameters\n----------" in doc or not inspect.signature(obj).parameters, (
                f"rrkit.{name}: docstring lacks a numpydoc Parameters section"
            )
