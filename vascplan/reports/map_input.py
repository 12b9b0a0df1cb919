"""Build the map's input (:class:`~vascplan.reports.arterial_map.MapData`) from the
patient's arterial tree and the route planner's result.

Positions along a segment become fractions of the segment's length for this patient
(measured or reference, as the tree has it); nothing clinical is computed here.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from vascplan.reports.arterial_map import (
    MapData,
    MapGraft,
    MapLesion,
    MapRoute,
    MapSegment,
    MapStent,
)

CALCIFICATION_STEPS = {"none": 0, "mild": 1, "moderate": 2, "severe": 3}
"""Calcification grades of the case file, as the map's tick density (0 = no ticks)."""


def _get(obj: Any, name: str, default: Any = None) -> Any:
    if isinstance(obj, Mapping):
        return obj.get(name, default)
    return getattr(obj, name, default)


def short_label(node_id: str) -> str:
    """The map's label of a node: the segment id without its side, or the graft's name.

    >>> short_label("R-SFA"), short_label("AO-INFRA"), short_label("GRAFT:fem-pop")
    ('SFA', 'AO-INFRA', 'fem-pop')
    """
    if node_id.startswith("GRAFT:"):
        return node_id[len("GRAFT:") :]
    if node_id[:2] in ("L-", "R-"):
        return node_id[2:]
    return node_id


def _fraction(cm: float, length_cm: float) -> float:
    return min(max(cm / length_cm, 0.0), 1.0) if length_cm > 0 else 0.5


def map_segments(graph: Any) -> dict[str, MapSegment]:
    """Native segments of the tree graph (node attributes as in ``vascplan.anatomy.graph``)."""
    out = {}
    for node, attrs in graph.nodes(data=True):
        if attrs.get("kind", "segment") != "segment":
            continue
        lesions = tuple(
            MapLesion(
                kind=str(_get(les, "kind")),
                start_cm=float(_get(les, "start_cm", 0.0)),
                length_cm=float(_get(les, "length_cm", 0.0)),
                stenosis_pct=_get(les, "stenosis_pct"),
                calcified=CALCIFICATION_STEPS.get(str(_get(les, "calcification", "none")), 0) >= 2,
            )
            for les in attrs.get("lesions", ())
        )
        stents = tuple(
            MapStent(float(_get(st, "start_cm", 0.0)), float(_get(st, "length_cm", 0.0)))
            for st in attrs.get("stents", ())
        )
        out[node] = MapSegment(
            id=node,
            label=short_label(node),
            diameter_mm=float(attrs.get("diameter_mm") or 0.0),
            diameter_reference=attrs.get("diameter_source") != "measured",
            length_cm=float(attrs.get("length_cm") or 0.0),
            calcification=CALCIFICATION_STEPS.get(str(attrs.get("calcification") or "none"), 0),
            lesions=lesions,
            stents=stents,
            avoid=bool(attrs.get("avoid")),
        )
    return out


def map_grafts(graph: Any, segments: Mapping[str, MapSegment]) -> tuple[MapGraft, ...]:
    out = []
    for node, attrs in graph.nodes(data=True):
        if attrs.get("kind") != "graft":
            continue
        a, b = attrs.get("from"), attrs.get("to")
        if a not in segments or b not in segments:
            continue
        out.append(
            MapGraft(
                id=node,
                label=short_label(node) + ("" if attrs.get("patent", True) else " (occluded)"),
                from_segment=a,
                from_fraction=_fraction(float(attrs.get("from_cm", 0.0)), segments[a].length_cm),
                to_segment=b,
                to_fraction=_fraction(float(attrs.get("to_cm", 0.0)), segments[b].length_cm),
                diameter_mm=float(attrs.get("diameter_mm") or 5.0),
            )
        )
    return tuple(out)


def map_route(route: Mapping[str, Any], graph: Any) -> MapRoute:
    """A planner route (its JSON dict) as legs of fractions along each node."""
    legs = []
    for leg in route.get("legs") or ():
        node = leg["node"]
        if node not in graph.nodes:
            continue
        length = float(graph.nodes[node].get("length_cm") or 0.0)
        legs.append(
            (node, _fraction(float(leg["from_cm"]), length), _fraction(float(leg["to_cm"]), length))
        )
    return MapRoute(rank=int(route.get("rank", 0)), legs=tuple(legs))


def chosen_and_runner_up(plan: Mapping[str, Any]) -> tuple[dict | None, dict | None]:
    """The best two feasible routes of the plan, in rank order (None where there is none)."""
    feasible = sorted(
        (r for r in plan.get("routes", ()) if r.get("feasible")), key=lambda r: r["rank"]
    )
    return (feasible[0] if feasible else None, feasible[1] if len(feasible) > 1 else None)


def map_data(tree: Any, plan: Mapping[str, Any] | None) -> MapData:
    """Everything the map draws, from an ``ArterialTree`` and ``PlanResult.to_dict()``."""
    graph = tree.graph
    segments = map_segments(graph)
    grafts = map_grafts(graph, segments)
    chosen = runner = None
    target = None
    if plan is not None:
        best, second = chosen_and_runner_up(plan)
        chosen = map_route(best, graph) if best else None
        runner = map_route(second, graph) if second else None
        tgt = plan.get("target") or {}
        seg = tgt.get("segment")
        if seg in segments:
            target = (seg, _fraction(float(tgt.get("at_cm", 0.0)), segments[seg].length_cm))
    return MapData(segments=segments, grafts=grafts, chosen=chosen, runner_up=runner, target=target)
