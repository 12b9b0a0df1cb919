"""Soft factors, weights and their overrides; worked points by hand.

Weights from vascplan/data/access/weights.yaml: sar 3, site_risk 2, crossover 1.5,
anticoagulation 1, approach_distal_cap 1, cap_blunt 1, cap_flush 2.5, prone 1,
length_margin 2 (with limits.comfortable_margin_cm 20).
"""

from __future__ import annotations

import pytest

from tests.routes_cases import make_case, routes_from
from vascplan.errors import InputError
from vascplan.refdata.sites import load_sites
from vascplan.routes.plan import plan_case
from vascplan.routes.settings import WEIGHTS_FILE, load_table, parse_assignments


def _points(route, name):
    return sum(f.points for f in route.factors if f.name == name)


def test_every_weight_has_a_basis_and_a_factor_uses_it():
    table = load_table(WEIGHTS_FILE)
    assert all(s.basis for s in table.values())
    # Each weight name is the name of the factor it prices (scoring registry).
    import inspect

    from vascplan.routes import scoring
    src = inspect.getsource(scoring)
    for name in table:
        assert f'"{name}"' in src or "cap_{cap}" in src


def test_score_is_the_sum_of_points():
    # L-CFA antegrade to L-SFA at 12: the 11 cm sheath has 7 cm inside (4 cm of skin):
    # L-CFA 2 cm (8 mm) then L-SFA 5 cm (6 mm), so the narrowest is the SFA:
    # SAR 2.6/6 = 0.433 -> 3 x 0.433 = 1.3 points; site_risk 1 x 2 = 2; nothing else
    # (no calcium, no stenosis, no crossover, margin 150 - 18 - 10 = 122 cm).
    (route,) = routes_from(plan_case(make_case()), "L-CFA", "antegrade")
    assert route.limiting_segment == "L-SFA"
    assert [f.name for f in route.factors] == ["sar", "site_risk"]
    assert route.score == pytest.approx(3 * 2.6 / 6 + 2.0)


def test_radial_vs_femoral_site_risk_from_jolly_2011():
    # Jolly et al., Lancet 2011;377:1409: major vascular complications 1.4% radial vs
    # 3.7% femoral: relative risk 0.38 in the catalogue.
    sites = load_sites()
    assert sites["R-RAD"].complication_relative == pytest.approx(1.4 / 3.7, abs=0.005)
    # Brachial OR 4.58 against retrograde femoral (J Endovasc Ther registry).
    assert sites["L-BRA"].complication_relative == 4.58
    assert sites["L-POP"].position == "prone"
    assert not sites["L-BRA"].compressible


def test_anticoagulation_weighs_the_site_bleeding_risk():
    case = make_case(patient={"anticoagulated": True})
    result = plan_case(case)
    (cfa,) = routes_from(result, "L-CFA", "antegrade")
    (bra,) = routes_from(result, "L-BRA", "retrograde")
    assert _points(cfa, "anticoagulation") == pytest.approx(1.0)        # 1 x 1.0
    assert _points(bra, "anticoagulation") == pytest.approx(3.0)        # 1 x 3.0


def test_prone_popliteal_and_distal_cap_approach():
    # L-SFA occlusion 8-18, target at 12, blunt proximal cap, tapered distal cap.
    case = make_case(lesions=[{"segment": "L-SFA", "kind": "occlusion", "start_cm": 8,
                               "length_cm": 10, "proximal_cap": "blunt",
                               "distal_cap": "tapered"}])
    result = plan_case(case)
    (pop,) = routes_from(result, "L-POP")
    (cfa,) = routes_from(result, "L-CFA", "antegrade")
    assert pop.approach == "distal-cap" and cfa.approach == "proximal-cap"
    assert _points(pop, "prone") == 1.0
    assert _points(pop, "approach_distal_cap") == 1.0
    assert _points(cfa, "cap_blunt") == 1.0


def test_flush_proximal_cap_favours_the_distal_cap():
    # With a flush proximal cap (2.5 points) the antegrade route loses its lead over a
    # retrograde tibial one only when the weights say so; the factor must be there.
    case = make_case(lesions=[{"segment": "L-SFA", "kind": "occlusion", "start_cm": 8,
                               "length_cm": 10, "proximal_cap": "flush",
                               "distal_cap": "tapered"}])
    (cfa,) = routes_from(plan_case(case), "L-CFA", "antegrade")
    assert _points(cfa, "cap_flush") == 2.5
    assert "favours the distal cap" in next(f.detail for f in cfa.factors
                                            if f.name == "cap_flush")


