"""Review rules: baseline and other-leg comparisons, pedal loss, ALI calls, overdue, corrections."""

from __future__ import annotations

from datetime import datetime, timedelta

import pytest

from tests.obs_fixtures import UNIT
from vascplan.observations.findings import make_finding
from vascplan.observations.review import review_unit
from vascplan.observations.store import open_store
from vascplan.surveillance.protocol import load_protocol
from vascplan.surveillance.unit import load_unit

unit = load_unit(UNIT)
TZ = unit.unit.tz
PROTOCOL = load_protocol("standard", "test")
T = datetime(2026, 12, 1, 19, 30, tzinfo=TZ)  # a maintenance-phase moment for bed 1


def _store(tmp_path, rows, name="o.db"):
    store = open_store(str(tmp_path / name))
    findings = [
        make_finding(
            time=T + timedelta(minutes=m),
            bed=1,
            ref="DEMO-11",
            by="RN-A",
            item=i,
            site=s,
            value=v,
            source="t",
        )
        for m, i, s, v in rows
    ]
    store.record(findings, unit=unit.unit.key, kind="add", source="t")
    return store


def _alerts(store, minutes=0):
    (p,) = review_unit(unit, store, T + timedelta(minutes=minutes), protocol=PROTOCOL).patients
    return p, {(a.rule, a.side): a for a in p.alerts}


def test_nirs_fall_from_unit_baseline(tmp_path):
    # Unit file baseline R 66 %; standard protocol threshold 20 % relative fall: 52 is 21 % below.
    p, alerts = _alerts(_store(tmp_path, [(0, "nirs", "R", "52"), (0, "nirs", "L", "60")]))
    a = alerts[("nirs-fall", "R")]
    assert "21% below 66% (baseline in the unit file)" in a.detail
    assert a.escalation == "nirs-fall" and a.within_min == 30
    assert "No guideline fixes NIRS thresholds" in a.source
    assert ("nirs-fall", "L") not in alerts  # 60 is 12 % below 68
    assert ("nirs-floor", "R") not in alerts  # 52 is above the 50 % floor


def test_nirs_limb_difference_only_within_one_check(tmp_path):
    _, alerts = _alerts(_store(tmp_path, [(0, "nirs", "L", "68"), (0, "nirs", "R", "53")]))
    assert "15 points apart" in alerts[("nirs-limb-difference", "R")].detail  # threshold 15
    # One minute apart: one check (the standard protocol's check takes 5 min).
    _, alerts = _alerts(
        _store(tmp_path, [(0, "nirs", "L", "68"), (1, "nirs", "R", "53")], "b.db"), 1
    )
    assert (
        "NIRS L 68% vs R 53% at 19:30+00:00/19:31+00:00"
        in alerts[("nirs-limb-difference", "R")].detail
    )
    # Twenty minutes apart: two checks, not compared.
    _, alerts = _alerts(
        _store(tmp_path, [(0, "nirs", "L", "68"), (20, "nirs", "R", "53")], "c.db"), 20
    )
    assert ("nirs-limb-difference", "R") not in alerts


def test_pedal_loss_needs_a_signal_that_was_there(tmp_path):
    # R-DPA present at baseline (unit file): absent now is a loss. L-DPA never recorded present.
    _, alerts = _alerts(
        _store(tmp_path, [(0, "pulse", "R-DPA", "absent"), (0, "pulse", "L-DPA", "absent")])
    )
    assert (
        alerts[("pedal-signal-lost", "R")].detail
        == "R-DPA absent at 19:30+00:00; was present at baseline (unit file)"
    )
    assert ("pedal-signal-lost", "L") not in alerts
    # Returning signal closes the alert.
    _, alerts = _alerts(
        _store(
            tmp_path, [(0, "pulse", "R-DPA", "absent"), (5, "pulse", "R-DPA", "doppler")], "b.db"
        ),
        5,
    )
    assert ("pedal-signal-lost", "R") not in alerts


@pytest.mark.parametrize(
    ("findings", "category", "escalation"),
    [
        (
            [
                ("sensation", "R", "beyond-toes"),
                ("motor", "R", "weak"),
                ("pulse", "R-DPA", "absent"),
            ],
            "IIb",
            "ali-IIb",
        ),
        # Category III: the standard protocol's own ali-III criterion.
        (
            [
                ("sensation", "R", "absent"),
                ("motor", "R", "paralysed"),
                ("pulse", "R-DPA", "absent"),
                ("venous", "R", "absent"),
            ],
            "III",
            "ali-III",
        ),
    ],
)
def test_ali_category_and_whom_to_call(tmp_path, findings, category, escalation):
    p, alerts = _alerts(_store(tmp_path, [(0, *f) for f in findings]))
    assert p.ali_category == category
    a = alerts[("ali-category", "R")]
    assert a.escalation == escalation
    if category == "III":
        assert a.call.startswith("Vascular surgeon and consultant in charge, immediately")


