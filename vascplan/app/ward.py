"""The ward's application layer: what a nurse, a physician or the nurse in charge asks for.

One function per request: the unit's state at an instant, the board, a patient's page, the
check form, recording a check, a correction or an event, importing and exporting a unit
file. The web pages (:mod:`vascplan.web`) and the commands (``vascplan unit``) only parse,
call and render. Every clinical rule stays where it is: the unit is rebuilt from the
store's events into the unit file's own model (:func:`vascplan.ward.model.replay`), then
the risk, schedule and review functions the CLI uses are called on it.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from typing import Any

from vascplan.app.checkform import FormSection, check_sections
from vascplan.errors import InputError, VascplanError
from vascplan.observations.findings import check_time, make_finding, side_of
from vascplan.observations.review import Overdue, review_patient
from vascplan.observations.store import CurrentFinding, Entry
from vascplan.observations.trend import PatientTrend, patient_trend
from vascplan.safety import CAUTION
from vascplan.surveillance.protocol import Protocol, load_protocol
from vascplan.surveillance.risk import RiskAssessment, assess_patient
from vascplan.surveillance.schedule import ScheduledCheck, patient_schedule
from vascplan.surveillance.unit import Patient, Unit
from vascplan.ward.model import EventIn, WardState, replay
from vascplan.ward.store import WardEvent, WardStore

PAGE_SCHEDULE_H = 12
"""How far ahead the patient page lists the schedule [h] (the issue's twelve hours)."""
BOARD_LOOKAHEAD_H = 24
"""How far ahead the board looks for the next check [h]."""
DUE_SOON_MIN = 15
"""A bed whose next check is this close [min] is shown as due soon (unit policy: the
length of the shortest check interval of the bundled protocol)."""
FUTURE_SLACK = timedelta(minutes=2)
"""A check time a little ahead of the server's clock is accepted (clocks differ by a
minute or so between a tablet and the server); a later time is refused."""


class Forbidden(VascplanError):
    """The signed-in person's role does not allow this (the page answers 403)."""


class NotFound(VascplanError):
    """No such unit, patient or entry (the page answers 404)."""


class FormErrors(InputError):
    """Mistakes in a form, each on its field (``errors``: field name -> message)."""

    def __init__(self, errors: dict[str, str]) -> None:
        self.errors = errors
        first = next(iter(errors.items()))
        super().__init__("form", first[0], first[1])


@dataclass(frozen=True)
class Recorded:
    """What a form stored: ``again`` when the same form had been sent before."""

    what: str
    again: bool = False


@dataclass
class Snapshot:
    """The unit as at ``at``: the model, its protocol and the events behind it."""

    name: str
    at: datetime
    state: WardState
    protocol: Protocol

    @property
    def unit(self) -> Unit:
        assert self.state.unit is not None
        return self.state.unit

    def patient(self, ref: str) -> Patient:
        for p in self.unit.patients:
            if p.ref == ref:
                return p
        raise NotFound(f"no patient {ref!r} on {self.name} now")


def _event_in(e: WardEvent) -> EventIn:
    return EventIn(e.ref, e.kind, e.at, e.data, e.id, e.by)


def unit_name(store: WardStore, name: str | None = None) -> str:
    """The unit to serve: ``name`` when the store has it, else the store's only/first unit."""
    names = store.units()
    if name is not None:
        if name not in names:
            shown = ", ".join(repr(n) for n in names) or "none yet (vascplan unit import)"
            raise InputError("--unit", "", f"no unit {name!r} in {store.shown}; units: {shown}")
        return name
    if not names:
        raise InputError(
            "--db",
            "",
            f"{store.shown} holds no unit yet; seed one with vascplan unit import UNIT.yaml",
        )
    return names[0]


@functools.lru_cache(maxsize=16)
def _protocol(protocol: str, name: str) -> Protocol:
    """The unit's protocol, read once per process (a bundled protocol is package data and
    does not change while the server runs; restart the server after editing a protocol)."""
    return load_protocol(protocol, f"store {name}")


def snapshot(store: WardStore, name: str, at: datetime) -> Snapshot:
    """The unit as at ``at``, from its events (the same model a unit file gives)."""
    state = replay(name, (_event_in(e) for e in store.events(name)), at)
    if state.unit is None:
        raise NotFound(f"no unit {name!r} in {store.shown} at {at.isoformat()}")
    protocol = _protocol(state.unit.protocol, name)
    return Snapshot(name, at.astimezone(state.unit.unit.tz), state, protocol)


# ---------------------------------------------------------------------------
# The board


@dataclass(frozen=True)
class AlertView:
    rule: str
    detail: str
    meaning: str
    call: str
    within_min: int | None
    source: str
    time: datetime | None


@dataclass
class LimbAlerts:
    limb: str
    alerts: list[AlertView]


@dataclass
class BoardRow:
    bed: int
    ref: str
    device: str
    side: str
    limb: str
    tier: str
    removed: bool
    next_due: datetime | None
    minutes_to_go: int | None
    overdue: list[Overdue]
    alert_groups: list[LimbAlerts]
    last_check: datetime | None

    @property
    def status(self) -> str:
        """``alert``, ``overdue``, ``due-soon`` (within :data:`DUE_SOON_MIN`) or ``ok``: one
        word the page shows as text and an icon, the colour only repeating it."""
        if any(g.alerts for g in self.alert_groups):
            return "alert"
        if self.overdue:
            return "overdue"
        if self.minutes_to_go is not None and self.minutes_to_go <= DUE_SOON_MIN:
            return "due-soon"
        return "ok"


@dataclass
class Board:
    unit: str
    at: datetime
    protocol: str
    rows: list[BoardRow]
    waiting: list[str]
    caution: str = CAUTION


_NO_CALL = "the protocol names no one: decide by local policy"


def device_text(p: Patient) -> str:
    d = p.device
    return f"{d.kind} {d.size_fr:g} Fr ({d.label}), {d.side} {d.vessel}"


def _alert_views(review_alerts: list[Any], protocol: Protocol) -> list[LimbAlerts]:
    groups: dict[str, list[AlertView]] = {}
    for a in review_alerts:
        meaning = ""
        if a.escalation:
            try:
                meaning = protocol.escalation_by_id(a.escalation).finding
            except KeyError:
                meaning = ""
        side = side_of(a.side) if a.side else None
        arm = a.side is not None and any(w in a.side for w in ("RAD", "ULN", "BRA", "ARM"))
        if a.side in ("L-ARM", "R-ARM"):
            side = a.side[0]
        limb = (
            f"{'Left' if side == 'L' else 'Right'} {'arm' if arm else 'leg'}"
            if side
            else "Whole patient"
        )
        groups.setdefault(limb, []).append(
            AlertView(a.rule, a.detail, meaning, a.call or _NO_CALL, a.within_min, a.source, a.time)
        )
    out = []
    for limb in sorted(groups):
        # Most urgent first; alerts with the same call side by side (the board says the
        # meaning and whom to call once under them).
        alerts = sorted(
            groups[limb],
            key=lambda v: (v.within_min is None, v.within_min or 0, v.call, v.meaning),
        )
        out.append(LimbAlerts(limb, alerts))
    return out


def _findings(store: WardStore, snap: Snapshot, ref: str, at: datetime) -> list[CurrentFinding]:
    # The observation record knows the unit by its stable id, as the CLI does.
    return store.obs.current(snap.unit.unit.key, ref=ref, until=at)


def _row(snap: Snapshot, p: Patient, findings: list[CurrentFinding]) -> BoardRow:
    at = snap.at
    unit, protocol = snap.unit, snap.protocol
    review = review_patient(unit, p, protocol, findings, at)
    ahead = patient_schedule(unit, p, protocol, at, at + timedelta(hours=BOARD_LOOKAHEAD_H))
    nxt = ahead[0].due if ahead else None
    to_go = None
    if nxt is not None:
        to_go = math.ceil((nxt.astimezone(UTC) - at.astimezone(UTC)).total_seconds() / 60)
    tier = assess_patient(p, protocol, at).tier
    return BoardRow(
        bed=p.bed,
        ref=p.ref,
        device=device_text(p),
        side=p.device.side,
        limb=p.device.limb,
        tier=tier,
        removed=p.device.removed is not None and p.device.removed <= at,
        next_due=nxt,
        minutes_to_go=to_go,
        overdue=review.overdue,
        alert_groups=_alert_views(review.alerts, protocol),
        last_check=review.last_check.astimezone(unit.unit.tz) if review.last_check else None,
    )


def board(store: WardStore, name: str, at: datetime) -> Board:
    """Every bed as at ``at``: tier, next check, overdue checks, open alerts per limb."""
    snap = snapshot(store, name, at)
    rows = [
        _row(snap, p, _findings(store, snap, p.ref, at))
        for p in sorted(snap.unit.patients, key=lambda p: p.bed)
    ]
    return Board(name, snap.at, snap.protocol.name, rows, sorted(snap.state.waiting))


# ---------------------------------------------------------------------------
# The patient page


@dataclass
class PatientView:
    unit: str
    at: datetime
    patient: Patient
    row: BoardRow
    risk: RiskAssessment
    schedule: list[ScheduledCheck]
    entries: list[Entry]
    trend: PatientTrend
    events: list[EventIn]
    caution: str = CAUTION


def patient_view(store: WardStore, name: str, ref: str, at: datetime) -> PatientView:
    """One patient: the next twelve hours, findings, alerts then and now, events, risk."""
    snap = snapshot(store, name, at)
    p = snap.patient(ref)
    findings = _findings(store, snap, ref, at)
    return PatientView(
        unit=name,
        at=snap.at,
        patient=p,
        row=_row(snap, p, findings),
        risk=assess_patient(p, snap.protocol, at),
        schedule=patient_schedule(
            snap.unit, p, snap.protocol, at, at + timedelta(hours=PAGE_SCHEDULE_H)
        ),
        entries=store.obs.entries(snap.unit.unit.key, ref=ref),
        trend=patient_trend(snap.unit, p, snap.protocol, findings, at),
        events=snap.state.history.get(ref, []),
    )


# ---------------------------------------------------------------------------
# Recording a check


@dataclass
class CheckForm:
    """The form, with the last value recorded for each field (``last``: field name ->
    (value, when)) so that the nurse compares with it."""

    unit: str
    at: datetime
    patient: Patient
    sections: list[FormSection]
    last: dict[str, tuple[str, datetime]] = field(default_factory=dict)
    caution: str = CAUTION


def check_form(
    store: WardStore, name: str, ref: str, at: datetime, *, with_last: bool = True
) -> CheckForm:
    """The check form for ``ref``: the protocol's items for the check due next (or now)."""
    snap = snapshot(store, name, at)
    p = snap.patient(ref)
    dpc_in = p.dpc_in_at(at)
    items = snap.protocol.items_for(p.device.kind, bool(p.baseline.nirs), dpc_in, p.device.limb)
    last: dict[str, tuple[str, datetime]] = {}
    if with_last:
        tz = snap.unit.unit.tz
        for f in _findings(store, snap, ref, at):  # time order: the latest wins
            last[f"{f.item}:{f.site}"] = (f.value, f.time.astimezone(tz))
    return CheckForm(name, snap.at, p, check_sections(snap.protocol, p, items), last)


def record_check(
    store: WardStore,
    name: str,
    ref: str,
    values: dict[str, str],
    time_text: str,
    *,
    author: str,
    now: datetime,
    token: str = "",
) -> Recorded:
    """Validate and store one check (each filled field one finding), once per form token.

    The same validation as ``vascplan obs add`` (:func:`make_finding`) and the store's own
    add path; every mistake is reported on its field and nothing is stored.
    """
    if token and (done := store.form_result(token)) is not None:
        return Recorded(done, again=True)
    snap = snapshot(store, name, now)
    p = snap.patient(ref)
    form = check_form(store, name, ref, now, with_last=False)
    known = {f.name: f for s in form.sections for f in s.fields}
    errors: dict[str, str] = {}
    try:
        moment = check_time(time_text, snap.unit.unit.tz, "time")
        if moment.astimezone(UTC) > now.astimezone(UTC) + FUTURE_SLACK:
            errors["time"] = f"the check time {time_text} is in the future; give when it was made"
    except InputError as exc:
        errors["time"] = exc.message
        moment = now
    findings = []
    for key, raw in values.items():
        if key not in known:
            errors[key] = f"{key!r} is not a check item for {ref}"
            continue
        if not raw.strip():
            continue
        f = known[key]
        try:
            findings.append(
                make_finding(
                    time=moment,
                    bed=p.bed,
                    ref=ref,
                    by=author,
                    item=f.item,
                    site=f.site,
                    value=raw,
                    source="form",
                )
            )
        except InputError as exc:
            errors[key] = exc.message
    if not findings and not errors:
        errors["form"] = "fill in at least one finding"
    if errors:
        raise FormErrors(errors)
    what = f"check of {ref} (bed {p.bed}) at {moment.isoformat()}"
    # The token is claimed before the write: of two sends of one form (even at the same
    # instant) exactly one claims it and records; the other is told it was recorded.
    if token and not store.claim_form(token, "check", what, now):
        return Recorded(store.form_result(token) or what, again=True)
    ids = store.obs.record(
        findings, unit=snap.unit.unit.key, unit_name=name, kind="add", source=f"web {author}"
    )
    what = f"{what}: {len(ids)} findings, entries {ids[0]}-{ids[-1]}"
    return Recorded(what)


def correct_entry(
    store: WardStore,
    entry_id: int,
    *,
    value: str,
    withdraw: bool,
    reason: str,
    author: str,
) -> tuple[Entry, int]:
    """Store a correction of entry ``entry_id`` (a new entry pointing at it, with why)."""
    errors: dict[str, str] = {}
    if not reason.strip():
        errors["reason"] = "a correction needs a reason"
    if not withdraw and not value.strip():
        errors["value"] = "give the right value, or tick 'entered in error'"
    if errors:
        raise FormErrors(errors)
    try:
        new_id = store.obs.correct(entry_id, value, by=author, reason=reason, withdraw=withdraw)
    except InputError as exc:
        if exc.source == "--entry":
            raise NotFound(exc.message) from None
        raise FormErrors({"value" if exc.source == "--value" else "reason": exc.message}) from None
    return entry_of(store, entry_id), new_id


def entry_of(store: WardStore, entry_id: int) -> Entry:
    """One stored entry by id (original or correction)."""
    import sqlalchemy as sa

    from vascplan.observations.store import entries

    q = sa.select(entries.c.unit_id, entries.c.ref).where(entries.c.id == entry_id)
    with store.engine.connect() as conn:
        row = conn.execute(q).first()
    if row is None:
        raise NotFound(f"no entry {entry_id}")
    return next(e for e in store.obs.entries(row.unit_id, ref=row.ref) if e.id == entry_id)
