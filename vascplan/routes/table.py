"""The planner's output for people: the ranked table and the explanation of one site.

Renderers only: they read :meth:`PlanResult.to_dict` output and compute nothing.
``*`` marks a value that rests on a reference value rather than a measurement.
"""

from __future__ import annotations

from typing import Any

from vascplan.nearlimit import format_limit, format_near_limit
from vascplan.routes.limits import REASON_CODES, headline
from vascplan.safety import CAUTION, REFERENCE_MARK


def _num(value: float | None, fmt: str, assumed: bool, unit: str = "") -> str:
    if value is None:
        return "-"
    return f"{value:{fmt}}{unit}{REFERENCE_MARK if assumed else ''}"


def sar_text(sar: float | None, limit: float | None, assumed: bool) -> str:
    """A SAR printed on its verdict's side of its limit (``1.048`` beside 1.05), ``*`` if
    it rests on a reference value."""
    if sar is None:
        return "-"
    return f"{format_near_limit(sar, limit)}{REFERENCE_MARK if assumed else ''}"


def limit_text(route: dict[str, Any]) -> str:
    """``1.00 radial``: the SAR limit of a route and its short name."""
    if route.get("sar_limit") is None:
        return "-"
    label = route.get("sar_limit_label") or ""
    return f"{format_limit(route['sar_limit'])} {label}".rstrip()


def limits_legend(routes: list[dict[str, Any]]) -> list[str]:
    """One line per SAR limit the routes used: value, short name and source."""
    seen: dict[str, str] = {}
    for r in routes:
        name = r.get("sar_limit_name")
        if name and name not in seen:
            seen[name] = (f"  - {format_limit(r['sar_limit'])} {r.get('sar_limit_label') or name}: "
                          f"{r.get('sar_limit_source')}")
    if not seen:
        return []
    return ["", "SAR limits used (sheath outer diameter / MLD, judged on unrounded values "
            "in each segment the sheath occupies):", *seen.values()]


def _target_line(plan: dict[str, Any]) -> str:
    t = plan["target"]
    line = f"target {t['segment']} at {t['at_cm']:g} cm"
    lesion = t.get("lesion")
    if lesion:
        end = lesion["start_cm"] + lesion["length_cm"]
        article = "an" if lesion["kind"] == "occlusion" else "a"
        if lesion.get("in_stent"):
            article += " in-stent"
        if len(lesion.get("segments") or []) > 1:
            a, b = lesion["from"], lesion["to"]
            line += (f", in {article} {lesion['kind']} from {a['segment']} {a['at_cm']:g} cm "
                     f"to {b['segment']} {b['at_cm']:g} cm ({lesion['total_length_cm']:g} cm)")
        else:
            line += f", in {article} {lesion['kind']} at {lesion['start_cm']:g}-{end:g} cm"
        if lesion["kind"] == "occlusion":
            line += (f" (proximal cap {lesion['proximal_cap'] or 'not stated'}, "
                     f"distal cap {lesion['distal_cap'] or 'not stated'})")
    return line


def block_reason(route: dict[str, Any], block: dict[str, Any]) -> str:
    """A broken limit as the table says it: the binding constraint and its margin.

    ``too-short: shaft 7 cm short``, ``sheath-too-large: SAR 1.12 over 1.05 at L-EIA``,
    ``sheath-too-long: the longest sheath that would do is 8 cm``.
    """
    m = route.get("margins") or {}
    code = block["code"]
    if code == "too-short" and m.get("shaft_cm") is not None:
        return f"too-short: shaft {-m['shaft_cm']:.0f} cm short"
    if code == "sheath-too-large" and route.get("sar") is not None:
        return (f"sheath-too-large: SAR {format_near_limit(route['sar'], route['sar_limit'])} "
                f"over {format_limit(route['sar_limit'])} at {route['limiting_segment']}")
    if code == "sheath-too-long":
        return f"sheath-too-long: {block['detail'].rsplit('; ', 1)[-1]}"
    if code == "device-exceeds-sheath" and m.get("device_in_sheath_mm") is not None:
        return (f"device-exceeds-sheath: {-m['device_in_sheath_mm']:.2f} mm over the "
                "sheath's inner diameter")
    if code == "tried-before":
        return f"tried-before: {block['detail'].split(': ', 1)[-1]}"
    return headline(block)


def equipment_text(route: dict[str, Any]) -> str:
    """``6 Fr 45 cm``, ``2.9 Fr outer sheathless (default)``: the equipment a route assumes."""
    e = route.get("equipment") or {}
    if not e:
        return "-"
    size = f"{e['size_fr']:g} Fr{' outer' if e.get('label') == 'outer' else ''}"
    body = f"{size} sheathless" if e.get("sheathless") else f"{size} {e['length_cm']:g} cm"
    return f"{body}{' (default)' if e.get('default') else ''}"


