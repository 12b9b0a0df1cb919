"""The case-conference report: summary, drawn arterial map, ranked routes, assumptions.

Page 1 holds the patient and procedure summary and the map with its legend; then the
route table (each route's verdict and reasons, from the route planner), the two-route
pairs for an occlusion, the large-bore figures when the purpose is support (SAR per
segment, lumen left, distal flow estimate, cannula advice) and every assumption. The
report renders what the planner and the tree give it; it computes nothing clinical.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from datetime import datetime
from typing import Any

from reportlab.lib import colors
from reportlab.platypus import KeepTogether, PageBreak, Spacer, Table, TableStyle

from vascplan.nearlimit import format_limit, format_near_limit
from vascplan.pdf.page import PageSetup, build_pdf, frame_box, styles
from vascplan.pdf.text import para, rich_para
from vascplan.reports.arterial_map import LEGEND_ROWS, PT_PER_MM, draw_map, legend_symbol
from vascplan.reports.map_input import chosen_and_runner_up, map_data
from vascplan.safety import REFERENCE_MARK, REFERENCE_VALUES_NOTE

GREY = colors.Color(0.92, 0.92, 0.92)
LEGEND_WIDTH_PT = 150.0


def verdict(route: Mapping[str, Any]) -> str:
    """``usable`` or ``blocked``, as the route table prints it.

    >>> verdict({"feasible": True}), verdict({"feasible": False})
    ('usable', 'blocked')
    """
    return "usable" if route.get("feasible") else "blocked"


def _num(value: Any, fmt: str = "{:.2f}", none: str = "-") -> str:
    return none if value is None else fmt.format(value)


def _sar(value: Any, limit: Any) -> str:
    """A SAR on its verdict's side of its limit (``1.048`` beside 1.05), ``-`` if none."""
    if value is None:
        return "-"
    return format_near_limit(float(value), None if limit is None else float(limit))


def _limit_value(limit: Any) -> str:
    return "-" if limit is None else format_limit(float(limit))


def _limit(r: Mapping[str, Any], limit_key: str = "sar_limit",
           source_key: str = "sar_limit_source", label_key: str = "sar_limit_label") -> str:
    """``limit 1.00 radial (Saito et al., ...)``: the SAR limit with its source."""
    if r.get(limit_key) is None:
        return ""
    label = r.get(label_key) or ""
    return f"limit {format_limit(float(r[limit_key]))} {label} ({r.get(source_key)})".replace(
        "  ", " "
    )


def _node_name(tree: Any, node: str) -> str:
    try:
        return str(tree.graph.nodes[node].get("name") or node)
    except KeyError:
        return node


