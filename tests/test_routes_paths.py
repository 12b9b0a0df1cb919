"""Catheter paths and their lengths, worked by hand from tests/routes_cases.py.

Site puncture points and skin depths are from vascplan/data/access/sites.csv: CFA at 0.5 of
the segment with 4 cm of skin; radial at 0.9 with 0.5 cm; distal radial at 1.0.
"""

from __future__ import annotations

import pytest

from tests.routes_cases import codes, make_case, routes_from
from vascplan.refdata.sites import load_sites
from vascplan.routes.plan import plan_case


def test_crossover_path_and_length():
    # R-CFA retrograde to L-SFA at 12 cm, up-and-over:
    # skin 4 + R-CFA 2 (puncture at 0.5 x 4 cm, up to its origin) + R-EIA 10 + R-CIA 6
    # + AO-INFRA 0 (only its end, the bifurcation) + L-CIA 6 + L-EIA 10 + L-CFA 4
    # + L-SFA 12 = 54 cm.
    result = plan_case(make_case())
    (route,) = routes_from(result, "R-CFA", "retrograde")
    assert route.path == ["R-CFA", "R-EIA", "R-CIA", "AO-INFRA", "L-CIA", "L-EIA", "L-CFA",
                          "L-SFA"]
    assert route.length_cm == pytest.approx(54.0, abs=1e-3)
    assert route.feasible
    assert "crossover" in [f.name for f in route.factors]
    assert "over the bifurcation" in route.path_words


def test_antegrade_same_leg_partial_segments():
    # L-CFA antegrade: skin 4 + L-CFA 4 - 2 = 2 + L-SFA 12 = 18 cm.
    result = plan_case(make_case())
    (route,) = routes_from(result, "L-CFA", "antegrade")
    assert route.path == ["L-CFA", "L-SFA"]
    assert route.length_cm == pytest.approx(18.0, abs=1e-3)
    assert route.direction == "antegrade"


def test_retrograde_same_leg_is_unreachable():
    # Pointing up from the L-CFA the catheter cannot come back down the same leg.
    result = plan_case(make_case())
    (route,) = routes_from(result, "L-CFA", "retrograde")
    assert codes(route) == [("unreachable", "L-CFA")]
    assert route.length_cm is None


def test_arch_route_from_the_right_radial():
    # R-RAD retrograde: skin 0.5 + R-RAD 0.9 x 22 = 19.8 + R-BRA 25 + R-AXA 10 + R-SCA 6
    # + BCT 4 + AO-ARCH from the BCT origin (0.15 x 6 = 0.9 cm) to its end: 5.1
    # + AO-DESC 22 + AO-SUPRA 5 + AO-INFRA 10 + L-CIA 6 + L-EIA 10 + L-CFA 4 + L-SFA 12
    # = 139.4 cm.
    result = plan_case(make_case())
    (route,) = routes_from(result, "R-RAD")
    assert route.path[:7] == ["R-RAD", "R-BRA", "R-AXA", "R-SCA", "BCT", "AO-ARCH", "AO-DESC"]
    assert route.length_cm == pytest.approx(139.4, abs=1e-3)
    arch = [f for f in route.factors if f.name == "arch_traversal"]
    # weight 3 (weights.yaml) x (0.5 + 0.5 x 5.1/6) = 3 x 0.925 = 2.775
    assert arch and arch[0].points == pytest.approx(2.775, abs=1e-6)


def test_arch_route_from_the_left_arm_crosses_less_arch():
    # L-SCA joins the arch at 0.8 of it: 4.8 of 6 cm, so 1.2 cm of arch (20%).
    # L-RAD-DIST (at the end of L-RAD): 0.5 + 22 + 25 + 10 + 6 + 1.2 + 22 + 5 + 10 + 6 + 10
    # + 4 + 12 = 133.7 cm.
    result = plan_case(make_case())
    (route,) = routes_from(result, "L-RAD-DIST")
    assert route.length_cm == pytest.approx(133.7, abs=1e-3)
    arch = [f for f in route.factors if f.name == "arch_traversal"]
    # weight 3 (weights.yaml) x (0.5 + 0.5 x 0.2) = 1.8
    assert arch[0].points == pytest.approx(1.8, abs=1e-6)


