"""The protocol file: the bundled protocol, and every validation error with its exact line."""

from __future__ import annotations

from pathlib import Path

import pytest

from vascplan.errors import InputError
from vascplan.paths import data_dir
from vascplan.surveillance.protocol import load_protocol

STANDARD = data_dir() / "protocols" / "standard.yaml"


def _variant(tmp_path: Path, old: str, new: str, count: int = 1) -> Path:
    text = STANDARD.read_text()
    assert old in text, old
    p = tmp_path / "proto.yaml"
    p.write_text(text.replace(old, new, count))
    return p


def _message(path: Path) -> str:
    with pytest.raises(InputError) as exc:
        load_protocol(str(path), "unit.yaml")
    return str(exc.value).replace(str(path), "proto.yaml")


def test_bundled_protocol_matches_references():
    p = load_protocol("standard", "unit.yaml")
    by_name = {ph.name: ph for ph in p.phases}
    # REFERENCES.md: hourly leg checks during femoral ECMO / balloon-pump support (seen).
    assert by_name["maintenance"].every_min == 60
    # REFERENCES.md: after sheath removal, every 15 min x 4, 30 min x 4, hourly x 4 (practice).
    steps = [(ph.every_min, ph.count) for ph in p.phases_after("removal")]
    assert steps == [(15, 4), (30, 4), (60, 4)]
    # Capillary refill normal under 2-3 s (REFERENCES.md, seen): the slow threshold is 3 s.
    assert p.review.capillary_refill_slow_s.value == 3
    assert "No guideline fixes NIRS thresholds" in p.review.note
    ids = {e.id for e in p.escalation}
    assert {"pulse-lost", "nirs-fall", "ali-IIb", "compartment", "bleeding"} <= ids
    every_value_sourced = [ph.source for ph in p.phases] + [e.source for e in p.escalation]
    assert all(s.strip() for s in every_value_sourced)


def test_tier_tightens_and_tolerance_bands():
    p = load_protocol("standard", "unit.yaml")
    maint = p.phases[2]
    assert p.interval_min(maint, "standard") == 60
    assert p.interval_min(maint, "raised") == 30
    assert p.tolerance_min(15) < p.tolerance_min(60)  # tighter for frequent checks


def test_items_by_device_and_what_is_in_place():
    p = load_protocol("standard", "unit.yaml")
    ecmo = p.items_for("va-ecmo-arterial", nirs_monitored=True, dpc_in_place=True)
    assert {"pulses", "nirs", "dpc", "circuit-flow", "capillary-refill", "calf"} <= set(ecmo)
    sheath = p.items_for("large-bore-sheath", nirs_monitored=False, dpc_in_place=False)
    assert "nirs" not in sheath and "dpc" not in sheath and "circuit-flow" not in sheath


def test_unknown_bundled_name():
    with pytest.raises(InputError) as exc:
        load_protocol("standrd", "unit.yaml")
    assert str(exc.value) == (
        "unit.yaml: protocol: unknown protocol 'standrd' (did you mean 'standard'?); "
        "bundled: standard, or give a path to a protocol file"
    )


def test_relative_path_from_unit_folder(tmp_path):
    (tmp_path / "local.yaml").write_text(STANDARD.read_text())
    assert load_protocol("local.yaml", "unit.yaml", base_dir=tmp_path).name == "standard"
    with pytest.raises(InputError) as exc:
        load_protocol("missing.yaml", "unit.yaml", base_dir=tmp_path)
    missing = tmp_path / "missing.yaml"
    assert str(exc.value) == f"unit.yaml: protocol: protocol file '{missing}' not found"