def _summary(case: Any, tree: Any, plan: Mapping[str, Any] | None, width: float) -> Table:
    st = styles()
    label, cell = st["cell-bold"], st["cell"]
    p = case.patient
    rows: list[list[Any]] = [
        [
            para("Ref", label),
            para(p.ref, st["alarm"]),
            para("Sex, height", label),
            para(
                f"{p.sex}, {p.height_cm:g} cm" + (f", {p.weight_kg:g} kg" if p.weight_kg else ""),
                cell,
            ),
        ],
    ]
    proc = case.procedure
    if proc is not None:
        purpose = (
            "large-bore support (device left in place)"
            if proc.purpose == "support"
            else "treatment"
        )
        tgt = proc.target
        target = f"{_node_name(tree, tgt.segment)} ({tgt.segment}) at {tgt.at_cm:g} cm"
        sh = proc.sheath
        sheath = f"{sh.size_fr:g} Fr, {sh.length_cm:g} cm long ({sh.label} size)"
        sheath += f", outer {sh.outer_mm:g} mm" if sh.outer_mm else ", outer diameter not given"
        dev = proc.device
        device = (
            f"crossing profile {dev.profile_fr:g} Fr, working length {dev.working_length_cm:g} cm"
        )
        if getattr(dev, "kind", None):
            from vascplan.reports.checklist import DEVICE_NAMES

            device = f"{DEVICE_NAMES.get(dev.kind, dev.kind)}: {device}"
        rows += [
            [
                para("Procedure", label),
                para(purpose, cell),
                para("Target", label),
                para(target, cell),
            ],
            [para("Sheath", label), para(sheath, cell), para("Device", label), para(device, cell)],
        ]
    else:
        rows.append([para("Procedure", label), para("none given in the case file", cell), "", ""])
    extras = []
    for g in case.grafts:
        state = "patent" if g.patent else "occluded"
        extras.append(
            f"graft {g.name}: {g.from_segment} {g.from_cm:g} cm to {g.to_segment} "
            f"{g.to_cm:g} cm, {g.diameter_mm:g} mm, {state}"
        )
    for s in case.stents:
        extras.append(f"stent in {s.segment} {s.start_cm:g}-{s.end_cm:g} cm, {s.diameter_mm:g} mm")
    if extras:
        rows.append([para("Grafts, stents", label), para("; ".join(extras), cell), "", ""])
    if case.avoid:
        rows.append(
            [
                para("Avoid", label),
                para("; ".join(f"{a.site}: {a.reason}" for a in case.avoid), cell),
                "",
                "",
            ]
        )
    if plan is not None:
        best, second = chosen_and_runner_up(plan)
        for name, r in (("Chosen route", best), ("Runner-up", second)):
            text = _route_line(r) if r else "none usable"
            rows.append([para(name, label), para(text, cell), "", ""])
    t = Table(rows, colWidths=[0.14 * width, 0.36 * width, 0.13 * width, 0.37 * width])
    style = [
        ("GRID", (0, 0), (-1, -1), 0.4, colors.grey),
        ("BACKGROUND", (0, 0), (0, -1), GREY),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("TOPPADDING", (0, 0), (-1, -1), 2),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
    ]
    for i, row in enumerate(rows):
        if row[2] == "":
            style.append(("SPAN", (1, i), (-1, i)))
        else:
            style.append(("BACKGROUND", (2, i), (2, i), GREY))
    t.setStyle(TableStyle(style))
    return t


def _route_line(r: Mapping[str, Any]) -> str:
    site = r.get("site_name") or r.get("site")
    length = _num(r.get("length_cm"), "{:.0f} cm")
    path = r.get("path_words") or " > ".join(r.get("path", []))
    return f"{r['rank']}. {site}, {r.get('direction')}: {path} ({length})"


def _legend(width: float) -> Table:
    st = styles()
    rows = [
        [legend_symbol(kind), para(text.format(pt=PT_PER_MM), st["small"])]
        for kind, text in LEGEND_ROWS
    ]
    t = Table(rows, colWidths=[38, width - 38])
    t.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "MIDDLE"),
                ("LEFTPADDING", (0, 0), (-1, -1), 1),
                ("TOPPADDING", (0, 0), (-1, -1), 1.5),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
            ]
        )
    )
    return t


def _map_block(tree: Any, plan: Mapping[str, Any] | None, width: float, height: float) -> Table:
    st = styles()
    map_w = width - LEGEND_WIDTH_PT - 8
    drawing = draw_map(map_data(tree, plan), map_w, height)
    legend = [para("Legend", st["cell-bold"]), _legend(LEGEND_WIDTH_PT)]
    t = Table([[drawing, legend]], colWidths=[map_w + 8, LEGEND_WIDTH_PT])
    t.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("LEFTPADDING", (0, 0), (-1, -1), 0),
                ("RIGHTPADDING", (0, 0), (-1, -1), 0),
                ("BOX", (0, 0), (0, 0), 0.4, colors.grey),
            ]
        )
    )
    return t


DETAILED_FEASIBLE = 2
"""How many usable routes (best first) get every factor with its detail in the table;
the others show each factor's name and points only, to keep the table readable."""


def route_reasons(r: Mapping[str, Any], detailed: bool) -> list[str]:
    """The reason lines of one route: every broken limit, else its factors.

    >>> route_reasons({"blocked_by": [{"code": "sar", "segment": "R-EIA", "detail": "too small"}]},
    ...               detailed=False)
    ['BLOCKED sar at R-EIA: too small']
    """
    blocks = r.get("blocked_by") or ()
    if blocks:
        return [f"BLOCKED {b.get('code')} at {b.get('segment')}: {b.get('detail')}" for b in blocks]
    factors = sorted(r.get("factors") or (), key=lambda f: -float(f.get("points", 0)))
    if not factors:
        return ["nothing against it"]
    if detailed:
        return [f"{f.get('name')} +{f.get('points', 0):.1f}: {f.get('detail')}" for f in factors]
    return ["; ".join(f"{f.get('name')} +{f.get('points', 0):.1f}" for f in factors)]


