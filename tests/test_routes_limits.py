"""Every hard limit triggered by a worked example; verdicts computed by hand.

Numbers from tests/routes_cases.py (measured), vascplan/data/access/sites.csv (puncture
points, skin depths) and vascplan/data/access/limits.yaml (sar_max 1.05, sar_max_calcified
1.00, outside_body_cm 10, puncture_zone_cm 1, crossover_origin_cm 1).
"""

from __future__ import annotations

import pytest

from tests.routes_cases import codes, make_case, routes_from
from vascplan.routes.limits import CHECKS, REASON_CODES
from vascplan.routes.plan import plan_case
from vascplan.routes.settings import LIMITS_FILE, load_table


def test_every_reason_code_has_a_check_and_a_meaning():
    assert [code for code, _ in CHECKS] == [
        "tried-before", "unreachable", "site-avoided", "site-diseased", "graft-anastomosis",
        "no-crossover",
        "occlusion-en-route", "unmeasured", "sheath-too-large", "device-too-large", "too-short",
        "sheath-too-long", "device-exceeds-sheath"]
    assert set(REASON_CODES) == {code for code, _ in CHECKS}


def test_sar_threshold_is_the_published_one():
    # Hayashida et al., JACC Cardiovasc Interv 2011;4:851: SFAR >= 1.05 predicted major
    # vascular complications (confirmed by Barbanti et al., EuroIntervention 2013).
    table = load_table(LIMITS_FILE)
    assert table["sar_max"].value == 1.05
    assert "Hayashida" in table["sar_max"].basis
    assert table["sar_max_calcified"].value < table["sar_max"].value


@pytest.mark.parametrize(("outer_mm", "blocked"), [(2.75, False), (2.85, True)])
def test_sheath_too_large_at_the_radial_threshold(outer_mm, blocked):
    # L-RAD 2.8 mm measured, judged against the radial limit 1.00 (Saito et al., Catheter
    # Cardiovasc Interv 1999;46:173: flow loss rose when sheath outer diameter exceeded
    # the radial inner diameter). SAR = 2.75 / 2.8 = 0.982 < 1.00: passes;
    # 2.85 / 2.8 = 1.018 >= 1.00: blocked at L-RAD. The 11 cm sheath stays in the radial
    # (11 - 0.5 skin = 10.5 cm of the 19.8 cm from the puncture to the radial origin).
    case = make_case(procedure={"sheath": {"size_fr": 6, "length_cm": 11, "outer_mm": outer_mm}})
    (route,) = routes_from(plan_case(case), "L-RAD")
    assert route.sar == pytest.approx(outer_mm / 2.8)
    assert route.limiting_segment == "L-RAD"
    assert route.sar_limit == 1.0 and "Saito" in route.sar_limit_source
    if blocked:
        assert ("sheath-too-large", "L-RAD") in codes(route)
        detail = route.blocked_by[codes(route).index(("sheath-too-large", "L-RAD"))].detail
        assert "SAR 1.02" in detail and "radial limit of 1.00" in detail and "Saito" in detail
    else:
        assert "sheath-too-large" not in [c for c, _ in codes(route)]


@pytest.mark.parametrize(("outer_mm", "blocked"), [(8.3, False), (8.4, True)])
def test_sheath_too_large_at_the_transfemoral_threshold(outer_mm, blocked):
    # R-CFA 8 mm measured, a 6 cm sheath (4 cm skin, 2 cm in the R-CFA): transfemoral
    # limit 1.05 (Hayashida et al., JACC Cardiovasc Interv 2011). 8.3 / 8 = 1.0375 < 1.05;
    # 8.4 / 8 = 1.05 >= 1.05: blocked.
    case = make_case(procedure={"sheath": {"size_fr": 24, "length_cm": 6, "outer_mm": outer_mm}})
    (route,) = routes_from(plan_case(case), "R-CFA", "retrograde")
    assert route.sar_limit == 1.05 and "Hayashida" in route.sar_limit_source
    assert (("sheath-too-large", "R-CFA") in codes(route)) is blocked


@pytest.mark.parametrize(("calcification", "blocked"), [("none", False), ("mild", False),
                                                        ("moderate", True), ("severe", True)])
