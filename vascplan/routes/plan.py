"""Plan a case: every usable site and direction, checked, scored and ranked.

Public API: :func:`plan_case` (a validated case in, a :class:`PlanResult` out) and
:func:`plan_file` (a case file in).
"""

from __future__ import annotations

import os
from collections.abc import Mapping
from dataclasses import replace
from typing import Any

from vascplan.errors import InputError
from vascplan.refdata.sites import AccessSite, load_sites
from vascplan.routes.body import body_mass_index, femoral_first_lifted, is_femoral, site_for_body
from vascplan.routes.dual import rank_pairs
from vascplan.routes.equipment import route_devices
from vascplan.routes.facts import Devices, RouteFacts, approach_of, resolve_devices, route_facts
from vascplan.routes.largebore import SUPPORT_SITES, support_block
from vascplan.routes.limits import Block, LimitContext, bind_sar, hard_limits, sar_limit
from vascplan.routes.margins import route_margins
from vascplan.routes.order import load_order, role_of, tier_of
from vascplan.routes.pathfind import K_PATHS, CatheterPath, PointGraph
from vascplan.routes.result import PlanResult, Route
from vascplan.routes.scoring import ScoreContext, soft_factors
from vascplan.routes.settings import LIMITS_FILE, WEIGHTS_FILE, load_table, resolve, values
from vascplan.routes.vessels import ARCH_NODE, BIFURCATION_NODE, GRAFT_PREFIX, VesselView


def effective_settings(case: Any, source: str, weights: Mapping[str, float] | None,
                       limits: Mapping[str, float] | None) -> tuple[dict, dict]:
    """Weights and limits after the case's and the caller's overrides (caller wins).

    Raises
    ------
    InputError
        An unknown name (with did-you-mean) or a negative value.
    """
    w = resolve(load_table(WEIGHTS_FILE), [(source, "weights", case.weights),
                                           ("--weight", "", weights)])
    lim = resolve(load_table(LIMITS_FILE), [(source, "limits", case.limits),
                                            ("--limit", "", limits)])
    return w, lim


def _candidates(purpose: str) -> list[tuple[AccessSite, str]]:
    sites = load_sites()
    if purpose == "support":
        return [(sites[s], "retrograde") for s in SUPPORT_SITES]
    return [(site, d) for site in sites.values() for d in site.directions]


def path_words(view: VesselView, path: CatheterPath) -> str:
    """The path in words, for people.

    ``up`` is against the flow, ``down`` with it; the bifurcation, the arch, a graft
    (with its direction: inflow to outflow is with the flow) and the pedal loop are
    named. Example: ``up R-CFA R-EIA R-CIA, over the bifurcation, down L-CIA L-EIA L-CFA
    L-SFA``.
    """
    parts: list[str] = []
    heading: bool | None = None
    crossing = view.crosses_bifurcation(path)
    for leg in path.legs:
        special = None
        if leg.node == BIFURCATION_NODE and crossing and leg.length_cm < 1e-3:
            special = "over the bifurcation,"
        elif leg.node == ARCH_NODE:
            special = "across the arch,"
        elif leg.node.startswith(GRAFT_PREFIX):
            # a graft runs from its inflow (from) end to its outflow (to) end
            flow = leg.with_flow
            way = ("" if flow is None else " (inflow to outflow, with the flow)" if flow
                   else " (outflow to inflow, against the flow)")
            special = f"through graft {leg.node[len(GRAFT_PREFIX):]}{way},"
        elif leg.node.endswith("-PLA"):
            special = f"round the pedal loop ({leg.node}),"
        if special:
            parts.append(special)
            heading = None
            continue
        flow = leg.with_flow
        if flow is not None and flow != heading:
            if parts and not parts[-1].endswith(","):
                parts[-1] += ","
            parts.append("down" if flow else "up")
            heading = flow
        parts.append(leg.node)
    return " ".join(parts).rstrip(",")


def _route(view: VesselView, facts: RouteFacts, blocks: list[Block], factors: list,
           devices: Devices, limit_ctx: LimitContext) -> Route:
    path = facts.path
    nodes = path.nodes if path is not None else [facts.site.segment]
    assumed: list[str] = []
    limiting = facts.min_lumen[1] if facts.min_lumen else None
    if limiting and view.node(limiting).get("diameter_source") != "measured":
        assumed.append("min_lumen_mm")
    if devices.sheath_od_assumed:
        assumed.append("sheath_od_mm")
    if "min_lumen_mm" in assumed or "sheath_od_mm" in assumed:
        assumed.append("sar")
    if path is not None and any(view.node(n).get("length_source") != "measured" for n in nodes):
        assumed.append("length_cm")
    limit = sar_limit(facts, limit_ctx) if path is not None else None
    return Route(
        site=facts.site.id,
        site_name=facts.site.name,
        segment=facts.site.segment,
        direction=facts.direction,
        path=nodes,
        legs=list(path.legs) if path is not None else [],
        path_words=path_words(view, path) if path is not None else "no path",
        length_cm=facts.length_cm,
        approach=facts.approach,
        sheath_od_mm=devices.sheath_od_mm,
        min_lumen_mm=facts.min_lumen[0] if facts.min_lumen and path is not None else None,
        limiting_segment=limiting if path is not None else None,
        sar=facts.sar if path is not None else None,
        sar_limit=limit.value if limit is not None else None,
        sar_limit_name=limit.name if limit is not None else None,
        sar_limit_source=limit.cite if limit is not None else None,
        sar_limit_label=limit.label if limit is not None else None,
        blocked_by=blocks,
        factors=factors,
        position=facts.site.position,
        assumed=assumed,
        **_order_fields(facts, devices, limit_ctx),
    )


