"""The report and checklist commands: exit codes, exact error lines, safe names."""

from __future__ import annotations

from pathlib import Path

import pytest
import yaml
from click.testing import CliRunner

from tests.reports_helpers import HOSTILE, pdf_pages, pdf_text
from vascplan.cli import cli
from vascplan.paths import examples_dir
from vascplan.safety import CAUTION
from vascplan.textsafety import ref_file_part

CASE_07 = examples_dir() / "case-DEMO-07-sfa-occlusion.yaml"
UNIT = Path(__file__).parent / "reports_unit.yaml"


def _run(args, **kw):
    return CliRunner().invoke(cli, args, catch_exceptions=kw.pop("catch", False), **kw)


def test_report_writes_a_pdf(tmp_path):
    out = tmp_path / "r.pdf"
    res = _run(["report", str(CASE_07), "-o", str(out), "--paper", "letter"])
    assert res.exit_code == 0, res.output
    assert res.output == f"wrote {out}\n"
    assert CAUTION in pdf_pages(out.read_bytes())[0]


def test_report_default_name_from_a_hostile_ref(tmp_path, monkeypatch):
    doc = yaml.safe_load(CASE_07.read_text())
    doc["patient"]["ref"] = "../../" + HOSTILE
    case = tmp_path / "case.yaml"
    case.write_text(yaml.safe_dump(doc))
    work = tmp_path / "work"
    work.mkdir()
    monkeypatch.chdir(work)
    res = _run(["report", str(case)])
    assert res.exit_code == 0, res.output
    files = list(work.iterdir())
    expected = f"{ref_file_part('../../' + HOSTILE)[0]}-case-report.pdf"
    assert [f.name for f in files] == [expected]
    assert "/" not in expected and "<" not in expected and not expected.startswith(".")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["case.yaml", "work"]


def test_report_missing_case():
    res = _run(["report", "no-such-case.yaml", "-o", "x.pdf"])
    assert res.exit_code == 2
    assert res.output == "error: no-such-case.yaml: file not found\n"


def test_report_output_is_a_folder(tmp_path):
    res = _run(["report", str(CASE_07), "-o", str(tmp_path)])
    assert res.exit_code == 2
    assert res.output == f"error: {tmp_path}: is a folder; give a file name such as report.pdf\n"


def test_report_output_folder_not_writable(tmp_path):
    blocker = tmp_path / "a-file"
    blocker.write_text("x")
    out = blocker / "r.pdf"  # its "folder" is a file: cannot be written under any user
    res = _run(["report", str(CASE_07), "-o", str(out)])
    assert res.exit_code == 2
    assert res.output.startswith(f"error: {out}: cannot write here (")
    assert res.output.endswith("); choose a folder you can write to\n")
    assert res.output.count("\n") == 1
    assert blocker.read_text() == "x"


def test_checklist_output_folder_not_writable(tmp_path):
    blocker = tmp_path / "a-file"
    blocker.write_text("x")
    out = blocker / "c.pdf"
    res = _run(["checklist", str(UNIT), "--shift", "day", "--date", "2026-12-02", "-o", str(out)])
    assert res.exit_code == 2
    assert res.output.startswith(f"error: {out}: cannot write here (")
    assert res.output.count("\n") == 1


@pytest.mark.parametrize("top", ["0", "-3"])
def test_report_top_must_be_positive(tmp_path, top):
    res = _run(["report", str(CASE_07), "-o", str(tmp_path / "r.pdf"), "--top", top])
    assert res.exit_code == 2
    assert res.output == (f"error: --top: {top} is not allowed; give a whole number of 1 or more\n")
    assert not (tmp_path / "r.pdf").exists()


def test_report_top_option(tmp_path):
    out = tmp_path / "r.pdf"
    res = _run(["report", str(CASE_07), "-o", str(out), "--top", "1"])
    assert res.exit_code == 0, res.output
    text = pdf_text(out.read_bytes())
    assert "ranks 1-1 in full, ranks 2-" in text


def test_checklist_writes_one_sheet_per_patient(tmp_path):
    out = tmp_path / "c.pdf"
    res = _run(["checklist", str(UNIT), "--shift", "day", "--date", "2026-10-21", "-o", str(out)])
    assert res.exit_code == 0, res.output
    assert res.output == f"wrote {out} (2 patients)\n"
    text = pdf_text(out.read_bytes())
    assert "Limb-perfusion checklist: bed 7, DEMO-31" in text
    assert f"Limb-perfusion checklist: bed 8, {HOSTILE}" in text


