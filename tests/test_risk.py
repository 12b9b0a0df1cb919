"""Risk tier (weighted factors) against their named sources, and the cannula advice in risk."""

from __future__ import annotations

import math
from datetime import UTC, datetime

import pytest

from tests.surv_factory import PROTOCOL, make_unit, sheath_patient
from vascplan.safety import REFERENCE_MARK
from vascplan.surveillance.render import risk_table, risk_to_dict
from vascplan.surveillance.risk import assess_patient, load_rules, reference_diameter, tier_changes

AT = datetime(2026, 12, 2, 12, 0, tzinfo=UTC)


def _patient(**over):
    base = sheath_patient(1, "2026-12-02T08:00")
    device = {**base["device"], **over.pop("device", {})}
    base.update(over)
    base["device"] = device
    unit = make_unit("Europe/London", [base])
    return unit.patients[0]


def _ecmo(**over):
    dev = {"kind": "va-ecmo-arterial", "size_fr": 17, "label": "outer"}
    return _patient(device={**dev, **over.pop("device", {})}, **over)


def _weights(a):
    return {w.id: w.weight for w in a.weighted if w.counted}


# --- the three cases issue 11 requires ------------------------------------------------------


def test_required_ecmo_17_fr_in_6_mm_cfa_with_pad_is_high():
    # Issue 11: a 17 Fr ECMO cannula in a 6.0 mm CFA with PAD must be high.
    a = assess_patient(_ecmo(vessel_mm=6.0, pad=True), PROTOCOL, AT)
    assert a.tier == "high"
    assert a.dpc_advised
    # Hand arithmetic: VA-ECMO 2.0 (unit policy) x distal flow below floor 7.9 (Alderman 1987,
    # post-insertion ABI < 0.8) x PAD 1.9 (Alderman 1987) = 30.02.
    assert a.total == pytest.approx(2.0 * 7.9 * 1.9)


def test_required_balloon_pump_7_5_fr_in_9_5_mm_is_standard():
    # Issue 11: a 7.5 Fr balloon pump in a 9.5 mm CFA with no other factor is standard.
    dev = {"kind": "balloon-pump", "size_fr": 7.5, "label": "outer"}
    a = assess_patient(_patient(device=dev, vessel_mm=9.5), PROTOCOL, AT)
    assert a.tier == "standard" and a.total == pytest.approx(1.0)
    assert not a.dpc_advised and a.advice is not None and a.advice.rule == "balloon-pump"


def test_required_microaxial_14_fr_in_5_8_mm_is_high_with_cannula_advised():
    # Issue 11: a 14 Fr microaxial pump in a 5.8 mm CFA without a cannula is high, advised.
    dev = {"kind": "microaxial-pump", "size_fr": 14, "label": "inner"}
    a = assess_patient(_patient(device=dev, vessel_mm=5.8), PROTOCOL, AT)
    assert a.tier == "high"
    assert a.dpc_advised and a.advice is not None and a.advice.rule == "distal-flow-floor"
    assert "not advised" not in " ".join(a.basis)
    # The SAR (about 0.97) is under its limit: the advice says the flow estimate governs.
    assert a.advice.governs and "flow estimate governs" in a.advice.governs


# --- the combination against the relative risks it cites -----------------------------------


@pytest.mark.parametrize(
    ("field", "factor", "rr"),
    [
        # Alderman JD et al., J Am Coll Cardiol 1987;9(3):524: RR PVD 1.9, diabetes 2.0,
        # female 1.8 (balloon-pump series).
        ({"pad": True}, "pad", 1.9),
        ({"diabetes": True}, "diabetes", 2.0),
        ({"sex": "female"}, "female", 1.8),
    ],
)
def test_patient_factors_carry_alderman_relative_risks(field, factor, rr):
    a = assess_patient(_patient(**field), PROTOCOL, AT)
    assert _weights(a)[factor] == rr
    assert a.tier == "raised"  # any one of them reaches the 1.5 threshold (unit policy)
    assert any("Alderman" in r for r in a.reasons)


def test_combination_is_the_product_of_the_cited_weights():
    # Hand arithmetic: VA-ECMO 2.0 x PAD 1.9 x diabetes 2.0 = 7.6 in a 9 mm CFA (no narrowing).
    a = assess_patient(_ecmo(pad=True, diabetes=True), PROTOCOL, AT)
    assert a.total == pytest.approx(7.6)
    assert a.tier == "high"  # 7.6 >= 4.0 (unit policy)
    # Balloon pump x female 1.8 x diabetes 2.0 = 3.6: raised, under the 4.0 of high.
    dev = {"kind": "balloon-pump", "size_fr": 7.5, "label": "outer"}
    b = assess_patient(_patient(device=dev, sex="female", diabetes=True), PROTOCOL, AT)
    assert b.total == pytest.approx(1.8 * 2.0) and b.tier == "raised"


