"""What the ``report`` and ``checklist`` commands call: load, plan, render, write.

Each function builds the whole PDF in memory first; only a finished document is written,
atomically, so a failure at any step leaves no file (or the previous one) behind.
"""

from __future__ import annotations

import os
import re
from collections.abc import Sequence
from datetime import date, datetime
from pathlib import Path
from typing import Any

from vascplan.errors import InputError
from vascplan.fileio import output_inside
from vascplan.pdf.page import paper_size, write_pdf


def plan_for(case: Any) -> dict[str, Any] | None:
    """The route planner's result as its JSON dict, or None when there is no procedure."""
    if case.procedure is None:
        return None
    from vascplan.routes.plan import plan_case

    return plan_case(case).to_dict()


def case_report_pdf(
    case_path: str | os.PathLike[str],
    *,
    paper: str = "a4",
    generated_at: datetime | None = None,
    top: int | None = None,
) -> tuple[Any, bytes]:
    """Load a case, plan its routes and render the report; return ``(case, pdf_bytes)``.

    ``top``: routes printed in full (by rank); the rest get one line each. Default
    :data:`vascplan.reports.case_report.DEFAULT_TOP`.
    """
    from vascplan.anatomy.graph import build_tree
    from vascplan.case.load import load_case
    from vascplan.reports.case_report import DEFAULT_TOP, render_case_report

    if top is not None and top < 1:
        raise InputError("--top", "", f"{top} is not allowed; give a whole number of 1 or more")

    paper_size(paper)
    case = load_case(case_path)
    tree = build_tree(case)
    plan = plan_for(case)
    return case, render_case_report(
        case, tree, plan, paper=paper, generated_at=generated_at, top=top or DEFAULT_TOP
    )


def parse_day(text: str, source: str = "--date") -> date:
    """A ``YYYY-MM-DD`` option value.

    >>> parse_day("2026-12-02")
    datetime.date(2026, 12, 2)
    """
    if not re.fullmatch(r"[0-9]{4}-[0-9]{2}-[0-9]{2}", text or ""):
        raise InputError(source, "", f"{text!r} is not a date as YYYY-MM-DD, e.g. 2026-12-02")
    try:
        day = date.fromisoformat(text)
    except ValueError:
        raise InputError(source, "", f"{text!r} is not a calendar date") from None
    from datetime import UTC, datetime, time

    from vascplan.plausibility import check_review_time

    check_review_time(datetime.combine(day, time(12), tzinfo=UTC), source)  # issue 18
    return day


def parse_bed(text: str, source: str = "--bed") -> int:
    """A ``--bed`` value: a bed number.

    >>> parse_bed(" 3")
    3
    """
    from vascplan.plausibility import number_problem

    try:
        if number_problem(text, integer=True):  # only ASCII digits 0-9
            raise ValueError(text)
        return int(text.strip())
    except ValueError:
        raise InputError(
            source, "", f"{text!r} is not a bed number; give a whole number such as 3"
        ) from None


def checklist_pdf(
    unit_path: str | os.PathLike[str],
    shift: str,
    day: date,
    *,
    beds: Sequence[int] | None = None,
    paper: str = "a4",
    generated_at: datetime | None = None,
) -> tuple[Any, list[Any], bytes]:
    """Load a unit and its protocol and render a shift's checklist.

    Returns ``(unit, sheets, pdf_bytes)``.
    """
    from vascplan.reports.checklist import checklist_sheets, render_checklist
    from vascplan.surveillance.service import load_unit_and_protocol

    paper_size(paper)
    unit, protocol = load_unit_and_protocol(Path(unit_path))
    if not unit.patients:
        raise InputError(
            str(unit_path), "patients", "the unit has no patient to print a checklist for"
        )
    sheets = checklist_sheets(unit, shift, day, protocol, beds=list(beds) if beds else None)
    at = generated_at or datetime.now(unit.unit.tz)
    return unit, sheets, render_checklist(sheets, paper=paper, generated_at=at)


def default_report_name(ref: str) -> str:
    """``<ref>-case-report.pdf``, the ref made safe and unique for a file name.

    A ref that is not already a safe name gets a short hash of itself, so that two refs
    never share a file (see :func:`vascplan.textsafety.ref_file_part`).

    >>> default_report_name("../<b>x"), default_report_name("DEMO-07")
    ('b_x-9f4a08e0-case-report.pdf', 'DEMO-07-case-report.pdf')
    """
    from vascplan.textsafety import ref_file_part

    return f"{ref_file_part(ref)[0]}-case-report.pdf"


def default_checklist_name(shift: str, day: date, refs: Sequence[str] = ()) -> str:
    """``checklist-<shift>-<date>[-<ref>].pdf`` (one ref when a single bed is printed)."""
    from vascplan.fileio import safe_filename
    from vascplan.textsafety import ref_file_part

    tail = f"-{ref_file_part(refs[0])[0]}" if len(refs) == 1 else ""
    return f"checklist-{safe_filename(shift)}-{day.isoformat()}{tail}.pdf"


def write_output(
    data: bytes, output: str | None, folder: str | os.PathLike[str], name: str
) -> Path:
    """Write to ``output`` when given, else to ``folder/name`` (a name kept inside the folder)."""
    target = Path(output) if output else output_inside(folder, name)
    if target.is_dir():
        raise InputError(str(target), "", "is a folder; give a file name such as report.pdf")
    try:
        return write_pdf(target, data)
    except OSError as exc:
        reason = exc.strerror or exc.__class__.__name__
        raise InputError(
            str(target), "", f"cannot write here ({reason}); choose a folder you can write to"
        ) from None