def route_row(route: dict[str, Any]) -> list[str]:
    """The cells of one route's table row."""
    assumed = set(route["assumed"])
    verdict = "ok" if route["feasible"] else "BLOCKED"
    if route["blocked_by"]:
        b = route["blocked_by"][0]
        more = f" (+{len(route['blocked_by']) - 1} more)" if len(route["blocked_by"]) > 1 else ""
        reason = f"{block_reason(route, b)}{more}"
    elif route["factors"]:
        top = max(route["factors"], key=lambda f: f["points"])
        reason = f"{top['name']} +{top['points']:.1f}"
    else:
        reason = "nothing against it"
    if route.get("in_place"):
        reason = f"in place ({route['in_place']}), no new puncture; {reason}"
    return [
        str(route["rank"]),
        route["site"],
        route["direction"],
        route.get("role", "therapeutic"),
        equipment_text(route),
        _num(route["length_cm"], ".1f", "length_cm" in assumed, " cm"),
        sar_text(route["sar"], route.get("sar_limit"), "sar" in assumed),
        limit_text(route),
        verdict,
        f"{route['score']:.1f}",
        reason,
    ]


HEADERS = ["rank", "site", "direction", "role", "equipment", "length", "SAR", "SAR limit",
           "verdict", "score", "main reason"]


def render_plan(plan: dict[str, Any]) -> str:
    """The ranked table of one plan, with pairs, support block, assumptions and caution."""
    lines = [f"{plan['case']}  {plan['purpose']}: {_target_line(plan)}"]
    if plan.get("source"):
        lines.append(f"case file: {plan['source']}")
    lines.append(f"score: {plan['score_convention']}")
    rows = [route_row(r) for r in plan["routes"]]
    widths = [max(len(h), *(len(row[i]) for row in rows)) if rows else len(h)
              for i, h in enumerate(HEADERS)]
    lines.append("")
    lines.append("  ".join(h.ljust(w) for h, w in zip(HEADERS, widths, strict=True)).rstrip())
    for route, row in zip(plan["routes"], rows, strict=True):
        lines.append("  ".join(c.ljust(w) for c, w in zip(row, widths, strict=True)).rstrip())
        lines.append(f"{'':{widths[0]}}  path: {route['path_words']}")
    shown, total = len(plan["routes"]), plan.get("routes_total", len(plan["routes"]))
    if shown < total:
        lines.append(f"({total - shown} more routes not shown; raise --top)")
    left, pairs_left = plan.get("routes_left_out", 0), plan.get("pairs_left_out", 0)
    if left or pairs_left:
        lines.append(f"({left} routes with no path or another path of a route listed, and "
                     f"{pairs_left} pairs, left out; --all lists every route)")
    if plan["pairs"]:
        lines.append("")
        lines.append("Pairs for the occlusion (one route to each cap, used together):")
        for p in plan["pairs"]:
            a, b = p["proximal"], p["distal"]
            note = f"  [{'; '.join(p['notes'])}]" if p["notes"] else ""
            lines.append(f"  {p['rank']}. {a['site']} {a['direction']} to the proximal cap + "
                         f"{b['site']} {b['direction']} to the distal cap, score "
                         f"{p['score']:.1f}{note}")
    lines.extend(limits_legend(plan["routes"]))
    if plan.get("support"):
        lines.extend(render_support(plan["support"]))
    lines.append("")
    lines.append(f"{REFERENCE_MARK} rests on a reference value, not a measurement. Assumptions:")
    lines.extend(f"  - {a}" for a in summarise_assumptions(plan["assumptions"]))
    lines.append("")
    lines.append(f"Caution: {plan['caution']}")
    return "\n".join(lines) + "\n"


def summarise_assumptions(assumptions: list[str]) -> list[str]:
    """Fold the per-segment "reference value" sentences into two lines (full text in JSON)."""
    diameters: list[str] = []
    lengths: list[str] = []
    rest: list[str] = []
    for line in assumptions:
        head, _, tail = line.partition(" ")
        if tail.startswith("diameter is a reference value"):
            diameters.append(head)
        elif tail.startswith("length is a reference estimate") and not head.startswith("GRAFT:"):
            lengths.append(head)
        else:
            rest.append(line)
    out = []
    if diameters:
        out.append("reference diameters (sex means; see --format json for each source): "
                   + ", ".join(diameters))
    if lengths:
        out.append("reference lengths (scaled from height by Drillis & Contini fractions, "
                   "Winter 2009, or published lengths): " + ", ".join(lengths))
    return out + rest


def _segment_sar(seg: dict[str, Any]) -> str:
    mark = REFERENCE_MARK if seg["mld_source"] != "measured" else ""
    word = "at or over" if seg["over_limit"] else "under"
    label = seg.get("sar_limit_label") or "limit"
    return (f"{seg['segment']} {format_near_limit(seg['sar'], seg['sar_limit'])}{mark} "
            f"({word} {label} {format_limit(seg['sar_limit'])})")


def blocks_by_code(blocks: list[dict[str, Any]]) -> str:
    """``unmeasured at R-SCA, BCT; sheath-too-large at R-EIA``: each code once, with where."""
    where: dict[str, list[str]] = {}
    for b in blocks:
        where.setdefault(b["code"], []).append(b["segment"])
    return "; ".join(f"{code} at {', '.join(segs)}" for code, segs in where.items())


