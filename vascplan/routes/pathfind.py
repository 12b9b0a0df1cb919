"""Catheter paths through the arterial tree, with lengths that count partial segments.

The tree's segment graph says which segments meet; a catheter, though, enters a segment
at one point and leaves it at another. So the search runs on a *point graph*: every
segment becomes a chain of its junction points (origin, end, branch origins, graft
anastomoses), joined by edges weighted with the distance between them [cm]; a junction
joins the two points that touch, at zero length. The puncture and the target are
inserted as points of their segments for each search, and the puncture is joined only
on the side its direction allows: retrograde (against the flow, towards the segment's
origin) or antegrade (with the flow). The k shortest simple paths (Yen's algorithm,
``networkx.shortest_simple_paths``) give the best few routes; a path that re-enters a
segment it left is dropped (a catheter does not double back into the same vessel).

Positions along a segment are in cm from its origin in the direction of flow, the
convention of the case file; a graft runs from its ``from`` end (0) to its ``to`` end.
"""

from __future__ import annotations

import bisect
import itertools
from dataclasses import dataclass
from typing import Any

import networkx as nx

EPS_CM = 1e-6
"""Nudge [cm] that keeps an inserted point off an existing junction (numerical only)."""

K_PATHS = 3
"""How many paths to keep per site and direction (the k of the k best)."""

_CANDIDATES_PER_PATH = 2
"""Candidates drawn from Yen's algorithm per path kept, to allow for dropped ones."""

_SRC = ("__puncture__", 0.0)
_DST = ("__target__", 0.0)


@dataclass(frozen=True)
class Leg:
    """The stretch of one node of the tree a path runs along.

    Attributes
    ----------
    node : str
        Segment id or ``GRAFT:<name>``.
    from_cm, to_cm : float
        Where the path enters and leaves it [cm from the node's origin].
    """

    node: str
    from_cm: float
    to_cm: float

    @property
    def length_cm(self) -> float:
        """Length run along this node [cm]."""
        return abs(self.to_cm - self.from_cm)

    @property
    def lo_cm(self) -> float:
        """Lower end of the stretch [cm]."""
        return min(self.from_cm, self.to_cm)

    @property
    def hi_cm(self) -> float:
        """Upper end of the stretch [cm]."""
        return max(self.from_cm, self.to_cm)

    @property
    def with_flow(self) -> bool | None:
        """True when the path runs with the flow here, False against it, None if zero length."""
        if self.length_cm <= 2 * EPS_CM:
            return None
        return self.to_cm > self.from_cm


@dataclass(frozen=True)
class CatheterPath:
    """A path from the puncture point to the target point, leg by leg."""

    legs: tuple[Leg, ...]

    @property
    def nodes(self) -> list[str]:
        """Node ids in order, puncture segment first, target segment last."""
        return [leg.node for leg in self.legs]

    @property
    def vessel_cm(self) -> float:
        """Length inside the vessels, puncture point to target point [cm]."""
        return sum(leg.length_cm for leg in self.legs)

    def portion(self, start_cm: float, end_cm: float) -> list[Leg]:
        """The legs between two distances along the path, clipped.

        Parameters
        ----------
        start_cm, end_cm : float
            Distances from the puncture point along the path [cm], start <= end.

        Returns
        -------
        list of Leg
            Zero-length legs (a junction passed) inside the portion are kept.
        """
        out: list[Leg] = []
        walked = 0.0
        for leg in self.legs:
            a, b = walked, walked + leg.length_cm
            walked = b
            if b < start_cm - EPS_CM or a > end_cm + EPS_CM:
                continue
            sign = 1.0 if leg.to_cm >= leg.from_cm else -1.0
            lo = max(a, start_cm) - a
            hi = min(b, end_cm) - a
            if hi < lo:
                continue
            out.append(Leg(leg.node, leg.from_cm + sign * lo, leg.from_cm + sign * hi))
        return out


def junction_cm(tree: Any, a: str, b: str) -> tuple[float, float]:
    """Where nodes ``a`` and ``b`` touch: (cm on ``a``, cm on ``b``).

    Parameters
    ----------
    tree : ArterialTree
        The patient's tree (``vascplan.anatomy.graph``).
    a, b : str
        Two adjacent node ids.
    """
    ca, cb = tree.junction(a, b)
    return float(ca), float(cb)


