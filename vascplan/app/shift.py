"""What the shift has to do now: per bed, the checks overdue and the checks due soon.

One request, :func:`due_now`: from the unit file, its protocol and the observation store,
as at a moment, each patient's scheduled checks (from the monitoring start) that are not
fully recorded, split into *overdue* (past their tolerance) and *due* (due by ``at +
within_min``, or due already but still inside their tolerance). A check counts only for
the items and sides it records (:mod:`vascplan.observations.coverage`), so each check lists
the ``items`` still to record (``nirs:L``, ``refill:R``, ``dpc``). The terminal renders the
result with :func:`render_table`, the JSON contract is :func:`to_json`.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any

from vascplan.localtime import day_hm, hm, utc
from vascplan.safety import CAUTION


@dataclass(frozen=True)
class DueCheck:
    """One scheduled check not fully recorded.

    Attributes
    ----------
    due : datetime
        When the protocol wants it (aware, the unit's zone).
    items : tuple of str
        What is still to record, as ``ITEM:SIDE`` labels (``nirs:L``) or the item alone.
    whole : bool
        Nothing of the check is recorded yet (``items`` is all it asks for).
    minutes_late : int
        Minutes since it was due (negative: due in that many minutes).
    phase : str
        The protocol phase.
    """

    due: datetime
    items: tuple[str, ...]
    whole: bool
    minutes_late: int
    phase: str


@dataclass(frozen=True)
class BedDue:
    bed: int
    ref: str
    overdue: tuple[DueCheck, ...]
    due: tuple[DueCheck, ...]


@dataclass(frozen=True)
class DueResult:
    unit: str
    at: datetime
    within_min: int
    beds: tuple[BedDue, ...]


def _bed_due(
    unit: Any, patient: Any, protocol: Any, findings: list[Any], at: datetime, within_min: int
) -> BedDue:
    from vascplan.observations.coverage import latest_by_need, missing, needs
    from vascplan.observations.findings import ENTERED_IN_ERROR
    from vascplan.surveillance.schedule import patient_schedule

    at_utc = utc(at)
    horizon = at_utc + timedelta(minutes=within_min)
    # The window's end is exclusive: a check due exactly at the horizon is shown too.
    schedule = patient_schedule(
        unit, patient, protocol, patient.device.inserted, horizon + timedelta(seconds=1)
    )
    wanted = {tuple(s.items): needs(protocol, s.items) for s in schedule}
    seen = latest_by_need(
        {n for ns in wanted.values() for n in ns},
        (
            (f.time, f.item, f.site)
            for f in findings
            if f.value != ENTERED_IN_ERROR and utc(f.time) <= at_utc
        ),
    )
    overdue, due = [], []
    for s in schedule:
        check_needs = wanted[tuple(s.items)]
        gap = tuple(missing(check_needs, seen, s.due, s.tolerance_min))
        if not gap:
            continue
        late = int((at_utc - utc(s.due)).total_seconds() // 60)
        row = DueCheck(s.due, gap, len(gap) == len(check_needs), late, s.phase)
        if utc(s.due) + timedelta(minutes=s.tolerance_min) < at_utc:
            overdue.append(row)
        else:
            due.append(row)
    return BedDue(patient.bed, patient.ref, tuple(overdue), tuple(due))


def due_now(
    unit: Any,
    store: Any,
    at: datetime,
    *,
    within_min: int = 60,
    protocol: Any = None,
    base_dir: Path | None = None,
) -> DueResult:
    """Per bed, the checks overdue at ``at`` and those due within ``within_min`` minutes.

    Parameters
    ----------
    unit : Unit
        The validated unit file.
    store : ObservationStore
        The record; a patient's findings are found by ref.
    at : datetime
        The moment (aware).
    within_min : int
        How far ahead to look [min].
    protocol : Protocol, optional
        The unit's protocol when already loaded.
    base_dir : Path, optional
        The unit file's folder (for a protocol given as a relative path).
    """
    from vascplan.observations.review import unit_protocol

    if within_min < 0:
        raise ValueError("within_min must be 0 or more")
    protocol = protocol or unit_protocol(unit, base_dir)
    every = store.current(unit.unit.key, until=at)
    beds = tuple(
        _bed_due(unit, p, protocol, [f for f in every if f.entry.ref == p.ref], at, within_min)
        for p in sorted(unit.patients, key=lambda p: p.bed)
    )
    return DueResult(unit.unit.name, at, within_min, beds)


# ---------------------------------------------------------------------------
# Renderers


def to_json(result: DueResult) -> dict[str, Any]:
    """The machine contract of ``vascplan due --format json``."""
    tz = result.at.tzinfo

    def check(c: DueCheck) -> dict[str, Any]:
        return {"due": c.due.astimezone(tz).isoformat(), "items": list(c.items)}

    return {
        "unit": result.unit,
        "at": result.at.isoformat(),
        "beds": [
            {
                "bed": b.bed,
                "ref": b.ref,
                "overdue": [check(c) for c in b.overdue],
                "due": [check(c) for c in b.due],
            }
            for b in result.beds
        ],
        "caution": CAUTION,
    }


def _items(c: DueCheck) -> str:
    return f"whole check ({len(c.items)} items)" if c.whole else ", ".join(c.items)


def render_table(result: DueResult) -> str:
    """What to do now, bed by bed, for the terminal; every time with its UTC offset."""
    tz = result.at.tzinfo
    assert tz is not None
    until = result.at + timedelta(minutes=result.within_min)
    lines = [
        f"Checks due: {result.unit}, as at {day_hm(result.at, tz)}; "
        f"overdue, and due by {hm(until, tz)} (next {result.within_min} min)",
        "",
    ]
    for b in result.beds:
        lines.append(f"Bed {b.bed}  {b.ref}")
        if len(b.overdue) > 2:
            first, last = b.overdue[0], b.overdue[-1]
            same_day = first.due.astimezone(tz).date() == last.due.astimezone(tz).date()
            lines.append(
                f"  OVERDUE  {len(b.overdue)} checks, due {day_hm(first.due, tz)} to "
                f"{hm(last.due, tz) if same_day else day_hm(last.due, tz)} "
                f"(the first {first.minutes_late} min late); "
                f"still to record: {_items(last)}"
            )
        else:
            for c in b.overdue:
                lines.append(f"  OVERDUE  {hm(c.due, tz)} ({c.minutes_late} min late): {_items(c)}")
        for c in b.due:
            when = "now" if c.minutes_late >= 0 else f"in {-c.minutes_late} min"
            lines.append(f"  due      {hm(c.due, tz)} ({when}): {_items(c)}")
        if not b.overdue and not b.due:
            lines.append("  nothing due")
        lines.append("")
    lines.append(
        "Record a check: vascplan obs add --unit UNIT --bed N --by ID --ITEM SIDE=VALUE "
        "(the word before the colon is the option)."
    )
    lines.append(f"Caution: {CAUTION}")
    return "\n".join(lines)


__all__ = ["BedDue", "DueCheck", "DueResult", "due_now", "render_table", "to_json"]
