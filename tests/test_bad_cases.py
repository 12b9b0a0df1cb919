"""The corpus of bad case files: each gives its one clear line, exit 2, no traceback.

The table below is the contract for the wording (reviewed by hand: file, field path,
what is wrong, what is allowed). Files live in tests/data/bad_cases/.
"""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from click.testing import CliRunner

from vascplan.case.load import load_case
from vascplan.cli import cli
from vascplan.errors import InputError
from vascplan.paths import examples_dir

BAD = Path(__file__).parent / "data" / "bad_cases"

REFERENCE_END = "reference length for height 160 cm; give vessels.{0}.length_cm if measured"

EXPECTED = {
    "yaml-syntax.yaml": "line 3: YAML error: expected ',' or '}', but got ':'",
    "json-syntax.json": "line 1: JSON syntax error:"
    " Expecting property name enclosed in double quotes",
    "duplicate-key.yaml": "line 5: YAML error: duplicate key 'L-CFA' (first on line 4)",
    "duplicate-key.json": "line 1: JSON error: duplicate key 'sex' (first on line 1)",
    "duplicate-key-lines.json": "line 4: JSON error: duplicate key 'height_cm' (first on line 4)",
    "empty.yaml": "file is empty",
    "not-utf8.yaml": "line 4: not UTF-8 text (byte 113 cannot be decoded); save the file as UTF-8",
    "top-level-list.yaml": "expected a mapping of case fields at the top, got a list",
    "wrong-format.yaml": "format: must be one of: vascplan-case/1 (got 'vascplan-case/2')"
    " (did you mean 'vascplan-case/1'?)",
    "missing-patient.yaml": "patient: required field is missing",
    "unknown-top-field.yaml": "lesion: unknown field (did you mean 'lesions'?); allowed: format, "
    "patient, vessels, lesions, stents, grafts, avoid, procedure, access_in_place, "
    "access_tried, weights, limits",
    "unknown-field.yaml": "vessels.R-CFA.diameter: unknown field (did you mean 'diameter_mm'?); "
    "allowed: diameter_mm, length_cm, calcification",
    "unknown-segment.yaml": "vessels.R-CFX: unknown segment 'R-CFX' (did you mean 'R-CFA'?)",
    "lowercase-segment.yaml": "lesions.0.segment: unknown segment 'l-sfa' (did you mean 'L-SFA'?)",
    "segment-without-side.yaml": "stents.0.segment: unknown segment 'SFA'"
    " (did you mean 'L-SFA' or 'R-SFA'?)",
    "graft-unknown-end.yaml": "grafts.0.to: unknown segment 'L-POPL' (did you mean 'L-POP'?)",
    "avoid-unknown-site.yaml": "avoid.0.site: unknown segment 'radial'"
    " (did you mean 'L-RAD' or 'R-RAD'?)",
    "diameter-implausible.yaml": "vessels.R-CFA.diameter_mm: 26 mm is outside the plausible range"
    " for R-CFA (1.5-16 mm)",
    "diameter-zero.yaml": "vessels.L-RAD.diameter_mm: must be more than 0 mm (got 0)",
    "stenosis-over-100.yaml": "lesions.0.stenosis_pct: must be 0-100% (got 120)",
    "stenosis-negative.yaml": "lesions.0.stenosis_pct: must be 0-100% (got -5)",
    "stenosis-of-100.yaml": "lesions.0.stenosis_pct: a 100% stenosis is an occlusion;"
    " use kind: occlusion",
    "stenosis-without-percent.yaml": "lesions.0.stenosis_pct: required for a stenosis"
    " (percent diameter stenosis, 0-100)",
    "occlusion-not-100.yaml": "lesions.0.stenosis_pct: an occlusion has stenosis_pct 100"
    " (got 90); use kind: stenosis for less",
    "occlusion-not-100.json": "lesions.0.stenosis_pct: an occlusion has stenosis_pct 100"
    " (got 80); use kind: stenosis for less",
    "caps-on-stenosis.yaml": "lesions.0.proximal_cap: cap morphology is for occlusions only"
    " (this lesion is a stenosis)",
    "lesion-past-end.yaml": "lesions.0.length_cm: lesion reaches 30 cm, past the end of L-SFA"
    " (25.5 cm, " + REFERENCE_END.format("L-SFA") + ")",
    "lesion-past-measured-end.yaml": "lesions.0.length_cm: lesion reaches 15 cm, past the end"
    " of L-POP"
    " (14.0 cm, measured)",
    "stent-past-end.yaml": "stents.0.length_cm: stent reaches 7 cm, past the end of R-CIA (6.0 cm, "
    + REFERENCE_END.format("R-CIA")
    + ")",
    "target-past-end.yaml": "procedure.target.at_cm: target reaches 9 cm, past the end of L-CFA"
    " (4.3 cm, " + REFERENCE_END.format("L-CFA") + ")",
    "height-too-small.yaml": "patient.height_cm: must be 100-230 cm (got 95)",
    "height-too-large.yaml": "patient.height_cm: must be 100-230 cm (got 250)",
    "height-as-text.yaml": "patient.height_cm: must be a number, got text '160'",
    "bool-as-number.yaml": "patient.anticoagulated: must be true or false, got the number 1",
    "sex-misspelt.yaml": "patient.sex: must be one of: female, male, unspecified (got 'femal')"
    " (did you mean 'female'?)",
    "vessels-as-list.yaml": "vessels: must be a mapping of fields, got a list",
    "graft-same-segment.yaml": "grafts.0.to: a graft must join two different segments",
    "graft-duplicate-name.yaml": "grafts.1.name: duplicate graft name 'bypass'",
    "graft-bad-name.yaml": "grafts.0.name: may hold only letters, digits, spaces and . _ -"
    " (first a letter or digit) (got '../etc')",
    "purpose-unknown.yaml": "procedure.purpose: must be one of: treat, support (got 'repair')"
    " (did you mean 'treat'?)",
    "sheath-zero.yaml": "procedure.sheath.size_fr: must be more than 0 and at most 40 Fr (got 0)",
    "weights-not-numbers.yaml": "weights.calcification: must be a number, got text 'high'",
    "lesion-start-past-end.yaml": "lesions.0.start_cm: lesion starts at 6 cm, past the end of"
    " R-CFA (4.3 cm, reference length for height 176 cm; give vessels.R-CFA.length_cm if"
    " measured)",
    "graft-inflow-past-end.yaml": "grafts.0.from_cm: graft inflow reaches 7 cm, past the end"
    " of R-CFA (4.3 cm, reference length for height 176 cm; give vessels.R-CFA.length_cm if"
    " measured)",
    "stent-implausible-diameter.yaml": "stents.0.diameter_mm: 8 mm is outside the plausible"
    " range for a stent in R-RAD (1-5 mm)",
    "stent-too-wide.json": "stents.0.diameter_mm: 80 mm is outside the plausible range for a"
    " stent in L-CIA (4-30 mm)",
    "diameter-nan.yaml": "vessels.R-CFA.diameter_mm: must be a finite number, got nan",
    "vessel-empty-value.yaml": "vessels.R-CFA: must be a mapping of fields,"
    " got nothing (an empty value)",
    "ref-as-number.yaml": "patient.ref: must be text, got the number 458"
    " (put it in quotes to keep it as written)",
    "target-unknown-segment.yaml": "procedure.target.segment: unknown segment 'L-ATX'"
    " (did you mean 'L-ATA' or 'L-AXA'?)",
    "vessel-by-plain-name.yaml": "vessels.popliteal: unknown segment 'popliteal'"
    " (did you mean 'L-POP' or 'R-POP'?)",
    "segment-no-suggestion.yaml": "avoid.0.site: unknown segment 'xyz'; allowed: the ids of"
    " data/anatomy/segments.csv such as L-CFA, R-RAD, AO-INFRA (vascplan schema lists them)",
    "graft-from-unknown.yaml": "grafts.0.from: unknown segment 'L-AXX' (did you mean 'L-AXA'?)",
    "unknown-segment.json": "vessels.r-sfa: unknown segment 'r-sfa' (did you mean 'R-SFA'?)",
    "height-too-small.json": "patient.height_cm: must be 100-230 cm (got 99)",
    "two-documents.yaml": "line 3: YAML error: expected a single document in the stream,"
    " but found another document",
    "nested-too-deep.yaml": "nested far too deeply to be a case or unit file",
    "not-utf8.json": "line 1: not UTF-8 text (byte 53 cannot be decoded); save the file as UTF-8",
    "empty.json": "file is empty",
    "key-as-number.yaml": "patient: keys must be text (field names such as height_cm), got 5",
    "top-key-as-number.yaml": "keys must be text (field names such as patient), got 2",
}


