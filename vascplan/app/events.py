"""Unit and patient events: record one from a form, import a unit file, export one.

A new event is validated the way a unit file is: the unit's events are replayed with the
new one in its place and the result checked by the unit file's own model, so a removal
before the insertion or a bed taken twice is refused with the unit file's wording.
"""

from __future__ import annotations

import os
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Any

from vascplan.app.ward import FUTURE_SLACK, Forbidden, FormErrors, NotFound, Recorded
from vascplan.errors import InputError
from vascplan.observations.findings import check_time
from vascplan.safety import CAUTION
from vascplan.surveillance.unit import Unit, load_unit
from vascplan.ward.model import EventIn, events_from_unit, replay
from vascplan.ward.store import WardStore


@dataclass(frozen=True)
class EventField:
    name: str
    label: str
    kind: str  # text | number | choice | flag
    choices: tuple[str, ...] = ()
    required: bool = True


_DEVICE_KINDS = ("va-ecmo-arterial", "microaxial-pump", "balloon-pump", "large-bore-sheath")
_NOTE = EventField("note", "Note", "text", required=False)

EVENT_FORMS: dict[str, tuple[str, tuple[EventField, ...]]] = {
    "admit": (
        "Admit a patient",
        (
            EventField("ref", "Patient ref (pseudonymous)", "text"),
            EventField("bed", "Bed", "number"),
            EventField("sex", "Sex", "choice", ("unspecified", "female", "male")),
            EventField("height_cm", "Height [cm]", "number", required=False),
            EventField("pad", "Known peripheral arterial disease", "flag", required=False),
            EventField("diabetes", "Diabetes", "flag", required=False),
            EventField("vessel_mm", "Access vessel diameter [mm]", "number", required=False),
        ),
    ),
    "device-inserted": (
        "Device inserted",
        (
            EventField("kind", "Device", "choice", _DEVICE_KINDS),
            EventField("side", "Side", "choice", ("L", "R")),
            EventField("vessel", "Access vessel", "choice", ("CFA", "EIA", "SFA", "AXA", "SCA")),
            EventField("size_fr", "Size [Fr]", "number"),
            EventField("label", "Size is the", "choice", ("outer", "inner")),
            EventField("outer_mm", "Outer diameter [mm], if known", "number", required=False),
        ),
    ),
    "device-repositioned": ("Device repositioned", (EventField("note", "What changed", "text"),)),
    "device-removed": ("Device removed", (_NOTE,)),
    "dpc-in": (
        "Distal perfusion cannula in",
        (EventField("size_fr", "Cannula size [Fr]", "number"),),
    ),
    "dpc-out": ("Distal perfusion cannula out", (_NOTE,)),
    "monitoring-started": (
        "Calf NIRS monitoring started (baseline)",
        (
            EventField("nirs_L", "Baseline NIRS left [%]", "number", required=False),
            EventField("nirs_R", "Baseline NIRS right [%]", "number", required=False),
        ),
    ),
    "tier-set": (
        "Set the risk tier (physician)",
        (
            EventField("tier", "Tier", "choice", ("standard", "raised", "high")),
            EventField("reason", "Reason", "text"),
        ),
    ),
    "discharge": ("Discharge from the unit", (_NOTE,)),
}
"""Each event kind's title and form fields (the web form and its validation share them)."""

PHYSICIAN_ONLY = ("tier-set",)


def _parse(spec: tuple[EventField, ...], values: dict[str, str]) -> dict[str, Any]:
    errors: dict[str, str] = {}
    data: dict[str, Any] = {}
    for f in spec:
        raw = (values.get(f.name) or "").strip()
        if f.kind == "flag":
            data[f.name] = raw.lower() in ("on", "yes", "true", "1")
            continue
        if not raw:
            if f.required:
                errors[f.name] = f"{f.label} is required"
            continue
        if len(raw) > 300:
            errors[f.name] = f"{f.label}: at most 300 characters"
        elif f.kind == "number":
            try:
                number = float(raw)
            except ValueError:
                errors[f.name] = f"{f.label} must be a number, got {raw!r}"
                continue
            if number != number or number in (float("inf"), float("-inf")):
                errors[f.name] = f"{f.label} must be a number, got {raw!r}"
                continue
            data[f.name] = int(number) if f.name == "bed" and number == int(number) else number
        elif f.kind == "choice" and raw not in f.choices:
            errors[f.name] = f"{f.label}: {raw!r} is not allowed; one of {', '.join(f.choices)}"
        else:
            data[f.name] = raw
    if errors:
        raise FormErrors(errors)
    return data


def _data_for(kind: str, data: dict[str, Any]) -> tuple[str | None, dict[str, Any]]:
    """The stored event data (and the new ref of an admission)."""
    if kind == "admit":
        ref = data.pop("ref")
        return ref, data
    if kind == "monitoring-started":
        nirs = {s: data[f"nirs_{s}"] for s in ("L", "R") if f"nirs_{s}" in data}
        if not nirs:
            raise FormErrors({"nirs_L": "give the baseline NIRS of at least one leg"})
        return None, {"nirs": nirs}
    return None, data


