"""Acceptance tests of issue 5 (limb surveillance): black-box, from the issue text and README.

Every unit here is invented for these tests (pseudonymous refs DEMO-4x/5x, other time zones,
other sides and devices than the bundled demo). Clock-change dates are those of the IANA time
zone database (tzdata): America/New_York 2026-03-08 02:00 -> 03:00 and 2026-11-01 02:00 ->
01:00; Australia/Sydney 2026-04-05 03:00 -> 02:00 and 2026-10-04 02:00 -> 03:00.
"""

from __future__ import annotations

import csv
import io
import json
from datetime import datetime, timedelta
from pathlib import Path

import icalendar
import pytest
from click.testing import CliRunner

from vascplan.cli import cli
from vascplan.safety import CAUTION

NY_UNIT = """\
format: vascplan-unit/1
unit: {name: Test step-down unit, timezone: America/New_York}
shifts:
  - {name: early, start: "07:00"}
  - {name: late, start: "19:00"}
protocol: standard
staff:
  - {nurse: RN-X, beds: [21, 22], shifts: [early, late]}
  - {nurse: RN-Y, beds: [23], shifts: [early]}
patients:
  - ref: DEMO-41
    bed: 21
    sex: female
    pad: false
    device:
      kind: large-bore-sheath
      side: L
      vessel: CFA
      size_fr: 14
      label: inner
      outer_mm: 6.0
      inserted: %(ins)s
      removed: null
    vessel_mm: 5.0
  - ref: DEMO-42
    bed: 22
    sex: male
    pad: false
    device:
      kind: microaxial-pump
      side: R
      vessel: CFA
      size_fr: 14
      label: inner
      outer_mm: 5.7
      inserted: %(ins)s
    vessel_mm: 9.5
  - ref: DEMO-43
    bed: 23
    sex: male
    pad: true
    device:
      kind: balloon-pump
      side: R
      vessel: CFA
      size_fr: 8
      label: outer
      inserted: %(ins)s
"""


def _run(*args: object):
    return CliRunner().invoke(cli, [str(a) for a in args])


def _write(tmp_path: Path, text: str, name: str = "unit.yaml") -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


def _one_error_line(res, *needles: str) -> None:
    """Bad input: exit 2, one line, no traceback, naming what the issue asks for."""
    assert res.exit_code == 2, res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1, res.output
    assert "Traceback" not in res.output
    for needle in needles:
        assert needle in lines[0], lines[0]


def _single_bed_unit(tz: str, inserted: str, removed: str = "null", extra: str = "") -> str:
    return f"""\
format: vascplan-unit/1
unit: {{name: Single bed, timezone: {tz}}}
shifts:
  - {{name: day, start: "08:00"}}
  - {{name: night, start: "20:00"}}
protocol: standard
staff:
  - {{nurse: RN-Z, beds: [7], shifts: [day, night]}}
patients:
  - ref: DEMO-51
    bed: 7
    sex: male
    device:
      kind: microaxial-pump
      side: L
      vessel: CFA
      size_fr: 14
      label: inner
      outer_mm: 5.7
      inserted: {inserted}
      removed: {removed}
    vessel_mm: 9.0
{extra}"""


def _rota_json(unit: Path, start: str, hours: int, *extra: str) -> dict:
    res = _run("rota", unit, "--from", start, "--hours", hours, "--format", "json", *extra)
    assert res.exit_code == 0, res.output
    return json.loads(res.stdout)


def _utc(text: str) -> datetime:
    t = datetime.fromisoformat(text)
    assert t.utcoffset() is not None, f"{text} carries no UTC offset"
    return t


# --- risk ------------------------------------------------------------------------------------


