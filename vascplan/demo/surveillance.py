"""Risk and rota on the bundled invented unit, for ``vascplan demo``."""

from __future__ import annotations

import json
from pathlib import Path
from typing import TYPE_CHECKING

from vascplan.fileio import atomic_write_bytes, atomic_write_text, output_inside
from vascplan.paths import examples_dir

if TYPE_CHECKING:
    from vascplan.demo.context import DemoContext

DEMO_UNIT = "unit-demo.yaml"
DEMO_AT = "2026-12-02T13:00"
"""Moment of the demo risk assessment (local to the demo unit)."""
DEMO_FROM = "2026-12-02T07:30"
DEMO_HOURS = 24.0


def demo_outputs(examples: Path | None = None) -> list[tuple[str, str | bytes]]:
    """The demo's files as (name, content): risk JSON and table; rota JSON, table, CSV, ICS."""
    from vascplan.surveillance.render import (
        risk_table,
        risk_to_dict,
        rota_csv,
        rota_ics,
        rota_json,
        rota_table,
    )
    from vascplan.surveillance.service import risk_for_unit, rota_for_unit

    unit_path = (examples or examples_dir()) / DEMO_UNIT
    unit, assessments, at = risk_for_unit(unit_path, DEMO_AT)
    _, protocol, rota = rota_for_unit(unit_path, DEMO_FROM, DEMO_HOURS)
    doc = risk_to_dict(assessments, at, unit.unit.name)
    return [
        ("surveillance-risk.json", json.dumps(doc, indent=2, ensure_ascii=False) + "\n"),
        ("surveillance-risk.txt", risk_table(assessments, at, unit.unit.name)),
        ("surveillance-rota.json", rota_json(rota)),
        ("surveillance-rota.txt", rota_table(rota)),
        ("surveillance-rota.csv", rota_csv(rota)),
        ("surveillance-rota.ics", rota_ics(rota, protocol)),
    ]


def demo_surveillance(out_dir: Path) -> list[Path]:
    """Run ``risk`` and ``rota`` on ``examples/unit-demo.yaml`` and write the results.

    Parameters
    ----------
    out_dir : Path
        Folder to write into (created when missing).

    Returns
    -------
    list of Path
        ``surveillance-risk.json``, ``surveillance-risk.txt``, ``surveillance-rota.json``,
        ``surveillance-rota.txt``, ``surveillance-rota.csv``, ``surveillance-rota.ics``.
    """
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    paths = []
    for name, content in demo_outputs():
        target = output_inside(out, name)
        if isinstance(content, bytes):
            paths.append(atomic_write_bytes(target, content))
        else:
            paths.append(atomic_write_text(target, content))
    return paths


def step_surveillance(ctx: DemoContext) -> None:
    """A ``vascplan demo`` step (for :data:`vascplan.demo.DEMO_STEPS`): risk and rota."""
    for name, content in demo_outputs(ctx.examples):
        if isinstance(content, bytes):
            ctx.write_bytes(name, content)
        else:
            ctx.write_text(name, content)
