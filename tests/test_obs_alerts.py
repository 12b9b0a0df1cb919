"""Issue 13: alerts a nurse can act on, and monitoring that starts on admission.

Alerts are grouped by patient and limb, the groups sorted by urgency (the protocol's
``within_min``), repeats of one rule merged into one line with a count and the times, each
run of alerts headed by whom to call and how fast; the JSON keeps every alert with its
group key. Expected texts are written out from the standard protocol's escalation section
(``vascplan/data/protocols/standard.yaml``) and the review's rule wording.
"""

from __future__ import annotations

import json
from datetime import datetime, timedelta

import yaml

from tests.test_obs_review import FULL_CHECK, PROTOCOL, T, _store, unit
from vascplan.observations.review import render_table, review_unit, to_json
from vascplan.surveillance.unit import load_unit

LATER = [  # 19:40, ten minutes after a whole, quiet check at 19:30
    ("colour", "R", "pale"),
    ("colour", "L", "normal"),
    ("temperature", "R", "cool"),
    ("temperature", "L", "warm"),
    ("calf", "R", "tense"),
    ("dpc", "", "no-flow"),
    ("pulse", "R-DPA", "absent"),
    ("pulse", "R-PTA", "palpable"),  # one pedal signal still audible: ALI category I
]


def _review(tmp_path):
    store = _store(tmp_path, [(0, *f) for f in FULL_CHECK] + [(10, *f) for f in LATER])
    return review_unit(unit, store, T + timedelta(minutes=15), protocol=PROTOCOL)


def test_grouped_alerts_exact_table(tmp_path):
    table = render_table(_review(tmp_path)).splitlines()
    start = table.index(
        "Bed 1  DEMO-11  last check 2026-12-01 19:40+00:00  ALI category I  ABI L -, R -"
    )
    block = table[start : table.index("", start)]
    assert block[1:] == [
        # calf tense -> compartment: 5 min; lost pedal signal -> pulse-lost: 15 min;
        # pale and cool -> perfusion-reduced: 30 min; cannula without flow -> dpc-fault: 15 min.
        "  [right leg] most urgent: within 5 min",
        "    call: Vascular surgeon and doctor in charge, immediately (within 5 min), for:",
        "      ALERT calf-tense: R calf tense at 19:40+00:00",
        "            source: compartment syndrome signs (common practice; clinical reviews seen)",
        "    call: Doctor in charge of the patient; vascular surgeon (within 15 min), for:",
        "      ALERT pedal-signal-lost: R-DPA absent at 19:40+00:00; was doppler at 19:30+00:00",
        "            source: common practice (a lost pedal signal that was present)",
        "    call: Doctor in charge of the patient (within 30 min), for:",
        "      ALERT skin-change x2 (19:40+00:00): "
        "R leg temperature cool at 19:40+00:00; the other leg warm and this leg warm at "
        "19:30+00:00; R leg colour pale at 19:40+00:00; the other leg normal and this leg "
        "normal at 19:30+00:00",
        "            source: six Ps: pallor and poikilothermia (common practice); compared "
        "with the other leg and the earlier check: common practice",
        "  [device and access site] most urgent: within 15 min",
        "    call: ECMO specialist and doctor in charge (within 15 min), for:",
        "      ALERT dpc-fault: distal perfusion cannula no-flow at 19:40+00:00",
        "            source: common practice",
    ]


def test_json_keeps_every_alert_with_its_group(tmp_path):
    (p,) = json.loads(json.dumps(to_json(_review(tmp_path))))["patients"]
    assert sorted((a["rule"], a["group"]) for a in p["alerts"]) == [
        ("calf-tense", "R-leg"),
        ("dpc-fault", "device"),
        ("pedal-signal-lost", "R-leg"),
        ("skin-change", "R-leg"),
        ("skin-change", "R-leg"),
    ]
    assert [(g["group"], g["within_min"]) for g in p["alert_groups"]] == [
        ("R-leg", 5),
        ("device", 15),
    ]
    skin = p["alert_groups"][0]["lines"][-1]
    assert (skin["rule"], skin["count"], skin["first"], skin["last"]) == (
        "skin-change",
        2,
        "2026-12-01T19:40:00+00:00",
        "2026-12-01T19:40:00+00:00",
    )


