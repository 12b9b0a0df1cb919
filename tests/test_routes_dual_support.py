"""Dual access pairs for an occlusion, and the large-bore support comparison."""

from __future__ import annotations

import pytest

from tests.routes_cases import make_case, routes_from
from vascplan.case.load import load_case
from vascplan.paths import examples_dir
from vascplan.routes.plan import plan_case
from vascplan.sizing.limb import limb_flow_with_device


def _occlusion_case(**changes):
    return make_case(lesions=[{"segment": "L-SFA", "kind": "occlusion", "start_cm": 8,
                               "length_cm": 10, "proximal_cap": "blunt",
                               "distal_cap": "tapered"}], **changes)


def test_pairs_one_route_to_each_cap_no_shared_puncture():
    result = plan_case(_occlusion_case())
    assert result.pairs
    for pair in result.pairs:
        assert pair.proximal.approach == "proximal-cap" and pair.proximal.feasible
        assert pair.distal.approach == "distal-cap" and pair.distal.feasible
        assert pair.proximal.site != pair.distal.site
        assert pair.proximal.segment != pair.distal.segment
    scores = [p.score for p in result.pairs]
    assert scores == sorted(scores)
    # The popliteal needs the patient prone, the groin supine: both sheaths cannot be
    # in place at once, so the popliteal is in no pair although its route is feasible.
    (pop,) = routes_from(result, "L-POP")
    assert pop.feasible and pop.approach == "distal-cap"
    assert all(p.proximal.position == p.distal.position for p in result.pairs)
    assert all("L-POP" not in (p.proximal.site, p.distal.site) for p in result.pairs)


def test_no_pairs_when_the_target_is_not_an_occlusion():
    assert plan_case(make_case()).pairs == []


def test_pairs_skip_blocked_routes():
    # Avoid the left groin: no pair may use it.
    result = plan_case(_occlusion_case(avoid=[{"site": "L-CFA", "reason": "scar"}]))
    assert all(p.proximal.site != "L-CFA" for p in result.pairs)


def _support_case(**changes):
    # Microaxial pump 14 Fr, outer 5.7 mm measured, 25 cm sheath, tip in the AO-ASC.
    return make_case(procedure={"purpose": "support",
                                "target": {"segment": "AO-ASC", "at_cm": 2},
                                "sheath": {"size_fr": 14, "length_cm": 25, "outer_mm": 5.7},
                                "device": {"profile_fr": 14, "working_length_cm": 110}},
                     **changes)


def test_support_compares_both_groins_and_both_axillaries():
    result = plan_case(_support_case())
    assert sorted(r.site for r in result.routes) == ["L-AXA", "L-CFA", "R-AXA", "R-CFA"]
    axes = {a["site"]: a for a in result.support["axes"]}
    assert set(axes) == {"L-AXA", "L-CFA", "R-AXA", "R-CFA"}
    cfa = axes["R-CFA"]
    # 25 cm - 4 cm skin = 21 cm in the artery: R-CFA 2 + R-EIA 10 + R-CIA 6 + 3 cm of
    # AO-INFRA. SARs (unrounded in the JSON): 5.7/8 = 0.71, 5.7/7 = 0.81, 5.7/9 = 0.63,
    # 5.7/16 = 0.36, each against the transfemoral limit 1.05 (Hayashida et al. 2011).
    assert [s["segment"] for s in cfa["segments"]] == ["R-CFA", "R-EIA", "R-CIA", "AO-INFRA"]
    assert [s["sar"] for s in cfa["segments"]] == pytest.approx([5.7 / 8, 5.7 / 7, 5.7 / 9,
                                                                 5.7 / 16])
    assert {s["sar_limit"] for s in cfa["segments"]} == {1.05}
    assert cfa["limiting_segment"] == "R-EIA" and cfa["occupied_cm"] == 21.0
    # Lumen left and distal flow come from the sizing model for the limiting stretch.
    est = limb_flow_with_device(7.0, 5.7, 21.0)
    assert cfa["lumen_left_pct"] == pytest.approx(round(est.lumen_left_pct, 1))
    assert cfa["distal_flow_pct"]["concentric"] == pytest.approx(
        round(est.distal_flow_pct_concentric, 1))
    assert isinstance(cfa["dpc"]["advised"], bool) and cfa["dpc"]["basis"]
    assert result.support["device_kind"] == "microaxial-pump"


