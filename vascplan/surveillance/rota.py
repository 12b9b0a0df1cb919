"""The unit rota: every patient's checks, assigned to nurses, staggered, with handovers.

Each check goes to the nurse who has its bed on the shift in which it falls due
(``unassigned`` when the unit file names nobody). One nurse cannot do two checks at
once: checks of one nurse are placed at least the protocol's ``check_duration_min``
apart, earliest deadline first, each no earlier than its due time and no later than its
tolerance window allows (``tolerance_min`` after due, tighter for frequent checks; unit
policy in the protocol file). A check that cannot be placed inside its window is still
placed (as early as the nurse is free) and listed in ``unmet`` with the reason.

All comparisons are made in UTC: two aware datetimes with the same zone compare by wall
time in Python, which is wrong inside a clock change's repeated hour.
"""

from __future__ import annotations

import bisect
from collections import defaultdict
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta

from vascplan.errors import InputError
from vascplan.fileio import did_you_mean
from vascplan.localtime import hm
from vascplan.safety import CAUTION
from vascplan.surveillance.protocol import Protocol
from vascplan.surveillance.schedule import ScheduledCheck, unit_schedule
from vascplan.surveillance.unit import Unit, shift_window

UNASSIGNED = "unassigned"


@dataclass(frozen=True)
class RotaCheck:
    """A check placed in the rota.

    Attributes
    ----------
    time : datetime
        When the rota places it (aware, unit zone).
    due : datetime
        When the protocol wants it; ``time`` differs only where a collision was staggered.
    nurse : str
        The nurse with the bed on that shift, or ``unassigned``.
    shift : str
        The shift in which the check falls due.
    within_window : bool
        False when the check could not be placed within its tolerance window.
    """

    time: datetime
    due: datetime
    bed: int
    ref: str
    nurse: str
    phase: str
    items: list[str]
    shift: str
    interval_min: int
    tolerance_min: int
    tier: str
    within_window: bool = True

    @property
    def late_min(self) -> float:
        """Minutes between due and placed time."""
        return (_utc(self.time) - _utc(self.due)).total_seconds() / 60.0


@dataclass(frozen=True)
class Unmet:
    """A check that could not be placed within its tolerance window, and why."""

    check: RotaCheck
    reason: str


@dataclass(frozen=True)
class Handover:
    """At a shift change: what falls due in the first window, and what is overdue."""

    at: datetime
    shift: str
    due_soon: list[RotaCheck]
    overdue: list[RotaCheck]


@dataclass
class Rota:
    """The unit's checks over a window, nurse by nurse."""

    unit: str
    timezone: str
    start: datetime
    end: datetime
    checks: list[RotaCheck]
    unmet: list[Unmet]
    handovers: list[Handover]
    nurse: str | None = None
    protocol: str = ""
    caution: str = CAUTION
    assumptions: list[str] = field(default_factory=list)
    unstaffed: list[tuple[int, str, list[str]]] = field(default_factory=list)
    """(bed, ref, shifts) with checks due while the unit file names no nurse for the bed."""

    def worklists(self) -> dict[str, list[RotaCheck]]:
        """Each nurse's checks in time order (``unassigned`` included)."""
        out: dict[str, list[RotaCheck]] = defaultdict(list)
        for c in self.checks:
            out[c.nurse].append(c)
        return {n: sorted(v, key=lambda c: (_utc(c.time), c.bed)) for n, v in sorted(out.items())}


def _utc(value: datetime) -> datetime:
    return value.astimezone(UTC)


class ShiftClock:
    """Which shift a moment falls in, by the unit's shift start times (local)."""

    def __init__(self, unit: Unit, start: datetime, end: datetime) -> None:
        tz = unit.unit.tz
        first = start.astimezone(tz).date() - timedelta(days=1)
        last = end.astimezone(tz).date() + timedelta(days=1)
        windows: list[tuple[datetime, datetime, str]] = []
        day = first
        while day <= last:
            for shift in unit.shifts:
                s, e = shift_window(unit, shift, datetime.combine(day, shift.start))
                windows.append((_utc(s), _utc(e), shift.name))
            day += timedelta(days=1)
        windows.sort()
        self._starts = [w[0] for w in windows]
        self._windows = windows

    def shift_at(self, moment: datetime) -> str:
        """The name of the shift in progress at ``moment``."""
        i = bisect.bisect_right(self._starts, _utc(moment)) - 1
        return self._windows[max(i, 0)][2]

    def changes(self, start: datetime, end: datetime) -> list[tuple[datetime, str]]:
        """Shift starts in ``[start, end)`` (UTC) with the name of the shift that begins."""
        s, e = _utc(start), _utc(end)
        return [(w[0], w[2]) for w in self._windows if s <= w[0] < e]


