"""The long-form observation CSV: one finding a row.

Header ``time,bed,ref,by,item,site,value`` (:data:`COLUMNS`). The export adds
``entry,corrects,reason,superseded_by`` (:data:`EXPORT_COLUMNS`) so that corrections
travel with the record. A file is validated whole before anything is stored: the first
bad row is named by file, line and column, and no row of that file is stored.
"""

from __future__ import annotations

import csv
import io
import os
from collections.abc import Iterable, Sequence
from typing import Any, TextIO

from vascplan.errors import InputError
from vascplan.fileio import read_text_file
from vascplan.observations.findings import ITEMS, Finding, check_time, make_finding
from vascplan.surveillance.unit import Unit

COLUMNS = ("time", "bed", "ref", "by", "item", "site", "value")
EXPORT_COLUMNS = (*COLUMNS, "entry", "corrects", "reason", "superseded_by")
MAX_CSV_BYTES = 50_000_000
"""An import larger than this is refused (a shift's checks for a unit are a few kB)."""


def template_text() -> str:
    """The CSV template: the header, one example row per item, and no real patient.

    >>> template_text().splitlines()[0]
    'time,bed,ref,by,item,site,value'
    """
    examples = [
        ("pulse", "R-DPA", "doppler"),
        ("pulse", "R-PTA", "palpable"),
        ("venous", "R", "present"),
        ("nirs", "L", "68"),
        ("nirs", "R", "64"),
        ("refill", "R", "2"),
        ("colour", "R", "normal"),
        ("temperature", "R", "warm"),
        ("sensation", "R", "normal"),
        ("motor", "R", "normal"),
        ("calf", "R", "soft"),
        ("pain", "", "2"),
        ("access", "R-CFA", "dry"),
        ("dpc", "R", "ok"),
        ("pressure", "R-PTA", "112"),
        ("pressure", "R-ARM", "124"),
    ]
    assert {e[0] for e in examples} == set(ITEMS), "the template shows every item"
    out = io.StringIO()
    w = csv.writer(out, lineterminator="\n")
    w.writerow(COLUMNS)
    for item, site, value in examples:
        w.writerow(("2026-12-01T16:00", 1, "DEMO-11", "RN-A", item, site, value))
    return out.getvalue()


def template_guide() -> str:
    """What each item takes as ``site`` and ``value``: one line an item (for ``obs template``).

    >>> template_guide().splitlines()[1]
    'pulse: site a side and an artery such as R-DPA (arteries DPA, PTA, PER, ATA, PLA, \
TPT, POP, SFA, PFA, CFA, EIA, IIA, CIA, SCA, AXA, BRA, RAD, ULN); value palpable | doppler | absent'
    """
    from vascplan.observations.findings import site_help

    lines = ["Columns time,bed,ref,by,item,site,value; per item:"]
    for spec in ITEMS.values():
        if spec.numeric:
            lo, hi = spec.number_range  # type: ignore[misc]
            unit = {"{score}": "", "mm[Hg]": " mmHg", "%": " %"}.get(spec.unit, f" {spec.unit}")
            whole = "a whole number " if spec.integer else ""
            value = f"{whole}{lo:g}-{hi:g}{unit}"
        else:
            value = " | ".join(spec.values)
        lines.append(f"{spec.name}: site {site_help(spec.name)}; value {value}")
    lines.append(
        "Sides may be written L/R or left/right; times without a UTC offset are local to the "
        "unit's time zone."
    )
    return "\n".join(lines) + "\n"


def _read_text(path: str | os.PathLike[str]) -> str:
    return read_text_file(path, max_bytes=MAX_CSV_BYTES, expected="a CSV file")