def test_calcified_stretch_lowers_the_sar_limit(calcification, blocked):
    # R-CFA 8 mm, sheath outer 8.2 mm: SAR 1.025, under 1.05 but at or over 1.00, the
    # limit for a moderately or severely calcified stretch.
    case = make_case(vessels={"R-CFA": {"diameter_mm": 8, "calcification": calcification}},
                     procedure={"sheath": {"size_fr": 24, "length_cm": 6, "outer_mm": 8.2}})
    (route,) = routes_from(plan_case(case), "R-CFA", "retrograde")
    assert route.sar == pytest.approx(8.2 / 8)
    assert (("sheath-too-large", "R-CFA") in codes(route)) is blocked


def test_sheath_limit_override_from_the_case_and_the_caller():
    # L-RAD 2.8 mm, outer 2.7 mm: SAR 0.964, under the radial 1.00.
    case = make_case(procedure={"sheath": {"size_fr": 6, "length_cm": 11, "outer_mm": 2.7}},
                     limits={"sar_max_radial": 0.95})
    (route,) = routes_from(plan_case(case), "L-RAD")
    assert ("sheath-too-large", "L-RAD") in codes(route)          # 0.964 >= 0.95
    assert "set to 0.95 by TEST-01" in route.sar_limit_source  # the case overrode it
    (route,) = routes_from(plan_case(case, limits={"sar_max_radial": 1.1}), "L-RAD")
    assert "sheath-too-large" not in [c for c, _ in codes(route)]  # caller wins: 0.964 < 1.1


def test_device_too_large_beyond_the_sheath_tip():
    # Device 7 Fr = 2.33 mm outer. Target L-POP at 5; L-POP measured 2.2 mm: wider than the
    # vessel beyond the sheath tip (the 11 cm sheath ends 7 cm in: L-CFA 2 + L-SFA 5).
    case = make_case(vessels={"L-POP": {"diameter_mm": 2.2}},
                     procedure={"target": {"segment": "L-POP", "at_cm": 5},
                                "device": {"profile_fr": 7, "working_length_cm": 150}})
    (route,) = routes_from(plan_case(case), "L-CFA", "antegrade")
    # issue 12: the 7 Fr device (7 / 3 = 2.33 mm outer) does not pass the 6 Fr sheath
    # either (inner 6 / 3 = 2.00 mm, sheaths labelled by inner size, ISO 11070).
    assert codes(route) == [("device-too-large", "L-POP"), ("device-exceeds-sheath", "L-CFA")]
    assert route.margins["device_in_sheath_mm"] == pytest.approx(2.0 - 2.33, abs=0.01)


def test_target_lesion_is_excluded_and_other_stenoses_are_soft():
    # Device 6 Fr = 2 mm. Target: an 80% L-SFA stenosis at 10-14 (lumen 6 x 0.2 = 1.2 mm):
    # crossing it is the procedure, so no block. A second 80% stenosis at 20-22 cm on the
    # way to a target in L-POP would be a soft factor, never a block.
    case = make_case(lesions=[{"segment": "L-SFA", "kind": "stenosis", "stenosis_pct": 80,
                               "start_cm": 10, "length_cm": 4}])
    (route,) = routes_from(plan_case(case), "L-CFA", "antegrade")
    assert route.feasible
    case = make_case(lesions=[{"segment": "L-SFA", "kind": "stenosis", "stenosis_pct": 80,
                               "start_cm": 20, "length_cm": 2}],
                     procedure={"target": {"segment": "L-POP", "at_cm": 4}})
    (route,) = routes_from(plan_case(case), "L-CFA", "antegrade")
    assert route.feasible
    names = [f.name for f in route.factors]
    assert "stenosis_tighter_than_device" in names and "stenosis_en_route" in names


@pytest.mark.parametrize(("working_cm", "blocked"), [(150, False), (149, True)])
def test_too_short(working_cm, blocked):
    # R-RAD to L-SFA at 12 is 139.4 cm (test_routes_paths); + 10 cm outside = 149.4 cm.
    case = make_case(procedure={"device": {"profile_fr": 6, "working_length_cm": working_cm}})
    (route,) = routes_from(plan_case(case), "R-RAD")
    assert (("too-short", "L-SFA") in codes(route)) is blocked
    if blocked:
        assert "149.4 cm" in route.blocked_by[-1].detail


