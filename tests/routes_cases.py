"""Hand-checkable cases for the route planner tests.

Every segment a test's routes touch has a measured length and diameter, so that the
expected lengths and SARs in the tests' comments follow from these numbers alone.
"""

from __future__ import annotations

import copy
from typing import Any

from vascplan.case.load import validate_case

# Measured lengths [cm] and diameters [mm] (a man of 175 cm; values invented).
VESSELS: dict[str, dict[str, float]] = {
    # AO-ASC: diameter only (large-bore support cases reach it; its length stays the
    # reference so that path lengths are unchanged).
    "AO-ASC": {"diameter_mm": 32},
    "AO-ARCH": {"length_cm": 6, "diameter_mm": 28},
    "AO-DESC": {"length_cm": 22, "diameter_mm": 24},
    "AO-SUPRA": {"length_cm": 5, "diameter_mm": 20},
    "AO-INFRA": {"length_cm": 10, "diameter_mm": 16},
    "BCT": {"length_cm": 4, "diameter_mm": 12},
}
for _side in ("L", "R"):
    VESSELS.update({
        f"{_side}-SCA": {"length_cm": 6, "diameter_mm": 8},
        f"{_side}-AXA": {"length_cm": 10, "diameter_mm": 6},
        f"{_side}-BRA": {"length_cm": 25, "diameter_mm": 4.5},
        f"{_side}-RAD": {"length_cm": 22, "diameter_mm": 2.8},
        f"{_side}-CIA": {"length_cm": 6, "diameter_mm": 9},
        f"{_side}-EIA": {"length_cm": 10, "diameter_mm": 7},
        f"{_side}-CFA": {"length_cm": 4, "diameter_mm": 8},
        f"{_side}-SFA": {"length_cm": 30, "diameter_mm": 6},
        f"{_side}-POP": {"length_cm": 16, "diameter_mm": 5},
        f"{_side}-ATA": {"length_cm": 30, "diameter_mm": 3},
        f"{_side}-PTA": {"length_cm": 30, "diameter_mm": 3},
        f"{_side}-DPA": {"length_cm": 7, "diameter_mm": 2.5},
        f"{_side}-PLA": {"length_cm": 6, "diameter_mm": 2},
    })

BASE: dict[str, Any] = {
    "format": "vascplan-case/1",
    "patient": {"ref": "TEST-01", "sex": "male", "height_cm": 175, "anticoagulated": False},
    "vessels": VESSELS,
    "procedure": {
        "purpose": "treat",
        "target": {"segment": "L-SFA", "at_cm": 12},
        # outer_mm given: the SAR in the comments needs no wall table.
        "sheath": {"size_fr": 6, "length_cm": 11, "outer_mm": 2.6},
        "device": {"profile_fr": 6, "working_length_cm": 150},
    },
}


def case_data(**changes: Any) -> dict[str, Any]:
    """A deep copy of :data:`BASE` with top-level keys replaced or merged.

    ``procedure`` and ``patient`` given as dicts are merged into the base ones;
    ``vessels`` given as a dict updates the base vessels (per segment).
    """
    data = copy.deepcopy(BASE)
    for key, value in changes.items():
        if key in ("procedure", "patient") and isinstance(value, dict):
            data[key].update(copy.deepcopy(value))
        elif key == "vessels":
            for seg, attrs in value.items():
                data["vessels"].setdefault(seg, {}).update(attrs)
        else:
            data[key] = copy.deepcopy(value)
    return data


def make_case(**changes: Any):
    """A validated case from :func:`case_data`."""
    return validate_case("test-case", case_data(**changes))


def routes_from(result, site: str, direction: str | None = None) -> list:
    """Routes of a plan from one site id (and direction)."""
    return [r for r in result.routes
            if r.site == site and (direction is None or r.direction == direction)]


def codes(route) -> list[tuple[str, str]]:
    """(code, segment) of each broken limit."""
    return [(b.code, b.segment) for b in route.blocked_by]
