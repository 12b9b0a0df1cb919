"""Issue 13: the bedside checklist, one sheet per patient per shift.

Checked on the demo unit's night shift with a protocol of 15-minute checks all shift long:
12 h x 4 = 48 rows per patient (hand arithmetic), each patient on one page on A4 and on US
Letter, the escalation box and the signature box on the page of the first row; a hostile
(maximal) ref still on one page; no text under 7 pt; no literature citation; the arm's own
words for an axillary device; a protocol of 5-minute checks runs on, repeating the header
and the escalation box on every page ("page 1 of 3").
"""

from __future__ import annotations

import io
import re
from datetime import UTC, date, datetime
from pathlib import Path

import pytest
import yaml

from tests.reports_helpers import pdf_pages, render_png
from vascplan.fileio import validate_data
from vascplan.paths import data_dir, examples_dir
from vascplan.reports.checklist import checklist_sheets, due_text, render_checklist
from vascplan.surveillance.protocol import Protocol, load_protocol
from vascplan.surveillance.unit import load_unit

AT = datetime(2026, 12, 2, 7, 0, tzinfo=UTC)
DEMO = examples_dir() / "unit-demo.yaml"
NIGHT = date(2026, 12, 2)  # night shift 19:30 GMT to 07:30 GMT: 12 real hours (no clock change)


def _protocol(every: int) -> Protocol:
    """The standard protocol with every phase's checks ``every`` minutes apart."""
    doc = yaml.safe_load((data_dir() / "protocols" / "standard.yaml").read_text())
    for phase in doc["phases"]:
        phase["every_min"] = every
    doc["tiers"] = {}
    doc["tolerance"] = [
        {"up_to_every_min": 5, "tolerance_min": 2, "source": "test"},
        {"up_to_every_min": 1440, "tolerance_min": 4, "source": "test"},
    ]
    return validate_data("test-protocol.yaml", doc, Protocol)


Q15, Q5 = _protocol(15), _protocol(5)


def _font_sizes(data: bytes) -> set[float]:
    """Every font size set in the PDF's content streams (the ``Tf`` operator)."""
    from pypdf import PdfReader

    sizes: set[float] = set()
    for page in PdfReader(io.BytesIO(data)).pages:
        content = page.get_contents()
        raw = content.get_data() if content is not None else b""
        sizes |= {float(m) for m in re.findall(rb"/\S+ ([\d.]+) Tf", raw)}
    return sizes


@pytest.mark.parametrize("paper", ["a4", "letter"])
def test_demo_night_at_15_min_one_page_per_patient(paper, tmp_path):
    unit = load_unit(DEMO)
    sheets = checklist_sheets(unit, "night", NIGHT, Q15)
    # Beds 1, 3, 4 (removed 09:45, after-removal checks long over: none) ... every patient with
    # a device in all night has 48 checks: 19:30 to 07:30 is 720 min, 720 / 15 = 48.
    full = [s for s in sheets if s.removed is None and s.inserted < s.shift_start]
    assert full and all(len(s.rows) == 48 for s in full)
    data = render_checklist(sheets, paper=paper, generated_at=AT)
    pages = pdf_pages(data)
    assert len(pages) == len(sheets) == 6  # one page per patient
    for sheet, page in zip(sheets, pages, strict=True):
        assert f"Limb-perfusion checklist: bed {sheet.bed}, {sheet.ref}" in page
        if sheet.rows:
            assert (
                due_text(sheet.rows[0], sheet) in page and due_text(sheet.rows[-1], sheet) in page
            )
        # The escalation box and the signatures share the page of the first row.
        assert "CALL AT ONCE IF YOU FIND" in page
        assert "Initials and full name of each nurse who signs this sheet" in page
        assert "Handover" in page and "Action taken / escalated to" in page
        assert "(page 1 of" not in page
    assert min(_font_sizes(data)) >= 7.0
    pdf = tmp_path / f"night-{paper}.pdf"
    pdf.write_bytes(data)
    assert render_png(pdf, tmp_path / f"night-{paper}").stat().st_size > 20_000


def test_no_citation_at_the_bedside():
    # The protocol's sources and the risk rules' citations stay in the report (issue 13).
    unit = load_unit(DEMO)
    text = " ".join(pdf_pages(render_checklist(checklist_sheets(unit, "night", NIGHT, Q15),
                                               generated_at=AT)))  # fmt: skip
    for citation in ("(seen", "from memory", "REFERENCES", "et al.", "J Vasc Surg", "JACC"):
        assert citation not in text, citation
    assert "vascplan risk" in text  # the footer names where the basis is


def test_each_leg_has_its_own_boxes():
    unit = load_unit(DEMO)
    (sheet,) = checklist_sheets(unit, "night", NIGHT, Q15, beds=[1])
    # Femoral VA-ECMO with NIRS and a distal cannula: standard.yaml's per-side leg items.
    assert sheet.per_side == (
        "pulses", "nirs", "colour", "temperature", "capillary-refill", "sensation",
        "movement", "calf",
    )  # fmt: skip
    page = pdf_pages(render_checklist([sheet], generated_at=AT))[0]
    assert page.count("L R") >= 8  # the L and R heading of each pair


def test_hostile_long_ref_still_one_page(tmp_path):
    # The longest ref the unit file allows (60 characters) made of markup.
    doc = yaml.safe_load(DEMO.read_text())
    hostile = ("<b>&amp;</i> <unclosed " * 3)[:60]
    doc["patients"][0]["ref"] = hostile
    path = tmp_path / "unit.yaml"
    path.write_text(yaml.safe_dump(doc))
    unit = load_unit(path)
    for paper in ("a4", "letter"):
        sheets = checklist_sheets(unit, "night", NIGHT, Q15, beds=[1])
        assert len(sheets[0].rows) == 48
        pages = pdf_pages(render_checklist(sheets, paper=paper, generated_at=AT))
        assert len(pages) == 1
        assert "CALL AT ONCE IF YOU FIND" in pages[0] and "Initials and full name" in pages[0]


def test_five_minute_checks_run_on_with_header_and_escalation_on_every_page():
    unit = load_unit(DEMO)
    sheets = checklist_sheets(unit, "night", NIGHT, Q5, beds=[1])
    assert len(sheets[0].rows) == 144  # 720 min / 5
    pages = pdf_pages(render_checklist(sheets, paper="letter", generated_at=AT))
    assert len(pages) >= 2
    n = len(pages)
    for k, page in enumerate(pages, start=1):
        assert f"Limb-perfusion checklist: bed 1, DEMO-11 (page {k} of {n})" in page
        assert "CALL AT ONCE IF YOU FIND" in page and "Initials and full name" in page
    assert "19:35" in pages[0] and "03 Dec 07:25" in pages[-1]


def test_axillary_device_sheet_speaks_of_the_arm():
    unit = load_unit(Path(__file__).parent / "unit_axillary.yaml")
    (sheet,) = checklist_sheets(unit, "night", NIGHT, load_protocol("standard", "t"))
    assert sheet.limb == "arm"
    page = pdf_pages(render_checklist([sheet], generated_at=AT))[0]
    # standard.yaml arm_finding wording; no leg wording in the box.
    assert "Tense forearm, pain out of proportion or on passive finger stretch" in page
    assert "A radial or ulnar pulse or Doppler signal present at baseline is lost" in page
    box = page.split("CALL AT ONCE IF YOU FIND", 1)[1]
    for leg_word in ("calf", "Calf", "toes", "pedal"):
        assert leg_word not in box, leg_word
    assert "Distal perfusion cannula" not in box  # none in place
    assert "L, R: left and right arm" in page