def test_occlusion_en_route():
    # An L-EIA occlusion blocks the up-and-over route from the right groin, not the
    # antegrade route from the left groin below it.
    case = make_case(lesions=[{"segment": "L-EIA", "kind": "occlusion", "start_cm": 3,
                               "length_cm": 4}])
    result = plan_case(case)
    (over,) = routes_from(result, "R-CFA", "retrograde")
    assert codes(over) == [("occlusion-en-route", "L-EIA")]
    (down,) = routes_from(result, "L-CFA", "antegrade")
    assert down.feasible


def test_target_occlusion_is_not_en_route():
    case = make_case(lesions=[{"segment": "L-SFA", "kind": "occlusion", "start_cm": 8,
                               "length_cm": 10, "proximal_cap": "tapered",
                               "distal_cap": "tapered"}])
    (down,) = routes_from(plan_case(case), "L-CFA", "antegrade")
    assert down.feasible and down.approach == "proximal-cap"


def test_site_avoided():
    case = make_case(avoid=[{"site": "L-CFA", "reason": "groin infection"}])
    for route in routes_from(plan_case(case), "L-CFA"):
        assert ("site-avoided", "L-CFA") in codes(route)
        assert "groin infection" in route.blocked_by[codes(route).index(
            ("site-avoided", "L-CFA"))].detail


@pytest.mark.parametrize(("start_cm", "diseased"), [(1.0, True), (2.5, True), (3.2, False)])
def test_site_diseased_by_a_stent_in_the_puncture_zone(start_cm, diseased):
    # L-CFA puncture at 2 cm; zone 1-3 cm. A stent from start_cm to the CFA end touches
    # the zone when it starts at or before 3 cm.
    case = make_case(stents=[{"segment": "L-CFA", "start_cm": start_cm,
                              "length_cm": 4 - start_cm, "diameter_mm": 8}])
    (route,) = routes_from(plan_case(case), "L-CFA", "antegrade")
    assert (("site-diseased", "L-CFA") in codes(route)) is diseased


def test_site_diseased_by_a_stenosis():
    case = make_case(lesions=[{"segment": "R-CFA", "kind": "stenosis", "stenosis_pct": 30,
                               "start_cm": 1.5, "length_cm": 1}])
    (route,) = routes_from(plan_case(case), "R-CFA", "retrograde")
    assert codes(route) == [("site-diseased", "R-CFA")]


def test_no_crossover_with_kissing_stents():
    stents = [{"segment": f"{s}-CIA", "start_cm": 0, "length_cm": 4, "diameter_mm": 9}
              for s in ("L", "R")]
    (over,) = routes_from(plan_case(make_case(stents=stents)), "R-CFA", "retrograde")
    assert codes(over) == [("no-crossover", "AO-INFRA")]
    assert "kissing stents" in over.blocked_by[0].detail
    # One stented side alone leaves the bifurcation free.
    (over,) = routes_from(plan_case(make_case(stents=stents[:1])), "R-CFA", "retrograde")
    assert over.feasible


def test_no_crossover_with_an_aortobifemoral_graft():
    grafts = [{"name": f"abf-{s}", "from": "AO-INFRA", "from_cm": 3, "to": f"{s}-CFA",
               "to_cm": 1, "diameter_mm": 8} for s in ("L", "R")]
    result = plan_case(make_case(grafts=grafts))
    crossing = [r for r in routes_from(result, "R-CFA", "retrograde")]
    assert crossing and all(("no-crossover", "AO-INFRA") in codes(r) for r in crossing)
    # the arm route down the aorta does not cross over: not blocked by it
    (arm,) = [r for r in routes_from(result, "L-AXA") if "GRAFT:abf-L" not in r.path][:1]
    assert "no-crossover" not in [c for c, _ in codes(arm)]


def test_unreachable():
    (route,) = routes_from(plan_case(make_case()), "L-CFA", "retrograde")
    assert codes(route) == [("unreachable", "L-CFA")]
    assert not route.feasible and route.path == ["L-CFA"]


