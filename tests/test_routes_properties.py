"""Properties of the planner that must always hold (hypothesis).

A route is identified by (site, direction, path); the properties compare the same
route between two versions of a case.
"""

from __future__ import annotations

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.routes_cases import VESSELS, case_data
from vascplan.case.load import validate_case
from vascplan.refdata.anatomy import load_reference
from vascplan.routes.plan import plan_case

SETTINGS = settings(max_examples=20, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])

# Measured segments a route to the left SFA may use; narrowing picks among them.
NARROWABLE = sorted(s for s in VESSELS if not s.startswith("AO-"))


def _plan(data):
    return plan_case(validate_case("prop", data))


def _by_key(result):
    return {(r.site, r.direction, tuple(r.path)): r for r in result.routes}


def _min_diameter(seg: str) -> float:
    return load_reference()[seg].diameter_min_mm


@SETTINGS
@given(seg=st.sampled_from(NARROWABLE), share=st.floats(0.5, 0.99))
def test_narrowing_a_vessel_never_lowers_a_sar_or_unblocks(seg, share):
    before = _plan(case_data())
    d = max(VESSELS[seg]["diameter_mm"] * share, _min_diameter(seg))
    after = _plan(case_data(vessels={seg: {"diameter_mm": d}}))
    a, b = _by_key(before), _by_key(after)
    assert a.keys() == b.keys()
    for key, r0 in a.items():
        r1 = b[key]
        if r0.sar is not None and r1.sar is not None:
            assert r1.sar >= r0.sar - 1e-12
        if not r0.feasible:
            assert not r1.feasible


@SETTINGS
@given(seg=st.sampled_from(NARROWABLE + ["AO-INFRA", "AO-DESC"]),
       start=st.floats(0.0, 0.75), length=st.floats(0.05, 0.2))
def test_adding_an_occlusion_never_makes_a_route_feasible(seg, start, length):
    seg_len = VESSELS[seg]["length_cm"]
    lesion = {"segment": seg, "kind": "occlusion", "start_cm": round(start * seg_len, 2),
              "length_cm": round(length * seg_len, 2)}
    before = _plan(case_data())
    after = _plan(case_data(lesions=[lesion]))
    a, b = _by_key(before), _by_key(after)
    for key, r0 in a.items():
        if not r0.feasible:
            assert not b[key].feasible


@SETTINGS
@given(working=st.floats(60, 200), extra=st.floats(0.1, 100))
def test_a_longer_shaft_never_makes_a_feasible_route_infeasible(working, extra):
    short = _plan(case_data(procedure={"device": {"profile_fr": 6,
                                                  "working_length_cm": working}}))
    long = _plan(case_data(procedure={"device": {"profile_fr": 6,
                                                 "working_length_cm": working + extra}}))
    a, b = _by_key(short), _by_key(long)
    for key, r0 in a.items():
        if r0.feasible:
            assert b[key].feasible


def _unmeasured(height_cm: float) -> dict:
    # Reference lengths only, so that height changes the lengths.
    return {
        "format": "vascplan-case/1",
        "patient": {"ref": "PROP", "sex": "female", "height_cm": height_cm},
        "procedure": {"purpose": "treat", "target": {"segment": "L-POP", "at_cm": 3},
                      "sheath": {"size_fr": 5, "length_cm": 11},
                      "device": {"profile_fr": 4, "working_length_cm": 150}},
    }


@SETTINGS
@given(height=st.floats(140, 200), taller=st.floats(0.5, 30))
def test_a_taller_patient_never_shortens_a_path(height, taller):
    a = _by_key(_plan(_unmeasured(height)))
    b = _by_key(_plan(_unmeasured(height + taller)))
    assert a.keys() == b.keys()
    for key, r0 in a.items():
        if r0.length_cm is not None:
            assert b[key].length_cm >= r0.length_cm - 1e-9
