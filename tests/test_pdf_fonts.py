"""One page stack for every PDF: embedded fonts that cover Latin, Greek and Cyrillic.

A unit named in Polish, Greek and Cyrillic must read back from the trend PDF and from the
checklist exactly (pypdf), with every font embedded (a TrueType font file in each font
descriptor, never one of the 14 standard fonts a reader substitutes).
"""

from __future__ import annotations

import io
import re
import warnings

import pytest
from click.testing import CliRunner

from tests.obs_fixtures import UNIT
from vascplan.cli import cli

NAME = "Oddział Intensywnej Terapii Łódź – Μονάδα – Отделение реанимации"
"""Polish (ł, Ł, ź, ó), Greek and Cyrillic letters in one unit name (invented)."""


def _unit(tmp_path):
    text = UNIT.read_text(encoding="utf-8")
    assert "name: Cardiac critical care (demo)," in text
    path = tmp_path / "unit-intl.yaml"
    path.write_text(
        text.replace("name: Cardiac critical care (demo),", f'name: "{NAME}",'), encoding="utf-8"
    )
    return path


def _fonts_showing_text(data: bytes) -> list[dict]:
    """Every font a text-showing operator (Tj, TJ, ', ") draws with, read from the content
    streams with the text state kept across q/Q (PDF 32000-1:2008, 9.3 and 8.4.2).

    A font only named (reportlab's canvas sets a default font before any text) draws no
    glyph, so it is not counted.
    """
    from pypdf import PdfReader
    from pypdf.generic import ContentStream

    reader = PdfReader(io.BytesIO(data))
    used: dict[str, dict] = {}
    for page in reader.pages:
        fonts = page["/Resources"].get_object().get("/Font", {}).get_object()
        current: str | None = None
        stack: list[str | None] = []
        for operands, operator in ContentStream(page.get_contents(), reader).operations:
            if operator == b"q":
                stack.append(current)
            elif operator == b"Q":
                current = stack.pop() if stack else None
            elif operator == b"Tf":
                current = str(operands[0])
            elif operator in (b"Tj", b"TJ", b"'", b'"'):
                assert current is not None, "text shown before any font was set"
                font = fonts[current].get_object()
                descriptor = font.get("/FontDescriptor")
                if descriptor is None and "/DescendantFonts" in font:
                    descriptor = font["/DescendantFonts"][0].get_object().get("/FontDescriptor")
                embedded = descriptor is not None and any(
                    k in descriptor.get_object() for k in ("/FontFile", "/FontFile2", "/FontFile3")
                )
                used[current] = {"base": str(font.get("/BaseFont")), "embedded": embedded}
    return list(used.values())


def _flat_text(data: bytes) -> str:
    from pypdf import PdfReader

    pages = PdfReader(io.BytesIO(data)).pages
    return re.sub(r"\s+", " ", " ".join(p.extract_text() or "" for p in pages))


def _assert_embedded(data: bytes) -> None:
    fonts = _fonts_showing_text(data)
    assert fonts, "no text found in the PDF"
    standard = ("Helvetica", "Times", "Courier", "Symbol", "ZapfDingbats")
    for font in fonts:
        assert font["embedded"], font
        assert not any(font["base"].lstrip("/").startswith(s) for s in standard), font


def test_the_bundled_font_covers_greek_and_cyrillic():
    from vascplan.pdf.page import WIDE_SCRIPTS, fonts

    f = fonts()
    assert f.family == "DejaVu Sans (bundled)"
    assert set(WIDE_SCRIPTS) == {"Latin", "Greek", "Cyrillic"} and f.scripts == WIDE_SCRIPTS


def test_trend_pdf_prints_a_polish_greek_cyrillic_unit_name(tmp_path):
    out = tmp_path / "t.pdf"
    res = CliRunner().invoke(
        cli,
        [
            "obs",
            "trend",
            str(_unit(tmp_path)),
            "--bed",
            "1",
            "-o",
            str(out),
            "--at",
            "2026-12-01T18:00",
            "--db",
            str(tmp_path / "o.db"),
        ],
    )
    assert res.exit_code == 0, res.output
    data = out.read_bytes()
    text = _flat_text(data)
    assert f"Limb trend - {NAME}" in text  # the shared template's head line
    assert f"{NAME}; " in text  # the trend's own subtitle line
    _assert_embedded(data)


def test_checklist_pdf_prints_the_same_name(tmp_path):
    from datetime import date

    from vascplan.reports.service import checklist_pdf

    _, _, data = checklist_pdf(_unit(tmp_path), "day", date(2026, 12, 1), paper="a4")
    assert NAME in _flat_text(data)
    _assert_embedded(data)


def test_a_latin_only_fallback_says_so(monkeypatch):
    import reportlab

    from vascplan.pdf import page

    rl = reportlab.__file__.rsplit("/", 1)[0] + "/fonts/"
    monkeypatch.setattr(
        page,
        "_font_candidates",
        lambda: [
            (
                "/nonexistent/DejaVuSans.ttf",
                "/nonexistent/DejaVuSans-Bold.ttf",
                "x",
                page.WIDE_SCRIPTS,
            ),
            (rl + "Vera.ttf", rl + "VeraBd.ttf", "Vera (reportlab, Latin only)", ("Latin",)),
        ],
    )
    page.fonts.cache_clear()
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            f = page.fonts()
        assert f.scripts == ("Latin",) and f.family == "Vera (reportlab, Latin only)"
        notices = [w for w in caught if issubclass(w.category, page.FontFallbackWarning)]
        assert len(notices) == 1
        assert "Latin letters only" in str(notices[0].message)
        assert "Greek and Cyrillic" in str(notices[0].message)
    finally:
        monkeypatch.undo()
        page.fonts.cache_clear()
        page.styles.cache_clear()
    assert page.fonts().family == "DejaVu Sans (bundled)"


@pytest.mark.parametrize("text", ["Łódź", "Αθήνα", "Москва"])
def test_each_script_has_glyphs_in_the_embedded_font(text):
    from reportlab.pdfbase import pdfmetrics

    from vascplan.pdf.page import fonts

    face = pdfmetrics.getFont(fonts().regular).face
    for char in text:
        assert ord(char) in face.charToGlyph, f"{char!r} (U+{ord(char):04X}) has no glyph"
