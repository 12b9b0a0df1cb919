"""Acceptance tests for issue 6 (printed outputs: ``vascplan report`` and ``checklist``).

Black-box: written from the issue text and the README before reading the reports package.
Text is read back from the PDFs with pypdf (test-only). Inputs are our own invented
patients (DEMO-4x) in a unit on America/Chicago time.
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path
from typing import Any

import pytest
import yaml
from click.testing import CliRunner
from pypdf import PdfReader

from vascplan.cli import cli
from vascplan.safety import CAUTION

HOSTILE = "<b>&amp; x</i <font"
# ISO 216 A4 is 210 x 297 mm = 595.28 x 841.89 pt; US Letter 8.5 x 11 in = 612 x 792 pt.
A4_PT = (595.28, 841.89)
LETTER_PT = (612.0, 792.0)


def _squash(text: str) -> str:
    return re.sub(r"\s+", " ", text)


def _pages(path: Path) -> list[str]:
    return [_squash(p.extract_text() or "") for p in PdfReader(str(path)).pages]


def _size(path: Path, index: int = 0) -> tuple[float, float]:
    box = PdfReader(str(path)).pages[index].mediabox
    return float(box.width), float(box.height)


def _case(ref: str = "DEMO-41") -> dict[str, Any]:
    return {
        "format": "vascplan-case/1",
        "patient": {"ref": ref, "sex": "female", "height_cm": 166},
        "vessels": {"R-CFA": {"diameter_mm": 7.6}, "L-CFA": {"diameter_mm": 7.9},
                    "L-RAD": {"diameter_mm": 2.1}},
        "lesions": [{"segment": "R-SFA", "kind": "occlusion", "start_cm": 5,
                     "length_cm": 10, "calcification": "moderate",
                     "proximal_cap": "blunt", "distal_cap": "tapered"}],
        "avoid": [{"site": "R-BRA", "reason": "old cut-down & <scar>"}],
        "procedure": {"purpose": "treat", "target": {"segment": "R-SFA", "at_cm": 9},
                      "sheath": {"size_fr": 6, "length_cm": 45},
                      "device": {"profile_fr": 6, "working_length_cm": 150}},
    }


def _unit(**patients_over: Any) -> dict[str, Any]:
    return {
        "format": "vascplan-unit/1",
        "unit": {"name": "Prairie heart unit (test)", "timezone": "America/Chicago"},
        "shifts": [{"name": "day", "start": "07:00"}, {"name": "night", "start": "19:00"}],
        "protocol": "standard",
        "patients": [
            {"ref": "DEMO-42", "bed": 2, "sex": "male", "height_cm": 178,
             "device": {"kind": "balloon-pump", "side": "R", "vessel": "CFA", "size_fr": 8,
                        "label": "outer", "inserted": "2026-11-30T10:20"},
             "vessel_mm": 9.4,
             "baseline": {"pulses": {"R-DPA": "palpable", "R-PTA": "palpable"}}},
            {"ref": "DEMO-43", "bed": 7, "sex": "female", "height_cm": 160,
             "device": {"kind": "balloon-pump", "side": "L", "vessel": "CFA", "size_fr": 8,
                        "label": "outer", "inserted": "2026-11-30T10:20"},
             "vessel_mm": 8.8},
        ],
    }


def _write(path: Path, data: dict[str, Any]) -> Path:
    path.write_text(yaml.safe_dump(data, sort_keys=False), encoding="utf-8")
    return path


def _run(*args: str) -> Any:
    return CliRunner().invoke(cli, list(args))


# --- case report -----------------------------------------------------------------------------


def test_report_content_caution_pages_and_a4(tmp_path: Path) -> None:
    case = _write(tmp_path / "c.yaml", _case())
    out = tmp_path / "r.pdf"
    res = _run("report", str(case), "-o", str(out))
    assert res.exit_code == 0, res.output
    pages = _pages(out)
    assert pages
    text = " ".join(pages)
    assert "DEMO-41" in text
    assert "female" in text and "166" in text  # patient summary: sex, height
    # the route table: a blocked route says its limit (L-RAD 2.1 mm < 6 Fr sheath 2.62 mm)
    assert "sheath-too-large" in text
    assert "site-avoided" in text  # R-BRA is in avoid
    assert "R-CFA" in text and "L-CFA" in text
    # assumptions listed (reference diameters used, e.g. the iliacs)
    assert "ssumption" in text
    n = len(pages)
    for i, page in enumerate(pages, start=1):
        assert _squash(CAUTION) in page, f"caution missing on page {i}"
        assert f"page {i} of {n}" in page.lower()
        # generation timestamp with a time zone (an abbreviation or a UTC offset)
        assert re.search(r"\d{4}-\d{2}-\d{2}[ T]\d{2}:\d{2}(:\d{2})?\s?"
                         r"([A-Z]{2,5}|[+-]\d{2}:?\d{2}|Z)", page), page[:300]
    w, h = _size(out)
    assert abs(w - A4_PT[0]) < 1 and abs(h - A4_PT[1]) < 1


def test_report_letter_size(tmp_path: Path) -> None:
    case = _write(tmp_path / "c.yaml", _case())
    out = tmp_path / "r.pdf"
    res = _run("report", str(case), "-o", str(out), "--paper", "letter")
    assert res.exit_code == 0, res.output
    reader = PdfReader(str(out))
    for i in range(len(reader.pages)):
        w, h = _size(out, i)
        assert abs(w - LETTER_PT[0]) < 1 and abs(h - LETTER_PT[1]) < 1


def test_report_hostile_strings_literal(tmp_path: Path) -> None:
    case = _case(ref=HOSTILE)
    case["avoid"] = [{"site": "R-BRA", "reason": "a < b & c </para> <br/>"}]
    path = _write(tmp_path / "c.yaml", case)
    out = tmp_path / "r.pdf"
    res = _run("report", str(path), "-o", str(out))
    assert res.exit_code == 0, res.output
    text = " ".join(_pages(out))
    assert HOSTILE in text
    assert "a < b & c </para> <br/>" in text


def test_report_default_name_is_sanitised_and_stays_in_folder(tmp_path: Path) -> None:
    case = _write(tmp_path / "c.yaml", _case(ref="../../up/DEMO-44"))
    work = tmp_path / "work"
    work.mkdir()
    before = set(tmp_path.rglob("*"))
    runner = CliRunner()
    import os
    cwd = os.getcwd()
    os.chdir(work)
    try:
        res = runner.invoke(cli, ["report", str(case)])
    finally:
        os.chdir(cwd)
    assert res.exit_code == 0, res.output
    made = set(tmp_path.rglob("*")) - before
    files = [p for p in made if p.is_file()]
    assert len(files) == 1, made
    assert files[0].parent == work
    assert files[0].name.endswith("-case-report.pdf")
    assert "/" not in files[0].name and ".." not in files[0].name


def test_report_output_is_a_folder_one_line_exit_2(tmp_path: Path) -> None:
    case = _write(tmp_path / "c.yaml", _case())
    res = _run("report", str(case), "-o", str(tmp_path))
    assert res.exit_code == 2
    lines = res.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error:"), res.output
    assert "Traceback" not in res.output


def test_report_output_under_a_file_one_line_exit_2(tmp_path: Path) -> None:
    case = _write(tmp_path / "c.yaml", _case())
    blocker = tmp_path / "plain.txt"
    blocker.write_text("x", encoding="utf-8")
    res = _run("report", str(case), "-o", str(blocker / "r.pdf"))
    assert res.exit_code == 2
    assert len(res.output.strip().splitlines()) == 1, res.output
    assert blocker.read_text(encoding="utf-8") == "x"


def test_report_bad_case_leaves_existing_file_untouched(tmp_path: Path) -> None:
    bad = _case()
    bad["patient"]["height_cm"] = "tall"
    path = _write(tmp_path / "c.yaml", bad)
    out = tmp_path / "r.pdf"
    out.write_bytes(b"old")
    res = _run("report", str(path), "-o", str(out))
    assert res.exit_code == 2
    line = res.output.strip().splitlines()
    assert len(line) == 1 and line[0].startswith(f"error: {path}: patient.height_cm")
    assert out.read_bytes() == b"old"
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith("r.pdf")] == ["r.pdf"]


def test_report_support_figures(tmp_path: Path) -> None:
    case = _case(ref="DEMO-45")
    case["lesions"] = []
    case["avoid"] = []
    case["procedure"] = {
        "purpose": "support", "target": {"segment": "AO-ASC", "at_cm": 2},
        "sheath": {"size_fr": 14, "length_cm": 25, "outer_mm": 5.6},
        "device": {"profile_fr": 14, "working_length_cm": 120, "kind": "microaxial-pump"}}
    path = _write(tmp_path / "c.yaml", case)
    out = tmp_path / "r.pdf"
    res = _run("report", str(path), "-o", str(out))
    assert res.exit_code == 0, res.output
    text = " ".join(_pages(out))
    assert "SAR" in text
    assert "R-AXA" in text and "L-AXA" in text
    assert "lumen" in text.lower() and "flow" in text.lower()
    assert "perfusion cannula" in text.lower()


@pytest.mark.skipif(shutil.which("pdftoppm") is None, reason="pdftoppm not installed")
def test_report_renders_to_an_image(tmp_path: Path) -> None:
    case = _write(tmp_path / "c.yaml", _case())
    out = tmp_path / "r.pdf"
    assert _run("report", str(case), "-o", str(out)).exit_code == 0
    subprocess.run(["pdftoppm", "-png", "-r", "50", "-f", "1", "-l", "1", "-gray",
                    str(out), str(tmp_path / "page")], check=True, timeout=60)
    images = list(tmp_path.glob("page*.png"))
    assert images and images[0].stat().st_size > 1000


# --- nursing checklist ------------------------------------------------------------------------


def _standard_tier(data: dict[str, Any]) -> dict[str, Any]:
    # The team sets "standard" so that the maintenance phase stays hourly whatever the rules
    # give (a long dwell would raise it; README: events set the tier).
    for p in data["patients"]:
        p["events"] = [{"at": "2026-12-01T10:20", "tier": "standard", "note": "team review"}]
    return data


def test_checklist_raised_tier_half_hourly_and_every_page_named(tmp_path: Path) -> None:
    # Standard protocol: the raised tier tightens maintenance to every 30 min
    # (vascplan/data/protocols/standard.yaml, tiers.raised): 07:20, 07:50, ... 18:50 = 24 checks,
    # more than one sheet; every page's head names the patient (README).
    # Issue 11: a balloon pump alone is standard; diabetes (relative risk 2.0, Alderman et al.,
    # J Am Coll Cardiol 1987) raises it (threshold 1.5, data/surveillance/risk_rules.yaml).
    data = _unit()
    data["patients"][0]["diabetes"] = True
    unit = _write(tmp_path / "u.yaml", data)
    out = tmp_path / "c.pdf"
    res = _run("checklist", str(unit), "--shift", "day", "--date", "2026-12-03",
               "--bed", "2", "-o", str(out))
    assert res.exit_code == 0, res.output
    pages = _pages(out)
    text = " ".join(pages)
    for hour in range(7, 19):
        assert f"{hour:02d}:20" in text and f"{hour:02d}:50" in text, hour
    assert "RAISED" in text.upper()
    for page in pages:
        assert "DEMO-42" in page and _squash(CAUTION) in page


def test_checklist_times_one_page_each_and_escalation(tmp_path: Path) -> None:
    unit = _write(tmp_path / "u.yaml", _standard_tier(_unit()))
    out = tmp_path / "c.pdf"
    res = _run("checklist", str(unit), "--shift", "day", "--date", "2026-12-03", "-o", str(out))
    assert res.exit_code == 0, res.output
    pages = _pages(out)
    # inserted 2026-11-30 10:20, in maintenance by now; hourly checks at :20 in real time
    # (post-insertion 1 h + settling 2 h end at 13:20, then every 60 min): the day shift
    # 07:00-19:00 holds 07:20 ... 18:20, i.e. twelve checks, which fit one sheet (README).
    assert len(pages) == 2
    assert "DEMO-42" in pages[0] and "DEMO-43" in pages[1]
    for page in pages:
        for hour in range(7, 19):
            assert f"{hour:02d}:20" in page, (hour, page[:400])
        assert "06:20" not in page and "19:20" not in page
        # the escalation box: the bundled protocol's first criterion, whom to call
        assert "Doppler signal present at baseline is lost" in page
        assert "Doctor in charge of the patient" in page
        assert _squash(CAUTION) in page
        assert "balloon-pump" in page or "balloon pump" in page.lower()
    assert "Bed 2" in pages[0] or "bed 2" in pages[0].lower()
    # header: device size and side, insertion time (local), DPC, risk tier; the baseline
    assert "8 Fr" in pages[0] and "right" in pages[0].lower()
    assert "2026-11-30 10:20" in pages[0]
    assert "Distal perfusion cannula" in pages[0] or "distal perfusion" in pages[0].lower()
    assert "STANDARD" in pages[0].upper()
    assert "R-DPA palpable" in pages[0] and "R-PTA palpable" in pages[0]
    w, h = _size(out)
    assert abs(w - A4_PT[0]) < 1 and abs(h - A4_PT[1]) < 1


def test_checklist_bed_order_and_letter(tmp_path: Path) -> None:
    unit = _write(tmp_path / "u.yaml", _standard_tier(_unit()))
    out = tmp_path / "c.pdf"
    res = _run("checklist", str(unit), "--shift", "night", "--date", "2026-12-03",
               "--bed", "7", "--bed", "2", "--paper", "letter", "-o", str(out))
    assert res.exit_code == 0, res.output
    pages = _pages(out)
    assert len(pages) == 2
    assert "DEMO-43" in pages[0] and "DEMO-42" in pages[1]
    # night 19:00-07:00 next day: 19:20 ... 06:20
    assert "19:20" in pages[0] and "06:20" in pages[0] and "18:20" not in pages[0]
    w, h = _size(out)
    assert abs(w - LETTER_PT[0]) < 1 and abs(h - LETTER_PT[1]) < 1


def test_checklist_new_insertion_in_shift(tmp_path: Path) -> None:
    data = _unit()
    data["patients"][0]["device"] = {"kind": "va-ecmo-arterial", "side": "R", "vessel": "CFA",
                                     "size_fr": 15, "label": "outer",
                                     "inserted": "2026-12-03T09:00"}
    data["patients"][0]["vessel_mm"] = 8.0
    unit = _write(tmp_path / "u.yaml", data)
    out = tmp_path / "c.pdf"
    res = _run("checklist", str(unit), "--shift", "day", "--date", "2026-12-03",
               "--bed", "2", "-o", str(out))
    assert res.exit_code == 0, res.output
    text = " ".join(_pages(out))
    # standard protocol: every 15 min for 1 h, then every 30 min for 2 h (README)
    for t in ["09:15", "09:30", "09:45", "10:00", "10:30", "11:00", "11:30", "12:00"]:
        assert t in text, t
    assert "10:15" not in text and "10:45" not in text


def test_checklist_clock_change_rows_carry_zone(tmp_path: Path) -> None:
    # US clocks go back on 2026-11-01 at 02:00 CDT -> 01:00 CST (first Sunday of November,
    # Energy Policy Act of 2005): hourly checks at :20 fall at 01:20 CDT and again 01:20 CST.
    data = _standard_tier(_unit())
    for p in data["patients"]:
        p["device"]["inserted"] = "2026-10-29T10:20"
        p["events"][0]["at"] = "2026-10-30T10:20"
    unit = _write(tmp_path / "u.yaml", data)
    out = tmp_path / "c.pdf"
    res = _run("checklist", str(unit), "--shift", "night", "--date", "2026-10-31",
               "--bed", "2", "-o", str(out))
    assert res.exit_code == 0, res.output
    text = " ".join(_pages(out))
    assert "01:20 CDT" in text and "01:20 CST" in text


def test_checklist_hostile_strings_literal(tmp_path: Path) -> None:
    data = _unit()
    data["patients"][0]["ref"] = HOSTILE
    data["patients"][0]["events"] = [{"at": "2026-12-03T09:00", "tier": "high",
                                      "note": "cool & <pale> foot </b>"}]
    unit = _write(tmp_path / "u.yaml", data)
    out = tmp_path / "c.pdf"
    res = _run("checklist", str(unit), "--shift", "day", "--date", "2026-12-03",
               "--bed", "2", "-o", str(out))
    assert res.exit_code == 0, res.output
    text = " ".join(_pages(out))
    assert HOSTILE in text
    assert "cool & <pale> foot </b>" in text


def test_checklist_default_name_sanitised(tmp_path: Path) -> None:
    data = _unit()
    data["patients"][0]["ref"] = "../DEMO-46"
    unit = _write(tmp_path / "u.yaml", data)
    work = tmp_path / "work"
    work.mkdir()
    import os
    cwd = os.getcwd()
    os.chdir(work)
    try:
        res = CliRunner().invoke(cli, ["checklist", str(unit), "--shift", "day",
                                       "--date", "2026-12-03", "--bed", "2"])
    finally:
        os.chdir(cwd)
    assert res.exit_code == 0, res.output
    made = [p for p in work.iterdir()]
    assert len(made) == 1 and made[0].name.startswith("checklist-day-2026-12-03")
    assert made[0].suffix == ".pdf"
    assert not (tmp_path / "DEMO-46.pdf").exists()
    assert {p.name for p in tmp_path.iterdir()} == {"u.yaml", "work"}


def test_checklist_unknown_bed_and_shift_exit_2(tmp_path: Path) -> None:
    unit = _write(tmp_path / "u.yaml", _unit())
    out = tmp_path / "c.pdf"
    res = _run("checklist", str(unit), "--shift", "day", "--date", "2026-12-03",
               "--bed", "9", "-o", str(out))
    assert res.exit_code == 2
    assert len(res.output.strip().splitlines()) == 1 and "--bed" in res.output
    res = _run("checklist", str(unit), "--shift", "dya", "--date", "2026-12-03", "-o", str(out))
    assert res.exit_code == 2
    assert len(res.output.strip().splitlines()) == 1 and "--shift" in res.output
    assert "day" in res.output  # names what is allowed / did you mean
    res = _run("checklist", str(unit), "--shift", "day", "--date", "2026-13-03", "-o", str(out))
    assert res.exit_code == 2
    assert not out.exists()


def test_demo_writes_report_and_checklists(tmp_path: Path) -> None:
    res = _run("demo", "--out", str(tmp_path / "out"))
    assert res.exit_code == 0, res.output
    pdfs = [Path(m) for m in re.findall(r"(\S+\.pdf)", res.output)]
    assert any("report" in p.name for p in pdfs)
    assert any("checklist" in p.name for p in pdfs)
    for p in pdfs:
        full = p if p.is_absolute() else Path.cwd() / p
        assert full.exists() or (tmp_path / "out" / p.name).exists(), p


def test_report_top_prints_first_routes_in_full(tmp_path: Path) -> None:
    case = _write(tmp_path / "c.yaml", _case())
    out = tmp_path / "r.pdf"
    res = _run("report", str(case), "-o", str(out), "--top", "3")
    assert res.exit_code == 0, res.output
    text = " ".join(_pages(out))
    assert "ranks 1-3 in full" in text


def test_checklist_repeated_bed_printed_once(tmp_path: Path) -> None:
    unit = _write(tmp_path / "u.yaml", _standard_tier(_unit()))
    out = tmp_path / "c.pdf"
    res = _run("checklist", str(unit), "--shift", "day", "--date", "2026-12-03",
               "--bed", "2", "--bed", "2", "-o", str(out))
    assert res.exit_code == 0, res.output
    assert len(_pages(out)) == 1


def test_checklist_bad_date_names_the_option(tmp_path: Path) -> None:
    unit = _write(tmp_path / "u.yaml", _unit())
    res = _run("checklist", str(unit), "--shift", "day", "--date", "03/12/2026",
               "-o", str(tmp_path / "c.pdf"))
    assert res.exit_code == 2
    assert "--date" in res.output and "Traceback" not in res.output


def test_failed_write_leaves_no_partial_file(tmp_path: Path, monkeypatch: Any) -> None:
    # Issue item 3: written atomically. Make the final rename fail (a full or read-only
    # disk at the last step): the old file stays whole and no temporary file is left.
    import os

    case = _write(tmp_path / "c.yaml", _case())
    out = tmp_path / "r.pdf"
    out.write_bytes(b"previous")

    def refuse(*_a: Any, **_k: Any) -> None:
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", refuse)
    res = _run("report", str(case), "-o", str(out))
    assert res.exit_code == 2, res.output
    lines = res.output.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"error: {out}")
    assert out.read_bytes() == b"previous"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["c.yaml", "r.pdf"]
