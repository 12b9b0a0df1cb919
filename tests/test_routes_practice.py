"""Issue 12: the planner ranks as an interventionalist plans.

Invented practice cases on the hand-checkable man of tests/routes_cases.py (175 cm, every
segment measured: CFA 4 cm x 8 mm, SFA 30 cm x 6 mm, POP 16 cm x 5 mm, ATA/PTA 30 cm x
3 mm, EIA 10 cm x 7 mm, AXA 10 cm x 6 mm, BRA 25 cm x 4.5 mm, RAD 22 cm x 2.8 mm; 6 Fr
11 cm sheath, outer 2.6 mm; 6 Fr device, 150 cm). Each test names the published
statement or the common practice behind its expected order.
"""

from __future__ import annotations

import json
from typing import Any

import pytest
from click.testing import CliRunner

from tests.routes_cases import case_data, codes, make_case, routes_from
from vascplan.case.load import validate_case
from vascplan.routes.plan import plan_case
from vascplan.routes.table import render_plan

SFA_OCCLUSION = {"segment": "L-SFA", "kind": "occlusion", "start_cm": 4, "length_cm": 18,
                 "proximal_cap": "tapered", "distal_cap": "tapered"}
SHORT_ANTEGRADE = {"site": "L-CFA", "direction": "antegrade", "size_fr": 6, "length_cm": 7,
                   "outer_mm": 2.6}


def _sfa_case(**changes: Any):
    proc = {"target": {"segment": "L-SFA", "at_cm": 12},
            "access_equipment": [SHORT_ANTEGRADE]}
    proc.update(changes.pop("procedure", {}))
    lesions = changes.pop("lesions", [SFA_OCCLUSION])
    return make_case(lesions=lesions, procedure=proc, **changes)


def _first_feasible(result) -> Any:
    return next(r for r in result.routes if r.feasible)


def _codes_of(route) -> list[str]:
    return [c for c, _ in codes(route)]


# 1 -----------------------------------------------------------------------------------
def test_sfa_occlusion_antegrade_first_then_up_and_over_then_crossing_accesses():
    # Common practice: an SFA occlusion is treated from the ipsilateral antegrade common
    # femoral first, the contralateral up-and-over second; retrograde popliteal, tibial
    # or pedal punctures are crossing accesses (a wire and a catheter) used after a
    # failed antegrade attempt or with it, never the primary access.
    result = plan_case(_sfa_case())
    first = _first_feasible(result)
    assert (first.site, first.direction, first.role) == ("L-CFA", "antegrade", "therapeutic")
    (cross,) = routes_from(result, "R-CFA", "retrograde")
    assert cross.feasible and cross.role == "therapeutic"
    crossing = [r for r in result.routes if r.feasible and r.role == "crossing"]
    assert {r.site for r in crossing} >= {"L-ATA", "L-PTA", "L-POP"}
    assert all(cross.rank < r.rank for r in crossing)
    # The tibial crossing access assumes its own equipment, not the procedure's 6 Fr sheath:
    # sheathless 2.9 Fr outer (data/access/equipment.yaml; sites.csv "sheathless 2.9-4 Fr").
    (ata,) = [r for r in crossing if r.site == "L-ATA"]
    assert ata.equipment["sheathless"] and ata.equipment["default"]
    assert ata.equipment["size_fr"] == 2.9
    # SAR = (2.9 / 3) mm / 3.0 mm ATA = 0.3222 (1 Fr = 1/3 mm, outer label)
    assert ata.sar == pytest.approx(2.9 / 3 / 3.0, abs=1e-6)
    assert first.equipment == {"size_fr": 6, "label": "inner", "length_cm": 7,
                               "sheathless": False, "default": False,
                               "basis": "stated in the case file (procedure.access_equipment)"}


