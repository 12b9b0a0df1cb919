"""Lesions that run across segment boundaries (issue 12).

A lesion may give ``end: {segment, at_cm}`` instead of ``length_cm``: it runs from
``segment``/``start_cm`` down the tree (with the flow) to ``end``. Before the case is
validated, such a lesion is split into one piece per segment it covers, each with its
``length_cm`` and the same ``part_of`` (a readable id of the whole lesion); the proximal
cap stays on the first piece, the distal cap on the last. Everything that works per
segment (the tree's MLD, the map) then works unchanged; the planner joins the pieces
again (``part_of``) to treat the lesion as one.
"""

from __future__ import annotations

from typing import Any


def _lengths(data: dict[str, Any], ref: dict[str, Any]) -> dict[str, float] | None:
    try:
        height = float(data["patient"]["height_cm"])
    except (KeyError, TypeError, ValueError):
        return None
    out = {}
    vessels = data.get("vessels") or {}
    for seg_id, row in ref.items():
        measured = vessels.get(seg_id) if isinstance(vessels, dict) else None
        length = measured.get("length_cm") if isinstance(measured, dict) else None
        out[seg_id] = float(length) if isinstance(length, (int, float)) else \
            row.length_for_height_cm(height)
    return out


def _chain(ref: dict[str, Any], top: str, bottom: str) -> list[str] | None:
    """Segments from ``top`` down to ``bottom`` along the parents, or None."""
    chain = [bottom]
    while chain[-1] != top:
        parent = ref[chain[-1]].parent
        if parent is None:
            return None
        chain.append(parent)
    return chain[::-1]


def split_spanning_lesions(data: Any, source: str) -> Any:
    """The case data with every lesion given by ``end`` split into per-segment pieces.

    Raises
    ------
    InputError
        An unknown end segment, an end not downstream of the start, an end before the
        start, or both ``length_cm`` and ``end``.
    """
    from vascplan.errors import InputError
    from vascplan.refdata.anatomy import load_reference, suggest_segment

    if not isinstance(data, dict) or not isinstance(data.get("lesions"), list):
        return data
    if not any(isinstance(x, dict) and "end" in x for x in data["lesions"]):
        return data
    ref = load_reference()
    lengths = _lengths(data, ref)
    out: list[Any] = []
    for i, item in enumerate(data["lesions"]):
        if not isinstance(item, dict) or not isinstance(item.get("end"), dict):
            out.append(item)
            continue
        field = f"lesions.{i}"
        end = item["end"]
        top, bottom, start = item.get("segment"), end.get("segment"), item.get("start_cm")
        at = end.get("at_cm")
        if "length_cm" in item:
            raise InputError(source, f"{field}.end", "give length_cm or end, not both")
        if not isinstance(at, (int, float)) or not isinstance(start, (int, float)) \
                or lengths is None or top not in ref:
            out.append(item)  # the ordinary checks name what is wrong
            continue
        if bottom not in ref:
            hint = suggest_segment(str(bottom)) or ""
            raise InputError(source, f"{field}.end.segment", f"unknown segment {bottom!r}{hint}")
        chain = _chain(ref, top, bottom)
        if chain is None:
            raise InputError(source, f"{field}.end.segment",
                             f"{bottom} is not downstream of {top}: a lesion runs with the "
                             "flow from segment/start_cm to end")
        label = f"{top} {start:g} cm to {bottom} {at:g} cm"
        base = {k: v for k, v in item.items() if k not in ("end", "proximal_cap", "distal_cap")}
        pieces = []
        for j, seg in enumerate(chain):
            lo = float(start) if j == 0 else 0.0
            if j + 1 < len(chain):
                hi = ref[chain[j + 1]].joins_fraction * lengths[seg]
            else:
                hi = float(at)
            if hi - lo <= 0:
                if len(chain) == 1 or j == len(chain) - 1 and hi < lo:
                    raise InputError(source, f"{field}.end.at_cm",
                                     f"the lesion would end before it starts ({label})")
                continue
            pieces.append({**base, "segment": seg, "start_cm": lo, "length_cm": hi - lo,
                           "part_of": label})
        if not pieces:
            raise InputError(source, f"{field}.end", f"the lesion has no length ({label})")
        if item.get("proximal_cap") is not None:
            pieces[0]["proximal_cap"] = item["proximal_cap"]
        if item.get("distal_cap") is not None:
            pieces[-1]["distal_cap"] = item["distal_cap"]
        out.extend(pieces)
    return {**data, "lesions": out}
