"""Catheter paths through the arterial tree, with lengths that count partial segments.

The tree's segment graph says which segments meet; a catheter, though, enters a segment
at one point and leaves it at another. So the search runs on a *point graph*: every
segment becomes a chain of its junction points (origin, end, branch origins, graft
anastomoses), joined by edges weighted with the distance between them [cm]; a junction
joins the two points that touch, at zero length. The puncture and the target are
inserted as points of their segments for each search, and the puncture is joined only
on the side its direction allows: retrograde (against the flow, towards the segment's
origin) or antegrade (with the flow). A path that re-enters a segment it left is not a
catheter path (a catheter does not double back into the same vessel); the k shortest of
the others are the routes.

The search, once per case: shortest distances from the target to every point (one
Dijkstra run per target, memoised), then for each puncture a best-first search over path
prefixes ordered by length so far plus that distance, a lower bound of what is left
(A* enumerating paths [1]_). Prefixes that re-enter a segment are cut at once, so the
search opens only the few prefixes that can still beat the k-th path: where the tree has
no loop, straight down the one path; where grafts and the plantar loops make cycles, the
few rivals. The first k complete paths are the k shortest, in order; equal lengths keep
the order of the search (deterministic).

References
----------
.. [1] Hart PE, Nilsson NJ, Raphael B. A formal basis for the heuristic determination of
   minimum cost paths. IEEE Trans Syst Sci Cybern 1968;4(2):100-107.
   doi:10.1109/TSSC.1968.300136

Positions along a segment are in cm from its origin in the direction of flow, the
convention of the case file; a graft runs from its ``from`` end (0) to its ``to`` end.
"""

from __future__ import annotations

import bisect
import heapq
import itertools
from dataclasses import dataclass
from typing import Any

EPS_CM = 1e-6
"""Nudge [cm] that keeps an inserted point off an existing junction (numerical only)."""

K_PATHS = 3
"""How many paths to keep per site and direction (the k of the k best)."""

MAX_PREFIXES = 200_000
"""Prefixes one search may open before it stops with the paths found so far (a guard
against a pathological file; real trees, even with 100 grafts, open a few thousand)."""

_DIGITS = 9
"""Path lengths equal to this many decimals of a cm tie; then the points' names decide."""


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
        # Points are numbered in the order of (node, cm), so that comparing two paths'
        # numbers compares their points by name; each point knows its node's bit (for the
        # re-entry test) and its neighbours with the distance to them [cm].
        self.chains = {node: sorted(cms) for node, cms in points.items()}
        self._point: list[tuple[str, float]] = sorted(
            (node, cm) for node, chain in self.chains.items() for cm in chain)
        self._id = {point: i for i, point in enumerate(self._point)}
        self._node_bit = {node: 1 << i for i, node in enumerate(points)}
        self._bit = [self._node_bit[node] for node, _cm in self._point]
        self._adj: list[list[tuple[int, float]]] = [[] for _ in self._point]
        for node, chain in self.chains.items():
            for x, y in itertools.pairwise(chain):
                self._join(self._id[(node, x)], self._id[(node, y)], y - x)
        for u, v in junctions:
            self._join(self._id[u], self._id[v], 0.0)
        # Node level: which nodes touch each node (by bit), for the can-still-arrive test.
        self._touches = dict.fromkeys(self._node_bit.values(), 0)
        for (a, _ca), (b, _cb) in junctions:
            self._touches[self._node_bit[a]] |= self._node_bit[b]
            self._touches[self._node_bit[b]] |= self._node_bit[a]
        self._targets: dict[tuple[str, float], _TargetView] = {}

    def _join(self, u: int, v: int, w: float) -> None:
        self._adj[u].append((v, w))
        self._adj[v].append((u, w))

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

    def _target(self, node: str, cm: float) -> _TargetView:
        """The graph with the target point inserted, and every point's distance to it."""
        key = (node, cm)
        view = self._targets.get(key)
        if view is None:
            view = self._targets[key] = _TargetView(self, node, cm)
        return view

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
        lo, hi = self._neighbours(segment, p)
        if segment == target_segment and (lo, hi) == self._neighbours(segment, t):
            # No junction between puncture and target: straight there, or not at all
            # (going round a loop would re-enter this segment).
            if (t > p) == (direction == "antegrade"):
                return [CatheterPath((Leg(segment, p, t),))]
            return []
        view = self._target(target_segment, t)
        start: list[tuple[int, float]] = []
        if direction == "retrograde" and lo is not None:
            start.append((self._id[(segment, lo)], p - lo))
        if direction == "antegrade" and hi is not None:
            start.append((self._id[(segment, hi)], hi - p))
        cut = (-1, -1)
        if lo is not None and hi is not None:
            cut = (self._id[(segment, lo)], self._id[(segment, hi)])
        bit = self._node_bit[segment]
        out: list[CatheterPath] = []
        for trail in view.search(start, bit, cut, k):
            located = [(segment, p)] + [self._point[i] for i in trail] + [(target_segment, t)]
            out.append(_legs(located))
        return out