def test_risk_json_contract_and_cannula_advice(tmp_path):
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-05-04T10:00"})
    res = _run("risk", unit, "--at", "2026-05-04T12:00", "--format", "json")
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)
    assert doc["caution"] == CAUTION
    pats = {p["ref"]: p for p in doc["patients"]}
    assert set(pats) == {"DEMO-41", "DEMO-42", "DEMO-43"}
    for p in pats.values():
        assert p["tier"] in ("standard", "raised", "high")
        assert isinstance(p["dpc_advised"], bool)
        assert isinstance(p["reasons"], list)
        assert isinstance(p["bed"], int)
    # SAR = device outer diameter / access vessel diameter (Hayashida et al. 2011 definition).
    assert pats["DEMO-41"]["sar"] == pytest.approx(6.0 / 5.0, abs=0.01)
    assert pats["DEMO-42"]["sar"] == pytest.approx(5.7 / 9.5, abs=0.01)
    # README: a large-bore sheath with SAR >= 1.05 -> DPC advised; balloon pump -> not advised.
    assert pats["DEMO-41"]["dpc_advised"] is True
    assert pats["DEMO-43"]["dpc_advised"] is False
    # A small woman's vessel with an oversized sheath is not standard risk (SAR, female, small
    # vessel: published risk factors, README); known PAD raises the balloon-pump patient.
    assert pats["DEMO-41"]["tier"] != "standard"
    assert pats["DEMO-43"]["tier"] != "standard"
    assert pats["DEMO-41"]["reasons"]
    # DEMO-43 has no measured vessel: a reference diameter is used and flagged.
    assert pats["DEMO-43"]["vessel_measured"] is False
    assert any("DEMO-43" in a for a in doc["assumptions"])


def test_risk_french_outer_label(tmp_path):
    # 1 Fr = 1/3 mm (the French gauge: outer diameter in mm x 3); 18 Fr outer = 6.0 mm in a
    # 6.0 mm vessel is SAR 1.00.
    text = _single_bed_unit("Australia/Sydney", "2026-06-01T09:00")
    text = text.replace("kind: microaxial-pump", "kind: va-ecmo-arterial")
    text = text.replace("size_fr: 14", "size_fr: 18").replace("label: inner", "label: outer")
    text = text.replace("      outer_mm: 5.7\n", "").replace("vessel_mm: 9.0", "vessel_mm: 6.0")
    unit = _write(tmp_path, text)
    res = _run("risk", unit, "--at", "2026-06-01T10:00", "--format", "json")
    assert res.exit_code == 0, res.output
    (p,) = json.loads(res.stdout)["patients"]
    assert p["sar"] == pytest.approx(1.0, abs=0.01)
    # README: femoral VA-ECMO without a DPC -> advised (prophylactic).
    assert p["dpc_advised"] is True


def test_risk_dpc_not_advised_when_in_place_or_removed(tmp_path):
    text = _single_bed_unit("Australia/Sydney", "2026-06-01T09:00")
    text = text.replace("kind: microaxial-pump", "kind: va-ecmo-arterial")
    with_dpc = text + "    dpc: {size_fr: 7, inserted: 2026-06-01T09:40}\n"
    res = _run(
        "risk", _write(tmp_path, with_dpc, "a.yaml"), "--at", "2026-06-01T10:00", "--format", "json"
    )
    assert res.exit_code == 0, res.output
    assert json.loads(res.stdout)["patients"][0]["dpc_advised"] is False
    removed = _single_bed_unit("Australia/Sydney", "2026-06-01T09:00", "2026-06-01T11:00")
    removed = removed.replace("kind: microaxial-pump", "kind: va-ecmo-arterial")
    res = _run(
        "risk", _write(tmp_path, removed, "b.yaml"), "--at", "2026-06-01T12:00", "--format", "json"
    )
    assert res.exit_code == 0, res.output
    assert json.loads(res.stdout)["patients"][0]["dpc_advised"] is False


def test_risk_table_carries_caution(tmp_path):
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-05-04T10:00"})
    res = _run("risk", unit, "--at", "2026-05-04T12:00")
    assert res.exit_code == 0, res.output
    assert CAUTION in " ".join(res.output.split())
    assert "DEMO-41" in res.output


# --- schedule across clock changes --------------------------------------------------------------


