"""The examples in the docstrings run and give what they show (numpydoc Examples sections)."""

import doctest
import importlib
from pathlib import Path

import pytest

PKG = Path(__file__).resolve().parents[1] / "rrkit"
MODULES = sorted(
    ".".join(("rrkit", *p.relative_to(PKG).with_suffix("").parts)).removesuffix(".__init__")
    for p in PKG.rglob("*.py")
    if p.name != "__main__.py"
)


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE,
                             verbose=False, report=True)
    assert result.failed == 0, f"{result.failed} docstring example(s) failed in {name}"
