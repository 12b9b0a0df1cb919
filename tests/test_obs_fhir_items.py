"""Issue 13: every observation item has a FHIR code and a display that fit it.

Standard codes only where confirmed (REFERENCES.md, seen): capillary refill LOINC 44963-7
"Capillary refill [Time] of Nail bed" (a nail bed is a toe's or a finger's, so it fits the
fingers below an arm device too). Every other item keeps the local system urn:vascplan:obs.
"""

from __future__ import annotations

from vascplan.observations.fhir import LOCAL_ITEM, LOINC, _code
from vascplan.observations.findings import ITEMS


def test_every_item_has_a_local_code_with_its_meaning():
    for item, spec in ITEMS.items():
        code = _code(item)
        local = [c for c in code["coding"] if c["system"] == LOCAL_ITEM]
        assert local == [{"system": LOCAL_ITEM, "code": item, "display": spec.meaning}]
        assert code["text"] == spec.meaning


def test_a_pulse_is_not_said_to_be_a_leg_pulse():
    # The same item records wrist pulses below an arm device (issue 13).
    display = _code("pulse")["text"]
    assert "pedal or leg" not in display
    assert "wrist" in display and "foot" in display


def test_capillary_refill_of_toes_and_fingers_is_loinc_44963_7():
    for item in ("refill", "finger-refill"):
        (loinc,) = [c for c in _code(item)["coding"] if c["system"] == LOINC]
        assert (loinc["code"], loinc["display"]) == (
            "44963-7",
            "Capillary refill [Time] of Nail bed",
        )


def test_device_and_hand_items_have_no_standard_code():
    for item in ("circuit-flow", "position", "hand-colour", "hand-temperature",
                 "hand-sensation", "hand-motor", "forearm", "dpc"):  # fmt: skip
        assert [c["system"] for c in _code(item)["coding"]] == [LOCAL_ITEM], item
