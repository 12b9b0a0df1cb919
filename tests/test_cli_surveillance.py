"""``vascplan risk`` and ``vascplan rota`` through click's CliRunner."""

from __future__ import annotations

import json
from datetime import datetime
from pathlib import Path

import icalendar
from click.testing import CliRunner

from vascplan.cli import cli
from vascplan.paths import examples_dir
from vascplan.safety import CAUTION

DEMO = str(examples_dir() / "unit-demo.yaml")


def _run(*args: str):
    return CliRunner().invoke(cli, list(args))


def test_risk_json_contract():
    res = _run("risk", DEMO, "--at", "2026-12-02T13:00", "--format", "json")
    assert res.exit_code == 0, res.output
    doc = json.loads(res.output)
    assert doc["caution"] == CAUTION
    by_ref = {p["ref"]: p for p in doc["patients"]}
    assert set(by_ref) == {"DEMO-11", "DEMO-12", "DEMO-13", "DEMO-14", "DEMO-15", "DEMO-16"}
    for p in doc["patients"]:
        assert {"ref", "bed", "tier", "sar", "dpc_advised", "reasons"} <= set(p)
        assert p["tier"] in ("standard", "raised", "high")
    # DEMO-16: 14 Fr sheath (5.65 mm outer, wall table) in a 5.2 mm CFA: SAR >= 1.05.
    assert by_ref["DEMO-16"]["sar"] >= 1.05 and by_ref["DEMO-16"]["dpc_advised"] is True
    # DEMO-12: measured 5.7 mm outer diameter in a 9.1 mm CFA (as in its case file).
    assert by_ref["DEMO-12"]["sar"] == round(5.7 / 9.1, 3)
    assert by_ref["DEMO-12"]["dpc_advised"] is False
    # DEMO-15: femoral VA-ECMO without a distal cannula: advised (Marbach 2022 and others).
    assert by_ref["DEMO-15"]["dpc_advised"] is True
    # DEMO-13 has no measured vessel: the reference value is an assumption.
    assert any("DEMO-13" in a for a in doc["assumptions"])


def test_risk_table():
    res = _run("risk", DEMO, "--at", "2026-12-02T13:00")
    assert res.exit_code == 0
    assert CAUTION in res.output and "DEMO-13" in res.output


def test_rota_json_contract():
    res = _run("rota", DEMO, "--from", "2026-12-02T07:30", "--hours", "12", "--format", "json")
    assert res.exit_code == 0, res.output
    doc = json.loads(res.output)
    assert {"unit", "from", "to", "checks", "unmet", "caution"} <= set(doc)
    assert doc["from"] == "2026-12-02T07:30:00+00:00" and doc["to"] == "2026-12-02T19:30:00+00:00"
    for c in doc["checks"]:
        assert {"time", "due", "bed", "ref", "nurse", "phase", "items"} <= set(c)
        assert datetime.fromisoformat(c["time"]) >= datetime.fromisoformat(c["due"])
    staggered = [c for c in doc["checks"] if c["time"] != c["due"]]
    assert staggered  # RN-B has beds 3 and 4 due together at 10:00 and 10:30


def test_rota_nurse_ics_to_file(tmp_path):
    out = tmp_path / "rn-a.ics"
    res = _run(
        "rota",
        DEMO,
        "--from",
        "2026-12-02T07:30",
        "--hours",
        "12",
        "--nurse",
        "RN-A",
        "--format",
        "ics",
        "-o",
        str(out),
    )
    assert res.exit_code == 0, res.output
    cal = icalendar.Calendar.from_ical(out.read_bytes())
    events = list(cal.walk("VEVENT"))
    assert events and all(
        "bed 1" in str(e["SUMMARY"]) or "bed 2" in str(e["SUMMARY"]) for e in events
    )
    assert not list(tmp_path.glob(".*.tmp"))


def test_rota_csv():
    res = _run("rota", DEMO, "--from", "2026-12-02T07:30", "--hours", "2", "--format", "csv")
    assert res.exit_code == 0
    assert res.output.splitlines()[0].startswith("time,due,bed,ref,nurse,phase,items")


def test_rota_errors_are_one_line():
    res = _run("rota", DEMO, "--from", "2026-03-29T01:30", "--hours", "2")
    assert res.exit_code == 2
    assert res.output.strip() == (
        "error: --from: 2026-03-29 01:30 does not exist in Europe/London (clocks go forward); "
        "give the time with its UTC offset"
    )
    res = _run("rota", DEMO, "--from", "2026-12-02T07:30", "--hours", "0")
    assert res.exit_code == 2
    assert res.output.strip() == "error: --hours: must be above 0 and at most 744 (got 0)"
    res = _run("rota", DEMO, "--from", "2026-12-02T07:30", "--hours", "2", "--nurse", "RN-Z")
    assert res.exit_code == 2
    assert res.output.strip().startswith("error: --nurse: unknown nurse 'RN-Z'")
    res = _run("risk", DEMO, "--at", "yesterday")
    assert res.exit_code == 2
    assert res.output.strip() == (
        "error: --at: 'yesterday' is not an ISO 8601 time such as 2026-12-01T07:30"
    )


