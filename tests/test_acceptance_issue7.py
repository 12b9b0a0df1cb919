"""Acceptance tests of issue 7 (observation record): black-box, from the issue text and README.

An invented unit in America/Chicago (pseudonymous refs DEMO-61/62), a left-sided VA-ECMO
cannula and a right-sided sheath long since removed; every store is a fresh SQLite file.
"""

from __future__ import annotations

import csv
import io
import json
import os
import stat
from datetime import datetime, timedelta
from pathlib import Path

import pytest
from click.testing import CliRunner

from vascplan.cli import cli
from vascplan.safety import CAUTION

UNIT = """\
format: vascplan-unit/1
unit: {name: Test cardiac ICU, timezone: America/Chicago}
shifts:
  - {name: am, start: "06:45"}
  - {name: pm, start: "18:45"}
protocol: %(protocol)s
staff:
  - {nurse: RN-P, beds: [3, 4], shifts: [am, pm]}
patients:
%(patients)s"""

ECMO = """\
  - ref: DEMO-61
    bed: 3
    sex: male
    device:
      kind: va-ecmo-arterial
      side: L
      vessel: CFA
      size_fr: 17
      label: outer
      inserted: 2026-09-10T08:00
    vessel_mm: 7.8
    dpc: {size_fr: 7, inserted: 2026-09-10T08:30}
    baseline: {nirs: {L: 72, R: 70}, doppler: {L-DPA: present, L-PTA: present}}
"""

SHEATH = """\
  - ref: DEMO-62
    bed: 4
    sex: female
    device:
      kind: large-bore-sheath
      side: R
      vessel: CFA
      size_fr: 14
      label: inner
      inserted: 2026-09-01T08:00
      removed: 2026-09-01T10:00
    vessel_mm: 6.5
"""

HEADER = "time,bed,ref,by,item,site,value"


def _unit(tmp_path: Path, patients: str = ECMO + SHEATH, protocol: str = "standard") -> Path:
    path = tmp_path / "unit.yaml"
    path.write_text(UNIT % {"patients": patients, "protocol": protocol}, encoding="utf-8")
    return path


def _run(*args: object):
    return CliRunner().invoke(cli, [str(a) for a in args])


def _one_error_line(res, *needles: str) -> None:
    assert res.exit_code == 2, res.output
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1, res.output
    assert "Traceback" not in res.output
    for needle in needles:
        assert needle in lines[0], lines[0]


def _export_rows(unit: Path, db: Path) -> list[dict[str, str]]:
    res = _run("obs", "export", "--unit", unit, "--format", "csv", "--db", db)
    assert res.exit_code == 0, res.output
    return list(csv.DictReader(io.StringIO(res.stdout)))


def _add(unit: Path, db: Path, bed: int, time: str, *items: str):
    res = _run(
        "obs",
        "add",
        "--unit",
        unit,
        "--bed",
        bed,
        "--time",
        time,
        "--by",
        "RN-P",
        "--db",
        db,
        *items,
    )
    assert res.exit_code == 0, res.output
    return res


def _review(unit: Path, db: Path, at: str):
    res = _run("obs", "review", unit, "--at", at, "--format", "json", "--db", db)
    assert res.exit_code in (0, 1), res.output
    return res.exit_code, json.loads(res.stdout)


def _patient(doc: dict, ref: str) -> dict:
    (p,) = [p for p in doc["patients"] if p["ref"] == ref]
    return p


# --- template, add, import --------------------------------------------------------------------


def test_template_header(tmp_path):
    res = _run("obs", "template")
    assert res.exit_code == 0, res.output
    assert res.stdout.splitlines()[0] == HEADER
    out = tmp_path / "t.csv"
    res = _run("obs", "template", "-o", out)
    assert res.exit_code == 0, res.output
    assert out.read_text(encoding="utf-8").splitlines()[0] == HEADER


