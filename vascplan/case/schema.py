"""The JSON Schema of the case file, with the segment ids as allowed values."""

from __future__ import annotations

from typing import Any

from vascplan.case.model import CASE_FORMAT, SECTIONS, Case
from vascplan.refdata.anatomy import segment_ids
from vascplan.safety import CAUTION

SCHEMA_ID = "https://vascplan.invalid/schema/vascplan-case-1.json"
"""A non-resolvable id (RFC 6761 ``.invalid``): the schema ships with the tool."""

_SEGMENT_FIELDS = {
    "Lesion": ["segment"],
    "LesionEnd": ["segment"],
    "Stent": ["segment"],
    "Graft": ["from", "to"],
    "Avoid": ["site"],
    "Target": ["segment"],
}


_LESION_RULES: list[dict[str, Any]] = [
    # The cross-field rules of Lesion._kind_matches, as far as JSON Schema can say them.
    {
        "if": {"required": ["kind"], "properties": {"kind": {"const": "occlusion"}}},
        "then": {"properties": {"stenosis_pct": {"anyOf": [{"const": 100}, {"type": "null"}]}}},
    },
    {
        "if": {"required": ["kind"], "properties": {"kind": {"const": "stenosis"}}},
        "then": {
            "required": ["stenosis_pct"],
            "properties": {
                "stenosis_pct": {"type": "number", "minimum": 0, "exclusiveMaximum": 100},
                "proximal_cap": {"type": "null"},
                "distal_cap": {"type": "null"},
            },
        },
    },
]


def case_json_schema() -> dict[str, Any]:
    """JSON Schema (draft 2020-12) of ``vascplan-case/1``.

    Field names are the file's own (``from``/``to`` for grafts). Every field naming a
    segment lists the reference table's ids as its allowed values, and so do the keys
    of ``vessels``.

    >>> s = case_json_schema()
    >>> s["properties"]["format"]["const"]
    'vascplan-case/1'
    >>> "L-SFA" in s["$defs"]["Lesion"]["properties"]["segment"]["enum"]
    True
    """
    schema = Case.model_json_schema(by_alias=True)
    ids = segment_ids()
    for model, fields in _SEGMENT_FIELDS.items():
        props = schema["$defs"][model]["properties"]
        for name in fields:
            props[name]["enum"] = ids
    schema["properties"]["vessels"]["propertyNames"] = {"enum": ids}
    lesion = schema["$defs"]["Lesion"]
    # issue 12: length_cm or end (a lesion running into another segment), not both
    lesion["required"] = [r for r in lesion.get("required", []) if r != "length_cm"]
    lesion["allOf"] = [*_LESION_RULES,
                       {"anyOf": [{"required": ["length_cm"]}, {"required": ["end"]}]},
                       {"if": {"required": ["end"]},
                        "then": {"properties": {"length_cm": {"type": "null"}}}}]
    for name in SECTIONS:  # an empty section in the file is read as none
        prop = schema["properties"][name]
        keep = {k: prop.pop(k) for k in ("title", "description") if k in prop}
        schema["properties"][name] = {**keep, "anyOf": [prop, {"type": "null"}]}
    return {
        "$schema": "https://json-schema.org/draft/2020-12/schema",
        "$id": SCHEMA_ID,
        "title": f"vascplan case file ({CASE_FORMAT})",
        "description": f"One patient's arteries and procedure. Caution: {CAUTION}",
        **{k: v for k, v in schema.items() if k not in ("title", "description")},
    }
