"""Text that cannot hurt its reader: one place for every check and cleaning of user text.

Identifiers (patient refs, nurse ids, authors, unit names, bed labels) and free text
(reasons, notes) come from files, options and CSV rows. They are refused when they hold a
control character: C0 (``U+0000``-``U+001F``, NUL and ESC among them), DEL, C1
(``U+0080``-``U+009F``), the line and paragraph separators and the bidirectional
embeddings, overrides and isolates (``U+202A``-``U+202E``, ``U+2066``-``U+2069``), which
can make a terminal, a PDF or a spreadsheet show text other than what is stored. Free text
may hold a newline or a tab; an identifier may not.

Writers that cannot refuse (a record stored before these checks) clean on the way out:
:func:`safe_terminal` for the terminal, :func:`ical_text` for iCalendar, and
:func:`neutralise_cell` for every CSV cell a spreadsheet could read as a formula.

References
----------
.. [1] Unicode Standard Annex #9, Unicode Bidirectional Algorithm (explicit formatting
   characters), https://www.unicode.org/reports/tr9/.
.. [2] OWASP, CSV Injection, https://owasp.org/www-community/attacks/CSV_Injection.
.. [3] RFC 5545, Internet Calendaring and Scheduling Core Object Specification, sec. 3.3.11
   (TEXT excludes control characters other than HTAB).
"""

from __future__ import annotations

import hashlib
import re
import unicodedata
from typing import Annotated, Any

from pydantic import AfterValidator

from vascplan.errors import InputError

IDENTIFIER_MAX = 80
"""The longest identifier any file or option takes (a ref, a nurse id, a unit name)."""

FREE_TEXT_MAX = 2000
"""The longest free text (a reason, a note): a paragraph, not a letter."""

_BIDI = "\u202a-\u202e\u2066-\u2069"
_CONTROL = re.compile(f"[\x00-\x1f\x7f-\x9f\u2028\u2029{_BIDI}]")
_CONTROL_BUT_NL_TAB = re.compile(f"[\x00-\x08\x0b-\x1f\x7f-\x9f\u2028\u2029{_BIDI}]")

_NAMES = {
    "\x00": "NUL",
    "\x07": "BEL",
    "\x08": "backspace",
    "\t": "tab",
    "\n": "newline",
    "\r": "carriage return",
    "\x1b": "ESC",
    "\x7f": "DEL",
}


def describe(ch: str) -> str:
    """Name a character for a message: ``U+0000 (NUL)``, ``U+202E (RIGHT-TO-LEFT OVERRIDE)``.

    >>> describe("\\x1b"), describe("\\u202e")
    ('U+001B (ESC)', 'U+202E (RIGHT-TO-LEFT OVERRIDE)')
    """
    name = _NAMES.get(ch) or unicodedata.name(ch, "control character")
    return f"U+{ord(ch):04X} ({name})"


def find_control(text: str, *, allow_newline: bool = False) -> tuple[int, str] | None:
    """Position and character of the first control character in ``text``, or None.

    >>> find_control("DEMO\\x0007"), find_control("a\\nb", allow_newline=True)
    ((4, '\\x00'), None)
    """
    rx = _CONTROL_BUT_NL_TAB if allow_newline else _CONTROL
    m = rx.search(text)
    return (m.start(), m.group()) if m else None


def identifier_problem(text: str, max_len: int = IDENTIFIER_MAX) -> str | None:
    """What is wrong with ``text`` as an identifier, or None when it is fine."""
    hit = find_control(text)
    if hit is not None:
        return (
            f"holds the control character {describe(hit[1])} at character {hit[0] + 1}; "
            "use printable text only"
        )
    if len(text) > max_len:
        return f"is {len(text):,} characters long; at most {max_len} allowed"
    return None


def free_text_problem(text: str, max_len: int = FREE_TEXT_MAX) -> str | None:
    """What is wrong with ``text`` as free text (newline and tab allowed), or None."""
    hit = find_control(text, allow_newline=True)
    if hit is not None:
        return (
            f"holds the control character {describe(hit[1])} at character {hit[0] + 1}; "
            "use printable text (newlines and tabs are allowed)"
        )
    if len(text) > max_len:
        return f"is {len(text):,} characters long; at most {max_len:,} allowed"
    return None


def check_identifier(text: str, source: str, field: str = "", max_len: int = IDENTIFIER_MAX) -> str:
    """Return ``text`` or raise an :class:`InputError` naming ``source`` and ``field``."""
    problem = identifier_problem(text, max_len)
    if problem:
        raise InputError(source, field, problem)
    return text


def check_free_text(text: str, source: str, field: str = "", max_len: int = FREE_TEXT_MAX) -> str:
    """Return ``text`` or raise an :class:`InputError` naming ``source`` and ``field``."""
    problem = free_text_problem(text, max_len)
    if problem:
        raise InputError(source, field, problem)
    return text


def _identifier(value: str) -> str:
    problem = identifier_problem(value, max_len=max(len(value), 1))
    if problem:
        raise ValueError(problem)
    return value


def _free_text(value: str) -> str:
    problem = free_text_problem(value, max_len=max(len(value), FREE_TEXT_MAX))
    if problem:
        raise ValueError(problem)
    return value


Identifier = Annotated[str, AfterValidator(_identifier)]
"""A pydantic string field that is an identifier (no control character, bounded length)."""

FreeText = Annotated[str, AfterValidator(_free_text)]
"""A pydantic string field of free text (no control character but newline and tab)."""

