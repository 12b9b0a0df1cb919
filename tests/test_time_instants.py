"""Time done right: overdue checks, trends, schedule, rota and checklist on instants.

Python's aware datetimes that share a tzinfo compare and subtract by *wall* time (PEP 495:
fold is ignored within one zone), so the first and the second 01:30 of the night the
clocks go back are "equal". Everything here is checked on real instants (UTC) in five
zones, both directions of the clock change.

The clock changes used (IANA tz database, 2026; stated by hand, not computed):

==================  ============================  ============================
zone                clocks go back (UTC instant)  clocks go forward (UTC instant)
==================  ============================  ============================
Europe/London       2026-10-25 01:00 (+01 -> +00)  2026-03-29 01:00 (+00 -> +01)
America/New_York    2026-11-01 06:00 (-04 -> -05)  2026-03-08 07:00 (-05 -> -04)
Australia/Sydney    2026-04-04 16:00 (+11 -> +10)  2026-10-03 16:00 (+10 -> +11)
America/Santiago    2026-04-05 03:00 (-03 -> -04)  2026-09-06 04:00 (-04 -> -03)
Europe/Warsaw       2026-10-25 01:00 (+02 -> +01)  2026-03-29 01:00 (+01 -> +02)
==================  ============================  ============================

(EU: last Sunday of March/October at 01:00 UTC; US: second Sunday of March and first
Sunday of November at 02:00 local; New South Wales: first Sunday of April/October at
03:00/02:00 local; Chile: first Saturday-to-Sunday midnight of April/September.)
Sydney is in the southern hemisphere: its clocks go back in April.
"""

from __future__ import annotations

from datetime import date, datetime, timedelta
from zoneinfo import ZoneInfo

import pytest

from tests.surv_factory import make_unit, sheath_patient
from vascplan.fileio import read_document, validate_data
from vascplan.localtime import hm, utc
from vascplan.observations.csvio import parse_csv
from vascplan.observations.review import render_table, review_patient, review_unit
from vascplan.observations.store import CurrentFinding, Entry, open_store
from vascplan.observations.trend import axis_window, patient_trend, time_ticks, x_fraction
from vascplan.paths import data_dir
from vascplan.reports.checklist import checklist_sheets, due_text
from vascplan.surveillance.protocol import Protocol
from vascplan.surveillance.rota import build_rota
from vascplan.surveillance.schedule import patient_schedule

H = timedelta(hours=1)
M = timedelta(minutes=1)


def _z(text: str) -> datetime:
    return datetime.fromisoformat(text)


def _protocol(every: int | None = None) -> Protocol:
    """The bundled standard protocol without tiers (so the intervals do not hang on the
    risk tier, which other work may recalibrate), review thresholds stated here, and,
    with ``every``, every phase at that interval."""
    data = read_document(data_dir() / "protocols" / "standard.yaml")
    data["tiers"] = {}
    if every is not None:
        for phase in data["phases"]:
            phase["every_min"] = every
    data["review"]["nirs_relative_fall_pct"] = {"value": 20, "source": "test"}
    data["review"]["nirs_absolute_floor_pct"] = {"value": 40, "source": "test"}
    return validate_data("test-protocol.yaml", data, Protocol)


HOURLY = _protocol()  # standard: 15 min x 1 h, 30 min x 2 h, then hourly (tolerance 15 min)
QUARTER = _protocol(every=15)  # every check 15 min after the last, whatever the phase


