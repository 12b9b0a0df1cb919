"""validate, tree, schema and demo through the command line (click's CliRunner)."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from vascplan.anatomy.graph import build_tree
from vascplan.case.load import load_case
from vascplan.case.model import Case
from vascplan.cli import cli
from vascplan.paths import examples_dir
from vascplan.safety import CAUTION, REFERENCE_MARK

EXAMPLES = sorted(examples_dir().glob("case-*.yaml"))
DEMO_07 = examples_dir() / "case-DEMO-07-sfa-occlusion.yaml"


def run(*args: str):
    return CliRunner().invoke(cli, list(args))


def test_validate_all_examples():
    result = run("validate", *map(str, EXAMPLES))
    assert result.exit_code == 0, result.output
    lines = result.stdout.splitlines()
    assert lines[: len(EXAMPLES)] == [f"ok: {p} ({load_case(p).patient.ref})" for p in EXAMPLES]
    assert lines[-1] == f"Caution: {CAUTION}"


def test_validate_mixed_reports_each_file_and_exits_2(tmp_path):
    bad = tmp_path / "bad.yaml"
    bad.write_text("format: vascplan-case/1\n")
    result = run("validate", str(DEMO_07), str(bad))
    assert result.exit_code == 2
    assert result.stdout.splitlines()[0] == f"ok: {DEMO_07} (DEMO-07)"
    assert result.stderr == f"error: {bad}: patient: required field is missing\n"


def test_tree_table_marks_reference_values():
    result = run("tree", str(DEMO_07))
    assert result.exit_code == 0, result.output
    rows = {line.split()[0]: line for line in result.stdout.splitlines() if line.strip()}
    # L-RAD diameter measured (2.2, unmarked); its length is a reference estimate (marked).
    assert "2.2 " in rows["L-RAD"] and "2.2*" not in rows["L-RAD"]
    assert f"{REFERENCE_MARK}" in rows["L-RAD"]
    # L-SFA: diameter and length both measured, occlusion makes the MLD 0.
    sfa = rows["L-SFA"].split()
    assert sfa[5:9] == ["5.2", "0.0", "29.0", "none*"]
    # R-EIA: nothing measured.
    assert rows["R-EIA"].split()[5:9] == ["7.0*", "7.0", "9.0*", "none*"]
    assert "AVOID: dialysis fistula planned" in rows["L-RAD"]
    assert result.stdout.rstrip().endswith(f"Caution: {CAUTION}")
    assert "Legend: * = reference value" in result.stdout


def test_tree_json_contract_checked_through_the_library():
    result = run("tree", "--format", "json", str(DEMO_07))
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    case = load_case(DEMO_07)
    tree = build_tree(case)
    assert data["case"] == "DEMO-07" and data["caution"] == CAUTION
    assert [s["id"] for s in data["segments"]] == tree.segment_ids()
    for seg in data["segments"]:
        for key in (
            "id",
            "name",
            "side",
            "diameter_mm",
            "diameter_source",
            "length_cm",
            "length_source",
            "mld_mm",
            "lesions",
        ):
            assert key in seg
        measured = case.vessels.get(seg["id"])
        has_d = measured is not None and measured.diameter_mm is not None
        assert seg["diameter_source"] == ("measured" if has_d else "reference")
        assert seg["mld_mm"] == pytest.approx(tree.mld(seg["id"]), abs=0.005)
    sfa = next(s for s in data["segments"] if s["id"] == "L-SFA")
    assert sfa["lesions"][0]["kind"] == "occlusion" and sfa["lesions"][0]["end_cm"] == 22
    assert any("R-EIA diameter is a reference value" in a for a in data["assumptions"])


def test_tree_out_writes_file(tmp_path):
    out = tmp_path / "t.json"
    result = run("tree", "--format", "json", "--out", str(out), str(DEMO_07))
    assert result.exit_code == 0
    assert json.loads(out.read_text())["case"] == "DEMO-07"


def test_schema_describes_the_case_file():
    result = run("schema")
    assert result.exit_code == 0
    schema = json.loads(result.stdout)
    assert set(schema["properties"]) == {f.alias or n for n, f in Case.model_fields.items()}
    assert schema["additionalProperties"] is False
    graft = schema["$defs"]["Graft"]["properties"]
    assert {"from", "to", "from_cm", "to_cm"} <= set(graft)
    assert "R-POP" in graft["to"]["enum"]
    assert CAUTION in schema["description"]


def test_demo_writes_trees(tmp_path):
    out = tmp_path / "demo"
    result = run("demo", "--out", str(out))
    assert result.exit_code == 0, result.output
    refs = [load_case(p).patient.ref for p in EXAMPLES]
    for ref in refs:
        data = json.loads((out / f"{ref}-tree.json").read_text())
        assert data["case"] == ref
        assert f"wrote {out / f'{ref}-tree.json'}" in result.stdout
    assert not [p for p in out.iterdir() if p.name.endswith(".tmp")]


@pytest.mark.parametrize("command", ["validate", "tree", "schema", "demo"])
def test_help_has_an_example(command):
    result = run(command, "--help")
    assert result.exit_code == 0
    assert f"Example: vascplan {command}" in result.stdout


def test_tree_shows_graft_with_estimated_length():
    path = examples_dir() / "case-DEMO-21-graft-and-pedal.yaml"
    result = run("tree", str(path))
    assert result.exit_code == 0, result.output
    row = next(line for line in result.stdout.splitlines() if line.startswith("GRAFT:fem-pop"))
    tree = build_tree(load_case(path))
    assert f"{tree.segment('GRAFT:fem-pop')['length_cm']:.1f}~" in row
    assert "patent" in row


def test_json_case_file_is_accepted(tmp_path):
    from vascplan.fileio import read_document

    data = read_document(DEMO_07)
    path = tmp_path / "case.json"
    path.write_text(json.dumps(data))
    result = run("validate", str(path))
    assert result.exit_code == 0
    assert result.stdout.splitlines()[0] == f"ok: {path} (DEMO-07)"


def test_tree_assumptions_lists_each_reference_value():
    result = run("tree", "--assumptions", str(DEMO_07))
    assert result.exit_code == 0
    listed = [line for line in result.stdout.splitlines() if line.startswith("Assumption: ")]
    assert len(listed) == len(build_tree(load_case(DEMO_07)).assumptions())
    assert any(
        line.startswith("Assumption: R-EIA diameter is a reference value") for line in listed
    )
