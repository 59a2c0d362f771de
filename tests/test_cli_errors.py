"""One error format on every command: ``rrkit: error: ...`` on one line and exit code 2.

Covers click's own checks of the command line (missing argument or file, unknown option, bad
option value) on every subcommand the CLI lists, and the library's `InputError`. The
parameters are taken from each command itself, so a new command or option is covered too.
"""

from __future__ import annotations

import click
import pytest

from rrkit.cli import _COMMANDS, _Group, main


def _commands() -> list[str]:
    return [name for name in _COMMANDS if _Group._load(name) is not None]


def _one_error_line(capsys) -> str:
    _, err = capsys.readouterr()
    assert err.startswith("rrkit: error: "), err
    assert err.count("\n") == 1, err  # one line
    for noise in ("Traceback", "Usage:", "Error: "):
        assert noise not in err
    return err


def _value_for(param: click.Parameter, tmp_path) -> list[str]:
    """A value that passes click's checks of ``param`` (existing paths where it wants them)."""
    typ = param.type
    if isinstance(typ, click.Path):
        if not typ.file_okay:
            (tmp_path / "folder").mkdir(exist_ok=True)
            return [str(tmp_path / "folder")]
        path = tmp_path / "rr.txt"
        path.write_text("812\n790\n805\n821\n")
        return [str(path)]
    if isinstance(typ, click.Choice):
        return [str(typ.choices[0])]
    return ["1"]


def _required_args(command: click.Command, tmp_path) -> list[str]:
    args: list[str] = []
    for param in command.params:
        if not param.required:
            continue
        value = _value_for(param, tmp_path)
        args += value if isinstance(param, click.Argument) else [param.opts[0], *value]
    return args


@pytest.mark.parametrize("name", _commands())
def test_unknown_option(name, capsys):
    assert main([name, "--no-such-option"]) == 2
    err = _one_error_line(capsys)
    assert "no such option '--no-such-option'" in err
    assert f"(see 'rrkit {name} --help')" in err


@pytest.mark.parametrize("name", _commands())
def test_missing_required_parameter(name, capsys):
    command = _Group._load(name)
    if not any(p.required for p in command.params):
        pytest.skip(f"rrkit {name} has no required parameter")
    assert main([name]) == 2
    assert "missing " in _one_error_line(capsys)


@pytest.mark.parametrize("name", _commands())
def test_bad_option_value(name, capsys, tmp_path):
    command = _Group._load(name)
    option = next((p for p in command.params if isinstance(p, click.Option)
                   and isinstance(p.type, (click.Choice, click.types.IntParamType,
                                           click.types.FloatParamType))), None)
    if option is None:
        pytest.skip(f"rrkit {name} has no option with a checked value")
    args = [name, *_required_args(command, tmp_path), option.opts[-1], "no-such-value"]
    assert main(args) == 2
    err = _one_error_line(capsys)
    assert f"{option.opts[-1]}: 'no-such-value'" in err or option.opts[0] in err


@pytest.mark.parametrize("name", _commands())
def test_missing_file_or_folder(name, capsys, tmp_path):
    command = _Group._load(name)
    path_params = [p for p in command.params  # inputs: not the output folder or file
                   if isinstance(p.type, click.Path) and "out" not in p.name
                   and (p.required or isinstance(p, click.Argument) or p.type.exists)]
    if not path_params:
        pytest.skip(f"rrkit {name} takes no input path")
    target = path_params[0]
    args = [name]
    for param in command.params:
        if param is target:
            value = [str(tmp_path / "no" / "such.txt")]
        elif param.required:
            value = _value_for(param, tmp_path)
        else:
            continue
        args += value if isinstance(param, click.Argument) else [param.opts[0], *value]
    assert main(args) == 2
    err = _one_error_line(capsys)
    assert "such.txt: " in err
    assert "not found" in err


def test_missing_argument_names_it(capsys):
    # the case that printed click's own "Error: Invalid value for 'FILES...'" before
    assert main(["info", "/no/such/file.txt"]) == 2
    err = _one_error_line(capsys)
    assert err == "rrkit: error: /no/such/file.txt: file not found (check the path)\n"
    assert main(["info"]) == 2
    assert _one_error_line(capsys) == ("rrkit: error: missing argument FILES "
                                       "(see 'rrkit info --help')\n")


def test_group_level_mistakes(capsys):
    assert main(["no-such-command"]) == 2
    assert "no such command 'no-such-command'" in _one_error_line(capsys)
    assert main(["--no-such-option"]) == 2
    assert "(see 'rrkit --help')" in _one_error_line(capsys)
    assert main(["info", "x.txt", "--fs"]) == 2  # click does not say which command it parsed
    assert "option '--fs' requires an argument (see 'rrkit info --help')" in _one_error_line(
        capsys)


def test_no_command_shows_the_overview(capsys):
    assert main([]) == 0
    out = capsys.readouterr().out
    assert "Usage: rrkit" in out
    for name in _commands():
        assert name in out


def test_debug_shows_the_traceback():
    with pytest.raises(click.UsageError):
        main(["--debug", "info", "--no-such-option"])