def test_add_stores_and_export_round_trips(tmp_path):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    _add(
        unit,
        db,
        3,
        "2026-09-10T09:00",
        "--pulse",
        "l-dpa=palpable",
        "--nirs",
        "left=71",
        "--pain",
        "2",
    )
    rows = _export_rows(unit, db)
    assert list(rows[0])[:7] == HEADER.split(",")
    assert {"entry", "corrects", "reason", "superseded_by"} <= set(rows[0])
    got = {(r["item"], r["site"], r["value"]) for r in rows}
    # README: sides stored as L/R, artery ids in capitals.
    assert got == {("pulse", "L-DPA", "palpable"), ("nirs", "L", "71"), ("pain", "", "2")}
    for r in rows:
        assert r["ref"] == "DEMO-61" and r["bed"] == "3" and r["by"] == "RN-P"
        # Local time of the unit with its offset: CDT, UTC-5, in September.
        assert datetime.fromisoformat(r["time"]) == datetime.fromisoformat("2026-09-10T09:00-05:00")
        assert r["time"].endswith("-05:00")


def test_database_file_owner_only(tmp_path):
    unit, db = _unit(tmp_path), tmp_path / "new.db"
    old = os.umask(0)
    try:
        _add(unit, db, 3, "2026-09-10T09:00", "--pain", "1")
    finally:
        os.umask(old)
    assert stat.S_IMODE(db.stat().st_mode) == 0o600


def test_add_bad_value_is_one_line_and_nothing_stored(tmp_path):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    res = _run(
        "obs",
        "add",
        "--unit",
        unit,
        "--bed",
        3,
        "--time",
        "2026-09-10T09:00",
        "--by",
        "RN-P",
        "--db",
        db,
        "--nirs",
        "L=70",
        "--pulse",
        "L-DPA=faint",
    )
    _one_error_line(res, "--pulse")
    if db.exists():
        assert _export_rows(unit, db) == []


def test_add_nonexistent_local_time_refused(tmp_path):
    # 02:30 does not exist in Chicago on 2026-03-08 (tzdata: 02:00 CST -> 03:00 CDT).
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    res = _run(
        "obs",
        "add",
        "--unit",
        unit,
        "--bed",
        3,
        "--time",
        "2026-03-08T02:30",
        "--by",
        "RN-P",
        "--db",
        db,
        "--pain",
        "1",
    )
    _one_error_line(res, "--time")


def _write_csv(tmp_path: Path, rows: list[str], name: str = "checks.csv") -> Path:
    path = tmp_path / name
    path.write_text("\n".join([HEADER, *rows]) + "\n", encoding="utf-8")
    return path


GOOD_ROWS = [
    "2026-09-10T10:00,3,DEMO-61,RN-P,pulse,L-DPA,doppler",
    "2026-09-10T10:00,3,DEMO-61,RN-P,nirs,R,69",
    "2026-09-10T10:00,3,DEMO-61,RN-P,sensation,L,normal",
    "2026-09-10T10:00,3,DEMO-61,RN-P,dpc,,ok",
    "2026-09-10T10:00,4,DEMO-62,RN-P,access,R-CFA,dry",
]


def test_import_whole_file_once(tmp_path):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    path = _write_csv(tmp_path, GOOD_ROWS)
    res = _run("obs", "import", path, "--unit", unit, "--db", db)
    assert res.exit_code == 0, res.output
    assert len(_export_rows(unit, db)) == 5
    # A file that repeats stored findings is refused whole: importing twice stores it once.
    res = _run("obs", "import", path, "--unit", unit, "--db", db)
    assert res.exit_code == 2, res.output
    assert len(_export_rows(unit, db)) == 5


@pytest.mark.parametrize(
    ("bad", "column"),
    [
        ("2026-09-10T10:00,3,DEMO-61,RN-P,nirs,L,180", "value"),  # percent 0-100
        ("2026-09-10T10:00,3,DEMO-61,RN-P,motor,L,floppy", "value"),
        ("2026-09-10T10:00,3,DEMO-61,RN-P,pulses,L-DPA,doppler", "item"),
        ("2026-09-10T10:00,3,DEMO-62,RN-P,pain,,3", "ref"),  # bed 3 is DEMO-61
        ("2026-09-10,3,DEMO-61,RN-P,pain,,3", "time"),  # a date alone is refused
        ("2026-09-10T10:00,3,DEMO-61,RN-P,pain,,11", "value"),  # 0-10
    ],
)
def test_import_bad_row_names_line_and_column_and_stores_nothing(tmp_path, bad, column):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    path = _write_csv(tmp_path, [GOOD_ROWS[0], GOOD_ROWS[1], bad, GOOD_ROWS[4]])
    res = _run("obs", "import", path, "--unit", unit, "--db", db)
    # The bad row is the file's fourth line (header is line 1).
    _one_error_line(res, "checks.csv", "4", column)
    if db.exists():
        assert _export_rows(unit, db) == []


