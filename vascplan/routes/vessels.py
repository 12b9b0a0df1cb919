"""What the planner asks of the patient's vessels along a path.

Helpers over the case and its tree: the lesions and stents on a node, the calcification
over a stretch, the minimal lumen over a run of legs (with or without its stenoses),
the target lesion, whether a path crosses the aortic bifurcation or the arch, and
whether the bifurcation is covered by stents or an aortic graft.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass
from typing import Any

from vascplan.routes.pathfind import EPS_CM, CatheterPath, Leg

CALCIFICATION_GRADES = ("none", "mild", "moderate", "severe")
"""Calcification grades of the case file, in order (index = grade step)."""

BIFURCATION_NODE = "AO-INFRA"
"""The segment whose end is the aortic bifurcation."""

ARCH_NODE = "AO-ARCH"
GRAFT_PREFIX = "GRAFT:"
PEDAL_LOOP_NODES = ("PLA", "DPA")
_EDGE_CM = 1e-4
"""Margin [cm] by which a stretch is shrunk so that touching a lesion's edge is not entering it."""


def grade_step(grade: str | None) -> int:
    """Index of a calcification grade (none 0 ... severe 3); unknown or None is 0.

    >>> grade_step("moderate")
    2
    """
    return CALCIFICATION_GRADES.index(grade) if grade in CALCIFICATION_GRADES else 0


@dataclass(frozen=True)
class Span:
    """A lesion or stent as an interval on a node [cm from the node's origin]."""

    node: str
    start_cm: float
    end_cm: float
    item: Any

    def overlaps(self, lo_cm: float, hi_cm: float) -> bool:
        """True when the closed intervals touch or overlap."""
        return self.start_cm <= hi_cm + EPS_CM and self.end_cm >= lo_cm - EPS_CM


