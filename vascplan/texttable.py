"""One text-table helper for every terminal table: columns sized to their content, long
cells folded onto more lines.

A renderer describes its columns (:class:`Column`: header, alignment, the width past which
a cell folds) and hands over rows of strings; :func:`table_lines` returns the lines. A cell
never shifts the columns after it: each column is as wide as its widest (folded) cell or
header, so a patient ref of 14 characters widens the ``ref`` column for every row alike.

Widths count what a terminal shows: a combining mark takes no column, an East Asian wide
or full-width character takes two (Unicode Standard Annex #11), anything else one.

Examples
--------
>>> cols = [Column("bed", "right"), Column("ref"), Column("note", fold=12)]
>>> print("\\n".join(table_lines(cols, [["1", "DEMO-01", "cool left foot, pale"]])))
bed  ref      note
  1  DEMO-01  cool left
              foot, pale
"""

from __future__ import annotations

import textwrap
import unicodedata
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from typing import Literal

Align = Literal["left", "right"]


@dataclass(frozen=True)
class Column:
    """One column of a text table.

    Attributes
    ----------
    header : str
        The column's title (never folded).
    align : {"left", "right"}
        ``right`` for figures, so that their units and decimals line up.
    fold : int or None
        A cell wider than this many columns is folded onto more lines at spaces (a word
        longer than it is cut); None keeps every cell on one line.
    """

    header: str
    align: Align = "left"
    fold: int | None = None

    def __post_init__(self) -> None:
        if self.fold is not None and self.fold < 1:
            raise ValueError(f"fold must be at least 1, got {self.fold}")


def display_width(text: str) -> int:
    """Terminal columns ``text`` takes (combining marks 0, East Asian wide 2, others 1).

    Examples
    --------
    >>> display_width("Łódź"), display_width("Київ"), display_width("e\\u0301")
    (4, 4, 1)
    """
    width = 0
    for char in text:
        if unicodedata.combining(char):
            continue
        width += 2 if unicodedata.east_asian_width(char) in ("W", "F") else 1
    return width


def _pad(text: str, width: int, align: Align) -> str:
    room = " " * max(0, width - display_width(text))
    return room + text if align == "right" else text + room


def fold_cell(text: str, width: int | None) -> list[str]:
    """The lines of one cell: its own line breaks kept, each line folded at ``width``."""
    lines: list[str] = []
    for part in str(text).split("\n"):
        if width is None or display_width(part) <= width:
            lines.append(part)
        else:
            lines.extend(
                textwrap.wrap(part, width, break_long_words=True, break_on_hyphens=False) or [""]
            )
    return lines


def table_lines(
    columns: Sequence[Column],
    rows: Iterable[Sequence[str]],
    *,
    gap: str = "  ",
    indent: str = "",
    header: bool = True,
) -> list[str]:
    """Lay rows out under their columns.

    Parameters
    ----------
    columns : sequence of Column
        The columns, left to right.
    rows : iterable of sequences of str
        One sequence of cells per row, as many as there are columns.
    gap : str
        Between two columns.
    indent : str
        Before every line.
    header : bool
        Print the headers as the first line.

    Returns
    -------
    list of str
        The lines, trailing spaces removed; a folded row takes as many lines as its
        tallest cell, the other cells blank below their first line.

    Raises
    ------
    ValueError
        A row with more or fewer cells than there are columns.
    """
    folded: list[list[list[str]]] = []
    for row in rows:
        cells = list(row)
        if len(cells) != len(columns):
            raise ValueError(f"a row has {len(cells)} cells for {len(columns)} columns: {cells!r}")
        folded.append([fold_cell(cell, col.fold) for cell, col in zip(cells, columns, strict=True)])
    widths = [display_width(col.header) if header else 0 for col in columns]
    for row_cells in folded:
        for i, cell_lines in enumerate(row_cells):
            widths[i] = max([widths[i], *(display_width(line) for line in cell_lines)])
    out: list[str] = []

    def emit(cells: Sequence[str]) -> None:
        padded = [_pad(c, w, col.align) for c, w, col in zip(cells, widths, columns, strict=True)]
        out.append((indent + gap.join(padded)).rstrip())

    if header:
        emit([col.header for col in columns])
    for row_cells in folded:
        height = max(len(lines) for lines in row_cells)
        for k in range(height):
            emit([lines[k] if k < len(lines) else "" for lines in row_cells])
    return out


def format_table(
    columns: Sequence[Column],
    rows: Iterable[Sequence[str]],
    *,
    gap: str = "  ",
    indent: str = "",
    header: bool = True,
) -> str:
    """:func:`table_lines` joined by line breaks (no final break)."""
    return "\n".join(table_lines(columns, rows, gap=gap, indent=indent, header=header))
