"""The page template every printed output shares.

Each page carries the clinical caution, ``page N of M``, the generation timestamp with
its time zone and the document's title line; the paper is ISO 216 A4 (210 x 297 mm) or
ANSI Letter (8.5 x 11 in). Documents are built into memory and only then written,
atomically (:func:`write_pdf`), so a failure leaves no half-written PDF.

Fonts: DejaVu Sans, bundled in ``vascplan/data/fonts`` (Latin, Greek and Cyrillic), else an
installed DejaVu Sans, else the Bitstream Vera fonts inside reportlab (Latin only, with a
warning that says so). All are embedded TrueType, so the PDF's text can be read back (and
tested) exactly on any machine.
"""

from __future__ import annotations

import functools
import io
import os
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from pathlib import Path
from typing import Any

from reportlab.lib.pagesizes import A4, LETTER
from reportlab.lib.styles import ParagraphStyle
from reportlab.lib.units import mm
from reportlab.pdfbase import pdfmetrics
from reportlab.pdfbase.ttfonts import TTFont
from reportlab.pdfgen import canvas as rl_canvas
from reportlab.platypus import BaseDocTemplate, Flowable, Frame, PageTemplate

from vascplan.errors import InputError
from vascplan.fileio import atomic_write_bytes
from vascplan.pdf.text import clean
from vascplan.safety import CAUTION

PAPERS: dict[str, tuple[float, float]] = {"a4": A4, "letter": LETTER}
"""Paper sizes [pt]: A4 210 x 297 mm (ISO 216), Letter 8.5 x 11 in (ANSI/ASME Y14.1)."""

MARGIN_PT = 15 * mm
"""Page margin [pt] (common practice for office printers, which cannot print to the edge)."""

NARROW_MARGIN_PT = 10 * mm
"""The narrower margin [pt] of a form that must hold much on one page (the bedside
checklist); office printers leave about 5 mm unprinted (common practice)."""

FOOTER_PT = 30.0
"""Height [pt] kept at the foot of every page for the caution, timestamp and page number."""

HEADER_PT = 16.0
"""Height [pt] kept at the head of every page for the title line."""

_SYSTEM_DEJAVU = (
    (
        "/usr/share/fonts/truetype/dejavu/DejaVuSans.ttf",
        "/usr/share/fonts/truetype/dejavu/DejaVuSans-Bold.ttf",
    ),
    ("/usr/share/fonts/TTF/DejaVuSans.ttf", "/usr/share/fonts/TTF/DejaVuSans-Bold.ttf"),
    ("/Library/Fonts/DejaVuSans.ttf", "/Library/Fonts/DejaVuSans-Bold.ttf"),
)

WIDE_SCRIPTS = ("Latin", "Greek", "Cyrillic")
"""The scripts DejaVu Sans covers that a unit, ward or patient name is likely to use."""

FALLBACK_NOTICE = (
    "vascplan: no DejaVu Sans font found (neither the one bundled in vascplan/data/fonts nor "
    "an installed one): PDFs use reportlab's Vera, which has Latin letters only, so Greek "
    "and Cyrillic text prints as empty boxes; reinstall vascplan or install DejaVu Sans "
    "(Debian: fonts-dejavu-core)"
)


class FontFallbackWarning(UserWarning):
    """The PDFs fall back to a Latin-only font (:data:`FALLBACK_NOTICE`)."""


@dataclass(frozen=True)
class Fonts:
    """The registered report fonts.

    Attributes
    ----------
    regular, bold : str
        reportlab font names (embedded TrueType).
    family : str
        What they are, for people: ``DejaVu Sans (bundled)``, ``DejaVu Sans (installed)``
        or ``Vera (reportlab, Latin only)``.
    scripts : tuple of str
        The scripts they cover.
    """

    regular: str
    bold: str
    family: str = ""
    scripts: tuple[str, ...] = ("Latin",)


def _font_candidates() -> list[tuple[str, str, str, tuple[str, ...]]]:
    """(regular file, bold file, family, scripts) in order of preference."""
    import reportlab

    from vascplan.paths import fonts_dir

    bundled = fonts_dir()
    out: list[tuple[str, str, str, tuple[str, ...]]] = [
        (
            str(bundled / "DejaVuSans.ttf"),
            str(bundled / "DejaVuSans-Bold.ttf"),
            "DejaVu Sans (bundled)",
            WIDE_SCRIPTS,
        )
    ]
    out += [(r, b, "DejaVu Sans (installed)", WIDE_SCRIPTS) for r, b in _SYSTEM_DEJAVU]
    rl_fonts = Path(reportlab.__file__).parent / "fonts"
    out.append(
        (
            str(rl_fonts / "Vera.ttf"),
            str(rl_fonts / "VeraBd.ttf"),
            "Vera (reportlab, Latin only)",
            ("Latin",),
        )
    )
    return out