def test_route_through_a_patent_graft():
    # Fem-pop graft from L-CFA 3.5 cm to L-POP 12 cm; the L-SFA is occluded 2-28 cm.
    # (3.5, not 3: the anastomosis must lie outside the 1 cm puncture zone about the
    # puncture at 2 cm, or the site is blocked as graft-anastomosis, issue 12.)
    # Target L-POP at 14. Native antegrade path: blocked by the SFA occlusion.
    # Through the graft: skin 4 + L-CFA 2->3.5 = 1.5 + graft (length = distance between
    # its ends along the native arteries: 0.5 + 30 + 12 = 42.5) + L-POP 12->14 = 2: 50 cm.
    case = make_case(
        grafts=[{"name": "fem-pop", "from": "L-CFA", "from_cm": 3.5, "to": "L-POP",
                 "to_cm": 12, "diameter_mm": 6}],
        lesions=[{"segment": "L-SFA", "kind": "occlusion", "start_cm": 2, "length_cm": 26}],
        procedure={"target": {"segment": "L-POP", "at_cm": 14}},
    )
    result = plan_case(case)
    routes = routes_from(result, "L-CFA", "antegrade")
    by_path = {tuple(r.path): r for r in routes}
    graft = by_path[("L-CFA", "GRAFT:fem-pop", "L-POP")]
    native = by_path[("L-CFA", "L-SFA", "L-POP")]
    assert graft.feasible and graft.length_cm == pytest.approx(50.0, abs=1e-3)
    assert codes(native) == [("occlusion-en-route", "L-SFA")]
    assert "graft_traversal" in [f.name for f in graft.factors]


def test_graft_that_is_not_patent_is_not_used():
    case = make_case(
        grafts=[{"name": "fem-pop", "from": "L-CFA", "from_cm": 3, "to": "L-POP",
                 "to_cm": 12, "diameter_mm": 6, "patent": False}],
        procedure={"target": {"segment": "L-POP", "at_cm": 14}},
    )
    result = plan_case(case)
    assert all("GRAFT:fem-pop" not in r.path for r in result.routes)


def test_round_the_pedal_loop_to_the_distal_cap():
    # L-PTA occluded 5-20 cm; target L-PTA at 12 (in the occlusion).
    # L-CFA antegrade round the loop: skin 4 + L-CFA 2 + L-SFA 30 + L-POP 16 + L-ATA 30
    # + L-DPA 7 + L-PLA 6 + L-PTA from its end (30) back to 12: 18 = 113 cm, arriving at
    # the distal cap. The direct path through the tibioperoneal trunk arrives at the
    # proximal cap: 4 + 2 + 30 + 16 + TPT (published 2.5 cm, not measured) + 12.
    case = make_case(
        lesions=[{"segment": "L-PTA", "kind": "occlusion", "start_cm": 5, "length_cm": 15,
                  "proximal_cap": "flush", "distal_cap": "tapered"}],
        procedure={"target": {"segment": "L-PTA", "at_cm": 12},
                   "device": {"profile_fr": 4, "working_length_cm": 150},
                   "sheath": {"size_fr": 4, "length_cm": 11, "outer_mm": 1.9}},
    )
    result = plan_case(case)
    routes = routes_from(result, "L-CFA", "antegrade")
    loop = next(r for r in routes if "L-PLA" in r.path)
    assert loop.path == ["L-CFA", "L-SFA", "L-POP", "L-ATA", "L-DPA", "L-PLA", "L-PTA"]
    assert loop.length_cm == pytest.approx(113.0, abs=1e-3)
    assert loop.approach == "distal-cap"
    # weights.yaml pedal_loop: 2 points
    assert [f.points for f in loop.factors if f.name == "pedal_loop"] == [2.0]
    direct = next(r for r in routes if "L-TPT" in r.path)
    assert direct.approach == "proximal-cap"
    assert direct.length_cm == pytest.approx(4 + 2 + 30 + 16 + 2.5 + 12, abs=1e-3)
    # The flush proximal cap costs the direct route 2.5 points (weights.yaml cap_flush).
    assert [f.points for f in direct.factors if f.name == "cap_flush"] == [2.5]


