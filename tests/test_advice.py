"""The one distal perfusion cannula rule, against its stated threshold and in every output."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st

from vascplan.cli import cli
from vascplan.paths import examples_dir
from vascplan.sizing.advice import DEVICE_KINDS, cannula_advice, load_advice_rules
from vascplan.sizing.assess import assess_sheath_flow

LIMIT = {"sar_limit": 1.05, "sar_limit_source": "Hayashida et al. 2011"}
EXAMPLE = [
    "sheath-flow",
    "--vessel-mm",
    "5.8",
    "--device-fr",
    "14",
    "--label",
    "inner",
    "--occupied-cm",
    "12",
]


def test_floor_is_klein_popliteal_share():
    # Klein et al., J Vasc Surg 2003: popliteal 61.9 mL/min of CFA 353 mL/min at rest.
    floor = load_advice_rules().distal_flow_floor
    assert floor.value == pytest.approx(100 * 61.9 / 353, abs=0.05)
    assert "Klein" in floor.source and floor.certainty == "unit policy"


@pytest.mark.parametrize(("flow", "advised"), [(17.4, True), (17.6, False)])
def test_flow_just_below_or_above_the_floor(flow, advised):
    # Floor 17.5 % (above): a large-bore sheath, SAR well under 1.05, no PAD.
    a = cannula_advice("large-bore-sheath", sar=0.5, distal_flow_pct=flow, **LIMIT)
    assert a.advised is advised
    assert a.rule == ("distal-flow-floor" if advised else "otherwise")


@pytest.mark.parametrize(("sar", "advised"), [(1.0499, False), (1.05, True)])
def test_sar_at_the_limit_advises(sar, advised):
    # SAR >= 1.05 (Hayashida et al. 2011), compared unrounded.
    a = cannula_advice("large-bore-sheath", sar=sar, distal_flow_pct=50.0, **LIMIT)
    assert a.advised is advised


def test_device_rules_and_arm_and_in_place():
    # Femoral VA-ECMO: prophylactic cannula (Marbach 2022 OR 0.31; Gouchoe 2024; Jang 2018).
    ecmo = cannula_advice("va-ecmo-arterial", sar=0.7, distal_flow_pct=95.0, **LIMIT)
    assert ecmo.advised and ecmo.rule == "va-ecmo-prophylactic" and "OR 0.31" in ecmo.basis[0]
    arm = cannula_advice(
        "va-ecmo-arterial", sar=0.7, distal_flow_pct=1.0, access_vessel="AXA", **LIMIT
    )
    assert not arm.applies and arm.headline == "does not apply"
    placed = cannula_advice(
        "va-ecmo-arterial", sar=0.7, distal_flow_pct=1.0, dpc_in_place=True, **LIMIT
    )
    assert placed.headline == "in place"
    # A balloon pump whose leg has almost no flow: advised, with the usual remedy said.
    iabp = cannula_advice("balloon-pump", sar=0.9, distal_flow_pct=5.0, **LIMIT)
    assert iabp.advised and any("take the pump out or move it" in b for b in iabp.basis)
    with pytest.raises(ValueError, match="unknown device kind"):
        cannula_advice("ecmo", sar=0.5, distal_flow_pct=50.0, **LIMIT)


def test_device_kinds_match_the_unit_file():
    from vascplan.surveillance.protocol import DEVICE_KINDS as UNIT_KINDS

    assert DEVICE_KINDS == UNIT_KINDS


def test_issue_example_advises_in_table_and_json():
    # Issue 11: 14 Fr sheath in 5.8 mm over 12 cm leaves 0.3-0.7 % of resting flow.
    runner = CliRunner()
    table = runner.invoke(cli, EXAMPLE)
    assert table.exit_code == 0, table.output
    assert "ADVISED [distal-flow-floor]" in table.output
    assert "not advised" not in table.output and "below the" not in table.output
    doc = json.loads(runner.invoke(cli, [*EXAMPLE, "--format", "json"]).output)
    assert doc["cannula_advice"]["advised"] is True
    assert doc["cannula_advice"]["rule"] == "distal-flow-floor"
    assert doc["distal_flow_pct"]["eccentric"] < doc["cannula_advice"]["floor_pct"]


def test_map_option_changes_the_estimate():
    # Perfusion = MAP - venous 10 mmHg: 65 -> 55 mmHg, 90 -> 80 mmHg; less pressure, less flow.
    runner = CliRunner()
    base = [
        "sheath-flow",
        "--vessel-mm",
        "6.5",
        "--device-fr",
        "17",
        "--label",
        "outer",
        "--occupied-cm",
        "15",
        "--format",
        "json",
    ]
    low = json.loads(runner.invoke(cli, [*base, "--map-mmhg", "65"]).output)
    high = json.loads(runner.invoke(cli, [*base, "--map-mmhg", "90"]).output)
    assert low["perfusion_mmhg"] == 55 and high["perfusion_mmhg"] == 80
    assert low["distal_flow_pct"]["eccentric"] < high["distal_flow_pct"]["eccentric"]
    bad = runner.invoke(cli, [*base, "--map-mmhg", "400"])
    assert bad.exit_code == 2 and "between 30 and 150" in bad.output


@settings(max_examples=60, deadline=None)
@given(
    vessel=st.floats(4.0, 10.0),
    fr=st.sampled_from([6, 7, 8, 10, 12, 14, 16, 18, 20, 22, 24]),
    label=st.sampled_from(["inner", "outer"]),
    occupied=st.floats(5.0, 30.0),
    kind=st.sampled_from([None, *DEVICE_KINDS]),
)
def test_never_not_advised_under_the_floor(vessel, fr, label, occupied, kind):
    # Property (issue 11): no output says "not advised" when the flow is under the floor.
    try:
        a = assess_sheath_flow(vessel, fr, label, occupied, device_kind=kind)
    except ValueError:
        return  # outside the flow model's range: refused, not advised either way
    floor = a.advice.floor_pct
    if a.limb.distal_flow_pct_eccentric < floor or a.sar >= a.sar_threshold.value:
        assert a.advice.advised
        assert "not advised" not in a.advice.text()


def test_checklist_prints_the_risk_advice_and_factors():
    # The checklist header reads the risk result: the same rule and factor weights. The
    # bedside sheet cites nothing (issue 13): it points to the risk output for the basis.
    from datetime import date

    from tests.surv_factory import PROTOCOL, make_unit, sheath_patient
    from vascplan.reports.checklist import checklist_sheets

    p = sheath_patient(1, "2026-12-02T08:00", vessel_mm=5.8)
    p["device"].update({"kind": "microaxial-pump", "size_fr": 14, "label": "inner"})
    unit = make_unit("Europe/London", [p])
    sheet = checklist_sheets(unit, "day", date(2026, 12, 2), PROTOCOL)[0]
    assert "ADVISED [distal-flow-floor]" in sheet.dpc and "Klein" not in sheet.dpc
    assert "basis: risk output and case report" in sheet.dpc
    assert "not advised" not in sheet.dpc
    # 14 Fr microaxial 1.25 (unit policy) x distal flow under the floor 7.9 (Alderman 1987).
    assert sheet.risk_tier == "high"
    assert sheet.risk_total == pytest.approx(1.25 * 7.9)
    assert any("distal-flow 7.9" in line for line in sheet.risk_reasons)


def test_plan_support_and_case_report_use_the_same_rule():
    # Every leg axis whose best-case flow is under the floor is advised, in the JSON and in
    # the case report's wording; none says "not advised" beside it.

    from vascplan.reports.case_report import _dpc_text

    case = (
        examples_dir() / "case-DEMO-12-support-small-iliac.yaml"
    )
    res = CliRunner().invoke(cli, ["plan", str(case), "--format", "json"])
    assert res.exit_code == 0, res.output
    floor = load_advice_rules().distal_flow_floor.value
    seen = 0
    for axis in json.loads(res.stdout)["support"]["axes"]:
        flow = axis["distal_flow_pct"]
        if axis["limb"] != "leg" or flow is None or flow["eccentric"] >= floor:
            continue
        seen += 1
        assert axis["dpc"]["advised"] is True
        assert "distal-flow-floor" in axis["dpc"]["fired"]
        assert _dpc_text(axis["dpc"]).startswith("ADVISED [")
    assert seen >= 1


def test_worst_case_under_the_floor_is_said_beside_not_advised():
    # Best case 20 % clears the 17.5 % floor (Klein 2003, unit policy); centred 10 % does not.
    a = cannula_advice(
        "large-bore-sheath", sar=0.8, distal_flow_pct=20.0, worst_flow_pct=10.0, **LIMIT
    )
    assert not a.advised
    assert any("device centred" in b and "10.0 %" in b for b in a.basis)


def test_case_map_changes_the_support_flow(tmp_path):
    # Case-file patient.map_mmhg (issue 11): a higher MAP (90 vs the default by device kind)
    # raises the perfusion pressure (MAP - 10 mmHg) and so the flow past the device.

    src = examples_dir() / "case-DEMO-12-support-small-iliac.yaml"
    text = src.read_text(encoding="utf-8")
    assert "\n  sex:" in text
    with_map = tmp_path / "with-map.yaml"
    with_map.write_text(text.replace("\n  sex:", "\n  map_mmhg: 120\n  sex:", 1), encoding="utf-8")

    def flows(path):
        res = CliRunner().invoke(cli, ["plan", str(path), "--format", "json"])
        assert res.exit_code == 0, res.output
        axes = json.loads(res.stdout)["support"]["axes"]
        return [a["distal_flow_pct"]["eccentric"] for a in axes if a["distal_flow_pct"]]

    base, high = flows(src), flows(with_map)
    assert len(base) == len(high) >= 1
    assert all(h >= b for h, b in zip(high, base, strict=True))
    assert any(h > b for h, b in zip(high, base, strict=True))
    bad = tmp_path / "bad.yaml"
    bad.write_text(text.replace("\n  sex:", "\n  map_mmhg: 400\n  sex:", 1), encoding="utf-8")
    res = CliRunner().invoke(cli, ["plan", str(bad)])
    assert res.exit_code == 2 and "map_mmhg" in res.output