@functools.cache
def fonts() -> Fonts:
    """Register and return the report fonts, embedded in every PDF.

    DejaVu Sans bundled with vascplan (Latin, Greek, Cyrillic), else an installed DejaVu
    Sans, else reportlab's Vera (Latin only) with a :class:`FontFallbackWarning` that says
    so on standard error.
    """
    import warnings

    for regular, bold, family, scripts in _font_candidates():
        if os.path.isfile(regular) and os.path.isfile(bold):
            wide = scripts == WIDE_SCRIPTS
            name, name_bold = ("VP-Regular", "VP-Bold") if wide else ("VP-Latin", "VP-Latin-Bold")
            pdfmetrics.registerFont(TTFont(name, regular))
            pdfmetrics.registerFont(TTFont(name_bold, bold))
            pdfmetrics.registerFontFamily(
                name, normal=name, bold=name_bold, italic=name, boldItalic=name_bold
            )
            if not wide:
                warnings.warn(FALLBACK_NOTICE, FontFallbackWarning, stacklevel=2)
            return Fonts(name, name_bold, family, scripts)
    warnings.warn(FALLBACK_NOTICE, FontFallbackWarning, stacklevel=2)  # pragma: no cover
    return Fonts("Helvetica", "Helvetica-Bold", "Helvetica (not embedded)")  # pragma: no cover


@functools.cache
def styles() -> dict[str, ParagraphStyle]:
    """Paragraph styles shared by the reports (sizes in pt, chosen for print legibility)."""
    f = fonts()
    base = ParagraphStyle("body", fontName=f.regular, fontSize=9, leading=11.5)
    return {
        "body": base,
        "small": ParagraphStyle("small", parent=base, fontSize=7.5, leading=9),
        "cell": ParagraphStyle("cell", parent=base, fontSize=8, leading=9.6),
        "due": ParagraphStyle("due", parent=base, fontSize=8, leading=8.6),
        "head": ParagraphStyle("head", parent=base, fontName=f.bold, fontSize=7, leading=8.4),
        "tiny": ParagraphStyle("tiny", parent=base, fontSize=6.8, leading=8.0),
        "cell-bold": ParagraphStyle(
            "cell-bold", parent=base, fontName=f.bold, fontSize=8, leading=9.6
        ),
        "title": ParagraphStyle(
            "title", parent=base, fontName=f.bold, fontSize=15, leading=18, spaceAfter=4
        ),
        "h2": ParagraphStyle(
            "h2", parent=base, fontName=f.bold, fontSize=11, leading=14, spaceBefore=8, spaceAfter=3
        ),
        "alarm": ParagraphStyle("alarm", parent=base, fontName=f.bold, fontSize=10, leading=12.5),
    }


def paper_size(paper: str, source: str = "--paper") -> tuple[float, float]:
    """Width and height [pt] of ``a4`` or ``letter``."""
    try:
        return PAPERS[paper.lower()]
    except KeyError:
        raise InputError(source, "", f"unknown paper {paper!r}; use a4 or letter") from None


def timestamp_text(at: datetime) -> str:
    """A generation time with its zone name and UTC offset.

    >>> from zoneinfo import ZoneInfo
    >>> timestamp_text(datetime(2026, 7, 1, 9, 5, tzinfo=ZoneInfo("Europe/London")))
    '2026-07-01 09:05 BST (UTC+01:00)'
    """
    if at.tzinfo is None or at.utcoffset() is None:
        raise ValueError("the generation time must carry a time zone")
    offset = at.strftime("%z")
    return f"{at:%Y-%m-%d %H:%M} {at.tzname()} (UTC{offset[:3]}:{offset[3:]})"


@dataclass(frozen=True)
class PageSetup:
    """What the template prints on every page.

    Attributes
    ----------
    paper : str
        ``a4`` or ``letter``.
    title : str
        The title line at the head of each page; may hold user text (drawn, never parsed).
    generated_at : datetime
        When the document was made; must be time-zone aware.
    margin_pt : float
        The page margin [pt]: :data:`MARGIN_PT`, or :data:`NARROW_MARGIN_PT` for a form.
    """

    paper: str
    title: str
    generated_at: datetime
    margin_pt: float = MARGIN_PT