# 2 -----------------------------------------------------------------------------------
def test_failed_antegrade_attempt_is_blocked_with_its_reason_unless_asked_again():
    # Common practice: after a failed antegrade crossing the next plan is the
    # contralateral up-and-over (or a retrograde crossing access), not the same attempt.
    tried = [{"site": "L-CFA", "direction": "antegrade", "outcome": "failed",
              "reason": "could not cross the proximal cap"}]
    result = plan_case(_sfa_case(access_tried=tried))
    (ante,) = routes_from(result, "L-CFA", "antegrade")
    assert not ante.feasible and _codes_of(ante)[0] == "tried-before"
    assert "could not cross the proximal cap" in ante.blocked_by[0].detail
    first = _first_feasible(result)
    assert (first.site, first.direction) == ("R-CFA", "retrograde")
    again = [{**tried[0], "retry": True}]
    (ante,) = routes_from(plan_case(_sfa_case(access_tried=again)), "L-CFA", "antegrade")
    assert ante.feasible


# 3 -----------------------------------------------------------------------------------
def test_in_stent_occlusion_of_the_sfa_is_treated_from_the_same_groin():
    # Common practice: an in-stent occlusion of the SFA is approached antegrade from the
    # ipsilateral common femoral (or up-and-over), the stent lying well below the groin.
    stent = {"segment": "L-SFA", "start_cm": 4, "length_cm": 18, "diameter_mm": 6}
    result = plan_case(_sfa_case(stents=[stent]))
    first = _first_feasible(result)
    assert (first.site, first.direction) == ("L-CFA", "antegrade")
    (sfa,) = routes_from(result, "L-SFA", "retrograde")
    assert "site-diseased" in _codes_of(sfa) or not sfa.feasible


# 4 -----------------------------------------------------------------------------------
def test_femoral_puncture_at_a_graft_anastomosis_is_blocked():
    # Common practice: a suture line is not punctured (pseudoaneurysm, graft damage). A
    # fem-pop graft sewn to the L-CFA at 2 cm, the usual puncture point (0.5 x 4 cm): the
    # left groin is blocked as graft-anastomosis; the right groin goes up and over.
    graft = {"name": "fp", "from": "L-CFA", "from_cm": 2, "to": "L-POP", "to_cm": 12,
             "diameter_mm": 6}
    occl = {**SFA_OCCLUSION, "start_cm": 1, "length_cm": 28}
    case = make_case(lesions=[occl], grafts=[graft],
                     procedure={"target": {"segment": "L-POP", "at_cm": 14}})
    result = plan_case(case)
    for route in routes_from(result, "L-CFA"):
        if route.length_cm is not None:
            assert ("graft-anastomosis", "L-CFA") in codes(route)
    first = _first_feasible(result)
    assert (first.site, first.direction) == ("R-CFA", "retrograde")
    # Moved 2.5 cm off the puncture (outside the 1 cm zone, within 3 cm): a soft factor.
    graft["from_cm"] = 4.0
    graft_near = make_case(lesions=[occl], grafts=[graft],
                           procedure={"target": {"segment": "L-POP", "at_cm": 14}})
    (ante,) = [r for r in routes_from(plan_case(graft_near), "L-CFA", "antegrade")
               if "GRAFT:fp" in r.path][:1]
    assert "graft-anastomosis" not in _codes_of(ante)
    assert "graft_anastomosis_near" in [f.name for f in ante.factors]


# 5 -----------------------------------------------------------------------------------
def test_large_bore_with_hostile_iliacs_goes_transaxillary():
    # 18 Fr sheath (outer 7.0 mm) to the ascending aorta; both EIAs 5.5 mm: SAR 7.0 / 5.5
    # = 1.27 >= 1.05 (Hayashida et al. 2011): both groins blocked. Axillary 6 mm: 7.0 /
    # 6.0 = 1.17 < 1.27 (van der Wulp et al., EuroIntervention, doi
    # 10.4244/EIJ-D-19-00588). Transaxillary access is the usual alternative when the
    # iliofemoral route is hostile (meta-analysis PMC9718962; common practice).
    case = make_case(vessels={"L-EIA": {"diameter_mm": 5.5}, "R-EIA": {"diameter_mm": 5.5}},
                     procedure={"target": {"segment": "AO-ASC", "at_cm": 2},
                                "sheath": {"size_fr": 18, "length_cm": 14, "outer_mm": 7.0},
                                "device": {"profile_fr": 18, "working_length_cm": 150}})
    result = plan_case(case)
    first = _first_feasible(result)
    assert first.site in ("L-AXA", "R-AXA") and first.tier == 1  # large-bore: tier 1
    for site in ("L-CFA", "R-CFA"):
        route = routes_from(result, site, "retrograde")[0]
        assert ("sheath-too-large", f"{site[0]}-EIA") in codes(route)
    assert first.sar == pytest.approx(7.0 / 6.0, abs=1e-9)