# zone, the clocks-back instant C, local date of C+10 min, wall of C-50 min (first pass,
# offset before) and of C+10 min (second pass, offset after): hand-converted.
BACK = [
    ("Europe/London", "2026-10-25T01:00+00:00", "2026-10-25", "01:10+01:00", "01:10+00:00"),
    ("America/New_York", "2026-11-01T06:00+00:00", "2026-11-01", "01:10-04:00", "01:10-05:00"),
    ("Australia/Sydney", "2026-04-04T16:00+00:00", "2026-04-05", "02:10+11:00", "02:10+10:00"),
    ("America/Santiago", "2026-04-05T03:00+00:00", "2026-04-04", "23:10-03:00", "23:10-04:00"),
    ("Europe/Warsaw", "2026-10-25T01:00+00:00", "2026-10-25", "02:10+02:00", "02:10+01:00"),
]
# zone, the clocks-forward instant C, local date of C+10, wall of C-50 and of C+10.
FORWARD = [
    ("Europe/London", "2026-03-29T01:00+00:00", "2026-03-29", "00:10+00:00", "02:10+01:00"),
    ("America/New_York", "2026-03-08T07:00+00:00", "2026-03-08", "01:10-05:00", "03:10-04:00"),
    ("Australia/Sydney", "2026-10-03T16:00+00:00", "2026-10-04", "01:10+10:00", "03:10+11:00"),
    ("America/Santiago", "2026-09-06T04:00+00:00", "2026-09-06", "23:10-04:00", "01:10-03:00"),
    ("Europe/Warsaw", "2026-03-29T01:00+00:00", "2026-03-29", "01:10+01:00", "03:10+02:00"),
]


def _unit_inserted(zone: str, inserted: datetime):
    return make_unit(zone, [sheath_patient(1, inserted.isoformat())])


# A whole check of the sheath patient (standard.yaml items for a large-bore sheath in the
# leg: pulses, colour, temperature, capillary refill, sensation, movement, calf on each side,
# and the access site): since issue 13 a check counts only for what it records.
SHEATH_CHECK = [
    *[
        (item, side, value)
        for side in ("L", "R")
        for item, value in (
            ("colour", "normal"),
            ("temperature", "warm"),
            ("refill", "2"),
            ("sensation", "normal"),
            ("motor", "normal"),
            ("calf", "soft"),
        )
    ],
    ("pulse", "L-DPA", "palpable"),
    ("pulse", "R-DPA", "palpable"),
    ("access", "R", "dry"),
]
SHEATH_NEEDS = [
    f"{item}:{side}"
    for item in ("pulse", "colour", "temperature", "refill", "sensation", "motor", "calf")
    for side in ("L", "R")
] + ["access"]
"""What an overdue check of the sheath patient lists as missing when nothing was recorded."""


def _store_with(tmp_path, unit, times: list[datetime], name: str = "o.db"):
    from vascplan.observations.findings import make_finding

    store = open_store(str(tmp_path / name))
    findings = [
        make_finding(
            time=t.astimezone(unit.unit.tz),
            bed=1,
            ref=unit.patients[0].ref,
            by="RN-A",
            item=item,
            site=site,
            value=value,
            source="t",
        )
        for t in times
        for item, site, value in SHEATH_CHECK
    ]
    store.record(findings, unit=unit.unit.key, kind="add", source="t")
    return store


# ---------------------------------------------------------------------------
# obs review: a check due inside the repeated hour


@pytest.mark.parametrize(("zone", "change", "day", "first_pass", "due_text_"), BACK)
def test_a_check_due_in_the_repeated_hour_is_overdue_once(
    tmp_path, zone, change, day, first_pass, due_text_
):
    # Hand arithmetic (standard protocol, no tiers): a device put in at C - 3 h 50 min has
    # 15-min checks to C - 2 h 50, 30-min checks to C - 50 min, then hourly: C + 10 min is
    # the first hourly check, inside the repeated hour (second pass). The last recorded
    # check is at C - 50 min (first pass, same wall minute). Reviewed at C + 40 min, the
    # C + 10 check is past its 15-min tolerance (C + 25) and nothing was recorded since its
    # window opened (C - 5): overdue once, 30 min late. Compared by wall clock it was lost:
    # "due - tolerance" (X:55 of the hour before, read with the summer offset) is an hour
    # earlier than the real instant, so the C - 50 check seemed to cover it.
    tz = ZoneInfo(zone)
    c = _z(change)
    unit = _unit_inserted(zone, c - 3 * H - 50 * M)
    store = _store_with(tmp_path, unit, [c - 50 * M])
    at = (c + 40 * M).astimezone(tz)  # local, fold=1: in the repeated hour
    assert at.fold == 1
    (p,) = review_unit(unit, store, at, protocol=HOURLY).patients
    assert [(utc(o.due), o.minutes_late, o.phase) for o in p.overdue] == [
        (c + 10 * M, 30, "maintenance")
    ]
    assert hm(p.overdue[0].due, tz) == due_text_
    assert hm(p.last_check, tz) == first_pass
    alert = next(a for a in p.alerts if a.rule == "check-overdue")
    assert alert.detail == (
        f"1 scheduled check(s) not recorded; the first was due {day} {due_text_} (30 min ago)"
    )
    result = review_unit(unit, store, at, protocol=HOURLY)
    table = render_table(result)
    overdue_lines = [line for line in table.splitlines() if "overdue  due" in line]
    assert overdue_lines == [f"  overdue  due {day} {due_text_} (maintenance), 30 min late"]
    assert f"last check {first_pass[:5]}" not in table  # printed with its date and offset
    # The JSON names the due time with its offset.
    from vascplan.observations.review import to_json

    (pj,) = to_json(result)["patients"]
    assert pj["overdue"] == [
        {"due": f"{day}T{due_text_[:5]}:00{due_text_[5:]}", "minutes_late": 30,
         "phase": "maintenance", "missing": SHEATH_NEEDS}
    ]  # fmt: skip