def parse_csv(path: str | os.PathLike[str], unit: Unit) -> tuple[list[Finding], list[int]]:
    """Read and validate an observation CSV against ``unit``; return findings and their lines.

    Every row is checked before anything is returned: times (naive times are local to
    the unit; clock-change gaps and overlaps refused), the bed is occupied, the ref is
    that bed's patient, the item, site and value are in the vocabulary, and no item and
    site appear twice for one bed at one time.

    Raises
    ------
    InputError
        ``FILE: line N: COLUMN: what is wrong and what is allowed``.
    """
    src = str(path)
    text = _read_text(path)
    reader = csv.reader(io.StringIO(text, newline=""))
    try:
        header = next(reader)
    except StopIteration:
        raise InputError(
            src, "", "file is empty; the first line must be " + ",".join(COLUMNS)
        ) from None
    except csv.Error as exc:
        raise InputError(src, "line 1", f"CSV error: {exc}") from None
    header = [h.strip().lower() for h in header]
    if tuple(header) != COLUMNS:
        raise InputError(
            src,
            "line 1",
            f"the header must be exactly {','.join(COLUMNS)} (got {','.join(header)})",
        )
    tz = unit.unit.tz
    findings: list[Finding] = []
    lines: list[int] = []
    seen: dict[tuple, int] = {}
    try:
        for row in reader:
            n = reader.line_num
            if not any(cell.strip() for cell in row):
                continue
            if len(row) != len(COLUMNS):
                raise InputError(
                    src, f"line {n}", f"expected {len(COLUMNS)} columns, got {len(row)}"
                )
            cells = dict(zip(COLUMNS, (c.strip() for c in row), strict=True))
            findings.append(_row_finding(cells, unit, tz, src, n))
            lines.append(n)
            f = findings[-1]
            key = (f.bed, f.time, f.item, f.site)
            if key in seen:
                raise InputError(
                    src,
                    f"line {n}",
                    f"repeats {f.item} {f.site} for bed {f.bed} at the same time as "
                    f"line {seen[key]}",
                )
            seen[key] = n
    except csv.Error as exc:
        raise InputError(src, f"line {reader.line_num}", f"CSV error: {exc}") from None
    if not findings:
        raise InputError(src, "", "no findings below the header")
    return findings, lines


def _row_finding(cells: dict[str, str], unit: Unit, tz, src: str, n: int) -> Finding:
    where = f"line {n}: "
    if not cells["time"]:
        raise InputError(src, f"{where}time", "required, an ISO 8601 time such as 2026-12-01T16:00")
    try:
        moment = check_time(cells["time"], tz, src)
    except InputError as exc:
        raise InputError(src, f"{where}time", exc.message) from None
    try:
        bed = int(cells["bed"])
    except ValueError:
        raise InputError(
            src, f"{where}bed", f"must be a bed number, got {cells['bed']!r}"
        ) from None
    try:
        patient = unit.patient_at_bed(bed, src)
    except InputError as exc:
        raise InputError(src, f"{where}bed", exc.message) from None
    if cells["ref"] != patient.ref:
        raise InputError(
            src,
            f"{where}ref",
            f"bed {bed} holds {patient.ref} in the unit file, not {cells['ref']!r}",
        )
    return make_finding(
        time=moment,
        bed=bed,
        ref=patient.ref,
        by=cells["by"],
        item=cells["item"],
        site=cells["site"],
        value=cells["value"],
        source=src,
        where=where,
    )


def export_rows(rows: Sequence) -> str:  # Sequence[Entry]
    """Every stored row as CSV text, originals and corrections, each marked.

    ``entry`` is the row's id; ``corrects`` the id it corrects (empty for an original);
    ``reason`` why; ``superseded_by`` the id of the latest correction, on the original and
    on every earlier correction of it (empty on the row that stands).
    Times are written in the unit's local time with their UTC offset.
    """
    out = io.StringIO()
    write_export(out, rows)
    return out.getvalue()


def write_export(out: TextIO, rows: Iterable) -> int:  # Iterable[Entry]
    """Write the rows of :func:`export_rows` to ``out`` as they come; return the rows written.

    ``rows`` must come in check-time order (as the store gives them). A correction carries
    its original's check time, so ``superseded_by`` is settled within one instant: only
    one instant's rows are held at a time, whatever the record's length.
    """
    w = csv.writer(out, lineterminator="\n")
    w.writerow(EXPORT_COLUMNS)
    n = 0
    group: list = []
    for e in rows:
        if group and e.time != group[0].time:
            n += _write_instant(w, group)
            group = []
        group.append(e)
    return n + _write_instant(w, group)


def _write_instant(w: Any, rows: list) -> int:  # rows: list[Entry] of one instant
    latest: dict[int, int] = {}
    for e in rows:
        if e.corrects is not None:
            latest[e.corrects] = max(latest.get(e.corrects, 0), e.id)
    for e in rows:
        w.writerow(
            (
                e.time_local,
                e.bed,
                _safe_cell(e.ref),
                _safe_cell(e.by),
                e.item,
                e.site,
                e.value,
                e.id,
                e.corrects or "",
                _safe_cell(e.reason or ""),
                _superseded_by(e, latest),
            )
        )
    return len(rows)


def _superseded_by(e, latest: dict[int, int]) -> int | str:  # e: Entry
    newest = latest.get(e.corrects if e.corrects is not None else e.id)
    return newest if newest is not None and newest != e.id else ""


def _safe_cell(text: str) -> str:
    """Keep a spreadsheet from reading user text as a formula (OWASP CSV injection advice)."""
    return "'" + text if text[:1] in ("=", "+", "-", "@", "\t", "\r") else text
