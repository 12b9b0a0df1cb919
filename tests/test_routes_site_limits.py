"""Issue 11: unmeasured means unproven for large-bore; SAR limits by site; verdicts on
unrounded values, printed figures on the verdict's side.

Expected values are worked by hand in the comments from:
- the French scale: outer mm = Fr / 3 (REFERENCES: seen);
- data/sizing/sheath_walls.csv: a 24 Fr standard-wall introducer is 9.1 mm outer
  (range 9.0-9.2 mm, from memory);
- the transfemoral SAR limit 1.05 (Hayashida et al., JACC Cardiovasc Interv 2011;
  Barbanti et al., EuroIntervention 2013);
- the radial limit 1.00 (Saito et al., Catheter Cardiovasc Interv 1999;46:173-178:
  flow loss rose when sheath outer diameter exceeded the radial inner diameter);
- the large-bore threshold 12 Fr outer (unit policy).
"""

from __future__ import annotations

import csv
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tests.routes_cases import case_data, codes, make_case, routes_from
from vascplan.case.load import validate_case
from vascplan.nearlimit import format_near_limit
from vascplan.paths import data_dir
from vascplan.routes.plan import plan_case
from vascplan.routes.table import render_plan

GROIN = ("CIA", "EIA", "CFA", "SFA")
TRANSFEMORAL = 1.05  # Hayashida et al. 2011
RADIAL = 1.00  # Saito et al. 1999


def _unmeasured_groins(sex: str = "male", **changes):
    """The test man (or woman) with no diameter measured in either leg's groin axis."""
    data = case_data(patient={"sex": sex}, **changes)
    for side in ("L", "R"):
        for kind in GROIN:
            data["vessels"][f"{side}-{kind}"].pop("diameter_mm", None)
    return validate_case("test-case", data)


def _sheath_24fr_outer_mm() -> float:
    path = data_dir() / "sizing" / "sheath_walls.csv"
    with open(path, newline="", encoding="utf-8") as fh:
        row = next(r for r in csv.DictReader(fh) if r["inner_fr"] == "24")
    return float(row["outer_mm"])


@pytest.mark.parametrize("sex", ["male", "female"])
def test_an_unmeasured_groin_never_passes_a_24_fr_sheath(sex):
    # 24 Fr sheath (inner label, no outer_mm): outer 9.1 mm from sheath_walls.csv.
    # Needed MLD = 9.1 / 1.05 = 8.667 mm, rounded up to 8.7 mm (so that 9.1 / 8.7 =
    # 1.046 < 1.05). The 11 cm sheath less 4 cm of skin runs 2 cm of the R-CFA and 5 cm
    # of the R-EIA: both unmeasured, both blocked.
    od = _sheath_24fr_outer_mm()
    assert od == 9.1  # the table's value the hand arithmetic uses
    need = math.ceil(od / TRANSFEMORAL * 10) / 10
    assert need == 8.7
    case = _unmeasured_groins(sex, procedure={"sheath": {"size_fr": 24, "length_cm": 11}})
    result = plan_case(case)
    for site in ("R-CFA", "L-CFA"):
        for route in routes_from(result, site):
            if route.length_cm is None:
                continue
            assert not route.feasible
            block = route.blocked_by[[c for c, _ in codes(route)].index("unmeasured")]
            assert block.to_dict().keys() == {"code", "segment", "detail"}
            assert block.detail.startswith(
                f"measure {block.segment}: needs MLD >= 8.7 mm for this 24 Fr sheath")
    (route,) = routes_from(result, "R-CFA", "retrograde")
    assert [seg for c, seg in codes(route) if c == "unmeasured"] == ["R-CFA", "R-EIA"]
    table = render_plan(result.to_dict())
    assert "unmeasured: measure R-CFA: needs MLD >= 8.7 mm for this 24 Fr sheath" in table


@settings(max_examples=30, deadline=None)
@given(outer_mm=st.floats(min_value=4.0, max_value=10.0), sex=st.sampled_from(["male", "female"]))
def test_no_large_bore_device_passes_an_unmeasured_groin(outer_mm, sex):
    # Any sheath of 12 Fr outer (4.0 mm) or more, on reference groin diameters: no route
    # from either common femoral is feasible, whatever the reference values are.
    case = _unmeasured_groins(sex, procedure={"sheath": {"size_fr": 12, "length_cm": 11,
                                                         "outer_mm": outer_mm}})
    result = plan_case(case)
    for site in ("R-CFA", "L-CFA"):
        for route in routes_from(result, site):
            if route.length_cm is not None:
                assert "unmeasured" in [c for c, _ in codes(route)]