def test_a_correction_changes_the_review(tmp_path):
    store = _store(tmp_path, [(0, "calf", "R", "tense")])
    _, alerts = _alerts(store)
    assert ("calf-tense", "R") in alerts
    entry = store.entries(unit.unit.key)[0].id
    store.correct(entry, "soft", by="RN-B", reason="wrong leg ticked")
    _, alerts = _alerts(store)
    assert ("calf-tense", "R") not in alerts
    assert [e.value for e in store.entries(unit.unit.key)] == ["tense", "soft"]


# Everything the standard protocol asks at a check of bed 1 (femoral VA-ECMO, NIRS baseline,
# distal cannula in): standard.yaml items pulses, nirs, colour, temperature, capillary-refill,
# sensation, movement, calf (each leg), access-site, dpc, circuit-flow, pump-position.
FULL_CHECK = [
    *[
        (item, side, value)
        for side in ("L", "R")
        for item, value in (
            ("nirs", "66"),
            ("refill", "2"),
            ("colour", "normal"),
            ("temperature", "warm"),
            ("sensation", "normal"),
            ("motor", "normal"),
            ("calf", "soft"),
        )
    ],
    ("pulse", "L-DPA", "palpable"),
    ("pulse", "R-DPA", "doppler"),
    ("access", "R", "dry"),
    ("dpc", "", "ok"),
    ("circuit-flow", "", "ok"),
    ("position", "", "unchanged"),
]


def test_overdue_against_the_schedule(tmp_path):
    # Raised tier, maintenance every 30 min from 18:35 (standard protocol, tolerance 10 min).
    store = _store(tmp_path, [(0, *f) for f in FULL_CHECK])  # 19:30 covers the 19:35 check
    p, _ = _alerts(store, minutes=15)  # 19:45: 19:35 + 10 not yet passed for a check after 19:25
    assert p.overdue == []
    p, alerts = _alerts(store, minutes=46)  # 20:16: 20:05 + 10 has passed
    assert [(o.due.strftime("%H:%M"), o.minutes_late) for o in p.overdue] == [("20:05", 11)]
    assert alerts[("check-overdue", None)].call == "Nurse in charge of the shift (within 15 min)"


def test_a_partial_check_leaves_the_other_items_due(tmp_path):
    # Issue 13: a check counts only for what it records. The full 19:30 check less NIRS of the
    # left leg and refill of the right: the 19:35 check (window opened 19:25) still wants them.
    partial = [f for f in FULL_CHECK if f[:2] not in (("nirs", "L"), ("refill", "R"))]
    p, _ = _alerts(_store(tmp_path, [(0, *f) for f in partial]), minutes=16)  # 19:46
    # Every check since insertion, up to the one due 19:35, still wants exactly those two.
    assert p.overdue[-1].due.strftime("%H:%M") == "19:35"
    assert {o.missing for o in p.overdue} == {("nirs:L", "refill:R")}
    assert p.overdue[-1].partial


def test_one_limb_leaves_the_other_limb_due(tmp_path):
    # Issue 13: the right leg's items recorded, the left's not: only the left is missing.
    right_only = [f for f in FULL_CHECK if not f[1].startswith("L")]
    p, _ = _alerts(_store(tmp_path, [(0, *f) for f in right_only]), minutes=16)
    assert p.overdue[-1].missing == (
        "pulse:L",
        "nirs:L",
        "colour:L",
        "temperature:L",
        "refill:L",
        "sensation:L",
        "motor:L",
        "calf:L",
    )


def test_a_single_item_no_longer_clears_every_overdue_check(tmp_path):
    # Before issue 13 one NIRS reading at 19:30 cleared every earlier overdue check. Now the
    # checks since insertion stay overdue for what was not recorded. Schedule by hand
    # (standard.yaml; tier raised for a 17 Fr cannula): inserted 14:20, every 15 min: 14:35,
    # 14:50, 15:05; the distal cannula at 15:05 restarts the phases (new_cannula_restarts):
    # 15:20, 15:35, 15:50, 16:05 (15 min for 60 min), 16:35, 17:05, 17:35, 18:05 (30 min for
    # 120 min), maintenance every 30 min (raised tier): 18:35, 19:05, 19:35. At 20:01 the
    # 19:35 check's 10-min tolerance has run out: 14 overdue.
    p, _ = _alerts(_store(tmp_path, [(0, "nirs", "L", "68")]), minutes=31)
    assert [o.due.strftime("%H:%M") for o in p.overdue] == [
        "14:35", "14:50", "15:05", "15:20", "15:35", "15:50", "16:05",
        "16:35", "17:05", "17:35", "18:05", "18:35", "19:05", "19:35",
    ]  # fmt: skip
    assert all("nirs:R" in o.missing for o in p.overdue)
    # 19:30 is after every one of their windows opened: the left NIRS is seen for all.
    assert not any("nirs:L" in o.missing for o in p.overdue)