class VesselView:
    """The case's vessels as the planner sees them.

    Parameters
    ----------
    case : Case
        The validated case (``vascplan.case.model``).
    tree : ArterialTree
        Its tree (``vascplan.anatomy.graph.build_tree``).
    """

    def __init__(self, case: Any, tree: Any) -> None:
        self.case = case
        self.tree = tree
        self.lesions: dict[str, list[Span]] = {}
        for lesion in case.lesions:
            span = Span(lesion.segment, lesion.start_cm, lesion.start_cm + lesion.length_cm, lesion)
            self.lesions.setdefault(lesion.segment, []).append(span)
        self.stents: dict[str, list[Span]] = {}
        for stent in case.stents:
            span = Span(stent.segment, stent.start_cm, stent.start_cm + stent.length_cm, stent)
            self.stents.setdefault(stent.segment, []).append(span)
        target = case.procedure.target
        self.target_segment: str = target.segment
        self.target_cm: float = float(target.at_cm)
        self.target_lesion: Span | None = self._find_target_lesion()

    # -- lookups -----------------------------------------------------------------

    def anastomoses_on(self, segment: str) -> list[tuple[str, float]]:
        """``(graft name, position cm)`` of every graft end on ``segment``."""
        out = []
        for g in self.case.grafts:
            if g.from_segment == segment:
                out.append((g.name, float(g.from_cm)))
            if g.to_segment == segment:
                out.append((g.name, float(g.to_cm)))
        return out

    def node(self, node: str) -> dict:
        """Attributes of a tree node."""
        return self.tree.graph.nodes[node]

    def length_cm(self, node: str) -> float:
        """Length of a node [cm]."""
        return float(self.node(node)["length_cm"])

    def side(self, node: str) -> str | None:
        """``L`` or ``R`` for a sided node; for a graft, the side of its non-midline end."""
        if node.startswith(GRAFT_PREFIX):
            for end in graft_ends(self.case, node[len(GRAFT_PREFIX):]):
                side = self.side(end)
                if side in ("L", "R"):
                    return side
            return None
        side = self.node(node).get("side")
        return side if side in ("L", "R") else None

    def _find_target_lesion(self) -> Span | None:
        hits = [s for s in self.lesions.get(self.target_segment, [])
                if s.start_cm - EPS_CM <= self.target_cm <= s.end_cm + EPS_CM]
        hits.sort(key=lambda s: (s.item.kind != "occlusion", -s.item.percent))
        return hits[0] if hits else None

    def is_target(self, span: Span) -> bool:
        """True for the target lesion itself (crossing it is the procedure), every piece
        of it when it runs across segments (``part_of``)."""
        target = self.target_lesion
        if target is None:
            return False
        if span is target:
            return True
        group = getattr(target.item, "part_of", None)
        return group is not None and getattr(span.item, "part_of", None) == group

    def target_pieces(self) -> list[Span]:
        """The target lesion's pieces in the order of flow (one unless it spans segments)."""
        if self.target_lesion is None:
            return []
        group = getattr(self.target_lesion.item, "part_of", None)
        if group is None:
            return [self.target_lesion]
        return [s for spans in self.lesions.values() for s in spans
                if getattr(s.item, "part_of", None) == group]

    @property
    def target_is_occlusion(self) -> bool:
        """True when the target point lies in an occlusion."""
        return self.target_lesion is not None and self.target_lesion.item.kind == "occlusion"

    # -- along a stretch ------------------------------------------------------------

    def calcification_step(self, node: str, lo_cm: float, hi_cm: float) -> int:
        """Worst calcification grade step over a stretch: the vessel's and its lesions'."""
        step = grade_step(self.node(node).get("calcification"))
        for span in self.lesions.get(node, []):
            # Strictly inside: a stretch that stops at a lesion's edge (the sheath tip
            # short of the target occlusion) does not take on its calcification.
            if span.start_cm < hi_cm - _EDGE_CM and span.end_cm > lo_cm + _EDGE_CM:
                step = max(step, grade_step(getattr(span.item, "calcification", None)))
        return step

    def mld_mm(self, node: str, lo_cm: float, hi_cm: float) -> float:
        """Minimal lumen diameter over a stretch of a node [mm] (the tree's MLD)."""
        if hi_cm - lo_cm < EPS_CM:
            lo_cm, hi_cm = max(0.0, lo_cm - EPS_CM), hi_cm + EPS_CM
        length = self.length_cm(node)
        return float(self.tree.mld(node, max(0.0, lo_cm), min(length, hi_cm)))

    def lumen_over(self, legs: Iterable[Leg]) -> tuple[float, str] | None:
        """Smallest MLD over legs with their lesions: (mm, node); None if all zero-length."""
        best: tuple[float, str] | None = None
        for leg in legs:
            if leg.length_cm < 4 * _EDGE_CM:
                continue
            # Shrink by a hair: a stretch that stops at a lesion's edge does not enter it.
            mld = self.mld_mm(leg.node, leg.lo_cm + _EDGE_CM, leg.hi_cm - _EDGE_CM)
            if best is None or mld < best[0]:
                best = (mld, leg.node)
        return best

    def open_lumen_over(self, legs: Iterable[Leg]) -> tuple[float, str] | None:
        """Smallest MLD over legs outside every lesion (stents and vessel size only)."""
        best: tuple[float, str] | None = None
        for leg in legs:
            for lo, hi in self._outside_lesions(leg):
                mld = self.mld_mm(leg.node, lo, hi)
                if best is None or mld < best[0]:
                    best = (mld, leg.node)
        return best

    def _outside_lesions(self, leg: Leg) -> list[tuple[float, float]]:
        pieces = [(leg.lo_cm, leg.hi_cm)]
        for span in self.lesions.get(leg.node, []):
            nxt: list[tuple[float, float]] = []
            for lo, hi in pieces:
                if span.end_cm <= lo or span.start_cm >= hi:
                    nxt.append((lo, hi))
                    continue
                if span.start_cm > lo:
                    nxt.append((lo, span.start_cm - EPS_CM))
                if span.end_cm < hi:
                    nxt.append((span.end_cm + EPS_CM, hi))
            pieces = nxt
        return [(lo, hi) for lo, hi in pieces if hi - lo > EPS_CM]

    def lesions_on(self, legs: Iterable[Leg], kind: str | None = None) -> list[Span]:
        """Non-target lesions touching the legs (of one kind when given), in path order."""
        out: list[Span] = []
        for leg in legs:
            for span in self.lesions.get(leg.node, []):
                if self.is_target(span) or (kind is not None and span.item.kind != kind):
                    continue
                if span.overlaps(leg.lo_cm, leg.hi_cm) and span not in out:
                    out.append(span)
        return out

    def disease_near(self, node: str, cm: float, half_width_cm: float) -> list[Span]:
        """Lesions and stents within ``half_width_cm`` of a point of a node."""
        lo, hi = cm - half_width_cm, cm + half_width_cm
        spans = self.lesions.get(node, []) + self.stents.get(node, [])
        return [s for s in spans if s.overlaps(lo, hi)]

    # -- shape of a path ------------------------------------------------------------

    def crosses_bifurcation(self, path: CatheterPath) -> bool:
        """True when the path goes up one iliac side and down the other."""
        nodes = path.nodes
        for i in range(1, len(nodes) - 1):
            if nodes[i] == BIFURCATION_NODE:
                before, after = self.side(nodes[i - 1]), self.side(nodes[i + 1])
                if before and after and before != after:
                    return True
        return False

    def arch_share(self, path: CatheterPath) -> float | None:
        """Share of the arch's length the path runs along [-], None if it avoids the arch."""
        for leg in path.legs:
            if leg.node == ARCH_NODE:
                return min(1.0, leg.length_cm / max(self.length_cm(ARCH_NODE), EPS_CM))
        return None

    def uses_pedal_loop(self, path: CatheterPath) -> bool:
        """True when the path runs through a plantar arch into a dorsalis pedis or back."""
        nodes = set(path.nodes)
        return any(f"{s}-PLA" in nodes and f"{s}-DPA" in nodes for s in ("L", "R"))

    def grafts_on(self, path: CatheterPath) -> list[str]:
        """Graft names the path runs through."""
        return [n[len(GRAFT_PREFIX):] for n in path.nodes if n.startswith(GRAFT_PREFIX)]

    def bifurcation_cover(self, origin_cm: float) -> str | None:
        """Why up-and-over is impossible here, or None when the bifurcation is free.

        Parameters
        ----------
        origin_cm : float
            A stent starting within this distance of a common iliac origin, or ending
            within it of the aortic bifurcation, covers the bifurcation [cm].
        """
        at_origin = {side: [s for s in self.stents.get(f"{side}-CIA", [])
                            if s.start_cm <= origin_cm] for side in ("L", "R")}
        if at_origin["L"] and at_origin["R"]:
            return "kissing stents at both common iliac origins"
        if BIFURCATION_NODE in self.tree.graph:
            end = self.length_cm(BIFURCATION_NODE)
            if any(s.end_cm >= end - origin_cm for s in self.stents.get(BIFURCATION_NODE, [])):
                return "an aortic stent reaches the bifurcation"
        sides: set[str] = set()
        for graft in self.case.grafts:
            ends = graft_ends(self.case, graft.name)
            if ends and ends[0].startswith("AO-") and graft_patent(graft):
                side = self.side(ends[1])
                if side:
                    sides.add(side)
        if sides == {"L", "R"}:
            return "an aorto-bi-iliac or aorto-bifemoral graft replaces the bifurcation"
        return None


def graft_ends(case: Any, name: str) -> tuple[str, str] | tuple[()]:
    """(from segment, to segment) of a named graft of the case, or () if unknown."""
    for graft in case.grafts:
        if graft.name == name:
            return (str(graft.from_segment), str(graft.to_segment))
    return ()


def graft_patent(graft: Any) -> bool:
    """Whether a graft of the case is patent (absent field: patent)."""
    return bool(getattr(graft, "patent", True))