def test_cannula_in_place_weighs_marbach_odds_ratio():
    # Marbach JA et al., Int J Cardiol 2022: prophylactic distal cannula OR 0.31.
    dpc = {"size_fr": 7, "inserted": "2026-12-02T09:00"}
    a = assess_patient(_ecmo(dpc=dpc), PROTOCOL, AT)
    assert _weights(a)["dpc-in-place"] == 0.31
    assert a.total == pytest.approx(2.0 * 0.31)
    # VA-ECMO keeps at least raised (min_tier, unit policy) although 0.62 < 1.5.
    assert a.tier == "raised"


def test_sar_and_flow_count_once():
    # 18 Fr outer = 6.0 mm in 5.70 mm: SAR 1.0526 >= 1.05 (Hayashida 2011; Barbanti 2013)
    # and no lumen left (flow 0): both narrowing factors apply, only the larger (7.9) counts.
    a = assess_patient(_patient(device={"size_fr": 18}, vessel_mm=5.70), PROTOCOL, AT)
    assert "sar" in a.factors and "distal-flow" in a.factors
    counted = [w.id for w in a.weighted if w.counted]
    assert "distal-flow" in counted and "sar" not in counted
    assert a.total == pytest.approx(7.9)
    assert a.sar == pytest.approx(6.0 / 5.70, abs=1e-3)


def test_standard_without_factors():
    a = assess_patient(_patient(), PROTOCOL, AT)
    assert a.tier == "standard" and a.total == pytest.approx(1.0)
    # SAR: 8 Fr outer = 8/3 mm (French scale, exact) over the 9.0 mm vessel.
    assert a.sar == pytest.approx(8 / 3 / 9.0, abs=1e-3)


def test_femoral_va_ecmo_cites_cheng_2014():
    # Cheng et al., Ann Thorac Surg 2014: limb ischaemia 16.9% (95% CI 12.5-22.6).
    a = assess_patient(_ecmo(), PROTOCOL, AT)
    assert a.tier == "raised"
    assert "16.9% (95% CI 12.5-22.6)" in a.reasons[0] and "Cheng" in a.reasons[0]


def test_pad_reason_cites_what_the_source_gives():
    # Alderman JD et al., J Am Coll Cardiol 1987;9:524: RR 1.9 for peripheral vascular
    # disease. The "OR about 13.7" once given for PAD is in neither cited paper.
    reasons = " ".join(assess_patient(_patient(pad=True), PROTOCOL, AT).reasons)
    assert "Alderman" in reasons and "13.7" not in reasons


def test_not_a_validated_score_is_said():
    a = assess_patient(_patient(), PROTOCOL, AT)
    assert any("Not a validated score" in b for b in a.basis)
    assert any("not a validated score" in r for r in a.reasons)
    assert "no validated score exists" in load_rules().statement


def test_reference_diameter_flagged_when_no_measurement():
    # Chiam et al., Int J Cardiol 2013;167:1373-1379: femoral minimal lumen diameter by CT,
    # men 7.3 +/- 1.8 mm, women 6.3 +/- 1.5 mm (patients, not volunteers' outer diameters).
    man = assess_patient(_patient(vessel_mm=None), PROTOCOL, AT)
    woman = assess_patient(_patient(vessel_mm=None, sex="female"), PROTOCOL, AT)
    assert man.vessel_mm == 7.3 and not man.vessel_measured
    assert woman.vessel_mm == 6.3
    assert any(REFERENCE_MARK in x and "Chiam" in x for x in man.assumptions)
    ref, note = reference_diameter("CFA", "unspecified")
    assert ref.diameter_mm == 6.3 and "sex not given" in note


def test_unmeasured_vessel_is_said_and_flagged():
    # Issue 11, deliverable 2: no vessel_mm -> "access vessel not measured", reference flagged.
    a = assess_patient(_patient(vessel_mm=None), PROTOCOL, AT)
    assert not a.vessel_measured
    assert a.reasons[0].startswith("access vessel not measured")
    assert REFERENCE_MARK in a.reasons[0]
    assert any(REFERENCE_MARK in x for x in a.assumptions)
    assert a.advice is not None  # advice and tier still worked out, on the reference