@pytest.mark.parametrize(
    ("tz", "inserted", "start", "change_utc"),
    [
        # America/New_York spring forward: 2026-03-08 07:00 UTC (02:00 EST -> 03:00 EDT).
        ("America/New_York", "2026-03-07T12:00", "2026-03-07T20:00", "2026-03-08T07:00+00:00"),
        # America/New_York fall back: 2026-11-01 06:00 UTC (02:00 EDT -> 01:00 EST).
        ("America/New_York", "2026-10-31T12:00", "2026-10-31T20:00", "2026-11-01T06:00+00:00"),
        # Australia/Sydney back: 2026-04-04 16:00 UTC (03:00 AEDT -> 02:00 AEST).
        ("Australia/Sydney", "2026-04-04T12:00", "2026-04-04T20:00", "2026-04-04T16:00+00:00"),
        # Australia/Sydney forward: 2026-10-03 16:00 UTC (02:00 AEST -> 03:00 AEDT).
        ("Australia/Sydney", "2026-10-03T12:00", "2026-10-03T20:00", "2026-10-03T16:00+00:00"),
    ],
)
def test_hourly_checks_exact_in_utc_across_clock_change(tmp_path, tz, inserted, start, change_utc):
    unit = _write(tmp_path, _single_bed_unit(tz, inserted))
    doc = _rota_json(unit, start, 12)
    dues = [_utc(c["due"]) for c in doc["checks"]]
    assert dues == sorted(dues)
    assert len(set(dues)) == len(dues), "a check doubled"
    # Hours after insertion the patient is in maintenance: hourly, 60 real minutes apart.
    assert all(c["phase"] == "maintenance" for c in doc["checks"])
    gaps = {(b - a) for a, b in zip(dues, dues[1:], strict=False)}
    assert gaps == {timedelta(minutes=60)}, gaps
    # 12 real hours from --from: 12 hourly checks (none lost, none doubled).
    assert len(dues) == 12
    change = datetime.fromisoformat(change_utc)
    assert dues[0] < change < dues[-1]
    # Every time prints in local time with its offset: offsets differ either side of the change.
    offsets = {_utc(c["due"]).utcoffset() for c in doc["checks"]}
    assert len(offsets) == 2
    for c in doc["checks"]:
        assert c["time"] == c["due"]  # one bed, nothing to stagger


def test_fall_back_local_hour_appears_twice(tmp_path):
    unit = _write(tmp_path, _single_bed_unit("America/New_York", "2026-10-31T12:00"))
    doc = _rota_json(unit, "2026-11-01T00:00-04:00", 4)
    local = [c["due"][11:16] for c in doc["checks"]]
    # 00:00 EDT, 01:00 EDT, 01:00 EST, 02:00 EST (tzdata: 2026-11-01 02:00 EDT -> 01:00 EST).
    assert local == ["00:00", "01:00", "01:00", "02:00"]
    assert doc["checks"][1]["due"].endswith("-04:00")
    assert doc["checks"][2]["due"].endswith("-05:00")


def test_spring_forward_skips_local_two_oclock(tmp_path):
    unit = _write(tmp_path, _single_bed_unit("America/New_York", "2026-03-07T12:00"))
    doc = _rota_json(unit, "2026-03-08T00:00", 4)
    local = [c["due"][11:16] for c in doc["checks"]]
    assert local == ["00:00", "01:00", "03:00", "04:00"]


