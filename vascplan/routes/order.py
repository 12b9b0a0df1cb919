"""Ordering rules applied before the score: role and tier of each route.

The rules and their basis live in ``data/access/order.yaml``. A route's sort key is
feasible first, reachable first, therapeutic before crossing, lower tier first, then the
score (lower is better) and the shorter path.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache
from typing import Any

from vascplan.errors import InputError
from vascplan.fileio import read_document
from vascplan.paths import data_dir

ORDER_FILE = "order.yaml"
ROLES = ("therapeutic", "crossing")


@dataclass(frozen=True)
class Tier:
    """One tier rule: segment kinds, an optional sheath-size condition, its basis."""

    name: str
    tier: int
    kinds: tuple[str, ...]
    below_large_bore: bool
    basis: str
    lifted_by_severe_obesity: bool = False


@cache
def load_order() -> dict[str, Any]:
    """The ordering rules (``data/access/order.yaml``), checked.

    Raises
    ------
    InputError
        The file lacks ``role``, ``tiers`` or a basis.
    """
    path = data_dir() / "access" / ORDER_FILE
    data = read_document(path)
    if not isinstance(data, dict) or "tiers" not in data or "role" not in data:
        raise InputError(str(path), "", "expected role, default_tier and tiers")
    tiers = []
    for entry in data["tiers"]:
        if not entry.get("basis"):
            raise InputError(str(path), str(entry.get("name")), "every tier needs a basis")
        tiers.append(Tier(str(entry["name"]), int(entry["tier"]),
                          tuple(entry.get("kinds", ())), bool(entry.get("below_large_bore")),
                          " ".join(str(entry["basis"]).split()),
                          bool(entry.get("lifted_by_severe_obesity"))))
    in_place = data.get("in_place") or {}
    return {"role_basis": " ".join(str(data["role"]["basis"]).split()),
            "in_place": {"tier": int(in_place.get("tier", 0)),
                         "basis": " ".join(str(in_place.get("basis", "")).split())},
            "default_tier": int(data["default_tier"]),
            "default_basis": " ".join(str(data["default_basis"]).split()),
            "tiers": tuple(tiers)}


def segment_kind(segment: str) -> str:
    """``L-CFA`` -> ``CFA``."""
    side, sep, kind = segment.partition("-")
    return kind if sep and side in ("L", "R") else segment


def tier_of(segment: str, large_bore: bool,
            severe_obesity: bool = False) -> tuple[int, str, str]:
    """The tier of a therapeutic access on ``segment``: (tier, rule name, basis).

    >>> tier_of("L-CFA", False)[:2]
    (0, 'femoral-first')
    >>> tier_of("R-AXA", False)[:2], tier_of("R-AXA", True)[0]
    ((2, 'axillary-for-large-bore'), 1)
    """
    rules = load_order()
    kind = segment_kind(segment)
    for t in rules["tiers"]:
        if t.lifted_by_severe_obesity and severe_obesity:
            continue
        if kind in t.kinds and (not t.below_large_bore or not large_bore):
            return t.tier, t.name, t.basis
    return rules["default_tier"], "default", rules["default_basis"]


def role_of(approach: str) -> str:
    """``crossing`` for a route arriving at an occlusion's distal cap, else ``therapeutic``.

    >>> role_of("distal-cap"), role_of("proximal-cap"), role_of("none")
    ('crossing', 'therapeutic', 'therapeutic')
    """
    return "crossing" if approach == "distal-cap" else "therapeutic"
