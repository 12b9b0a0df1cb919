"""Invented, seeded case generators for the planner's tests and benchmarks.

``graft_case(n, seed)`` gives a case with ``n`` bypass grafts between random points of
the pelvic and leg arteries (refs GRAFT-n-seed); ``registry_case(i, rng)`` one case of a
generated registry (refs REG-nnnnnn), with a few lesions and sometimes a graft. All
values are invented; measured lengths keep every graft end inside its segment.
"""

from __future__ import annotations

import random
from typing import Any

# Measured lengths [cm] given to every segment a generated graft may join (invented).
LENGTHS_CM = {"CIA": 6, "EIA": 10, "IIA": 4, "CFA": 4, "PFA": 15, "SFA": 30, "POP": 16,
              "TPT": 3, "ATA": 30, "PTA": 30, "PER": 28, "DPA": 7, "PLA": 6}
_ENDS = [f"{side}-{seg}" for side in "LR" for seg in LENGTHS_CM if seg != "PLA"]


def graft_case(n: int, seed: int = 1, target: tuple[str, float] = ("L-POP", 8)) -> dict[str, Any]:
    """A case with ``n`` grafts (about one in ten occluded), as plain data."""
    rng = random.Random(seed)
    vessels: dict[str, Any] = {f"{side}-{seg}": {"length_cm": cm}
                               for side in "LR" for seg, cm in LENGTHS_CM.items()}
    grafts = []
    for i in range(n):
        a, b = rng.sample(_ENDS, 2)
        grafts.append({"name": f"g{i}", "from": a,
                       "from_cm": round(rng.uniform(0, vessels[a]["length_cm"]), 1),
                       "to": b, "to_cm": round(rng.uniform(0, vessels[b]["length_cm"]), 1),
                       "diameter_mm": 6, "patent": rng.random() < 0.9})
    return {
        "format": "vascplan-case/1",
        "patient": {"ref": f"GRAFT-{n}-{seed}", "sex": "male", "height_cm": 175,
                    "anticoagulated": False},
        "vessels": vessels,
        "grafts": grafts,
        "procedure": {"purpose": "treat",
                      "target": {"segment": target[0], "at_cm": target[1]},
                      "sheath": {"size_fr": 6, "length_cm": 11},
                      "device": {"profile_fr": 5, "working_length_cm": 150}},
    }


_TARGETS = [("L-SFA", 10), ("R-SFA", 15), ("L-POP", 6), ("R-ATA", 12), ("L-EIA", 4),
            ("R-CIA", 3), ("L-DPA", 2), ("AO-INFRA", 5)]
_CAPS = ["tapered", "blunt", "flush"]


def registry_case(i: int, rng: random.Random) -> dict[str, Any]:
    """One invented registry case (ref REG-nnnnnn): a target, a few lesions, maybe a graft."""
    seg, at = rng.choice(_TARGETS)
    lesions = []
    if rng.random() < 0.6:
        lesions.append({"segment": seg, "kind": "occlusion", "start_cm": max(0, at - 2),
                        "length_cm": 3, "proximal_cap": rng.choice(_CAPS),
                        "distal_cap": rng.choice(_CAPS)})
    if rng.random() < 0.5:
        lesions.append({"segment": rng.choice(["L-CIA", "R-EIA", "L-CFA", "R-POP"]),
                        "kind": "stenosis", "stenosis_pct": rng.choice([30, 50, 70]),
                        "start_cm": 1, "length_cm": 1, "calcification": "moderate"})
    data: dict[str, Any] = {
        "format": "vascplan-case/1",
        "patient": {"ref": f"REG-{i:06d}", "sex": rng.choice(["female", "male"]),
                    "height_cm": rng.randint(150, 195), "anticoagulated": rng.random() < 0.3},
        "vessels": {"R-CFA": {"diameter_mm": round(rng.uniform(6, 10), 1)},
                    "L-CFA": {"diameter_mm": round(rng.uniform(6, 10), 1)}},
        "lesions": lesions,
        "procedure": {"purpose": "treat", "target": {"segment": seg, "at_cm": at},
                      "sheath": {"size_fr": rng.choice([4, 5, 6, 7, 8]), "length_cm": 11},
                      "device": {"profile_fr": 5,
                                 "working_length_cm": rng.choice([90, 135, 150])}},
    }
    if rng.random() < 0.2:
        data["grafts"] = [{"name": "fem-pop", "from": "L-CFA", "from_cm": 3, "to": "L-POP",
                           "to_cm": 10, "diameter_mm": 6}]
    return data
