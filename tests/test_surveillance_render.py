"""Renderers: the iCalendar file parses back with the same events; all carry the caution."""

from __future__ import annotations

import csv
import io
import json
from datetime import UTC, datetime
from zoneinfo import ZoneInfo

import icalendar

from tests.surv_factory import PROTOCOL, make_unit, sheath_patient
from vascplan.safety import CAUTION
from vascplan.surveillance.render import rota_csv, rota_ics, rota_json, rota_table
from vascplan.surveillance.rota import Rota, RotaCheck, build_rota

STAFF = [{"nurse": "RN-A", "beds": [1, 2], "shifts": ["day", "night"]}]


def _rota(start="2026-10-24T20:00Z", end="2026-10-25T06:00Z"):
    unit = make_unit(
        "Europe/London",
        [sheath_patient(1, "2026-10-24T08:00"), sheath_patient(2, "2026-10-24T08:00")],
        staff=STAFF,
    )
    s = datetime.fromisoformat(start).astimezone(UTC)
    e = datetime.fromisoformat(end).astimezone(UTC)
    return build_rota(unit, PROTOCOL, s, e)


def test_ics_parses_back_with_the_same_events():
    # Across the London autumn clock change, with staggered checks (two beds, one nurse).
    rota = _rota()
    raw = rota_ics(rota, PROTOCOL, stamp=datetime(2026, 10, 1, tzinfo=UTC))
    cal = icalendar.Calendar.from_ical(raw)
    events = [c for c in cal.walk("VEVENT")]
    assert len(events) == len(rota.checks)
    assert str(cal["X-WR-CALDESC"]) == CAUTION
    assert [tz["TZID"] for tz in cal.walk("VTIMEZONE")] == ["Europe/London"]
    uids = [str(e["UID"]) for e in events]
    assert len(set(uids)) == len(uids)
    for ev, check in zip(events, rota.checks, strict=True):
        start = ev.decoded("DTSTART")
        # Compare in UTC: same-zone datetimes compare by wall time in Python.
        assert start.astimezone(UTC) == check.time.astimezone(UTC)
        # RFC 5545 s3.3.5: a repeated local time means its first occurrence, so those go in UTC.
        local = check.time
        repeated = local.replace(fold=0).utcoffset() != local.replace(fold=1).utcoffset()
        expected_tzid = None if repeated else "Europe/London"
        assert ev["DTSTART"].params.get("TZID") == expected_tzid
        assert "DTSTAMP" in ev
        assert CAUTION in str(ev["DESCRIPTION"])
        (alarm,) = ev.walk("VALARM")
        assert str(alarm["ACTION"]) == "DISPLAY"
    # the repeated 01:00 local hour appears twice, one hour apart in real time
    ones = [
        e.decoded("DTSTART").astimezone(UTC)
        for e in events
        if e.decoded("DTSTART").astimezone(rota.checks[0].time.tzinfo).strftime("%H:%M") == "01:00"
    ]
    assert len(ones) == 2 and (ones[1] - ones[0]).total_seconds() == 3600


def test_json_contract():
    doc = json.loads(rota_json(_rota()))
    assert {"unit", "from", "to", "checks", "unmet", "caution"} <= set(doc)
    c = doc["checks"][0]
    assert {"time", "due", "bed", "ref", "nurse", "phase", "items"} <= set(c)
    assert datetime.fromisoformat(c["time"]).utcoffset() is not None
    assert doc["caution"] == CAUTION


def test_csv_and_table_carry_the_caution():
    rota = _rota()
    rows = list(csv.DictReader(io.StringIO(rota_csv(rota))))
    assert len(rows) == len(rota.checks)
    assert {r["caution"] for r in rows} == {CAUTION}
    assert CAUTION in rota_table(rota)
    # No checks: the header, then the caution as a comment line.
    empty = _rota("2026-10-24T08:00:30Z", "2026-10-24T08:01Z")
    assert empty.checks == []
    assert rota_csv(empty).splitlines()[1] == f"# {CAUTION}"