# 6 -----------------------------------------------------------------------------------
def test_six_french_elective_arm_access_takes_brachial_before_axillary():
    # Both groins unusable. For a 6 Fr sheath from the arm the radial or brachial is the
    # usual choice; the axillary is kept for large-bore (radial/brachial take up to about
    # 7 Fr, axillary up to 18 Fr: Tayal et al., Int J Vasc Med 2016;2016:3610705).
    avoid = [{"site": "L-CFA", "reason": "groin infection"},
             {"site": "R-CFA", "reason": "groin infection"}]
    result = plan_case(make_case(avoid=avoid))
    feasible = [r for r in result.routes if r.feasible]
    brachial = [r for r in feasible if r.segment.endswith("-BRA")]
    axillary = [r for r in feasible if r.segment.endswith("-AXA")]
    assert brachial and axillary
    assert max(r.rank for r in brachial) < min(r.rank for r in axillary)
    assert all(r.tier == 2 for r in axillary)
    assert any("Tayal" in line for line in axillary[0].ordering)


# 7 -----------------------------------------------------------------------------------
def test_a_sheath_already_in_place_is_used_without_a_new_puncture():
    # Common practice: a femoral sheath left from coronary angiography is exchanged over a
    # wire rather than puncturing again; the route says so and counts no site risk.
    in_place = [{"site": "R-CFA", "what": "6 Fr sheath after coronary angiography",
                 "since": "2026-12-01T06:00"}]
    result = plan_case(make_case(access_in_place=in_place))
    (route,) = routes_from(result, "R-CFA", "retrograde")
    assert route.in_place == "6 Fr sheath after coronary angiography since 2026-12-01T06:00"
    names = [f.name for f in route.factors]
    assert "access_in_place" in names and "site_risk" not in names
    assert route.tier == 0 and route is _first_feasible(result)
    table = render_plan(result.to_dict())
    assert "no new puncture" in table


# 8 -----------------------------------------------------------------------------------
def test_a_sheath_too_long_for_the_target_gives_the_longest_that_would_do():
    # The SFA occlusion starts 4 cm into the SFA; antegrade puncture at 0.5 x 4 = 2 cm of
    # the CFA: 2 + 4 = 6 cm of artery before the lesion. The 11 cm sheath, 4 cm of skin,
    # has 7 cm inside: its tip passes the lesion by 1 cm. With 2 cm of working room
    # (limits.yaml working_room_cm, common practice) the longest sheath is 4 + 6 - 2 = 8 cm.
    case = make_case(lesions=[SFA_OCCLUSION],
                     procedure={"target": {"segment": "L-SFA", "at_cm": 12}})
    (ante,) = routes_from(plan_case(case), "L-CFA", "antegrade")
    (block,) = [b for b in ante.blocked_by if b.code == "sheath-too-long"]
    assert "passes the target lesion by 1.0 cm" in block.detail
    assert block.detail.endswith("the longest sheath that would do is 8 cm")
    assert ante.margins["working_room_cm"] == pytest.approx(6 - 7 - 2)
    row = render_plan(plan_case(case).to_dict())
    assert "sheath-too-long: the longest sheath that would do is 8 cm" in row