def _hm(value: datetime, tz) -> str:  # noqa: ANN001 - ZoneInfo
    """Local clock time with its UTC offset (``01:20+01:00``): the repeated hour reads apart."""
    return hm(value, tz)


SEARCH_LIMIT = 7
"""Largest run of back-to-back checks whose every order is tried (7! = 5,040 orders)."""


def _times(run: list[RotaCheck], free: datetime | None, duration: timedelta) -> list[datetime]:
    """Earliest placement of ``run`` in this order: each at its due time or when free."""
    out = []
    for c in run:
        due = _utc(c.due)
        t = due if free is None or free <= due else free
        out.append(t)
        free = t + duration
    return out


def _cost(run: list[RotaCheck], times: list[datetime]) -> tuple[int, float]:
    """(checks outside their window, total minutes late) of one placement."""
    missed = 0
    late = 0.0
    for c, t in zip(run, times, strict=True):
        over = (t - _utc(c.due)).total_seconds() / 60.0
        missed += over > c.tolerance_min
        late += over
    return missed, late


def _stagger(
    checks: list[RotaCheck], duration: timedelta, tz
) -> tuple[list[RotaCheck], list[Unmet]]:  # noqa: ANN001
    """Place one nurse's checks, never two at once, each as close to its due time as can be.

    Checks are taken by due time, then deadline, then bed, in runs: a run is a stretch the
    nurse works back to back (each check falls due before the one before it is done).
    Where the plain order leaves a check of a run outside its window and the run has at
    most :data:`SEARCH_LIMIT` checks, every order of the run is tried and the one with the
    fewest checks outside their windows, then the least total lateness, is kept (placing
    checks at their earliest possible times is best for a given order, so this finds the
    best placement of the run).
    """
    from itertools import permutations

    ordered = sorted(
        checks,
        key=lambda c: (_utc(c.due), _utc(c.due) + timedelta(minutes=c.tolerance_min), c.bed),
    )
    sequence: list[tuple[RotaCheck, datetime]] = []
    free: datetime | None = None
    i = 0
    while i < len(ordered):
        run = [ordered[i]]
        finish = max(_utc(ordered[i].due), free or _utc(ordered[i].due)) + duration
        j = i + 1
        while j < len(ordered) and _utc(ordered[j].due) < finish:
            finish = max(_utc(ordered[j].due), finish) + duration
            run.append(ordered[j])
            j += 1
        times = _times(run, free, duration)
        best = (_cost(run, times), run, times)
        if best[0][0] and len(run) <= SEARCH_LIMIT:
            for order in permutations(run):
                candidate = list(order)
                t = _times(candidate, free, duration)
                cost = _cost(candidate, t)
                if cost < best[0]:
                    best = (cost, candidate, t)
        sequence.extend(zip(best[1], best[2], strict=True))
        free = best[2][-1] + duration
        i = j
    placed: list[RotaCheck] = []
    unmet: list[Unmet] = []
    busy_bed: int | None = None
    for c, time in sequence:
        deadline = _utc(c.due) + timedelta(minutes=c.tolerance_min)
        ok = time <= deadline
        rc = RotaCheck(
            time=time.astimezone(tz),
            due=c.due,
            bed=c.bed,
            ref=c.ref,
            nurse=c.nurse,
            phase=c.phase,
            items=c.items,
            shift=c.shift,
            interval_min=c.interval_min,
            tolerance_min=c.tolerance_min,
            tier=c.tier,
            within_window=ok,
        )
        placed.append(rc)
        if not ok:
            unmet.append(
                Unmet(
                    rc,
                    f"{c.nurse} is busy with bed {busy_bed} until {_hm(time, tz)}; the window "
                    f"of this check closed at {_hm(deadline, tz)} ({c.tolerance_min} min after "
                    f"due); placed {rc.late_min:g} min late",
                )
            )
        busy_bed = c.bed
    return placed, unmet


