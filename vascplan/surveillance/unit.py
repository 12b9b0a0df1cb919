"""The unit file: a unit's patients on large-bore support, its shifts and its staff.

Field names are part of the interface (``format: vascplan-unit/1``). Times written
without a UTC offset are local to the unit's time zone; a local time that a clock
change makes ambiguous or non-existent is refused with the field named, never guessed.
"""

from __future__ import annotations

import os
import re
import unicodedata
from datetime import datetime, time, timedelta
from typing import Any, Literal
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError, available_timezones

from pydantic import BaseModel, ConfigDict, Field, ValidationInfo, field_validator, model_validator

from vascplan.errors import InputError
from vascplan.fileio import did_you_mean, load_model
from vascplan.plausibility import TimeText, check_insertion, check_review_time
from vascplan.textsafety import FreeText, Identifier

UNIT_FORMAT = "vascplan-unit/1"

DeviceKind = Literal["va-ecmo-arterial", "microaxial-pump", "balloon-pump", "large-bore-sheath"]
Side = Literal["L", "R"]
Sex = Literal["female", "male", "unspecified"]
Signal = Literal["present", "absent"]
PulseGrade = Literal["palpable", "doppler", "absent"]

ACCESS_VESSELS = ("CFA", "EIA", "SFA", "AXA", "SCA")
"""Vessels a large-bore device may sit in (common practice: femoral and axillary routes)."""

ARM_VESSELS = ("AXA", "SCA")
"""Access vessels of the arm: a device there can starve the arm, not the leg (common practice)."""

_PEDAL_SITE = re.compile(r"^[LR]-(DPA|PTA|PER|ATA|POP|RAD|ULN|BRA)$")
"""Baseline signal sites: the foot and leg arteries, and the wrist and arm arteries below an
axillary or subclavian device."""

HEIGHT_RANGE_CM = (100.0, 230.0)
"""Plausible adult height, as for case files (common practice)."""

MAP_RANGE_MMHG = (30.0, 150.0)
"""Plausible mean arterial pressure of a patient on support: a plausibility bound, not a
clinical limit; outside it the figure is almost surely a typing error (common practice)."""


class _Strict(BaseModel):
    # strict: "1" is not a bed number, "17" not a size, "yes" not true (issue 18); times
    # are parsed by their own validators (TimeText, the shift's HH:MM).
    model_config = ConfigDict(
        extra="forbid", frozen=True, str_strip_whitespace=True, strict=True, allow_inf_nan=False
    )


UNIT_ID_PATTERN = r"^[a-z0-9](?:[a-z0-9-]{0,62}[a-z0-9])?$"
"""A unit's stable id: lower-case letters, digits and inner hyphens, at most 64 characters."""


def unit_slug(name: str) -> str:
    """The id a unit file without ``id`` gets: its name in lower case, hyphenated.

    Letters lose their accents, anything other than a letter or a digit becomes one
    hyphen. Frozen: stores upgraded by migration 5 hold these ids for old records.

    >>> unit_slug("Cardiac critical care (demo)")
    'cardiac-critical-care-demo'
    >>> unit_slug("Réa Médicale 2")
    'rea-medicale-2'
    """
    folded = unicodedata.normalize("NFKD", name).encode("ascii", "ignore").decode("ascii")
    slug = re.sub(r"[^a-z0-9]+", "-", folded.lower()).strip("-")[:64].strip("-")
    return slug or "unit"


class UnitInfo(_Strict):
    name: Identifier = Field(min_length=1, max_length=200)
    timezone: str
    id: str | None = None
    """The unit's stable id, the key of its record in the store: renaming ``name`` keeps
    the history. A file without one gets :func:`unit_slug` of the name (and a notice)."""

    @field_validator("id")
    @classmethod
    def _id(cls, value: str | None) -> str | None:
        if value is not None and not re.fullmatch(UNIT_ID_PATTERN, value):
            raise ValueError(
                f"a unit id is lower-case letters, digits and inner hyphens, at most 64 "
                f"characters, e.g. {unit_slug(value)!r}"
            )
        return value

    @property
    def key(self) -> str:
        """The id the store knows the unit by: ``id``, or the slug of ``name``."""
        return self.id if self.id is not None else unit_slug(self.name)

    @field_validator("timezone")
    @classmethod
    def _zone(cls, value: str) -> str:
        try:
            ZoneInfo(value)
        except (ZoneInfoNotFoundError, ValueError):
            hint = did_you_mean(value, available_timezones())
            raise ValueError(
                f"unknown time zone {value!r}{hint}; use an IANA name such as Europe/London"
            ) from None
        return value

    @property
    def tz(self) -> ZoneInfo:
        return ZoneInfo(self.timezone)


