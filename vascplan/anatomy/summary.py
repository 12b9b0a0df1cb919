"""The annotated tree as a result object (the ``tree --format json`` contract) and as a table.

:func:`tree_summary` computes (effective values, MLD per segment and per lesion);
:func:`render_tree_table` only lays the summary out. The JSON contract (format
``vascplan-tree/1``) holds at least ``case``, ``segments`` (each with ``id``, ``name``,
``side``, ``diameter_mm``, ``diameter_source``, ``length_cm``, ``length_source``,
``mld_mm``, ``mld_source``, ``lesions``), ``assumptions`` and ``caution``.
"""

from __future__ import annotations

from typing import Any

from vascplan.anatomy.graph import MEASURED, REFERENCE, ArterialTree
from vascplan.safety import CAUTION, REFERENCE_MARK
from vascplan.texttable import Column, table_lines

TREE_FORMAT = "vascplan-tree/1"
FINDINGS_FOLD = 48
"""Terminal columns of the tree table's findings before a cell folds (layout only)."""
LEGEND = (
    f"{REFERENCE_MARK} = reference value from the adult anatomy table, not measured for this "
    "patient (an MLD so marked is worked out from a reference diameter): check against imaging"
)


def _r(value: float, digits: int = 2) -> float:
    return round(float(value), digits)


def _lesion(tree: ArterialTree, seg_id: str, lesion: Any) -> dict[str, Any]:
    out = lesion.model_dump(mode="json")
    out["end_cm"] = _r(lesion.end_cm)
    out["stenosis_pct"] = lesion.percent
    out["mld_mm"] = _r(tree.mld(seg_id, lesion.start_cm, lesion.end_cm))
    out["mld_source"] = mld_source(tree, seg_id, lesion.start_cm, lesion.end_cm)
    return out


def mld_source(
    tree: ArterialTree, node_id: str, start_cm: float = 0.0, end_cm: float | None = None
) -> str:
    """Whether an MLD rests on a reference diameter (``reference``) or on the case (``measured``).

    The MLD is the case's own figure when it is set by an occlusion (0), a graft that is
    not patent or a stent's nominal diameter; otherwise it is the vessel diameter, or a
    percent of it, and takes that diameter's provenance.
    """
    n = tree.segment(node_id)
    mld = tree.mld(node_id, start_cm, end_cm)
    end = n["length_cm"] if end_cm is None else end_cm
    if mld <= 0.0:
        return MEASURED
    for stent in n["stents"]:
        overlaps = stent.start_cm <= end and stent.end_cm >= start_cm
        if overlaps and stent.diameter_mm == mld and mld < n["diameter_mm"]:
            return MEASURED
    return str(n["diameter_source"])


def _node(tree: ArterialTree, node_id: str) -> dict[str, Any]:
    n = tree.segment(node_id)
    return {
        "id": node_id,
        "name": n["name"],
        "side": n["side"],
        "parent": n["parent"],
        "diameter_mm": _r(n["diameter_mm"]),
        "diameter_source": n["diameter_source"],
        "diameter_sd_mm": None if n["diameter_sd_mm"] is None else _r(n["diameter_sd_mm"]),
        "length_cm": _r(n["length_cm"], 1),
        "length_source": n["length_source"],
        "mld_mm": _r(tree.mld(node_id)),
        "mld_source": mld_source(tree, node_id),
        "calcification": n["calcification"],
        "calcification_source": n["calcification_source"],
        "lesions": [_lesion(tree, node_id, x) for x in n["lesions"]],
        "stents": [x.model_dump(mode="json") for x in n["stents"]],
        "avoid": list(n["avoid"]),
    }


def tree_summary(tree: ArterialTree) -> dict[str, Any]:
    """The annotated tree as plain data (the JSON contract of ``vascplan tree``).

    Parameters
    ----------
    tree : ArterialTree
        From :func:`vascplan.anatomy.graph.build_tree`.

    Returns
    -------
    dict
        ``format``, ``case``, ``patient``, ``segments``, ``grafts``, ``procedure``,
        ``assumptions``, ``reference_mark``, ``legend``, ``caution``. Diameters in mm
        to 2 decimals, lengths in cm to 1 decimal.
    """
    case = tree.case
    grafts = []
    for node_id in tree.graft_ids():
        n = tree.segment(node_id)
        grafts.append(
            {
                "id": node_id,
                "name": n["name"],
                "from": n["from"],
                "from_cm": n["from_cm"],
                "to": n["to"],
                "to_cm": n["to_cm"],
                "diameter_mm": _r(n["diameter_mm"]),
                "length_cm": _r(n["length_cm"], 1),
                "length_source": n["length_source"],
                "patent": n["patent"],
                "mld_mm": _r(tree.mld(node_id)),
            }
        )
    return {
        "format": TREE_FORMAT,
        "case": case.patient.ref,
        "patient": case.patient.model_dump(mode="json"),
        "segments": [_node(tree, s) for s in tree.segment_ids()],
        "grafts": grafts,
        "procedure": None if case.procedure is None else case.procedure.model_dump(mode="json"),
        "assumptions": tree.assumptions(),
        "reference_mark": REFERENCE_MARK,
        "legend": LEGEND,
        "caution": CAUTION,
    }