class _TargetView:
    """A point graph with one target point inserted: adjacency and distances to it."""

    def __init__(self, graph: PointGraph, node: str, cm: float) -> None:
        self.dst = len(graph._point)
        adj = [list(nbrs) for nbrs in graph._adj]
        lo, hi = graph._neighbours(node, cm)
        ends: list[tuple[int, float]] = []
        if lo is not None:
            ends.append((graph._id[(node, lo)], cm - lo))
        if hi is not None:
            ends.append((graph._id[(node, hi)], hi - cm))
        if lo is not None and hi is not None:
            a, b = graph._id[(node, lo)], graph._id[(node, hi)]
            adj[a] = [(v, w) for v, w in adj[a] if v != b]
            adj[b] = [(v, w) for v, w in adj[b] if v != a]
        for u, w in ends:
            adj[u].append((self.dst, w))
        adj.append(list(ends))
        self.adj = adj
        self.bit = [*graph._bit, graph._node_bit[node]]
        self.target_bit = graph._node_bit[node]
        self.touches = graph._touches
        self._arrives: dict[tuple[int, int], bool] = {}
        # Dijkstra from the target: the length still to go from every point, at least.
        dist = [float("inf")] * len(adj)
        dist[self.dst] = 0.0
        heap = [(0.0, self.dst)]
        while heap:
            d, u = heapq.heappop(heap)
            if d > dist[u]:
                continue
            for v, w in adj[u]:
                if d + w < dist[v]:
                    dist[v] = d + w
                    heapq.heappush(heap, (d + w, v))
        self.to_go = dist

    def search(self, start: list[tuple[int, float]], start_bit: int, cut: tuple[int, int],
               k: int) -> list[list[int]]:
        """The k shortest paths that never re-enter a node, as lists of point numbers.

        ``start`` holds the puncture's neighbours and the distance to each, ``start_bit``
        its node's bit; ``cut`` is the chain edge the puncture splits (not walked).
        """
        adj, to_go, bit, dst = self.adj, self.to_go, self.bit, self.dst
        inf = float("inf")
        cut_a, cut_b = cut
        # A prefix: (length so far + still to go, rounded so that equal lengths tie and
        # the points decide; its points; length so far; last point; nodes seen; the
        # point before). The target's number is the largest: a path that ends sooner
        # comes after, as with the name ``__target__``.
        heap: list[tuple[float, tuple[int, ...], float, int, int, int]] = []
        arrives = self._arrives
        if not self._can_arrive(start_bit, start_bit):
            return []
        for v, w in start:
            if to_go[v] < inf:
                heap.append((round(w + to_go[v], _DIGITS), (v,), w, v, start_bit, -1))
        heapq.heapify(heap)
        found: list[list[int]] = []
        budget = MAX_PREFIXES
        while heap and len(found) < k and budget:
            budget -= 1
            _f, points, g, u, seen, prev = heapq.heappop(heap)
            if u == dst:
                found.append(list(points[:-1]))
                continue
            here = bit[u]
            for v, w in adj[u]:
                b = bit[v]
                if b == here:
                    if v == prev or (u == cut_a and v == cut_b) or (u == cut_b and v == cut_a):
                        continue
                    mask = seen
                elif seen & b:
                    continue  # re-enters a node it left
                else:
                    mask = seen | b
                    # Entering a node: can the target's node still be reached from it?
                    ok = arrives.get((b, mask))
                    if ok is None:
                        ok = self._can_arrive(b, mask)
                    if not ok:
                        continue
                h = to_go[v]
                if h < inf:
                    heapq.heappush(heap, (round(g + w + h, _DIGITS), (*points, v), g + w, v,
                                          mask, u))
        return found

    def _can_arrive(self, here: int, seen: int) -> bool:
        """Whether the target's node can be reached from node ``here`` through nodes
        not yet ``seen`` (a bound: within a node, direction is not looked at)."""
        key = (here, seen)
        known = self._arrives.get(key)
        if known is None:
            touches, goal = self.touches, self.target_bit
            closed = seen & ~here
            reached = frontier = here
            while frontier and not reached & goal:
                step = 0
                while frontier:
                    low = frontier & -frontier
                    frontier ^= low
                    step |= touches[low]
                frontier = step & ~reached & ~closed
                reached |= frontier
            known = self._arrives[key] = bool(reached & goal)
        return known


def _legs(located: list[tuple[str, float]]) -> CatheterPath:
    """Turn the points of a path, puncture to target, into legs (one per node run)."""
    legs: list[Leg] = []
    run_node, run_start, run_end = located[0][0], located[0][1], located[0][1]
    for node, cm in located[1:]:
        if node == run_node:
            run_end = cm
            continue
        legs.append(Leg(run_node, run_start, run_end))
        run_node, run_start, run_end = node, cm, cm
    legs.append(Leg(run_node, run_start, run_end))
    return CatheterPath(tuple(legs))