def test_every_corpus_file_has_an_expected_message():
    assert sorted(p.name for p in BAD.iterdir()) == sorted(EXPECTED)


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_bad_case_message(name):
    path = BAD / name
    with pytest.raises(InputError) as exc:
        load_case(path)
    assert str(exc.value) == f"{path}: {EXPECTED[name]}"


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_validate_prints_one_line_and_exits_2(name):
    path = BAD / name
    result = CliRunner().invoke(cli, ["validate", str(path)])
    assert result.exit_code == 2
    assert result.stderr == f"error: {path}: {EXPECTED[name]}\n"
    assert "Traceback" not in result.output


def test_far_too_large_file(tmp_path):
    path = tmp_path / "huge.yaml"
    path.write_bytes(b"format: vascplan-case/1\n" + b"#" * 2_000_000)
    result = CliRunner().invoke(cli, ["validate", str(path)])
    assert result.exit_code == 2
    assert result.stderr == (
        f"error: {path}: file is 2,000,024 bytes, far too large (at most 2,000,000 bytes)\n"
    )


def test_tree_refuses_a_bad_case_with_one_line():
    path = BAD / "stenosis-over-100.yaml"
    result = CliRunner().invoke(cli, ["tree", str(path)])
    assert result.exit_code == 2
    assert result.stderr == f"error: {path}: {EXPECTED['stenosis-over-100.yaml']}\n"