# ---------------------------------------------------------------------------
# Table (renders a summary; computes nothing)


def _mark(text: str, source: str) -> str:
    return f"{text}{REFERENCE_MARK}" if source == REFERENCE else f"{text} "


def _findings(seg: dict[str, Any]) -> str:
    parts = []
    for x in seg["lesions"]:
        where = f"{x['start_cm']:g}-{x['end_cm']:g} cm"
        if x["kind"] == "occlusion":
            caps = ""
            if x.get("proximal_cap") or x.get("distal_cap"):
                caps = f", caps {x.get('proximal_cap') or '?'}/{x.get('distal_cap') or '?'}"
            parts.append(f"occlusion {where}, {x['calcification']} Ca{caps}")
        else:
            parts.append(
                f"stenosis {x['stenosis_pct']:g}% {where} "
                f"(MLD {_mark(format(x['mld_mm'], '.1f'), x['mld_source']).rstrip()}), "
                f"{x['calcification']} Ca"
            )
    for x in seg["stents"]:
        parts.append(
            f"stent {x['diameter_mm']:g} mm {x['start_cm']:g}-{x['start_cm'] + x['length_cm']:g} cm"
        )
    for reason in seg["avoid"]:
        parts.append(f"AVOID: {reason}")
    return "; ".join(parts)


def render_tree_table(summary: dict[str, Any], *, every_assumption: bool = False) -> str:
    """Lay a :func:`tree_summary` out as a fixed-width table with the legend and caution.

    Parameters
    ----------
    summary : dict
        From :func:`tree_summary`.
    every_assumption : bool
        List every reference value with its source, not only their count.
    """
    p = summary["patient"]
    lines = [f"Case {summary['case']}: {p['sex']}, {p['height_cm']:g} cm"]
    proc = summary["procedure"]
    if proc is not None:
        t, sh, dev = proc["target"], proc["sheath"], proc["device"]
        outer = f", outer {sh['outer_mm']:g} mm" if sh.get("outer_mm") else ""
        lines.append(
            f"Procedure: {proc['purpose']}; target {t['segment']} at {t['at_cm']:g} cm; "
            f"sheath {sh['size_fr']:g} Fr x {sh['length_cm']:g} cm{outer}; device "
            f"{dev['profile_fr']:g} Fr, working length {dev['working_length_cm']:g} cm"
        )
    lines.append("")
    columns = [
        Column("segment"),
        Column("name"),
        Column("diam mm", "right"),
        Column("MLD mm", "right"),
        Column("length cm", "right"),
        Column("calcium"),
        Column("findings", fold=FINDINGS_FOLD),
    ]
    rows: list[tuple[str, ...]] = []
    for seg in summary["segments"]:
        rows.append(
            (
                seg["id"],
                seg["name"],
                _mark(f"{seg['diameter_mm']:.1f}", seg["diameter_source"]),
                _mark(f"{seg['mld_mm']:.1f}", seg["mld_source"]),
                _mark(f"{seg['length_cm']:.1f}", seg["length_source"]),
                _mark(seg["calcification"], seg["calcification_source"]),
                _findings(seg),
            )
        )
    for g in summary["grafts"]:
        state = "patent" if g["patent"] else "NOT PATENT"
        rows.append(
            (
                g["id"],
                f"graft {g['from']} {g['from_cm']:g} cm -> {g['to']} {g['to_cm']:g} cm",
                f"{g['diameter_mm']:.1f} ",
                f"{g['mld_mm']:.1f} ",
                f"{g['length_cm']:.1f}~",
                "",
                f"{state}; length estimated (~)",
            )
        )
    lines += table_lines(columns, rows)
    lines.append("")
    lines.append(f"Legend: {summary['legend']}; ~ = estimated by a rule.")
    per_segment = sum(1 for a in summary["assumptions"] if " is a reference " in a)
    others = [a for a in summary["assumptions"] if " is a reference " not in a]
    if every_assumption:
        lines.extend(f"Assumption: {a}." for a in summary["assumptions"])
    else:
        lines.append(
            f"{per_segment} values are reference defaults (marked {summary['reference_mark']}); "
            "--assumptions or --format json lists each with its source."
        )
        lines.extend(f"Assumption: {a}." for a in others)
    lines.append(f"Caution: {summary['caution']}")
    return "\n".join(lines) + "\n"