def test_checklist_one_bed_default_name_is_safe(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    res = _run(["checklist", str(UNIT), "--shift", "night", "--date", "2026-10-24", "--bed", "8"])
    assert res.exit_code == 0, res.output
    names = [p.name for p in tmp_path.iterdir()]
    assert names == [f"checklist-night-2026-10-24-{ref_file_part(HOSTILE)[0]}.pdf"]


@pytest.mark.parametrize(
    ("args", "line"),
    [
        (
            ["--shift", "dya", "--date", "2026-10-21"],
            "error: --shift: unknown shift 'dya' (did you mean 'day'?); shifts are day, night",
        ),
        (
            ["--shift", "day", "--date", "21/10/2026"],
            "error: --date: '21/10/2026' is not a date as YYYY-MM-DD, e.g. 2026-12-02",
        ),
        (
            ["--shift", "day", "--date", "2026-02-30"],
            "error: --date: '2026-02-30' is not a calendar date",
        ),
        (
            ["--shift", "day", "--date", "2026-10-21", "--bed", "9"],
            "error: --bed: no patient in bed 9; occupied beds: 7, 8",
        ),
        (
            ["--shift", "day", "--date", "2026-10-21", "--bed", "7", "--bed", "9"],
            "error: --bed: no patient in bed 9; occupied beds: 7, 8",
        ),
        (
            ["--shift", "day", "--date", "2026-10-21", "--bed", "seven"],
            "error: --bed: 'seven' is not a bed number; give a whole number such as 3",
        ),
    ],
)
def test_checklist_errors_are_one_line_and_leave_no_file(tmp_path, args, line):
    out = tmp_path / "c.pdf"
    res = _run(["checklist", str(UNIT), *args, "-o", str(out)])
    assert res.exit_code == 2
    assert res.output == line + "\n"
    assert list(tmp_path.iterdir()) == []


def test_a_failure_while_drawing_leaves_no_pdf(tmp_path, monkeypatch):
    import vascplan.reports.checklist as checklist

    def broken(*args, **kwargs):
        raise RuntimeError("layout failed half-way")

    monkeypatch.setattr(checklist, "escalation_box", broken)
    out = tmp_path / "c.pdf"
    res = _run(
        ["checklist", str(UNIT), "--shift", "day", "--date", "2026-10-21", "-o", str(out)],
        catch=True,
    )
    assert res.exit_code != 0
    assert list(tmp_path.iterdir()) == []


def test_help_has_an_example():
    for name in ("report", "checklist"):
        res = _run([name, "--help"])
        assert res.exit_code == 0
        assert f"Example: vascplan {name} " in res.output


def test_help_does_not_import_reportlab():
    import subprocess
    import sys

    code = (
        "import sys; from vascplan.cli import cli; "
        "from click.testing import CliRunner; CliRunner().invoke(cli, ['--help']); "
        "print('reportlab' in sys.modules)"
    )
    root = Path(__file__).resolve().parent.parent
    out = subprocess.run(
        [sys.executable, "-c", code], capture_output=True, text=True, cwd=root, check=True
    )
    assert out.stdout.strip() == "False"


def test_demo_pdfs(tmp_path):
    from vascplan.demo.reports import demo_pdfs

    written = demo_pdfs(tmp_path / "out")
    cases = sorted(examples_dir().glob("case-*.yaml"))
    assert len(written) == len(cases) + 2
    for path in written:
        assert path.parent == tmp_path / "out"
        for page in pdf_pages(path.read_bytes()):
            assert CAUTION in page
    assert written[-2].name == "checklist-day-2026-12-02.pdf"


def test_checklist_bed_repeated_prints_each_once(tmp_path):
    out = tmp_path / "c.pdf"
    args = ["checklist", str(UNIT), "--shift", "day", "--date", "2026-10-21"]
    res = _run(
        [*args, "--bed", "8", "--bed", "7", "--bed", "8", "-o", str(out), "--paper", "letter"]
    )
    assert res.exit_code == 0, res.output
    assert res.output == f"wrote {out} (2 patients)\n"
    pages = pdf_pages(out.read_bytes())
    firsts = [p for p in pages if "Limb-perfusion checklist: bed" in p]
    assert len(firsts) == 2
    assert "Limb-perfusion checklist: bed 8," in firsts[0]  # in the order asked
    assert "Limb-perfusion checklist: bed 7," in firsts[1]