def _grid_style() -> list[tuple]:
    return [
        ("GRID", (0, 0), (-1, -1), 0.4, colors.grey),
        ("BACKGROUND", (0, 0), (-1, 0), GREY),
        ("LINEBELOW", (0, 0), (-1, 0), 1.0, colors.black),
        ("VALIGN", (0, 0), (-1, -1), "TOP"),
        ("TOPPADDING", (0, 0), (-1, -1), 2),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
        ("LEFTPADDING", (0, 0), (0, -1), 3),
        ("RIGHTPADDING", (0, 0), (0, -1), 1),
    ]


def _route_name(r: Mapping[str, Any]) -> str:
    return f"{r.get('site_name') or r.get('site')} ({r.get('site')}), {r.get('direction')}"


def route_table(
    plan: Mapping[str, Any], width: float, routes: Sequence[Mapping[str, Any]] | None = None
) -> Table | None:
    """The usable routes, best first, with their sizes, score and reasons.

    ``routes`` limits the table to those routes (default: every route of the plan).
    """
    st = styles()
    cell, bold, small = st["cell"], st["cell-bold"], st["small"]
    head = ["#", "Route", "Verdict", "cm", "Sheath OD / min lumen (mm) / SAR", "Score", "Reasons"]
    rows: list[list[Any]] = [[para(h, st["head"]) for h in head]]
    chosen = plan.get("routes", ()) if routes is None else routes
    usable = [r for r in chosen if r.get("feasible")]
    if not usable:
        return None
    for n, r in enumerate(usable):
        detailed = n < DETAILED_FEASIBLE
        assumed = set(r.get("assumed", ()))

        def mark(key: str, assumed: set[str] = assumed) -> str:
            return REFERENCE_MARK if key in assumed else ""

        sizes = (
            f"{_num(r.get('sheath_od_mm'))}{mark('sheath_od_mm')} / "
            f"{_num(r.get('min_lumen_mm'))}{mark('min_lumen_mm')} / "
            f"{_sar(r.get('sar'), r.get('sar_limit'))}{mark('sar')}; {_limit(r)}"
        )
        path = r.get("path_words") or " > ".join(r.get("path", []))
        reasons = [
            para(line, small if detailed else st["tiny"]) for line in route_reasons(r, detailed)
        ]
        rows.append(
            [
                para(r.get("rank"), bold),
                [para(_route_name(r), cell), para(path, st["tiny"])],
                para(verdict(r), bold),
                para(_num(r.get("length_cm"), "{:.0f}"), cell),
                para(sizes, cell),
                para(_num(r.get("score"), "{:.1f}"), cell),
                reasons,
            ]
        )
    fractions = (0.045, 0.22, 0.10, 0.06, 0.15, 0.075, 0.35)
    t = Table(rows, colWidths=[f * width for f in fractions], repeatRows=1)
    t.setStyle(TableStyle(_grid_style()))
    return t


def blocked_table(
    plan: Mapping[str, Any], width: float, routes: Sequence[Mapping[str, Any]] | None = None
) -> Table | None:
    """The routes ruled out, each with every hard limit it breaks and its detail.

    ``routes`` limits the table to those routes (default: every route of the plan).
    """
    st = styles()
    chosen = plan.get("routes", ()) if routes is None else routes
    blocked = [r for r in chosen if not r.get("feasible")]
    if not blocked:
        return None
    rows: list[list[Any]] = [[para(h, st["head"]) for h in ("#", "Route", "Verdict", "Why")]]
    for r in blocked:
        rows.append(
            [
                para(r.get("rank"), st["cell-bold"]),
                para(_route_name(r), st["small"]),
                para(verdict(r), st["cell-bold"]),
                [para(line, st["tiny"]) for line in route_reasons(r, False)],
            ]
        )
    t = Table(rows, colWidths=[f * width for f in (0.045, 0.27, 0.11, 0.575)], repeatRows=1)
    # Ruled-out rows shaded grey: readable without colour.
    t.setStyle(
        TableStyle([*_grid_style(), ("BACKGROUND", (0, 1), (-1, -1), colors.Color(0.9, 0.9, 0.9))])
    )
    return t


