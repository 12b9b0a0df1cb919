"""``vascplan risk`` and ``vascplan rota``: thin commands over vascplan.surveillance."""

from __future__ import annotations

import sys
from pathlib import Path

import click

from vascplan.errors import InputError
from vascplan.fileio import atomic_write_bytes, atomic_write_text
from vascplan.safety import CAUTION
from vascplan.textsafety import safe_terminal

MAX_HOURS = 24 * 31
"""The longest rota window [h] a command will build (a month)."""


def _emit(text: str | bytes, output: str | None) -> None:
    if output:
        if isinstance(text, bytes):
            atomic_write_bytes(output, text)
        else:
            atomic_write_text(output, text)
        click.echo(f"wrote {output}", err=True)
    elif isinstance(text, bytes):
        click.echo(text.decode("utf-8"), nl=False)  # iCalendar: cleaned by ical_text
    else:
        click.echo(safe_terminal(text), nl=False)


@click.command(
    epilog="Example: vascplan risk examples/unit-demo.yaml --at 2026-12-02T13:00 --format json"
    f"\n\nCaution: {CAUTION}",
)
@click.argument("unit_file", metavar="UNIT", type=click.Path(dir_okay=False))
@click.option(
    "--at",
    "at_text",
    metavar="ISO-TIME",
    help="Moment of the assessment (local to the unit unless an offset is given); default now.",
)
@click.option(
    "--format", "fmt", type=click.Choice(["table", "json"]), default="table", show_default=True
)
@click.option("-o", "--output", type=click.Path(dir_okay=False), help="Write to FILE atomically.")
def risk(unit_file: str, at_text: str | None, fmt: str, output: str | None) -> None:
    """Each patient's limb-ischaemia risk tier, SAR and distal-cannula advice, with reasons.

    Not a validated score: the tier combines published risk factors, each with its source.
    """
    import json

    from vascplan.surveillance.render import risk_table, risk_to_dict
    from vascplan.surveillance.service import risk_for_unit

    unit, assessments, at = risk_for_unit(Path(unit_file), at_text)
    if fmt == "json":
        doc = risk_to_dict(assessments, at, unit.unit.name)
        _emit(json.dumps(doc, indent=2, ensure_ascii=False) + "\n", output)
    else:
        _emit(risk_table(assessments, at, unit.unit.name), output)


@click.command(
    epilog="Example: vascplan rota examples/unit-demo.yaml --from 2026-12-02T07:30 --hours 12 "
    f"--nurse RN-A --format ics -o rn-a.ics\n\nCaution: {CAUTION}",
)
@click.argument("unit_file", metavar="UNIT", type=click.Path(dir_okay=False))
@click.option(
    "--from",
    "from_text",
    metavar="ISO-TIME",
    required=True,
    help="Start of the rota (local to the unit unless an offset is given).",
)
@click.option(
    "--hours", type=float, required=True, help=f"Length of the rota [h], up to {MAX_HOURS}."
)
@click.option("--nurse", metavar="ID", help="Only this nurse's checks.")
@click.option(
    "--format",
    "fmt",
    type=click.Choice(["table", "csv", "json", "ics"]),
    default="table",
    show_default=True,
)
@click.option("-o", "--output", type=click.Path(dir_okay=False), help="Write to FILE atomically.")
def rota(
    unit_file: str, from_text: str, hours: float, nurse: str | None, fmt: str, output: str | None
) -> None:
    """The unit's limb checks across beds and shifts, nurse by nurse, with handovers.

    Checks one nurse has due at once are staggered within their tolerance windows; those
    that cannot be met are listed. Times print in the unit's zone with their UTC offset.
    """
    from vascplan.surveillance.render import rota_csv, rota_ics, rota_json, rota_table
    from vascplan.surveillance.service import rota_for_unit

    if not 0 < hours <= MAX_HOURS:
        raise InputError("--hours", "", f"must be above 0 and at most {MAX_HOURS} (got {hours:g})")
    progress = sys.stderr.isatty() and hours > 24 * 3
    if progress:
        click.echo(f"building the rota for {hours:g} h...", err=True)
    unit, protocol, result = rota_for_unit(Path(unit_file), from_text, hours, nurse)
    if fmt == "json":
        _emit(rota_json(result), output)
    elif fmt == "csv":
        _emit(rota_csv(result), output)
    elif fmt == "ics":
        _emit(rota_ics(result, protocol), output)
    else:
        _emit(rota_table(result), output)
    if progress:
        click.echo(f"{len(result.checks)} checks, {len(result.unmet)} unmet", err=True)