# 9 -----------------------------------------------------------------------------------
def test_a_device_too_big_for_the_sheath_is_blocked_on_therapeutic_routes_only():
    # 7 Fr device: 7 / 3 = 2.33 mm outer; 6 Fr sheath: 6 / 3 = 2.00 mm inner (ISO 11070
    # labels sheaths by inner size): 0.33 mm too large. A crossing access carries a wire
    # and a catheter, not the device.
    result = plan_case(_sfa_case(procedure={"device": {"profile_fr": 7,
                                                       "working_length_cm": 150}}))
    for route in result.routes:
        if route.length_cm is None:
            continue
        has = "device-exceeds-sheath" in _codes_of(route)
        assert has is (route.role == "therapeutic"), route.site
        if has:
            assert route.margins["device_in_sheath_mm"] == pytest.approx(2.0 - 7 / 3,
                                                                         abs=0.005)
    table = render_plan(result.to_dict())
    assert "device-exceeds-sheath: 0.33 mm over the sheath's inner diameter" in table


# 10 ----------------------------------------------------------------------------------
def test_a_tall_patients_radial_route_runs_short():
    # From the radial, shafts of about 200 cm reach iliac and femoral disease (a 2023
    # practice review, data/access/sites.csv): a 150 cm shaft reaching the mid-SFA from
    # the wrist is short, more so in a tall patient. Lengths here scale with height
    # (reference lengths; no arm or trunk length measured).
    def plan(height: float):
        data = case_data(patient={"height_cm": height})
        for seg in list(data["vessels"]):
            data["vessels"][seg].pop("length_cm", None)
        return plan_case(validate_case("test-case", data))

    (tall,) = routes_from(plan(200), "L-RAD", "retrograde")
    (short,) = routes_from(plan(150), "L-RAD", "retrograde")
    assert "too-short" in _codes_of(tall)
    # shaft margin = 150 - (path + 10 cm outside), negative, and worse when taller
    assert tall.margins["shaft_cm"] < 0
    assert tall.margins["shaft_cm"] < short.margins["shaft_cm"]
    assert tall.margins["shaft_cm"] == pytest.approx(150 - tall.length_cm - 10, abs=0.06)
    row = render_plan(plan(200).to_dict())
    assert f"too-short: shaft {-tall.margins['shaft_cm']:.0f} cm short" in row


# 11 ----------------------------------------------------------------------------------
def test_pairs_only_with_ends_practitioners_use():
    # Common practice: dual access pairs an antegrade (or up-and-over) therapeutic access
    # to the proximal cap with a retrograde crossing access straight up to the distal cap;
    # not round the pedal loop, not "up the peroneal, down the posterior tibial", and not
    # from an axillary puncture for a 6 Fr case.
    result = plan_case(_sfa_case())
    assert result.pairs
    for pair in result.pairs:
        assert pair.proximal.role == "therapeutic" and pair.proximal.tier <= 1
        assert not any(leg.node.endswith("-PLA") for leg in pair.distal.legs)
        assert all(leg.with_flow is not True for leg in pair.distal.legs)
    assert result.pairs[0].proximal.site == "L-CFA"
    assert result.pairs_left_out > 0


# 12 ----------------------------------------------------------------------------------
def test_an_arterial_line_in_the_radial_is_reused_when_the_radial_route_works():
    # Common practice: an arterial line in the radial is exchanged over a wire for the
    # sheath if the radial takes it (6 Fr outer 2.6 mm in 2.8 mm: SAR 0.93 under 1.00,
    # Saito et al. 1999); the target here is in the arm's own reach (the left subclavian).
    in_place = [{"site": "L-RAD", "what": "arterial line 20 G"}]
    case = make_case(access_in_place=in_place,
                     procedure={"target": {"segment": "L-SCA", "at_cm": 3},
                                "sheath": {"size_fr": 6, "length_cm": 11, "outer_mm": 2.6}})
    result = plan_case(case)
    (rad,) = routes_from(result, "L-RAD", "retrograde")
    assert rad.feasible and rad.in_place == "arterial line 20 G"
    assert rad is _first_feasible(result)


