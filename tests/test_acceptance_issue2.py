"""Acceptance tests for issue 2 (case files, validate, tree, schema, demo, --version).

Black-box: written from the issue text and the README, with cases of our own (invented
patients DEMO-31..DEMO-39, other sides and segments than the bundled examples).
"""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner
from hypothesis import given, settings
from hypothesis import strategies as st

from vascplan.cli import cli
from vascplan.fileio import parse_yaml
from vascplan.safety import CAUTION

ROOT = Path(__file__).resolve().parents[1]

# The segment ids the issue lists: six midline ones and 24 on each side (issue 2, Deliver 3).
MIDLINE = {"AO-ASC", "AO-ARCH", "AO-DESC", "AO-SUPRA", "AO-INFRA", "BCT"}
SIDED = ["SCA", "AXA", "BRA", "RAD", "ULN", "CIA", "EIA", "IIA", "CFA", "PFA", "SFA", "POP",
         "TPT", "ATA", "PTA", "PER", "DPA", "PLA"]
ALL_IDS = MIDLINE | {f"{s}-{x}" for s in "LR" for x in SIDED}

CASE_31 = """\
format: vascplan-case/1
patient:
  ref: DEMO-31
  sex: male
  height_cm: 186
  weight_kg: 88
vessels:
  L-CFA: {diameter_mm: 8.4, calcification: mild}
  R-BRA: {diameter_mm: 4.1}
  R-POP: {length_cm: 19}
lesions:
  - {segment: R-POP, kind: stenosis, stenosis_pct: 50, start_cm: 3, length_cm: 2,
     calcification: moderate}
  - segment: L-ATA
    kind: occlusion
    stenosis_pct: 100
    start_cm: 5
    length_cm: 10
    calcification: mild
    proximal_cap: flush
    distal_cap: blunt
stents:
  - {segment: L-EIA, start_cm: 1, length_cm: 4, diameter_mm: 7}
grafts:
  - {name: xfem, from: L-CFA, from_cm: 1, to: R-CFA, to_cm: 2, diameter_mm: 8, patent: true}
avoid:
  - {site: R-RAD, reason: radial graft harvest planned}
procedure:
  purpose: treat
  target: {segment: R-POP, at_cm: 4}
  sheath: {size_fr: 5, length_cm: 11}
  device: {profile_fr: 5, working_length_cm: 135}
"""

MINIMAL = """\
format: vascplan-case/1
patient: {ref: DEMO-3X, sex: SEX, height_cm: HEIGHT}
"""


def run(*args: str):
    return CliRunner().invoke(cli, list(args))


def minimal(tmp_path: Path, ref: str = "DEMO-32", sex: str = "female", height: float = 165,
            extra: str = "") -> Path:
    text = MINIMAL.replace("DEMO-3X", ref).replace("SEX", sex).replace("HEIGHT", str(height))
    p = tmp_path / f"{ref}-{sex}-{height}.yaml"
    p.write_text(text + extra, encoding="utf-8")
    return p


@pytest.fixture()
def case31(tmp_path: Path) -> Path:
    p = tmp_path / "DEMO-31.yaml"
    p.write_text(CASE_31, encoding="utf-8")
    return p


def tree_json(path: Path) -> dict:
    result = run("tree", str(path), "--format", "json")
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


def seg(doc: dict, sid: str) -> dict:
    return next(s for s in doc["segments"] if s["id"] == sid)


# --- --version, schema, validate --------------------------------------------------------------

def test_version_prints_and_exits_0():
    result = run("--version")
    assert result.exit_code == 0
    assert "vascplan" in result.output
    assert any(ch.isdigit() for ch in result.output)


def test_schema_is_a_json_schema_of_the_case_fields():
    result = run("schema")
    assert result.exit_code == 0, result.output
    schema = json.loads(result.stdout)
    assert schema.get("type") == "object"
    text = json.dumps(schema)
    # The field names the issue fixes as the user-facing interface (issue 2, Deliver 5).
    for name in ("format", "patient", "vessels", "lesions", "stents", "grafts", "avoid",
                 "procedure", "height_cm", "stenosis_pct", "proximal_cap", "profile_fr",
                 "working_length_cm", "diameter_mm"):
        assert name in text, name


def test_schema_lists_the_allowed_words(case31):
    schema_text = run("schema").stdout
    for word in ("tapered", "blunt", "flush", "stenosis", "occlusion", "treat", "support"):
        assert f'"{word}"' in schema_text, word