# Every protocol-validation error, with the exact line the user sees.
CASES = [
    (
        "format: vascplan-protocol/1",
        "format: vascplan-protocol/2",
        "proto.yaml: format: Input should be 'vascplan-protocol/1' (got 'vascplan-protocol/2')",
    ),
    ("name: standard", "name: standard\ncolour: red", "proto.yaml: colour: unknown field"),
    (
        "    for_min: 60\n    source: common practice\n",
        "    for_min: 60\n",
        "proto.yaml: phases.0.source: required field is missing",
    ),
    (
        "    for_min: 60\n    source: common practice",
        "    for_min: 60\n    source: ''",
        "proto.yaml: phases.0.source: String should have at least 3 characters (got '')",
    ),
    (
        "    every_min: 15\n    for_min: 60",
        "    every_min: 0\n    for_min: 60",
        "proto.yaml: phases.0.every_min: Input should be greater than or equal to 1 (got 0)",
    ),
    (
        "    for_min: 60\n",
        "    for_min: 60\n    count: 4\n",
        "proto.yaml: phases.0: give for_min or count, not both",
    ),
    (
        "  - name: settling",
        "  - name: post-insertion",
        "proto.yaml: phases.1.name: phase 'post-insertion' is named twice",
    ),
    (
        "    after: insertion\n    every_min: 15",
        "    after: removal\n    every_min: 15",
        "proto.yaml: phases.0.after: list the phases after insertion first, "
        "then those after removal",
    ),
    (
        '    every_min: 60\n    source: "hourly',
        '    every_min: 60\n    for_min: 600\n    source: "hourly',
        "proto.yaml: phases.2: the last phase after insertion must run until removal "
        "(no for_min or count)",
    ),
    (
        "    every_min: 15\n    count: 4\n",
        "    every_min: 15\n",
        "proto.yaml: phases.3: give for_min or count; only the last phase after insertion runs "
        "until removal",
    ),
    (
        "    every_min: {maintenance: 30}",
        "    every_min: {maintenanse: 30}",
        "proto.yaml: tiers.raised.every_min.maintenanse: unknown phase 'maintenanse' "
        "(did you mean 'maintenance'?); phases are post-insertion, settling, maintenance, "
        "post-removal-15, post-removal-30, post-removal-60",
    ),
    (
        "    every_min: {maintenance: 30}",
        "    every_min: {maintenance: 90}",
        "proto.yaml: tiers.raised.every_min.maintenance: a tier may only tighten a phase: "
        "every_min must be 1-60 (got 90)",
    ),
    (
        "  raised:",
        "  elevated:",
        "proto.yaml: tiers.elevated.[key]: Input should be 'raised' or 'high' (got 'elevated')",
    ),
    (
        "check_duration_min: {value: 5,",
        "check_duration_min: {value: 0,",
        "proto.yaml: check_duration_min.value: must be above 0 and at most 60 minutes",
    ),
    (
        "handover_window_min: {value: 60,",
        "handover_window_min: {value: 0,",
        "proto.yaml: handover_window_min.value: must be above 0 and at most 720 minutes",
    ),
    (
        "{up_to_every_min: 30, tolerance_min: 10",
        "{up_to_every_min: 10, tolerance_min: 10",
        "proto.yaml: tolerance.1.up_to_every_min: bands must rise: each up_to_every_min above "
        "the one before",
    ),
    (
        "  - {up_to_every_min: 60, tolerance_min: 15, source: unit policy}\n"
        "  - {up_to_every_min: 1440, tolerance_min: 20, source: unit policy}\n",
        "  - {up_to_every_min: 45, tolerance_min: 15, source: unit policy}\n",
        "proto.yaml: phases.2.every_min: no tolerance band covers every_min 60; the widest band is "
        "up_to_every_min 45",
    ),
    (
        "{up_to_every_min: 15, tolerance_min: 5",
        "{up_to_every_min: 15, tolerance_min: 15",
        "proto.yaml: tolerance.0.tolerance_min: must be shorter than every interval it covers "
        "(15 min at phases.0.every_min)",
    ),
    ("  - id: colour", "  - id: pulses", "proto.yaml: items.2.id: item 'pulses' is listed twice"),
    (
        "    devices: [va-ecmo-arterial]",
        "    devices: [va-ecmo]",
        "proto.yaml: items.10.devices.0: unknown device kind 'va-ecmo' (did you mean "
        "'va-ecmo-arterial'?); use all or one of va-ecmo-arterial, microaxial-pump, balloon-pump, "
        "large-bore-sheath",
    ),
    (
        "    when: nirs-monitored",
        "    when: sometimes",
        "proto.yaml: items.1.when: Input should be 'always', 'nirs-monitored' or 'dpc-in-place' "
        "(got 'sometimes')",
    ),
    (
        "  - id: nirs-fall",
        "  - id: pulse-lost",
        "proto.yaml: escalation.1.id: escalation 'pulse-lost' is listed twice",
    ),
    (
        "    within_min: 15\n    source: unit policy\n  - id: nirs-fall",
        "    within_min: 0\n    source: unit policy\n  - id: nirs-fall",
        "proto.yaml: escalation.0.within_min: Input should be greater than or equal to 1 (got 0)",
    ),
    (
        '    call: "Doctor in charge of the patient; vascular surgeon"\n    within_min: 15',
        "    within_min: 15",
        "proto.yaml: escalation.0.call: required field is missing",
    ),
    (
        "  nirs_absolute_floor_pct:\n    value: 50",
        "  nirs_absolute_floor_pct:\n    value: 150",
        "proto.yaml: review.nirs_absolute_floor_pct.value: must be 1-100 (got 150)",
    ),
    (
        "  capillary_refill_slow_s:\n    value: 3",
        "  capillary_refill_slow_s:\n    value: 0.5",
        "proto.yaml: review.capillary_refill_slow_s.value: must be 1-10 (got 0.5)",
    ),
    (
        "  capillary_refill_slow_s:\n    value: 3\n"
        '    source: "capillary refill normal under 2-3 s, slower in the elderly and the cold '
        '(common practice; nursing assessment guides seen)"\n',
        "",
        "proto.yaml: review.capillary_refill_slow_s: required field is missing",
    ),
    (
        "review:\n  note:",
        "review:\n  nirs_sustained_min: {value: 10, source: seen}\n  note:",
        "proto.yaml: review.nirs_sustained_min: unknown field",
    ),
]


