"""The unit file: validation, time zones and clock changes."""

from __future__ import annotations

from pathlib import Path

import pytest

from vascplan.errors import InputError
from vascplan.surveillance.unit import load_unit

MINIMAL = Path(__file__).parent / "unit_minimal.yaml"


def _variant(tmp_path, old: str, new: str) -> Path:
    p = tmp_path / "unit.yaml"
    p.write_text(MINIMAL.read_text().replace(old, new, 1))
    return p


def _message(path: Path) -> str:
    with pytest.raises(InputError) as exc:
        load_unit(path)
    return str(exc.value).replace(str(path), "unit.yaml")


def test_minimal_unit_is_localised():
    unit = load_unit(MINIMAL)
    inserted = unit.patients[0].device.inserted
    assert inserted.isoformat() == "2026-12-01T14:20:00+00:00"
    assert unit.nurse_for(1, "day") == "RN-A"
    assert unit.nurse_for(1, "night") is None


def test_summer_time_offset(tmp_path):
    # Europe/London is on BST (UTC+01:00) in July (IANA tz database).
    unit = load_unit(_variant(tmp_path, "2026-12-01T14:20", "2026-07-01T14:20"))
    assert unit.patients[0].device.inserted.utcoffset().total_seconds() == 3600


def test_ambiguous_local_time(tmp_path):
    # 2026-10-25 01:30 occurs twice in Europe/London (clocks go back at 02:00 BST).
    msg = _message(_variant(tmp_path, "2026-12-01T14:20", "2026-10-25T01:30"))
    assert msg == (
        "unit.yaml: patients.0.device.inserted: 2026-10-25 01:30 happens twice in "
        "Europe/London (clocks go back); give the time with its UTC offset, e.g. +01:00"
    )


def test_nonexistent_local_time(tmp_path):
    # 2026-03-29 01:30 does not exist in Europe/London (clocks go forward at 01:00 GMT).
    msg = _message(_variant(tmp_path, "2026-12-01T14:20", "2026-03-29T01:30"))
    assert msg.startswith("unit.yaml: patients.0.device.inserted: 2026-03-29 01:30 does not exist")


def test_offset_given_resolves_ambiguity(tmp_path):
    unit = load_unit(_variant(tmp_path, "2026-12-01T14:20", "2026-10-25T01:30+00:00"))
    assert unit.patients[0].device.inserted.utcoffset().total_seconds() == 0


def test_unknown_timezone(tmp_path):
    msg = _message(_variant(tmp_path, "Europe/London", "Europe/Londn"))
    assert msg.startswith(
        "unit.yaml: unit.timezone: unknown time zone 'Europe/Londn' (did you mean 'Europe/London'?)"
    )


def test_unknown_field(tmp_path):
    msg = _message(_variant(tmp_path, "pad: false", "padd: false"))
    assert msg == "unit.yaml: patients.0.padd: unknown field"


def test_unknown_shift_in_staff(tmp_path):
    msg = _message(_variant(tmp_path, "shifts: [day]", "shifts: [dya]"))
    assert msg == (
        "unit.yaml: staff.0.shifts.0: unknown shift 'dya' (did you mean 'day'?); "
        "shifts are day, night"
    )


def test_bad_device_kind(tmp_path):
    msg = _message(_variant(tmp_path, "va-ecmo-arterial", "ecmo"))
    assert msg.startswith("unit.yaml: patients.0.device.kind: Input should be 'va-ecmo-arterial'")


def test_events_localised_and_ordered(tmp_path):
    events = (
        "    events:\n"
        "      - {at: 2026-12-01T18:00, tier: high, note: cold foot}\n"
        "      - {at: 2026-12-01T17:00, tier: raised}\n"
    )
    p = tmp_path / "unit.yaml"
    p.write_text(MINIMAL.read_text() + events)
    assert _message(p) == (
        "unit.yaml: patients.0.events.1.at: events must be in time order, at or after the insertion"
    )
    p.write_text(MINIMAL.read_text() + events.replace("17:00, tier: raised", "19:00, tier: raised"))
    unit = load_unit(p)
    assert unit.patients[0].events[1].at.isoformat() == "2026-12-01T19:00:00+00:00"
    severe = "    events:\n      - {at: 2026-12-01T18:00, tier: severe}\n"
    p.write_text(MINIMAL.read_text() + severe)
    assert _message(p).startswith("unit.yaml: patients.0.events.0.tier: Input should be 'standard'")


def test_one_nurse_per_bed_and_shift(tmp_path):
    msg = _message(
        _variant(
            tmp_path,
            "  - {nurse: RN-A, beds: [1, 2], shifts: [day]}",
            "  - {nurse: RN-A, beds: [1, 2], shifts: [day]}\n"
            "  - {nurse: RN-B, beds: [3, 2], shifts: [night, day]}",
        )
    )
    assert msg == (
        "unit.yaml: staff.1.beds.1: bed 2 on the day shift is already RN-A's; "
        "give each bed one nurse per shift"
    )