def test_validate_own_case_yaml_and_json(case31, tmp_path):
    import yaml

    as_json = tmp_path / "DEMO-31.json"
    as_json.write_text(json.dumps(yaml.safe_load(CASE_31)), encoding="utf-8")
    result = run("validate", str(case31), str(as_json))
    assert result.exit_code == 0, result.output
    assert CAUTION in result.output


def test_validate_many_files_one_bad_exits_2(case31, tmp_path):
    bad = minimal(tmp_path, height=250)
    result = run("validate", str(case31), str(bad))
    assert result.exit_code == 2
    err = result.stderr.strip().splitlines()
    assert len(err) == 1
    assert err[0].startswith(f"error: {bad}: patient.height_cm:")
    assert "100-230" in err[0]


# --- bad input: one line naming file and field, exit 2, no traceback ------------------------

def bad_line(tmp_path: Path, name: str, content: bytes | str) -> str:
    p = tmp_path / name
    if isinstance(content, str):
        content = content.encode("utf-8")
    p.write_bytes(content)
    result = run("validate", str(p))
    assert result.exit_code == 2, result.output
    assert "Traceback" not in result.output
    lines = [ln for ln in result.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, result.stderr
    assert lines[0].startswith(f"error: {p}: "), lines[0]
    return lines[0][len(f"error: {p}: "):]


HEAD = "format: vascplan-case/1\npatient: {ref: DEMO-33, sex: male, height_cm: 172}\n"


def test_bad_yaml_syntax_names_the_line(tmp_path):
    msg = bad_line(tmp_path, "syntax.yaml", HEAD + "vessels:\n  L-CFA: {diameter_mm: 7\n")
    assert "line" in msg.lower()


def test_bad_unknown_segment_did_you_mean(tmp_path):
    msg = bad_line(tmp_path, "seg.yaml", HEAD + "vessels:\n  L-PTX: {diameter_mm: 2.5}\n")
    assert msg.startswith("vessels.L-PTX:")
    assert "L-PTA" in msg and "did you mean" in msg


def test_bad_unknown_segment_in_lesion(tmp_path):
    msg = bad_line(tmp_path, "les.yaml", HEAD + (
        "lesions:\n  - {segment: R-POPL, kind: stenosis, stenosis_pct: 40, start_cm: 1,"
        " length_cm: 1}\n"))
    assert msg.startswith("lesions.0.segment:")
    assert "R-POP" in msg


@pytest.mark.parametrize("value", ["0", "-3.1"])
def test_bad_diameter_not_positive(tmp_path, value):
    msg = bad_line(tmp_path, "d.yaml", HEAD + f"vessels:\n  R-SFA: {{diameter_mm: {value}}}\n")
    assert msg.startswith("vessels.R-SFA.diameter_mm:")


def test_bad_diameter_implausible_for_segment(tmp_path):
    # A 25 mm radial artery is outside any human range (radial ~2-3 mm, Wahood et al. 2022).
    msg = bad_line(tmp_path, "d.yaml", HEAD + "vessels:\n  L-RAD: {diameter_mm: 25}\n")
    assert msg.startswith("vessels.L-RAD.diameter_mm:")


@pytest.mark.parametrize("pct", [120, -5])
def test_bad_stenosis_outside_0_100(tmp_path, pct):
    msg = bad_line(tmp_path, "s.yaml", HEAD + (
        f"lesions:\n  - {{segment: R-SFA, kind: stenosis, stenosis_pct: {pct}, start_cm: 1,"
        " length_cm: 2}\n"))
    assert msg.startswith("lesions.0.stenosis_pct:")


def test_bad_lesion_past_segment_end(tmp_path):
    # R-CFA is a few cm long (angiographic 4.3 +/- 1.6 cm); 3 + 8 cm runs past its end.
    msg = bad_line(tmp_path, "end.yaml", HEAD + (
        "lesions:\n  - {segment: R-CFA, kind: stenosis, stenosis_pct: 60, start_cm: 3,"
        " length_cm: 8}\n"))
    assert msg.startswith("lesions.0.")
    assert "R-CFA" in msg


def test_bad_stent_past_measured_segment_end(tmp_path):
    msg = bad_line(tmp_path, "stent.yaml", HEAD + (
        "vessels:\n  L-POP: {length_cm: 12}\n"
        "stents:\n  - {segment: L-POP, start_cm: 6, length_cm: 8, diameter_mm: 5}\n"))
    assert msg.startswith("stents.0.")
    assert "L-POP" in msg


@pytest.mark.parametrize("height", [99, 231, 1.7])
def test_bad_height_outside_100_230(tmp_path, height):
    p = minimal(tmp_path, height=height)
    result = run("validate", str(p))
    assert result.exit_code == 2
    assert result.stderr.startswith(f"error: {p}: patient.height_cm:")
    assert "100-230" in result.stderr
    assert len(result.stderr.strip().splitlines()) == 1


def test_bad_wrong_type_quoted_number(tmp_path):
    msg = bad_line(tmp_path, "t.yaml", "format: vascplan-case/1\n"
                   "patient: {ref: DEMO-34, sex: male, height_cm: '170'}\n")
    assert msg.startswith("patient.height_cm:")


def test_bad_wrong_enum_sex(tmp_path):
    msg = bad_line(tmp_path, "sex.yaml",
                   "format: vascplan-case/1\npatient: {ref: DEMO-34, sex: f, height_cm: 170}\n")
    assert msg.startswith("patient.sex:")
    assert "female" in msg and "male" in msg


def test_bad_duplicate_key_yaml(tmp_path):
    msg = bad_line(tmp_path, "dup.yaml", "format: vascplan-case/1\npatient:\n  ref: DEMO-35\n"
                   "  sex: male\n  height_cm: 170\n  height_cm: 171\n")
    assert "duplicate" in msg and "height_cm" in msg


def test_bad_duplicate_key_json(tmp_path):
    msg = bad_line(tmp_path, "dup.json", '{"format": "vascplan-case/1", "format": "x",'
                   ' "patient": {"ref": "DEMO-35", "sex": "male", "height_cm": 170}}')
    assert "duplicate" in msg and "format" in msg


def test_bad_empty_file(tmp_path):
    msg = bad_line(tmp_path, "empty.yaml", "")
    assert "empty" in msg.lower()


def test_bad_not_utf8(tmp_path):
    msg = bad_line(tmp_path, "latin1.yaml",
                   (HEAD + "avoid:\n  - {site: L-RAD, reason: 'fístula'}\n").encode("latin-1"))
    assert "UTF-8" in msg


def test_bad_file_far_too_large(tmp_path):
    filler = "# " + "x" * 78 + "\n"
    msg = bad_line(tmp_path, "huge.yaml", HEAD + filler * 200_000)  # ~16 MB of comments
    assert "large" in msg.lower() or "size" in msg.lower()


def test_bad_occlusion_cap_on_stenosis_or_bad_cap_word(tmp_path):
    msg = bad_line(tmp_path, "cap.yaml", HEAD + (
        "lesions:\n  - {segment: L-SFA, kind: occlusion, start_cm: 2, length_cm: 5,"
        " proximal_cap: round}\n"))
    assert msg.startswith("lesions.0.proximal_cap:")
    assert "tapered" in msg


def test_bad_input_on_tree_too(tmp_path):
    p = minimal(tmp_path, height=90)
    result = run("tree", str(p))
    assert result.exit_code == 2
    assert result.stderr.startswith(f"error: {p}: patient.height_cm:")
    assert "Traceback" not in result.output


def test_missing_file_is_one_line_exit_2(tmp_path):
    result = run("validate", str(tmp_path / "nope.yaml"))
    assert result.exit_code == 2
    assert "Traceback" not in result.output
    assert "nope.yaml" in result.output


# --- tree ---------------------------------------------------------------------------------

def test_tree_json_contract(case31):
    doc = tree_json(case31)
    assert doc["case"] == "DEMO-31"
    assert doc["caution"] == CAUTION
    ids = {s["id"] for s in doc["segments"]}
    assert ids == ALL_IDS
    for s in doc["segments"]:
        for key in ("id", "name", "side", "diameter_mm", "diameter_source", "length_cm",
                    "length_source", "mld_mm", "lesions"):
            assert key in s, (s["id"], key)
        assert s["diameter_source"] in ("measured", "reference")
        assert s["length_source"] in ("measured", "reference")
        assert isinstance(s["lesions"], list)
        assert isinstance(s["diameter_mm"], (int, float)) and s["diameter_mm"] > 0
        assert isinstance(s["length_cm"], (int, float)) and s["length_cm"] > 0
        assert 0 <= s["mld_mm"] <= s["diameter_mm"] + 1e-9


def test_tree_json_provenance_and_sides(case31):
    doc = tree_json(case31)
    cfa = seg(doc, "L-CFA")
    assert cfa["diameter_mm"] == pytest.approx(8.4)
    assert cfa["diameter_source"] == "measured"
    assert cfa["length_source"] == "reference"
    pop = seg(doc, "R-POP")
    assert pop["length_cm"] == pytest.approx(19) and pop["length_source"] == "measured"
    assert pop["diameter_source"] == "reference"
    assert seg(doc, "R-BRA")["diameter_source"] == "measured"
    assert seg(doc, "L-BRA")["diameter_source"] == "reference"
    assert seg(doc, "L-SFA")["side"] in ("L", "left")
    assert seg(doc, "R-SFA")["side"] in ("R", "right")


def test_tree_mld_percent_diameter_stenosis_and_occlusion(case31):
    doc = tree_json(case31)
    pop = seg(doc, "R-POP")
    # Percent diameter stenosis is the angiographic convention (common practice):
    # MLD = D x (1 - pct/100).
    assert pop["mld_mm"] == pytest.approx(pop["diameter_mm"] * 0.5, rel=1e-3)
    assert len(pop["lesions"]) == 1
    assert seg(doc, "L-ATA")["mld_mm"] == 0
    # No lesion: MLD is the diameter.
    bra = seg(doc, "L-BRA")
    assert bra["mld_mm"] == pytest.approx(bra["diameter_mm"])


def test_tree_reference_lengths_scale_with_height(tmp_path):
    # Drillis and Contini proportions (Winter, Biomechanics and Motor Control of Human
    # Movement): body-segment lengths are fixed fractions of height, so a body-rule artery's
    # length is proportional to height.
    short = tree_json(minimal(tmp_path, ref="DEMO-36", height=150))
    tall = tree_json(minimal(tmp_path, ref="DEMO-37", height=200))
    for sid in ("R-SFA", "L-RAD", "R-PTA", "L-BRA"):
        ratio = seg(tall, sid)["length_cm"] / seg(short, sid)["length_cm"]
        assert ratio == pytest.approx(200 / 150, rel=0.02), sid
    # Thigh is 0.245 of height (Winter, Fig 4.1): the SFA cannot be longer than the thigh.
    assert seg(tall, "R-SFA")["length_cm"] <= 0.245 * 200 + 1e-6
    # Forearm 0.146 H: the radial artery lies within the forearm.
    assert seg(tall, "L-RAD")["length_cm"] <= 0.146 * 200 + 1e-6


def test_tree_reference_diameters_by_sex(tmp_path):
    # Infrarenal aorta: men 18.4, women 15.9 mm (Kim et al., PLoS One 2022).
    f = seg(tree_json(minimal(tmp_path, ref="DEMO-38", sex="female")), "AO-INFRA")
    m = seg(tree_json(minimal(tmp_path, ref="DEMO-39", sex="male")), "AO-INFRA")
    u = seg(tree_json(minimal(tmp_path, ref="DEMO-30", sex="unspecified")), "AO-INFRA")
    assert f["diameter_mm"] < m["diameter_mm"]
    assert f["diameter_mm"] <= u["diameter_mm"] <= m["diameter_mm"]
    assert f["diameter_source"] == m["diameter_source"] == "reference"


def test_tree_table_marks_reference_values(case31):
    result = run("tree", str(case31))
    assert result.exit_code == 0, result.output
    rows = {ln.split()[0]: ln for ln in result.stdout.splitlines() if ln.strip()}
    assert set(rows) >= ALL_IDS
    # L-CFA diameter measured: 8.4 unmarked; L-BRA nothing measured: marked.
    assert "8.4 " in rows["L-CFA"] and "8.4*" not in rows["L-CFA"]
    assert "*" in rows["L-BRA"]
    assert "19.0 " in rows["R-POP"] or "19 " in rows["R-POP"]
    assert "radial graft harvest planned" in rows["R-RAD"]
    assert CAUTION in result.stdout.replace("\n", " ") or CAUTION in result.stdout


def test_tree_shows_grafts_and_stents(case31):
    doc = tree_json(case31)
    text = json.dumps(doc)
    assert "xfem" in text
    stents = seg(doc, "L-EIA")["stents"]
    assert [(x["start_cm"], x["length_cm"], x["diameter_mm"]) for x in stents] == [(1, 4, 7)]
    table = run("tree", str(case31)).stdout
    assert "xfem" in table


# --- graph (library) -----------------------------------------------------------------------

def test_graph_connected_and_reaches_root(case31):
    import networkx as nx

    from vascplan.anatomy.graph import build_tree
    from vascplan.case.load import load_case

    tree = build_tree(load_case(case31))
    g = tree.graph if hasattr(tree, "graph") else tree
    assert nx.is_connected(g.to_undirected()) if g.is_directed() else nx.is_connected(g)


# --- demo and startup ----------------------------------------------------------------------

def test_demo_runs_and_writes_into_out(tmp_path):
    out = tmp_path / "demo-out"
    result = run("demo", "--out", str(out))
    assert result.exit_code == 0, result.output
    assert CAUTION in result.output.replace("\n", " ") or CAUTION in result.output
    assert out.is_dir() and any(out.iterdir())
    # The tree step's files carry the caution (every output, HELPER_RULES) and the JSON one
    # is the `tree --format json` contract.
    trees = sorted(out.glob("*-tree.json"))
    assert len(trees) >= 3
    for path in trees:
        doc = json.loads(path.read_text(encoding="utf-8"))
        assert doc["caution"] == CAUTION
        assert {"case", "segments"} <= set(doc)
    for path in sorted(out.glob("*-tree.txt")):
        assert CAUTION in " ".join(path.read_text(encoding="utf-8").split())
    assert not list(out.glob("*.tmp")) and not list(out.glob(".*"))  # atomic: no leftovers


@pytest.mark.parametrize("args", [["--help"], ["validate", "CASE"], ["tree", "CASE"]])
def test_startup_does_not_import_pandas_or_reportlab(args, case31):
    args = [str(case31) if a == "CASE" else a for a in args]
    code = (
        "import sys\n"
        "from vascplan.cli import cli\n"
        "try:\n"
        f"    cli.main({args!r}, standalone_mode=False)\n"
        "except SystemExit:\n"
        "    pass\n"
        "bad = [m for m in ('pandas', 'reportlab', 'sqlalchemy') if m in sys.modules]\n"
        "print('LOADED', bad)\n"
    )
    out = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True,
                         text=True, timeout=120)
    assert "LOADED []" in out.stdout, out.stdout + out.stderr


