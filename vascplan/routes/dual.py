"""Dual access for an occlusion: pairs of feasible routes, one to each cap."""

from __future__ import annotations

from vascplan.routes.pathfind import EPS_CM
from vascplan.routes.result import Pair, Route

MAX_PAIRS = 5
"""How many pairs to keep, best first."""


def _side(segment: str) -> str | None:
    """``L`` or ``R`` from a sided segment id (``L-CFA``), else None."""
    head, sep, _ = segment.partition("-")
    return head if sep and head in ("L", "R") else None


def _runs_through_puncture(route: Route, other: Route) -> bool:
    """True when ``route``'s catheter runs past the point where ``other`` punctures.

    Two sheaths in series on one arterial line (an antegrade common femoral and a
    mid-thigh puncture below it, or an up-and-over route down the leg another sheath
    enters) cannot be worked together: one catheter would run through the other's
    puncture (common practice).
    """
    if not other.legs:
        return False
    puncture_cm = other.legs[0].from_cm
    return any(leg.node == other.segment
               and leg.lo_cm - EPS_CM <= puncture_cm <= leg.hi_cm + EPS_CM
               for leg in route.legs)


def _default_tier() -> int:
    from vascplan.routes.order import load_order

    return int(load_order()["default_tier"])


def _used_for_a_cap(route: Route, cap: str) -> bool:
    """Whether practitioners use this route as that end of a dual access (common practice).

    The proximal end is a therapeutic access (antegrade or up-and-over to the proximal
    cap) of the usual tiers (not an axillary for a small sheath, ``order.yaml``). The
    distal end is a crossing access straight up from below: no pedal loop and
    no turn (not "up the peroneal, down the posterior tibial").
    """
    if cap == "proximal":
        return route.role == "therapeutic" and route.tier <= _default_tier()
    if any(leg.node.endswith("-PLA") for leg in route.legs):
        return False
    return all(leg.with_flow is not True for leg in route.legs)


def rank_pairs(routes: list[Route], max_pairs: int = MAX_PAIRS) -> tuple[list[Pair], int]:
    """Pairs usable together: both feasible, one to each cap, no shared puncture.

    Parameters
    ----------
    routes : list of Route
        The ranked routes of an occlusion target.
    max_pairs : int
        How many to keep.

    Returns
    -------
    (list of Pair, int)
        The proximal end's tier first, then the lower combined score (lower is
        better), ranked from 1; and how many
        candidate pairs (one to each cap) were left out (an end practitioners do not use
        for it, or beyond ``max_pairs``).

    Notes
    -----
    Two sites on the same artery (radial and distal radial of one arm) count as a shared
    puncture: one artery takes one sheath (common practice). A prone site (popliteal)
    and a supine one (a groin, a tibial or pedal artery) cannot be worked at the same
    time, so they never make a pair (common practice). Nor do two routes where one
    catheter runs past the other's puncture (sheaths in series on one line).
    """
    proximal = [r for r in routes if r.feasible and r.approach == "proximal-cap"]
    distal = [r for r in routes if r.feasible and r.approach == "distal-cap"]
    pairs: list[Pair] = []
    seen: set[tuple[str, str]] = set()
    unused = 0
    for a in proximal:
        for b in distal:
            if a.site == b.site or a.segment == b.segment or (a.site, b.site) in seen:
                continue
            if not (_used_for_a_cap(a, "proximal") and _used_for_a_cap(b, "distal")):
                unused += 1
                continue
            if a.position != b.position:
                continue  # one prone, one supine: not both in place at once
            if _runs_through_puncture(a, b) or _runs_through_puncture(b, a):
                continue  # two sheaths in series on one arterial line
            seen.add((a.site, b.site))
            notes = []
            side = _side(a.segment)
            if side is not None and side == _side(b.segment):
                notes.append(f"both punctures on the {side} side")
            pairs.append(Pair(a, b, notes))
    # the proximal end's tier first (femoral before others, order.yaml), then the score
    pairs.sort(key=lambda p: (p.proximal.tier, round(p.score, 6), p.proximal.rank,
                              p.distal.rank))
    for i, pair in enumerate(pairs[:max_pairs], start=1):
        pair.rank = i
    return pairs[:max_pairs], unused + max(0, len(pairs) - max_pairs)
