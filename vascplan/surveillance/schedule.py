"""Each patient's limb checks, from insertion to removal and through the after-removal phase.

Arithmetic is in real elapsed time: every moment is converted to UTC before any
interval is added, so an hourly check falls every 60 real minutes across a clock change
(adding a ``timedelta`` to a zone-aware local time in Python would step wall-clock time
instead). Times are handed back in the unit's zone, with their UTC offset.

A phase change re-plans from its moment: a tier change (the next check falls at the
later of the last check plus the new interval and the moment of change), a new distal
perfusion cannula (the after-insertion phases start again, when the protocol says so),
and removal (the after-removal phases start from the moment of removal). A check due at
the very moment of a change is kept; the new plan runs from that moment.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime, timedelta

from vascplan.surveillance.protocol import Phase, Protocol
from vascplan.surveillance.risk import tier_changes
from vascplan.surveillance.unit import Patient, Unit


@dataclass(frozen=True)
class ScheduledCheck:
    """One limb check the protocol wants.

    Attributes
    ----------
    due : datetime
        When the protocol wants the check (aware, the unit's zone).
    bed, ref : int, str
        Where and whom.
    phase : str
        The protocol phase the check belongs to (``post-insertion``, ``maintenance``...).
    interval_min : int
        Minutes of real time since the previous check of this sequence.
    tolerance_min : int
        How late the check may be placed when staggered [min].
    items : list of str
        Check item ids from the protocol (``pulses``, ``nirs``, ``dpc``...).
    tier : str
        The patient's risk tier in effect.
    """

    due: datetime
    bed: int
    ref: str
    phase: str
    interval_min: int
    tolerance_min: int
    items: list[str]
    tier: str


@dataclass
class _State:
    phases: list[Phase]
    stage: int
    stage_start: datetime
    last: datetime
    count: int = 0
    floor: datetime | None = None


def _aware(value: datetime, name: str) -> datetime:
    if value.tzinfo is None or value.utcoffset() is None:
        raise ValueError(f"{name} must be time-zone aware")
    return value.astimezone(UTC)


def _events(
    patient: Patient, protocol: Protocol, until: datetime
) -> list[tuple[datetime, int, str, str]]:
    """Phase-changing moments after insertion: (utc, order, kind, tier)."""
    dev = patient.device
    out: list[tuple[datetime, int, str, str]] = []
    changes = tier_changes(patient, protocol, until)
    for moment, tier in changes[1:]:
        out.append((moment.astimezone(UTC), 1, "tier", tier))
    dpc = patient.dpc
    until_utc = until.astimezone(UTC)
    ins = dev.inserted.astimezone(UTC)
    rem = None if dev.removed is None else dev.removed.astimezone(UTC)
    if protocol.new_cannula_restarts.value and dpc is not None:
        d_in = dpc.inserted.astimezone(UTC)
        if d_in > ins and (rem is None or d_in < rem) and d_in <= until_utc:
            out.append((d_in, 2, "restart", ""))
    if rem is not None and rem <= until_utc:
        out.append((rem, 3, "removal", ""))
    out.sort()
    return out


def monitoring_start(patient: Patient) -> datetime:
    """When the unit's checks of ``patient`` start (UTC): the unit file's
    ``monitoring_from`` (admission to the unit), else the device's insertion.

    A patient admitted with a device already in place is not behind on the checks before
    admission: the schedule still runs from the insertion (so the phase is the one the
    device's age gives), but no check falls due before this moment.
    """
    start = getattr(patient, "monitoring_from", None) or patient.device.inserted
    return start.astimezone(UTC)


def patient_schedule(
    unit: Unit, patient: Patient, protocol: Protocol, start: datetime, end: datetime
) -> list[ScheduledCheck]:
    """Every check of one patient due in ``[start, end)``, in time order.

    Parameters
    ----------
    unit : Unit
        The validated unit (for its time zone).
    patient : Patient
        One of ``unit.patients``.
    protocol : Protocol
        Phases, tier intervals, tolerances and check items.
    start, end : datetime
        Aware bounds of the window; checks are planned from insertion regardless, so a
        window starting mid-sequence sees the same times as a longer one.

    Returns
    -------
    list of ScheduledCheck

    Examples
    --------
    >>> from vascplan.surveillance.unit import load_unit
    >>> from vascplan.surveillance.protocol import load_protocol
    >>> unit = load_unit("tests/unit_minimal.yaml")
    >>> p = unit.patients[0]
    >>> checks = patient_schedule(unit, p, load_protocol("standard", "u"),
    ...                           p.device.inserted, p.device.inserted + timedelta(hours=1))
    >>> [c.due.strftime("%H:%M") for c in checks]
    ['14:35', '14:50', '15:05']
    """
    start_utc, end_utc = _aware(start, "start"), _aware(end, "end")
    start_utc = max(start_utc, monitoring_start(patient))  # nothing due before monitoring
    tz = unit.unit.tz
    dev = patient.device
    inserted = dev.inserted.astimezone(UTC)
    tiers = tier_changes(patient, protocol, end)
    tier: str = tiers[0][1] if tiers else "standard"
    events = _events(patient, protocol, end)
    nirs = bool(patient.baseline.nirs)
    st = _State(protocol.phases_after("insertion"), 0, inserted, inserted)
    out: list[ScheduledCheck] = []
    k = 0  # next event
    while True:
        phase = st.phases[st.stage]
        every = protocol.interval_min(phase, tier)
        due = st.last + timedelta(minutes=every)
        if st.floor is not None and due < st.floor:
            due = st.floor
        # End of the phase by duration or by count: the next phase continues from the last check.
        over = (
            phase.for_min is not None and due > st.stage_start + timedelta(minutes=phase.for_min)
        ) or (phase.count is not None and st.count >= phase.count)
        if over:
            if st.stage + 1 >= len(st.phases):
                break  # the after-removal phases are done
            if phase.for_min is not None:
                st.stage_start = st.stage_start + timedelta(minutes=phase.for_min)
            else:
                st.stage_start = st.last
            st.stage += 1
            st.count = 0
            continue
        if k < len(events) and events[k][0] < due:
            moment, _, kind, new_tier = events[k]
            k += 1
            if kind == "tier":
                tier = new_tier
                st.floor = moment
            elif kind == "restart":
                st = _State(protocol.phases_after("insertion"), 0, moment, moment)
            else:  # removal
                st = _State(protocol.phases_after("removal"), 0, moment, moment)
            continue
        if due >= end_utc:
            break
        st.last = due
        st.count += 1
        st.floor = None
        if due >= start_utc:
            dpc_in = patient.dpc_in_at(due)
            out.append(
                ScheduledCheck(
                    due=due.astimezone(tz),
                    bed=patient.bed,
                    ref=patient.ref,
                    phase=phase.name,
                    interval_min=every,
                    tolerance_min=protocol.tolerance_min(every),
                    items=protocol.items_for(dev.kind, nirs, dpc_in, dev.limb),
                    tier=tier,
                )
            )
    return out


def unit_schedule(
    unit: Unit, protocol: Protocol, start: datetime, end: datetime
) -> list[ScheduledCheck]:
    """Every patient's checks due in ``[start, end)``, ordered by due time then bed."""
    out: list[ScheduledCheck] = []
    for patient in unit.patients:
        out.extend(patient_schedule(unit, patient, protocol, start, end))
    out.sort(key=lambda c: (c.due.astimezone(UTC), c.bed))
    return out