def test_every_command_help_has_example():
    for name in ("validate", "tree", "schema", "demo"):
        result = run(name, "--help")
        assert result.exit_code == 0
        assert "vascplan " + name in result.output, name


def test_ci_run_uses_readme_test_command():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    # .ci/run must take the command from the README itself (issue 2, Deliver 2).
    assert "README.md" in ci and "<!-- test-command -->" in ci
    assert "<!-- test-command -->" in readme and "python -m pytest" in readme


def test_examples_at_least_three_valid():
    cases = sorted((ROOT / "vascplan" / "examples").glob("case-*.yaml"))
    assert len(cases) >= 3
    result = run("validate", *map(str, cases))
    assert result.exit_code == 0, result.output


# --- MLD over a stretch (library, issue 2 Deliver 4) ----------------------------------------

def _tree_from_text(text: str):

    from vascplan.anatomy.graph import build_tree
    from vascplan.case.load import validate_case

    # Read as vascplan reads a file (vascplan.fileio), not with PyYAML's YAML 1.1 defaults,
    # which take an exponent without a dot (5e-324) for text.
    return build_tree(validate_case("acceptance.yaml", parse_yaml("acceptance.yaml", text)))


def test_overlapping_lesions_take_the_tightest(tmp_path):
    extra = ("vessels:\n  R-SFA: {diameter_mm: 6.0}\nlesions:\n"
             "  - {segment: R-SFA, kind: stenosis, stenosis_pct: 50, start_cm: 2, length_cm: 5}\n"
             "  - {segment: R-SFA, kind: stenosis, stenosis_pct: 70, start_cm: 4, length_cm: 5}\n")
    doc = tree_json(minimal(tmp_path, ref="DEMO-41", sex="male", extra=extra))
    # Percent diameter stenosis (angiographic convention): 6.0 x (1 - 0.70) = 1.8 mm.
    assert seg(doc, "R-SFA")["mld_mm"] == pytest.approx(1.8, abs=0.01)
    tree = _tree_from_text(MINIMAL.replace("DEMO-3X", "DEMO-41").replace("SEX", "male")
                           .replace("HEIGHT", "170") + extra)
    assert tree.mld("R-SFA", 0, 3) == pytest.approx(3.0, abs=0.01)   # only the 50% lesion
    assert tree.mld("R-SFA", 10, 20) == pytest.approx(6.0)           # clear of both
    assert tree.mld("R-SFA", 0, 25) == pytest.approx(1.8, abs=0.01)  # both