@pytest.mark.parametrize(("zone", "change", "day", "first_pass", "due_text_"), BACK)
def test_the_repeated_hour_neither_invents_nor_doubles_overdue_checks(
    tmp_path, zone, change, day, first_pass, due_text_
):
    tz = ZoneInfo(zone)
    c = _z(change)
    unit = _unit_inserted(zone, c - 3 * H - 50 * M)
    store = _store_with(tmp_path, unit, [c - 50 * M])
    # C + 20 (second pass): the C + 10 check still has 5 min of its tolerance: not overdue.
    (p,) = review_unit(unit, store, (c + 20 * M).astimezone(tz), protocol=HOURLY).patients
    assert p.overdue == []
    # C - 20 (first pass, same wall minute as C + 40): nothing due yet.
    (p,) = review_unit(unit, store, (c - 20 * M).astimezone(tz), protocol=HOURLY).patients
    assert p.overdue == []
    # Both passes checked (C - 50 and C + 10): at C + 90 only C + 70 is overdue (tolerance
    # ended C + 85; last check C + 10 is before its window opened at C + 55), 20 min late.
    store = _store_with(tmp_path, unit, [c - 50 * M, c + 10 * M], "b.db")
    (p,) = review_unit(unit, store, (c + 90 * M).astimezone(tz), protocol=HOURLY).patients
    assert [(utc(o.due), o.minutes_late) for o in p.overdue] == [(c + 70 * M, 20)]
    assert hm(p.last_check, tz) == due_text_


@pytest.mark.parametrize(("zone", "change", "day", "before", "after"), FORWARD)
def test_a_check_due_after_the_skipped_hour_is_overdue_once(
    tmp_path, zone, change, day, before, after
):
    # Same arithmetic as above, clocks going forward: the C + 10 check is 60 real minutes
    # after the C - 50 one although the wall clock moved two hours.
    tz = ZoneInfo(zone)
    c = _z(change)
    unit = _unit_inserted(zone, c - 3 * H - 50 * M)
    store = _store_with(tmp_path, unit, [c - 50 * M])
    (p,) = review_unit(unit, store, (c + 40 * M).astimezone(tz), protocol=HOURLY).patients
    assert [(utc(o.due), o.minutes_late) for o in p.overdue] == [(c + 10 * M, 30)]
    assert hm(p.overdue[0].due, tz) == after
    assert hm(p.last_check, tz) == before


# ---------------------------------------------------------------------------
# Review order: 01:59 fold=0 is before 01:01 fold=1


def _finding(i: int, moment: datetime, item: str, site: str, value: str) -> CurrentFinding:
    entry = Entry(
        id=i,
        batch_id=1,
        unit="Test unit",
        bed=1,
        ref="DEMO-91",
        time=moment,
        time_local=moment.isoformat(),
        by="RN-A",
        item=item,
        site=site,
        value=value,
        corrects=None,
        reason=None,
        entered_at=moment,
    )
    return CurrentFinding(entry, value, None)