class Shift(_Strict):
    name: str = Field(min_length=1, max_length=40, pattern=r"^[A-Za-z0-9_-]+$")
    start: time

    @field_validator("start", mode="before")
    @classmethod
    def _hhmm(cls, value: Any) -> Any:
        if isinstance(value, int):  # YAML 1.1 reads 07:30 unquoted as a base-60 integer
            value = f"{value // 60:02d}:{value % 60:02d}"
        if isinstance(value, str) and not re.fullmatch(r"\d{2}:\d{2}", value):
            raise ValueError('shift start must be HH:MM in local time, e.g. "07:30"')
        if isinstance(value, str):
            try:
                return time.fromisoformat(value)
            except ValueError:
                raise ValueError(f"{value!r} is not a time of day (00:00-23:59)") from None
        return value


class StaffAssignment(_Strict):
    nurse: Identifier = Field(min_length=1, max_length=60)
    beds: list[int] = Field(min_length=1)
    shifts: list[str] = Field(min_length=1)


class Device(_Strict):
    kind: DeviceKind
    side: Side
    vessel: str = "CFA"
    size_fr: float = Field(gt=0, le=30)
    label: Literal["outer", "inner"]
    outer_mm: float | None = Field(default=None, gt=0, le=12)
    inserted: TimeText
    removed: TimeText | None = None

    @property
    def limb(self) -> Literal["leg", "arm"]:
        """The limb downstream of the access: ``arm`` for AXA/SCA, else ``leg``."""
        return "arm" if self.vessel in ARM_VESSELS else "leg"

    @field_validator("vessel")
    @classmethod
    def _vessel(cls, value: str) -> str:
        if value not in ACCESS_VESSELS:
            raise ValueError(
                f"unknown access vessel {value!r}{did_you_mean(value, ACCESS_VESSELS)}; "
                f"one of {', '.join(ACCESS_VESSELS)}"
            )
        return value


class DistalCannula(_Strict):
    size_fr: float = Field(gt=0, le=12)
    inserted: TimeText
    removed: TimeText | None = None


class Baseline(_Strict):
    nirs: dict[Side, float] = Field(default_factory=dict)
    doppler: dict[str, Signal] = Field(default_factory=dict)
    pulses: dict[str, PulseGrade] = Field(default_factory=dict)

    @field_validator("nirs")
    @classmethod
    def _nirs(cls, value: dict[str, float]) -> dict[str, float]:
        for side, pct in value.items():
            if not 0 <= pct <= 100:
                raise ValueError(f"tissue oxygen saturation for {side} must be 0-100 %")
        return value

    @field_validator("doppler", "pulses")
    @classmethod
    def _sites(cls, value: dict[str, str]) -> dict[str, str]:
        for site in value:
            if not _PEDAL_SITE.match(site):
                raise ValueError(
                    f"unknown artery {site!r}; use a side and an artery id such as R-DPA, L-PTA "
                    "(DPA, PTA, PER, ATA, POP; RAD, ULN, BRA for an arm device)"
                )
        return value


class PatientEvent(_Strict):
    """A clinician's change from a moment on: the risk tier set by judgement.

    From ``at`` the patient's tier is ``tier`` whatever the rules give, until the next
    event; the check schedule re-plans from that moment.
    """

    at: TimeText
    tier: Literal["standard", "raised", "high"]
    note: FreeText = Field(default="", max_length=300)


class Patient(_Strict):
    ref: Identifier = Field(min_length=1, max_length=60)
    bed: int = Field(ge=1, le=999)
    sex: Sex = "unspecified"
    height_cm: float | None = None
    pad: bool = False
    diabetes: bool = False
    device: Device
    vessel_mm: float | None = Field(default=None, gt=0, le=15)
    map_mmhg: float | None = Field(default=None, ge=MAP_RANGE_MMHG[0], le=MAP_RANGE_MMHG[1])
    """Mean arterial pressure [mmHg]: drives the leg's flow estimate (default by device kind)."""
    dpc: DistalCannula | None = None
    baseline: Baseline = Field(default_factory=Baseline)
    events: list[PatientEvent] = Field(default_factory=list)
    monitoring_from: TimeText | None = Field(
        default=None,
        description="when this unit's limb checks start (admission, with its UTC offset); "
        "default the device's insertion. No check is due before it.",
    )

    @field_validator("monitoring_from")
    @classmethod
    def _monitoring_from(cls, value: datetime | None) -> datetime | None:
        if value is not None and (value.tzinfo is None or value.utcoffset() is None):
            raise ValueError(
                "give the time with its UTC offset, e.g. 2026-12-02T03:10+00:00 "
                "(when the patient's checks start on this unit)"
            )
        return value

    @field_validator("height_cm")
    @classmethod
    def _height(cls, value: float | None) -> float | None:
        lo, hi = HEIGHT_RANGE_CM
        if value is not None and not lo <= value <= hi:
            raise ValueError(f"height must be {lo:g}-{hi:g} cm")
        return value

    def dpc_in_at(self, moment: datetime) -> bool:
        """Whether the distal perfusion cannula is in at aware ``moment``.

        It is in from its insertion until its own removal or the device's, whichever comes
        first: the distal cannula is fed from the device's circuit and comes out with it
        (common practice). Compared in UTC (same-zone datetimes compare by wall time).
        """
        dpc = self.dpc
        if dpc is None:
            return False
        at = _utc(moment)
        ends = [_utc(t) for t in (dpc.removed, self.device.removed) if t is not None]
        return _utc(dpc.inserted) <= at and all(at < end for end in ends)