def _mark_in_place(case: Any, route: Route, site: AccessSite) -> None:
    """A route through an access already in place: no new puncture, so the site's
    complication factor is not counted, and it ranks in the first tier (order.yaml)."""
    from vascplan.case.access import matches
    from vascplan.routes.scoring import Factor

    entry = next((e for e in case.access_in_place
                  if matches(e.site, e.direction, site.id, site.segment, route.direction)), None)
    if entry is None:
        return
    since = f" since {entry.since}" if entry.since else ""
    route.in_place = f"{entry.what}{since}"
    route.factors = [f for f in route.factors if f.name != "site_risk"]
    route.factors.insert(0, Factor("access_in_place", 0.0,
                                   f"uses the {entry.what} already in place at {site.id}{since}: "
                                   "no new puncture (site complication risk not counted)"))
    rule = load_order()["in_place"]
    route.tier = min(route.tier, rule["tier"])
    route.ordering.insert(0, f"tier {rule['tier']} (access in place): {rule['basis']}")


def _order_fields(facts: RouteFacts, devices: Devices, ctx: LimitContext) -> dict[str, Any]:
    """Role, tier and the ordering rules' basis of one route (``data/access/order.yaml``)."""
    from vascplan.sizing.french import MM_PER_FR

    rules = load_order()
    role = role_of(facts.approach)
    large = round(devices.sheath_od_mm / MM_PER_FR, 9) >= ctx.limits["large_bore_fr"]
    bmi = body_mass_index(ctx.view.case.patient)
    lifted = femoral_first_lifted(bmi, ctx.limits)
    tier, name, basis = tier_of(facts.site.segment, large, lifted)
    ordering = [f"tier {tier} ({name}): {basis}"]
    if lifted and is_femoral(facts.site):
        ordering.append(f"femoral-first not applied: body mass index {bmi:.1f} kg/m2 is "
                        f"{ctx.limits['severe_obesity_bmi']:g} or more (Hibbert B et al., "
                        "JACC Cardiovasc Interv 2012;5:819)")
    if role == "crossing":
        ordering.insert(0, f"crossing access, ranked after the therapeutic ones: "
                           f"{rules['role_basis']}")
    return {"role": role, "tier": tier, "ordering": ordering}


def _assumptions(tree: Any, routes: list[Route], devices: Devices, extra: list[str],
                 top: int | None) -> list[str]:
    """The tree's assumptions about the nodes of the routes shown, and the planner's own."""
    shown = [r for r in routes if r.feasible] or routes[:3]
    if top is not None:
        shown = routes[:top]
    used = {n for r in shown for n in r.path}
    all_nodes = set(tree.graph.nodes)
    out: list[str] = []
    for line in tree.assumptions():
        head = line.split(" ", 1)[0]
        if head in all_nodes and head not in used:
            continue
        out.append(line)
    if devices.sheath_od_assumed:
        out.append(devices.sheath_od_assumed)
    out.append("puncture points and skin-to-artery allowances are typical values "
               "(data/access/sites.csv; common practice), not measurements")
    out.extend(extra)
    return out


def shown_routes(routes: list[Route]) -> list[Route]:
    """The default view (issue 12): routes with a path only, one per site and direction
    (the best-ranked path; the others are alternatives of the same route)."""
    seen: set[tuple[str, str]] = set()
    out = []
    for r in routes:
        if r.length_cm is None or (r.site, r.direction) in seen:
            continue
        seen.add((r.site, r.direction))
        out.append(r)
    return out