def test_narrow_stent_sets_mld_as_case_figure(case31):
    eia = seg(tree_json(case31), "L-EIA")
    assert eia["diameter_source"] == "reference"
    assert eia["mld_mm"] == pytest.approx(min(7.0, eia["diameter_mm"]))


def test_every_segment_reaches_the_aortic_root(case31):
    from vascplan.anatomy.graph import build_tree
    from vascplan.case.load import load_case

    tree = build_tree(load_case(case31))
    for sid in ALL_IDS:
        path = tree.path_to_root(sid)
        assert path[-1] == "AO-ASC" or path[0] == "AO-ASC", (sid, path)


@settings(max_examples=25, deadline=None)
@given(pct1=st.floats(0, 99), pct2=st.floats(0, 99), s1=st.floats(0, 20), s2=st.floats(0, 20),
       a=st.floats(0, 25), span=st.floats(0.1, 25))
def test_adding_a_lesion_never_widens_an_mld(pct1, pct2, s1, s2, a, span):
    base = (MINIMAL.replace("DEMO-3X", "DEMO-42").replace("SEX", "female")
            .replace("HEIGHT", "170") + "vessels:\n  L-SFA: {length_cm: 30}\nlesions:\n"
            f"  - {{segment: L-SFA, kind: stenosis, stenosis_pct: {pct1}, start_cm: {s1},"
            " length_cm: 3}\n")
    more = base + (f"  - {{segment: L-SFA, kind: stenosis, stenosis_pct: {pct2},"
                   f" start_cm: {s2}, length_cm: 4}}\n")
    end = min(a + span, 30.0)
    t1, t2 = _tree_from_text(base), _tree_from_text(more)
    m1, m2 = t1.mld("L-SFA", a, end), t2.mld("L-SFA", a, end)
    assert m2 <= m1 + 1e-9
    assert m1 <= t1.segment("L-SFA")["diameter_mm"] + 1e-9