FREE_TEXT_KEYS = frozenset({"reason", "note", "notes", "basis", "text", "description", "comment"})
"""Keys of a file whose string values are free text; every other string is an identifier."""


def check_document(source: str, data: Any, path: str = "", depth: int = 0) -> None:
    """Refuse control characters anywhere in a parsed file (keys and values).

    The one check that every file kind (case, unit, protocol) passes through before its
    model sees it: a value under a key of :data:`FREE_TEXT_KEYS` is free text (newline and
    tab allowed, at most :data:`FREE_TEXT_MAX` characters); any other string is held to
    the identifier rule for control characters (its length is the model's business).
    """
    if depth > 200:  # deeper than any file kind; the parser refuses far deeper
        return
    if isinstance(data, dict):
        for key, value in data.items():
            here = f"{path}.{key}" if path else str(key)
            if isinstance(key, str):
                hit = find_control(key)
                if hit is not None:
                    raise InputError(
                        source, path, f"a field name holds the control character {describe(hit[1])}"
                    )
            if isinstance(value, str) and isinstance(key, str) and key in FREE_TEXT_KEYS:
                check_free_text(value, source, here)
            else:
                check_document(source, value, here, depth + 1)
    elif isinstance(data, list):
        for i, value in enumerate(data):
            check_document(source, value, f"{path}.{i}" if path else str(i), depth + 1)
    elif isinstance(data, str):
        # A trailing newline (a YAML block scalar) is layout, not content.
        text = data.rstrip(" \n")
        problem = identifier_problem(text, max_len=max(len(text), 1))
        if problem:
            raise InputError(source, path, problem)


def check_row(source: str, line: int, cells: dict[str, str]) -> None:
    """Refuse a CSV row with a control character in any cell (``line N: column``)."""
    for column, text in cells.items():
        hit = find_control(text)
        if hit is not None:
            raise InputError(
                source,
                f"line {line}: {column}",
                f"holds the control character {describe(hit[1])}; use printable text only",
            )


# ---------------------------------------------------------------------------
# Output


def safe_terminal(text: str) -> str:
    """Text a terminal shows as it is: control characters (but newline, tab) made visible.

    >>> safe_terminal("DEMO\\x1b[2J-07\\n")
    'DEMO\\\\u001b[2J-07\\n'
    """
    return _CONTROL_BUT_NL_TAB.sub(lambda m: _escape(m.group()), text)


def _escape(ch: str) -> str:
    # \\uXXXX reads plainly on a terminal and stays a valid escape inside a JSON string.
    return f"\\u{ord(ch):04x}"


def ical_text(text: str) -> str:
    """Text for an iCalendar TEXT value or UID: control characters (newline kept) dropped.

    RFC 5545 TEXT allows no control character but HTAB; the calendar writer escapes
    newlines, commas and semicolons itself.

    >>> ical_text("bed 1\\x00 DEMO\\x1b-07\\u202e")
    'bed 1 DEMO-07'
    """
    return _CONTROL_BUT_NL_TAB.sub("", text)


_FORMULA_START = ("=", "+", "-", "@", "\t", "\r", "\n")


def neutralise_cell(value: Any) -> Any:
    """A CSV cell a spreadsheet will not run: text starting a formula gets a leading ``'``.

    Control characters but newline and tab are first made visible (:func:`safe_terminal`).
    The test is made after stripping the spaces a spreadsheet may strip, so that
    `` =1+1`` is caught too; a plain number (``-3``, ``+1.5``) is left alone. Values that
    are not text (ints, floats, None) pass unchanged.

    >>> neutralise_cell("=1+1"), neutralise_cell(" @SUM(A1)"), neutralise_cell("-3")
    ("'=1+1", "' @SUM(A1)", '-3')
    """
    if not isinstance(value, str) or not value:
        return value
    value = safe_terminal(value)  # a control character (an old record) shown, not passed on
    if value[0] in ("\t", "\r", "\n"):
        return "'" + value
    probe = value.lstrip(" \u00a0\t\r\n")
    if probe[:1] in _FORMULA_START:
        if re.fullmatch(r"[-+]?(\d+(\.\d*)?|\.\d+)([eE][-+]?\d+)?", value):
            return value
        return "'" + value
    return value


# ---------------------------------------------------------------------------
# File names

_UNSAFE = re.compile(r"[^A-Za-z0-9._-]+")


def short_hash(text: str) -> str:
    """Eight hex digits of the SHA-256 of ``text``: a stable tag for a raw ref.

    >>> short_hash("=1+1")
    'bac90eef'
    """
    return hashlib.sha256(text.encode("utf-8")).hexdigest()[:8]


def ref_file_part(ref: str, max_len: int = 60) -> tuple[str, bool]:
    """The part of a file name that stands for a patient ref, unique per ref.

    A ref that is already a safe name (letters, digits, ``.``, ``_``, ``-``) is used as it
    is; any other ref is made safe and gets ``-`` and :func:`short_hash` of the raw ref, so
    that ``=1+1``, ``1_1`` and ``1/1`` give three names, the same in every run. The flag
    says whether the name differs from the ref (for the caller to report).

    >>> ref_file_part("DEMO-07"), ref_file_part("1_1"), ref_file_part("1/1")
    (('DEMO-07', False), ('1_1', False), ('1_1-253d950f', True))
    """
    base = _UNSAFE.sub("_", ref).strip("._-")
    base = re.sub(r"\.{2,}", ".", base)[:max_len] or "unnamed"
    if base == ref:
        return base, False
    return f"{base}-{short_hash(ref)}", True