# --- review -----------------------------------------------------------------------------------

DETERIORATED = [
    "--pulse",
    "L-DPA=absent",
    "--pulse",
    "L-PTA=doppler",
    "--pulse",
    "R-DPA=palpable",
    "--venous",
    "L=present",
    "--nirs",
    "L=50",
    "--sensation",
    "L=toes",
    "--sensation",
    "R=normal",
    "--motor",
    "L=normal",
    "--motor",
    "R=normal",
    "--pressure",
    "L-PTA=90",
    "--pressure",
    "L-DPA=80",
    "--pressure",
    "R-PTA=140",
    "--pressure",
    "R-DPA=130",
    "--pressure",
    "L-ARM=120",
    "--pressure",
    "R-ARM=128",
]


def test_review_contract_alerts_abi_ali(tmp_path):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    _add(unit, db, 3, "2026-09-10T14:00", *DETERIORATED)
    code, doc = _review(unit, db, "2026-09-10T14:05")
    assert code == 1  # alerts open
    assert doc["caution"] == CAUTION
    assert datetime.fromisoformat(doc["at"]).utcoffset() is not None
    p = _patient(doc, "DEMO-61")
    assert {"ref", "bed", "overdue", "alerts", "ali_category", "abi"} <= set(p)
    # ABI (Aboyans et al., Circulation 2012): higher of PTA/DPA over the higher arm pressure.
    assert p["abi"]["L"] == pytest.approx(round(90 / 128, 2))
    assert p["abi"]["R"] == pytest.approx(round(140 / 128, 2))
    # Rutherford 1997: sensory loss in the toes, no weakness, an audible (PTA) Doppler: IIa.
    assert p["ali_category"] == "IIa"
    rules = {a["rule"]: a for a in p["alerts"]}
    for rule in ("pedal-signal-lost", "nirs-fall", "abi-abnormal", "ali-category"):
        assert rule in rules, sorted(rules)
        assert rules[rule]["source"] and rules[rule]["detail"]
    # Whom to call comes from the protocol's escalation criteria (standard.yaml).
    # (`call` carries the escalation's response time too; `within_min` gives it as a number.)
    assert rules["pedal-signal-lost"]["call"].startswith(
        "Doctor in charge of the patient; vascular surgeon"
    )
    assert rules["pedal-signal-lost"]["within_min"] == 15
    assert rules["ali-category"]["call"].startswith(
        "Doctor in charge of the patient; vascular surgeon"
    )
    assert rules["ali-category"]["within_min"] == 30  # ali-IIa
    assert rules["abi-abnormal"]["call"].startswith("Doctor in charge of the patient")
    # 72 -> 50 is a 30.6 % relative fall, beyond the standard 20 %.
    assert "20" in json.dumps(rules["nirs-fall"]) or "30" in rules["nirs-fall"]["detail"]
    # No guideline fixes NIRS thresholds: the review says so.
    assert "guideline" in json.dumps(doc).lower()


def test_review_table_carries_caution_and_exit_status(tmp_path):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    _add(unit, db, 3, "2026-09-10T14:00", *DETERIORATED)
    res = _run("obs", "review", unit, "--at", "2026-09-10T14:05", "--db", db)
    assert res.exit_code == 1, res.output
    assert CAUTION in " ".join(res.output.split())
    assert "pedal-signal-lost" in res.output