def _numbered_canvas(setup: PageSetup) -> type:
    """A canvas that holds pages back until the end, to print ``page N of M``."""
    f = fonts()
    stamp = f"Generated {timestamp_text(setup.generated_at)}"
    title = clean(setup.title)

    class NumberedCanvas(rl_canvas.Canvas):
        def __init__(self, *args: Any, **kwargs: Any) -> None:
            # Start on the embedded font: else every page names Helvetica, a font the
            # reader substitutes (and which has no Greek or Cyrillic).
            kwargs["initialFontName"] = kwargs.get("initialFontName") or f.regular
            super().__init__(*args, **kwargs)
            self._saved: list[dict[str, Any]] = []

        def showPage(self) -> None:  # noqa: N802 - reportlab's name
            self._saved.append(dict(self.__dict__))
            self._startPage()

        def save(self) -> None:
            total = len(self._saved)
            for state in self._saved:
                self.__dict__.update(state)
                self._decorate(total)
                super().showPage()
            super().save()

        def _decorate(self, total: int) -> None:
            width, height = self._pagesize
            margin = setup.margin_pt
            left, right = margin, width - margin
            self.saveState()
            self.setFillGray(0)
            self.setFont(f.bold, 8)
            top = height - margin + 4
            label = getattr(self, "_vp_page_label", "")
            line = f"{title} - {label}" if label else title
            self.drawString(left, top, _fit(line, f.bold, 8, right - left - 90))
            self.setFont(f.regular, 8)
            self.drawRightString(right, top, f"page {self._pageNumber} of {total}")
            self.setLineWidth(0.5)
            self.line(left, top - 4, right, top - 4)
            # Foot: the caution (bold, wrapped), then the timestamp and the page number.
            base = margin - 6
            self.line(left, base + FOOTER_PT - 4, right, base + FOOTER_PT - 4)
            from reportlab.lib.utils import simpleSplit

            lines = simpleSplit("Caution: " + CAUTION, f.bold, 7.5, right - left)
            y = base + FOOTER_PT - 13
            self.setFont(f.bold, 7.5)
            for line in lines[:2]:
                self.drawString(left, y, line)
                y -= 9
            self.setFont(f.regular, 7)
            self.drawString(left, base, stamp)
            self.drawRightString(right, base, f"page {self._pageNumber} of {total}")
            self.restoreState()

    return NumberedCanvas


class PageLabel(Flowable):
    """Invisible marker: from the page it lands on, the head of every page names ``text``
    (for example the patient a checklist sheet is about), until the next marker."""

    def __init__(self, text: str) -> None:
        super().__init__()
        self.text = clean(text)

    def wrap(self, avail_width: float, avail_height: float) -> tuple[float, float]:
        return 0.0, 0.0

    def draw(self) -> None:
        self.canv._vp_page_label = self.text


def _fit(text: str, font: str, size: float, width: float) -> str:
    """Shorten ``text`` with an ellipsis so that it fits ``width`` [pt]."""
    if pdfmetrics.stringWidth(text, font, size) <= width:
        return text
    while text and pdfmetrics.stringWidth(text + "...", font, size) > width:
        text = text[:-1]
    return text + "..."


def frame_box(paper: str, margin_pt: float = MARGIN_PT) -> tuple[float, float, float, float]:
    """The story frame (x, y, width, height) [pt] inside the margins, header and footer."""
    width, height = paper_size(paper)
    x = margin_pt
    y = margin_pt + FOOTER_PT
    return x, y, width - 2 * margin_pt, height - 2 * margin_pt - FOOTER_PT - HEADER_PT


def build_pdf(story: Sequence[Any], setup: PageSetup, *, author: str = "vascplan") -> bytes:
    """Lay ``story`` (reportlab flowables) out on the template; return the PDF bytes."""
    x, y, w, h = frame_box(setup.paper, setup.margin_pt)
    buf = io.BytesIO()
    doc = BaseDocTemplate(
        buf,
        pagesize=paper_size(setup.paper),
        leftMargin=setup.margin_pt,
        rightMargin=setup.margin_pt,
        topMargin=setup.margin_pt + HEADER_PT,
        bottomMargin=setup.margin_pt + FOOTER_PT,
        title=clean(setup.title),
        author=author,
        subject=CAUTION,
        creator="vascplan",
    )
    frame = Frame(
        x, y, w, h, leftPadding=0, rightPadding=0, topPadding=0, bottomPadding=0, id="body"
    )
    doc.addPageTemplates([PageTemplate(id="page", frames=[frame])])
    doc.build(list(story), canvasmaker=_numbered_canvas(setup))
    return buf.getvalue()


def write_pdf(path: str | os.PathLike[str], data: bytes) -> Path:
    """Write finished PDF bytes atomically (temporary file renamed into place)."""
    if not data.startswith(b"%PDF-"):
        raise ValueError("not a PDF")
    return atomic_write_bytes(path, data)