# default view, JSON and schema ------------------------------------------------------
def test_the_default_view_lists_routes_with_a_path_once_and_all_adds_the_rest():
    case = _sfa_case()
    every = plan_case(case)
    shown = plan_case(case, all_routes=False)
    keys = [(r.site, r.direction) for r in shown.routes]
    assert len(keys) == len(set(keys))
    assert all(r.length_cm is not None for r in shown.routes)
    assert shown.routes_left_out == len(every.routes) - len(shown.routes) > 0
    assert [r.rank for r in shown.routes] == list(range(1, len(shown.routes) + 1))
    assert any(r.length_cm is None for r in every.routes)


def _cli_plan(*args: str) -> dict:
    from vascplan.cli import cli

    res = CliRunner().invoke(cli, ["plan", *args, "--format", "json"])
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


@pytest.mark.parametrize("name", ["case-DEMO-07-sfa-occlusion.yaml",
                                  "case-DEMO-12-support-small-iliac.yaml",
                                  "case-DEMO-21-graft-and-pedal.yaml"])
def test_plan_json_validates_against_its_schema(name):
    jsonschema = pytest.importorskip("jsonschema")
    from vascplan.paths import examples_dir
    from vascplan.routes.plan_schema import plan_json_schema

    schema = plan_json_schema()
    path = str(examples_dir() / name)
    default = _cli_plan(path)
    everything = _cli_plan(path, "--all")
    for doc in (default, everything):
        jsonschema.validate(doc, schema)
        for r in doc["routes"]:
            assert set(r["equipment"]) >= {"size_fr", "label", "length_cm", "sheathless",
                                           "default"}
            assert r["role"] in ("therapeutic", "crossing")
    assert all(r["length_cm"] is not None for r in default["routes"])
    assert len(everything["routes"]) == len(default["routes"]) + default["routes_left_out"]
    assert everything["routes_left_out"] == 0
    broken = dict(default, routes=[dict(default["routes"][0], role="primary")])
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(broken, schema)


# 13 ----------------------------------------------------------------------------------
def test_obese_patient_radial_against_femoral():
    # An iliac target (L-CIA 70% stenosis) reachable from the left radial (measured 3.2 mm:
    # 6 Fr outer 2.6 / 3.2 = 0.81, under the radial 1.00 of Saito et al. 1999).
    # Lean (70 kg, 175 cm: BMI 70 / 1.75^2 = 22.9): the open common femoral comes first
    # (femoral-first, common practice). BMI 130 / 1.75^2 = 42.4 (40 or more): transfemoral
    # access had more bleeding and access-site complications than transradial (7.5% vs
    # 2.0%, Hibbert B et al., JACC Cardiovasc Interv 2012;5:819): femoral-first is lifted and
    # the femoral scores severe_obesity_femoral (2 points, weights.yaml): the radial leads.
    # BMI 115 / 1.75^2 = 37.6 (35-40, TROP registry): femoral still first, +1 point, and the
    # groin 2 cm deeper (limits.yaml obese_groin_extra_cm): L-CFA 4 + 2 + 2 + 4 + ... cm.
    def plan(weight: float):
        return plan_case(make_case(
            patient={"weight_kg": weight}, vessels={"L-RAD": {"diameter_mm": 3.2}},
            lesions=[{"segment": "L-CIA", "kind": "stenosis", "stenosis_pct": 70,
                      "start_cm": 2, "length_cm": 2}],
            procedure={"target": {"segment": "L-CIA", "at_cm": 3}}), all_routes=False)

    lean, obese, severe = plan(70), plan(115), plan(130)
    assert (_first_feasible(lean).site, _first_feasible(obese).site) == ("L-CFA", "L-CFA")
    assert _first_feasible(severe).site in ("L-RAD", "L-RAD-DIST")
    (cfa_lean,) = routes_from(lean, "L-CFA", "retrograde")
    (cfa_obese,) = routes_from(obese, "L-CFA", "retrograde")
    (cfa_severe,) = routes_from(severe, "L-CFA", "retrograde")
    assert cfa_obese.length_cm == pytest.approx(cfa_lean.length_cm + 2.0)
    assert [f.points for f in cfa_obese.factors if f.name == "obesity_femoral"] == [1.0]
    assert [f.points for f in cfa_severe.factors if f.name == "severe_obesity_femoral"] == [2.0]
    assert cfa_lean.tier == 0 and cfa_severe.tier == 1
    assert any("Hibbert" in line for line in cfa_severe.ordering)


