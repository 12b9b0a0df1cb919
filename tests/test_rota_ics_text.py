"""The iCalendar text writer against the ``icalendar`` library's objects (the writer
before issue 16, kept here only as the reference) and against RFC 5545's line rules.

Expected output comes from the library, not from the new code: the same content lines
after unfolding (RFC 5545 s3.1), event by event.
"""

from __future__ import annotations

import dataclasses
from datetime import UTC, datetime, timedelta
from zoneinfo import ZoneInfo

import icalendar
import pytest

from tests.surv_factory import PROTOCOL, make_unit, sheath_patient
from vascplan.safety import CAUTION
from vascplan.surveillance.render import (
    _UTC_NAMES,
    ALARM_BEFORE_MIN,
    PRODID,
    _ics_time,
    iso,
    rota_ics,
)
from vascplan.surveillance.rota import build_rota

STAMP = datetime(2026, 3, 1, tzinfo=UTC)


def old_rota_ics(rota, protocol, stamp):  # type: ignore[no-untyped-def]
    """The writer before issue 16: one ``icalendar`` object per event and property."""
    length = timedelta(minutes=protocol.check_duration_min.value)
    tz = ZoneInfo(rota.timezone)
    cal = icalendar.Calendar()
    cal.add("prodid", PRODID)
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    cal.add("x-wr-calname", f"Limb checks, {rota.unit}" + (f", {rota.nurse}" if rota.nurse else ""))
    cal.add("x-wr-caldesc", CAUTION)
    cal.add("x-wr-timezone", rota.timezone)
    if rota.timezone not in _UTC_NAMES:
        cal.add_component(
            icalendar.Timezone.from_tzinfo(
                tz,
                tzid=rota.timezone,
                first_date=(rota.start.astimezone(tz) - timedelta(days=2)).date(),
                last_date=(rota.end.astimezone(tz) + timedelta(days=2)).date(),
            )
        )
    unit_key = "".join(ch for ch in rota.unit if ch.isalnum())[:40] or "unit"
    for c in rota.checks:
        ev = icalendar.Event()
        due_utc = c.due.astimezone(UTC)
        ev.add("uid", f"{unit_key}-bed{c.bed}-{c.ref}-{due_utc:%Y%m%dT%H%M%SZ}@vascplan")
        ev.add("dtstamp", stamp)
        start = _ics_time(c.time)
        ev.add("dtstart", start)
        ev.add("dtend", (start.astimezone(UTC) + length).astimezone(start.tzinfo))
        ev.add("summary", f"Limb check bed {c.bed} {c.ref} ({c.phase})")
        late = "" if not c.late_min else f"\nDue {iso(c.due)}; staggered to {iso(c.time)}."
        if not c.within_window:
            late += "\nOUTSIDE its tolerance window: see the rota's unmet list."
        items = "\n".join(f"- {protocol.item_text(i)}" for i in c.items)
        ev.add(
            "description",
            f"Nurse: {c.nurse}. Tier: {c.tier}. Every {c.interval_min} min.{late}\n"
            f"{items}\n\n{CAUTION}",
        )
        ev.add("categories", ["limb-check"])
        alarm = icalendar.Alarm()
        alarm.add("action", "DISPLAY")
        alarm.add("description", f"Limb check bed {c.bed} {c.ref}")
        alarm.add("trigger", timedelta(minutes=-ALARM_BEFORE_MIN))
        ev.add_component(alarm)
        cal.add_component(ev)
    return cal.to_ical(sorted=False)


def _logical(raw: bytes) -> list[str]:
    """Content lines after unfolding (RFC 5545 s3.1: CRLF followed by one space)."""
    return raw.decode("utf-8").replace("\r\n ", "").split("\r\n")


def _rota(tz: str, start: str, hours: int, beds: int = 6):  # type: ignore[no-untyped-def]
    patients = [
        sheath_patient(
            b,
            f"2026-{start[5:10]}T0{b % 9}:{(b * 7) % 60:02d}",
            None if b % 3 else f"{start[:10]}T{10 + b % 10}:15",
            **({"events": [{"at": f"{start[:10]}T12:00", "tier": "high"}]} if b == 2 else {}),
        )
        for b in range(1, beds + 1)
    ]
    staff = [{"nurse": "RN-A", "beds": list(range(1, beds + 1)), "shifts": ["day", "night"]}]
    unit = make_unit(tz, patients, staff=staff)
    s = datetime.fromisoformat(start).astimezone(UTC)
    return build_rota(unit, PROTOCOL, s, s + timedelta(hours=hours))


CASES = {
    # A London spring change with staggered checks of one nurse (late and unmet ones).
    "london-spring": ("Europe/London", "2026-03-28T20:00+00:00", 30),
    # The autumn change: checks in the repeated hour are written in UTC.
    "london-autumn": ("Europe/London", "2026-10-24T20:00+00:00", 30),
    "utc": ("UTC", "2026-03-28T20:00+00:00", 20),
    "auckland": ("Pacific/Auckland", "2026-04-04T10:00+00:00", 24),
}


@pytest.mark.parametrize("case", sorted(CASES))
def test_same_content_lines_as_the_icalendar_library(case):
    rota = _rota(*CASES[case])
    assert rota.checks
    new, old = rota_ics(rota, PROTOCOL, stamp=STAMP), old_rota_ics(rota, PROTOCOL, STAMP)
    assert _logical(new) == _logical(old)


def test_escaping_folding_and_non_ascii_names():
    """A unit name with a comma, a semicolon, a backslash and letters outside ASCII; a
    nurse filter: the same content as the library, every line at most 75 octets (RFC 5545
    s3.1), CRLF line ends only, and the values read back unchanged."""
    rota = _rota(*CASES["london-spring"])
    rota = dataclasses.replace(rota, unit="Unité 3, Süd; ICU \\ Ωmega " + "é" * 40)
    new = rota_ics(rota, PROTOCOL, stamp=STAMP)
    assert _logical(new) == _logical(old_rota_ics(rota, PROTOCOL, STAMP))
    assert new.endswith(b"END:VCALENDAR\r\n")
    assert b"\n" not in new.replace(b"\r\n", b"")  # no bare LF
    for line in new.split(b"\r\n"):
        assert len(line) <= 75, line
        line.decode("utf-8")  # a fold never splits a character
    cal = icalendar.Calendar.from_ical(new)
    assert str(cal["X-WR-CALNAME"]) == f"Limb checks, {rota.unit}"
    ev = next(iter(cal.walk("VEVENT")))
    assert str(ev["UID"]).startswith("Unité3SüdICUΩmega")
    assert str(ev["DESCRIPTION"]).endswith(CAUTION)  # "; ," unescaped on reading
