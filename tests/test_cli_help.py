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
            "error: vascplan: no command 'plna' (did you mean 'plan'?); commands are audit, "
            "checklist, demo, due, obs, plan, report, risk, rota, schema, serve, sheath-flow, "
            "tree, unit, users, validate (see vascplan --help)",
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


# --- the front door -------------------------------------------------------------------------


@pytest.mark.parametrize("args", [[], ["-h"], ["--help"]], ids=["alone", "-h", "--help"])
def test_vascplan_alone_and_dash_h_print_the_help_and_succeed(args):
    # The convention of command-line tools (POSIX utility conventions; click's own --help):
    # asking for help, or giving no command at all, is not an error.
    result = CliRunner().invoke(cli, args)
    assert result.exit_code == 0, result.output
    assert result.stdout.startswith("Usage: vascplan [OPTIONS] COMMAND [ARGS]...")
    for name in COMMANDS:
        assert name in result.stdout
    assert result.stderr == ""


def test_a_group_alone_prints_its_help():
    result = CliRunner().invoke(cli, ["obs"])
    assert result.exit_code == 0, result.output
    assert result.stdout.startswith("Usage: vascplan obs [OPTIONS] COMMAND [ARGS]...")


@pytest.mark.parametrize("words", _all_commands(), ids=" ".join)
def test_dash_h_is_help_on_every_command(words):
    long = CliRunner().invoke(cli, [*words, "--help"])
    short = CliRunner().invoke(cli, [*words, "-h"])
    assert short.exit_code == 0, short.output
    assert short.stdout == long.stdout


def _readme_command_table() -> list[str]:
    """The command names of the README's "## Commands" table, in order."""
    section = README.split("\n## Commands\n", 1)[1].split("\n## ", 1)[0]
    names = []
    for line in section.splitlines():
        m = re.match(r"\| `vascplan ([a-z][a-z-]*)", line)
        if m:
            names.append(m.group(1))
    return names


def test_readme_command_table_is_the_registry():
    # Every registered command has its row, and every row is a registered command.
    table = _readme_command_table()
    assert len(table) == len(set(table)), "a command has two rows"
    assert set(table) == set(COMMANDS)
    # ... and the command list that `vascplan --help` prints.
    help_text = CliRunner().invoke(cli, ["--help"]).stdout
    listed = help_text.split("\nCommands:\n", 1)[1].split("\n\n", 1)[0]
    assert {line.split()[0] for line in listed.splitlines()} == set(table)


def test_readme_documents_vascplan_db():
    assert "`VASCPLAN_DB`" in README


def test_vascplan_db_is_the_store_when_db_is_not_given(tmp_path):
    unit = str(Path(__file__).parent / "unit_minimal.yaml")
    from_env, from_option = tmp_path / "env.db", tmp_path / "option.db"
    env = {"VASCPLAN_DB": str(from_env), "XDG_DATA_HOME": str(tmp_path / "xdg")}
    add = [
        "obs",
        "add",
        "--unit",
        unit,
        "--bed",
        "1",
        "--time",
        "2026-12-01T16:00",
        "--by",
        "RN-A",
        "--pain",
        "3",
    ]
    runner = CliRunner()
    r = runner.invoke(cli, add, env=env)
    assert r.exit_code == 0, r.output
    assert from_env.is_file() and not (tmp_path / "xdg").exists()
    r = runner.invoke(cli, ["obs", "export", "--unit", unit, "--format", "csv"], env=env)
    assert r.exit_code == 0, r.output
    assert ",pain," in r.stdout  # the finding written through VASCPLAN_DB reads back
    # --db wins over the environment.
    r = runner.invoke(cli, [*add, "--db", str(from_option)], env=env)
    assert r.exit_code == 0, r.output
    assert from_option.is_file()


def test_db_help_names_the_environment_variable():
    result = CliRunner().invoke(cli, ["obs", "review", "--help"])
    assert "VASCPLAN_DB" in result.stdout
