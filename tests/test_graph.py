"""The patient's arterial tree: provenance, junctions, MLD, grafts."""

from __future__ import annotations

import networkx as nx
import pytest

from vascplan.anatomy.graph import build_tree
from vascplan.case.model import Case
from vascplan.paths import examples_dir
from vascplan.refdata.anatomy import load_reference


def make_case(**extra) -> Case:
    data = {
        "format": "vascplan-case/1",
        "patient": {"ref": "DEMO-T", "sex": "female", "height_cm": 160},
    }
    data.update(extra)
    return Case.model_validate(data)


def test_measured_overrides_reference_with_provenance():
    tree = build_tree(make_case(vessels={"L-EIA": {"diameter_mm": 6.5, "length_cm": 11}}))
    node = tree.segment("L-EIA")
    assert (node["diameter_mm"], node["diameter_source"]) == (6.5, "measured")
    assert (node["length_cm"], node["length_source"]) == (11, "measured")
    other = tree.segment("R-EIA")
    assert other["diameter_source"] == "reference" and other["length_source"] == "reference"
    assert other["diameter_mm"] == load_reference()["R-EIA"].diameter_female_mean_mm
    text = "\n".join(tree.assumptions())
    # Iliac MLD in women 7.2 mm (Chiam et al., Int J Cardiol 2013;167:1373).
    assert "R-EIA diameter is a reference value (female mean 7.2 mm" in text
    assert "L-EIA diameter" not in text and "L-EIA length" not in text


def test_unspecified_sex_takes_mean_of_both():
    case = Case.model_validate(
        {
            "format": "vascplan-case/1",
            "patient": {"ref": "X", "sex": "unspecified", "height_cm": 170},
        }
    )
    # Kim 2022: infrarenal aorta women 15.9, men 18.4 mm -> 17.15 mm.
    assert build_tree(case).segment("AO-INFRA")["diameter_mm"] == pytest.approx(17.15)


def test_graph_is_connected_tree_plus_loops():
    tree = build_tree(make_case())
    g = tree.graph
    assert nx.is_connected(g)
    loops = [(a, b) for a, b, k in g.edges(data="kind") if k == "loop"]
    assert sorted(tuple(sorted(e)) for e in loops) == [("L-DPA", "L-PLA"), ("R-DPA", "R-PLA")]
    # 42 segments; a tree has n-1 edges, plus two loop edges.
    assert g.number_of_nodes() == 42 and g.number_of_edges() == 41 + 2
    assert nx.is_directed_acyclic_graph(tree.directed)
    assert set(nx.descendants(tree.directed, "AO-ASC")) == set(g) - {"AO-ASC"}


def test_junctions():
    tree = build_tree(
        make_case(vessels={"L-CFA": {"length_cm": 4.0}, "AO-ARCH": {"length_cm": 6.0}})
    )
    assert tree.junction("L-CFA", "L-SFA") == (4.0, 0.0)
    assert tree.junction("L-SFA", "L-CFA") == (0.0, 4.0)
    # L-SCA leaves the arch at 0.8 of its length (table joins_at).
    assert tree.junction("AO-ARCH", "L-SCA") == pytest.approx((4.8, 0.0))
    pla, dpa = tree.segment("L-PLA")["length_cm"], tree.segment("L-DPA")["length_cm"]
    assert tree.junction("L-PLA", "L-DPA") == (pla, dpa)
    with pytest.raises(KeyError):
        tree.junction("L-CFA", "R-CFA")


def test_path_to_root():
    tree = build_tree(make_case())
    assert tree.path_to_root("L-DPA") == [
        "L-DPA",
        "L-ATA",
        "L-POP",
        "L-SFA",
        "L-CFA",
        "L-EIA",
        "L-CIA",
        "AO-INFRA",
        "AO-SUPRA",
        "AO-DESC",
        "AO-ARCH",
        "AO-ASC",
    ]