def test_unit_with_unknown_protocol(tmp_path):
    unit = tmp_path / "unit.yaml"
    text = (examples_dir() / "unit-demo.yaml").read_text()
    unit.write_text(text.replace("protocol: standard", "protocol: standrd"))
    res = _run("risk", str(unit), "--at", "2026-12-02T13:00")
    assert res.exit_code == 2
    assert res.output.strip() == (
        f"error: {unit}: protocol: unknown protocol 'standrd' (did you mean 'standard'?); "
        "bundled: standard, or give a path to a protocol file"
    )


def test_help_has_examples():
    for cmd in ("risk", "rota"):
        res = _run(cmd, "--help")
        assert res.exit_code == 0 and "Example: vascplan " + cmd in res.output


def test_demo_surveillance(tmp_path):
    from vascplan.demo.surveillance import demo_surveillance

    paths = demo_surveillance(tmp_path)
    assert {p.name for p in paths} >= {"surveillance-risk.json", "surveillance-rota.ics"}
    assert all(p.is_file() and p.parent == tmp_path for p in paths)
    icalendar.Calendar.from_ical(paths[-1].read_bytes())


def test_unit_file_from_the_readme(tmp_path):
    readme = (Path(__file__).resolve().parent.parent / "README.md").read_text()
    block = readme.split("### The unit file", 1)[1].split("```yaml\n", 1)[1].split("```", 1)[0]
    unit = tmp_path / "my-unit.yaml"
    unit.write_text(block)
    res = _run("risk", str(unit), "--at", "2026-12-02T13:00", "--format", "json")
    assert res.exit_code == 0, res.output
    assert json.loads(res.output)["patients"][0]["tier"] == "high"  # the README's tier event
    res = _run("rota", str(unit), "--from", "2026-12-02T07:30", "--hours", "24", "--format", "ics")
    assert res.exit_code == 0, res.output
    assert len(list(icalendar.Calendar.from_ical(res.output).walk("VEVENT"))) > 24


def test_unit_protocol_path_relative_to_unit_file(tmp_path):
    from vascplan.paths import data_dir

    proto = (data_dir() / "protocols" / "standard.yaml").read_text()
    (tmp_path / "ours.yaml").write_text(proto.replace("name: standard", "name: ours", 1))
    text = (examples_dir() / "unit-demo.yaml").read_text()
    (tmp_path / "unit.yaml").write_text(text.replace("protocol: standard", "protocol: ours.yaml"))
    res = _run(
        "rota",
        str(tmp_path / "unit.yaml"),
        "--from",
        "2026-12-02T07:30",
        "--hours",
        "1",
        "--format",
        "json",
    )
    assert res.exit_code == 0, res.output
    assert json.loads(res.output)["protocol"] == "ours"


def test_demo_step_with_the_demo_runner(tmp_path):
    from vascplan.demo import run_demo
    from vascplan.demo.surveillance import step_surveillance

    lines: list[str] = []
    written = run_demo(
        tmp_path, echo=lines.append, steps=[("limb surveillance", step_surveillance)]
    )
    assert [p.name for p in written][-1] == "surveillance-rota.ics"
    assert lines[0] == "[1/1] limb surveillance"


def test_own_protocol_next_to_the_unit_file_errors_name_it(tmp_path, monkeypatch):
    from vascplan.paths import data_dir

    proto = (data_dir() / "protocols" / "standard.yaml").read_text()
    bad = proto.replace("every_min: {maintenance: 30}\n", "every_min: {maintenance: 90}\n", 1)
    assert bad != proto
    ward = tmp_path / "ward"
    ward.mkdir()
    (ward / "ours.yaml").write_text(bad)
    text = (examples_dir() / "unit-demo.yaml").read_text()
    (ward / "unit.yaml").write_text(text.replace("protocol: standard", "protocol: ours.yaml"))
    monkeypatch.chdir(tmp_path)  # the protocol path is relative to the unit file, not here
    res = _run("risk", "ward/unit.yaml", "--at", "2026-12-02T13:00")
    assert res.exit_code == 2
    assert res.output.strip() == (
        "error: ward/ours.yaml: tiers.raised.every_min.maintenance: a tier may only tighten "
        "a phase: every_min must be 1-60 (got 90)"
    )
    (ward / "unit.yaml").write_text(text.replace("protocol: standard", "protocol: theirs.yaml"))
    res = _run("rota", "ward/unit.yaml", "--from", "2026-12-02T07:30", "--hours", "1")
    assert res.exit_code == 2
    assert res.output.strip() == (
        "error: ward/unit.yaml: protocol: protocol file 'ward/theirs.yaml' not found"
    )
