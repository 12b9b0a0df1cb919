"""A unit file written from the README by a new user, run through every command and format.

America/New_York (clocks forward 2026-03-08 02:00 EST -> 03:00 EDT, back 2026-11-01 02:00 EDT
-> 01:00 EST; IANA tz database), three shifts, a JSON unit file, staff for some beds only, a
removed sheath, a patient without ``vessel_mm``, a distal cannula put in later, and an
axillary pump.
"""

from __future__ import annotations

import csv
import io
import json
from datetime import UTC, datetime, timedelta

import icalendar
import pytest
from click.testing import CliRunner

from tests.surv_factory import PROTOCOL, make_unit, sheath_patient
from vascplan.cli import cli
from vascplan.safety import CAUTION
from vascplan.surveillance.schedule import patient_schedule

UNIT = {
    "format": "vascplan-unit/1",
    "unit": {"name": "Heart ICU East (test)", "timezone": "America/New_York"},
    "shifts": [
        {"name": "early", "start": "07:00"},
        {"name": "late", "start": "15:00"},
        {"name": "night", "start": "23:00"},
    ],
    "protocol": "standard",
    "staff": [
        {"nurse": "JD", "beds": [1, 2], "shifts": ["early", "late"]},
        {"nurse": "MK", "beds": [1, 2, 3], "shifts": ["night"]},
    ],
    "patients": [
        {
            "ref": "DEMO-81",
            "bed": 1,
            "sex": "female",
            "device": {
                "kind": "va-ecmo-arterial",
                "side": "L",
                "vessel": "CFA",
                "size_fr": 17,
                "label": "outer",
                "inserted": "2026-03-07T20:00",
            },
            "dpc": {"size_fr": 6, "inserted": "2026-03-08T04:10"},
            "baseline": {"nirs": {"L": 70, "R": 72}},
        },
        {
            "ref": "DEMO-82",
            "bed": 2,
            "sex": "male",
            "device": {
                "kind": "large-bore-sheath",
                "side": "R",
                "vessel": "CFA",
                "size_fr": 14,
                "label": "inner",
                "inserted": "2026-03-08T00:30",
                "removed": "2026-03-08T01:40",
            },
            "vessel_mm": 8.0,
        },
        {
            "ref": "DEMO-83",
            "bed": 3,
            "sex": "male",
            "pad": True,
            "device": {
                "kind": "balloon-pump",
                "side": "R",
                "vessel": "CFA",
                "size_fr": 8,
                "label": "outer",
                "inserted": "2026-03-07T12:00",
            },
            "vessel_mm": 6.5,
        },
        {
            "ref": "DEMO-84",
            "bed": 4,
            "device": {
                "kind": "microaxial-pump",
                "side": "R",
                "vessel": "AXA",
                "size_fr": 14,
                "label": "inner",
                "inserted": "2026-03-07T09:00",
            },
        },
    ],
}


@pytest.fixture
def unit_file(tmp_path):
    path = tmp_path / "east.json"
    path.write_text(json.dumps(UNIT))
    return str(path)


def _run(*args: str):
    return CliRunner().invoke(cli, list(args))


def _utc(text: str) -> datetime:
    return datetime.fromisoformat(text).astimezone(UTC)


def test_risk_json_contract(unit_file):
    res = _run("risk", unit_file, "--at", "2026-03-08T06:00", "--format", "json")
    assert res.exit_code == 0, res.output
    doc = json.loads(res.output)
    assert doc["caution"] == CAUTION
    # REFERENCES.md: no validated risk score for limb ischaemia on mechanical support exists.
    assert doc["statement"].startswith("Not a validated score")
    table = _run("risk", unit_file, "--at", "2026-03-08T06:00").output
    assert CAUTION in table and doc["statement"] in table
    by_ref = {p["ref"]: p for p in doc["patients"]}
    for p in doc["patients"]:
        assert {"ref", "bed", "tier", "sar", "dpc_advised", "reasons"} <= set(p)
        assert p["tier"] in ("standard", "raised", "high")
        assert isinstance(p["dpc_advised"], bool) and p["reasons"]
    ecmo = by_ref["DEMO-81"]
    # No vessel_mm: the women's femoral MLD reference 6.3 mm (Chiam et al., Int J Cardiol
    # 2013;167:1373) is used and flagged.
    assert ecmo["vessel_measured"] is False and ecmo["vessel_mm"] == 6.3
    assert any("*" in a for a in ecmo["assumptions"])
    # 17 Fr outer = 17/3 mm (French scale, exact) over 6.3 mm = 0.8995.
    assert ecmo["sar"] == pytest.approx(17 / 3 / 6.3, abs=1e-3)
    # Inserted 20:00 EST (01:00Z), assessed 06:00 EDT (10:00Z): 9 real hours, not 10.
    assert ecmo["dwell_h"] == 9.0
    assert ecmo["dpc_in_place"] is True and ecmo["dpc_advised"] is False
    # Femoral VA-ECMO (Cheng 2014) and female sex (Alderman 1987): two raised factors.
    assert ecmo["tier"] == "raised"
    # A balloon pump with PAD: tier raised (Cheng 2014; Alderman 1987), no distal cannula.
    iabp = by_ref["DEMO-83"]
    assert iabp["tier"] == "raised" and iabp["dpc_advised"] is False
    # Axillary access: the leg's distal cannula does not apply.
    assert by_ref["DEMO-84"]["dpc_advised"] is False
    assert any("the same for women and men" in a for a in by_ref["DEMO-84"]["assumptions"])


