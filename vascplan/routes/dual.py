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


def rank_pairs(routes: list[Route], max_pairs: int = MAX_PAIRS) -> list[Pair]:
    """Pairs usable together: both feasible, one to each cap, no shared puncture.

    Parameters
    ----------
    routes : list of Route
        The ranked routes of an occlusion target.
    max_pairs : int
        How many to keep.

    Returns
    -------
    list of Pair
        Lower combined score first (lower is better), ranked from 1.

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
    for a in proximal:
        for b in distal:
            if a.site == b.site or a.segment == b.segment or (a.site, b.site) in seen:
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
    pairs.sort(key=lambda p: (round(p.score, 6), p.proximal.rank, p.distal.rank))
    for i, pair in enumerate(pairs[:max_pairs], start=1):
        pair.rank = i
    return pairs[:max_pairs]