def test_phases_after_insertion_and_removal(tmp_path):
    # Standard protocol (README): 15 min for 1 h, 30 min for 2 h, hourly; after removal
    # 15 min x 4, 30 min x 4, 60 min x 4, then no more checks.
    unit = _write(
        tmp_path, _single_bed_unit("Europe/Berlin", "2026-07-01T09:00", "2026-07-01T15:00")
    )
    doc = _rota_json(unit, "2026-07-01T09:00", 20)
    by_phase: dict[str, list[datetime]] = {}
    for c in doc["checks"]:
        by_phase.setdefault(c["phase"], []).append(_utc(c["due"]))
    first = by_phase["post-insertion"]
    assert all(b - a == timedelta(minutes=15) for a, b in zip(first, first[1:], strict=False))
    assert first[-1] - first[0] <= timedelta(minutes=60)
    settle = by_phase["settling"]
    assert all(b - a == timedelta(minutes=30) for a, b in zip(settle, settle[1:], strict=False))
    for name, every in (("post-removal-15", 15), ("post-removal-30", 30), ("post-removal-60", 60)):
        times = by_phase[name]
        assert len(times) == 4, (name, times)
        step = timedelta(minutes=every)
        assert all(b - a == step for a, b in zip(times, times[1:], strict=False))
    removal = datetime.fromisoformat("2026-07-01T15:00+02:00")
    after = [c for c in doc["checks"] if _utc(c["due"]) > removal]
    assert {c["phase"] for c in after} <= {"post-removal-15", "post-removal-30", "post-removal-60"}
    assert len(after) == 12
    # No check of an insertion phase after the device is out.
    assert all(t <= removal for t in by_phase.get("maintenance", []))


def test_tier_event_replans_from_its_moment(tmp_path):
    extra = "    events:\n      - {at: 2026-07-02T12:00, tier: high, note: test}\n"
    unit = _write(tmp_path, _single_bed_unit("Europe/Berlin", "2026-07-01T09:00", extra=extra))
    doc = _rota_json(unit, "2026-07-02T09:00", 6)
    event = datetime.fromisoformat("2026-07-02T12:00+02:00")
    before = [_utc(c["due"]) for c in doc["checks"] if _utc(c["due"]) <= event]
    after = [_utc(c["due"]) for c in doc["checks"] if _utc(c["due"]) >= event]
    assert all(b - a == timedelta(minutes=60) for a, b in zip(before, before[1:], strict=False))
    # standard.yaml: tier high tightens maintenance to 30 min.
    assert all(b - a == timedelta(minutes=30) for a, b in zip(after, after[1:], strict=False))
    assert len(after) >= 6


# --- rota: stagger, nurses, handovers ---------------------------------------------------------


def test_collisions_staggered_within_tolerance(tmp_path):
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-05-04T10:00"})
    doc = _rota_json(unit, "2026-05-04T10:00", 6)
    assert {"unit", "from", "to", "checks", "unmet"} <= set(doc)
    assert doc["caution"] == CAUTION
    x = [c for c in doc["checks"] if c["nurse"] == "RN-X"]
    assert {c["bed"] for c in x} == {21, 22}
    # Both beds' devices went in at once: their checks fall due together for RN-X.
    dues = [c["due"] for c in x]
    assert len(dues) > len(set(dues))
    unmet_keys = {(u.get("bed"), u.get("due")) for u in doc["unmet"]}
    times = sorted(_utc(c["time"]) for c in x)
    # One nurse's checks are at least check_duration_min (5, standard.yaml) apart.
    assert all(b - a >= timedelta(minutes=5) for a, b in zip(times, times[1:], strict=False))
    staggered = 0
    for c in x:
        lag = _utc(c["time"]) - _utc(c["due"])
        assert lag >= timedelta(0)
        if lag:
            staggered += 1
        if lag > timedelta(minutes=c["tolerance_min"]):
            assert (c["bed"], c["due"]) in unmet_keys
            assert c["within_window"] is False
    assert staggered > 0
    # Tighter windows for frequent checks (standard.yaml tolerance bands 15->5, 30->10, 60->15).
    tol = {c["interval_min"]: c["tolerance_min"] for c in x}
    assert tol.get(15) == 5 and tol.get(30) == 10 and tol.get(60) == 15


def test_nurse_filter_worklist_in_time_order(tmp_path):
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-05-04T10:00"})
    doc = _rota_json(unit, "2026-05-04T10:00", 12, "--nurse", "RN-Y")
    assert doc["checks"]
    assert {c["nurse"] for c in doc["checks"]} == {"RN-Y"}
    times = [_utc(c["time"]) for c in doc["checks"]]
    assert times == sorted(times)