@pytest.mark.parametrize(
    ("old", "new", "expected"), CASES, ids=[c[2].split(": ")[1] for c in CASES]
)
def test_validation_error_line(tmp_path, old, new, expected):
    assert _message(_variant(tmp_path, old, new)) == expected


def test_no_phase_after_removal(tmp_path):
    text = STANDARD.read_text()
    head, tail = text.split("  - name: post-removal-15", 1)
    rest = tail.split("# A risk tier", 1)[1]
    p = tmp_path / "proto.yaml"
    p.write_text(head + "\n# A risk tier" + rest.replace(", post-removal-60: 30", ""))
    assert _message(p) == "proto.yaml: phases: needs at least one phase after removal"


def test_arm_and_leg_items_by_limb():
    # Axillary/subclavian access puts the arm at risk, femoral access the leg (common practice).
    p = load_protocol("standard", "unit.yaml")
    leg = p.items_for("microaxial-pump", nirs_monitored=True, dpc_in_place=False)
    arm = p.items_for("microaxial-pump", nirs_monitored=True, dpc_in_place=False, limb="arm")
    assert {"pulses", "calf", "nirs"} <= set(leg) and not {"arm-pulses", "forearm"} & set(leg)
    assert {"arm-pulses", "forearm", "access-site", "pump-position"} <= set(arm)
    assert not {"pulses", "calf", "nirs"} & set(arm)


def test_unknown_limb_is_one_line(tmp_path):
    path = _variant(tmp_path, "    limb: arm\n", "    limb: hand\n")
    assert _message(path) == (
        "proto.yaml: items.12.limb: Input should be 'leg', 'arm' or 'any' (got 'hand')"
    )