def test_support_small_calcified_iliac_blocks_that_axis():
    # R-EIA 5.5 mm, severely calcified: SAR 5.7/5.5 = 1.04 >= 1.00 (calcified limit).
    result = plan_case(_support_case(vessels={"R-EIA": {"diameter_mm": 5.5,
                                                        "calcification": "severe"}}))
    axes = {a["site"]: a for a in result.support["axes"]}
    assert not axes["R-CFA"]["feasible"]
    assert axes["R-CFA"]["blocked_by"][0]["code"] == "sheath-too-large"
    (route,) = routes_from(result, "R-CFA")
    assert route.blocked_by[0].segment == "R-EIA"
    assert result.support["best_site"] != "R-CFA"


def test_support_example_file():
    result = plan_case(load_case(examples_dir() / "case-DEMO-12-support-small-iliac.yaml"))
    data = result.to_dict()
    assert data["support"]["axes"] and data["purpose"] == "support"


def test_support_device_kind_stated_in_the_case_wins():
    # An ECMO return cannula whose tip is not in the ascending aorta: without a stated
    # kind it would be taken as a large-bore sheath.
    case = make_case(procedure={"purpose": "support",
                                "target": {"segment": "AO-INFRA", "at_cm": 5},
                                "sheath": {"size_fr": 17, "length_cm": 25, "label": "outer"},
                                "device": {"profile_fr": 17, "working_length_cm": 60,
                                           "kind": "va-ecmo-arterial"}})
    support = plan_case(case).support
    assert support["device_kind"] == "va-ecmo-arterial"
    assert "stated in the case file" in support["device_kind_basis"]
    # Labelled by outer size: 17 Fr = 17/3 mm = 5.67 mm (1 Fr = 1/3 mm, REFERENCES.md).
    assert support["device_od_mm"] == pytest.approx(17 / 3, abs=0.005)


def test_support_axillary_axis_warns_for_the_arm():
    # R-AXA 6 mm (tests/routes_cases.py), device outer 5.7 mm: the annulus left is
    # (6^2 - 5.7^2) / 6^2 = (36 - 32.49) / 36 = 9.75%, printed as 10%. A leg's distal
    # perfusion cannula does not apply to the arm, so the axis says what does.
    result = plan_case(_support_case())
    axes = {a["site"]: a for a in result.support["axes"]}
    note = axes["R-AXA"]["arm_note"]
    assert "10% of the R-AXA lumen" in note and "side graft" in note
    assert "arm_note" not in axes["R-CFA"]


def test_no_pair_of_sheaths_in_series_on_one_line():
    # L-ATA occluded 8-18 cm (of 30), target at 12; 4 Fr sheath (outer 1.9 mm) so the
    # tibial punctures pass. L-CFA antegrade reaches the distal cap round the pedal loop:
    # down L-POP, L-TPT and the whole L-PTA to the plantar arch. The L-PTA retrograde
    # puncture (0.9 x 30 = 27 cm) lies on that path, so a catheter would run through the
    # other sheath's puncture: no pair. Likewise the mid-thigh L-SFA puncture (15 cm)
    # lies on the L-CFA antegrade route. The L-ATA puncture (0.85 x 30 = 25.5 cm) lies
    # beyond the target, off the L-CFA direct route: that pair stands (common practice).
    case = make_case(
        lesions=[{"segment": "L-ATA", "kind": "occlusion", "start_cm": 8, "length_cm": 10,
                  "proximal_cap": "tapered", "distal_cap": "tapered"}],
        procedure={"target": {"segment": "L-ATA", "at_cm": 12},
                   "sheath": {"size_fr": 4, "length_cm": 11, "outer_mm": 1.9},
                   "device": {"profile_fr": 4, "working_length_cm": 150}})
    result = plan_case(case)
    loop = [r for r in routes_from(result, "L-CFA", "antegrade") if r.approach == "distal-cap"]
    assert loop and loop[0].feasible and "L-PLA" in loop[0].path
    (pta,) = routes_from(result, "L-PTA")
    assert pta.feasible and pta.approach == "proximal-cap"
    pairs = {(p.proximal.site, p.distal.site) for p in result.pairs}
    assert ("L-PTA", "L-CFA") not in pairs
    assert ("L-CFA", "L-SFA") not in pairs
    assert ("L-CFA", "L-ATA") in pairs