@pytest.mark.parametrize(
    ("zone", "first", "second", "first_text", "second_text"),
    [
        # London: 01:59 BST = 00:59 UTC comes before 01:01 GMT = 01:01 UTC.
        ("Europe/London", (2026, 10, 25, 1, 59), (2026, 10, 25, 1, 1), "01:59+01:00",
         "01:01+00:00"),
        # Sydney: 02:59 AEDT = 15:59 UTC (4 Apr) comes before 02:01 AEST = 16:01 UTC.
        ("Australia/Sydney", (2026, 4, 5, 2, 59), (2026, 4, 5, 2, 1), "02:59+11:00",
         "02:01+10:00"),
    ],
)  # fmt: skip
def test_review_orders_the_repeated_hour_by_instant(zone, first, second, first_text, second_text):
    tz = ZoneInfo(zone)
    a = datetime(*first, fold=0, tzinfo=tz)
    b = datetime(*second, fold=1, tzinfo=tz)
    assert b < a  # the wall-clock order Python gives within one zone: the trap
    assert utc(a) < utc(b)
    unit = make_unit(zone, [sheath_patient(1, "2026-01-01T08:00+00:00")])
    patient = unit.patients[0]
    # No NIRS baseline in the unit file: the first recorded value is the baseline. Given in
    # wall order (b first), the review must still take a (70) as first and b (50) as latest:
    # (70 - 50) / 70 = 28.6 % fall >= 20 % (threshold stated in _protocol).
    findings = [_finding(2, b, "nirs", "L", "50"), _finding(1, a, "nirs", "L", "70")]
    at = (utc(b) + 29 * M).astimezone(tz)  # b + 29 min in local arithmetic would lose fold
    assert at.fold == 1
    r = review_patient(unit, patient, HOURLY, findings, at)
    assert utc(r.last_check) == utc(b)
    fall = next(x for x in r.alerts if x.rule == "nirs-fall")
    assert fall.detail.startswith(
        f"L NIRS 50% at {second_text} is 29% below 70% (first recorded value at {first_text}"
    )
    # As at the first pass of the same wall time as ``at``, b has not happened yet, nor a
    # (a is at X:59 of the first pass, at is X:30 of the first pass).
    at_first = at.replace(fold=0)
    assert utc(at_first) == utc(at) - H
    r = review_patient(unit, patient, HOURLY, findings, at_first)
    assert r.last_check is None
    assert not [x for x in r.alerts if x.rule.startswith("nirs")]


# ---------------------------------------------------------------------------
# Trend axis


@pytest.mark.parametrize(("zone", "change", "day", "first_pass", "due_text_"), BACK)
def test_trend_plots_the_second_half_past_after_the_first(zone, change, day, first_pass, due_text_):
    # Readings at C - 30 min (first pass, X:30), C + 30 (second pass, the same wall X:30) and
    # C + 60; the page as at C + 90. Axis (hand arithmetic): from the first check C - 30
    # (already a round quarter hour) to C + 90 = 120 real minutes; 120 / 15 = 8 ticks <= 8,
    # so 15-min ticks; x = elapsed / 120: 0, 60/120 = 0.5, 90/120 = 0.75.
    # By wall clock the two X:30 readings would share one x.
    tz = ZoneInfo(zone)
    c = _z(change)
    unit = make_unit(zone, [sheath_patient(1, (c - 10 * H).isoformat())])
    times = [c - 30 * M, c + 30 * M, c + 60 * M]
    wall_order = [(c + 30 * M).astimezone(tz), (c - 30 * M).astimezone(tz), (c + 60 * M)]
    findings = [
        _finding(i, t.astimezone(tz), "nirs", "L", v)
        for i, (t, v) in enumerate(zip(wall_order, ("62", "66", "60"), strict=True), 1)
    ]
    at = (c + 90 * M).astimezone(tz)
    trend = patient_trend(unit, unit.patients[0], HOURLY, findings, at)
    assert trend.check_times == times  # instant order, whatever order they came in
    t0, t1, step = axis_window(trend.check_times, at, tz)
    assert (t0, t1, step) == (c - 30 * M, c + 90 * M, 15)
    assert [x_fraction(t, t0, t1) for t in trend.check_times] == [0.0, 0.5, 0.75]
    # The two X:30 readings print apart by their offsets.
    assert hm(times[0], tz)[:5] == hm(times[1], tz)[:5]
    assert hm(times[0], tz) != hm(times[1], tz)
    assert [f.value for f in trend.findings] == ["66", "62", "60"]  # the first X:30 first
    _, ticks = time_ticks(t0, t1, tz)
    assert len(ticks) == 9  # 120 min / 15 + 1
    assert all(b - a == 15 * M for a, b in zip(ticks, ticks[1:], strict=False))


