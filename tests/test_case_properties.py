"""Properties of case validation (hypothesis): every impossible value is one clear refusal."""

from __future__ import annotations

from hypothesis import given, settings
from hypothesis import strategies as st

from vascplan.case.load import validate_case
from vascplan.errors import InputError
from vascplan.refdata.anatomy import load_reference

REF = load_reference()
IDS = sorted(REF)
SETTINGS = settings(max_examples=40, deadline=None)


def _case(**extra) -> dict:
    return {
        "format": "vascplan-case/1",
        "patient": {"ref": "DEMO-P", "sex": "female", "height_cm": 165},
        **extra,
    }


def _refusal(data: dict) -> InputError:
    try:
        validate_case("case.yaml", data)
    except InputError as exc:
        return exc
    raise AssertionError("accepted")


@SETTINGS
@given(st.sampled_from(IDS), st.data())
def test_diameter_outside_the_segment_range_is_refused(seg, data):
    r = REF[seg]
    d = data.draw(
        st.floats(0.01, r.diameter_min_mm, exclude_max=True)
        | st.floats(r.diameter_max_mm, 500, exclude_min=True)
    )
    exc = _refusal(_case(vessels={seg: {"diameter_mm": d}}))
    assert exc.field == f"vessels.{seg}.diameter_mm"
    assert f"({r.diameter_min_mm:g}-{r.diameter_max_mm:g} mm)" in exc.message


@SETTINGS
@given(st.floats(-1e4, 100, exclude_max=True) | st.floats(230, 1e4, exclude_min=True))
def test_height_outside_100_230_is_refused(height):
    exc = _refusal({**_case(), "patient": {"ref": "P", "sex": "male", "height_cm": height}})
    assert (exc.field, exc.message.split(" (got")[0]) == ("patient.height_cm", "must be 100-230 cm")


@SETTINGS
@given(st.sampled_from(IDS), st.floats(0.01, 50), st.floats(0.0, 1.0))
def test_lesion_past_the_segment_end_is_refused(seg, overshoot_cm, start_share):
    length = REF[seg].length_for_height_cm(165)
    start = start_share * length
    lesion = {
        "segment": seg,
        "kind": "stenosis",
        "stenosis_pct": 50,
        "start_cm": start,
        "length_cm": length - start + overshoot_cm,
    }
    exc = _refusal(_case(lesions=[lesion]))
    assert exc.field in ("lesions.0.length_cm", "lesions.0.start_cm")
    assert f"past the end of {seg}" in exc.message


@SETTINGS
@given(st.floats(-1e3, 0, exclude_max=True) | st.floats(100, 1e3, exclude_min=True))
def test_stenosis_outside_0_100_is_refused(pct):
    lesion = {
        "segment": "L-SFA",
        "kind": "stenosis",
        "stenosis_pct": pct,
        "start_cm": 1,
        "length_cm": 2,
    }
    exc = _refusal(_case(lesions=[lesion]))
    assert exc.field == "lesions.0.stenosis_pct"
    assert exc.message.startswith("must be 0-100%")