def test_support_example_prefers_the_roomy_left_groin():
    # DEMO-12: right EIA 5.8 mm with a 30% stenosis, severely calcified: MLD 5.8 x 0.7 =
    # 4.06 mm, SAR 5.7 / 4.06 = 1.40, over the calcified limit 1.00: blocked there. The
    # left groin is roomy (CFA 9.1 mm; the tightest stretch the sheath occupies is the EIA
    # 8.4 mm with a 20% plaque: 6.72 mm, SAR 0.85). A practitioner takes the left
    # femoral before an axillary cut-down or puncture (common practice), and the arch
    # costs nothing when the pump must sit in the ascending aorta whatever the route.
    result = plan_case(load_case(examples_dir() / "case-DEMO-12-support-small-iliac.yaml"))
    (first,) = routes_from(result, "L-CFA", "retrograde")
    assert first.feasible
    assert first.sar == pytest.approx(5.7 / (8.4 * 0.8), abs=1e-9)
    names = [f.name for f in first.factors]
    assert "puncture_plaque" not in names and "arch_traversal" not in names
    (right,) = routes_from(result, "R-CFA")
    assert [(b.code, b.segment) for b in right.blocked_by] == [("sheath-too-large", "R-EIA")]
    assert right.sar == pytest.approx(5.7 / (5.8 * 0.7), abs=1e-9)
    # best_site is the feasible axis with the lowest SAR, a separate fact from the ranking:
    # R-AXA 5.7 / 7.1 = 0.80 is below the left groin's 0.85. The pump also runs through the
    # right subclavian, measured 8.3 mm in the case (5.7 / 8.3 = 0.69), so the axillary
    # governs; an unmeasured subclavian would take the reference 6.7 mm (lumen at the
    # vertebral origin, data/anatomy/segments.csv): 5.7 / 6.7 = 0.85, no longer below.
    assert result.support["best_site"] == "R-AXA"


def test_support_example_ranks_the_roomy_left_groin_first():
    # DEMO-12, as above: a practitioner takes the open left femoral before an axillary
    # route (common practice).
    result = plan_case(load_case(examples_dir() / "case-DEMO-12-support-small-iliac.yaml"))
    first = result.routes[0]
    assert (first.site, first.feasible) == ("L-CFA", True)


def test_support_axis_outside_the_flow_model_still_plans(monkeypatch):
    # The flow model refuses inputs outside its range (vascplan.sizing raises
    # SizingValueError, e.g. a long stretch too narrow to carry the resting flow). The
    # plan must still come out, that axis without a flow estimate and with the reason.
    from vascplan.sizing import limb
    from vascplan.sizing.tables import SizingValueError

    def refuse(*_args, **_kw):
        raise SizingValueError("vessel_mm", "outside the model")

    monkeypatch.setattr(limb, "limb_flow_with_device", refuse)
    axes = {a["site"]: a for a in plan_case(_support_case()).support["axes"]}
    cfa = axes["R-CFA"]
    assert cfa["distal_flow_pct"] is None and cfa["lumen_left_pct"] is None
    assert cfa["flow_assumptions"] == ["distal flow not estimated: outside the model"]


def test_a_usable_axis_that_leaves_no_lumen_says_so():
    # A 17 Fr cannula labelled by outer size is 17/3 = 5.67 mm (1 Fr = 1/3 mm); in a
    # 5.5 mm left axillary artery (tests/routes_cases.py has 6 mm; set here) the SAR is
    # 5.67/5.5 = 1.03, under the 1.05 limit (Hayashida 2011), so the axis is usable, but
    # the device fills the lumen: the output must say no flow passes it.
    case = make_case(vessels={"L-AXA": {"diameter_mm": 5.5}},
                     procedure={"purpose": "support",
                                "target": {"segment": "AO-ASC", "at_cm": 2},
                                "sheath": {"size_fr": 17, "length_cm": 20, "label": "outer"},
                                "device": {"profile_fr": 17, "working_length_cm": 110,
                                           "kind": "microaxial-pump"}})
    result = plan_case(case)
    axes = {a["site"]: a for a in result.support["axes"]}
    left = axes["L-AXA"]
    assert left["feasible"] and left["lumen_left_pct"] == 0
    assert left["lumen_note"].startswith("the device fills the L-AXA lumen (SAR 1.03)")
    assert all("lumen_note" not in a for a in axes.values() if a["lumen_left_pct"])
    from vascplan.routes.table import render_plan

    assert "NO LUMEN LEFT: the device fills the L-AXA lumen" in render_plan(result.to_dict())


def test_the_report_prints_the_no_lumen_note():
    from tests.reports_helpers import pdf_text
    from vascplan.anatomy.graph import build_tree
    from vascplan.reports.case_report import render_case_report

    case = make_case(vessels={"L-AXA": {"diameter_mm": 5.5}},
                     procedure={"purpose": "support",
                                "target": {"segment": "AO-ASC", "at_cm": 2},
                                "sheath": {"size_fr": 17, "length_cm": 20, "label": "outer"},
                                "device": {"profile_fr": 17, "working_length_cm": 110,
                                           "kind": "microaxial-pump"}})
    pdf = render_case_report(case, build_tree(case), plan_case(case).to_dict(), paper="a4",
                             generated_at=None)
    assert "NO LUMEN LEFT" in " ".join(pdf_text(pdf).split())