def test_overdue_checks_named_with_minutes_late(tmp_path):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    at = "2026-09-10T12:00"
    code, doc = _review(unit, db, at)
    assert code == 1
    p = _patient(doc, "DEMO-61")
    assert p["overdue"]
    at_t = datetime.fromisoformat(at + "-05:00")
    for o in p["overdue"]:
        due = datetime.fromisoformat(o["due"])
        assert due.utcoffset() is not None
        assert isinstance(o["minutes_late"], int)
        assert o["minutes_late"] == int((at_t - due).total_seconds() // 60)
        assert o["minutes_late"] > 0
    (alert,) = [a for a in p["alerts"] if a["rule"] == "check-overdue"][:1]
    assert alert["call"].startswith("Nurse in charge of the shift")
    # DEMO-62's device came out nine days ago and no check was ever recorded: its missed
    # checks stay overdue (README: overdue while no check was recorded since the window
    # opened), but none lies after the after-removal phases (15x4, 30x4, 60x4 min: 7 h).
    late = [datetime.fromisoformat(o["due"]) for o in _patient(doc, "DEMO-62")["overdue"]]
    assert late
    assert max(late) <= datetime.fromisoformat("2026-09-01T17:00-05:00")


def test_review_exit_zero_when_nothing_open(tmp_path):
    unit, db = _unit(tmp_path, patients=SHEATH), tmp_path / "obs.db"
    _add(
        unit,
        db,
        4,
        "2026-09-10T09:00",
        "--pulse",
        "R-DPA=palpable",
        "--pulse",
        "L-DPA=palpable",
        "--sensation",
        "R=normal",
        "--sensation",
        "L=normal",
        "--motor",
        "R=normal",
        "--motor",
        "L=normal",
        "--access",
        "R-CFA=dry",
        "--refill",
        "R=2",
        # issue 13: a check counts only for what it records, so the whole check is entered
        *("--refill", "L=2", "--colour", "L=normal", "--colour", "R=normal"),
        *("--temperature", "L=warm", "--temperature", "R=warm", "--calf", "L=soft"),
        *("--calf", "R=soft"),
    )
    code, doc = _review(unit, db, "2026-09-10T09:30")
    assert code == 0, doc
    p = _patient(doc, "DEMO-62")
    assert p["alerts"] == [] and p["overdue"] == []
    assert p["ali_category"] == "I"
    assert p["abi"] == {"L": None, "R": None}


# Rutherford et al., J Vasc Surg 1997;26:517, clinical categories of acute limb ischaemia:
# I    no sensory loss, no weakness, arterial Doppler audible, venous audible
# IIa  minimal (toes) or no sensory loss, no weakness, arterial often inaudible, venous audible
# IIb  sensory loss beyond the toes, mild/moderate weakness, arterial inaudible, venous audible
# III  profound anaesthetic, profound paralysis, arterial and venous inaudible
@pytest.mark.parametrize(
    ("sensation", "motor", "pulse", "venous", "category"),
    [
        ("normal", "normal", "palpable", "present", "I"),
        ("normal", "normal", "doppler", "present", "I"),
        ("toes", "normal", "absent", "present", "IIa"),
        ("normal", "normal", "absent", "present", "IIa"),
        ("beyond-toes", "normal", "absent", "present", "IIb"),
        ("toes", "weak", "absent", "present", "IIb"),
        ("absent", "paralysed", "absent", "absent", "III"),
        ("normal", "paralysed", "doppler", "present", "III"),
    ],
)
def test_ali_category_reporting_standard(tmp_path, sensation, motor, pulse, venous, category):
    unit, db = _unit(tmp_path, patients=SHEATH), tmp_path / "obs.db"
    _add(
        unit,
        db,
        4,
        "2026-09-10T09:00",
        "--sensation",
        f"R={sensation}",
        "--motor",
        f"R={motor}",
        "--pulse",
        f"R-DPA={pulse}",
        "--pulse",
        f"R-PTA={pulse}",
        "--venous",
        f"R={venous}",
        "--sensation",
        "L=normal",
        "--motor",
        "L=normal",
        "--pulse",
        "L-DPA=palpable",
        # issue 13: a check counts only for what it records, so the rest of it is entered
        *("--refill", "L=2", "--refill", "R=2", "--colour", "L=normal", "--colour", "R=normal"),
        *("--temperature", "L=warm", "--temperature", "R=warm", "--calf", "L=soft"),
        *("--calf", "R=soft", "--access", "R-CFA=dry"),
    )
    code, doc = _review(unit, db, "2026-09-10T09:10")
    p = _patient(doc, "DEMO-62")
    assert p["ali_category"] == category
    assert code == (0 if category == "I" else 1)
    if category != "I":
        assert any(a["rule"] == "ali-category" for a in p["alerts"])


@pytest.mark.parametrize(
    ("ankle", "arm", "abi", "abnormal"),
    [
        # 2016 AHA/ACC bands: <= 0.90 abnormal, 0.91-0.99 borderline, 1.00-1.40 normal.
        (117, 130, 0.90, True),
        (91, 100, 0.91, False),
        (145, 100, 1.45, False),
        (130, 130, 1.00, False),
    ],
)
def test_abi_boundaries(tmp_path, ankle, arm, abi, abnormal):
    unit, db = _unit(tmp_path, patients=SHEATH), tmp_path / "obs.db"
    _add(
        unit,
        db,
        4,
        "2026-09-10T09:00",
        "--pressure",
        f"R-PTA={ankle}",
        "--pressure",
        f"R-DPA={ankle - 10}",
        "--pressure",
        f"L-ARM={arm}",
        "--pressure",
        f"R-ARM={arm - 6}",
    )
    _code, doc = _review(unit, db, "2026-09-10T09:10")
    p = _patient(doc, "DEMO-62")
    assert p["abi"]["R"] == pytest.approx(abi)
    assert p["abi"]["L"] is None
    assert any(a["rule"] == "abi-abnormal" for a in p["alerts"]) is abnormal


def test_nirs_thresholds_configurable_in_protocol(tmp_path):
    from vascplan.paths import data_dir

    text = (data_dir() / "protocols" / "standard.yaml").read_text(encoding="utf-8")
    old = "  nirs_relative_fall_pct:\n    value: 20\n"
    assert old in text
    (tmp_path / "own.yaml").write_text(
        text.replace(old, "  nirs_relative_fall_pct:\n    value: 40\n"), encoding="utf-8"
    )
    for protocol, expect in (("standard", True), ("own.yaml", False)):
        sub = tmp_path / protocol.replace(".", "_")
        sub.mkdir()
        if protocol == "own.yaml":
            (sub / "own.yaml").write_text((tmp_path / "own.yaml").read_text(), encoding="utf-8")
        unit, db = _unit(sub, protocol=protocol), sub / "obs.db"
        _add(unit, db, 3, "2026-09-10T14:00", "--nirs", "L=52")  # 72 -> 52: 27.8 % fall
        _code, doc = _review(unit, db, "2026-09-10T14:05")
        rules = {a["rule"] for a in _patient(doc, "DEMO-61")["alerts"]}
        assert ("nirs-fall" in rules) is expect, (protocol, rules)


# --- corrections, export, trend ---------------------------------------------------------------


def test_correction_keeps_original(tmp_path):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    _add(unit, db, 3, "2026-09-10T09:00", "--nirs", "L=41", "--pain", "4")
    (orig,) = [r for r in _export_rows(unit, db) if r["item"] == "nirs"]
    res = _run(
        "obs",
        "correct",
        "--entry",
        orig["entry"],
        "--value",
        "71",
        "--unit",
        unit,
        "--by",
        "RN-P",  # a correction's author must be on the unit's staff
        "--reason",
        "typo",
        "--db",
        db,
    )
    assert res.exit_code == 0, res.output
    rows = _export_rows(unit, db)
    nirs = [r for r in rows if r["item"] == "nirs"]
    assert len(nirs) == 2
    (old,) = [r for r in nirs if r["entry"] == orig["entry"]]
    (new,) = [r for r in nirs if r["entry"] != orig["entry"]]
    assert old["value"] == "41" and new["value"] == "71"
    assert new["corrects"] == orig["entry"] and new["reason"] == "typo"
    assert old["superseded_by"] == new["entry"] and new["superseded_by"] == ""
    (pain,) = [r for r in rows if r["item"] == "pain"]
    res = _run(
        "obs",
        "correct",
        "--entry",
        pain["entry"],
        "--withdraw",
        "--unit",
        unit,
        "--by",
        "RN-P",  # a withdrawal's author must be on the unit's staff
        "--reason",
        "wrong bed",
        "--db",
        db,
    )
    assert res.exit_code == 0, res.output
    values = [r["value"] for r in _export_rows(unit, db) if r["item"] == "pain"]
    assert sorted(values) == ["4", "entered-in-error"]


def test_fhir_export_validates(tmp_path):
    from fhir.resources.R4B.bundle import Bundle

    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    _add(unit, db, 3, "2026-09-10T14:00", *DETERIORATED, "--refill", "L=4", "--pain", "3")
    out = tmp_path / "bundle.json"
    res = _run("obs", "export", "--unit", unit, "--format", "fhir", "-o", out, "--db", db)
    assert res.exit_code == 0, res.output
    doc = json.loads(out.read_text(encoding="utf-8"))
    bundle = Bundle.model_validate(doc) if hasattr(Bundle, "model_validate") else Bundle(**doc)
    assert bundle.type == "collection"
    obs = [e.resource for e in bundle.entry if e.resource.__resource_type__ == "Observation"]
    # 23 findings (21 in DETERIORATED's pairs + refill + pain) plus a derived ABI per leg.
    n_findings = len(DETERIORATED) // 2 + 2
    assert len(obs) == n_findings + 2
    codes = {c.code for o in obs for c in o.code.coding}
    assert "44963-7" in codes  # LOINC capillary refill (README table)
    assert "72514-3" in codes  # LOINC pain 0-10
    assert "446841001" in codes  # SNOMED CT ankle brachial pressure index
    assert CAUTION in json.dumps(doc["meta"])


def test_trend_pdf_one_page_per_patient(tmp_path):
    from pypdf import PdfReader

    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    _add(unit, db, 3, "2026-09-10T10:00", "--nirs", "L=70", "--nirs", "R=69", "--refill", "L=2")
    _add(unit, db, 3, "2026-09-10T11:00", "--nirs", "L=55", "--nirs", "R=68", "--refill", "L=4")
    out = tmp_path / "trend.pdf"
    res = _run("obs", "trend", unit, "--bed", 3, "-o", out, "--at", "2026-09-10T11:30", "--db", db)
    assert res.exit_code == 0, res.output
    pages = PdfReader(str(out)).pages
    assert len(pages) == 1
    assert CAUTION in " ".join(pages[0].extract_text().split())
    assert "DEMO-61" in pages[0].extract_text()
    out2 = tmp_path / "all.pdf"
    res = _run("obs", "trend", unit, "-o", out2, "--at", "2026-09-10T11:30", "--db", db)
    assert res.exit_code == 0, res.output
    assert len(PdfReader(str(out2)).pages) == 2


def test_file_that_is_not_a_database_is_one_line(tmp_path):
    # Bad input includes the database (README: exit 2 for a file, an option, the database).
    unit, db = _unit(tmp_path), tmp_path / "notes.db"
    db.write_text("not a database\n", encoding="utf-8")
    res = _run("obs", "review", unit, "--at", "2026-09-10T12:00", "--db", db)
    _one_error_line(res, "notes.db")
    res = _run(
        "obs",
        "add",
        "--unit",
        unit,
        "--bed",
        3,
        "--time",
        "2026-09-10T09:00",
        "--by",
        "RN-P",
        "--db",
        db,
        "--pain",
        "1",
    )
    _one_error_line(res, "notes.db")
    assert db.read_text(encoding="utf-8") == "not a database\n"


def test_export_to_stdout_is_data_alone(tmp_path):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    _add(unit, db, 3, "2026-09-10T09:00", "--refill", "L=2")
    res = _run("obs", "export", "--unit", unit, "--format", "fhir", "--db", db)
    assert res.exit_code == 0, res.output
    doc = json.loads(res.stdout)  # nothing but the Bundle on standard output
    assert doc["resourceType"] == "Bundle"
    (entry,) = doc["entry"]
    assert entry["resource"]["valueQuantity"]["value"] == 2
    assert entry["resource"]["valueQuantity"]["code"] == "s"  # UCUM seconds


def test_correction_with_bad_value_is_refused(tmp_path):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    _add(unit, db, 3, "2026-09-10T09:00", "--motor", "L=weak")
    (orig,) = _export_rows(unit, db)
    res = _run(
        "obs",
        "correct",
        "--entry",
        orig["entry"],
        "--value",
        "floppy",
        "--unit",
        unit,
        "--by",
        "RN-P",  # a correction's author must be on the unit's staff
        "--reason",
        "typo",
        "--db",
        db,
    )
    _one_error_line(res, "--value")
    assert len(_export_rows(unit, db)) == 1


def test_import_with_offsets_and_other_zone_times(tmp_path):
    # A time with an offset is taken as given (14:00 UTC is 09:00 CDT, after the 08:00
    # insertion: a check before it is refused, issue 18).
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    path = _write_csv(tmp_path, ["2026-09-10T14:00Z,3,DEMO-61,RN-P,calf,L,tense"])
    res = _run("obs", "import", path, "--unit", unit, "--db", db)
    assert res.exit_code == 0, res.output
    (row,) = _export_rows(unit, db)
    assert row["time"] == "2026-09-10T09:00:00-05:00"
    _code, doc = _review(unit, db, "2026-09-10T09:05")
    assert any(a["rule"] == "calf-tense" for a in _patient(doc, "DEMO-61")["alerts"])


def test_ambiguous_import_time_refused(tmp_path):
    # 01:30 happens twice in Chicago on 2026-11-01 (tzdata: 02:00 CDT -> 01:00 CST).
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    path = _write_csv(tmp_path, ["2026-11-01T01:30,3,DEMO-61,RN-P,pain,,2"])
    res = _run("obs", "import", path, "--unit", unit, "--db", db)
    _one_error_line(res, "checks.csv", "2", "time")


@pytest.mark.parametrize(
    ("items", "rule"),
    [
        (("--refill", "L=5"), "refill-slow"),  # above 3 s (standard.yaml review threshold)
        (("--access", "L-CFA=bleeding"), "access-bleeding"),
        (("--access", "L=haematoma"), "access-bleeding"),
        (("--dpc", "kinked"), "dpc-fault"),
        (("--dpc", "L-SFA=no-flow"), "dpc-fault"),
        (("--calf", "L=tense"), "calf-tense"),
        (("--colour", "L=mottled", "--colour", "R=normal"), "skin-change"),
        (("--temperature", "L=cold", "--temperature", "R=warm"), "skin-change"),
        (("--nirs", "L=54", "--nirs", "R=71"), "nirs-limb-difference"),  # 17 points >= 15
        (("--nirs", "L=45"), "nirs-floor"),  # below 50 %
    ],
)
def test_review_rules_open(tmp_path, items, rule):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    _add(unit, db, 3, "2026-09-10T14:00", *items)
    code, doc = _review(unit, db, "2026-09-10T14:05")
    assert code == 1
    alerts = [a for a in _patient(doc, "DEMO-61")["alerts"] if a["rule"] == rule]
    assert alerts, _patient(doc, "DEMO-61")["alerts"]
    assert alerts[0]["call"] and alerts[0]["source"]


def test_review_quiet_for_normal_findings_and_unlost_signals(tmp_path):
    # A pulse absent at baseline and still absent is not a lost signal; normal findings
    # open nothing; an incomplete leg (no motor recorded) gets no ALI category.
    unit, db = (
        _unit(
            tmp_path,
            patients=SHEATH.replace(
                "    vessel_mm: 6.5\n",
                "    vessel_mm: 6.5\n    baseline: {pulses: {R-DPA: absent, R-PTA: palpable}}\n",
            ),
        ),
        (tmp_path / "obs.db"),
    )
    _add(
        unit,
        db,
        4,
        "2026-09-10T09:00",
        "--pulse",
        "R-DPA=absent",
        "--pulse",
        "R-PTA=palpable",
        "--sensation",
        "R=normal",
        "--colour",
        "R=normal",
        "--temperature",
        "R=warm",
        "--refill",
        "R=2",
        "--access",
        "R-CFA=dry",
    )
    code, doc = _review(unit, db, "2026-09-10T09:05")
    p = _patient(doc, "DEMO-62")
    # Issue 13: this partial check leaves motor, calf and the left leg due, so the only alert
    # open is the overdue check, naming what is missing; no finding raises one.
    assert [a["rule"] for a in p["alerts"]] == ["check-overdue"] and code == 1
    assert "motor:R" in p["overdue"][-1]["missing"] and "pulse:R" not in p["overdue"][-1]["missing"]
    assert p["ali_category"] is None


def test_review_uses_corrected_value_and_ignores_withdrawn(tmp_path):
    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    _add(unit, db, 3, "2026-09-10T14:00", "--nirs", "L=41", "--calf", "L=tense")
    rows = {r["item"]: r for r in _export_rows(unit, db)}
    _code, doc = _review(unit, db, "2026-09-10T14:05")
    rules = {a["rule"] for a in _patient(doc, "DEMO-61")["alerts"]}
    assert {"nirs-floor", "calf-tense"} <= rules
    res = _run(
        "obs",
        "correct",
        "--entry",
        rows["nirs"]["entry"],
        "--value",
        "70",
        "--unit",
        unit,
        "--by",
        "RN-P",  # a correction's author must be on the unit's staff
        "--reason",
        "typo",
        "--db",
        db,
    )
    assert res.exit_code == 0, res.output
    res = _run(
        "obs",
        "correct",
        "--entry",
        rows["calf"]["entry"],
        "--withdraw",
        "--unit",
        unit,
        "--by",
        "RN-P",  # a withdrawal's author must be on the unit's staff
        "--reason",
        "other patient",
        "--db",
        db,
    )
    assert res.exit_code == 0, res.output
    _code, doc = _review(unit, db, "2026-09-10T14:05")
    rules = {a["rule"] for a in _patient(doc, "DEMO-61")["alerts"]}
    assert not rules & {"nirs-floor", "nirs-fall", "calf-tense"}, rules


def test_killed_import_lands_whole_or_not_at_all(tmp_path):
    """SIGKILL an import part-way (issue 7): all of it or none, and what was there before.

    The kill comes ever later (50 ms steps) until one import completes, so some kills land
    while the rows are being written.
    """
    import signal
    import subprocess
    import sys
    import time

    unit, db = _unit(tmp_path), tmp_path / "obs.db"
    _add(unit, db, 4, "2026-09-10T08:00", "--access", "R-CFA=dry")
    rows = []
    for i in range(1500):  # one check a minute, two findings each
        stamp = (datetime(2026, 9, 11) + timedelta(minutes=i)).strftime("%Y-%m-%dT%H:%M")
        rows += [f"{stamp},3,DEMO-61,RN-P,nirs,L,{60 + i % 20}", f"{stamp},3,DEMO-61,RN-P,pain,,1"]
    path = _write_csv(tmp_path, rows, "big.csv")
    root = Path(__file__).resolve().parent.parent
    killed = 0
    for delay_s in [0.3 + 0.05 * k for k in range(20)]:
        proc = subprocess.Popen(
            [
                sys.executable,
                "-m",
                "vascplan",
                "obs",
                "import",
                str(path),
                "--unit",
                str(unit),
                "--db",
                str(db),
            ],
            cwd=root,
            stdout=subprocess.DEVNULL,
            stderr=subprocess.DEVNULL,
        )
        time.sleep(delay_s)
        if proc.poll() is None:
            proc.send_signal(signal.SIGKILL)
            killed += 1
        proc.wait()
        count = len(_export_rows(unit, db))
        assert count in (1, 1 + len(rows)), count
        print(f"kill after {delay_s:.2f} s: {count - 1} of {len(rows)} findings stored")
        if count > 1:
            break
    assert killed, "no import was still running when the kill came"
    # Whatever happened, the earlier finding is still there.
    assert any(r["item"] == "access" for r in _export_rows(unit, db))