def test_length_margin():
    # R-RAD: 139.4 cm + 10 outside = 149.4 of 150: margin 0.6 cm of a comfortable 20:
    # 2 x (1 - 0.6/20) = 1.94 points.
    (route,) = routes_from(plan_case(make_case()), "R-RAD")
    assert _points(route, "length_margin") == pytest.approx(2 * (1 - 0.6 / 20), abs=1e-6)


def test_weight_override_in_the_case_and_on_the_command_line():
    base = routes_from(plan_case(make_case()), "R-CFA", "retrograde")[0]
    assert _points(base, "crossover") == 1.5
    case = make_case(weights={"crossover": 4})
    assert _points(routes_from(plan_case(case), "R-CFA", "retrograde")[0], "crossover") == 4
    result = plan_case(case, weights={"crossover": 0.5})
    assert _points(routes_from(result, "R-CFA", "retrograde")[0], "crossover") == 0.5
    assert result.weights["crossover"] == 0.5


def test_unknown_weight_is_refused_with_did_you_mean():
    with pytest.raises(InputError) as err:
        plan_case(make_case(weights={"crosover": 2}), source="c.yaml")
    assert str(err.value).startswith("c.yaml: weights.crosover: unknown name (did you mean "
                                     "'crossover'?)")
    with pytest.raises(InputError) as err:
        plan_case(make_case(), limits={"sar_mx": 1})
    assert str(err.value).startswith("--limit: sar_mx: unknown name (did you mean 'sar_max'?)")


def test_negative_weight_is_refused():
    with pytest.raises(InputError, match="must be a number at least 0"):
        plan_case(make_case(), weights={"crossover": -1})


def test_parse_assignments_errors():
    with pytest.raises(InputError, match="expected NAME=VALUE"):
        parse_assignments(["crossover"], "--weight")
    with pytest.raises(InputError, match="value must be a number"):
        parse_assignments(["crossover=lots"], "--weight")


def test_a_sheath_above_the_sites_usual_size_counts():
    # Target a proximal L-ATA stenosis (5-7 cm), 6 Fr sheath (outer 2.6 mm given).
    # sites.csv: a tibial site usually takes at most 4 Fr, so L-ATA retrograde pays
    # site_sheath_size 1.5 (weights.yaml) x (6 - 4) = 3.0 points; L-CFA antegrade (upper
    # 24 Fr) pays none. The antegrade femoral route must rank above the 6 Fr tibial one,
    # as an interventionalist would choose (common practice).
    case = make_case(lesions=[{"segment": "L-ATA", "kind": "stenosis", "stenosis_pct": 80,
                               "start_cm": 5, "length_cm": 2}],
                     procedure={"target": {"segment": "L-ATA", "at_cm": 6}})
    result = plan_case(case)
    (ata,) = routes_from(result, "L-ATA")
    cfa = routes_from(result, "L-CFA", "antegrade")[0]  # the direct path; then the loop
    assert [f.points for f in ata.factors if f.name == "site_sheath_size"] == [3.0]
    assert not [f for f in cfa.factors if f.name == "site_sheath_size"]
    assert ata.feasible and cfa.feasible and cfa.rank < ata.rank


def test_demo07_contralateral_femoral_before_arm_and_tibial_routes():
    # DEMO-07 (left SFA occlusion): after the ipsilateral antegrade femoral, the
    # contralateral femoral up-and-over (moderately calcified) should come before any
    # arm route and before a 6 Fr sheath in a 2.6 mm tibial artery (common practice).
    from vascplan.case.load import load_case
    from vascplan.paths import examples_dir

    result = plan_case(load_case(examples_dir() / "case-DEMO-07-sfa-occlusion.yaml"))
    first = result.routes[0]
    assert (first.site, first.direction) == ("L-CFA", "antegrade")
    (cross,) = routes_from(result, "R-CFA", "retrograde")
    later = [r for r in result.routes if r.feasible
             and r.site in ("L-BRA", "R-BRA", "L-ATA", "L-PTA")]
    assert later and all(cross.rank < r.rank for r in later)


def test_demo07_contralateral_femoral_before_axillary_routes():
    # DEMO-07, as above: the contralateral femoral up-and-over before an axillary route
    # (common practice: the axillary is kept for a hostile groin or aortoiliac route).
    from vascplan.case.load import load_case
    from vascplan.paths import examples_dir

    result = plan_case(load_case(examples_dir() / "case-DEMO-07-sfa-occlusion.yaml"))
    (cross,) = routes_from(result, "R-CFA", "retrograde")
    axillary = [r for r in result.routes if r.feasible and r.site in ("L-AXA", "R-AXA")]
    assert axillary and all(cross.rank < r.rank for r in axillary)
