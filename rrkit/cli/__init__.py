"""The ``rrkit`` command line: parsing and printing only; every command calls the library.

Each subcommand lives in its own module ``rrkit/cli/_<name>.py`` exposing a click command named
``command`` that returns an exit code. User mistakes (`rrkit.InputError`, missing files) print
one line ``rrkit: error: ...`` and exit 2; ``--debug`` shows the traceback instead.

Console example::

    $ rrkit info data_samples/lab/lab_A01.csv
    $ rrkit --help
"""

from __future__ import annotations

import importlib
import re
import sys
from collections.abc import Sequence

import click

from .._version import __version__
from ..errors import InputError

__all__ = ["cli", "error_line", "main"]

# subcommand name -> module under rrkit.cli (one module per command)
_COMMANDS = ("info", "clean", "analyze", "daily", "agree", "plot", "demo", "model")


class _Group(click.Group):
    """Loads each subcommand's module only when it is listed or called (fast start-up)."""

    def list_commands(self, ctx):
        return [name for name in _COMMANDS if self._load(name) is not None]

    def get_command(self, ctx, cmd_name):
        if cmd_name not in _COMMANDS:
            return None
        return self._load(cmd_name)

    @staticmethod
    def _load(name):
        try:
            module = importlib.import_module(f"rrkit.cli._{name}")
        except ModuleNotFoundError as exc:  # a command still being built in this checkout
            if exc.name == f"rrkit.cli._{name}":
                return None
            raise
        return module.command


_CONTEXT = {"help_option_names": ["-h", "--help"], "max_content_width": 100}


@click.group(cls=_Group, context_settings=_CONTEXT)
@click.version_option(__version__, "--version", prog_name="rrkit", message="%(prog)s %(version)s")
@click.option("--debug", is_flag=True, help="Show the full traceback when something fails.")
@click.pass_context
def cli(ctx: click.Context, debug: bool) -> None:
    """rrkit: beat-to-beat heart data, read, cleaned, measured and tabulated.

    rrkit is not a medical device and makes no diagnosis. Run `rrkit COMMAND --help` for the
    options of each command.
    """
    ctx.ensure_object(dict)
    ctx.obj["debug"] = debug


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line with ``argv`` (default ``sys.argv[1:]``) and return the exit code."""
    args = list(sys.argv[1:] if argv is None else argv)
    debug = "--debug" in args
    try:
        rv = cli.main(args=args, prog_name="rrkit", standalone_mode=False)
    except click.exceptions.Exit as exc:
        return int(exc.exit_code)
    except click.exceptions.Abort:
        click.echo("rrkit: aborted", err=True)
        return 130
    except click.ClickException as exc:  # usage errors: bad option, missing argument
        if debug:
            raise
        exc.show()
        return 2
    except (InputError, FileNotFoundError, IsADirectoryError, PermissionError) as exc:
        if debug:
            raise
        name = next((a for a in args if not a.startswith("-")), None)
        click.echo(f"rrkit: error: {error_line(exc, name)}", err=True)
        return 2
    if rv is None:
        return 0
    return int(rv)


def _one_line(exc: BaseException) -> str:
    if isinstance(exc, OSError) and exc.filename is not None:
        return f"{exc.filename}: {exc.strerror or exc}"
    return " ".join(str(exc).split())


# a library hint such as "pass unit='ms'" or "fs=250": the keyword and its optional value
_KEYWORD_HINT = re.compile(r"\b(kind|unit|fs|column|detector)=(?:'([^']*)'|(\d+(?:\.\d+)?))?")


def error_line(exc: BaseException, command: str | None = None) -> str:
    """The one-line message of ``exc``, its keyword hints spelled as ``command``'s options.

    The library's messages name Python keywords (``pass fs= in Hz``); on the command line the
    same advice reads ``pass --fs in Hz``. Only keywords that ``command`` has as options are
    rewritten.
    """
    text = _one_line(exc)
    cmd = _Group._load(command) if command in _COMMANDS else None
    if cmd is None:
        return text
    options = {p.name for p in cmd.params if isinstance(p, click.Option)}

    def option(m: re.Match) -> str:
        if m.group(1) not in options:
            return m.group(0)
        value = m.group(2) if m.group(2) is not None else m.group(3)
        return f"--{m.group(1)}" + (f" {value}" if value else "")

    return _KEYWORD_HINT.sub(option, text)
