"""``vascplan due``: what is overdue and due now, bed by bed (a thin command)."""

from __future__ import annotations

import json

import click

from vascplan.cli.obs import _at, _base_dir, _db_option, _open_for_reading, _unit
from vascplan.errors import InputError
from vascplan.safety import CAUTION


@click.command(
    epilog=(
        "Example: vascplan due unit.yaml --within 30\n\n"
        "Example: vascplan due unit.yaml --at 2026-12-02T03:00 --format json"
        f"\n\nCaution: {CAUTION}"
    ),
)
@click.argument("unit_path", metavar="UNIT", type=click.Path(dir_okay=False))
@click.option(
    "--at",
    "at_text",
    default=None,
    help="As at this time (ISO 8601, local to the unit without an offset; default now).",
)
@click.option(
    "--within",
    "within",
    type=int,
    default=60,
    show_default=True,
    metavar="MIN",
    help="Also show the checks due in the next MIN minutes.",
)
@click.option(
    "--format", "fmt", type=click.Choice(["table", "json"]), default="table", show_default=True
)
@_db_option
def due(unit_path: str, at_text: str | None, within: int, fmt: str, db: str | None) -> None:
    """The checks overdue and due soon, per bed, with the items and sides still to record.

    A check counts only for the items and sides it records; nothing is due before a
    patient's monitoring start (monitoring_from in the unit file, else the insertion).
    """
    from vascplan.app.shift import due_now, render_table, to_json

    if not 0 <= within <= 1440:
        raise InputError("--within", "", f"must be 0-1440 minutes (got {within})")
    unit = _unit(unit_path)
    at = _at(None if at_text in (None, "now") else at_text, unit)
    with _open_for_reading(db) as store:
        result = due_now(unit, store, at, within_min=within, base_dir=_base_dir(unit_path))
    if fmt == "json":
        click.echo(json.dumps(to_json(result), indent=2, ensure_ascii=False))
    else:
        click.echo(render_table(result))
