"""Safe text for PDFs: a string from a user file is printed, never read as markup.

reportlab's :class:`~reportlab.platypus.Paragraph` parses a small XML-like markup
(``<b>``, ``<font>``, ``&amp;``...). A ref such as ``<b>&amp;</i> <unclosed`` would be
read as markup, print wrongly or raise. Everything that comes from a case, unit or
protocol file therefore goes through :func:`literal` (or :func:`rich`, which escapes each
value it fills into our own template) before it reaches a Paragraph; text drawn straight
on a canvas (``drawString``) is never parsed and needs only :func:`clean`.
"""

from __future__ import annotations

import re
import unicodedata
from typing import Any
from xml.sax.saxutils import escape

_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f\u2028\u2029]")


def _visible(match: re.Match[str]) -> str:
    return f"[U+{ord(match.group(0)):04X}]"


def clean(value: Any) -> str:
    """Turn any value into one line of printable text.

    Control characters (which a PDF cannot show and some readers choke on) become a
    visible ``[U+0007]``; tabs and line breaks become spaces; the text is NFC-normalised.

    >>> clean("DEMO-07\\tbed\\n3\\x07")
    'DEMO-07 bed 3[U+0007]'
    >>> clean(None)
    ''
    """
    if value is None:
        return ""
    text = unicodedata.normalize("NFC", str(value))
    text = text.replace("\r\n", " ").replace("\t", " ").replace("\n", " ").replace("\r", " ")
    return _CONTROL.sub(_visible, text)


def literal(value: Any) -> str:
    """Paragraph markup that prints ``value`` exactly as written.

    >>> literal("<b>&amp;</i> <unclosed")
    '&lt;b&gt;&amp;amp;&lt;/i&gt; &lt;unclosed'
    """
    return escape(clean(value), {'"': "&quot;"})


def rich(template: str, **values: Any) -> str:
    """Fill our own markup ``template`` with user values, each escaped.

    The template is trusted (written in this package); the values never are.

    >>> rich("<b>Ref</b> {ref}", ref="<i>x")
    '<b>Ref</b> &lt;i&gt;x'
    """
    return template.format(**{k: literal(v) for k, v in values.items()})


def para(value: Any, style: Any) -> Any:
    """A Paragraph showing ``value`` literally, in ``style``."""
    from reportlab.platypus import Paragraph

    return Paragraph(literal(value), style)


def rich_para(template: str, style: Any, **values: Any) -> Any:
    """A Paragraph of our ``template`` filled with escaped ``values`` (see :func:`rich`)."""
    from reportlab.platypus import Paragraph

    return Paragraph(rich(template, **values), style)