def test_every_catalogue_site_is_planned_and_both_sides_exist():
    sites = load_sites()
    for side in ("L", "R"):
        for kind in ("CFA", "RAD", "RAD-DIST", "BRA", "AXA", "SFA", "POP", "ATA", "PTA",
                     "PER", "DPA"):
            assert f"{side}-{kind}" in sites
    result = plan_case(make_case())
    planned = {(r.site, r.direction) for r in result.routes}
    expected = {(s.id, d) for s in sites.values() for d in s.directions}
    assert planned == expected


def test_ranking_feasible_first_then_role_tier_score():
    # Issue 12: feasible first, then therapeutic before crossing, then the tier of the
    # ordering rules (data/access/order.yaml; common practice), then the score.
    result = plan_case(make_case())
    flags = [r.feasible for r in result.routes]
    assert flags == sorted(flags, reverse=True)
    feasible = [(r.role != "therapeutic", r.tier, round(r.score, 6))
                for r in result.routes if r.feasible]
    assert feasible == sorted(feasible)
    groups: dict = {}
    for r in result.routes:
        if r.feasible:
            groups.setdefault((r.role, r.tier), []).append(r.score)
    assert all(v == sorted(v) for v in groups.values())
    assert [r.rank for r in result.routes] == list(range(1, len(result.routes) + 1))


# Anthropometric proportions (Drillis & Contini 1966 as tabulated in Winter,
# Biomechanics and Motor Control of Human Movement, 4th ed. 2009, Fig. 4.1):
# thigh 0.245 H + leg 0.246 H = 0.491 H from the hip joint to the ankle; upper arm
# 0.186 H + forearm 0.146 H = 0.332 H from the shoulder joint to the wrist.
# The arteries follow the limbs, so an arterial path with reference lengths should
# span the limb within 10% (the CFA origin lies a little above the hip joint and the
# axillary origin a little medial to the shoulder: the tolerance covers both).


def _reference_case(height_cm: float, target: dict):
    from vascplan.case.load import validate_case

    return validate_case("anthro", {
        "format": "vascplan-case/1",
        "patient": {"ref": "ANTHRO", "sex": "male", "height_cm": height_cm},
        "procedure": {"purpose": "treat", "target": target,
                      "sheath": {"size_fr": 4, "length_cm": 10, "outer_mm": 1.9},
                      "device": {"profile_fr": 3, "working_length_cm": 300}},
    })


@pytest.mark.parametrize("height_cm", [155.0, 175.0, 195.0])
def test_leg_path_spans_thigh_and_leg(height_cm):
    from vascplan.case.model import Case

    probe = _reference_case(height_cm, {"segment": "L-ATA", "at_cm": 1})
    ata_cm = Case.segment_lengths_cm(probe)["L-ATA"]
    case = _reference_case(height_cm, {"segment": "L-ATA", "at_cm": ata_cm})
    site = load_sites()["L-CFA"]
    # the shortest path (the others go round the pedal loop)
    route = min(routes_from(plan_case(case), "L-CFA", "antegrade"), key=lambda r: r.length_cm)
    assert route.path == ["L-CFA", "L-SFA", "L-POP", "L-ATA"]
    cfa_cm = Case.segment_lengths_cm(case)["L-CFA"]
    from_cfa_origin = route.length_cm - site.skin_depth_cm + site.puncture_fraction * cfa_cm
    assert from_cfa_origin == pytest.approx(0.491 * height_cm, rel=0.10)