class Unit(_Strict):
    """A validated unit file; every datetime in it is time-zone aware."""

    format: Literal["vascplan-unit/1"]
    unit: UnitInfo
    shifts: list[Shift] = Field(min_length=1)
    protocol: str = "standard"
    staff: list[StaffAssignment] = Field(default_factory=list)
    patients: list[Patient] = Field(default_factory=list)

    @model_validator(mode="after")
    def _cross_checks(self, info: ValidationInfo) -> Unit:
        source = (info.context or {}).get("source", "<unit>")
        names = [s.name for s in self.shifts]
        for i, shift in enumerate(self.shifts):
            if names.index(shift.name) != i:
                raise InputError(source, f"shifts.{i}.name", f"shift {shift.name!r} is named twice")
            if [s.start for s in self.shifts].index(shift.start) != i:
                raise InputError(source, f"shifts.{i}.start", "two shifts start at the same time")
        beds = [p.bed for p in self.patients]
        refs = [p.ref for p in self.patients]
        for i, p in enumerate(self.patients):
            if beds.index(p.bed) != i:
                raise InputError(source, f"patients.{i}.bed", f"bed {p.bed} holds two patients")
            if refs.index(p.ref) != i:
                raise InputError(source, f"patients.{i}.ref", f"ref {p.ref!r} appears twice")
        for i, a in enumerate(self.staff):
            for j, s in enumerate(a.shifts):
                if s not in names:
                    raise InputError(
                        source,
                        f"staff.{i}.shifts.{j}",
                        f"unknown shift {s!r}{did_you_mean(s, names)}; "
                        f"shifts are {', '.join(names)}",
                    )
        holder: dict[tuple[int, str], str] = {}
        for i, a in enumerate(self.staff):
            for j, bed in enumerate(a.beds):
                for s in a.shifts:
                    other = holder.setdefault((bed, s), a.nurse)
                    if other != a.nurse:
                        raise InputError(
                            source,
                            f"staff.{i}.beds.{j}",
                            f"bed {bed} on the {s} shift is already {other}'s; "
                            "give each bed one nurse per shift",
                        )
        tz = self.unit.tz
        for i, p in enumerate(self.patients):
            base = f"patients.{i}"
            inserted = _localise(p.device.inserted, tz, source, f"{base}.device.inserted")
            assert inserted is not None  # a required field
            check_insertion(inserted, source, f"{base}.device.inserted")
            removed = _localise(p.device.removed, tz, source, f"{base}.device.removed")
            if removed is not None:
                check_insertion(removed, source, f"{base}.device.removed", what="a removal")
            if removed is not None and _utc(removed) <= _utc(inserted):
                raise InputError(
                    source, f"{base}.device.removed", "removal must come after insertion"
                )
            object.__setattr__(p.device, "inserted", inserted)
            object.__setattr__(p.device, "removed", removed)
            if p.dpc is not None:
                d_in = _localise(p.dpc.inserted, tz, source, f"{base}.dpc.inserted")
                assert d_in is not None  # a required field
                check_insertion(d_in, source, f"{base}.dpc.inserted")
                d_out = _localise(p.dpc.removed, tz, source, f"{base}.dpc.removed")
                if _utc(d_in) < _utc(inserted):
                    raise InputError(
                        source,
                        f"{base}.dpc.inserted",
                        "the distal cannula cannot precede the device",
                    )
                if d_out is not None and _utc(d_out) <= _utc(d_in):
                    raise InputError(
                        source, f"{base}.dpc.removed", "removal must come after insertion"
                    )
                object.__setattr__(p.dpc, "inserted", d_in)
                object.__setattr__(p.dpc, "removed", d_out)
            previous = p.device.inserted
            for k, ev in enumerate(p.events):
                field = f"{base}.events.{k}.at"
                at = _localise(ev.at, tz, source, field)
                assert at is not None
                check_insertion(at, source, field, what="an event")
                if _utc(at) < _utc(previous):
                    raise InputError(
                        source, field, "events must be in time order, at or after the insertion"
                    )
                object.__setattr__(ev, "at", at)
                previous = at
        return self

    def patient_at_bed(self, bed: int, source: str = "--bed") -> Patient:
        for p in self.patients:
            if p.bed == bed:
                return p
        beds = ", ".join(str(p.bed) for p in self.patients) or "none"
        raise InputError(source, "", f"no patient in bed {bed}; occupied beds: {beds}")

    def shift_named(self, name: str, source: str = "--shift") -> Shift:
        for s in self.shifts:
            if s.name == name:
                return s
        names = [s.name for s in self.shifts]
        raise InputError(
            source,
            "",
            f"unknown shift {name!r}{did_you_mean(name, names)}; shifts are {', '.join(names)}",
        )

    def nurse_for(self, bed: int, shift: str) -> str | None:
        """The nurse who has ``bed`` on ``shift``, or None when the file does not say."""
        for a in self.staff:
            if bed in a.beds and shift in a.shifts:
                return a.nurse
        return None


