"""Result objects of the route planner and their JSON contract (``to_dict``).

The contract (issue 3), keys at least::

    {"case", "target": {"segment", "at_cm"},
     "routes": [{"rank", "site", "direction", "feasible", "path", "length_cm",
                 "approach", "sheath_od_mm", "min_lumen_mm", "sar" (unrounded),
                 "sar_limit", "sar_limit_source", "score",
                 "blocked_by": [{"code", "segment", "detail"}],
                 "factors": [{"name", "points", "detail"}]}],
     "pairs", "assumptions", "caution"}

plus ``support`` in large-bore support mode. ``path`` is the list of node ids of the
tree graph (``GRAFT:<name>`` included), puncture segment first. Extra keys (``legs``,
``path_words``, ``assumed``...) are additions, never replacements.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from vascplan.routes.limits import Block, headline
from vascplan.routes.pathfind import Leg
from vascplan.routes.scoring import SCORE_CONVENTION, Factor
from vascplan.safety import CAUTION

FORMAT = "vascplan-plan/1"


def _r(value: float | None, digits: int) -> float | None:
    return None if value is None else round(value, digits)


@dataclass
class Route:
    """One ranked route: a site, a direction, a path, its verdict and its reasons.

    Attributes
    ----------
    site : str
        Site id of the catalogue (``R-CFA``, ``L-RAD-DIST``).
    site_name : str
        Plain name of the site.
    segment : str
        The punctured segment.
    direction : str
        ``retrograde`` or ``antegrade``: the way the sheath points at the puncture.
    path : list of str
        Node ids, puncture segment first, target segment last; ``[segment]`` when
        unreachable.
    legs : list of Leg
        The stretch run on each node.
    path_words : str
        The path in words for a table.
    length_cm : float or None
        Skin entry to target point [cm]; None when unreachable.
    approach : str
        ``proximal-cap``, ``distal-cap`` or ``none``.
    sheath_od_mm : float
        Sheath outer diameter [mm].
    min_lumen_mm : float or None
        Smallest MLD over the sheath's stretch [mm].
    limiting_segment : str or None
        Where that smallest MLD lies.
    sar : float or None
        ``sheath_od_mm / min_lumen_mm``.
    sar_limit : float or None
        The SAR limit that applied at ``limiting_segment`` [-] (limits by site).
    sar_limit_name, sar_limit_label, sar_limit_source : str or None
        Its name in ``limits.yaml``, its short name (``radial``) and its source.
    blocked_by : list of Block
    factors : list of Factor
    position : str
        Patient position the site needs.
    assumed : list of str
        Names of the values above that rest on reference values, not measurements.
    rank : int
        1 = best; set by the planner.
    role : str
        ``therapeutic`` (the sheath the device goes through) or ``crossing`` (a small
        retrograde access to an occlusion's distal cap).
    tier : int
        Ordering tier of the access (``data/access/order.yaml``), lower first.
    ordering : list of str
        The ordering rules that placed the route, each with its basis.
    equipment : dict
        ``{"size_fr", "label", "length_cm", "sheathless", "default", "basis"}``.
    margins : dict
        Margin per constraint (``sar``, ``shaft_cm``, ``working_room_cm``,
        ``device_in_sheath_mm``): positive is room left, negative is short by.
    in_place : str or None
        The access already in place the route uses (no new puncture).
    """

    site: str
    site_name: str
    segment: str
    direction: str
    path: list[str]
    legs: list[Leg]
    path_words: str
    length_cm: float | None
    approach: str
    sheath_od_mm: float
    min_lumen_mm: float | None
    limiting_segment: str | None
    sar: float | None
    sar_limit: float | None
    blocked_by: list[Block]
    factors: list[Factor]
    position: str
    assumed: list[str] = field(default_factory=list)
    rank: int = 0
    sar_limit_name: str | None = None
    sar_limit_source: str | None = None
    sar_limit_label: str | None = None
    role: str = "therapeutic"
    tier: int = 1
    ordering: list[str] = field(default_factory=list)
    equipment: dict[str, Any] = field(default_factory=dict)
    margins: dict[str, Any] = field(default_factory=dict)
    in_place: str | None = None

    @property
    def feasible(self) -> bool:
        """True when no hard limit is broken."""
        return not self.blocked_by

    @property
    def score(self) -> float:
        """Sum of the factors' points as shown (each to 2 decimals); lower is better.

        Summing the shown points keeps the JSON self-consistent: ``score`` is exactly the
        sum of ``factors[].points``, and the ranking follows the scores shown.
        """
        return sum(round(f.points, 2) for f in self.factors)

    def sort_key(self) -> tuple:
        """Feasible first (unreachable last), then therapeutic before crossing, lower tier,
        lower score, shorter path, site id (ordering rules: ``data/access/order.yaml``)."""
        length = self.length_cm if self.length_cm is not None else float("inf")
        return (not self.feasible, self.length_cm is None, self.role != "therapeutic",
                self.tier, round(self.score, 6), length, self.site, self.direction)

    def main_reason(self) -> str:
        """The one line a table shows: the first block, else the heaviest factor."""
        if self.blocked_by:
            return headline(self.blocked_by[0].to_dict())
        if not self.factors:
            return "nothing against it"
        top = max(self.factors, key=lambda f: f.points)
        return f"{top.name} +{top.points:.1f}"

    def to_dict(self) -> dict[str, Any]:
        """The route's JSON object (module docstring)."""
        return {
            "rank": self.rank,
            "site": self.site,
            "site_name": self.site_name,
            "direction": self.direction,
            "feasible": self.feasible,
            "path": list(self.path),
            "path_words": self.path_words,
            "legs": [
                {"node": leg.node, "from_cm": round(leg.from_cm, 2), "to_cm": round(leg.to_cm, 2)}
                for leg in self.legs
            ],
            "length_cm": _r(self.length_cm, 1),
            "approach": self.approach,
            "sheath_od_mm": round(self.sheath_od_mm, 2),
            "min_lumen_mm": _r(self.min_lumen_mm, 2),
            "limiting_segment": self.limiting_segment,
            "sar": self.sar,
            "sar_limit": self.sar_limit,
            "sar_limit_name": self.sar_limit_name,
            "sar_limit_label": self.sar_limit_label,
            "sar_limit_source": self.sar_limit_source,
            "score": round(self.score, 2),
            "role": self.role,
            "tier": self.tier,
            "ordering": list(self.ordering),
            "equipment": dict(self.equipment),
            "margins": dict(self.margins),
            "in_place": self.in_place,
            "position": self.position,
            "assumed": list(self.assumed),
            "blocked_by": [b.to_dict() for b in self.blocked_by],
            "factors": [f.to_dict() for f in self.factors],
        }


@dataclass
class Pair:
    """Two routes used together for an occlusion: one to each cap.

    Attributes
    ----------
    proximal : Route
        The route arriving at the proximal cap (antegrade approach).
    distal : Route
        The route arriving at the distal cap (retrograde approach).
    notes : list of str
        What using both means (a position change, the same limb punctured twice).
    rank : int
    """

    proximal: Route
    distal: Route
    notes: list[str] = field(default_factory=list)
    rank: int = 0

    @property
    def score(self) -> float:
        """Sum of both routes' scores; lower is better."""
        return self.proximal.score + self.distal.score

    def to_dict(self) -> dict[str, Any]:
        """``{"rank", "score", "proximal": {...}, "distal": {...}, "notes"}``."""

        def ref(route: Route) -> dict[str, Any]:
            return {"rank": route.rank, "site": route.site, "direction": route.direction,
                    "path": list(route.path), "score": round(route.score, 2)}

        return {"rank": self.rank, "score": round(self.score, 2),
                "proximal": ref(self.proximal), "distal": ref(self.distal),
                "notes": list(self.notes)}


@dataclass
class PlanResult:
    """Everything the planner found for one case.

    Attributes
    ----------
    case : str
        The patient's pseudonymous ref.
    source : str
        The case file, when planned from one.
    purpose : str
        ``treat`` or ``support``.
    target : dict
        ``{"segment", "at_cm"}`` plus ``lesion`` (kind, caps) when the target lies in one.
    routes : list of Route
        Ranked; feasible first, best score first (after ``top``, when given).
    routes_total : int
        How many routes were ranked before ``top`` cut the list.
    pairs : list of Pair
        For an occlusion target: pairs of feasible routes, one to each cap.
    assumptions : list of str
        Every value taken from reference anatomy or estimated, as a sentence.
    weights, limits : dict of str to float
        The values that applied (after overrides).
    support : dict or None
        Large-bore support comparison (support mode only).
    routes_left_out : int
        Routes not listed by the default view (no path, or another path of a route
        listed); 0 with ``--all``.
    pairs_left_out : int
        Pairs one to each cap that were not listed (an end practitioners do not use for
        it, or beyond the best few).
    """

    case: str
    source: str
    purpose: str
    target: dict[str, Any]
    routes: list[Route]
    routes_total: int
    pairs: list[Pair]
    assumptions: list[str]
    weights: dict[str, float]
    limits: dict[str, float]
    support: dict[str, Any] | None = None
    routes_left_out: int = 0
    pairs_left_out: int = 0

    def route(self, site: str) -> list[Route]:
        """The routes from one site id (or from every site of a segment id)."""
        from vascplan.refdata.sites import site_ids_for

        ids = set(site_ids_for(site)) or {site}
        return [r for r in self.routes if r.site in ids]

    def to_dict(self) -> dict[str, Any]:
        """The JSON contract (module docstring)."""
        out: dict[str, Any] = {
            "format": FORMAT,
            "case": self.case,
            "source": self.source,
            "purpose": self.purpose,
            "target": dict(self.target),
            "score_convention": SCORE_CONVENTION,
            "routes": [r.to_dict() for r in self.routes],
            "routes_total": self.routes_total,
            "routes_left_out": self.routes_left_out,
            "pairs_left_out": self.pairs_left_out,
            "pairs": [p.to_dict() for p in self.pairs],
            "assumptions": list(self.assumptions),
            "weights": dict(self.weights),
            "limits": dict(self.limits),
            "caution": CAUTION,
        }
        if self.support is not None:
            out["support"] = self.support
        return out