def _check(ref: str, hour: int, minute: int, within: bool) -> RotaCheck:
    at = datetime(2026, 12, 2, hour, minute, tzinfo=ZoneInfo("Europe/Warsaw"))
    return RotaCheck(
        time=at, due=at, bed=3, ref=ref, nurse="RN-B", phase="maintenance",
        items=["pulses", "capillary-refill"], shift="day", interval_min=30,
        tolerance_min=10, tier="high", within_window=within,
    )


def test_csv_bytes_match_a_hand_written_file():
    # Written by hand from RFC 4180 (section 2: a field holding a comma or a quote is
    # enclosed in quotes and the quote doubled; nothing else is quoted), "\n" line ends,
    # Warsaw in December is UTC+01:00, items joined by ";".
    start = datetime(2026, 12, 2, 7, 0, tzinfo=ZoneInfo("Europe/Warsaw"))
    rota = Rota(
        unit="CICU", timezone="Europe/Warsaw", start=start, end=start, unmet=[], handovers=[],
        checks=[_check("DEMO-13", 7, 30, True), _check('DEMO, "B"', 8, 0, False)],
    )
    expected = (
        "time,due,bed,ref,nurse,phase,items,shift,tier,interval_min,tolerance_min,"
        "within_window,caution\n"
        "2026-12-02T07:30:00+01:00,2026-12-02T07:30:00+01:00,3,DEMO-13,RN-B,maintenance,"
        f"pulses;capillary-refill,day,high,30,10,True,{CAUTION}\n"
        '2026-12-02T08:00:00+01:00,2026-12-02T08:00:00+01:00,3,"DEMO, ""B""",RN-B,'
        f"maintenance,pulses;capillary-refill,day,high,30,10,False,{CAUTION}\n"
    )
    assert "," not in CAUTION and '"' not in CAUTION  # else the caution itself is quoted
    assert rota_csv(rota) == expected
    empty = Rota(unit="CICU", timezone="Europe/Warsaw", start=start, end=start, checks=[],
                 unmet=[], handovers=[])
    assert rota_csv(empty) == expected.split("\n")[0] + f"\n# {CAUTION}\n"


def test_ics_in_utc_has_no_timezone_block():
    # RFC 5545 s3.3.5: UTC times are written with Z, so no VTIMEZONE is referenced or needed.
    unit = make_unit("UTC", [sheath_patient(1, "2026-12-01T08:00")])
    rota = build_rota(
        unit, PROTOCOL, datetime(2026, 12, 1, 12, tzinfo=UTC), datetime(2026, 12, 1, 14, tzinfo=UTC)
    )
    cal = icalendar.Calendar.from_ical(rota_ics(rota, PROTOCOL))
    assert cal.walk("VTIMEZONE") == []
    assert all(ev["DTSTART"].to_ical().endswith(b"Z") for ev in cal.walk("VEVENT"))


def test_ics_timezone_block_covers_the_rota():
    # London's spring change (2026-03-29 01:00 GMT -> 02:00 BST) inside the rota: the block
    # must carry it, so local times after it read as BST.
    unit = make_unit("Europe/London", [sheath_patient(1, "2026-03-28T08:00")])
    rota = build_rota(
        unit, PROTOCOL, datetime(2026, 3, 28, 22, tzinfo=UTC), datetime(2026, 3, 29, 4, tzinfo=UTC)
    )
    cal = icalendar.Calendar.from_ical(rota_ics(rota, PROTOCOL))
    (vtz,) = cal.walk("VTIMEZONE")
    zone = vtz.to_tz()
    for ev, check in zip(cal.walk("VEVENT"), rota.checks, strict=True):
        local = ev.decoded("DTSTART").replace(tzinfo=None)
        assert local.replace(tzinfo=zone).astimezone(UTC) == check.time.astimezone(UTC)