def test_a_route_breaking_several_limits_lists_each():
    # R-RAD, 149 cm device, avoided: site-avoided and too-short, in registry order.
    case = make_case(avoid=[{"site": "R-RAD", "reason": "graft harvest"}],
                     procedure={"device": {"profile_fr": 6, "working_length_cm": 149}})
    (route,) = routes_from(plan_case(case), "R-RAD")
    assert codes(route) == [("site-avoided", "R-RAD"), ("too-short", "L-SFA")]


def test_sheath_stopping_at_a_calcified_target_keeps_the_published_limit():
    # L-SFA occlusion 2-12 cm, severely calcified; the vessels are not calcified.
    # L-CFA antegrade: puncture 0.5 x 4 = 2 cm, skin 4 cm; the 11 cm sheath has 7 cm
    # inside: L-CFA 2 cm + L-SFA 0-5 cm, cut short at the occlusion's edge (2 cm). The
    # stretch only touches the calcified lesion, so the limit stays sar_max 1.05
    # (Hayashida 2011), not sar_max_calcified 1.00.
    case = make_case(lesions=[{"segment": "L-SFA", "kind": "occlusion", "start_cm": 2,
                               "length_cm": 10, "calcification": "severe"}],
                     procedure={"target": {"segment": "L-SFA", "at_cm": 6}})
    (route,) = routes_from(plan_case(case), "L-CFA", "antegrade")
    assert route.sar_limit == pytest.approx(1.05)


@pytest.mark.parametrize("site", ["R-SFA", "R-POP", "R-ATA", "R-PTA", "R-PER", "R-DPA"])
def test_no_up_and_over_from_below_the_groin(site):
    # Target L-SFA. A puncture below the right groin serves the right leg; going up it and
    # over the bifurcation to the left leg is not a usable route (common practice;
    # sites.csv column crossover), so the site is unreachable, with the reason.
    result = plan_case(make_case())
    (route,) = routes_from(result, site, "retrograde")
    assert codes(route) == [("unreachable", site)]
    assert "offered only from the common femoral" in route.blocked_by[0].detail
    # the common femoral still goes up-and-over
    (cfa,) = routes_from(result, "R-CFA", "retrograde")
    assert cfa.feasible and "crossover" in [f.name for f in cfa.factors]


@pytest.mark.parametrize(("pct", "diseased"), [(10, False), (24, False), (25, True),
                                               (60, True)])
def test_minimal_plaque_at_the_puncture_scores_when_the_unit_allows_it(pct, diseased):
    # R-CFA puncture at 0.5 x 4 = 2 cm; zone 1-3 cm; plaque at 1.5-2.5 cm. With
    # puncture_plaque_max_pct raised to 25 (a unit that punctures beside minimal plaque)
    # a smaller plaque is not site-diseased but 1 point of puncture_plaque
    # (weights.yaml). From 25% on the site is diseased.
    case = make_case(lesions=[{"segment": "R-CFA", "kind": "stenosis", "stenosis_pct": pct,
                               "start_cm": 1.5, "length_cm": 1}])
    result = plan_case(case, limits={"puncture_plaque_max_pct": 25})
    (route,) = routes_from(result, "R-CFA", "retrograde")
    assert (("site-diseased", "R-CFA") in codes(route)) is diseased
    plaque = [f.points for f in route.factors if f.name == "puncture_plaque"]
    assert plaque == ([] if diseased else [1.0])


@pytest.mark.parametrize("pct", [10, 20, 60])
def test_any_stenosis_in_the_puncture_zone_blocks_by_default(pct):
    # Issue 3: site-diseased = stenosis, occlusion or stent in the puncture zone; the
    # default puncture_plaque_max_pct is 0 (limits.yaml), so even a 10% plaque blocks.
    case = make_case(lesions=[{"segment": "R-CFA", "kind": "stenosis", "stenosis_pct": pct,
                               "start_cm": 1.5, "length_cm": 1}])
    (route,) = routes_from(plan_case(case), "R-CFA", "retrograde")
    assert ("site-diseased", "R-CFA") in codes(route) and not route.feasible
