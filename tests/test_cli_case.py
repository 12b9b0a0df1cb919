"""validate, tree, schema and demo through the command line (click's CliRunner)."""

from __future__ import annotations

import json
from pathlib import Path

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
    # R-EIA: nothing measured, so its MLD (the reference diameter) is marked too. DEMO-07 is
    # a woman: iliac MLD 7.2 mm in women (Chiam et al., Int J Cardiol 2013); EIA length
    # 11.0 cm (CT 11.09 +/- 1.60 cm, Lunn-Collier et al., Transl Res Anat 2024, rounded).
    assert rows["R-EIA"].split()[5:9] == ["7.2*", "7.2*", "11.0*", "none*"]
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


def test_mld_marked_when_it_rests_on_a_reference_diameter():
    # R-CIA reference 10.9 mm (Kim 2022, pooled) with a 50% stenosis: MLD 5.45 mm, assumed.
    # L-CIA measured 9 mm with a 50% stenosis: 4.5 mm, measured. R-EIA reference with a 6 mm
    # stent narrower than the 8 mm (male) reference: the stent's 6 mm is the case's figure.
    # L-SFA occlusion: 0, whatever its diameter.
    from vascplan.anatomy.summary import tree_summary

    case = Case.model_validate(
        {
            "format": "vascplan-case/1",
            "patient": {"ref": "DEMO-81", "sex": "male", "height_cm": 175},
            "vessels": {"L-CIA": {"diameter_mm": 9.0}},
            "lesions": [
                {
                    "segment": "R-CIA",
                    "kind": "stenosis",
                    "stenosis_pct": 50,
                    "start_cm": 1,
                    "length_cm": 2,
                },
                {
                    "segment": "L-CIA",
                    "kind": "stenosis",
                    "stenosis_pct": 50,
                    "start_cm": 1,
                    "length_cm": 2,
                },
                {"segment": "L-SFA", "kind": "occlusion", "start_cm": 5, "length_cm": 10},
            ],
            "stents": [{"segment": "R-EIA", "start_cm": 1, "length_cm": 4, "diameter_mm": 6}],
        }
    )
    segs = {s["id"]: s for s in tree_summary(build_tree(case))["segments"]}
    # R-CIA unmeasured in a man: reference mean lumen 11.0 mm (data/anatomy/segments.csv),
    # a 50% stenosis leaves 11.0 x 0.5 = 5.5 mm.
    assert (segs["R-CIA"]["mld_mm"], segs["R-CIA"]["mld_source"]) == (
        pytest.approx(5.5, abs=0.01),
        "reference",
    )
    assert segs["R-CIA"]["lesions"][0]["mld_source"] == "reference"
    assert (segs["L-CIA"]["mld_mm"], segs["L-CIA"]["mld_source"]) == (4.5, "measured")
    assert (segs["R-EIA"]["mld_mm"], segs["R-EIA"]["mld_source"]) == (6.0, "measured")
    assert (segs["L-SFA"]["mld_mm"], segs["L-SFA"]["mld_source"]) == (0.0, "measured")
    assert segs["R-SFA"]["mld_source"] == "reference"


# Keywords of JSON Schema draft 2020-12 (json-schema.org, Core and Validation vocabularies)
# that the case schema may use; anything else would be silently ignored by validators.
_KEYWORDS = {
    "$schema",
    "$id",
    "$defs",
    "$ref",
    "title",
    "description",
    "default",
    "type",
    "enum",
    "const",
    "properties",
    "additionalProperties",
    "propertyNames",
    "required",
    "items",
    "anyOf",
    "allOf",
    "if",
    "then",
    "minimum",
    "maximum",
    "exclusiveMinimum",
    "exclusiveMaximum",
    "minLength",
    "maxLength",
    "pattern",
}
_TYPES = {"null", "boolean", "object", "array", "number", "string", "integer"}


def _walk_schema(node, root, where="#"):
    assert isinstance(node, dict), where
    assert set(node) <= _KEYWORDS, (where, set(node) - _KEYWORDS)
    if "type" in node:
        assert node["type"] in _TYPES, where
    if "$ref" in node:
        assert node["$ref"].startswith("#/$defs/"), where
        assert node["$ref"].split("/")[-1] in root["$defs"], where
    for key in ("properties", "$defs"):
        for name, sub in node.get(key, {}).items():
            _walk_schema(sub, root, f"{where}/{key}/{name}")
    for key in ("items", "additionalProperties", "propertyNames", "if", "then"):
        if isinstance(node.get(key), dict):
            _walk_schema(node[key], root, f"{where}/{key}")
    for key in ("anyOf", "allOf"):
        for i, sub in enumerate(node.get(key, [])):
            _walk_schema(sub, root, f"{where}/{key}/{i}")
    if "required" in node and "properties" in node and "if" not in node:
        assert set(node["required"]) <= set(node["properties"]), where


def test_schema_is_well_formed_draft_2020_12():
    schema = json.loads(run("schema").stdout)
    assert schema["$schema"] == "https://json-schema.org/draft/2020-12/schema"
    _walk_schema(schema, schema)
    lesion = schema["$defs"]["Lesion"]
    # The cross-field lesion rules are stated, not only the per-field ranges.
    stenosis_rule = next(
        r for r in lesion["allOf"] if r["if"]["properties"]["kind"]["const"] == "stenosis"
    )
    assert stenosis_rule["then"]["required"] == ["stenosis_pct"]
    assert stenosis_rule["then"]["properties"]["stenosis_pct"]["exclusiveMaximum"] == 100


def test_schema_accepts_examples_and_refuses_field_errors_with_jsonschema():
    # The schema checked by an outside implementation of JSON Schema (draft 2020-12).
    import jsonschema
    import yaml

    schema = json.loads(run("schema").stdout)
    jsonschema.Draft202012Validator.check_schema(schema)
    validator = jsonschema.Draft202012Validator(schema)
    for path in EXAMPLES:
        assert list(validator.iter_errors(yaml.safe_load(path.read_text()))) == []
    bad = Path(__file__).parent / "data" / "bad_cases"
    for name in ("occlusion-not-100.yaml", "caps-on-stenosis.yaml", "unknown-segment.yaml"):
        assert list(validator.iter_errors(yaml.safe_load((bad / name).read_text())))


def test_version_is_the_package_version_and_single_sourced():
    import tomllib

    import vascplan

    result = run("--version")
    assert result.exit_code == 0
    assert result.stdout == f"vascplan, version {vascplan.__version__}\n"
    project = tomllib.loads((Path(__file__).resolve().parent.parent / "pyproject.toml").read_text())
    assert "version" in project["project"]["dynamic"]
    assert project["tool"]["setuptools"]["dynamic"]["version"] == {"attr": "vascplan.__version__"}
