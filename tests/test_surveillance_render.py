"""Renderers: the iCalendar file parses back with the same events; all carry the caution."""

from __future__ import annotations

import io
import json
from datetime import UTC, datetime

import icalendar

from tests.surv_factory import PROTOCOL, make_unit, sheath_patient
from vascplan.safety import CAUTION
from vascplan.surveillance.render import rota_csv, rota_ics, rota_json, rota_table
from vascplan.surveillance.rota import build_rota

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
    import pandas as pd

    rota = _rota()
    text = rota_csv(rota)
    frame = pd.read_csv(io.StringIO(text))
    assert len(frame) == len(rota.checks)
    assert set(frame["caution"]) == {CAUTION}
    assert CAUTION in rota_table(rota)
    # No checks: the header, then the caution as a comment line.
    empty = _rota("2026-10-24T08:00:30Z", "2026-10-24T08:01Z")
    assert empty.checks == []
    assert rota_csv(empty).splitlines()[1] == f"# {CAUTION}"


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