def test_rota_json_times_and_stagger(unit_file):
    res = _run("rota", unit_file, "--from", "2026-03-07T23:00", "--hours", "9", "--format", "json")
    assert res.exit_code == 0, res.output
    doc = json.loads(res.output)
    assert doc["from"] == "2026-03-07T23:00:00-05:00"
    assert doc["to"] == "2026-03-08T09:00:00-04:00"  # 9 real hours across the spring change
    assert doc["unit"] == UNIT["unit"]["name"]
    staggered = 0
    for c in doc["checks"]:
        assert {"time", "due", "bed", "ref", "nurse", "phase", "items"} <= set(c)
        t, d = datetime.fromisoformat(c["time"]), datetime.fromisoformat(c["due"])
        assert t.utcoffset() is not None and d.utcoffset() is not None
        late = (t - d).total_seconds() / 60
        assert late >= 0
        if late:
            staggered += 1
            assert late <= c["tolerance_min"] or not c["within_window"]
    assert staggered  # MK has beds 1-3 due together at night
    assert doc["unmet"] == []
    # One nurse never does two checks within check_duration_min (5 min, unit policy).
    by_nurse: dict[str, list[datetime]] = {}
    for c in doc["checks"]:
        if c["nurse"] != "unassigned":
            by_nurse.setdefault(c["nurse"], []).append(_utc(c["time"]))
    for times in by_nurse.values():
        times.sort()
        assert all(b - a >= timedelta(minutes=5) for a, b in zip(times, times[1:], strict=False))
    # Nobody has bed 4: its checks are kept, marked unassigned, and the bed is named.
    assert {c["nurse"] for c in doc["checks"] if c["bed"] == 4} == {"unassigned"}
    assert {"bed": 4, "ref": "DEMO-84", "shifts": ["early", "night"]} in doc["unstaffed"]
    # Handovers at 23:00 EST and 07:00 EDT (8 real hours apart: 23:00-07:00 loses an hour).
    assert [h["at"] for h in doc["handovers"]] == [
        "2026-03-07T23:00:00-05:00",
        "2026-03-08T07:00:00-04:00",
    ]


def test_dpc_put_in_later_restarts_and_adds_its_item(unit_file):
    res = _run("rota", unit_file, "--from", "2026-03-08T03:00", "--hours", "3", "--format", "json")
    checks = [c for c in json.loads(res.output)["checks"] if c["bed"] == 1]
    before = [c for c in checks if _utc(c["due"]) < _utc("2026-03-08T04:10-04:00")]
    after = [c for c in checks if _utc(c["due"]) > _utc("2026-03-08T04:10-04:00")]
    assert all("dpc" not in c["items"] for c in before)
    # The protocol restarts the after-insertion phases: every 15 min from 04:10.
    assert [c["due"][11:16] for c in after[:4]] == ["04:25", "04:40", "04:55", "05:10"]
    assert all(c["phase"] == "post-insertion" and "dpc" in c["items"] for c in after[:4])


def test_removed_sheath_steps_down_across_the_spring_change(unit_file):
    res = _run("rota", unit_file, "--from", "2026-03-08T01:40", "--hours", "3", "--format", "json")
    due = [_utc(c["due"]) for c in json.loads(res.output)["checks"] if c["bed"] == 2]
    removed = _utc("2026-03-08T01:40-05:00")
    # Every 15 min x 4, then 30 min x 4 (common practice step-down), in real minutes.
    assert [(d - removed).total_seconds() / 60 for d in due] == [15, 30, 45, 60, 90, 120, 150]


def test_axillary_device_checks_the_arm():
    unit = make_unit(
        "Australia/Sydney",
        [
            sheath_patient(
                1,
                "2026-04-04T20:00",
                device={
                    "kind": "microaxial-pump",
                    "side": "R",
                    "vessel": "AXA",
                    "size_fr": 14,
                    "label": "inner",
                    "inserted": "2026-04-04T20:00",
                },
            )
        ],
    )
    p = unit.patients[0]
    checks = patient_schedule(
        unit, p, PROTOCOL, p.device.inserted, p.device.inserted + timedelta(hours=12)
    )
    for c in checks:
        # issue 13 split the hand's sensation and movement into two items
        assert {"arm-pulses", "hand-sensation", "hand-movement", "forearm"} <= set(c.items)
        assert not {"pulses", "calf", "capillary-refill"} & set(c.items)
    # Sydney clocks go back 2026-04-05 03:00 AEDT -> 02:00 AEST: hourly stays 60 real minutes.
    maint = [c.due.astimezone(UTC) for c in checks if c.phase == "maintenance"]
    assert all(b - a == timedelta(hours=1) for a, b in zip(maint, maint[1:], strict=False))
    assert len({m for m in maint}) == len(maint)