def test_trend_ticks_in_the_repeated_hour_of_london():
    # 00:30 UTC (01:30 BST) to 02:30 UTC (02:30 GMT): every quarter hour, the wall times
    # 01:30 and 01:45 twice, each with its own offset.
    tz = ZoneInfo("Europe/London")
    _, ticks = time_ticks(_z("2026-10-25T00:30+00:00"), _z("2026-10-25T02:30+00:00"), tz)
    assert [hm(t, tz) for t in ticks] == [
        "01:30+01:00", "01:45+01:00", "01:00+00:00", "01:15+00:00", "01:30+00:00",
        "01:45+00:00", "02:00+00:00", "02:15+00:00", "02:30+00:00",
    ]  # fmt: skip


def test_trend_ticks_skip_the_missing_hour_of_new_york():
    # 2026-03-08: 01:00 EST (06:00 UTC) to 04:00 EDT (08:00 UTC) is 2 real hours: 15-min
    # ticks, and no 02:xx tick (that wall time does not exist). 9 ticks.
    tz = ZoneInfo("America/New_York")
    _, ticks = time_ticks(_z("2026-03-08T06:00+00:00"), _z("2026-03-08T08:00+00:00"), tz)
    assert [hm(t, tz) for t in ticks] == [
        "01:00-05:00", "01:15-05:00", "01:30-05:00", "01:45-05:00", "03:00-04:00",
        "03:15-04:00", "03:30-04:00", "03:45-04:00", "04:00-04:00",
    ]  # fmt: skip


# ---------------------------------------------------------------------------
# Schedule and rota: no check lost or doubled across either change

DAYS = [
    # zone, local day start, next local day start (offsets by hand), real hours
    ("Europe/London", "2026-10-25T00:00+01:00", "2026-10-26T00:00+00:00", 25),
    ("Europe/London", "2026-03-29T00:00+00:00", "2026-03-30T00:00+01:00", 23),
    ("America/New_York", "2026-11-01T00:00-04:00", "2026-11-02T00:00-05:00", 25),
    ("America/New_York", "2026-03-08T00:00-05:00", "2026-03-09T00:00-04:00", 23),
    ("Australia/Sydney", "2026-04-05T00:00+11:00", "2026-04-06T00:00+10:00", 25),
    ("Australia/Sydney", "2026-10-04T00:00+10:00", "2026-10-05T00:00+11:00", 23),
    # Chile goes back at midnight ending Saturday 4 April (24:00 -03 -> 23:00 -04): Saturday
    # is 25 h long; forward at midnight starting 6 September (00:00 -04 -> 01:00 -03).
    ("America/Santiago", "2026-04-04T00:00-03:00", "2026-04-05T00:00-04:00", 25),
    ("America/Santiago", "2026-09-06T01:00-03:00", "2026-09-07T00:00-03:00", 23),
    ("Europe/Warsaw", "2026-10-25T00:00+02:00", "2026-10-26T00:00+01:00", 25),
    ("Europe/Warsaw", "2026-03-29T00:00+01:00", "2026-03-30T00:00+02:00", 23),
]


