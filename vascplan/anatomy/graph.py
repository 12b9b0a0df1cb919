"""The patient's arterial tree as a graph: :func:`build_tree` and :class:`ArterialTree`.

Nodes are segment ids (``L-SFA``) and bypass grafts (``GRAFT:<name>``). Every value
carries its provenance: ``measured`` (from the case file) or ``reference`` (the
reference anatomy table, ``data/anatomy/segments.csv``), so that every later output
can flag what was assumed.

Node attributes
---------------
``kind`` ("segment" | "graft"), ``name``, ``side`` (L | R | midline), ``parent``,
``diameter_mm``, ``diameter_source``, ``diameter_sd_mm`` (the reference SD when the
diameter is a reference value, else None), ``length_cm``, ``length_source``,
``calcification`` (none | mild | moderate | severe, the vessel's own),
``calcification_source``, ``lesions`` (list of :class:`~vascplan.case.model.Lesion`,
by start), ``stents`` (list of :class:`~vascplan.case.model.Stent`), ``avoid`` (list
of reasons not to puncture). Graft nodes add ``patent``, ``from``, ``from_cm``,
``to``, ``to_cm``.

Edge attributes
---------------
``kind`` ("branch" | "loop" | "graft"), ``parent`` and ``child`` (the upstream and
downstream node, in the direction of flow), ``parent_cm`` (where on the parent the
junction is, from its origin), ``child_cm`` (where on the child; 0.0 for a branch
origin). Graft edges add ``name``, ``diameter_mm``, ``patent``, ``length_cm``,
``from``, ``from_cm``, ``to``, ``to_cm``.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from vascplan.case.model import Case, Graft
from vascplan.refdata.anatomy import SegmentReference, load_reference

if TYPE_CHECKING:
    import networkx as nx

GRAFT_PREFIX = "GRAFT:"
MEASURED = "measured"
REFERENCE = "reference"
POSITION_TOLERANCE_CM = 1e-6


def graft_node_id(name: str) -> str:
    """Node id of a graft (``GRAFT:fem-pop``)."""
    return f"{GRAFT_PREFIX}{name}"


class ArterialTree:
    """One patient's annotated arterial tree.

    Attributes
    ----------
    case : Case
        The validated case the tree was built from.
    graph : networkx.Graph
        Undirected, for routing: segment and graft nodes, branch/loop/graft edges.
    directed : networkx.DiGraph
        The same in the direction of flow (aortic root to periphery; the plantar loop
        from the plantar arch into the dorsalis pedis; grafts from inflow to outflow).

    Notes
    -----
    The tree keeps its own node and edge records; ``graph`` and ``directed`` are
    built from them on first use (networkx is imported then, so that ``vascplan
    tree`` starts fast). Treat every attribute as read-only.
    """

    def __init__(self, case: Case) -> None:
        self.case = case
        self._nodes: dict[str, dict[str, Any]] = {}
        self._edges: dict[frozenset[str], dict[str, Any]] = {}
        self._assumptions: list[str] = []
        self._graph: nx.Graph | None = None
        self._directed: nx.DiGraph | None = None

    def _add_node(self, node_id: str, attrs: dict[str, Any]) -> None:
        self._nodes[node_id] = attrs
        self._graph = self._directed = None

    def _add_edge(self, attrs: dict[str, Any]) -> None:
        self._edges[frozenset((attrs["parent"], attrs["child"]))] = attrs
        self._graph = self._directed = None

    def _build(self, graph: nx.Graph) -> nx.Graph:
        for node_id, attrs in self._nodes.items():
            graph.add_node(node_id, **attrs)
        for attrs in self._edges.values():
            graph.add_edge(attrs["parent"], attrs["child"], **attrs)
        return graph

    @property
    def graph(self) -> nx.Graph:
        """Undirected graph of the tree (built on first use)."""
        if self._graph is None:
            import networkx as nx

            self._graph = self._build(nx.Graph())
        return self._graph

    @property
    def directed(self) -> nx.DiGraph:
        """The tree in the direction of flow (built on first use)."""
        if self._directed is None:
            import networkx as nx

            self._directed = self._build(nx.DiGraph())
        return self._directed

    # -- lookup -----------------------------------------------------------------

    def segment(self, segment_id: str) -> dict[str, Any]:
        """The node attributes of a segment or graft node (module docstring)."""
        try:
            return self._nodes[segment_id]
        except KeyError:
            raise KeyError(f"no segment {segment_id!r} in this tree") from None

    def edge(self, a: str, b: str) -> dict[str, Any]:
        """The attributes of the edge joining ``a`` and ``b`` (either order)."""
        try:
            return self._edges[frozenset((a, b))]
        except KeyError:
            raise KeyError(f"{a!r} and {b!r} are not adjacent") from None

    def segment_ids(self) -> list[str]:
        """Native segment ids, in reference-table order (grafts excluded)."""
        return [n for n, attrs in self._nodes.items() if attrs["kind"] == "segment"]

    def graft_ids(self) -> list[str]:
        """Graft node ids (``GRAFT:<name>``), in case-file order."""
        return [n for n, attrs in self._nodes.items() if attrs["kind"] == "graft"]

    def path_to_root(self, segment_id: str) -> list[str]:
        """Segments from ``segment_id`` up its parents to the aortic root, inclusive.

        A graft's path continues from its inflow segment.

        >>> from vascplan.case.model import Case
        >>> tree = build_tree(Case.model_validate({"format": "vascplan-case/1",
        ...     "patient": {"ref": "DEMO-00", "sex": "male", "height_cm": 175}}))
        >>> tree.path_to_root("R-RAD")
        ['R-RAD', 'R-BRA', 'R-AXA', 'R-SCA', 'BCT', 'AO-ARCH', 'AO-ASC']
        """
        self.segment(segment_id)
        path = [segment_id]
        while (parent := self._nodes[path[-1]]["parent"]) is not None:
            path.append(parent)
        return path

    def junction(self, a: str, b: str) -> tuple[float, float]:
        """Where adjacent nodes ``a`` and ``b`` meet: ``(cm_on_a, cm_on_b)``.

        Raises
        ------
        KeyError
            ``a`` and ``b`` are not joined by an edge.
        """
        edge = self.edge(a, b)
        if edge["parent"] == a:
            return edge["parent_cm"], edge["child_cm"]
        return edge["child_cm"], edge["parent_cm"]

    # -- computations -----------------------------------------------------------

    def mld(self, segment_id: str, start_cm: float = 0.0, end_cm: float | None = None) -> float:
        """Minimal luminal diameter [mm] over a stretch of one segment.

        Parameters
        ----------
        segment_id : str
            Segment (or graft node) id.
        start_cm, end_cm : float
            The stretch, from the segment's origin [cm]; ``end_cm`` defaults to the
            segment's end. ``start_cm == end_cm`` asks for one point.

        Returns
        -------
        float
            The smallest of: the vessel diameter; ``d * (1 - stenosis_pct / 100)`` for
            every lesion overlapping the stretch (0 for an occlusion); the nominal
            diameter of every stent overlapping it. A graft that is not patent gives 0.

        Raises
        ------
        ValueError
            The stretch is reversed or leaves the segment.

        Notes
        -----
        Percent stenosis is percent *diameter* stenosis, the angiographic convention
        (common practice), applied to the vessel's own diameter (measured or
        reference). A stent's lumen is taken as its nominal diameter, strut thickness
        ignored (common practice); it limits the lumen only where it is narrower than
        the vessel. Intervals are closed: a lesion touching the stretch counts.

        Examples
        --------
        >>> from vascplan.case.model import Case
        >>> tree = build_tree(Case.model_validate({"format": "vascplan-case/1",
        ...     "patient": {"ref": "DEMO-00", "sex": "male", "height_cm": 175},
        ...     "vessels": {"L-SFA": {"diameter_mm": 6.0}},
        ...     "lesions": [{"segment": "L-SFA", "kind": "stenosis", "stenosis_pct": 50,
        ...                  "start_cm": 10, "length_cm": 3}]}))
        >>> tree.mld("L-SFA"), tree.mld("L-SFA", 0, 9.9), tree.mld("L-SFA", 13, 13)
        (3.0, 6.0, 3.0)
        """
        node = self.segment(segment_id)
        length_cm = node["length_cm"]
        end = length_cm if end_cm is None else end_cm
        if start_cm > end:
            raise ValueError(f"stretch on {segment_id} is reversed ({start_cm} > {end} cm)")
        if start_cm < -POSITION_TOLERANCE_CM or end > length_cm + POSITION_TOLERANCE_CM:
            raise ValueError(
                f"stretch {start_cm}-{end} cm leaves {segment_id} (0-{length_cm:.1f} cm)"
            )
        if node["kind"] == "graft" and not node["patent"]:
            return 0.0
        diameter = node["diameter_mm"]
        lumen = diameter
        for lesion in node["lesions"]:
            if lesion.start_cm <= end and lesion.end_cm >= start_cm:
                lumen = min(lumen, diameter * (1.0 - lesion.percent / 100.0))
        for stent in node["stents"]:
            if stent.start_cm <= end and stent.end_cm >= start_cm:
                lumen = min(lumen, stent.diameter_mm)
        return max(lumen, 0.0)

    def distance_cm(self, a: str, a_cm: float, b: str, b_cm: float) -> float:
        """Distance [cm] between two points along the native branches (no loop, no grafts).

        >>> from vascplan.case.model import Case
        >>> tree = build_tree(Case.model_validate({"format": "vascplan-case/1",
        ...     "patient": {"ref": "DEMO-00", "sex": "male", "height_cm": 175},
        ...     "vessels": {"L-CFA": {"length_cm": 4}, "L-SFA": {"length_cm": 30}}}))
        >>> tree.distance_cm("L-CFA", 1.0, "L-SFA", 10.0)   # 3 cm of CFA + 10 cm of SFA
        13.0
        """
        chain_a, chain_b = self.path_to_root(a), self.path_to_root(b)
        common = next(s for s in chain_a if s in set(chain_b))

        def climb(chain: list[str], x_cm: float) -> tuple[float, float]:
            # Distance from the point up to the common segment, and the position there.
            travelled, pos = 0.0, x_cm
            for below, above in zip(chain, chain[1:], strict=False):
                if below == common:
                    break
                travelled += pos
                pos = self.edge(below, above)["parent_cm"]
            return travelled, pos

        up_a, pos_a = climb(chain_a, a_cm)
        up_b, pos_b = climb(chain_b, b_cm)
        return up_a + up_b + abs(pos_a - pos_b)

    def assumptions(self) -> list[str]:
        """Every value taken from reference anatomy or a rule, as one sentence each."""
        return list(self._assumptions)


def _length_rule_text(ref: SegmentReference, height_cm: float) -> str:
    if ref.length_rule == "published":
        return f"published length {ref.published_length_cm:g} cm"
    return (
        f"height {height_cm:g} cm x {ref.body_segment} fraction {ref.body_fraction:g} "
        f"x share {ref.body_share:g}"
    )


def _diameter_text(ref: SegmentReference, sex: str) -> str:
    label = "mean of female and male means" if sex == "unspecified" else f"{sex} mean"
    return (
        f"{label} {ref.diameter_mean_mm(sex):.1f} mm, SD {ref.diameter_sd_mm(sex):.1f} mm, "
        f"source: {ref.diameter_source}"
    )


def build_tree(case: Case) -> ArterialTree:
    """Build the patient's annotated arterial tree from the reference table and the case.

    Parameters
    ----------
    case : Case
        A validated case (:func:`vascplan.case.load.load_case`).

    Returns
    -------
    ArterialTree
        Measured values override reference ones; each carries its provenance.

    Notes
    -----
    A graft's length is estimated as the distance between its two ends along the
    native arteries (:meth:`ArterialTree.distance_cm`); a real graft usually runs
    straighter, so this is an upper estimate and is listed among the assumptions.
    """
    ref = load_reference()
    sex, height_cm = case.patient.sex, case.patient.height_cm
    lengths = case.segment_lengths_cm()
    tree = ArterialTree(case)
    notes = tree._assumptions
    unstated_calcium = 0

    avoid: dict[str, list[str]] = {}
    for item in case.avoid:
        avoid.setdefault(item.site, []).append(item.reason)

    for seg_id, r in ref.items():
        measured = case.vessels.get(seg_id)
        m_diameter = measured.diameter_mm if measured else None
        m_length = measured.length_cm if measured else None
        m_calcium = measured.calcification if measured else None
        if m_diameter is None:
            notes.append(f"{seg_id} diameter is a reference value ({_diameter_text(r, sex)})")
        if m_length is None:
            notes.append(
                f"{seg_id} length is a reference estimate ({lengths[seg_id]:.1f} cm: "
                f"{_length_rule_text(r, height_cm)}; source: {r.length_source})"
            )
        if m_calcium is None:
            unstated_calcium += 1
        attrs = {
            "kind": "segment",
            "name": r.name,
            "side": r.side,
            "parent": r.parent,
            "diameter_mm": r.diameter_mean_mm(sex) if m_diameter is None else m_diameter,
            "diameter_source": REFERENCE if m_diameter is None else MEASURED,
            "diameter_sd_mm": r.diameter_sd_mm(sex) if m_diameter is None else None,
            "length_cm": lengths[seg_id],
            "length_source": REFERENCE if m_length is None else MEASURED,
            "calcification": m_calcium or "none",
            "calcification_source": REFERENCE if m_calcium is None else MEASURED,
            "lesions": sorted(
                (x for x in case.lesions if x.segment == seg_id), key=lambda x: x.start_cm
            ),
            "stents": sorted(
                (x for x in case.stents if x.segment == seg_id), key=lambda x: x.start_cm
            ),
            "avoid": avoid.get(seg_id, []),
        }
        tree._add_node(seg_id, attrs)
        if r.parent is not None:
            edge = {
                "kind": "branch",
                "parent": r.parent,
                "child": seg_id,
                "parent_cm": r.joins_fraction * lengths[r.parent],
                "child_cm": 0.0,
            }
            tree._add_edge(edge)

    for seg_id, r in ref.items():
        if r.loop_to is not None:
            edge = {
                "kind": "loop",
                "parent": seg_id,
                "child": r.loop_to,
                "parent_cm": lengths[seg_id],
                "child_cm": lengths[r.loop_to],
            }
            tree._add_edge(edge)

    if unstated_calcium:
        notes.append(
            f"Calcification is taken as none on {unstated_calcium} segments where the case "
            "does not state it"
        )
    if case.stents:
        notes.append(
            "A stent's lumen is taken as its nominal diameter, strut thickness ignored "
            "(common practice)"
        )

    for graft in case.grafts:
        _add_graft(tree, graft)
    return tree


def _add_graft(tree: ArterialTree, graft: Graft) -> None:
    node_id = graft_node_id(graft.name)
    length_cm = tree.distance_cm(graft.from_segment, graft.from_cm, graft.to_segment, graft.to_cm)
    side_from = tree.segment(graft.from_segment)["side"]
    side_to = tree.segment(graft.to_segment)["side"]
    ends = {
        "from": graft.from_segment,
        "from_cm": graft.from_cm,
        "to": graft.to_segment,
        "to_cm": graft.to_cm,
    }
    attrs = {
        "kind": "graft",
        "name": graft.name,
        "side": side_from if side_from == side_to else "midline",
        "parent": graft.from_segment,
        "diameter_mm": graft.diameter_mm,
        "diameter_source": MEASURED,
        "diameter_sd_mm": None,
        "length_cm": length_cm,
        "length_source": "estimate",
        "calcification": "none",
        "calcification_source": REFERENCE,
        "lesions": [],
        "stents": [],
        "avoid": [],
        "patent": graft.patent,
        **ends,
    }
    shared = {
        "kind": "graft",
        "name": graft.name,
        "diameter_mm": graft.diameter_mm,
        "patent": graft.patent,
        "length_cm": length_cm,
        **ends,
    }
    inflow = {
        **shared,
        "parent": graft.from_segment,
        "child": node_id,
        "parent_cm": graft.from_cm,
        "child_cm": 0.0,
    }
    outflow = {
        **shared,
        "parent": node_id,
        "child": graft.to_segment,
        "parent_cm": length_cm,
        "child_cm": graft.to_cm,
    }
    tree._add_node(node_id, attrs)
    tree._add_edge(inflow)
    tree._add_edge(outflow)
    tree._assumptions.append(
        f"{node_id} length is an estimate ({length_cm:.1f} cm: the distance between its ends "
        "along the native arteries, an upper estimate: a rule of this tool, not a measurement)"
    )
