"""The page template: paper sizes, caution, page numbers, timestamp, atomic writing."""

from __future__ import annotations

from datetime import datetime
from zoneinfo import ZoneInfo

import pytest
from reportlab.platypus import PageBreak, Paragraph

from tests.reports_helpers import page_sizes, pdf_pages
from vascplan.errors import InputError
from vascplan.pdf.page import (
    PageSetup,
    build_pdf,
    paper_size,
    styles,
    timestamp_text,
    write_pdf,
)
from vascplan.safety import CAUTION

MM_PER_INCH = 25.4
PT_PER_INCH = 72.0


def _doc(paper: str, pages: int, zone: str = "Europe/London") -> bytes:
    story = []
    for i in range(pages):
        if i:
            story.append(PageBreak())
        story.append(Paragraph(f"body of page {i + 1}", styles()["body"]))
    at = datetime(2026, 7, 1, 9, 5, tzinfo=ZoneInfo(zone))
    return build_pdf(story, PageSetup(paper=paper, title="Test title", generated_at=at))


@pytest.mark.parametrize(
    ("paper", "expected_pt"),
    [
        # ISO 216: A4 is 210 x 297 mm; 1 pt = 1/72 in, 1 in = 25.4 mm.
        ("a4", (210 / MM_PER_INCH * PT_PER_INCH, 297 / MM_PER_INCH * PT_PER_INCH)),
        # ANSI/ASME Y14.1 Letter is 8.5 x 11 in.
        ("letter", (8.5 * PT_PER_INCH, 11 * PT_PER_INCH)),
    ],
)
def test_paper_sizes(paper, expected_pt):
    sizes = page_sizes(_doc(paper, 3))
    assert len(sizes) == 3
    for w, h in sizes:
        assert w == pytest.approx(expected_pt[0], abs=0.01)
        assert h == pytest.approx(expected_pt[1], abs=0.01)


def test_a4_in_points_matches_the_issue():
    # The issue states A4 as 595.28 x 841.89 pt and Letter as 612 x 792 pt.
    assert paper_size("a4") == pytest.approx((595.28, 841.89), abs=0.01)
    assert paper_size("letter") == (612, 792)


def test_unknown_paper_is_one_line():
    with pytest.raises(InputError) as exc:
        paper_size("a5")
    assert str(exc.value) == "--paper: unknown paper 'a5'; use a4 or letter"


def test_caution_page_numbers_and_timestamp_on_every_page():
    pages = pdf_pages(_doc("a4", 4))
    assert len(pages) == 4
    for n, text in enumerate(pages, start=1):
        assert CAUTION in text
        assert f"page {n} of 4" in text
        # Europe/London is on BST, UTC+01:00, on 1 July (IANA tz database).
        assert "Generated 2026-07-01 09:05 BST (UTC+01:00)" in text
        assert "Test title" in text


def test_timestamp_negative_offset():
    at = datetime(2026, 1, 15, 18, 30, tzinfo=ZoneInfo("America/New_York"))
    # New York keeps EST, UTC-05:00, in January (IANA tz database).
    assert timestamp_text(at) == "2026-01-15 18:30 EST (UTC-05:00)"


def test_naive_timestamp_is_refused():
    with pytest.raises(ValueError):
        timestamp_text(datetime(2026, 1, 1, 12, 0))


def test_write_pdf_refuses_non_pdf_and_leaves_nothing(tmp_path):
    target = tmp_path / "out.pdf"
    with pytest.raises(ValueError):
        write_pdf(target, b"not a pdf")
    assert list(tmp_path.iterdir()) == []


def test_failed_build_keeps_the_previous_file(tmp_path, monkeypatch):
    target = tmp_path / "out.pdf"
    write_pdf(target, _doc("a4", 1))
    before = target.read_bytes()

    class Boom(Paragraph):
        def draw(self):  # fails while the page is being laid out
            raise RuntimeError("disk full while drawing")

    at = datetime(2026, 7, 1, 9, 5, tzinfo=ZoneInfo("UTC"))
    with pytest.raises(RuntimeError):
        write_pdf(target, build_pdf([Boom("x", styles()["body"])], PageSetup("a4", "t", at)))
    assert target.read_bytes() == before
    assert [p.name for p in tmp_path.iterdir()] == ["out.pdf"]


def test_failed_rename_leaves_no_temporary(tmp_path, monkeypatch):
    import os

    def broken_replace(src, dst):
        raise OSError("rename refused")

    monkeypatch.setattr(os, "replace", broken_replace)
    from vascplan.errors import InputError

    with pytest.raises(InputError, match="cannot write here"):  # one line, issue 18
        write_pdf(tmp_path / "x.pdf", _doc("a4", 1))
    assert list(tmp_path.iterdir()) == []
