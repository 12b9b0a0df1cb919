"""Risk and rota on the bundled invented unit, for ``vascplan demo``."""

from __future__ import annotations

import json
from pathlib import Path

from vascplan.fileio import atomic_write_bytes, atomic_write_text
from vascplan.paths import examples_dir

DEMO_UNIT = "unit-demo.yaml"
DEMO_AT = "2026-12-02T13:00"
"""Moment of the demo risk assessment (local to the demo unit)."""
DEMO_FROM = "2026-12-02T07:30"
DEMO_HOURS = 24.0


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
    from vascplan.surveillance.render import (
        risk_table,
        risk_to_dict,
        rota_csv,
        rota_ics,
        rota_json,
        rota_table,
    )
    from vascplan.surveillance.service import risk_for_unit, rota_for_unit

    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    unit_path = examples_dir() / DEMO_UNIT
    unit, assessments, at = risk_for_unit(unit_path, DEMO_AT)
    _, protocol, rota = rota_for_unit(unit_path, DEMO_FROM, DEMO_HOURS)
    doc = risk_to_dict(assessments, at, unit.unit.name)
    files = [
        atomic_write_text(out / "surveillance-risk.json",
                          json.dumps(doc, indent=2, ensure_ascii=False) + "\n"),
        atomic_write_text(out / "surveillance-risk.txt", risk_table(assessments, at, unit.unit.name)),
        atomic_write_text(out / "surveillance-rota.json", rota_json(rota)),
        atomic_write_text(out / "surveillance-rota.txt", rota_table(rota)),
        atomic_write_text(out / "surveillance-rota.csv", rota_csv(rota)),
        atomic_write_bytes(out / "surveillance-rota.ics", rota_ics(rota, protocol)),
    ]
    return files
