"""Unit and patient events to the unit model the CLI uses, and a unit file to events.

The schedule, rota, risk and review are computed from the same :class:`~vascplan.surveillance.
unit.Unit` whether it was read from a unit file or built here from the store's events: this
module only replays the events into the unit file's shape and validates it with the unit
file's own model, so that every rule runs once, in one place.

No SQLAlchemy here: events come in as plain :class:`EventIn` values.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import Any

from vascplan.fileio import validate_data
from vascplan.surveillance.unit import UNIT_FORMAT, Unit


@dataclass(frozen=True)
class EventIn:
    """One event as the replay needs it (a stored event or one about to be stored)."""

    ref: str
    kind: str
    at: datetime
    data: dict[str, Any]
    id: int = 0
    by: str = ""


@dataclass
class WardState:
    """The unit as at one instant.

    Attributes
    ----------
    unit : Unit or None
        The validated unit (patients with a device); None when the store has no unit event.
    waiting : dict of str to dict
        Patients admitted with no device yet (ref -> admission data).
    history : dict of str to list of EventIn
        Each patient's events so far, in time order.
    """

    unit: Unit | None
    waiting: dict[str, dict[str, Any]] = field(default_factory=dict)
    history: dict[str, list[EventIn]] = field(default_factory=dict)


def _iso(moment: datetime) -> str:
    return moment.isoformat()


def replay(
    name: str, events: Iterable[EventIn], at: datetime | None = None, *, strict: bool = False
) -> WardState:
    """Replay a unit's events (time order) up to ``at`` into the unit file's model.

    Parameters
    ----------
    name : str
        The unit's name.
    events : iterable of EventIn
        The unit's events in time order.
    at : datetime, optional
        Leave out events after this aware moment; default every event.
    strict : bool
        Refuse an event that finds nothing to act on (a patient not on the unit, a device or
        distal cannula not in); a new event is checked so. Stored events are replayed
        leniently, such an event then only shows in the patient's history.

    Raises
    ------
    InputError
        The events make a unit the unit file's model refuses (named as ``store <unit>``).
    """
    settings: dict[str, Any] | None = None
    patients: dict[str, dict[str, Any]] = {}
    history: dict[str, list[EventIn]] = {}
    for ev in events:
        if at is not None and ev.at > at:
            break
        d = ev.data
        if ev.kind == "unit":
            settings = d
            continue
        history.setdefault(ev.ref, []).append(ev)
        p = patients.get(ev.ref)
        if ev.kind == "admit":
            patients[ev.ref] = {
                "ref": ev.ref,
                **{k: v for k, v in d.items() if v is not None},
                "baseline": dict(d.get("baseline") or {}),
                "events": [],
            }
            continue
        if p is None:
            if strict:
                _refuse(name, ev, f"{ev.ref} is not on the unit at that time")
            continue  # an event for a patient not admitted (or discharged): kept in history only
        needs = {
            "device-repositioned": "device",
            "device-removed": "device",
            "dpc-in": "device",
            "dpc-out": "dpc",
        }.get(ev.kind)
        if strict and needs is not None and (needs not in p or "removed" in p[needs]):
            thing = "device" if needs == "device" else "distal perfusion cannula"
            _refuse(name, ev, f"{ev.ref} has no {thing} in at that time")
        if ev.kind == "device-inserted":
            p["device"] = {**{k: v for k, v in d.items() if v is not None}, "inserted": _iso(ev.at)}
            p.pop("dpc", None)
        elif ev.kind == "device-removed" and "device" in p:
            p["device"]["removed"] = _iso(ev.at)
        elif ev.kind == "dpc-in":
            p["dpc"] = {"size_fr": d["size_fr"], "inserted": _iso(ev.at)}
        elif ev.kind == "dpc-out" and "dpc" in p:
            p["dpc"]["removed"] = _iso(ev.at)
        elif ev.kind == "monitoring-started":
            base = p["baseline"]
            for key in ("nirs", "doppler", "pulses"):
                if d.get(key):
                    base[key] = {**base.get(key, {}), **d[key]}
        elif ev.kind == "tier-set":
            p["events"].append({"at": _iso(ev.at), "tier": d["tier"], "note": d.get("reason", "")})
        elif ev.kind == "discharge":
            patients.pop(ev.ref)
    if settings is None:
        return WardState(None, history=history)
    with_device = [p for p in patients.values() if "device" in p]
    waiting = {r: p for r, p in patients.items() if "device" not in p}
    doc = unit_document(name, settings, with_device)
    unit = validate_data(f"store {name}", doc, Unit)
    return WardState(unit, waiting, history)


def _refuse(name: str, ev: EventIn, message: str) -> None:
    from vascplan.errors import InputError

    raise InputError(f"store {name}", "time", f"{message} ({ev.at.isoformat()})")


def unit_document(
    name: str, settings: dict[str, Any], patients: list[dict[str, Any]]
) -> dict[str, Any]:
    """A unit file's content (``vascplan-unit/1``) from unit settings and patient records."""
    doc: dict[str, Any] = {
        "format": UNIT_FORMAT,
        "unit": {
            "name": name,
            "timezone": settings["timezone"],
            **({"id": settings["id"]} if settings.get("id") else {}),
        },
        "shifts": settings["shifts"],
        "protocol": settings.get("protocol", "standard"),
        "staff": settings.get("staff", []),
        "patients": sorted(
            (
                {
                    k: v
                    for k, v in p.items()
                    if k not in ("events",) or v  # no empty event lists
                }
                for p in patients
            ),
            key=lambda p: p["bed"],
        ),
    }
    return doc


