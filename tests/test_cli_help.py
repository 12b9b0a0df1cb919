"""Every command has help a clinician can follow, with an example, and is documented."""

from __future__ import annotations

import re
from pathlib import Path

import click
import pytest
from click.testing import CliRunner

from vascplan.cli import COMMANDS, cli

README = (Path(__file__).parent.parent / "README.md").read_text(encoding="utf-8")


def _all_commands() -> list[tuple[str, ...]]:
    out: list[tuple[str, ...]] = []
    ctx = click.Context(cli)
    for name in COMMANDS:
        command = cli.get_command(ctx, name)
        assert command is not None, name
        out.append((name,))
        if isinstance(command, click.Group):
            out.extend((name, sub) for sub in command.list_commands(ctx))
    return out


@pytest.mark.parametrize("words", _all_commands(), ids=" ".join)
def test_help_has_an_example(words):
    result = CliRunner().invoke(cli, [*words, "--help"])
    assert result.exit_code == 0, result.output
    assert re.search(r"Example", result.output), f"vascplan {' '.join(words)} --help has no example"


@pytest.mark.parametrize("words", _all_commands(), ids=" ".join)
def test_command_is_in_the_readme(words):
    assert f"vascplan {' '.join(words)}" in README


def test_top_level_help_lists_every_command_and_the_caution():
    result = CliRunner().invoke(cli, ["--help"])
    assert result.exit_code == 0
    for name in COMMANDS:
        assert name in result.output
    assert "Caution:" in result.output


def test_version():
    from vascplan import __version__

    result = CliRunner().invoke(cli, ["--version"])
    assert result.exit_code == 0 and __version__ in result.output


def test_unknown_command_exits_2():
    result = CliRunner().invoke(cli, ["plna"])
    assert result.exit_code == 2


@pytest.mark.parametrize(
    ("args", "line"),
    [
        (
            ["tree", "x.yaml", "--format", "xml"],
            "error: vascplan tree: Invalid value for '--format': 'xml' is not one of "
            "'table', 'json'. (see vascplan tree --help)",
        ),
        (
            ["validate"],
            "error: vascplan validate: Missing argument 'CASES...'. (see vascplan validate --help)",
        ),
        (
            ["plna"],
            "error: vascplan: no command 'plna' (did you mean 'plan'?); commands are checklist, "
            "demo, obs, plan, report, risk, rota, schema, sheath-flow, tree, validate "
            "(see vascplan --help)",
        ),
    ],
)
def test_a_usage_mistake_is_one_line_and_exit_2(args, line):
    # The project's error standard: one clear line naming the option and what is
    # allowed, exit status 2, no usage dump (click's default is three lines).
    result = CliRunner().invoke(cli, args)
    assert result.exit_code == 2
    assert result.stderr.strip() == line
    assert result.stdout == ""
