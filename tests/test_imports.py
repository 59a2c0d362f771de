"""The stage order of the package, pinned: a stage imports only the stages before it.

io -> recording -> clean -> windows -> metrics -> tables (daily, agreement) -> batch -> cli
(DEVELOPERS.md, "Layout"). The check reads every module's ``import`` statements with `ast`
(no import side effects), resolves rrkit-internal ones to their stage, and fails when a module
reaches *up* the pipeline. A second check imports each module in a fresh interpreter, so that a
module which only works because something else was imported first is caught; and one checks that
``import rrkit`` pulls in no plotting, Parquet, WFDB or EDF library.
"""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

PKG = Path(__file__).resolve().parents[1] / "rrkit"

# Stage rank of each top-level part of the package (lower runs earlier in the pipeline).
RANK = {
    "_version": 0, "errors": 0, "_validation": 0, "_atomic": 0, "_plain": 0, "_time": 0,
    "_breathing": 0,   # breathing rate from R-wave amplitudes: used by io, metrics, analysis
    "_spline": 0,  # the one cubic spline: cleaning interpolates with it, spectra resample
    "recording": 1,
    "io": 2,
    "clean": 3,
    "windows": 4,
    "metrics": 5,
    "analysis": 6,
    "daily": 7, "agreement": 7, "exercise": 7,
    "_premature": 7,  # premature-beat cautions of a daily table
    "pairing": 7,      # simultaneous recordings: analysis and agreement on two recordings
    "io.store": 7,     # the HDF5 store keeps clean results and window metrics
    "covariates": 7,   # daily covariates joined onto the daily table
    "batch": 8,
    "report": 8,       # the squad page reads a run's outputs and draws with plots
    "model": 8,        # models of the (joined) daily table; figures from plots
    "plots": 7,        # figures draw results of the stages before; results offer .plot()
    "simulate": 9,     # simulations sit on top: the demo squad is built with the whole pipeline
    "cli": 10,
    "__main__": 10,
    "": 10,            # ``from .. import name``: the public API, for the command line only
}


def _stage(dotted: str) -> str | None:
    """Most specific key of RANK for a module path relative to rrkit (``io._text`` -> ``io``)."""
    if dotted == "":
        return ""
    parts = dotted.split(".")
    for n in range(len(parts), 0, -1):
        key = ".".join(parts[:n])
        if key in RANK:
            return key
    return None