@pytest.mark.parametrize("height_cm", [155.0, 175.0, 195.0])
def test_arm_path_spans_forearm_and_upper_arm(height_cm):
    # From the distal radial (the wrist) to the axillary origin (the shoulder).
    case = _reference_case(height_cm, {"segment": "R-AXA", "at_cm": 0})
    (route,) = routes_from(plan_case(case), "R-RAD-DIST")
    site = load_sites()["R-RAD-DIST"]
    assert route.length_cm - site.skin_depth_cm == pytest.approx(0.332 * height_cm, rel=0.10)


def _brute_force_lengths(tree, segment, puncture_cm, direction, target, target_cm):
    """Every simple path of the segment graph, its length worked from the junctions.

    An independent method: networkx's enumeration of all simple paths on the tree's own
    segment graph, lengths summed from ``tree.junction`` positions, against the planner's
    k best on its point graph.
    """
    import networkx as nx

    out = []
    for nodes in nx.all_simple_paths(tree.graph, segment, target):
        pos = puncture_cm
        total = 0.0
        first_exit = None
        for a, b in zip(nodes, nodes[1:], strict=False):
            exit_a, entry_b = tree.junction(a, b)
            first_exit = exit_a if first_exit is None else first_exit
            total += abs(exit_a - pos)
            pos = entry_b
        total += abs(target_cm - pos)
        if (first_exit > puncture_cm) == (direction == "antegrade"):
            out.append(total)
    return sorted(out)


@pytest.mark.parametrize(("site_id", "direction"), [("L-CFA", "antegrade"),
                                                    ("R-CFA", "retrograde"),
                                                    ("L-AXA", "retrograde")])
def test_k_best_agrees_with_brute_force_enumeration(site_id, direction):
    from vascplan.anatomy.graph import build_tree

    # A graft and both pedal loops give several simple paths to a left posterior tibial
    # target; the planner's k best lengths are the k smallest of the enumeration.
    case = make_case(
        grafts=[{"name": "fem-pop", "from": "L-CFA", "from_cm": 3, "to": "L-POP",
                 "to_cm": 12, "diameter_mm": 6}],
        procedure={"target": {"segment": "L-PTA", "at_cm": 12}},
    )
    tree = build_tree(case)
    site = load_sites()[site_id]
    puncture = site.puncture_cm(tree.graph.nodes[site.segment]["length_cm"])
    expected = _brute_force_lengths(tree, site.segment, puncture, direction, "L-PTA", 12)
    got = sorted(r.length_cm - site.skin_depth_cm
                 for r in routes_from(plan_case(case), site_id, direction))
    assert len(expected) >= 3
    assert got == pytest.approx(expected[:3], abs=1e-3)


def test_only_the_common_femoral_goes_up_and_over():
    # Up-and-over the aortic bifurcation is a common femoral technique (common practice):
    # the catalogue allows it there only, and every value has its source.
    sites = load_sites()
    assert {s.id for s in sites.values() if s.crossover} == {"L-CFA", "R-CFA"}
    assert all(s.sources["crossover"] for s in sites.values())


def test_antegrade_brachial_reaches_the_forearm():
    # Target L-RAD at 5 cm (a forearm lesion). L-BRA antegrade: puncture 0.9 x 25 =
    # 22.5 cm, skin 1 cm: 1 + (25 - 22.5) + 5 = 8.5 cm, down the arm. Retrograde from the
    # brachial points away from the forearm: unreachable. (Lengths: tests/routes_cases.py.)
    # A 4 cm sheath for this access (issue 12: the 11 cm one would pass the target).
    case = make_case(procedure={"target": {"segment": "L-RAD", "at_cm": 5},
                                "access_equipment": [{"site": "L-BRA", "size_fr": 6,
                                                      "length_cm": 4, "outer_mm": 2.6}]})
    result = plan_case(case)
    (down,) = routes_from(result, "L-BRA", "antegrade")
    assert down.path == ["L-BRA", "L-RAD"] and down.feasible
    assert down.length_cm == pytest.approx(8.5, abs=1e-3)
    (up,) = routes_from(result, "L-BRA", "retrograde")
    assert [b.code for b in up.blocked_by] == ["unreachable"]