def test_schema_structure_matches_the_file_format():
    schema = json.loads(run("schema").stdout)
    # Top-level fields of vascplan-case/1 (issue 2 Deliver 5, README field table).
    # issue 12 adds access_in_place and access_tried.
    assert set(schema["properties"]) == {"format", "patient", "vessels", "lesions", "stents",
                                         "grafts", "avoid", "procedure", "weights", "limits",
                                         "access_in_place", "access_tried"}
    assert schema.get("additionalProperties") is False  # an unknown field is refused (README)
    assert set(schema["required"]) == {"format", "patient"}
    patient = schema["$defs"]["Patient"]
    assert set(patient["required"]) == {"ref", "sex", "height_cm"}
    assert (patient["properties"]["height_cm"]["minimum"],
            patient["properties"]["height_cm"]["maximum"]) == (100, 230)
    vessels = json.dumps(schema["properties"]["vessels"])
    for sid in ALL_IDS:
        assert f'"{sid}"' in vessels, sid
    assert CAUTION in json.dumps(schema)


def test_every_reference_value_has_an_assumption_with_its_source(case31):
    doc = tree_json(case31)
    text = "\n".join(doc["assumptions"])
    for s in doc["segments"]:
        for quantity in ("diameter", "length"):
            if s[f"{quantity}_source"] == "reference":
                line = next((a for a in doc["assumptions"]
                             if a.startswith(f"{s['id']} {quantity}")), None)
                assert line is not None, (s["id"], quantity)
                assert "source" in line
    # Measured values are not listed as assumptions.
    assert not any(a.startswith("L-CFA diameter") for a in doc["assumptions"])
    assert "R-POP length" not in text


def test_version_matches_the_package():
    import vascplan

    assert vascplan.__version__ in run("--version").output
