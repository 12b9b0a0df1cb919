"""The unit rota: assignment by shift, staggering within windows, unmet, handovers."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tests.surv_factory import PROTOCOL, make_unit, sheath_patient
from vascplan.errors import InputError
from vascplan.surveillance.rota import UNASSIGNED, build_rota


def _utc(text: str) -> datetime:
    return datetime.fromisoformat(text).astimezone(UTC)


STAFF = [
    {"nurse": "RN-A", "beds": [1, 2, 3], "shifts": ["day"]},
    {"nurse": "RN-N", "beds": [1, 2, 3], "shifts": ["night"]},
]


def test_two_hourly_checks_at_once_are_staggered_within_window():
    # Both sheaths went in at 08:00, so both are hourly on the hour from 11:00.
    unit = make_unit(
        "Europe/London",
        [sheath_patient(1, "2026-12-01T08:00"), sheath_patient(2, "2026-12-01T08:00")],
        staff=STAFF,
    )
    rota = build_rota(unit, PROTOCOL, _utc("2026-12-01T12:00Z"), _utc("2026-12-01T13:00Z"))
    assert [(c.bed, c.due.strftime("%H:%M"), c.time.strftime("%H:%M")) for c in rota.checks] == [
        (1, "12:00", "12:00"),
        (2, "12:00", "12:05"),  # check_duration_min 5 (unit policy) after bed 1
    ]
    assert rota.unmet == []
    for c in rota.checks:
        assert c.due <= c.time <= c.due + timedelta(minutes=c.tolerance_min)


def test_three_quarter_hourly_checks_cannot_all_be_met():
    # Three insertions at 10:00: q15 checks (tolerance 5 min) all due together.
    patients = [sheath_patient(b, "2026-12-01T10:00") for b in (1, 2, 3)]
    unit = make_unit("Europe/London", patients, staff=STAFF)
    rota = build_rota(unit, PROTOCOL, _utc("2026-12-01T10:00Z"), _utc("2026-12-01T10:20Z"))
    placed = [(c.bed, c.time.strftime("%H:%M"), c.within_window) for c in rota.checks]
    assert placed == [(1, "10:15", True), (2, "10:20", True), (3, "10:25", False)]
    assert len(rota.unmet) == 1
    assert rota.unmet[0].check.bed == 3
    assert rota.unmet[0].reason == (
        "RN-A is busy with bed 2 until 10:25+00:00; the window of this check closed at "
        "10:20+00:00 "
        "(5 min after due); placed 10 min late"
    )


def test_different_nurses_do_not_stagger():
    staff = [
        {"nurse": "RN-A", "beds": [1], "shifts": ["day"]},
        {"nurse": "RN-B", "beds": [2], "shifts": ["day"]},
    ]
    unit = make_unit(
        "Europe/London",
        [sheath_patient(1, "2026-12-01T08:00"), sheath_patient(2, "2026-12-01T08:00")],
        staff=staff,
    )
    rota = build_rota(unit, PROTOCOL, _utc("2026-12-01T12:00Z"), _utc("2026-12-01T12:30Z"))
    assert all(c.time == c.due for c in rota.checks)
    assert {c.nurse for c in rota.checks} == {"RN-A", "RN-B"}


def test_unassigned_when_nobody_has_the_bed():
    unit = make_unit("Europe/London", [sheath_patient(4, "2026-12-01T08:00")], staff=STAFF)
    rota = build_rota(unit, PROTOCOL, _utc("2026-12-01T12:00Z"), _utc("2026-12-01T14:00Z"))
    assert {c.nurse for c in rota.checks} == {UNASSIGNED}


def test_assignment_follows_the_shift_across_a_clock_change():
    # 2026-10-25 in London: the night shift 19:30 (24th, BST) to 07:30 (25th, GMT) lasts 13 h.
    unit = make_unit("Europe/London", [sheath_patient(1, "2026-10-24T08:00")], staff=STAFF)
    rota = build_rota(unit, PROTOCOL, _utc("2026-10-24T18:00Z"), _utc("2026-10-25T08:00Z"))
    nights = [c for c in rota.checks if c.nurse == "RN-N"]
    assert nights[0].time.isoformat() == "2026-10-24T20:00:00+01:00"
    assert nights[-1].time.isoformat() == "2026-10-25T07:00:00+00:00"
    assert len(nights) == 13  # 19:00Z .. 07:00Z hourly: 13 checks in a 13-hour night
    day = [c for c in rota.checks if c.nurse == "RN-A"]
    assert day and all(c.shift == "day" for c in day)
    assert [h.at.isoformat() for h in rota.handovers] == [
        "2026-10-24T19:30:00+01:00",
        "2026-10-25T07:30:00+00:00",
    ]


def test_handover_lists_due_soon_and_overdue():
    # Three sheaths in at 15:25: hourly checks at :25, all three due 19:25 with RN-A.
    patients = [sheath_patient(b, "2026-12-01T15:25") for b in (1, 2, 3)]
    unit = make_unit("Europe/London", patients, staff=STAFF)
    rota = build_rota(unit, PROTOCOL, _utc("2026-12-01T17:00Z"), _utc("2026-12-01T21:00Z"))
    (handover,) = rota.handovers
    assert handover.shift == "night"
    assert handover.at.strftime("%H:%M") == "19:30"
    # Hourly from 18:25: due 19:25 for beds 1-3 by RN-A, placed 19:25, 19:30, 19:35.
    assert [(c.bed, c.time.strftime("%H:%M")) for c in handover.overdue] == [
        (2, "19:30"),
        (3, "19:35"),
    ]
    # Due in the first hour of the night: 20:25 for the three beds.
    assert [(c.bed, c.due.strftime("%H:%M")) for c in handover.due_soon] == [
        (1, "20:25"),
        (2, "20:25"),
        (3, "20:25"),
    ]


def test_nurse_filter_and_worklist_order():
    unit = make_unit(
        "Europe/London",
        [sheath_patient(1, "2026-12-01T08:00"), sheath_patient(2, "2026-12-01T08:20")],
        staff=STAFF,
    )
    rota = build_rota(
        unit, PROTOCOL, _utc("2026-12-01T12:00Z"), _utc("2026-12-02T00:00Z"), nurse="RN-N"
    )
    assert rota.checks and {c.nurse for c in rota.checks} == {"RN-N"}
    times = [c.time for c in rota.worklists()["RN-N"]]
    assert times == sorted(times)


def test_unknown_nurse_is_one_line():
    unit = make_unit("Europe/London", [sheath_patient(1, "2026-12-01T08:00")], staff=STAFF)
    with pytest.raises(InputError) as exc:
        build_rota(
            unit, PROTOCOL, _utc("2026-12-01T12:00Z"), _utc("2026-12-01T13:00Z"), nurse="RN-N2"
        )
    assert str(exc.value) == (
        "--nurse: unknown nurse 'RN-N2' (did you mean 'RN-N'?); staff: RN-A, RN-N"
    )


def test_every_check_in_the_rota_once():
    patients = [sheath_patient(b, f"2026-12-01T0{b}:0{b}") for b in (1, 2, 3)]
    unit = make_unit("Europe/London", patients, staff=STAFF)
    start, end = _utc("2026-12-01T00:00Z"), _utc("2026-12-03T00:00Z")
    from vascplan.surveillance.schedule import unit_schedule

    planned = {(c.bed, c.due) for c in unit_schedule(unit, PROTOCOL, start, end)}
    rota = build_rota(unit, PROTOCOL, start, end)
    placed = [(c.bed, c.due) for c in rota.checks]
    assert len(placed) == len(set(placed)) and set(placed) == planned


def test_tight_checks_go_first_when_that_meets_every_window():
    # Bed 1 (in 07:00) is hourly from 11:00, tolerance 15 min; beds 2 and 3 (in 10:46) are
    # every 15 min from 11:01, tolerance 5 (protocol bands, unit policy). Taking them by due
    # time would put bed 3 at 11:10, past 11:06; the hourly check can wait to 11:11 instead.
    patients = [
        sheath_patient(1, "2026-12-01T07:00"),
        sheath_patient(2, "2026-12-01T10:46"),
        sheath_patient(3, "2026-12-01T10:46"),
    ]
    unit = make_unit("Europe/London", patients, staff=STAFF)
    rota = build_rota(unit, PROTOCOL, _utc("2026-12-01T11:00Z"), _utc("2026-12-01T11:10Z"))
    placed = [(c.bed, c.due.strftime("%H:%M"), c.time.strftime("%H:%M")) for c in rota.checks]
    assert placed == [(2, "11:01", "11:01"), (3, "11:01", "11:06"), (1, "11:00", "11:11")]
    assert rota.unmet == []


def test_beds_without_a_nurse_are_named():
    # STAFF names nobody for bed 4 on any shift.
    unit = make_unit("Europe/London", [sheath_patient(4, "2026-12-01T08:00")], staff=STAFF)
    rota = build_rota(unit, PROTOCOL, _utc("2026-12-01T18:00Z"), _utc("2026-12-01T21:00Z"))
    assert rota.unstaffed == [(4, "DEMO-94", ["day", "night"])]


def _brute_force_missed(dues_min, tolerances_min, duration_min):
    """Fewest checks outside their windows over every order (written apart from rota.py)."""
    from itertools import permutations

    best = len(dues_min)
    for order in permutations(range(len(dues_min))):
        free, missed = None, 0
        for k in order:
            start = dues_min[k] if free is None else max(free, dues_min[k])
            missed += start - dues_min[k] > tolerances_min[k]
            free = start + duration_min
        best = min(best, missed)
    return best


@settings(max_examples=60, deadline=None)
@given(
    st.lists(
        st.tuples(st.integers(0, 30), st.sampled_from([5, 10, 15, 20])), min_size=1, max_size=5
    )
)
def test_stagger_meets_as_many_windows_as_any_order(spec):
    from vascplan.surveillance.rota import RotaCheck, _stagger

    t0 = datetime(2026, 12, 1, 10, 0, tzinfo=UTC)
    checks = [
        RotaCheck(
            time=t0 + timedelta(minutes=due),
            due=t0 + timedelta(minutes=due),
            bed=bed,
            ref=f"DEMO-{bed}",
            nurse="RN-A",
            phase="p",
            items=[],
            shift="day",
            interval_min=60,
            tolerance_min=tol,
            tier="standard",
        )
        for bed, (due, tol) in enumerate(spec, start=1)
    ]
    duration = timedelta(minutes=5)
    placed, unmet = _stagger(checks, duration, UTC)
    assert sorted(c.bed for c in placed) == [c.bed for c in checks]  # none lost or doubled
    times = sorted(c.time for c in placed)
    assert all(b - a >= duration for a, b in zip(times, times[1:], strict=False))
    assert all(c.time >= c.due for c in placed)
    assert {u.check.bed for u in unmet} == {c.bed for c in placed if not c.within_window}
    assert len(unmet) == _brute_force_missed([d for d, _ in spec], [t for _, t in spec], 5)


def test_window_edges_do_not_move_staggered_checks():
    # Beds 1-3 (in 10:00) are q15, all due 10:15; bed 4 (in 07:20) is due 10:20. One nurse:
    # a window from 10:18 still sees the nurse busy with the 10:15 run, as a longer one does.
    patients = [sheath_patient(b, "2026-12-01T10:00") for b in (1, 2, 3)]
    patients.append(sheath_patient(4, "2026-12-01T07:20"))
    staff = [{"nurse": "RN-A", "beds": [1, 2, 3, 4], "shifts": ["day"]}]
    unit = make_unit("Europe/London", patients, staff=staff)
    long = build_rota(unit, PROTOCOL, _utc("2026-12-01T10:00Z"), _utc("2026-12-01T12:00Z"))
    short = build_rota(unit, PROTOCOL, _utc("2026-12-01T10:18Z"), _utc("2026-12-01T10:50Z"))
    key = {(c.bed, c.due): c.time for c in long.checks}
    assert short.checks and all(key[(c.bed, c.due)] == c.time for c in short.checks)
    assert all(_utc("2026-12-01T10:18Z") <= c.due for c in short.checks)
    bed4 = next(c for c in short.checks if c.bed == 4)
    assert bed4.due.strftime("%H:%M") == "10:20" and bed4.time > bed4.due