@pytest.mark.parametrize(("zone", "start", "end", "hours"), DAYS)
def test_schedule_counts_checks_by_elapsed_time(zone, start, end, hours):
    # A 15-min schedule over the day: hours x 4 checks (25 h -> 100, 23 h -> 92), each 15
    # real minutes after the last; an hourly one: hours checks.
    s, e = _z(start), _z(end)
    assert (e - s) == hours * H  # different offsets: Python subtracts instants here
    unit = make_unit(zone, [sheath_patient(1, (s - 12 * H).isoformat())])
    tz = ZoneInfo(zone)
    checks = patient_schedule(unit, unit.patients[0], QUARTER, s, e)
    assert len(checks) == hours * 4
    instants = [utc(c.due) for c in checks]
    assert len(set(instants)) == hours * 4
    assert instants[0] == utc(s) and instants[-1] == utc(e) - 15 * M
    assert {b - a for a, b in zip(instants, instants[1:], strict=False)} == {15 * M}
    walls = [c.due.astimezone(tz).strftime("%H:%M") for c in checks]
    # Wall times: 96 quarter hours of a 24-h day, one hour's four twice (25 h) or missing (23 h).
    assert len(set(walls)) == (96 if hours == 25 else 92)
    hourly = patient_schedule(unit, unit.patients[0], HOURLY, s, e)
    assert len(hourly) == hours
    rota = build_rota(unit, QUARTER, s, e)
    assert len(rota.checks) == hours * 4
    assert len({utc(c.time) for c in rota.checks}) == hours * 4


# ---------------------------------------------------------------------------
# Checklist: the due column names zone and offset where the clocks change


def test_checklist_due_column_in_london_repeated_hour():
    # Inserted 12:10 BST on 24 Oct: 15-min checks to 13:10, 30-min to 15:10, then hourly
    # at ten past. Night shift 19:30 BST (18:30 UTC) to 07:30 GMT (07:30 UTC) = 13 real
    # hours: 20:10 BST ... 07:10 GMT = 13 checks, 01:10 twice.
    unit = make_unit("Europe/London", [sheath_patient(1, "2026-10-24T12:10+01:00")])
    (sheet,) = checklist_sheets(unit, "night", date(2026, 10, 24), HOURLY)
    assert [due_text(r, sheet) for r in sheet.rows] == [
        "20:10", "21:10", "22:10", "23:10", "25 Oct 00:10",
        "25 Oct 01:10 BST +01:00", "25 Oct 01:10 GMT +00:00",
        "25 Oct 02:10 GMT +00:00", "25 Oct 03:10 GMT +00:00", "25 Oct 04:10 GMT +00:00",
        "25 Oct 05:10 GMT +00:00", "25 Oct 06:10 GMT +00:00", "25 Oct 07:10 GMT +00:00",
    ]  # fmt: skip


def test_checklist_due_column_in_santiago_repeated_hour():
    # Santiago's zone has no abbreviations: the offset alone. Inserted 12:10 -03 on 4 Apr:
    # hourly at ten past from 16:10. Night shift 19:30 -03 (22:30 UTC) to 07:30 -04 (11:30
    # UTC on 5 Apr) = 13 real hours, 23:10 twice (-03 then -04).
    unit = make_unit("America/Santiago", [sheath_patient(1, "2026-04-04T12:10-03:00")])
    (sheet,) = checklist_sheets(unit, "night", date(2026, 4, 4), HOURLY)
    assert [due_text(r, sheet) for r in sheet.rows] == [
        "20:10", "21:10", "22:10", "23:10 -03:00", "23:10 -04:00",
        "05 Apr 00:10 -04:00", "05 Apr 01:10 -04:00", "05 Apr 02:10 -04:00",
        "05 Apr 03:10 -04:00", "05 Apr 04:10 -04:00", "05 Apr 05:10 -04:00",
        "05 Apr 06:10 -04:00", "05 Apr 07:10 -04:00",
    ]  # fmt: skip


