"""Dual access for an occlusion: pairs of feasible routes, one to each cap."""

from __future__ import annotations

from vascplan.routes.result import Pair, Route

MAX_PAIRS = 5
"""How many pairs to keep, best first."""


def _side(segment: str) -> str | None:
    """``L`` or ``R`` from a sided segment id (``L-CFA``), else None."""
    head, sep, _ = segment.partition("-")
    return head if sep and head in ("L", "R") else None


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
    time, so they never make a pair (common practice).
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
