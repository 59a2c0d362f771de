"""Start-up stays light: `import rrkit` and `rrkit --help/--version` load only what they need.
Checked on the modules a fresh interpreter has loaded (sys.modules), never by timing."""

from __future__ import annotations

import inspect
import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]

#: Imported only by the code that needs them.
HEAVY = ("pandas", "scipy", "scipy.signal", "neurokit2", "matplotlib", "h5py", "numba",
         "statsmodels", "dask")


def _loaded_after(code: str) -> list[str]:
    probe = (code + "\nimport json, sys\n"
             f"print(json.dumps([m for m in {HEAVY!r} if m in sys.modules]))\n")
    res = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                         timeout=120, cwd=ROOT)
    assert res.returncode == 0, res.stderr
    return json.loads(res.stdout.strip().splitlines()[-1])


def test_import_rrkit_loads_no_heavy_module():
    assert _loaded_after("import rrkit") == []


@pytest.mark.parametrize("argv", [["--version"], ["--help"], ["analyze", "--help"]])
def test_cli_start_loads_no_heavy_module(argv):
    code = ("import contextlib, io\nfrom rrkit.cli import main\n"
            f"with contextlib.redirect_stdout(io.StringIO()):\n    main({argv!r})\n")
    loaded = _loaded_after(code)
    if argv[0] == "analyze":  # the analyze command itself may load its stage, but no plots
        loaded = [m for m in loaded if m in ("matplotlib", "neurokit2", "numba", "dask")]
    assert loaded == []


def test_public_names_resolve_lazily():
    import rrkit

    for name in rrkit.__all__:
        assert getattr(rrkit, name) is not None, name
    import rrkit.metrics  # binding the subpackage keeps the public function
    assert callable(rrkit.metrics)
    assert callable(rrkit.clean)
    assert callable(rrkit.agreement)


def test_help_summaries_are_the_commands_own():
    from rrkit.cli import _COMMANDS, _SUMMARIES, _Group

    for name in _COMMANDS:
        cmd = _Group._load(name)
        first = " ".join(inspect.cleandoc(cmd.help).split("\n\n")[0].split())
        assert _SUMMARIES[name] == first, name