def plan_case(case: Any, *, top: int | None = None, weights: Mapping[str, float] | None = None,
              limits: Mapping[str, float] | None = None, source: str = "",
              all_routes: bool = True) -> PlanResult:
    """Rank every access route for a case, with the reasons.

    Parameters
    ----------
    case : Case
        A validated case (:func:`vascplan.case.load.load_case`) with a procedure.
    top : int, optional
        Keep only the best ``top`` routes in the result (pairs are ranked on all).
    weights : mapping of str to float, optional
        Soft-factor weight overrides (``data/access/weights.yaml`` names); win over
        the case's own ``weights:``.
    limits : mapping of str to float, optional
        Hard-limit overrides (``data/access/limits.yaml`` names); win over the case's.
    source : str
        The case file's name, for error lines and the result.
    all_routes : bool
        True (the library's default): every route, unreachable ones and alternative
        paths included. False (the command line's default): only routes with a path, one
        per site and direction (:func:`shown_routes`); ``routes_left_out`` and
        ``pairs_left_out`` count the rest.

    Returns
    -------
    PlanResult
        Routes ranked feasible first, then lower score (lower is better), then shorter.

    Raises
    ------
    InputError
        The case has no procedure; an override names an unknown weight or limit.

    Examples
    --------
    >>> from vascplan.case.load import load_case
    >>> from vascplan.paths import examples_dir
    >>> result = plan_case(load_case(examples_dir() / "case-DEMO-07-sfa-occlusion.yaml"))
    >>> best = result.routes[0]
    >>> best.feasible, best.site, best.direction
    (True, 'L-CFA', 'antegrade')
    """
    from vascplan.anatomy.graph import build_tree

    src = source or case.patient.ref
    if case.procedure is None:
        raise InputError(src, "procedure", "required for planning (purpose, target, sheath, "
                         "device)")
    w_table, l_table = effective_settings(case, src, weights, limits)
    w, lim = values(w_table), values(l_table)
    tree = build_tree(case)
    view = VesselView(case, tree)
    devices = resolve_devices(case)
    closed = frozenset(n for n, a in tree.graph.nodes(data=True)
                       if a.get("kind") == "graft" and not a.get("patent", True))
    points = PointGraph(tree, closed)
    limit_ctx = LimitContext(view, devices, lim, l_table)
    score_ctx = ScoreContext(view, devices, w, lim)
    purpose = case.procedure.purpose
    routes: list[Route] = []
    support_axes: list[tuple[RouteFacts, list[Block]]] = []
    bmi = body_mass_index(case.patient)
    for site, direction in _candidates(purpose):
        if site.segment not in tree.graph:
            continue
        site = site_for_body(site, bmi, lim)
        length = view.length_cm(site.segment)
        paths: list[CatheterPath] = list(points.paths(
            site.segment, site.puncture_cm(length), direction, view.target_segment,
            view.target_cm, k=K_PATHS))
        dropped = False
        if not site.crossover:
            # Up-and-over only from the common femoral: a puncture below the groin
            # (or an arm) does not cross the bifurcation (sites.csv, common practice).
            kept = [p for p in paths if not view.crosses_bifurcation(p)]
            dropped = bool(paths) and not kept
            paths = kept
        candidates: list[CatheterPath | None] = list(paths) or [None]
        for i, path in enumerate(candidates):
            role = role_of(approach_of(view, path))
            r_devices, equipment = route_devices(case, site, direction, role, devices)
            r_limit = replace(limit_ctx, devices=r_devices)
            facts = route_facts(view, site, direction, path, r_devices)
            facts.crossover_dropped = dropped
            facts.role = role
            bind_sar(facts, r_limit)
            blocks = hard_limits(facts, r_limit)
            factors = soft_factors(facts, replace(score_ctx, devices=r_devices))
            route = _route(view, facts, blocks, factors, r_devices, r_limit)
            route.equipment = equipment
            route.margins = route_margins(facts, r_limit)
            _mark_in_place(case, route, site)
            routes.append(route)
            if purpose == "support" and i == 0:
                support_axes.append((facts, blocks))
    routes.sort(key=Route.sort_key)
    everything = len(routes)
    if not all_routes:
        routes = shown_routes(routes)
    for rank, route in enumerate(routes, start=1):
        route.rank = rank
    pairs: list = []
    pairs_left_out = 0
    if view.target_is_occlusion and purpose == "treat":
        pairs, pairs_left_out = rank_pairs(routes)
    extra: list[str] = []
    support = None
    if purpose == "support":
        support = support_block(view, support_axes, devices, lim, l_table)
        extra.append(support["device_kind_basis"])
    target: dict[str, Any] = {"segment": view.target_segment, "at_cm": view.target_cm}
    if view.target_lesion is not None:
        item = view.target_lesion.item
        pieces = view.target_pieces()
        first, last = pieces[0].item, pieces[-1].item
        target["lesion"] = {"kind": item.kind, "stenosis_pct": item.percent,
                            "start_cm": item.start_cm, "length_cm": item.length_cm,
                            "proximal_cap": first.proximal_cap, "distal_cap": last.distal_cap,
                            "in_stent": bool(getattr(item, "in_stent", False)),
                            "segments": [p.node for p in pieces],
                            "total_length_cm": round(sum(p.item.length_cm for p in pieces), 2),
                            "from": {"segment": pieces[0].node, "at_cm": first.start_cm},
                            "to": {"segment": pieces[-1].node,
                                   "at_cm": round(last.start_cm + last.length_cm, 2)}}
    return PlanResult(
        case=case.patient.ref,
        source=source,
        purpose=purpose,
        target=target,
        routes=routes[:top] if top is not None else routes,
        routes_total=len(routes),
        routes_left_out=everything - len(routes),
        pairs_left_out=pairs_left_out,
        pairs=pairs,
        assumptions=_assumptions(tree, routes, devices, extra, top),
        weights=w,
        limits=lim,
        support=support,
    )


def plan_file(path: str | os.PathLike[str], **kwargs: Any) -> PlanResult:
    """Load, validate and plan one case file (keywords as :func:`plan_case`)."""
    from vascplan.case.load import load_case

    return plan_case(load_case(path), source=str(path), **kwargs)
