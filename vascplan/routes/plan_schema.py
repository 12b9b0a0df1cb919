"""The JSON Schema of the planner's output (``vascplan plan --format json``, format
``vascplan-plan/1``): ``vascplan schema --kind plan``.

Documents the keys of issue 3 and the additions of issue 12 (``role``, ``tier``,
``ordering``, ``equipment``, ``margins``, ``in_place``, ``routes_left_out``,
``pairs_left_out``) and every reason code. Extra keys are allowed: additions never
replace keys.
"""

from __future__ import annotations

from typing import Any

from vascplan.routes.limits import REASON_CODES
from vascplan.routes.result import FORMAT
from vascplan.safety import CAUTION

SCHEMA_ID = "https://vascplan.invalid/schema/vascplan-plan-1.json"

_NUM = {"type": "number"}
_NUM_OR_NULL = {"type": ["number", "null"]}
_STR_OR_NULL = {"type": ["string", "null"]}


def _margin(unit: str, what: str) -> dict[str, Any]:
    return {"type": ["number", "null"],
            "description": f"{what} [{unit}]: positive is room left, negative short or over "
                           "by that much; null when not checked for this route"}


def plan_json_schema() -> dict[str, Any]:
    """JSON Schema (draft 2020-12) of one plan object.

    >>> s = plan_json_schema()
    >>> s["properties"]["format"]["const"]
    'vascplan-plan/1'
    >>> "sheath-too-long" in s["$defs"]["Block"]["properties"]["code"]["enum"]
    True
    """
    block = {
        "type": "object",
        "required": ["code", "segment", "detail"],
        "properties": {
            "code": {"enum": list(REASON_CODES),
                     "description": "; ".join(f"{k}: {v}" for k, v in REASON_CODES.items())},
            "segment": {"type": "string"},
            "detail": {"type": "string", "minLength": 1},
        },
    }
    factor = {"type": "object", "required": ["name", "points", "detail"],
              "properties": {"name": {"type": "string"}, "points": _NUM,
                             "detail": {"type": "string"}}}
    equipment = {
        "type": "object",
        "required": ["size_fr", "label", "length_cm", "sheathless", "default"],
        "properties": {
            "size_fr": {"type": "number", "exclusiveMinimum": 0},
            "label": {"enum": ["inner", "outer"]},
            "length_cm": {"type": ["number", "null"],
                          "description": "sheath length [cm]; null when sheathless"},
            "sheathless": {"type": "boolean"},
            "default": {"type": "boolean",
                        "description": "true: the catalogue's default for this site and role "
                                       "(data/access/equipment.yaml), not stated in the case"},
            "basis": {"type": "string"},
        },
    }
    margins = {
        "type": "object",
        "required": ["sar", "shaft_cm", "working_room_cm", "device_in_sheath_mm"],
        "properties": {
            "sar": _margin("-", "SAR limit less the SAR of the binding segment"),
            "shaft_cm": _margin("cm", "working length less path and outside allowance"),
            "working_room_cm": _margin("cm", "room before the target lesion less the room "
                                             "needed (working_room_cm)"),
            "device_in_sheath_mm": _margin("mm", "sheath inner diameter less device profile"),
        },
    }
    route = {
        "type": "object",
        "required": ["rank", "site", "direction", "feasible", "path", "length_cm", "approach",
                     "sheath_od_mm", "min_lumen_mm", "sar", "sar_limit", "sar_limit_source",
                     "score", "blocked_by", "factors", "role", "equipment", "margins"],
        "properties": {
            "rank": {"type": "integer", "minimum": 1},
            "site": {"type": "string"},
            "site_name": {"type": "string"},
            "direction": {"enum": ["retrograde", "antegrade"]},
            "feasible": {"type": "boolean"},
            "path": {"type": "array", "items": {"type": "string"}, "minItems": 1},
            "path_words": {"type": "string"},
            "legs": {"type": "array"},
            "length_cm": _NUM_OR_NULL,
            "approach": {"enum": ["proximal-cap", "distal-cap", "none"]},
            "sheath_od_mm": _NUM,
            "min_lumen_mm": _NUM_OR_NULL,
            "limiting_segment": _STR_OR_NULL,
            "sar": {**_NUM_OR_NULL, "description": "unrounded sheath OD / MLD"},
            "sar_limit": _NUM_OR_NULL,
            "sar_limit_name": _STR_OR_NULL,
            "sar_limit_label": _STR_OR_NULL,
            "sar_limit_source": _STR_OR_NULL,
            "score": {**_NUM, "description": "sum of factors' points; lower is better"},
            "role": {"enum": ["therapeutic", "crossing"]},
            "tier": {"type": "integer", "minimum": 0},
            "ordering": {"type": "array", "items": {"type": "string"},
                         "description": "the ordering rules that placed the route, with basis"},
            "equipment": {"$ref": "#/$defs/Equipment"},
            "margins": {"$ref": "#/$defs/Margins"},
            "in_place": {**_STR_OR_NULL, "description": "the access already in place used"},
            "position": {"enum": ["supine", "prone"]},
            "assumed": {"type": "array", "items": {"type": "string"}},
            "blocked_by": {"type": "array", "items": {"$ref": "#/$defs/Block"}},
            "factors": {"type": "array", "items": {"$ref": "#/$defs/Factor"}},
        },
    }
    end = {"type": "object", "required": ["rank", "site", "direction", "path", "score"]}
    pair = {"type": "object", "required": ["rank", "score", "proximal", "distal", "notes"],
            "properties": {"rank": {"type": "integer", "minimum": 1}, "score": _NUM,
                           "proximal": end, "distal": end,
                           "notes": {"type": "array", "items": {"type": "string"}}}}
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": SCHEMA_ID,
        "title": f"vascplan plan output ({FORMAT})",
        "description": "Ranked access routes of one case (vascplan plan --format json). By "
                       "default only routes with a path, one per site and direction; --all "
                       f"lists every route. Caution: {CAUTION}",
        "type": "object",
        "required": ["format", "case", "purpose", "target", "score_convention", "routes",
                     "routes_total", "routes_left_out", "pairs_left_out", "pairs",
                     "assumptions", "weights", "limits", "caution"],
        "properties": {
            "format": {"const": FORMAT},
            "case": {"type": "string"},
            "source": {"type": "string"},
            "purpose": {"enum": ["treat", "support"]},
            "target": {"type": "object", "required": ["segment", "at_cm"]},
            "score_convention": {"type": "string"},
            "routes": {"type": "array", "items": {"$ref": "#/$defs/Route"}},
            "routes_total": {"type": "integer", "minimum": 0},
            "routes_left_out": {"type": "integer", "minimum": 0,
                                "description": "routes not listed (no path, or another path "
                                               "of a route listed); 0 with --all"},
            "pairs_left_out": {"type": "integer", "minimum": 0},
            "pairs": {"type": "array", "items": {"$ref": "#/$defs/Pair"}},
            "assumptions": {"type": "array", "items": {"type": "string"}},
            "weights": {"type": "object", "additionalProperties": _NUM},
            "limits": {"type": "object", "additionalProperties": _NUM},
            "caution": {"const": CAUTION},
            "support": {"type": "object"},
        },
        "$defs": {"Route": route, "Block": block, "Factor": factor, "Equipment": equipment,
                  "Margins": margins, "Pair": pair},
    }
