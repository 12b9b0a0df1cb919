"""Safe text: user strings print literally in a PDF and never break it."""

from __future__ import annotations

from datetime import UTC, datetime

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.reports_helpers import HOSTILE, pdf_text, squash
from vascplan.pdf.page import PageSetup, build_pdf, styles
from vascplan.pdf.text import clean, literal, para, rich, rich_para

AT = datetime(2026, 12, 1, 12, 0, tzinfo=UTC)


def _render(*flowables) -> str:
    return pdf_text(build_pdf(list(flowables), PageSetup("a4", "t", AT)))


def test_hostile_string_prints_literally():
    text = _render(
        para(HOSTILE, styles()["body"]), rich_para("<b>Ref</b> {r}", styles()["body"], r=HOSTILE)
    )
    assert HOSTILE in text
    assert f"Ref {HOSTILE}" in text


def test_markup_like_strings():
    cases = [
        "a < b & c > d",
        "<font size=40>x</font>",
        "&lt;already escaped&gt;",
        "</para>",
        "<br/>",
        "unbalanced <i>italic",
        "&#x41; &#65;",
        "\"quoted\" 'single'",
    ]
    text = _render(*[para(c, styles()["body"]) for c in cases])
    for c in cases:
        assert squash(c) in text


def test_rich_escapes_values_only():
    assert rich("<b>{x}</b>", x="<i>") == "<b>&lt;i&gt;</b>"


def test_control_characters_become_visible():
    assert clean("a\x00b\x1bc") == "a[U+0000]b[U+001B]c"
    assert "[U+0000]" in _render(para("bell\x07 nul\x00", styles()["body"]))


def test_literal_of_non_string():
    assert literal(3.5) == "3.5"
    assert literal(None) == ""


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    st.text(alphabet=st.characters(min_codepoint=32, max_codepoint=126), min_size=1, max_size=40)
)
def test_any_printable_ascii_round_trips(value):
    # Property: any printable ASCII text (markup characters included) builds a PDF
    # and reads back exactly (whitespace collapsed).
    text = _render(para(value, styles()["body"]))
    assert squash(value).strip() in text


@settings(max_examples=15, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.text(min_size=1, max_size=30))
def test_any_unicode_never_breaks_the_pdf(value):
    # Property: any Unicode text, control characters and unpaired surrogates aside,
    # builds a PDF (glyphs the font lacks print as boxes, never as markup).
    value = value.encode("utf-8", "replace").decode("utf-8", "replace")
    assert _render(para(value, styles()["body"]))
