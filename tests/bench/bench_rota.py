"""Benchmark: the rota for 40 beds over 14 days, and its iCalendar export.

Not run by default. ``python -m pytest tests/bench/bench_rota.py -q -s`` prints the
times, the peak memory and their ratios to floors measured in the same run. Times are CPU
seconds of this process (steadier than wall time on a shared machine).

Floors, as many as the rota has checks:

- ``plain events``: plain event objects built and serialised with the ``icalendar``
  library (UID, DTSTAMP, DTSTART only): the floor of issue 16's goal, "within 2x of
  building the same number of plain event objects", for the rota and its iCalendar
  together;
- ``bare datetimes``: aware datetimes (a UTC step plus the conversion to the unit's
  zone), the least a rota can do per check (shown, no goal).

Peak memory: the largest resident set (``VmHWM``) of a fresh process that builds the
rota and writes its iCalendar file, as ``vascplan rota --format ics`` does (goal: at most
150 MB); beside it the same process stopped before the rota (the interpreter and the
imports), and the Python allocations of the rota and the iCalendar text (tracemalloc peak).

Before issue 16: the rota and its iCalendar peaked at 328 MB (the ``icalendar`` objects,
about 11 KB per event) and the iCalendar took 6.4 s CPU here; the text is now written
directly (:func:`vascplan.surveillance.render.write_rota_ics`).
"""

from __future__ import annotations

import json
import subprocess
import sys
import time
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from pathlib import Path
from zoneinfo import ZoneInfo

ROOT = Path(__file__).resolve().parents[2]
BEDS = 40
DAYS = 14
START = datetime(2026, 3, 22, 7, 30, tzinfo=UTC)  # spans the 29 March clock change
MAX_MB = 150


def _unit():  # type: ignore[no-untyped-def]
    from tests.surv_factory import make_unit, sheath_patient

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


def _timed(fn):  # type: ignore[no-untyped-def]
    start = time.process_time()
    out = fn()
    return time.process_time() - start, out


_CHILD = """
import json, resource, sys, tracemalloc
sys.path.insert(0, {root!r})
from datetime import timedelta
from tests.bench.bench_rota import START, DAYS, _unit
from tests.surv_factory import PROTOCOL
from vascplan.surveillance.render import rota_ics
from vascplan.surveillance.rota import build_rota
unit = _unit()
build_rota(unit, PROTOCOL, START, START + timedelta(hours=2))  # the imports a rota needs
def hwm():
    # VmHWM: this process's own resident peak (ru_maxrss would carry the parent's
    # resident size at fork time across exec on Linux).
    for line in open("/proc/self/status"):
        if line.startswith("VmHWM:"):
            return int(line.split()[1]) / 1024
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
out = {{}}
if {full}:
    tracemalloc.start()
    rota = build_rota(unit, PROTOCOL, START, START + timedelta(days=DAYS))
    raw = rota_ics(rota, PROTOCOL)
    out["traced_mb"] = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    with open({path!r}, "wb") as fh:
        fh.write(raw)
    out["bytes"] = len(raw)
out["peak_mb"] = hwm()
print(json.dumps(out))
"""


def _child(full: bool, path: Path) -> dict[str, float]:
    code = _CHILD.format(root=str(ROOT), full=full, path=str(path))
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=ROOT
    )
    return json.loads(done.stdout.strip().splitlines()[-1])


def _peak(path: Path) -> dict[str, float]:
    """Peak resident memory in fresh processes (a separate run without tracemalloc for
    the resident peak, since tracing costs memory of its own)."""
    bare = _child(False, path)
    traced = _child(True, path)
    code = (
        _CHILD.format(root=str(ROOT), full=True, path=str(path))
        .replace("tracemalloc.start()", "pass")
        .replace("tracemalloc.get_traced_memory()[1]", "0")
        .replace("tracemalloc.stop()", "pass")
    )
    done = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, check=True, cwd=ROOT
    )
    plain = json.loads(done.stdout.strip().splitlines()[-1])
    return {
        "base_mb": bare["peak_mb"],
        "peak_mb": plain["peak_mb"],
        "traced_mb": traced["traced_mb"],
        "bytes": plain["bytes"],
    }