class PointGraph:
    """The point graph of one tree (see the module notes); build once per case.

    Parameters
    ----------
    tree : ArterialTree
        The patient's tree.
    exclude : iterable of str, optional
        Nodes a catheter cannot use (a graft that is not patent).
    """

    def __init__(self, tree: Any, exclude: frozenset[str] = frozenset()) -> None:
        self.tree = tree
        graph = tree.graph
        self.length_cm: dict[str, float] = {}
        points: dict[str, set[float]] = {}
        for node, attrs in graph.nodes(data=True):
            if node in exclude:
                continue
            length = float(attrs["length_cm"])
            self.length_cm[node] = length
            points[node] = {0.0, length}
        junctions: list[tuple[tuple[str, float], tuple[str, float]]] = []
        for a, b in graph.edges():
            if a in exclude or b in exclude:
                continue
            ca, cb = junction_cm(tree, a, b)
            points[a].add(ca)
            points[b].add(cb)
            junctions.append(((a, ca), (b, cb)))
        self.graph = nx.Graph()
        self.chains: dict[str, list[float]] = {}
        for node, cms in points.items():
            chain = sorted(cms)
            self.chains[node] = chain
            self.graph.add_node((node, chain[0]))
            for x, y in itertools.pairwise(chain):
                self.graph.add_edge((node, x), (node, y), w=y - x)
        for u, v in junctions:
            self.graph.add_edge(u, v, w=0.0)
        # Edges on a cycle (pedal loop, graft), by block: only a path using one can have
        # rivals, and every rival stays inside the cyclic blocks the shortest one uses.
        self.block_of: dict[frozenset, int] = {}
        self.block_nodes: list[set[Any]] = []
        for block in nx.biconnected_component_edges(self.graph):
            if len(block) > 1:
                self.block_nodes.append({n for e in block for n in e})
                for e in block:
                    self.block_of[frozenset(e)] = len(self.block_nodes) - 1

    def _place(self, node: str, cm: float, direction: str | None) -> float:
        """Clamp a point inside its node and off every existing junction point."""
        length = self.length_cm[node]
        cm = min(max(cm, EPS_CM * 2), length - EPS_CM * 2)
        chain = self.chains[node]
        i = bisect.bisect_left(chain, cm)
        for j in (i - 1, i):
            if 0 <= j < len(chain) and abs(chain[j] - cm) < EPS_CM:
                cm = chain[j] - EPS_CM if direction == "retrograde" else chain[j] + EPS_CM
        return cm

    def _neighbours(self, node: str, cm: float) -> tuple[float | None, float | None]:
        chain = self.chains[node]
        i = bisect.bisect_left(chain, cm)
        lo = chain[i - 1] if i > 0 else None
        hi = chain[i] if i < len(chain) else None
        return lo, hi

    def paths(
        self,
        segment: str,
        puncture_cm: float,
        direction: str,
        target_segment: str,
        target_cm: float,
        k: int = K_PATHS,
    ) -> list[CatheterPath]:
        """The k shortest catheter paths from a puncture to a target point.

        Parameters
        ----------
        segment : str
            Punctured segment.
        puncture_cm : float
            Puncture point [cm from the segment's origin].
        direction : {"retrograde", "antegrade"}
            Which way the sheath points at the puncture.
        target_segment : str
            Segment holding the target.
        target_cm : float
            Target point [cm from that segment's origin].
        k : int
            Paths to keep.

        Returns
        -------
        list of CatheterPath
            Shortest first; empty when the target cannot be reached this way.
        """
        if segment not in self.length_cm or target_segment not in self.length_cm:
            return []
        p = self._place(segment, puncture_cm, direction)
        t = self._place(target_segment, target_cm, None)
        if segment == target_segment and self._neighbours(segment, p) == self._neighbours(
            segment, t
        ):
            # No junction between puncture and target: straight there, or not at all
            # (going round a loop would re-enter this segment).
            if (t > p) == (direction == "antegrade"):
                return [CatheterPath((Leg(segment, p, t),))]
            return []
        g = self.graph
        added: list[tuple[Any, Any]] = []
        removed: list[tuple[Any, Any, dict]] = []

        block_of = dict(self.block_of)

        def split(node: str, cm: float, key: Any, lower: bool, upper: bool) -> None:
            lo, hi = self._neighbours(node, cm)
            block = None
            if lo is not None and hi is not None and g.has_edge((node, lo), (node, hi)):
                removed.append(((node, lo), (node, hi), dict(g.edges[(node, lo), (node, hi)])))
                g.remove_edge((node, lo), (node, hi))
                block = block_of.get(frozenset(((node, lo), (node, hi))))
            if lower and lo is not None:
                g.add_edge(key, (node, lo), w=cm - lo)
                added.append((key, (node, lo)))
                if block is not None:
                    block_of[frozenset((key, (node, lo)))] = block
            if upper and hi is not None:
                g.add_edge((node, hi), key, w=hi - cm)
                added.append(((node, hi), key))
                if block is not None:
                    block_of[frozenset(((node, hi), key))] = block

        try:
            split(segment, p, _SRC, direction == "retrograde", direction == "antegrade")
            split(target_segment, t, _DST, True, True)
            return self._k_best(segment, p, target_segment, t, k, block_of)
        finally:
            for node in (_SRC, _DST):
                if node in g:
                    g.remove_node(node)
            for u, v, attrs in removed:
                g.add_edge(u, v, **attrs)

    def _k_best(self, segment: str, p: float, target_segment: str, t: float,
                k: int, block_of: dict[frozenset, int]) -> list[CatheterPath]:
        """The k shortest paths from the inserted puncture to the inserted target."""
        g = self.graph
        if _SRC not in g or _DST not in g:
            return []
        try:
            first = nx.dijkstra_path(g, _SRC, _DST, weight="w")
        except nx.NetworkXNoPath:
            return []
        blocks = {block_of[e] for e in map(frozenset, itertools.pairwise(first))
                  if e in block_of}
        if not blocks:
            # The shortest path touches no cycle: it is the only simple path.
            path = _to_path(first, segment, p, target_segment, t)
            return [path] if path is not None else []
        # Every simple path runs through the same bridges and, within each cyclic block
        # the shortest path crosses, between the same two points: the k best overall are
        # the best combinations of each block's k best (Yen's search inside the block).
        runs = _block_runs(first, block_of)
        options: list[list[tuple[float, list[Any]]]] = []
        for b, i, j in runs:
            nodes = set(self.block_nodes[b]) | {n for e, blk in block_of.items() if blk == b
                                                for n in e}
            sub = g.subgraph(nodes)
            inner = itertools.islice(
                nx.shortest_simple_paths(sub, first[i], first[j], weight="w"),
                k * _CANDIDATES_PER_PATH)
            options.append([(nx.path_weight(sub, q, "w"), q) for q in inner])
        combos = sorted(
            (sum(c[0] for c in choice), choice) for choice in itertools.product(*options)
        )
        out: list[CatheterPath] = []
        for _cost, choice in combos:
            points: list[Any] = []
            last = 0
            for (_b, i, j), (_w, inner_path) in zip(runs, choice, strict=True):
                points.extend(first[last:i])
                points.extend(inner_path)
                last = j + 1
            points.extend(first[last:])
            path = _to_path(points, segment, p, target_segment, t)
            if path is not None:
                out.append(path)
            if len(out) >= k:
                break
        return out


