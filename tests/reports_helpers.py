"""Shared helpers for the report tests: read PDFs back with pypdf, render pages."""

from __future__ import annotations

import io
import re
import shutil
import subprocess
from pathlib import Path

import pytest

HOSTILE = "<b>&amp;</i> <unclosed"
"""A string that would break (or be swallowed by) reportlab's paragraph markup."""


def pdf_pages(data: bytes) -> list[str]:
    """Text of every page, whitespace collapsed to single spaces."""
    from pypdf import PdfReader

    reader = PdfReader(io.BytesIO(data))
    return [re.sub(r"\s+", " ", page.extract_text() or "") for page in reader.pages]


def pdf_text(data: bytes) -> str:
    return " ".join(pdf_pages(data))


def page_sizes(data: bytes) -> list[tuple[float, float]]:
    from pypdf import PdfReader

    reader = PdfReader(io.BytesIO(data))
    return [(float(p.mediabox.width), float(p.mediabox.height)) for p in reader.pages]


def squash(text: str) -> str:
    """Collapse whitespace, as :func:`pdf_pages` does."""
    return re.sub(r"\s+", " ", text)


def render_png(pdf_path: Path, out_prefix: Path, page: int = 1, dpi: int = 80) -> Path:
    """Render one page with pdftoppm, or skip the test saying why."""
    exe = shutil.which("pdftoppm")
    if exe is None:
        pytest.skip(
            "pdftoppm (poppler-utils) is not installed: no page image rendered; "
            "install poppler-utils to look at the pages"
        )
    subprocess.run(
        [
            exe,
            "-png",
            "-r",
            str(dpi),
            "-f",
            str(page),
            "-l",
            str(page),
            "-singlefile",
            str(pdf_path),
            str(out_prefix),
        ],
        check=True,
        timeout=60,
    )
    return out_prefix.with_suffix(".png")