DEFAULT_TOP = 10
"""How many routes (by rank) the report prints in full by default; the others get one
brief line each (``vascplan report --top N`` changes it)."""


def brief_reasons(r: Mapping[str, Any]) -> str:
    """One line for a route printed in brief: each broken limit with the segments where
    it breaks, or the route's factors with their points.

    >>> brief_reasons({"blocked_by": [{"code": "occlusion-en-route", "segment": "R-SFA"},
    ...                               {"code": "occlusion-en-route", "segment": "R-ATA"},
    ...                               {"code": "too-short", "segment": "R-DPA"}]})
    'occlusion-en-route at R-SFA, R-ATA; too-short at R-DPA'
    >>> brief_reasons({"factors": [{"name": "sar", "points": 2.1}]})
    'sar +2.1'
    """
    blocks = r.get("blocked_by") or ()
    if blocks:
        where: dict[str, list[str]] = {}
        for b in blocks:
            where.setdefault(str(b.get("code")), []).append(str(b.get("segment")))
        return "; ".join(f"{code} at {', '.join(segs)}" for code, segs in where.items())
    return route_reasons(r, detailed=False)[0]


def _short_route_name(r: Mapping[str, Any]) -> str:
    """``radial artery (R-RAD), retrograde``: the site's name without its qualifier."""
    name = str(r.get("site_name") or r.get("site")).split(" (")[0]
    return f"{name} ({r.get('site')}), {r.get('direction')}"


def brief_table(routes: Sequence[Mapping[str, Any]], width: float) -> Table | None:
    """The routes beyond the top ones, one line each: rank, route, verdict, length, score
    and what rules it out (or its factors)."""
    if not routes:
        return None
    st = styles()
    tiny = st["tiny"]
    head = ("#", "Route", "Verdict", "cm", "Score", "Limits broken (or factors)")
    rows: list[list[Any]] = [[para(h, st["head"]) for h in head]]
    for r in routes:
        rows.append(
            [
                para(r.get("rank"), tiny),
                para(_short_route_name(r), tiny),
                para(verdict(r), tiny),
                para(_num(r.get("length_cm"), "{:.0f}"), tiny),
                para(_num(r.get("score"), "{:.1f}") if r.get("feasible") else "-", tiny),
                para(brief_reasons(r), tiny),
            ]
        )
    fractions = (0.045, 0.32, 0.085, 0.05, 0.07, 0.43)
    t = Table(rows, colWidths=[f * width for f in fractions], repeatRows=1)
    style = [
        *_grid_style(),
        ("TOPPADDING", (0, 0), (-1, -1), 0.6),
        ("BOTTOMPADDING", (0, 0), (-1, -1), 1.2),
    ]
    for n, r in enumerate(routes, start=1):
        if not r.get("feasible"):  # ruled out: shaded, as in the full table
            style.append(("BACKGROUND", (0, n), (-1, n), colors.Color(0.9, 0.9, 0.9)))
    t.setStyle(TableStyle(style))
    return t


def to_measure(routes: Sequence[Mapping[str, Any]]) -> list[str]:
    """Each ``unmeasured`` detail of the plan's routes once, in rank order.

    >>> to_measure([{"blocked_by": [{"code": "unmeasured", "segment": "R-CFA",
    ...                              "detail": "measure R-CFA: needs MLD >= 8.7 mm"}]}] * 2)
    ['measure R-CFA: needs MLD >= 8.7 mm']
    """
    out: list[str] = []
    for r in routes:
        for b in r.get("blocked_by") or ():
            if b.get("code") == "unmeasured" and b.get("detail") not in out:
                out.append(str(b.get("detail")))
    return out