# 14 ----------------------------------------------------------------------------------
def test_graft_routes_state_their_direction():
    # A fem-pop graft runs from its inflow (L-CFA 3.5 cm) to its outflow (L-POP 4 cm). The
    # antegrade groin route runs through it with the flow; a retrograde popliteal puncture
    # (at 0.5 x 16 = 8 cm, below the outflow at 4 cm) runs through it against the flow.
    graft = {"name": "fp", "from": "L-CFA", "from_cm": 3.5, "to": "L-POP", "to_cm": 4,
             "diameter_mm": 6}
    occl = {"segment": "L-SFA", "kind": "occlusion", "start_cm": 1, "length_cm": 28}
    down = make_case(lesions=[occl], grafts=[graft],
                     procedure={"target": {"segment": "L-POP", "at_cm": 10}})
    words = [r.path_words for r in routes_from(plan_case(down), "L-CFA", "antegrade")
             if "GRAFT:fp" in r.path]
    assert words and "through graft fp (inflow to outflow, with the flow)" in words[0]
    up = make_case(lesions=[occl], grafts=[graft],
                   procedure={"target": {"segment": "L-EIA", "at_cm": 5}})
    words = [r.path_words for r in routes_from(plan_case(up), "L-POP", "retrograde")
             if "GRAFT:fp" in r.path]
    assert words and "through graft fp (outflow to inflow, against the flow)" in words[0]


# 15 ----------------------------------------------------------------------------------
def test_mid_thigh_puncture_comes_after_the_antegrade_common_femoral():
    # A popliteal stenosis (L-POP 70% at 6-8 cm, target at 7): the antegrade common
    # femoral is the usual access; a mid-thigh SFA puncture is kept for a hostile groin
    # (data/access/sites.csv note; femoral-first, common practice), so it never ties it.
    case = make_case(lesions=[{"segment": "L-POP", "kind": "stenosis", "stenosis_pct": 70,
                               "start_cm": 6, "length_cm": 2}],
                     procedure={"target": {"segment": "L-POP", "at_cm": 7}})
    result = plan_case(case)
    (cfa,) = routes_from(result, "L-CFA", "antegrade")
    sfa = [r for r in routes_from(result, "L-SFA", "antegrade") if r.feasible]
    assert cfa.feasible and sfa
    assert all(cfa.rank < r.rank and r.tier > cfa.tier for r in sfa)


# 16 ----------------------------------------------------------------------------------
def _pop_tpt_case(**proc: Any):
    occl = {"segment": "L-POP", "kind": "occlusion", "start_cm": 10,
            "end": {"segment": "L-TPT", "at_cm": 2}, "proximal_cap": "blunt",
            "distal_cap": "tapered"}
    procedure = {"target": {"segment": "L-POP", "at_cm": 12},
                 "access_equipment": [{"site": "L-CFA", "direction": "antegrade",
                                       "size_fr": 6, "length_cm": 23, "outer_mm": 2.6}]}
    procedure.update(proc)
    return make_case(lesions=[occl], procedure=procedure)


def test_cto_of_the_popliteal_into_the_tibioperoneal_trunk_is_one_lesion():
    # One occlusion from L-POP 10 cm to L-TPT 2 cm (L-POP 16 cm long: 6 + 2 = 8 cm). It is
    # one lesion: the retrograde tibial routes up through the TPT reach its distal cap (no
    # occlusion-en-route at L-TPT), and dual access pairs the antegrade groin with one of
    # them (common practice: antegrade first, retrograde tibial crossing with it).
    # Antegrade CFA: 2 + 30 + 10 = 42 cm of artery to the cap; a 23 cm sheath (19 inside).
    result = plan_case(_pop_tpt_case())
    case = result.target["lesion"]
    assert case["segments"] == ["L-POP", "L-TPT"]
    assert case["total_length_cm"] == pytest.approx(8.0)
    assert (case["proximal_cap"], case["distal_cap"]) == ("blunt", "tapered")
    (pta,) = routes_from(result, "L-PTA", "retrograde")
    assert pta.feasible and pta.approach == "distal-cap" and pta.role == "crossing"
    assert "occlusion-en-route" not in _codes_of(pta)
    first = _first_feasible(result)
    assert (first.site, first.direction) == ("L-CFA", "antegrade")
    assert any(p.proximal.site == "L-CFA" and p.distal.site == "L-PTA" for p in result.pairs)
    assert "from L-POP 10 cm to L-TPT 2 cm (8 cm)" in render_plan(result.to_dict())


