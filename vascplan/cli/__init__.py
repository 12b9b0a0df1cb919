"""The ``vascplan`` command line: a thin layer over the library.

Commands are registered in :data:`COMMANDS` and imported only when run, so that
``vascplan --help`` and the light commands start fast (no reportlab, no SQLAlchemy).
"""

from __future__ import annotations

import importlib
import sys
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
    "due": ("vascplan.cli.shift:due", "The checks overdue and due soon, bed by bed."),
    "demo": ("vascplan.cli.demo:demo", "Run every job on the bundled invented examples."),
    "unit": ("vascplan.cli.ward:unit", "Seed the store from a unit file, or export it as one."),
    "users": ("vascplan.cli.ward:users", "Accounts for the ward pages: add, disable, list."),
    "audit": ("vascplan.cli.ward:audit", "Print the ward's audit trail."),
    "serve": ("vascplan.cli.ward:serve", "Serve the ward pages: board, bedside checks, events."),
}


# click 8.2 and later raise this for a group called without a command (8.1 printed the help
# and exited 0 itself, which needs nothing here).
_NO_ARGS_IS_HELP: type[click.UsageError] = getattr(
    click.exceptions, "NoArgsIsHelpError", type("_NeverRaised", (click.UsageError,), {})
)

HELP_OPTIONS = ["-h", "--help"]
"""Help option names of every command (click's context settings are inherited)."""


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

    def resolve_command(
        self, ctx: click.Context, args: list[str]
    ) -> tuple[str | None, click.Command | None, list[str]]:
        name = args[0] if args else ""
        if name and not name.startswith("-") and name not in COMMANDS:
            from vascplan.fileio import did_you_mean

            raise click.UsageError(
                f"no command {name!r}{did_you_mean(name, COMMANDS)}; "
                f"commands are {', '.join(sorted(COMMANDS))}",
                ctx,
            )
        return super().resolve_command(ctx, args)

    def format_commands(self, ctx: click.Context, formatter: click.HelpFormatter) -> None:
        # The registry's help lines, without importing every command module.
        rows = [(name, COMMANDS[name][1]) for name in self.list_commands(ctx)]
        with formatter.section("Commands"):
            formatter.write_dl(rows)

    def invoke(self, ctx: click.Context) -> Any:
        from vascplan.textsafety import safe_terminal

        try:
            return super().invoke(ctx)
        except VascplanError as exc:
            click.echo(f"error: {safe_terminal(str(exc))}", err=True)
            ctx.exit(2)
        except Exception as exc:  # the last guard: one line, never a traceback (issue 18)
            line = _unexpected(exc)
            if line is None:
                raise
            click.echo(f"error: {safe_terminal(line)}", err=True)
            ctx.exit(2)

    def main(self, *args: Any, standalone_mode: bool = True, **kwargs: Any) -> Any:
        """Run the command; a usage mistake is one ``error:`` line and exit status 2.

        Click's own handling prints the usage, a hint and the error on three lines; here a
        mistaken option or argument gets one line that names it and what is allowed, like
        every other input error, and points to the command's help.
        """
        if not standalone_mode:
            return super().main(*args, standalone_mode=False, **kwargs)  # type: ignore[call-overload]
        argv = kwargs.get("args", args[0] if args else None)
        problem = _argument_problem(sys.argv[1:] if argv is None else list(argv))
        if problem:
            click.echo(f"error: {problem}", err=True)
            sys.exit(2)
        try:
            rv = super().main(*args, standalone_mode=False, **kwargs)  # type: ignore[call-overload]
        except _NO_ARGS_IS_HELP as exc:
            # `vascplan` (or `vascplan obs`) alone: the help on standard output, and success.
            if exc.ctx is not None:
                click.echo(exc.ctx.get_help())
            sys.exit(0)
        except click.UsageError as exc:
            where = exc.ctx.command_path if exc.ctx is not None else "vascplan"
            message = " ".join(exc.format_message().split())
            click.echo(f"error: {where}: {message} (see {where} --help)", err=True)
            sys.exit(exc.exit_code)
        except click.ClickException as exc:
            click.echo(f"error: {' '.join(exc.format_message().split())}", err=True)
            sys.exit(exc.exit_code)
        except click.Abort:
            click.echo("Aborted.", err=True)
            sys.exit(1)
        sys.exit(rv if isinstance(rv, int) else 0)


def _argument_problem(argv: list[str]) -> str | None:
    """The first command-line value holding a control character, as one line, or None.

    Newlines and tabs are allowed (a ``--reason`` may hold them); the value's own checks
    refuse them where an identifier is expected.
    """
    import re

    from vascplan.textsafety import describe, find_control

    # A value that reads as a number to Python (int(), float()) but is not one in ASCII
    # digits: 1_2, Arabic-Indic or fullwidth digits (issue 18).
    odd_number = re.compile(r"[-+]?(?=.*\d)[\d_]*\.?[\d_]*(?:[eE][-+]?[\d_]+)?")
    for i, arg in enumerate(argv):
        text = str(arg)
        name, sep, value = text.partition("=")
        if text.startswith("-") and sep:
            where = name
        elif i > 0 and str(argv[i - 1]).startswith("-"):
            where, value = str(argv[i - 1]), text
        else:
            where, value = f"argument {i + 1}", text
        hit = find_control(text, allow_newline=True)
        if hit is not None:
            return (
                f"{where}: holds the control character {describe(hit[1])}; "
                "use printable text only"
            )
        plain = value.strip()
        if odd_number.fullmatch(plain) and not re.fullmatch(r"[-+0-9.eE]+", plain):
            return (
                f"{where}: {plain!r} is not a plain number: write ASCII digits 0-9 "
                "without underscores"
            )
    return None


def _unexpected(exc: Exception) -> str | None:
    """One line for an error that escaped the commands' own checks, or None to re-raise.

    A file that cannot be written or read names its path; a database error names its
    kind only, never the SQL, its parameters (patient data) or a password.
    """
    module = type(exc).__module__
    if module.startswith(("sqlalchemy", "psycopg")):
        return (
            f"the observation store refused the operation ({type(exc).__name__}); "
            "nothing was stored by this command"
        )
    if isinstance(exc, OSError):
        where = exc.filename if exc.filename is not None else "file"
        reason = (exc.strerror or type(exc).__name__).lower()
        return f"{where}: cannot read or write ({reason})"
    if isinstance(exc, OverflowError):
        return "a date or number is out of range; check the years and sizes given"
    return None


@click.group(
    "vascplan",
    cls=LazyGroup,
    context_settings={"help_option_names": HELP_OPTIONS},
    epilog=(
        f"Caution: {CAUTION}\n\n"
        "Environment: VASCPLAN_DB is the observation store when --db is not given; "
        "VASCPLAN_DATA a folder of reference tables to use instead of the bundled ones.\n\n"
        "Example: vascplan demo --out demo-output"
    ),
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
