"""Build small unit files in memory for the surveillance tests."""

from __future__ import annotations

from typing import Any

from vascplan.fileio import validate_data
from vascplan.surveillance.protocol import load_protocol
from vascplan.surveillance.unit import Unit

PROTOCOL = load_protocol("standard", "test")


def sheath_patient(bed: int, inserted: str, removed: str | None = None, **extra: Any) -> dict:
    """A standard-tier patient: a man with an 8 Fr sheath in a 9 mm CFA (SAR about 0.33)."""
    p = {
        "ref": f"DEMO-{90 + bed}",
        "bed": bed,
        "sex": "male",
        "device": {
            "kind": "large-bore-sheath",
            "side": "R",
            "vessel": "CFA",
            "size_fr": 8,
            "label": "outer",
            "inserted": inserted,
            "removed": removed,
        },
        "vessel_mm": 9.0,
    }
    p.update(extra)
    return p


def make_unit(
    tz: str,
    patients: list[dict],
    staff: list[dict] | None = None,
    shifts: list[dict] | None = None,
) -> Unit:
    data = {
        "format": "vascplan-unit/1",
        "unit": {"name": "Test unit", "timezone": tz},
        "shifts": shifts
        or [{"name": "day", "start": "07:30"}, {"name": "night", "start": "19:30"}],
        "protocol": "standard",
        "staff": staff or [],
        "patients": patients,
    }
    return validate_data("unit.yaml", data, Unit)
