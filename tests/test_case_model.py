"""The case model: the example from issue 2 and a few checks against the anatomy."""

from __future__ import annotations

import pytest

from vascplan.case.load import load_case
from vascplan.case.model import Case
from vascplan.errors import InputError

ISSUE_EXAMPLE = """\
format: vascplan-case/1
patient:
  ref: DEMO-07
  sex: female
  height_cm: 158
  weight_kg: 61
  anticoagulated: true
vessels:
  R-CFA: {diameter_mm: 6.1, calcification: moderate}
  L-RAD: {diameter_mm: 2.2}
  L-SFA: {length_cm: 29}
lesions:
  - segment: L-SFA
    kind: occlusion
    stenosis_pct: 100
    start_cm: 4
    length_cm: 18
    calcification: severe
    proximal_cap: blunt
    distal_cap: tapered
stents:
  - {segment: R-CIA, start_cm: 0, length_cm: 5, diameter_mm: 9}
grafts:
  - {name: fem-pop, from: L-CFA, from_cm: 2, to: L-POP, to_cm: 12, diameter_mm: 6, patent: true}
avoid:
  - {site: L-RAD, reason: dialysis fistula planned}
procedure:
  purpose: treat
  target: {segment: L-SFA, at_cm: 12}
  sheath: {size_fr: 6, length_cm: 45}
  device: {profile_fr: 6, working_length_cm: 150}
"""


def test_issue_example_loads(tmp_path):
    p = tmp_path / "case.yaml"
    p.write_text(ISSUE_EXAMPLE)
    case = load_case(p)
    assert case.patient.height_cm == 158
    assert case.grafts[0].from_segment == "L-CFA" and case.grafts[0].to_cm == 12
    assert case.lesions[0].end_cm == 22
    assert case.procedure is not None and case.procedure.sheath.outer_mm is None
    assert case.weights == {} and case.limits == {}


def test_weights_and_limits_are_free_mappings():
    case = Case.model_validate(
        {
            "format": "vascplan-case/1",
            "patient": {"ref": "X", "sex": "male", "height_cm": 170},
            "weights": {"calcification": 2.0},
            "limits": {"sfar_max": 1.05},
        }
    )
    assert case.weights == {"calcification": 2.0} and case.limits == {"sfar_max": 1.05}


def test_occlusion_defaults_to_100():
    case = Case.model_validate(
        {
            "format": "vascplan-case/1",
            "patient": {"ref": "X", "sex": "male", "height_cm": 170},
            "lesions": [{"segment": "L-POP", "kind": "occlusion", "start_cm": 1, "length_cm": 2}],
        }
    )
    assert case.lesions[0].stenosis_pct == 100


def test_anatomy_error_names_field_without_context():
    with pytest.raises(InputError) as exc:
        Case.model_validate(
            {
                "format": "vascplan-case/1",
                "patient": {"ref": "X", "sex": "male", "height_cm": 170},
                "avoid": [{"site": "L-RADIAL", "reason": "x"}],
            }
        )
    assert (
        str(exc.value) == "<case>: avoid.0.site: unknown segment 'L-RADIAL' (did you mean 'L-RAD'?)"
    )