def test_arm_device_escalation_in_arm_words():
    # standard.yaml: arm_finding of the compartment criterion; no calf, no calf NIRS.
    arm = {e.id: text for e, text in PROTOCOL.escalation_for("microaxial-pump", "arm")}
    assert arm["compartment"] == (
        "Tense forearm, pain out of proportion or on passive finger stretch"
    )
    assert arm["pulse-lost"] == (
        "A radial or ulnar pulse or Doppler signal present at baseline is lost"
    )
    assert "nirs-fall" not in arm and "circuit-fault" not in arm
    assert not any("calf" in t.lower() or "toe" in t.lower() for t in arm.values())
    leg = {e.id for e, _ in PROTOCOL.escalation_for("va-ecmo-arterial", "leg")}
    assert {"nirs-fall", "circuit-fault", "device-moved", "dpc-fault"} <= leg


# ---------------------------------------------------------------------------
# Monitoring start


def _admitted(tmp_path, monitoring_from: str | None):
    from tests.obs_fixtures import UNIT

    src = UNIT.read_text()
    if monitoring_from:
        src = src.replace(
            "    dpc: {size_fr: 7", f"    monitoring_from: {monitoring_from}\n    dpc: {{size_fr: 7"
        )
    path = tmp_path / "unit.yaml"
    path.write_text(src)
    return load_unit(path)


def test_nothing_overdue_before_monitoring_starts(tmp_path):
    # Inserted 14:20, admitted to this unit at 19:00 with the cannula in place; reviewed at
    # 19:50 with nothing recorded. Without a monitoring start every check since insertion is
    # overdue: 14:35 ... 19:35, 14 of them (derived by hand in test_obs_review). With it, the
    # schedule keeps the phase the device's age gives (raised-tier maintenance every 30 min:
    # 18:35, 19:05, 19:35) and only checks due from 19:00 count: 19:05 and 19:35 (its 10-min
    # tolerance ended 19:45).
    from vascplan.observations.store import open_store

    at = datetime(2026, 12, 1, 19, 50, tzinfo=unit.unit.tz)
    for monitoring_from, expected in [
        (None, 14),
        ("2026-12-01T19:00+00:00", 2),
    ]:
        u = _admitted(tmp_path, monitoring_from)
        with open_store(str(tmp_path / f"{expected}.db")) as store:
            (p,) = review_unit(u, store, at, protocol=PROTOCOL).patients
        assert len(p.overdue) == expected, monitoring_from
    assert [o.due.strftime("%H:%M") for o in p.overdue] == ["19:05", "19:35"]
    assert p.overdue[0].phase == "maintenance"


def test_monitoring_from_needs_its_offset(tmp_path):
    import pytest

    from vascplan.errors import InputError

    with pytest.raises(InputError) as exc:
        _admitted(tmp_path, "2026-12-01T19:00")
    assert "monitoring_from" in str(exc.value) and "UTC offset" in str(exc.value)


def test_a_protocol_without_records_counts_any_finding(tmp_path):
    # A unit's own protocol written before issue 13 (no `records` on its items): any finding
    # of the patient counts for the whole check, as before, rather than nothing ever counting.
    from vascplan.fileio import validate_data
    from vascplan.paths import data_dir
    from vascplan.surveillance.protocol import Protocol

    doc = yaml.safe_load((data_dir() / "protocols" / "standard.yaml").read_text())
    for item in doc["items"]:
        item.pop("records", None)
        item.pop("per_side", None)
    old = validate_data("old.yaml", doc, Protocol)
    store = _store(tmp_path, [(0, "nirs", "L", "68")])  # one finding at 19:30
    (p,) = review_unit(unit, store, T + timedelta(minutes=15), protocol=old).patients
    assert p.overdue == []  # 19:30 covers everything due up to 19:35 (tolerance 10 min)
    (p,) = review_unit(unit, store, T + timedelta(minutes=46), protocol=old).patients
    assert [o.due.strftime("%H:%M") for o in p.overdue] == ["20:05"]
    assert p.overdue[0].missing[:2] == ("pulses", "nirs")  # the protocol's item ids
