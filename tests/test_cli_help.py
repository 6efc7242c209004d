"""Every command and every option explains itself in --help."""

from __future__ import annotations

import typer

from inventory.cli.main import app


def _walk(cmd, path: str):
    yield path, cmd
    if hasattr(cmd, "commands"):  # a group (typer ships its own click, so no isinstance)
        for name, sub in cmd.commands.items():
            yield from _walk(sub, f"{path} {name}")


def test_every_command_and_option_has_help_text():
    root = typer.main.get_command(app)
    missing = []
    for path, cmd in _walk(root, "inventory"):
        if not (cmd.help or cmd.short_help):
            missing.append(path)
        for param in cmd.params:
            if param.param_type_name == "option" and not param.hidden and not param.help:
                missing.append(f"{path} {param.opts[0]}")
    assert missing == []