def test_a_measured_groin_with_an_adequate_mld_passes():
    # R-CFA and R-EIA measured 9.0 mm: SAR 9.1 / 9.0 = 1.011 < 1.05: feasible, nothing
    # unmeasured on the 7 cm the sheath occupies (R-CFA 2 cm + R-EIA 5 cm).
    case = make_case(vessels={"R-CFA": {"diameter_mm": 9.0}, "R-EIA": {"diameter_mm": 9.0}},
                     procedure={"sheath": {"size_fr": 24, "length_cm": 11}})
    (route,) = routes_from(plan_case(case), "R-CFA", "retrograde")
    assert route.feasible, route.blocked_by
    assert route.sar == pytest.approx(9.1 / 9.0)
    assert route.sar_limit == TRANSFEMORAL


def test_an_11_fr_device_on_reference_diameters_is_not_blocked_as_unmeasured():
    # 11 Fr cannula labelled by outer size: 11 / 3 = 3.67 mm outer, under 12 Fr.
    case = _unmeasured_groins(procedure={"sheath": {"size_fr": 11, "length_cm": 11,
                                                    "label": "outer"}})
    result = plan_case(case)
    assert all("unmeasured" not in [c for c, _ in codes(r)] for r in result.routes)
    # 12 Fr outer (4.0 mm) is large-bore: the same groins are now unproven.
    case = _unmeasured_groins(procedure={"sheath": {"size_fr": 12, "length_cm": 11,
                                                    "label": "outer"}})
    (route,) = routes_from(plan_case(case), "R-CFA", "retrograde")
    assert ("unmeasured", "R-CFA") in codes(route)
    # Needed MLD 4.0 / 1.05 = 3.81 -> 3.9 mm.
    assert "needs MLD >= 3.9 mm for this 12 Fr sheath" in route.blocked_by[0].detail


def test_an_unmeasured_radial_needs_a_lumen_wider_than_the_device():
    # 12 Fr outer = 4.0 mm in an unmeasured radial, radial limit 1.00: 4.0 / 1.00 = 4.0
    # mm, but SAR 4.0 / 4.0 = 1.00 is at the limit, so the segment needs 4.1 mm.
    data = case_data(procedure={"sheath": {"size_fr": 12, "length_cm": 11, "label": "outer"}})
    data["vessels"]["L-RAD"].pop("diameter_mm")
    (route,) = routes_from(plan_case(validate_case("test-case", data)), "L-RAD")
    (block,) = [b for b in route.blocked_by if b.code == "unmeasured"]
    assert block.segment == "L-RAD"
    assert block.detail.startswith("measure L-RAD: needs MLD >= 4.1 mm for this 12 Fr sheath")
    assert "Saito" in block.detail


def test_the_radial_route_is_judged_against_the_radial_limit_with_its_source():
    # L-RAD 2.8 mm, sheath outer 2.9 mm: SAR 1.036. Under the transfemoral 1.05 it would
    # pass; against the radial 1.00 (Saito et al. 1999) it is blocked.
    case = make_case(procedure={"sheath": {"size_fr": 6, "length_cm": 11, "outer_mm": 2.9}})
    result = plan_case(case)
    (route,) = routes_from(result, "L-RAD")
    assert ("sheath-too-large", "L-RAD") in codes(route)
    data = next(r for r in result.to_dict()["routes"] if r["site"] == "L-RAD")
    assert data["sar_limit"] == RADIAL and data["sar_limit_label"] == "radial"
    assert "Saito et al., Catheter Cardiovasc Interv 1999" in data["sar_limit_source"]
    table = render_plan(result.to_dict())
    row = next(line for line in table.splitlines() if line.split()[1:2] == ["L-RAD"])
    assert "1.00 radial" in row and "BLOCKED" in row
    assert "1.00 radial: Saito et al., Catheter Cardiovasc Interv 1999" in table
    # The femoral routes of the same plan keep the transfemoral limit and its source.
    assert "1.05 transfemoral: Hayashida et al." in table


def test_the_case_report_prints_the_radial_limit_and_its_source():
    from datetime import UTC, datetime

    from tests.reports_helpers import pdf_text
    from vascplan.anatomy.graph import build_tree
    from vascplan.reports.case_report import render_case_report

    # L-RAD 2.8 mm, outer 2.7 mm: SAR 0.964 < 1.00, usable (radial limit, Saito 1999).
    case = make_case(procedure={"sheath": {"size_fr": 6, "length_cm": 11, "outer_mm": 2.7}})
    plan = plan_case(case).to_dict()
    pdf = render_case_report(case, build_tree(case), plan, paper="a4",
                             generated_at=datetime(2026, 12, 1, tzinfo=UTC))
    text = pdf_text(pdf)
    assert "limit 1.00 radial (Saito et al., Catheter Cardiovasc Interv 1999" in text


