"""The ``vascplan`` command line: a thin layer over the library.

Commands are registered in :data:`COMMANDS` and imported only when run, so that
``vascplan --help`` and the light commands start fast (no pandas, no reportlab).
"""

from __future__ import annotations

import importlib
from typing import Any

import click

from vascplan import __version__
from vascplan.errors import VascplanError
from vascplan.safety import CAUTION

# name -> (module:attribute, one-line help). One registry; the help test walks it.
COMMANDS: dict[str, tuple[str, str]] = {
    "validate": (
        "vascplan.cli.case:validate",
        "Check case files; exit 0 when every file is valid.",
    ),
    "tree": ("vascplan.cli.case:tree", "Show a patient's annotated arterial tree."),
    "schema": ("vascplan.cli.case:schema", "Print the JSON Schema of the case file."),
    "plan": ("vascplan.cli.plan:plan", "Rank access routes for a case, with reasons."),
    "sheath-flow": (
        "vascplan.cli.sizing:sheath_flow",
        "SAR, lumen left and distal flow with a device in an artery.",
    ),
    "risk": ("vascplan.cli.surveillance:risk", "Limb-ischaemia risk tier and cannula advice."),
    "rota": (
        "vascplan.cli.surveillance:rota",
        "The unit's limb checks, bed by bed and nurse by nurse.",
    ),
    "report": ("vascplan.cli.reports:report", "Case-conference PDF with the drawn arterial map."),
    "checklist": ("vascplan.cli.reports:checklist", "Nursing checklist PDF for a shift."),
    "obs": ("vascplan.cli.obs:obs", "Record, review, plot and export limb checks."),
    "demo": ("vascplan.cli.demo:demo", "Run every job on the bundled invented examples."),
}


class LazyGroup(click.Group):
    """A click group that imports a command's module only when it is used."""

    def list_commands(self, ctx: click.Context) -> list[str]:
        return sorted(COMMANDS)

    def get_command(self, ctx: click.Context, cmd_name: str) -> click.Command | None:
        entry = COMMANDS.get(cmd_name)
        if entry is None:
            return None
        module_name, attr = entry[0].split(":")
        return getattr(importlib.import_module(module_name), attr)

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        # The registry's help lines, without importing every command module.
        rows = [(name, COMMANDS[name][1]) for name in self.list_commands(ctx)]
        with formatter.section("Commands"):
            formatter.write_dl(rows)

    def invoke(self, ctx: click.Context) -> Any:
        try:
            return super().invoke(ctx)
        except VascplanError as exc:
            click.echo(f"error: {exc}", err=True)
            ctx.exit(2)


@click.group(
    cls=LazyGroup,
    epilog=f"Caution: {CAUTION}\n\nExample: vascplan demo --out demo-output",
)
@click.version_option(__version__, prog_name="vascplan")
def cli() -> None:
    """Plan arterial access and watch the limbs of patients on large-bore support.

    Case files describe one patient's arterial tree and procedure; unit files
    describe a unit's patients on large-bore support. Run "vascplan COMMAND
    --help" for each command, with an example.
    """


def main() -> None:
    """Console-script entry point."""
    cli(prog_name="vascplan")