def _route_sections(plan: Mapping[str, Any], width: float, top: int | None) -> list[Any]:
    """The route tables: the first ``top`` routes by rank in full, the rest in brief."""
    st = styles()
    routes = list(plan.get("routes", ()))
    full = routes if top is None else routes[:top]
    rest = [] if top is None else routes[top:]
    out: list[Any] = [para("Routes considered, best first", st["h2"])]
    if plan.get("score_convention"):
        out.append(para(plan["score_convention"], st["small"]))
    if rest:
        out.append(
            rich_para(
                "{n} routes in all: ranks 1-{k} in full, ranks {k1}-{n} in brief at the end "
                "of the route tables (<i>--top N</i> prints more in full).",
                st["small"],
                n=len(routes),
                k=len(full),
                k1=len(full) + 1,
            )
        )
    out.append(Spacer(1, 2))
    usable = route_table(plan, width, full)
    if usable is not None:
        out.append(usable)
    elif not any(r.get("feasible") for r in routes):
        out.append(para("No usable route.", st["alarm"]))
    ruled_out = blocked_table(plan, width, full)
    if ruled_out is not None:
        out += [para("Routes ruled out", st["h2"]), ruled_out]
    measure = to_measure(routes)
    if measure:
        out += [
            para("What to measure before a large-bore device", st["h2"]),
            para(
                "These segments carry only reference values (population means, marked *), "
                "which do not prove that this patient's lumen takes the device. Measure the "
                "minimal lumen diameter (CT or ultrasound):",
                st["small"],
            ),
            *[para(f"- {line}", st["small"]) for line in measure],
        ]
    brief = brief_table(rest, width)
    if brief is not None:
        out += [
            para(f"The other {len(rest)} routes, in brief", st["h2"]),
            para(
                "Every limit with its detail: vascplan report CASE --top N, "
                "or vascplan plan CASE --explain SITE.",
                st["small"],
            ),
            brief,
        ]
    return out


def _pairs(plan: Mapping[str, Any], width: float) -> list[Any]:
    st = styles()
    pairs = plan.get("pairs") or []
    if not pairs:
        return []
    out: list[Any] = [para("Occlusion: two routes used together (one to each cap)", st["h2"])]
    for p in pairs:
        a, b = p["proximal"], p["distal"]
        out.append(
            rich_para(
                "<b>{rank}.</b> to the proximal cap: route {ar} ({asite}, {adir}); "
                "to the distal cap: route {br} ({bsite}, {bdir}); score {score}. {notes}",
                st["cell"],
                rank=p.get("rank"),
                ar=a.get("rank"),
                asite=a.get("site"),
                adir=a.get("direction"),
                br=b.get("rank"),
                bsite=b.get("site"),
                bdir=b.get("direction"),
                score=_num(p.get("score"), "{:.1f}"),
                notes=" ".join(p.get("notes", ())),
            )
        )
    return out