def record_event(
    store: WardStore,
    name: str,
    ref: str,
    kind: str,
    values: dict[str, str],
    time_text: str,
    *,
    author: str,
    role: str,
    now: datetime,
    token: str = "",
) -> Recorded:
    """Validate and store one unit or patient event (``ref`` empty for an admission)."""
    if kind not in EVENT_FORMS or kind == "unit":
        raise NotFound(f"no event {kind!r}; events are {', '.join(EVENT_FORMS)}")
    if kind in PHYSICIAN_ONLY and role != "physician":
        raise Forbidden(f"only a physician may record {EVENT_FORMS[kind][0].lower()}")
    if token and (done := store.form_result(token)) is not None:
        return Recorded(done, again=True)
    stored = [EventIn(e.ref, e.kind, e.at, e.data, e.id, e.by) for e in store.events(name)]
    state = replay(name, stored, now)
    if state.unit is None:
        raise NotFound(f"no unit {name!r}")
    tz = state.unit.unit.tz
    errors: dict[str, str] = {}
    try:
        at = check_time(time_text, tz, "time")
        if at.astimezone(UTC) > now.astimezone(UTC) + FUTURE_SLACK:
            errors["time"] = f"{time_text} is in the future; give when it happened"
    except InputError as exc:
        errors["time"] = exc.message
        at = now
    try:
        new_ref, data = _data_for(kind, _parse(EVENT_FORMS[kind][1], values))
    except FormErrors as exc:
        errors.update(exc.errors)
        new_ref, data = None, {}
    if errors:
        raise FormErrors(errors)
    present = {p.ref: p.bed for p in state.unit.patients}
    present.update({r: int(d.get("bed", 0)) for r, d in state.waiting.items()})
    if kind == "admit":
        assert new_ref is not None
        if new_ref in present:
            raise FormErrors({"ref": f"{new_ref} is already on the unit (bed {present[new_ref]})"})
        if data.get("bed") in present.values():
            raise FormErrors({"bed": f"bed {data['bed']} is taken"})
        ref = new_ref
    elif ref not in present:
        raise NotFound(f"no patient {ref!r} on {name} now")
    new = EventIn(ref, kind, at.astimezone(UTC), data, 0, author)
    trial = sorted([*stored, new], key=lambda e: (e.at.astimezone(UTC), e.id or 1 << 60))
    try:
        replay(name, trial, None, strict=True)
    except InputError as exc:
        field = exc.field.rsplit(".", 1)[-1] if exc.field else "form"
        raise FormErrors({_form_field(field): exc.message}) from None
    what = f"{kind} {ref} at {at.astimezone(tz).isoformat()}" + (f": {data}" if data else "")
    # Claimed before the write, so that of two sends of one form exactly one records.
    if token and not store.claim_form(token, "event", what, now):
        return Recorded(store.form_result(token) or what, again=True)
    store.add_event(name, ref, kind, at, data, by=author, now=now)
    return Recorded(what)


def _form_field(model_field: str) -> str:
    return {"inserted": "time", "removed": "time", "at": "time"}.get(model_field, model_field)


def import_unit_file(
    store: WardStore, path: str | os.PathLike[str], *, author: str, now: datetime
) -> tuple[Unit, int]:
    """Seed the store from a unit file: its settings and each patient's events.

    Refused when the store already holds a unit of that name (an import never merges).
    """
    unit = load_unit(path)
    if unit.unit.name in store.units():
        raise InputError(
            str(path),
            "unit.name",
            f"the store already holds the unit {unit.unit.name!r}; "
            "record changes as events instead of importing again",
        )
    events = events_from_unit(unit, now)
    with store.writing() as conn:
        for e in events:
            store.add_event(
                unit.unit.name, e.ref, e.kind, e.at, e.data, by=author, now=now, conn=conn
            )
    return unit, len(events)


def export_unit_text(store: WardStore, name: str, at: datetime | None = None) -> str:
    """The unit as a unit file (YAML), from every event (or those up to ``at``)."""
    import yaml

    from vascplan.ward.model import unit_to_document

    stored = [EventIn(e.ref, e.kind, e.at, e.data, e.id, e.by) for e in store.events(name)]
    state = replay(name, stored, at)
    if state.unit is None:
        raise NotFound(f"no unit {name!r} in {store.shown}")
    doc = unit_to_document(state.unit)
    head = (
        f"# Unit {name!r} exported from the store {store.shown}; edit the store through\n"
        "# events (vascplan serve), not this file.\n"
        f"# Caution: {CAUTION}\n"
    )
    return head + yaml.safe_dump(doc, sort_keys=False, allow_unicode=True)