def test_unknown_nurse_is_one_line(tmp_path):
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-05-04T10:00"})
    res = _run("rota", unit, "--from", "2026-05-04T10:00", "--hours", "2", "--nurse", "RN-Q")
    _one_error_line(res, "RN-Q")


def test_unstaffed_bed_and_handover(tmp_path):
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-05-04T10:00"})
    doc = _rota_json(unit, "2026-05-04T17:00", 4)
    # Bed 23 has nobody on the late shift.
    assert any(u["bed"] == 23 and "late" in u["shifts"] for u in doc["unstaffed"])
    late23 = [c for c in doc["checks"] if c["bed"] == 23 and c["shift"] == "late"]
    assert late23 and all(c["nurse"] == "unassigned" for c in late23)
    # A handover at the 19:00 shift change (EDT, -04:00).
    (hand,) = [h for h in doc["handovers"] if h["shift"] == "late"]
    assert _utc(hand["at"]) == datetime.fromisoformat("2026-05-04T19:00-04:00")
    soon = hand["due_soon"]
    assert soon
    for item in soon:
        due = _utc(item["due"]) if isinstance(item, dict) else None
        if due is not None:
            assert _utc(hand["at"]) <= due < _utc(hand["at"]) + timedelta(minutes=60)


# --- outputs ----------------------------------------------------------------------------------


def test_csv_header_and_rows(tmp_path):
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-05-04T10:00"})
    out = tmp_path / "rota.csv"
    res = _run(
        "rota", unit, "--from", "2026-05-04T10:00", "--hours", "3", "--format", "csv", "-o", out
    )
    assert res.exit_code == 0, res.output
    text = out.read_text(encoding="utf-8")
    first = text.splitlines()[0]
    assert first == (
        "time,due,bed,ref,nurse,phase,items,shift,tier,interval_min,tolerance_min,"
        "within_window,caution"
    )
    rows = list(csv.DictReader(io.StringIO(text)))
    doc = _rota_json(unit, "2026-05-04T10:00", 3)
    assert len(rows) == len(doc["checks"])
    assert all(r["caution"] == CAUTION for r in rows)
    assert [r["time"] for r in rows] == [c["time"] for c in doc["checks"]]
    assert rows[0]["items"].split(";") == doc["checks"][0]["items"]
    assert not list(tmp_path.glob("*.tmp*"))


def test_ics_parses_back_with_same_events(tmp_path):
    unit = _write(tmp_path, _single_bed_unit("America/New_York", "2026-10-31T12:00"))
    out = tmp_path / "rota.ics"
    res = _run(
        "rota", unit, "--from", "2026-10-31T22:00", "--hours", "6", "--format", "ics", "-o", out
    )
    assert res.exit_code == 0, res.output
    cal = icalendar.Calendar.from_ical(out.read_bytes())
    events = [e for e in cal.walk("VEVENT")]
    doc = _rota_json(unit, "2026-10-31T22:00", 6)
    assert len(events) == len(doc["checks"]) == 6  # across the fall-back night: 6 real hours
    starts = sorted(e.decoded("DTSTART") for e in events)
    assert starts == sorted(_utc(c["time"]) for c in doc["checks"])
    for ev in events:
        assert ev.walk("VALARM"), "each check carries a reminder"
        assert CAUTION in " ".join(str(ev.get("DESCRIPTION")).split())
        assert ev.get("UID")
    assert len({str(e.get("UID")) for e in events}) == len(events)


def test_table_carries_caution(tmp_path):
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-05-04T10:00"})
    res = _run("rota", unit, "--from", "2026-05-04T10:00", "--hours", "2")
    assert res.exit_code == 0, res.output
    assert CAUTION in " ".join(res.output.split())
    assert "RN-X" in res.output


# --- bad input --------------------------------------------------------------------------------