def test_checklist_due_column_in_sydney_skipped_hour():
    # Sydney goes forward at 02:00 AEST (16:00 UTC, 3 Oct) to 03:00 AEDT. Inserted 12:10
    # AEST on 3 Oct: hourly at ten past from 16:10. Night 19:30 AEST (09:30 UTC) to 07:30
    # AEDT (20:30 UTC) = 11 real hours: 20:10, ..., 01:10 AEST, 03:10 AEDT, ..., 07:10.
    unit = make_unit("Australia/Sydney", [sheath_patient(1, "2026-10-03T12:10+10:00")])
    (sheet,) = checklist_sheets(unit, "night", date(2026, 10, 3), HOURLY)
    assert [due_text(r, sheet) for r in sheet.rows] == [
        "20:10", "21:10", "22:10", "23:10", "04 Oct 00:10", "04 Oct 01:10",
        "04 Oct 03:10 AEDT +11:00", "04 Oct 04:10 AEDT +11:00", "04 Oct 05:10 AEDT +11:00",
        "04 Oct 06:10 AEDT +11:00", "04 Oct 07:10 AEDT +11:00",
    ]  # fmt: skip


# ---------------------------------------------------------------------------
# Import: the two 01:30s are two checks


def test_csv_import_keeps_both_readings_of_the_repeated_half_hour(tmp_path):
    unit = make_unit("Europe/London", [sheath_patient(1, "2026-10-24T12:10+01:00")])
    csv = tmp_path / "c.csv"
    csv.write_text(
        "time,bed,ref,by,item,site,value\n"
        "2026-10-25T01:30+01:00,1,DEMO-91,RN-A,nirs,L,66\n"
        "2026-10-25T01:30+00:00,1,DEMO-91,RN-A,nirs,L,60\n"
    )
    findings, _ = parse_csv(csv, unit)
    # 01:30 BST = 00:30 UTC; 01:30 GMT = 01:30 UTC: one real hour apart.
    assert [utc(f.time) for f in findings] == [
        _z("2026-10-25T00:30+00:00"),
        _z("2026-10-25T01:30+00:00"),
    ]
    store = open_store(str(tmp_path / "o.db"))
    store.record(findings, unit=unit.unit.key, kind="import", source="c.csv")
    stored = store.entries(unit.unit.key)
    assert [e.time_local for e in stored] == [
        "2026-10-25T01:30:00+01:00",
        "2026-10-25T01:30:00+00:00",
    ]
    assert [e.time for e in stored] == [_z("2026-10-25T00:30+00:00"), _z("2026-10-25T01:30+00:00")]
    assert all(e.time.utcoffset() == timedelta(0) for e in stored)  # the store keeps UTC


def test_local_time_helpers():
    tz = ZoneInfo("Asia/Kolkata")  # UTC+05:30 all year
    assert hm(_z("2026-12-01T00:00+00:00"), tz) == "05:30+05:30"
    with pytest.raises(ValueError):
        utc(datetime(2026, 12, 1, 0, 0))


@pytest.mark.parametrize(("zone", "change", "day", "first_pass", "due_text_"), BACK)
def test_rota_staggers_by_instant_in_the_repeated_hour(zone, change, day, first_pass, due_text_):
    # One nurse, two beds with the same schedule (inserted C - 3 h 50): each due at C - 50
    # (settling) and C + 10 (first hourly check), the same wall minute twice. The nurse
    # does bed 1 at due and bed 2 one check later (check_duration_min 5, standard protocol):
    # C - 50, C - 45, C + 10, C + 15; all within their windows (tolerance 10 min for the
    # 30-min check, 15 min for the hourly one). Over [C - 1 h, C + 1 h): 4 checks, none unmet.
    tz = ZoneInfo(zone)
    c = _z(change)
    inserted = (c - 3 * H - 50 * M).isoformat()
    unit = make_unit(
        zone,
        [sheath_patient(1, inserted), sheath_patient(2, inserted)],
        staff=[{"nurse": "RN-A", "beds": [1, 2], "shifts": ["day", "night"]}],
    )
    rota = build_rota(unit, HOURLY, c - H, c + H)
    assert [(r.bed, utc(r.time)) for r in rota.checks] == [
        (1, c - 50 * M),
        (2, c - 45 * M),
        (1, c + 10 * M),
        (2, c + 15 * M),
    ]
    assert rota.unmet == []
    assert [hm(r.time, tz) for r in rota.checks][2] == due_text_
    assert [hm(r.time, tz) for r in rota.checks][0] == first_pass