def _block_runs(points: list[Any], block_of: dict[frozenset, int]) -> list[tuple[int, int, int]]:
    """(block, first index, last index) of each stretch of a path inside one cyclic block."""
    runs: list[tuple[int, int, int]] = []
    for i, edge in enumerate(itertools.pairwise(points)):
        b = block_of.get(frozenset(edge))
        if b is None:
            continue
        if runs and runs[-1][0] == b and runs[-1][2] == i:
            runs[-1] = (b, runs[-1][1], i + 1)
        else:
            runs.append((b, i, i + 1))
    return runs


def _to_path(points: list[Any], segment: str, p: float, target_segment: str,
             t: float) -> CatheterPath | None:
    """Turn a point-graph path into legs; None if it re-enters a node it left."""
    located = [(segment, p)] + list(points[1:-1]) + [(target_segment, t)]
    legs: list[Leg] = []
    seen: set[str] = set()
    run_node, run_start, run_end = located[0][0], located[0][1], located[0][1]
    for node, cm in located[1:]:
        if node == run_node:
            run_end = cm
            continue
        legs.append(Leg(run_node, run_start, run_end))
        seen.add(run_node)
        if node in seen:
            return None
        run_node, run_start, run_end = node, cm, cm
    legs.append(Leg(run_node, run_start, run_end))
    return CatheterPath(tuple(legs))