def test_nonexistent_local_time_in_unit_file(tmp_path):
    # 02:30 does not exist in New York on 2026-03-08 (tzdata).
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-03-08T02:30"})
    res = _run("risk", unit, "--at", "2026-03-09T12:00")
    _one_error_line(res, "unit.yaml", "patients.0.device.inserted")


def test_ambiguous_local_time_in_unit_file(tmp_path):
    # 01:30 happens twice in New York on 2026-11-01 (tzdata).
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-11-01T01:30"})
    res = _run("rota", unit, "--from", "2026-11-02T12:00", "--hours", "2")
    _one_error_line(res, "unit.yaml", "patients.0.device.inserted")


def test_ambiguous_from_refused_offset_accepted(tmp_path):
    unit = _write(tmp_path, _single_bed_unit("America/New_York", "2026-10-31T12:00"))
    res = _run("rota", unit, "--from", "2026-11-01T01:30", "--hours", "2")
    _one_error_line(res, "--from")
    res = _run("rota", unit, "--from", "2026-11-01T01:30-05:00", "--hours", "2")
    assert res.exit_code == 0, res.output


def test_unknown_field_in_unit(tmp_path):
    unit = _write(
        tmp_path,
        (NY_UNIT % {"ins": "2026-05-04T10:00"}).replace("    pad: true\n", "    padd: true\n"),
    )
    res = _run("risk", unit)
    _one_error_line(res, "unit.yaml", "patients.2.padd")


def test_bad_device_kind(tmp_path):
    unit = _write(
        tmp_path,
        (NY_UNIT % {"ins": "2026-05-04T10:00"}).replace("kind: balloon-pump", "kind: balloon"),
    )
    res = _run("risk", unit)
    _one_error_line(res, "unit.yaml", "patients.2.device.kind")


def test_hours_limit(tmp_path):
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-05-04T10:00"})
    res = _run("rota", unit, "--from", "2026-05-04T10:00", "--hours", "745")
    _one_error_line(res, "--hours")


# --- protocol validation ----------------------------------------------------------------------


def _standard_protocol() -> str:
    from vascplan.paths import data_dir

    return (data_dir() / "protocols" / "standard.yaml").read_text(encoding="utf-8")


@pytest.mark.parametrize(
    ("old", "new", "field"),
    [
        ("new_cannula_restarts:", "new_cannula_restart:", "new_cannula_restart"),
        (
            "every_min: {maintenance: 30}\n",
            "every_min: {maintenance: 90}\n",
            "tiers.raised.every_min.maintenance",
        ),
        ("  - id: calf\n", "  - id: colour\n", "items"),
        ("  - {up_to_every_min: 1440, tolerance_min: 20, source: unit policy}\n", "", "tolerance"),
        (
            "    every_min: 15\n    for_min: 60\n    source: common practice\n",
            "    every_min: 15\n    for_min: 60\n",
            "phases.0.source",
        ),
        ("kind: ignored", "kind: ignored", "format"),
    ],
)
def test_protocol_errors_name_the_field(tmp_path, old, new, field):
    text = _standard_protocol()
    if field == "format":
        text = text.replace("format: vascplan-protocol/1", "format: vascplan-protocol/9")
    else:
        assert old in text, old
        text = text.replace(old, new, 1)
    if field == "tolerance":
        # Without the widest band, a 1440-minute interval would be uncovered; give one.
        text = text.replace(
            '    every_min: 60\n    source: "hourly', '    every_min: 120\n    source: "hourly'
        )
    _write(tmp_path, text, "proto.yaml")
    unit_text = _single_bed_unit("Europe/Berlin", "2026-07-01T09:00").replace(
        "protocol: standard", "protocol: proto.yaml"
    )
    unit = _write(tmp_path, unit_text)
    res = _run("rota", unit, "--from", "2026-07-01T09:00", "--hours", "2")
    _one_error_line(res, "proto.yaml", field)


