"""Every command documents itself: a command without help text is a defect (its docstring is its manual)."""

from __future__ import annotations

import typer
from typer.testing import CliRunner

from partcheck.cli import app


def _walk(command, path=()):
    yield path, command
    for name, sub in getattr(command, "commands", {}).items():
        yield from _walk(sub, (*path, name))


def test_every_command_and_option_has_help():
    root = typer.main.get_command(app)
    seen = 0
    for path, command in _walk(root):
        if not path:
            continue
        seen += 1
        assert (command.help or "").strip(), f"`partcheck {' '.join(path)}` has no help text"
        for param in command.params:
            if param.param_type_name == "option" and param.name != "help":
                assert (getattr(param, "help", "") or "").strip(), f"`partcheck {' '.join(path)}` {param.opts} has no help"
    assert seen >= 15  # match, stress, check, report, demo, catalog (9 commands), policy (3 commands)


def test_help_runs_for_every_command():
    runner = CliRunner()
    for path, _command in _walk(typer.main.get_command(app)):
        result = runner.invoke(app, [*path, "--help"])
        assert result.exit_code == 0, (path, result.output)