def _utc(value: datetime) -> datetime:
    """Compare aware times in UTC: same-zone datetimes compare by wall time in Python."""
    return value.astimezone(ZoneInfo("UTC"))


def _localise(value: datetime | None, tz: ZoneInfo, source: str, field: str) -> datetime | None:
    """Attach the unit's zone to a naive local time, refusing clock-change gaps and overlaps."""
    if value is None:
        return None
    if value.tzinfo is not None:
        return value.astimezone(tz)
    first = value.replace(tzinfo=tz, fold=0)
    second = value.replace(tzinfo=tz, fold=1)
    if first.utcoffset() != second.utcoffset():
        roundtrip = first.astimezone(ZoneInfo("UTC")).astimezone(tz).replace(tzinfo=None)
        if roundtrip != value:
            raise InputError(
                source,
                field,
                f"{value:%Y-%m-%d %H:%M} does not exist in {tz.key} (clocks go forward); "
                "give the time with its UTC offset",
            )
        raise InputError(
            source,
            field,
            f"{value:%Y-%m-%d %H:%M} happens twice in {tz.key} (clocks go back); "
            f"give the time with its UTC offset, e.g. {_offset(first)}",
        )
    return first


def _offset(value: datetime) -> str:
    """The UTC offset of an aware time as ISO 8601 writes it (``+01:00``, ``-04:00``)."""
    return value.isoformat()[-6:]


def parse_local_time(text: str, tz: ZoneInfo, source: str) -> datetime:
    """Parse an ISO 8601 option value; naive times are local to ``tz`` (checked as above).

    >>> from zoneinfo import ZoneInfo
    >>> parse_local_time("2026-12-01T07:30", ZoneInfo("Europe/London"), "--from").isoformat()
    '2026-12-01T07:30:00+00:00'
    """
    try:
        value = datetime.fromisoformat(text)
    except ValueError:
        raise InputError(
            source, "", f"{text!r} is not an ISO 8601 time such as 2026-12-01T07:30"
        ) from None
    out = _localise(value, tz, source, "")
    assert out is not None
    check_review_time(out, source)
    return out


def shift_window(unit: Unit, shift: Shift, day: datetime) -> tuple[datetime, datetime]:
    """Start and end (aware) of ``shift`` beginning on the local date of ``day``.

    A shift runs to the next shift's start in the unit's list order (wrapping to the
    next day); across a clock change its real length differs from its wall-clock length.
    """
    tz = unit.unit.tz
    starts = sorted(s.start for s in unit.shifts)
    idx = starts.index(shift.start)
    nxt = starts[(idx + 1) % len(starts)]
    start = datetime.combine(day.date(), shift.start).replace(tzinfo=tz)
    end_date = day.date() + timedelta(days=1) if nxt <= shift.start else day.date()
    end = datetime.combine(end_date, nxt).replace(tzinfo=tz)
    return start, end


def load_unit(path: str | os.PathLike[str]) -> Unit:
    """Read and validate a unit file (YAML or JSON).

    Raises
    ------
    InputError
        One line naming the file, the field and what is allowed.
    """
    return load_model(path, Unit)