def _modules():
    for path in sorted(PKG.rglob("*.py")):
        rel = path.relative_to(PKG).with_suffix("")
        parts = list(rel.parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        if not parts:
            continue  # rrkit/__init__.py re-exports everything by design
        yield path, ".".join(parts)


def _internal_imports(path: Path, dotted: str):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    is_pkg = path.name == "__init__.py"
    base = dotted.split(".") if is_pkg else dotted.split(".")[:-1]
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                anchor = base[: len(base) - (node.level - 1)] if node.level > 1 else base
                target = ".".join([*anchor, *(node.module.split(".") if node.module else [])])
                if node.module:
                    names = [target]
                else:
                    names = [f"{target}.{a.name}".strip(".") for a in node.names]
            elif node.module and node.module.split(".")[0] == "rrkit":
                names = [node.module.removeprefix("rrkit").lstrip(".")]
            else:
                continue
            for name in names:
                # ``from .. import read`` names the package itself, not a submodule
                if not node.module and name.split(".")[0] not in RANK and name.count(".") == 0:
                    name = ""
                yield name, node.lineno
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.split(".")[0] == "rrkit" and alias.name != "rrkit":
                    yield alias.name.removeprefix("rrkit."), node.lineno


MODULES = list(_modules())


@pytest.mark.parametrize(("path", "dotted"), MODULES, ids=[d for _, d in MODULES])
def test_stage_imports_only_earlier_stages(path, dotted):
    own = _stage(dotted)
    assert own is not None, f"rrkit.{dotted} has no stage in RANK: add it to tests/test_imports.py"
    for name, lineno in _internal_imports(path, dotted):
        other = _stage(name)
        assert other is not None, f"rrkit.{dotted} line {lineno}: unknown module rrkit.{name}"
        assert RANK[other] <= RANK[own], (
            f"rrkit.{dotted} (stage {own}) imports rrkit.{name} (stage {other}) at line {lineno}: "
            "a stage may import only the stages before it"
        )


def _module_names() -> set[str]:
    return {d for _, d in MODULES}


def _graph() -> dict[str, set[str]]:
    """rrkit module -> the rrkit modules it imports, anywhere in its code (also inside
    functions: an import deferred to call time is still a dependency). ``from pkg import sub``
    counts as importing ``pkg`` and ``pkg.sub``; the package root ("") is a node too."""
    known = _module_names() | {""}
    graph: dict[str, set[str]] = {d: set() for d in known}
    for path, dotted in MODULES:
        tree = ast.parse(path.read_text(encoding="utf-8"))
        base = dotted.split(".") if path.name == "__init__.py" else dotted.split(".")[:-1]
        for node in ast.walk(tree):
            targets: list[str] = []
            if isinstance(node, ast.ImportFrom):
                if node.level:
                    anchor = base[: len(base) - (node.level - 1)] if node.level > 1 else base
                    mod = ".".join([*anchor, *(node.module.split(".") if node.module else [])])
                elif node.module and node.module.split(".")[0] == "rrkit":
                    mod = node.module.removeprefix("rrkit").lstrip(".")
                else:
                    continue
                subs = [f"{mod}.{a.name}".strip(".") for a in node.names]
                if node.module is None:  # ``from . import x``: x itself (a module or a name)
                    targets = [t if t in known else mod for t in subs]
                else:
                    targets = [mod, *subs]
            elif isinstance(node, ast.Import):
                targets = [a.name.removeprefix("rrkit").lstrip(".") for a in node.names
                           if a.name.split(".")[0] == "rrkit"]
            for t in targets:
                if t in known and t != dotted:
                    graph[dotted].add(t)
    # the package root re-exports the public modules
    init = (PKG / "__init__.py").read_text(encoding="utf-8")
    for node in ast.walk(ast.parse(init)):
        if isinstance(node, ast.ImportFrom) and node.level == 1 and node.module:
            graph[""].add(node.module)
        elif isinstance(node, ast.ImportFrom) and node.level == 1:
            graph[""].update(a.name for a in node.names)
    return graph


def _cycle(graph: dict[str, set[str]]) -> list[str] | None:
    """One import cycle (as a path a -> b -> ... -> a), or None."""
    state: dict[str, int] = {}
    stack: list[str] = []

    def visit(n: str) -> list[str] | None:
        state[n] = 1
        stack.append(n)
        for m in sorted(graph.get(n, ())):
            if state.get(m) == 1:
                return [*stack[stack.index(m):], m]
            if m not in state:
                found = visit(m)
                if found:
                    return found
        stack.pop()
        state[n] = 2
        return None

    for n in sorted(graph):
        if n not in state:
            found = visit(n)
            if found:
                return found
    return None


def test_no_import_cycles():
    cycle = _cycle(_graph())
    shown = " -> ".join(f"rrkit.{m}" if m else "rrkit" for m in cycle or [])
    assert cycle is None, f"import cycle: {shown}"


def test_the_cycle_check_finds_a_cycle():
    # a check that cannot fail proves nothing: a planted three-module circle is reported
    planted = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}
    assert _cycle(planted) in (["a", "b", "c", "a"], ["b", "c", "a", "b"], ["c", "a", "b", "c"])
    assert _cycle({"a": {"b"}, "b": set()}) is None


def test_each_stage_imports_on_its_own():
    # one fresh interpreter per stage package or public module (private modules come with them)
    names = sorted({f"rrkit.{d}" for _, d in MODULES
                    if d != "__main__" and not d.split(".")[-1].startswith("_")})
    code = (
        "import importlib, sys, subprocess\n"
        f"names = {names!r}\n"
        "bad = []\n"
        "for n in names:\n"
        "    r = subprocess.run([sys.executable, '-c', f'import {n}'],\n"
        "                       capture_output=True, text=True)\n"
        "    if r.returncode: bad.append((n, r.stderr.strip().splitlines()[-1:]))\n"
        "print(bad)\n"
        "sys.exit(1 if bad else 0)\n"
    )
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=600)
    assert res.returncode == 0, res.stdout + res.stderr


def test_import_rrkit_is_light():
    code = (
        "import sys, rrkit\n"
        "lazy = ('matplotlib', 'pyarrow', 'wfdb', 'pyedflib', 'pingouin', 'statsmodels')\n"
        "heavy = [m for m in lazy if m in sys.modules]\n"
        "print(heavy)\n"
        "sys.exit(1 if heavy else 0)\n"
    )
    res = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert res.returncode == 0, f"import rrkit loads {res.stdout.strip()}: import them lazily"
