"""Risk rules against their named sources, and distal perfusion cannula advice."""

from __future__ import annotations

from datetime import UTC, datetime

import pytest

from tests.surv_factory import PROTOCOL, make_unit, sheath_patient
from vascplan.safety import REFERENCE_MARK
from vascplan.surveillance.risk import (
    assess_patient,
    dpc_advice,
    load_rules,
    reference_diameter,
)

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
    return _patient(device=dev, **over)


def test_standard_without_factors():
    a = assess_patient(_patient(), PROTOCOL, AT)
    assert a.tier == "standard"
    assert a.reasons == ["no listed risk factor applies"]
    # SAR: 8 Fr outer = 8/3 mm (French scale, exact) over the 9.0 mm vessel.
    assert a.sar == pytest.approx(8 / 3 / 9.0, abs=1e-3)


def test_femoral_va_ecmo_cites_cheng_2014():
    # Cheng et al., Ann Thorac Surg 2014: limb ischaemia 16.9% (95% CI 12.5-22.6), femoral VA-ECMO.
    a = assess_patient(_ecmo(), PROTOCOL, AT)
    assert a.tier == "raised"
    assert "16.9% (95% CI 12.5-22.6)" in a.reasons[0] and "Cheng" in a.reasons[0]


def test_sar_threshold_1_05_hayashida():
    # Hayashida et al. 2011 (from memory) / Barbanti 2013 (seen): SFAR >= 1.05.
    # 18 Fr outer = 6.0 mm: in 5.70 mm SAR = 1.0526 (at threshold), in 5.75 mm 1.0435 (below).
    at = assess_patient(_patient(device={"size_fr": 18}, vessel_mm=5.70), PROTOCOL, AT)
    below = assess_patient(_patient(device={"size_fr": 18}, vessel_mm=5.75), PROTOCOL, AT)
    assert "sar" in at.factors and "sar" not in below.factors
    assert at.sar == pytest.approx(6.0 / 5.70, abs=1e-3)


@pytest.mark.parametrize(
    ("field", "factor", "source"),
    [
        ({"pad": True}, "pad", "RR 1.9"),  # PAD: Alderman 1987, RR 1.9 (balloon pumps)
        ({"diabetes": True}, "diabetes", "Alderman"),  # diabetes: both
        ({"sex": "female"}, "female", "Alderman"),  # female sex: Alderman 1987 (balloon pumps)
    ],
)
def test_patient_factors_name_their_sources(field, factor, source):
    a = assess_patient(_patient(**field), PROTOCOL, AT)
    assert factor in a.factors and a.tier == "raised"
    assert any(source in r for r in a.reasons)


def test_pad_reason_cites_what_the_source_gives():
    # Alderman JD et al., J Am Coll Cardiol 1987;9:524: RR 1.9 for peripheral vascular
    # disease. The "OR about 13.7" once given for PAD is in neither cited paper.
    reasons = " ".join(assess_patient(_patient(pad=True), PROTOCOL, AT).reasons)
    assert "Alderman" in reasons and "13.7" not in reasons


def test_three_factors_give_high():
    a = assess_patient(_ecmo(pad=True, diabetes=True), PROTOCOL, AT)
    assert a.tier == "high"
    assert any("unit policy" in r for r in a.reasons)


def test_not_a_validated_score_is_said():
    a = assess_patient(_patient(), PROTOCOL, AT)
    assert any("Not a validated score" in b for b in a.basis)
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


def test_dpc_advised_on_femoral_ecmo_with_sources():
    # Prophylactic DPC: Marbach 2022 OR 0.31; Gouchoe 2024 RR 0.41; Jang 2018 2.1% vs 8.2%.
    advised, basis = dpc_advice("va-ecmo-arterial", 0.8, False, "male", 9.0, False)
    assert advised
    assert "OR 0.31" in basis[0] and "RR 0.41" in basis[0] and "2.1% vs 8.2%" in basis[0]


def test_dpc_not_advised_when_in_place_or_not_femoral():
    assert dpc_advice("va-ecmo-arterial", 0.8, False, "male", 9.0, True)[0] is False
    advised, basis = dpc_advice(
        "va-ecmo-arterial", 0.8, False, "male", 9.0, False, access_vessel="AXA"
    )
    assert advised is False and "AXA" in basis[0]


def test_dpc_for_other_devices_by_sar_or_pad():
    assert dpc_advice("microaxial-pump", 1.06, False, "female", 5.3, False)[0] is True
    assert dpc_advice("microaxial-pump", 1.04, False, "female", 5.4, False)[0] is False
    assert dpc_advice("large-bore-sheath", 0.5, True, "male", 9.0, False)[0] is True
    with pytest.raises(ValueError):
        dpc_advice("ecmo", 1.0, False, "male", 9.0, False)


def test_balloon_pump_with_pad_raises_tier_but_no_dpc():
    # A 7-8 Fr balloon pump threatening the leg is taken out or moved, not given a distal
    # cannula (common practice); PAD still raises the tier (Cheng 2014; Alderman 1987).
    advised, basis = dpc_advice("balloon-pump", 0.3, True, "male", 9.0, False)
    assert advised is False
    assert "take the pump out or move it" in basis[0]


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
    with pytest.raises(InputError) as exc:
        load_rules(str(bad))
    assert str(exc.value).startswith(f"{bad}: factors.3.test: unknown test 'padd' (did you mean")


def test_dwell_is_real_elapsed_time():
    # 2026-10-23 08:10 BST to 2026-10-26 07:10 GMT is 72 real hours (71 on the wall clock).
    p = _patient(device={"inserted": "2026-10-23T08:10"})
    a = assess_patient(p, PROTOCOL, datetime(2026, 10, 26, 7, 10, tzinfo=UTC))
    assert a.dwell_h == 72.0 and "long-dwell" in a.factors


def test_no_dpc_advice_once_the_device_is_out():
    # A femoral VA-ECMO cannula that has come out needs no distal cannula; its own distal
    # cannula, fed from the circuit, comes out with it (common practice).
    dev = {"kind": "va-ecmo-arterial", "size_fr": 17, "label": "outer"}
    dpc = {"size_fr": 7, "inserted": "2026-12-02T09:00"}
    p = _patient(device={**dev, "removed": "2026-12-02T10:00"}, dpc=dpc)
    after = assess_patient(p, PROTOCOL, datetime(2026, 12, 2, 11, 0, tzinfo=UTC))
    assert after.dpc_advised is False and after.dpc_in_place is False
    assert "device removed" in after.basis[0]
    assert p.dpc_in_at(datetime(2026, 12, 2, 9, 30, tzinfo=UTC))