def test_not_a_regular_file_is_refused_without_reading(tmp_path):
    # A named pipe (or a device such as /dev/zero) would block or never end: refused by type.
    fifo = tmp_path / "case.yaml"
    os.mkfifo(fifo)
    result = CliRunner().invoke(cli, ["validate", str(fifo)])
    assert result.exit_code == 2
    assert result.stderr == (
        f"error: {fifo}: is not a regular file, expected a YAML or JSON file\n"
    )


def test_deeply_nested_json_gives_one_line(tmp_path):
    path = tmp_path / "deep.json"
    path.write_text('{"format": ' + "[" * 50_000 + "]" * 50_000 + "}")
    result = CliRunner().invoke(cli, ["validate", str(path)])
    assert result.exit_code == 2
    assert result.stderr == f"error: {path}: nested far too deeply to be a case or unit file\n"


def test_occlusion_with_null_percent_is_100(tmp_path):
    path = tmp_path / "case.yaml"
    path.write_text(
        "format: vascplan-case/1\npatient: {ref: DEMO-98, sex: male, height_cm: 170}\n"
        "lesions: [{segment: L-SFA, kind: occlusion, stenosis_pct: null,"
        " start_cm: 1, length_cm: 2}]\n"
    )
    assert load_case(path).lesions[0].stenosis_pct == 100


def test_validate_several_files_reports_each_and_exits_2(tmp_path):
    good = examples_dir() / "case-DEMO-21-graft-and-pedal.yaml"
    bad_a, bad_b = BAD / "height-too-small.json", BAD / "stent-implausible-diameter.yaml"
    result = CliRunner().invoke(cli, ["validate", str(bad_a), str(good), str(bad_b)])
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [
        f"error: {bad_a}: {EXPECTED['height-too-small.json']}",
        f"error: {bad_b}: {EXPECTED['stent-implausible-diameter.yaml']}",
    ]
    assert f"ok: {good} (DEMO-21)" in result.stdout


def test_validate_names_a_folder_and_still_checks_the_other_files(tmp_path):
    good = examples_dir() / "case-DEMO-07-sfa-occlusion.yaml"
    result = CliRunner().invoke(cli, ["validate", str(tmp_path), str(good)])
    assert result.exit_code == 2
    assert result.stderr == f"error: {tmp_path}: is a folder, expected a YAML or JSON file\n"
    assert f"ok: {good} (DEMO-07)" in result.stdout


def test_tree_of_a_missing_file_is_one_line():
    result = CliRunner().invoke(cli, ["tree", "no-such-case.yaml"])
    assert result.exit_code == 2
    assert result.stderr == "error: no-such-case.yaml: file not found\n"


def test_an_empty_section_means_none(tmp_path):
    # A section left empty, or holding only commented-out entries, is read as none.
    path = tmp_path / "case.yaml"
    path.write_text(
        "format: vascplan-case/1\npatient: {ref: DEMO-87, sex: female, height_cm: 150}\n"
        "vessels:\nlesions:\n  # - {segment: L-SFA, kind: occlusion}\nstents:\ngrafts:\n"
        "avoid:\nprocedure:\n"
    )
    case = load_case(path)
    assert (case.vessels, case.lesions, case.stents, case.grafts, case.avoid) == (
        {},
        [],
        [],
        [],
        [],
    )
    assert case.procedure is None
