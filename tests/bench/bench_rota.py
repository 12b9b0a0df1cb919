"""Benchmark: the rota for 40 beds over 14 days, and its iCalendar export.

Not run by default. ``python -m pytest tests/bench/bench_rota.py -q -s`` prints the
times and their ratios to floors measured in the same run: as many bare aware datetimes
(UTC step plus conversion to the unit's zone) as the rota has checks, and as many bare
``icalendar`` events (UID, DTSTAMP, DTSTART only) serialised. Times are CPU seconds.
Assertions are loose.
"""

from __future__ import annotations

import time
from datetime import UTC, datetime, timedelta
from zoneinfo import ZoneInfo

import icalendar

from tests.surv_factory import PROTOCOL, make_unit, sheath_patient
from vascplan.surveillance.render import rota_ics
from vascplan.surveillance.rota import build_rota

BEDS = 40
DAYS = 14


def _unit():
    patients = []
    for bed in range(1, BEDS + 1):
        day = 1 + bed % 3
        inserted = f"2026-03-{20 + day:02d}T{bed % 24:02d}:{(bed * 7) % 60:02d}"
        removed = None if bed % 4 else f"2026-03-{27 + day:02d}T10:15"
        extra = {}
        if bed % 5 == 0:
            extra = {"events": [{"at": f"2026-03-{24 + day:02d}T12:00", "tier": "high"}]}
        patients.append(sheath_patient(bed, inserted, removed, **extra))
    staff = [
        {
            "nurse": f"RN-{shift[0].upper()}{n:02d}",
            "beds": list(range(4 * n + 1, 4 * n + 5)),
            "shifts": [shift],
        }
        for n in range(BEDS // 4)
        for shift in ("day", "night")
    ]
    return make_unit("Europe/London", patients, staff=staff)


def _timed(fn):
    # CPU time of this process: steadier than wall time on a shared machine.
    start = time.process_time()
    out = fn()
    return time.process_time() - start, out


def test_rota_40_beds_14_days():
    unit = _unit()
    start = datetime(2026, 3, 22, 7, 30, tzinfo=UTC)  # spans the 29 March clock change
    end = start + timedelta(days=DAYS)
    build_rota(unit, PROTOCOL, start, start + timedelta(hours=2))  # warm caches
    t_rota, rota = _timed(lambda: build_rota(unit, PROTOCOL, start, end))
    n = len(rota.checks)
    tz = ZoneInfo("Europe/London")

    def bare_datetimes():
        return [(start + timedelta(minutes=15 * i)).astimezone(tz) for i in range(n)]

    t_floor, _ = _timed(bare_datetimes)
    stamp = datetime(2026, 3, 1, tzinfo=UTC)
    t_ics, raw = _timed(lambda: rota_ics(rota, PROTOCOL, stamp=stamp))

    def bare_events():
        cal = icalendar.Calendar()
        cal.add("prodid", "-//bench//EN")
        cal.add("version", "2.0")
        for i, c in enumerate(rota.checks):
            ev = icalendar.Event()
            ev.add("uid", f"{i}@bench")
            ev.add("dtstamp", stamp)
            ev.add("dtstart", c.time)
            cal.add_component(ev)
        return cal.to_ical()

    t_ics_floor, _ = _timed(bare_events)
    print(
        f"\n{BEDS} beds x {DAYS} days: {n} checks, {len(rota.unmet)} unmet, "
        f"{len(rota.handovers)} handovers"
    )
    print(
        f"rota:      {t_rota:8.3f} s  ({t_rota / t_floor:8.1f} x {n} bare datetimes, "
        f"{t_floor * 1e3:.1f} ms)"
    )
    print(
        f"iCalendar: {t_ics:8.3f} s  ({t_ics / t_ics_floor:8.1f} x {n} bare icalendar events, "
        f"{t_ics_floor:.3f} s); {len(raw) / 1e6:.1f} MB"
    )
    assert n > BEDS * DAYS * 20  # hourly or tighter for most beds
    assert t_rota < 1000 * t_floor + 10  # loose
    assert t_ics < 20 * t_ics_floor + 10