@dataclass
class _PlainEvent:
    uid: str
    start: datetime
    end: datetime
    summary: str


def run(tmp: Path) -> dict[str, float]:
    import icalendar

    from tests.surv_factory import PROTOCOL
    from vascplan.surveillance.render import rota_ics
    from vascplan.surveillance.rota import build_rota

    unit = _unit()
    end = START + timedelta(days=DAYS)
    build_rota(unit, PROTOCOL, START, START + timedelta(hours=2))  # warm caches
    t_rota, rota = _timed(lambda: build_rota(unit, PROTOCOL, START, end))
    n = len(rota.checks)
    tz = ZoneInfo("Europe/London")
    stamp = datetime(2026, 3, 1, tzinfo=UTC)
    t_ics, raw = _timed(lambda: rota_ics(rota, PROTOCOL, stamp=stamp))

    def bare_datetimes():  # type: ignore[no-untyped-def]
        return [(START + timedelta(minutes=15 * i)).astimezone(tz) for i in range(n)]

    def plain_events():  # type: ignore[no-untyped-def]
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

    def plain_objects():  # type: ignore[no-untyped-def]
        return [
            _PlainEvent(f"{i}@bench", c.time, c.time + timedelta(minutes=5), f"bed {c.bed}")
            for i, c in enumerate(rota.checks)
        ]

    t_dt, _ = _timed(bare_datetimes)
    t_events, _ = _timed(plain_events)
    t_objects, _ = _timed(plain_objects)
    out = {
        "checks": n,
        "unmet": len(rota.unmet),
        "handovers": len(rota.handovers),
        "rota_s": t_rota,
        "ics_s": t_ics,
        "ics_mb": len(raw) / 1e6,
        "floor_events_s": t_events,
        "floor_datetimes_s": t_dt,
        "floor_objects_s": t_objects,
    }
    out.update(_peak(tmp / "rota.ics"))
    return out


def report(r: dict[str, float]) -> str:
    n = int(r["checks"])
    both = r["rota_s"] + r["ics_s"]
    ratio = both / r["floor_events_s"]
    lines = [
        f"{BEDS} beds x {DAYS} days: {n} checks, {int(r['unmet'])} unmet, "
        f"{int(r['handovers'])} handovers; CPU seconds",
        f"rota:              {r['rota_s']:7.3f} s ({r['rota_s'] / r['floor_datetimes_s']:6.1f} x "
        f"{n} bare datetimes, {r['floor_datetimes_s'] * 1e3:.1f} ms)",
        f"iCalendar:         {r['ics_s']:7.3f} s ({r['ics_mb']:.1f} MB of text)",
        f"floor:             {r['floor_events_s']:7.3f} s ({n} plain icalendar events built "
        f"and serialised); {r['floor_objects_s']:.3f} s ({n} plain dataclass events)",
        f"goal: rota + iCalendar within 2x of the plain events: {both:.3f} s = {ratio:.2f}x "
        f"({'met' if ratio <= 2 else 'NOT met'}); {both / r['floor_objects_s']:.1f}x the "
        "plain dataclass events",
        f"goal: peak memory at most {MAX_MB} MB: {r['peak_mb']:.0f} MB "
        f"({'met' if r['peak_mb'] <= MAX_MB else 'NOT met'}); the same process before the "
        f"rota {r['base_mb']:.0f} MB (interpreter and imports); Python allocations of the "
        f"rota and its iCalendar at their peak {r['traced_mb']:.0f} MB",
    ]
    return "\n".join(lines)


def test_rota_40_beds_14_days(tmp_path: Path) -> None:
    r = run(tmp_path)
    print("\n" + report(r))
    assert r["checks"] > BEDS * DAYS * 20  # hourly or tighter for most beds
    assert r["rota_s"] > 0 and r["ics_s"] > 0


if __name__ == "__main__":
    import tempfile

    sys.path.insert(0, str(ROOT))
    with tempfile.TemporaryDirectory() as d:
        print(report(run(Path(d))))