def test_three_beds_due_together_report_the_one_that_cannot_be_met(tmp_path):
    # One nurse, three 15-minute checks due at once; with 5 min per check (check_duration_min)
    # and a 5 min window for 15-minute checks (standard.yaml), the third cannot be met.
    text = (NY_UNIT % {"ins": "2026-05-04T10:00"}).replace(
        "beds: [21, 22], shifts: [early, late]}\n  - {nurse: RN-Y, beds: [23], shifts: [early]}",
        "beds: [21, 22, 23], shifts: [early, late]}",
    )
    unit = _write(tmp_path, text)
    doc = _rota_json(unit, "2026-05-04T10:00", 1)
    first = [c for c in doc["checks"] if c["due"] == "2026-05-04T10:15:00-04:00"]
    assert len(first) == 3
    lags = sorted(_utc(c["time"]) - _utc(c["due"]) for c in first)
    assert lags == [timedelta(0), timedelta(minutes=5), timedelta(minutes=10)]
    (late,) = [c for c in first if _utc(c["time"]) - _utc(c["due"]) == timedelta(minutes=10)]
    assert late["within_window"] is False
    unmet = [u for u in doc["unmet"] if u["due"] == late["due"] and u["bed"] == late["bed"]]
    assert len(unmet) == 1 and unmet[0]["reason"]


def test_new_cannula_restarts_after_insertion_phases(tmp_path):
    # Issue 5: "a new cannula" re-plans from that moment; README: the after-insertion phases
    # start again (standard.yaml new_cannula_restarts: true).
    extra = "    dpc: {size_fr: 6, inserted: 2026-07-02T12:00}\n"
    unit = _write(tmp_path, _single_bed_unit("Europe/Berlin", "2026-07-01T09:00", extra=extra))
    doc = _rota_json(unit, "2026-07-02T10:00", 4)
    dpc = datetime.fromisoformat("2026-07-02T12:00+02:00")
    before = [c for c in doc["checks"] if _utc(c["due"]) < dpc]
    after = [c for c in doc["checks"] if _utc(c["due"]) > dpc]
    assert before and {c["phase"] for c in before} == {"maintenance"}
    assert after[0]["phase"] == "post-insertion"
    assert _utc(after[0]["due"]) - dpc <= timedelta(minutes=15)
    firsts = [_utc(c["due"]) for c in after if c["phase"] == "post-insertion"]
    assert all(b - a == timedelta(minutes=15) for a, b in zip(firsts, firsts[1:], strict=False))
    # From the new cannula on, its check item is part of every check.
    assert all("dpc" in c["items"] for c in after)


def test_unit_file_in_json(tmp_path):
    import yaml  # test-only: turn our YAML unit into the JSON form the issue also allows

    data = yaml.safe_load(NY_UNIT % {"ins": "2026-05-04T10:00"})
    path = tmp_path / "unit.json"
    path.write_text(json.dumps(data, default=str), encoding="utf-8")
    res = _run("risk", path, "--at", "2026-05-04T12:00", "--format", "json")
    assert res.exit_code == 0, res.output
    assert len(json.loads(res.stdout)["patients"]) == 3


def test_handover_lists_overdue_at_shift_change(tmp_path):
    # The handover at 19:00 lists checks that fall due within its first hour (60 min,
    # standard.yaml handover_window_min); all due_soon entries lie in [19:00, 20:00).
    unit = _write(tmp_path, NY_UNIT % {"ins": "2026-05-04T17:30"})
    doc = _rota_json(unit, "2026-05-04T17:30", 4)
    (hand,) = [h for h in doc["handovers"] if h["shift"] == "late"]
    assert isinstance(hand["overdue"], list)
    at = _utc(hand["at"])
    dues = [_utc(i["due"]) for i in hand["due_soon"]]
    assert dues and all(at <= d < at + timedelta(minutes=60) for d in dues)
    # Every check due in that hour is on the handover list.
    expected = {
        (c["bed"], c["due"])
        for c in doc["checks"]
        if at <= _utc(c["due"]) < at + timedelta(minutes=60)
    }
    assert {(i["bed"], i["due"]) for i in hand["due_soon"]} == expected