def test_a_lesion_given_with_an_end_is_checked():
    from vascplan.errors import InputError

    occl = {"segment": "L-POP", "kind": "occlusion", "start_cm": 10,
            "end": {"segment": "R-TPT", "at_cm": 2}}
    with pytest.raises(InputError, match="not downstream of L-POP"):
        make_case(lesions=[occl])
    with pytest.raises(InputError, match="length_cm or end, not both"):
        make_case(lesions=[{**occl, "end": {"segment": "L-TPT", "at_cm": 2},
                            "length_cm": 4}])


def test_an_in_stent_occlusion_says_so():
    # in_stent: true marks in-stent restenosis or occlusion; the target line says it.
    stent = {"segment": "L-SFA", "start_cm": 4, "length_cm": 18, "diameter_mm": 6}
    result = plan_case(_sfa_case(stents=[stent],
                                 lesions=[{**SFA_OCCLUSION, "in_stent": True}]))
    assert result.target["lesion"]["in_stent"] is True
    assert "in an in-stent occlusion" in render_plan(result.to_dict())


def test_the_case_schema_takes_a_lesion_with_an_end():
    jsonschema = pytest.importorskip("jsonschema")
    from vascplan.case.schema import case_json_schema

    data = case_data(lesions=[{"segment": "L-POP", "kind": "occlusion", "start_cm": 10,
                               "end": {"segment": "L-TPT", "at_cm": 2}}])
    jsonschema.validate(data, case_json_schema())
    data["lesions"][0]["length_cm"] = 4  # both: refused, as the tool refuses it
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate(data, case_json_schema())


# 17 ----------------------------------------------------------------------------------
def test_aorto_bifemoral_graft_with_an_occluded_limb():
    # Aorto-bifemoral graft (AO-INFRA 3 cm to each CFA at 3.5 cm), its right limb occluded
    # (patent: false) over an occluded native right CIA; target: a 70% R-SFA stenosis.
    # Common practice: the run-off below an occluded graft limb is treated from the
    # ipsilateral groin antegrade; nothing comes up and over from the left (the right limb
    # and the native iliac are shut), and a groin with a graft hood 1.5 cm from the
    # puncture scores graft_anastomosis_near.
    grafts = [{"name": "abf-L", "from": "AO-INFRA", "from_cm": 3, "to": "L-CFA",
               "to_cm": 3.5, "diameter_mm": 8},
              {"name": "abf-R", "from": "AO-INFRA", "from_cm": 3, "to": "R-CFA",
               "to_cm": 3.5, "diameter_mm": 8, "patent": False}]
    lesions = [{"segment": "R-CIA", "kind": "occlusion", "start_cm": 0, "length_cm": 6},
               {"segment": "R-SFA", "kind": "stenosis", "stenosis_pct": 70, "start_cm": 9,
                "length_cm": 2}]
    result = plan_case(make_case(grafts=grafts, lesions=lesions,
                                 procedure={"target": {"segment": "R-SFA", "at_cm": 10}}))
    first = _first_feasible(result)
    assert (first.site, first.direction) == ("R-CFA", "antegrade")
    assert "graft_anastomosis_near" in [f.name for f in first.factors]
    for route in routes_from(result, "L-CFA"):
        assert not route.feasible
    assert not any("GRAFT:abf-R" in r.path for r in result.routes if r.feasible)