@pytest.mark.parametrize(("outer_mm", "printed", "feasible"),
                         [(8.384, "1.048", True), (8.416, "1.05", False)])
def test_a_sar_near_the_limit_prints_on_its_verdicts_side(outer_mm, printed, feasible):
    # R-CFA 8 mm measured, a 6 cm sheath (2 cm in the R-CFA): 8.384 / 8 = 1.048 < 1.05
    # (feasible, printed with 3 decimals: "1.05" would read as at the limit);
    # 8.416 / 8 = 1.052 >= 1.05 (blocked, "1.05" is on its side).
    case = make_case(procedure={"sheath": {"size_fr": 24, "length_cm": 6, "outer_mm": outer_mm}})
    result = plan_case(case)
    (route,) = routes_from(result, "R-CFA", "retrograde")
    assert route.feasible is feasible
    data = next(r for r in result.to_dict()["routes"]
                if r["site"] == "R-CFA" and r["direction"] == "retrograde")
    assert data["sar"] == pytest.approx(outer_mm / 8, abs=1e-12)  # raw float in the JSON
    row = next(line for line in render_plan(result.to_dict()).splitlines()
               if line.split()[1:3] == ["R-CFA", "retrograde"])
    cells = row.split()
    # rank, site, direction, role, equipment ("24 Fr 6 cm", issue 12), length, "cm", SAR
    assert cells[10] == printed
    assert ("ok" in cells) is feasible and ("BLOCKED" in cells) is not feasible


@settings(max_examples=300, deadline=None)
@given(limit=st.floats(min_value=0.5, max_value=2.0),
       delta=st.floats(min_value=-1e-3, max_value=1e-3))
def test_property_a_printed_sar_is_on_the_verdicts_side(limit, delta):
    # The verdict is value >= limit on unrounded numbers; the printed text read back must
    # give the same verdict (hand rule of issue 11).
    value = limit + delta
    text = format_near_limit(value, limit)
    assert (float(text) >= limit) is (value >= limit)
    assert len(text.split(".")[1]) >= 2


@settings(max_examples=25, deadline=None)
@given(outer_mm=st.floats(min_value=8.36, max_value=8.44))
def test_property_the_table_never_prints_a_sar_against_its_verdict(outer_mm):
    # R-CFA 8 mm measured, 2 cm occupied: SAR = outer / 8 sweeps 1.045-1.055 across the
    # transfemoral limit 1.05 (Hayashida et al. 2011). The row's printed SAR, read back,
    # gives the row's verdict; so does the JSON's unrounded SAR.
    case = make_case(procedure={"sheath": {"size_fr": 24, "length_cm": 6, "outer_mm": outer_mm}})
    plan = plan_case(case).to_dict()
    route = next(r for r in plan["routes"]
                 if r["site"] == "R-CFA" and r["direction"] == "retrograde")
    row = next(line for line in render_plan(plan).splitlines()
               if line.split()[1:3] == ["R-CFA", "retrograde"]).split()
    over = float(row[10]) >= route["sar_limit"]  # SAR cell (layout as above)
    assert over is (route["sar"] >= route["sar_limit"]) is (not route["feasible"])
    assert ("BLOCKED" in row) is over


def test_a_support_axis_on_an_unmeasured_iliac_is_blocked_with_the_mld_it_needs():
    # Microaxial pump, outer 5.7 mm (17.1 Fr outer, large-bore), 25 cm sheath from the
    # R-CFA: it occupies R-CFA, R-EIA, R-CIA and AO-INFRA. R-EIA unmeasured: needs
    # 5.7 / 1.05 = 5.43 -> 5.5 mm (5.7 / 5.5 = 1.036 < 1.05, Hayashida et al. 2011).
    data = case_data(procedure={"purpose": "support",
                                "target": {"segment": "AO-ASC", "at_cm": 2},
                                "sheath": {"size_fr": 14, "length_cm": 25, "outer_mm": 5.7},
                                "device": {"profile_fr": 14, "working_length_cm": 110}})
    data["vessels"]["R-EIA"].pop("diameter_mm")
    support = plan_case(validate_case("test-case", data)).support
    axes = {a["site"]: a for a in support["axes"]}
    assert not axes["R-CFA"]["feasible"]
    assert axes["R-CFA"]["blocked_by"] == [{
        "code": "unmeasured", "segment": "R-EIA",
        "detail": axes["R-CFA"]["blocked_by"][0]["detail"]}]
    assert axes["R-CFA"]["blocked_by"][0]["detail"].startswith(
        "measure R-EIA: needs MLD >= 5.5 mm for this 14 Fr sheath")
    assert axes["L-CFA"]["feasible"]  # the left axis is measured throughout
    assert support["best_site"] != "R-CFA"