def test_refill_and_access_and_dpc(tmp_path):
    _, alerts = _alerts(
        _store(
            tmp_path,
            [
                (0, "refill", "R", "3.5"),
                (0, "access", "R", "haematoma"),
                (0, "dpc", "", "no-flow"),
                (0, "refill", "L", "3"),
            ],
        )
    )
    assert ("refill-slow", "R") in alerts and ("refill-slow", "L") not in alerts  # slow above 3 s
    assert alerts[("access-bleeding", "R")].escalation == "bleeding"
    assert alerts[("dpc-fault", None)].escalation == "dpc-fault"


def test_abi_in_review_uses_the_statement_and_says_when(tmp_path):
    # Aboyans 2012: higher ankle (PTA 92) over higher arm (128) = 0.72, abnormal (<= 0.90).
    store = _store(
        tmp_path,
        [
            (0, "pressure", "R-PTA", "92"),
            (0, "pressure", "R-DPA", "88"),
            (0, "pressure", "L-ARM", "124"),
            (5, "pressure", "R-ARM", "128"),
        ],
    )
    p, alerts = _alerts(store, 5)
    assert p.abi["R"].index == 0.72 and p.abi["R"].band == "abnormal"
    assert p.abi["L"].index is None
    assert "pressures taken 19:30+00:00 to 19:35+00:00" in alerts[("abi-abnormal", "R")].detail


def test_every_rule_names_whom_to_call_with_the_bundled_protocol():
    # vascplan/data/protocols/standard.yaml has a criterion for every finding the review flags
    # (ali-III, perfusion-reduced and check-missed were added for that).
    from vascplan.observations.review import _ALI_ESCALATION_FALLBACK, RULES

    ids = {e.id for e in PROTOCOL.escalation}
    for rule in RULES.values():
        wanted = (
            [c[0] for c in _ALI_ESCALATION_FALLBACK.values()]
            if rule.id == "ali-category"
            else [rule.escalation[0]]
        )
        assert set(wanted) <= ids, rule.id


def test_refill_and_abi_call_the_perfusion_criterion(tmp_path):
    store = _store(
        tmp_path,
        [
            (0, "refill", "R", "5"),
            (0, "pressure", "R-PTA", "80"),
            (0, "pressure", "R-ARM", "120"),
        ],
    )
    _, alerts = _alerts(store)
    for rule in ("refill-slow", "abi-abnormal"):
        assert alerts[(rule, "R")].escalation == "perfusion-reduced"
        assert alerts[(rule, "R")].call == "Doctor in charge of the patient (within 30 min)"


def test_abi_takes_a_brachial_pressure_as_the_arm_pressure(tmp_path):
    # Aboyans 2012: the arm pressure is the brachial systolic pressure; 100 / 125 = 0.80.
    store = _store(
        tmp_path,
        [
            (0, "pressure", "L-PTA", "100"),
            (0, "pressure", "L-DPA", "90"),
            (0, "pressure", "L-BRA", "118"),
            (0, "pressure", "R-BRA", "125"),
        ],
    )
    p, _ = _alerts(store)
    assert p.abi["L"].index == 0.80 and p.abi["L"].band == "abnormal"
    assert "R-ARM 125 mmHg (higher arm)" in p.abi["L"].basis


def test_a_pale_cold_leg_against_the_other_leg_and_its_own_earlier_check(tmp_path):
    # Six Ps (pallor, poikilothermia; REFERENCES.md): a change against the other leg or the
    # leg's own earlier check opens an alert; a leg that was never normal alone does not.
    store = _store(
        tmp_path,
        [
            (0, "temperature", "R", "warm"),
            (0, "temperature", "L", "warm"),
            (30, "temperature", "R", "cold"),
            (30, "colour", "R", "mottled"),
            (30, "colour", "L", "normal"),
        ],
    )
    _, alerts = _alerts(store, 30)
    t = alerts[("skin-change", "R")]
    assert t.escalation == "perfusion-reduced"
    details = [a.detail for a in _alerts(store, 30)[0].alerts if a.rule == "skin-change"]
    assert "R leg temperature cold at 20:00+00:00; this leg warm at 19:30+00:00" in details
    assert "R leg colour mottled at 20:00+00:00; the other leg normal" in details
    assert ("skin-change", "L") not in alerts
    store2 = _store(tmp_path, [(0, "colour", "L", "pale")], name="o2.db")
    assert not [a for a in _alerts(store2)[0].alerts if a.rule == "skin-change"]