def support_tables(support: Mapping[str, Any], width: float, od_assumed: bool = False) -> list[Any]:
    """The large-bore figures: each axis's SAR per segment, lumen left, distal flow.

    ``od_assumed``: the device's outer diameter is a reference value (the case file gave
    no measured outer diameter), so it carries the reference mark and says so.
    """
    st = styles()
    cell, bold, small = st["cell"], st["cell-bold"], st["small"]
    od = _num(support.get("device_od_mm"))
    if od_assumed:
        od += f"{REFERENCE_MARK} (reference value: the case file gives no outer diameter)"
    out: list[Any] = [
        para("Large-bore support: what the device leaves for the limb", st["h2"]),
        rich_para(
            "Device outer diameter {od} mm ({kind}: {basis}). "
            "Lowest SAR among usable axes: <b>{best}</b>.",
            cell,
            od=od,
            kind=support.get("device_kind"),
            basis=support.get("device_kind_basis"),
            best=support.get("best_site") or "none usable",
        ),
        Spacer(1, 3),
    ]
    head = [
        "Axis",
        "Verdict",
        "Max SAR (segment)",
        "Lumen left",
        "Distal flow (concentric / eccentric)",
        "Distal perfusion cannula",
    ]
    rows: list[list[Any]] = [[para(h, bold) for h in head]]
    detail_rows: list[list[Any]] = []
    for ax in support.get("axes", ()):
        flow = ax.get("distal_flow_pct") or {}
        flow_text = (
            f"{_num(flow.get('concentric'), '{:.0f}')} % / "
            f"{_num(flow.get('eccentric'), '{:.0f}')} %"
            if flow
            else "-"
        )
        lumen = (
            "-"
            if ax.get("lumen_left_pct") is None
            else (f"{ax['lumen_left_pct']:.0f} % ({_num(ax.get('lumen_left_mm2'), '{:.1f}')} mm2)")
        )
        dpc_text = _dpc_text(ax.get("dpc"))
        blocked = "; ".join(
            f"{b.get('code')} at {b.get('segment')}" for b in ax.get("blocked_by", ())
        )
        rows.append(
            [
                para(f"{ax.get('site')} ({ax.get('limb')})", bold),
                para(
                    ("usable" if ax.get("feasible") else f"blocked: {blocked}")
                    + (f". NO LUMEN LEFT: {ax['lumen_note']}" if ax.get("lumen_note") else ""),
                    cell,
                ),
                para(
                    f"{_sar(ax.get('max_sar'), ax.get('max_sar_limit'))} "
                    f"({ax.get('limiting_segment') or '-'}); "
                    + _limit(ax, "max_sar_limit", "max_sar_limit_source", "max_sar_limit_label"),
                    cell,
                ),
                para(lumen, cell),
                para(flow_text, cell),
                para(dpc_text, small),
            ]
        )
        segs = ", ".join(_segment_sar(s) for s in ax.get("segments", ()))
        detail_rows.append([para(ax.get("site"), bold), para(segs or "-", small)])
    t = Table(
        rows,
        colWidths=[
            0.13 * width,
            0.16 * width,
            0.14 * width,
            0.13 * width,
            0.16 * width,
            0.28 * width,
        ],
        repeatRows=1,
    )
    t.setStyle(
        TableStyle(
            [
                ("GRID", (0, 0), (-1, -1), 0.4, colors.grey),
                ("BACKGROUND", (0, 0), (-1, 0), GREY),
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
            ]
        )
    )
    out.append(t)
    d = Table(detail_rows, colWidths=[0.13 * width, 0.87 * width])
    d.setStyle(
        TableStyle(
            [("GRID", (0, 0), (-1, -1), 0.3, colors.grey), ("VALIGN", (0, 0), (-1, -1), "TOP")]
        )
    )
    heading = para("SAR on every segment the device occupies", st["cell-bold"])
    out += [Spacer(1, 3), KeepTogether([heading, d])]
    sources = {
        f"{seg.get('sar_limit_label')} {format_limit(float(seg['sar_limit']))}: "
        f"{seg.get('sar_limit_source')}"
        for ax in support.get("axes", ())
        for seg in ax.get("segments", ())
        if seg.get("sar_limit_source")
    }
    if sources:
        out.append(para("SAR limits by site (judged on unrounded values)", st["cell-bold"]))
        out += [para(f"- {line}", small) for line in sorted(sources)]
    flows = sorted({a for ax in support.get("axes", ()) for a in ax.get("flow_assumptions", ())})
    if flows:
        out.append(para("Flow estimate assumptions", st["cell-bold"]))
        out += [para(f"- {a}", small) for a in flows]
    return out


def _dpc_text(dpc: Mapping[str, Any] | None) -> str:
    """The shared cannula rule's answer: headline, deciding rule, basis, which governs."""
    if not dpc:
        return "-"
    basis = dpc.get("basis")
    if isinstance(basis, list | tuple):
        basis = "; ".join(str(b) for b in basis)
    if dpc.get("applies") is False and dpc.get("rule") != "in-place":
        head = "does not apply"
    else:
        head = "ADVISED" if dpc.get("advised") else "not advised"
    if dpc.get("rule"):
        head += f" [{dpc['rule']}]"
    text = f"{head}: {basis}" if basis else head
    if dpc.get("governs"):
        text += f". Which governs: {dpc['governs']}"
    return text