def test_the_case_report_says_what_to_measure():
    from datetime import UTC, datetime

    from tests.reports_helpers import pdf_text
    from vascplan.anatomy.graph import build_tree
    from vascplan.reports.case_report import render_case_report

    # The unmeasured male groins and a 24 Fr sheath (9.1 mm outer): needs 8.7 mm
    # (9.1 / 1.05 = 8.667, rounded up; Hayashida et al. 2011).
    case = _unmeasured_groins(procedure={"sheath": {"size_fr": 24, "length_cm": 11}})
    plan = plan_case(case).to_dict()
    text = pdf_text(render_case_report(case, build_tree(case), plan, paper="a4",
                                       generated_at=datetime(2026, 12, 1, tzinfo=UTC)))
    assert "What to measure before a large-bore device" in text
    assert "measure R-CFA: needs MLD >= 8.7 mm for this 24 Fr sheath" in text


def test_an_overridden_limit_prints_exactly_and_says_who_set_it():
    # --limit sar_max=1.045 (a unit's own threshold): R-CFA 8 mm, outer 8.36 mm ->
    # SAR 1.045 >= 1.045 (dividing by 8 is exact in binary): blocked; the limit prints as
    # 1.045, not a rounded 1.04 or 1.05.
    case = make_case(procedure={"sheath": {"size_fr": 24, "length_cm": 6, "outer_mm": 8.36}})
    result = plan_case(case, limits={"sar_max": 1.045})
    (route,) = routes_from(result, "R-CFA", "retrograde")
    assert ("sheath-too-large", "R-CFA") in codes(route)
    assert "transfemoral limit of 1.045" in route.blocked_by[0].detail
    table = render_plan(result.to_dict())
    assert "1.045 transfemoral: set to 1.045 by --limit" in table


# Issue 12: "unmeasured" means the fit rests on a reference diameter: a segment blocks
# only where the device would fail its SAR limit at the reference mean - 2 SD (floored at
# the plausible minimum), a rule of common practice stated in limits.yaml.

def _pump_case(unmeasured: tuple[str, ...], sheath: dict | None = None):
    data = case_data(patient={"sex": "male"},
                     procedure={"purpose": "support",
                                "target": {"segment": "AO-ASC", "at_cm": 2},
                                "sheath": sheath or {"size_fr": 14, "length_cm": 25,
                                                     "outer_mm": 5.7},
                                "device": {"profile_fr": 14, "working_length_cm": 110,
                                           "kind": "microaxial-pump"}})
    for seg in unmeasured:
        data["vessels"][seg].pop("diameter_mm", None)
    return validate_case("test-case", data)


def test_an_unmeasured_aorta_does_not_block_a_14_fr_pump():
    # AO-INFRA men: reference 18.4 +/- 1.8 mm (data/anatomy/segments.csv, Joh et al.
    # 2013 row); mean - 2 SD = 14.8 mm; 5.7 / 14.8 = 0.39, far under 1.05 (Hayashida).
    assert TRANSFEMORAL > 5.7 / (18.4 - 2 * 1.8)
    axes = {a["site"]: a for a in plan_case(_pump_case(("AO-INFRA",))).support["axes"]}
    for site in ("R-CFA", "L-CFA"):
        assert "unmeasured" not in [b["code"] for b in axes[site]["blocked_by"]]


def test_an_unmeasured_cfa_blocks_a_14_fr_pump_and_a_24_fr_sheath():
    # R-CFA men: reference 7.3 +/- 1.8 mm; mean - 2 SD = 3.7 mm; the pump 5.7 / 3.7 =
    # 1.54 and a 24 Fr sheath (outer 9.1 mm) 9.1 / 3.7 = 2.46, both over 1.05.
    assert TRANSFEMORAL <= 5.7 / (7.3 - 2 * 1.8)
    axes = {a["site"]: a for a in plan_case(_pump_case(("R-CFA",))).support["axes"]}
    (block,) = [b for b in axes["R-CFA"]["blocked_by"] if b["code"] == "unmeasured"]
    assert block["segment"] == "R-CFA"
    # needed MLD 5.7 / 1.05 = 5.43 -> 5.5 mm (hand arithmetic)
    assert block["detail"].startswith("measure R-CFA: needs MLD >= 5.5 mm for this 14 Fr")
    assert "mean - 2 SD, 3.7 mm*" in block["detail"]
    case = _pump_case(("R-CFA",), {"size_fr": 24, "length_cm": 25})
    axes = {a["site"]: a for a in plan_case(case).support["axes"]}
    (block,) = [b for b in axes["R-CFA"]["blocked_by"] if b["code"] == "unmeasured"]
    # 9.1 / 1.05 = 8.67 -> 8.7 mm
    assert block["detail"].startswith("measure R-CFA: needs MLD >= 8.7 mm for this 24 Fr")
