"""The ``rrkit`` command line: parsing and printing only; every command calls the library.

Each subcommand lives in its own module ``rrkit/cli/_<name>.py`` exposing a click command named
``command`` that returns an exit code. Every user mistake prints one line ``rrkit: error: ...``
and exits 2: `rrkit.InputError` from the library, and click's own checks of the command line
(missing argument or file, unknown option, bad option value), all caught here in `main`;
``--debug`` shows the traceback instead.

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

__all__ = ["cli", "error_line", "main", "usage_line"]

# subcommand name -> module under rrkit.cli (one module per command)
_COMMANDS = ("info", "clean", "analyze", "daily", "agree", "model", "pair", "ramp", "plot",
             "report", "demo")


#: The first paragraph of each subcommand's help, so that ``rrkit --help`` lists the commands
#: without importing them (tests/test_cli_startup.py checks these against the commands).
_SUMMARIES = {
    "info": "Show what each FILE holds and how rrkit read it: kind, unit and how each was "
            "decided, beats, duration, start, heart-rate range, gaps and (for ECG) the "
            "detection quality.",
    "clean": "Label every interval of FILE (normal, ectopic, missed, extra, long, short, "
             "implausible), correct the artifacts and print the audit: counts, shares, longest "
             "run, premature beats per hour and the quality verdict.",
    "analyze": "HRV metrics of each analysis window of FILE... (time, frequency, nonlinear "
               "domains).",
    "daily": "One row per athlete per day from a folder of recordings, with baselines and flags.",
    "agree": "Agreement of a device's nightly values with values recomputed from the raw nights.",
    "model": "Model a daily table: how covariates relate to next-morning ln-RMSSD and the rest.",
    "pair": "Align two simultaneous recordings of one heart (REFERENCE, e.g. an ECG, and DEVICE, "
            "e.g. a wrist PPG), pair their beats and measure the device against the reference: "
            "matched, missed and extra beats, paired-interval agreement, and the same windows' "
            "metrics compared.",
    "ramp": "Follow DFA alpha1 through the incremental exercise test in FILE (RR intervals, peak "
            "times or ECG) and report the heart rate, and the power or speed with --stages, at "
            "which alpha1 crosses each level, with a bootstrap 95% CI and a verdict (ok, "
            "uncertain, not found).",
    "report": "Write one self-contained HTML page from a daily run: the week at a glance, "
              "figures, failed files, settings and cautions.",
    "plot": "Draw a figure of FILE: a recording's diagnostic, or a daily table's trend / "
            "overview.",
    "demo": "Run the whole job on the bundled demo squad (invented athletes) and summarise it.",
}


class _Group(click.Group):
    """Loads each subcommand's module only when it is called (fast start-up); ``--help``
    lists the commands from `_SUMMARIES` without importing them."""

    def list_commands(self, ctx):
        from importlib.util import find_spec

        return [name for name in _COMMANDS if find_spec(f"rrkit.cli._{name}") is not None]

    def format_commands(self, ctx, formatter):
        names = [n for n in self.list_commands(ctx) if n in _SUMMARIES]
        if not names:
            return super().format_commands(ctx, formatter)
        limit = formatter.width - 6 - max(len(n) for n in names)
        rows = [(n, _short(_SUMMARIES[n], limit)) for n in names]
        with formatter.section("Commands"):
            formatter.write_dl(rows)
        return None

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


def _short(text: str, limit: int) -> str:
    """``text`` cut at a word to ``limit`` characters, with '...' where it was cut."""
    first = text.rstrip(".")
    if len(first) <= limit:
        return first
    cut = first[: max(limit - 3, 1)].rsplit(" ", 1)[0]
    return cut.rstrip(",;:") + "..."


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
    except _NO_ARGS_IS_HELP as exc:  # `rrkit` alone: the overview, not an error
        click.echo(exc.ctx.get_help() if exc.ctx is not None else cli.get_help(
            click.Context(cli, info_name="rrkit")))
        return 0
    except click.ClickException as exc:  # usage errors: bad option, missing argument or file
        if debug:
            raise
        name = next((a for a in args if not a.startswith("-")), None)
        click.echo(f"rrkit: error: {usage_line(exc, name)}", err=True)
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


# click >= 8.2 raises this for a group called without a command (older versions print the help)
_NO_ARGS_IS_HELP = getattr(click.exceptions, "NoArgsIsHelpError", ())

# click.Path's wording for a path that fails its checks
_PATH_PROBLEM = re.compile(r"^(?P<kind>File|Directory|Path) (?P<path>'.*'|\S+) "
                           r"(?P<what>does not exist|is a directory|is a file|is not readable|"
                           r"is not writable|is not executable)\.?$", re.DOTALL)
_KIND_WORDS = {"File": "file", "Directory": "folder", "Path": "path"}


def _param_label(exc: click.BadParameter) -> str | None:
    """``--kind`` or ``FILES`` for the parameter an error is about."""
    hint = exc.param_hint
    if hint is None and exc.param is not None:
        hint = exc.param.get_error_hint(exc.ctx) if exc.ctx is not None else exc.param.name
    if hint is None:
        return None
    if not isinstance(hint, str):
        hint = " / ".join(hint)
    return hint.replace("'", "").replace('"', "").rstrip(".")


def usage_line(exc: click.ClickException, command: str | None = None) -> str:
    """One line for a command-line mistake caught by click, in rrkit's words.

    A path that fails its check reads like the reader's own errors (``x.txt: file not found``);
    a bad value names its option (``--kind: 'zz' is not one of ...``); the line ends with where
    to find the usage (``see 'rrkit info --help'``; ``command`` names it where click does not
    know which command was parsed).
    """
    if isinstance(exc, click.MissingParameter) and exc.param is not None:
        if isinstance(exc.param, click.Argument):
            text = f"missing argument {exc.param.human_readable_name.rstrip('.')}"
        else:
            text = f"missing option {exc.param.opts[0]}"
    elif isinstance(exc, click.BadParameter):
        message = " ".join(exc.message.split())
        m = _PATH_PROBLEM.match(message)
        if m:
            path, what = m.group("path").strip("'"), m.group("what")
            if what == "does not exist":
                what = f"{_KIND_WORDS[m.group('kind')]} not found"
            text = f"{path}: {what}"
        else:
            label = _param_label(exc)
            text = f"{label}: {message}" if label else message
    else:
        text = exc.format_message()
    text = " ".join(text.split()).rstrip(".").replace(". Did you mean", "; did you mean")
    if text[:1].isupper() and text[1:2].islower():
        text = text[0].lower() + text[1:]
    if exc.ctx is not None:
        text += f" (see '{exc.ctx.command_path} --help')"
    elif command in _COMMANDS:
        text += f" (see 'rrkit {command} --help')"
    return text


def _one_line(exc: BaseException) -> str:
    if isinstance(exc, OSError) and exc.filename is not None:
        return f"{exc.filename}: {exc.strerror or exc}"
    return " ".join(str(exc).split())


# a library hint such as "pass unit='ms'" or "fs=250": the keyword and its optional value
_KEYWORD_HINT = re.compile(
    r"\b(kind|unit|fs|column|detector|sep|decimal|timestamp_column|break_s)="
    r"(?:'([^']*)'|(\d+(?:\.\d+)?))?")
# a separator as the library spells it -> its name on the command line (see cli/_options.py)
_SEP_WORDS = {",": "comma", ";": "semicolon", "\t": "tab", "\\t": "tab", " ": "space"}


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
        if m.group(1) == "sep" and value:
            value = _SEP_WORDS.get(value, value)
        return f"--{m.group(1).replace('_', '-')}" + (f" {value}" if value else "")

    return _KEYWORD_HINT.sub(option, text)