def _segment_sar(s: Mapping[str, Any]) -> str:
    mark = REFERENCE_MARK if s.get("mld_source") == "reference" else ""
    over = ", at or over the limit" if s.get("over_limit") else ""
    return (
        f"{s.get('segment')} {s.get('from_cm'):g}-{s.get('to_cm'):g} cm: MLD "
        f"{_num(s.get('mld_mm'))}{mark} mm, SAR {_sar(s.get('sar'), s.get('sar_limit'))}{mark} "
        f"(limit {_limit_value(s.get('sar_limit'))} {s.get('sar_limit_label') or ''}{over})"
    )


def _assumptions(items: Sequence[str]) -> list[Any]:
    st = styles()
    out: list[Any] = [
        para("Assumptions: reference values used instead of measurements", st["h2"]),
        para(REFERENCE_VALUES_NOTE, st["cell"]),
    ]
    if not items:
        out.append(para("None: every value used was measured.", st["cell"]))
    seen: set[str] = set()
    for a in items:
        if a not in seen:
            seen.add(a)
            out.append(KeepTogether([para(f"- {a}", st["tiny"])]))  # never split across pages
    return out


def case_report_story(
    case: Any,
    tree: Any,
    plan: Mapping[str, Any] | None,
    paper: str,
    top: int | None = DEFAULT_TOP,
) -> list[Any]:
    """The report's flowables (see the module docstring); ``top`` as in
    :func:`render_case_report`."""
    st = styles()
    _, _, width, height = frame_box(paper)
    story: list[Any] = [
        rich_para("Case conference: {ref}", st["title"], ref=case.patient.ref),
        _summary(case, tree, plan, width),
        Spacer(1, 6),
    ]
    summary_h = story[1].wrap(width, height)[1] + 30 + 6
    story.append(_map_block(tree, plan, width, max(260.0, height - summary_h - 4)))
    story.append(PageBreak())
    if plan is not None:
        story += _route_sections(plan, width, top)
        story += _pairs(plan, width)
        if plan.get("support"):
            od_assumed = any("sheath_od_mm" in r.get("assumed", ()) for r in plan.get("routes", ()))
            story += support_tables(plan["support"], width, od_assumed)
        assumptions = list(plan.get("assumptions", ()))
    else:
        story.append(para("No procedure in the case file: no routes were planned.", st["alarm"]))
        assumptions = []
    assumptions += [a for a in tree.assumptions() if a not in assumptions]
    story.append(KeepTogether(_assumptions(assumptions)[:2]))
    story += _assumptions(assumptions)[2:]
    if plan is not None and (plan.get("limits") or plan.get("weights")):
        story.append(para("Limits and weights that applied", st["h2"]))
        for name in ("limits", "weights"):
            values = plan.get(name) or {}
            if values:
                text = ", ".join(f"{k} {v:g}" for k, v in sorted(values.items()))
                story.append(rich_para("<b>{n}</b>: {t}", st["small"], n=name, t=text))
    return story


def render_case_report(
    case: Any,
    tree: Any,
    plan: Mapping[str, Any] | None,
    *,
    paper: str = "a4",
    generated_at: datetime | None = None,
    top: int | None = DEFAULT_TOP,
) -> bytes:
    """The case report PDF as bytes (write it with :func:`vascplan.pdf.page.write_pdf`).

    Parameters
    ----------
    case : Case
        The validated case.
    tree : ArterialTree
        Its annotated tree (:func:`vascplan.anatomy.graph.build_tree`).
    plan : dict or None
        ``PlanResult.to_dict()`` of the route planner; None when the case has no procedure.
    paper : str
        ``a4`` or ``letter``.
    generated_at : datetime, optional
        Aware generation time; now, in the machine's zone, when omitted.
    top : int or None
        How many routes (by rank, usable or not) get their full reasons; the others get
        one brief line each, so every route is still listed. None prints all in full.
    """
    if top is not None and top < 1:
        raise ValueError("top must be at least 1")
    at = generated_at or datetime.now().astimezone()
    story = case_report_story(case, tree, plan, paper, top)
    setup = PageSetup(paper=paper, title=f"Case conference - {case.patient.ref}", generated_at=at)
    return build_pdf(story, setup)
