"""The corpus of bad case files: each gives its one clear line, exit 2, no traceback.

The table below is the contract for the wording (reviewed by hand: file, field path,
what is wrong, what is allowed). Files live in tests/data/bad_cases/.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from click.testing import CliRunner

from vascplan.case.load import load_case
from vascplan.cli import cli
from vascplan.errors import InputError

BAD = Path(__file__).parent / "data" / "bad_cases"

REFERENCE_END = "reference length for height 160 cm; give vessels.{0}.length_cm if measured"

EXPECTED = {
    "yaml-syntax.yaml": "line 3: YAML error: expected ',' or '}', but got ':'",
    "json-syntax.json": "line 1: JSON syntax error:"
    " Expecting property name enclosed in double quotes",
    "duplicate-key.yaml": "line 5: YAML error: duplicate key 'L-CFA' (first on line 4)",
    "duplicate-key.json": "JSON error: duplicate key 'sex'",
    "empty.yaml": "file is empty",
    "not-utf8.yaml": "not UTF-8 text (byte 113 cannot be decoded); save the file as UTF-8",
    "top-level-list.yaml": "expected a mapping of case fields at the top, got a list",
    "wrong-format.yaml": "format: must be one of: vascplan-case/1 (got 'vascplan-case/2')"
    " (did you mean 'vascplan-case/1'?)",
    "missing-patient.yaml": "patient: required field is missing",
    "unknown-top-field.yaml": "lesion: unknown field (did you mean 'lesions'?); allowed: format, "
    "patient, vessels, lesions, stents, grafts, avoid, procedure, weights, limits",
    "unknown-field.yaml": "vessels.R-CFA.diameter: unknown field (did you mean 'diameter_mm'?); "
    "allowed: diameter_mm, length_cm, calcification",
    "unknown-segment.yaml": "vessels.R-CFX: unknown segment 'R-CFX' (did you mean 'R-CFA'?)",
    "lowercase-segment.yaml": "lesions.0.segment: unknown segment 'l-sfa' (did you mean 'L-SFA'?)",
    "segment-without-side.yaml": "stents.0.segment: unknown segment 'SFA'"
    " (did you mean 'L-SFA' or 'R-SFA'?)",
    "graft-unknown-end.yaml": "grafts.0.to: unknown segment 'L-POPL' (did you mean 'L-POP'?)",
    "avoid-unknown-site.yaml": "avoid.0.site: unknown segment 'radial' (did you mean 'R-RAD'?)",
    "diameter-implausible.yaml": "vessels.R-CFA.diameter_mm: 26 mm is outside the plausible range"
    " for R-CFA (3.5-16 mm)",
    "diameter-zero.yaml": "vessels.L-RAD.diameter_mm: must be more than 0 mm (got 0)",
    "stenosis-over-100.yaml": "lesions.0.stenosis_pct: must be 0-100% (got 120)",
    "stenosis-negative.yaml": "lesions.0.stenosis_pct: must be 0-100% (got -5)",
    "stenosis-of-100.yaml": "lesions.0: a 100% stenosis is an occlusion; use kind: occlusion",
    "stenosis-without-percent.yaml": "lesions.0: stenosis_pct is required for a stenosis"
    " (percent diameter, 0-100)",
    "occlusion-not-100.yaml": "lesions.0: an occlusion has stenosis_pct 100;"
    " use kind: stenosis for less",
    "caps-on-stenosis.yaml": "lesions.0: proximal_cap and distal_cap are for occlusions only",
    "lesion-past-end.yaml": "lesions.0: lesion reaches 30 cm, past the end of L-SFA (25.5 cm, "
    + REFERENCE_END.format("L-SFA")
    + ")",
    "lesion-past-measured-end.yaml": "lesions.0: lesion reaches 15 cm, past the end of L-POP"
    " (14.0 cm, measured)",
    "stent-past-end.yaml": "stents.0: stent reaches 7 cm, past the end of R-CIA (6.0 cm, "
    + REFERENCE_END.format("R-CIA")
    + ")",
    "target-past-end.yaml": "procedure.target.at_cm: target reaches 9 cm, past the end of L-CFA"
    " (4.3 cm, " + REFERENCE_END.format("L-CFA") + ")",
    "height-too-small.yaml": "patient.height_cm: must be 100-230 cm (got 95)",
    "height-too-large.yaml": "patient.height_cm: must be 100-230 cm (got 250)",
    "height-as-text.yaml": "patient.height_cm: must be a number, got text '160'",
    "bool-as-number.yaml": "patient.anticoagulated: must be true or false, got int 1",
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