def render_support(support: dict[str, Any]) -> list[str]:
    """Lines of the large-bore support comparison."""
    lines = ["", f"Large-bore support ({support['device_kind']}, outer "
             f"{support['device_od_mm']:.2f} mm): {support['device_kind_basis']}"]
    for axis in support["axes"]:
        verdict = "ok" if axis["feasible"] else "BLOCKED " + blocks_by_code(axis["blocked_by"])
        segs = ", ".join(_segment_sar(s) for s in axis["segments"] if s["sar"] is not None)
        lines.append(f"  {axis['site']}: {verdict}; SAR by segment: {segs or '-'}; "
                     f"limiting {axis['limiting_segment'] or '-'}")
        if axis["distal_flow_pct"] is not None:
            flow = axis["distal_flow_pct"]
            lines.append(f"      lumen left {axis['lumen_left_pct']:.0f}%, distal {axis['limb']} "
                         f"flow {flow['concentric']:.0f}-{flow['eccentric']:.0f}% of baseline "
                         "(estimate)")
        if axis["dpc"] is not None:
            dpc = axis["dpc"]
            advised = ("does not apply" if dpc.get("applies") is False
                       else "ADVISED" if dpc["advised"] else "not advised")
            basis = "; ".join(dpc["basis"])
            lines.append(f"      distal perfusion cannula {advised} [{dpc.get('rule')}]: {basis}")
            if dpc.get("governs"):
                lines.append(f"      which governs: {dpc['governs']}")
        if axis.get("arm_note"):
            lines.append(f"      arm: {axis['arm_note']}")
        if axis.get("lumen_note"):
            lines.append(f"      NO LUMEN LEFT: {axis['lumen_note']}")
    sources = {f"{s.get('sar_limit_label')} {format_limit(s['sar_limit'])}: "
               f"{s.get('sar_limit_source')}"
               for axis in support["axes"] for s in axis["segments"] if s.get("sar_limit_source")}
    if sources:
        lines.append("  SAR limits: " + "; ".join(sorted(sources)))
    if support.get("best_site"):
        lines.append(f"  lowest SAR among feasible axes: {support['best_site']}")
    return lines


def _limit_with_source(route: dict[str, Any]) -> str:
    if route.get("sar_limit") is None:
        return "-"
    return (f"{format_limit(route['sar_limit'])} {route.get('sar_limit_label') or ''}, "
            f"{route.get('sar_limit_source')}")


_SITE_CHECKS = ("unreachable", "site-avoided", "site-diseased")
"""Limits that hold for a site even when no path reaches the target."""


def render_explain(plan: dict[str, Any], routes: list[dict[str, Any]]) -> str:
    """Every factor and every hard limit for the given routes of a plan."""
    lines = [f"{plan['case']}: {_target_line(plan)}"]
    limits = plan["limits"]
    if not routes:
        lines.append("")
        lines.append("no routes from this site in this plan (support mode compares the groins "
                     "and the axillaries only)")
    for route in routes:
        assumed = set(route["assumed"])
        lines.append("")
        lines.append(f"rank {route['rank']}: {route['site']} ({route['site_name']}) "
                     f"{route['direction']}, {'feasible' if route['feasible'] else 'BLOCKED'}, "
                     f"score {route['score']:.2f} (lower is better)")
        lines.append(f"  path: {route['path_words']}  [{' > '.join(route['path'])}]")
        lines.append(
            f"  length {_num(route['length_cm'], '.1f', 'length_cm' in assumed, ' cm')}; "
            f"sheath outer {_num(route['sheath_od_mm'], '.2f', 'sheath_od_mm' in assumed, ' mm')}; "
            f"min lumen {_num(route['min_lumen_mm'], '.2f', 'min_lumen_mm' in assumed, ' mm')}"
            f" at {route['limiting_segment'] or '-'}; "
            f"SAR {sar_text(route['sar'], route.get('sar_limit'), 'sar' in assumed)}"
            f" (limit {_limit_with_source(route)}); approach {route['approach']}; "
            f"position {route['position']}")
        lines.append("  hard limits:")
        broken: dict[str, list[dict[str, Any]]] = {}
        for b in route["blocked_by"]:
            broken.setdefault(b["code"], []).append(b)
        for code, meaning in REASON_CODES.items():
            if code in broken:
                for b in broken[code]:
                    lines.append(f"    BROKEN {code} at {b['segment']}: {b['detail']}")
            elif route["length_cm"] is None and code not in _SITE_CHECKS:
                lines.append(f"    -      {code} (not checked: no path)")
            else:
                lines.append(f"    ok     {code} (broken when: {meaning})")
        lines.append("  soft factors (points):")
        if not route["factors"]:
            lines.append("    none")
        for f in route["factors"]:
            lines.append(f"    {f['points']:5.2f}  {f['name']}: {f['detail']}")
    lines.append("")
    lines.append("limits used: " + ", ".join(f"{k}={v:g}" for k, v in limits.items()))
    lines.append("weights used: " + ", ".join(f"{k}={v:g}" for k, v in plan["weights"].items()))
    lines.append("")
    lines.append(f"Caution: {CAUTION}")
    return "\n".join(lines) + "\n"