def unit_to_document(unit: Unit) -> dict[str, Any]:
    """A validated unit back to plain data for a unit file (times with their offsets)."""
    doc = unit.model_dump(mode="json", exclude_none=True)
    # A shift start is written HH:MM, as the unit file takes it.
    doc["shifts"] = [{"name": s.name, "start": s.start.strftime("%H:%M")} for s in unit.shifts]
    return doc


def events_from_unit(unit: Unit, now: datetime) -> list[EventIn]:
    """The events that rebuild ``unit``: settings, then per patient admit, device, cannula,
    tier events and removals, in time order (what ``vascplan unit import`` stores)."""
    firsts = [p.device.inserted for p in unit.patients]
    unit_at = min([now, *firsts]).astimezone(UTC)
    out = [
        EventIn(
            "",
            "unit",
            unit_at,
            {
                "id": unit.unit.key,
                "timezone": unit.unit.timezone,
                "shifts": [
                    {"name": s.name, "start": s.start.strftime("%H:%M")} for s in unit.shifts
                ],
                "protocol": unit.protocol,
                "staff": [a.model_dump(mode="json") for a in unit.staff],
            },
        )
    ]
    for p in unit.patients:
        dev = p.device
        admit = _present(
            {
                "bed": p.bed,
                "sex": p.sex,
                "height_cm": p.height_cm,
                "pad": p.pad,
                "diabetes": p.diabetes,
                "vessel_mm": p.vessel_mm,
                "baseline": p.baseline.model_dump(mode="json", exclude_defaults=True),
            }
        )
        mine = [
            EventIn(p.ref, "admit", dev.inserted, admit),
            EventIn(
                p.ref,
                "device-inserted",
                dev.inserted,
                _present(
                    {
                        "kind": dev.kind,
                        "side": dev.side,
                        "vessel": dev.vessel,
                        "size_fr": dev.size_fr,
                        "label": dev.label,
                        "outer_mm": dev.outer_mm,
                    }
                ),
            ),
        ]
        if p.dpc is not None:
            mine.append(EventIn(p.ref, "dpc-in", p.dpc.inserted, {"size_fr": p.dpc.size_fr}))
            if p.dpc.removed is not None:
                mine.append(EventIn(p.ref, "dpc-out", p.dpc.removed, {}))
        for ev in p.events:
            mine.append(EventIn(p.ref, "tier-set", ev.at, {"tier": ev.tier, "reason": ev.note}))
        if dev.removed is not None:
            mine.append(EventIn(p.ref, "device-removed", dev.removed, {}))
        out.extend(mine)
    # Stable by time: an admission and its device at one moment keep their order.
    order = {id(e): i for i, e in enumerate(out)}
    out.sort(key=lambda e: (e.at.astimezone(UTC), order[id(e)]))
    return out


def _present(data: dict[str, Any]) -> dict[str, Any]:
    """Leave out fields with no value (None, an empty baseline)."""
    return {k: v for k, v in data.items() if v is not None and v != {}}