def test_map_override_changes_the_estimate():
    # Perfusion = MAP - venous 10: the VA-ECMO default MAP 65 gives 55 mmHg; a unit-file MAP of
    # 90 gives 80 mmHg and, at the same bed resistance rule, more flow past the cannula.
    low = assess_patient(_ecmo(vessel_mm=6.5), PROTOCOL, AT)
    high = assess_patient(_ecmo(vessel_mm=6.5, map_mmhg=90), PROTOCOL, AT)
    assert low.limb is not None and high.limb is not None
    assert low.limb.perfusion_mmhg == 55 and low.limb.map_assumed
    assert high.limb.perfusion_mmhg == 80 and not high.limb.map_assumed
    assert high.limb.distal_flow_pct_eccentric > low.limb.distal_flow_pct_eccentric


def test_map_out_of_range_refused():
    from vascplan.errors import InputError

    with pytest.raises(InputError, match="map_mmhg"):
        _patient(map_mmhg=200)


def test_dpc_in_place_reported_and_clinician_event():
    events = [{"at": "2026-12-02T10:00", "tier": "high", "note": "cold foot"}]
    dpc = {"size_fr": 7, "inserted": "2026-12-02T09:00"}
    a = assess_patient(_ecmo(dpc=dpc, events=events), PROTOCOL, AT)
    assert a.dpc_in_place and not a.dpc_advised
    assert a.tier == "high" and "cold foot" in a.reasons[-1]
    before = assess_patient(
        _ecmo(dpc=dpc, events=events), PROTOCOL, datetime(2026, 12, 2, 8, 30, tzinfo=UTC)
    )
    assert before.tier == "raised" and not before.dpc_in_place and before.dpc_advised


def test_rule_table_refuses_unknown_test(tmp_path):
    from vascplan.errors import InputError
    from vascplan.paths import data_dir

    text = (data_dir() / "surveillance" / "risk_rules.yaml").read_text()
    bad = tmp_path / "rules.yaml"
    bad.write_text(text.replace("test: pad\n", "test: padd\n", 1))
    index = [f.id for f in load_rules().factors].index("pad")
    with pytest.raises(InputError) as exc:
        load_rules(str(bad))
    assert str(exc.value).startswith(f"{bad}: factors.{index}.test: unknown test 'padd'")


def test_dwell_is_real_elapsed_time_and_tier_changes_at_72_h():
    # 2026-10-23 08:10 BST to 2026-10-26 07:10 GMT is 72 real hours (71 on the wall clock).
    p = _patient(device={"inserted": "2026-10-23T08:10"})
    a = assess_patient(p, PROTOCOL, datetime(2026, 10, 26, 7, 10, tzinfo=UTC))
    assert a.dwell_h == 72.0 and "long-dwell" in a.factors
    changes = tier_changes(p, PROTOCOL, datetime(2026, 10, 27, tzinfo=UTC))
    # standard (1.0) at insertion, raised (x1.5 long dwell, unit policy) 72 real hours later.
    assert [t for _, t in changes] == ["standard", "raised"]
    assert changes[1][0].astimezone(UTC) == datetime(2026, 10, 26, 7, 10, tzinfo=UTC)


def test_no_dpc_advice_once_the_device_is_out():
    dev = {"kind": "va-ecmo-arterial", "size_fr": 17, "label": "outer"}
    dpc = {"size_fr": 7, "inserted": "2026-12-02T09:00"}
    p = _patient(device={**dev, "removed": "2026-12-02T10:00"}, dpc=dpc)
    after = assess_patient(p, PROTOCOL, datetime(2026, 12, 2, 11, 0, tzinfo=UTC))
    assert after.dpc_advised is False and after.dpc_in_place is False
    assert "device removed" in after.basis[0]
    assert p.dpc_in_at(datetime(2026, 12, 2, 9, 30, tzinfo=UTC))


def test_json_and_table_show_factors_weights_and_total():
    a = assess_patient(_ecmo(pad=True, diabetes=True), PROTOCOL, AT)
    doc = risk_to_dict([a], AT, "Test unit")["patients"][0]
    assert {f["id"]: f["weight"] for f in doc["factors"]} == {
        "device-va-ecmo": 2.0,
        "pad": 1.9,
        "diabetes": 2.0,
    }
    assert doc["relative_risk_total"] == pytest.approx(math.prod([2.0, 1.9, 2.0]))
    assert doc["validated_score"] is False
    assert doc["cannula_advice"]["rule"] == "va-ecmo-prophylactic"
    table = risk_table([a], AT, "Test unit")
    assert "x1.9 known peripheral arterial disease" in table
    assert "7.60" in table and "not a validated score" in table