@pytest.mark.parametrize(
    ("args", "line"),
    [
        (
            ["--from", "2026-11-01T01:30", "--hours", "2"],
            "error: --from: 2026-11-01 01:30 happens twice in America/New_York (clocks go "
            "back); give the time with its UTC offset, e.g. -04:00",
        ),
        (
            ["--from", "2026-03-08T02:30", "--hours", "2"],
            "error: --from: 2026-03-08 02:30 does not exist in America/New_York (clocks go "
            "forward); give the time with its UTC offset",
        ),
        (
            ["--from", "2026-03-08T00:00", "--hours", "0"],
            "error: --hours: must be above 0 and at most 744 (got 0)",
        ),
        (
            ["--from", "2026-03-08T00:00", "--hours", "-2"],
            "error: --hours: must be above 0 and at most 744 (got -2)",
        ),
        (
            ["--from", "2026-03-08T00:00", "--hours", "2", "--nurse", "JX"],
            "error: --nurse: unknown nurse 'JX' (did you mean 'JD'?); staff: JD, MK",
        ),
    ],
)
def test_bad_options_are_one_line(unit_file, args, line):
    res = _run("rota", unit_file, *args)
    assert res.exit_code == 2
    assert res.output.strip() == line


def test_csv_and_table_and_nurse_filter(unit_file):
    res = _run("rota", unit_file, "--from", "2026-03-08T07:00", "--hours", "8", "--format", "csv")
    assert res.exit_code == 0
    rows = list(csv.DictReader(io.StringIO(res.output)))  # the header is the first line
    assert rows and list(rows[0])[:7] == ["time", "due", "bed", "ref", "nurse", "phase", "items"]
    assert all(r["caution"] == CAUTION for r in rows)
    json_doc = json.loads(
        _run(
            "rota", unit_file, "--from", "2026-03-08T07:00", "--hours", "8", "--format", "json"
        ).output
    )
    assert [(r["time"], r["bed"]) for r in rows] == [
        (c["time"], str(c["bed"])) for c in json_doc["checks"]
    ]
    res = _run("rota", unit_file, "--from", "2026-03-08T07:00", "--hours", "8", "--nurse", "JD")
    assert res.exit_code == 0 and CAUTION in res.output
    assert "== JD:" in res.output and "== MK" not in res.output and "unassigned" not in res.output


def test_ics_across_the_autumn_change_is_rfc5545(unit_file, tmp_path):
    out = tmp_path / "east.ics"
    res = _run(
        "rota",
        unit_file,
        "--from",
        "2026-10-31T22:00",
        "--hours",
        "6",
        "--format",
        "ics",
        "-o",
        str(out),
    )
    assert res.exit_code == 0, res.output
    raw = out.read_bytes()
    # RFC 5545 s3.1: CRLF line ends, lines of at most 75 octets, folded with a space.
    assert b"\n" not in raw.replace(b"\r\n", b"")
    assert all(len(line) <= 75 for line in raw.split(b"\r\n"))
    cal = icalendar.Calendar.from_ical(raw)
    assert str(cal["VERSION"]) == "2.0" and str(cal["PRODID"])
    (vtz,) = cal.walk("VTIMEZONE")
    assert str(vtz["TZID"]) == "America/New_York"
    json_doc = json.loads(
        _run(
            "rota", unit_file, "--from", "2026-10-31T22:00", "--hours", "6", "--format", "json"
        ).output
    )
    events = cal.walk("VEVENT")
    assert len(events) == len(json_doc["checks"])
    starts = sorted(e.decoded("DTSTART").astimezone(UTC) for e in events)
    assert starts == sorted(_utc(c["time"]) for c in json_doc["checks"])
    for e in events:
        assert e["UID"] and e["DTSTAMP"] and CAUTION in str(e["DESCRIPTION"])
        (alarm,) = e.walk("VALARM")
        assert str(alarm["ACTION"]) == "DISPLAY"
        assert alarm.decoded("TRIGGER") == timedelta(minutes=-5)
    # Local 01:00 happens twice (EDT, then EST): both checks there, one real hour apart.
    ones = [s for s in starts if s.astimezone(vtz.to_tz()).strftime("%H:%M") == "01:00"]
    assert len(ones) == 4 and (ones[2] - ones[0]) == timedelta(hours=1)