def build_rota(
    unit: Unit,
    protocol: Protocol,
    start: datetime,
    end: datetime,
    nurse: str | None = None,
    *,
    assumptions: list[str] | None = None,
) -> Rota:
    """The unit's checks in ``[start, end)``, assigned, staggered, with handovers.

    Parameters
    ----------
    unit : Unit
        The validated unit file.
    protocol : Protocol
        The unit's protocol (phases, tolerances, ``check_duration_min``).
    start, end : datetime
        Aware window bounds: the rota holds the checks due in ``[start, end)``, placed
        together with those due a few hours either side, so a window's edges never move
        a staggered check.
    nurse : str, optional
        Keep only this nurse's checks (staggering is the same as for the whole unit).
    assumptions : list of str, optional
        Reference values the schedule rests on (from the risk assessment), carried along.

    Returns
    -------
    Rota

    Raises
    ------
    InputError
        ``--nurse`` names nobody in the unit's staff; ``--hours`` gives an empty window.
    """
    if _utc(end) <= _utc(start):
        raise InputError("--hours", "", "the window must end after it starts")
    staff = sorted({a.nurse for a in unit.staff})
    if nurse is not None and nurse not in staff and nurse != UNASSIGNED:
        known = ", ".join(staff) or "none"
        raise InputError(
            "--nurse", "", f"unknown nurse {nurse!r}{did_you_mean(nurse, staff)}; staff: {known}"
        )
    tz = unit.unit.tz
    clock = ShiftClock(unit, start, end)
    # Stagger with the checks just outside the window too, so that a window starting or
    # ending inside a run of back-to-back checks places them as a longer window would.
    margin = timedelta(minutes=120 + max(b.tolerance_min for b in protocol.tolerance))
    scheduled: list[ScheduledCheck] = unit_schedule(unit, protocol, start - margin, end + margin)
    duration = timedelta(minutes=protocol.check_duration_min.value)
    by_nurse: dict[str, list[RotaCheck]] = defaultdict(list)
    for s in scheduled:
        shift = clock.shift_at(s.due)
        who = unit.nurse_for(s.bed, shift) or UNASSIGNED
        by_nurse[who].append(
            RotaCheck(
                time=s.due,
                due=s.due,
                bed=s.bed,
                ref=s.ref,
                nurse=who,
                phase=s.phase,
                items=s.items,
                shift=shift,
                interval_min=s.interval_min,
                tolerance_min=s.tolerance_min,
                tier=s.tier,
            )
        )
    s_utc, e_utc = _utc(start), _utc(end)

    def inside(c: RotaCheck) -> bool:
        return s_utc <= _utc(c.due) < e_utc

    gaps: dict[tuple[int, str], list[str]] = {}
    for c in filter(inside, by_nurse.get(UNASSIGNED, [])):
        names = gaps.setdefault((c.bed, c.ref), [])
        if c.shift not in names:
            names.append(c.shift)
    order = [s.name for s in unit.shifts]
    unstaffed = [
        (bed, ref, sorted(names, key=order.index)) for (bed, ref), names in sorted(gaps.items())
    ]
    checks: list[RotaCheck] = []
    unmet: list[Unmet] = []
    for who, items in by_nurse.items():
        if who == UNASSIGNED:
            checks.extend(items)  # nobody to collide with; the table flags them
            continue
        placed, missed = _stagger(items, duration, tz)
        checks.extend(placed)
        unmet.extend(missed)
    checks = [c for c in checks if inside(c)]
    unmet = [u for u in unmet if inside(u.check)]
    if nurse is not None:
        checks = [c for c in checks if c.nurse == nurse]
        unmet = [u for u in unmet if u.check.nurse == nurse]
    checks.sort(key=lambda c: (_utc(c.time), c.bed))
    unmet.sort(key=lambda u: (_utc(u.check.due), u.check.bed))
    window = timedelta(minutes=protocol.handover_window_min.value)
    handovers = []
    due_sorted = sorted(checks, key=lambda c: (_utc(c.due), c.bed))
    due_keys = [_utc(c.due) for c in due_sorted]
    previous = _utc(start)
    for at, shift in clock.changes(start, end):
        lo = bisect.bisect_left(due_keys, at)
        hi = bisect.bisect_left(due_keys, at + window)
        soon = due_sorted[lo:hi]
        # Overdue: due before the change but placed after it, or missed its window in the
        # shift that is ending (to be confirmed done at handover).
        first = bisect.bisect_left(due_keys, previous)
        overdue = [c for c in due_sorted[:lo] if _utc(c.time) >= at] + [
            c for c in due_sorted[first:lo] if not c.within_window and _utc(c.time) < at
        ]
        overdue.sort(key=lambda c: (_utc(c.due), c.bed))
        handovers.append(Handover(at.astimezone(tz), shift, soon, overdue))
        previous = at
    return Rota(
        unit=unit.unit.name,
        timezone=unit.unit.timezone,
        start=start.astimezone(tz),
        end=end.astimezone(tz),
        checks=checks,
        unmet=unmet,
        handovers=handovers,
        nurse=nurse,
        protocol=protocol.name,
        assumptions=list(assumptions or []),
        unstaffed=unstaffed if nurse in (None, UNASSIGNED) else [],
    )