def test_mld_by_hand():
    tree = build_tree(
        make_case(
            vessels={
                "L-SFA": {"diameter_mm": 6.0, "length_cm": 30},
                "R-CIA": {"diameter_mm": 10.0},
            },
            lesions=[
                {
                    "segment": "L-SFA",
                    "kind": "stenosis",
                    "stenosis_pct": 70,
                    "start_cm": 2,
                    "length_cm": 3,
                },
                {"segment": "L-SFA", "kind": "occlusion", "start_cm": 20, "length_cm": 5},
            ],
            stents=[{"segment": "R-CIA", "start_cm": 0, "length_cm": 4, "diameter_mm": 8}],
        )
    )
    assert tree.mld("L-SFA", 0, 1.9) == 6.0
    assert tree.mld("L-SFA", 0, 10) == pytest.approx(1.8)  # 6 * (1 - 0.70)
    assert tree.mld("L-SFA") == 0.0  # the occlusion
    assert tree.mld("L-SFA", 25, 25) == 0.0  # touching the occlusion's end
    assert tree.mld("L-SFA", 25.1, 30) == 6.0
    assert tree.mld("R-CIA", 0, 1) == 8.0  # stent narrower than vessel
    assert tree.mld("R-CIA", 5, 6) == 10.0
    with pytest.raises(ValueError, match="reversed"):
        tree.mld("L-SFA", 5, 4)
    with pytest.raises(ValueError, match="leaves L-SFA"):
        tree.mld("L-SFA", 0, 31)


def test_stent_wider_than_vessel_does_not_widen():
    tree = build_tree(
        make_case(
            vessels={"R-EIA": {"diameter_mm": 7.0}},
            stents=[{"segment": "R-EIA", "start_cm": 0, "length_cm": 4, "diameter_mm": 8}],
        )
    )
    assert tree.mld("R-EIA", 0, 2) == 7.0


def test_graft_node_and_length():
    case = make_case(
        vessels={"L-CFA": {"length_cm": 4.0}, "L-SFA": {"length_cm": 28.0}},
        grafts=[
            {
                "name": "fem-pop",
                "from": "L-CFA",
                "from_cm": 2,
                "to": "L-POP",
                "to_cm": 12,
                "diameter_mm": 6,
                "patent": True,
            }
        ],
    )
    tree = build_tree(case)
    node = tree.segment("GRAFT:fem-pop")
    # Along the native arteries: 2 cm left of the CFA, all 28 cm of SFA, 12 cm of POP.
    assert node["length_cm"] == pytest.approx(2 + 28 + 12)
    assert node["kind"] == "graft" and node["diameter_mm"] == 6 and node["patent"] is True
    assert tree.junction("L-CFA", "GRAFT:fem-pop") == (2, 0.0)
    assert tree.junction("GRAFT:fem-pop", "L-POP") == pytest.approx((42, 12))
    assert tree.graph.edges["GRAFT:fem-pop", "L-POP"]["kind"] == "graft"
    assert tree.directed.has_edge("GRAFT:fem-pop", "L-POP")
    assert not tree.directed.has_edge("L-POP", "GRAFT:fem-pop")
    assert tree.path_to_root("GRAFT:fem-pop")[:2] == ["GRAFT:fem-pop", "L-CFA"]
    assert any(a.startswith("GRAFT:fem-pop length is an estimate") for a in tree.assumptions())


def test_occluded_graft_has_no_lumen():
    tree = build_tree(
        make_case(
            grafts=[
                {
                    "name": "x",
                    "from": "L-CFA",
                    "from_cm": 1,
                    "to": "L-POP",
                    "to_cm": 1,
                    "diameter_mm": 6,
                    "patent": False,
                }
            ]
        )
    )
    assert tree.mld("GRAFT:x") == 0.0


def test_distance_across_the_bifurcation():
    tree = build_tree(
        make_case(
            vessels={
                "L-CIA": {"length_cm": 5},
                "R-CIA": {"length_cm": 6},
                "L-EIA": {"length_cm": 10},
                "R-EIA": {"length_cm": 9},
            }
        )
    )
    # From 2 cm down the left CFA to 1 cm down the right CFA: 2+10+5 + 6+9+1.
    assert tree.distance_cm("L-CFA", 2, "R-CFA", 1) == pytest.approx(33)
    assert tree.distance_cm("L-SFA", 3, "L-SFA", 10) == pytest.approx(7)


@pytest.mark.parametrize("path", sorted(examples_dir().glob("case-*.yaml")))
def test_examples_build(path):
    from vascplan.case.load import load_case

    tree = build_tree(load_case(path))
    assert nx.is_connected(tree.graph)
