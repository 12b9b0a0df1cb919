"""The demo's printed outputs: a case report per example case and the demo unit's
checklists (``vascplan demo`` calls :func:`demo_pdfs`)."""

from __future__ import annotations

from collections.abc import Callable
from datetime import date
from pathlib import Path
from typing import Any

from vascplan.fileio import output_inside
from vascplan.paths import examples_dir

DEMO_UNIT = "unit-demo.yaml"
DEMO_DAY = date(2026, 12, 2)
"""A day inside the demo unit's stay: every patient has a device in, one goes in that
morning and one comes out (the step-down checks show)."""

DEMO_SHIFTS = ("day", "night")


def demo_pdfs(
    out_dir: Path,
    examples: Path | None = None,
    echo: Callable[[str], None] | None = None,
    *,
    paper: str = "a4",
) -> list[Path]:
    """Write a case report for every ``examples/case-*.yaml`` and the demo unit's checklists.

    Parameters
    ----------
    out_dir : Path
        Output folder (created if missing); every name is kept inside it.
    examples : Path, optional
        Folder of the example files; default the bundled ``examples/``.
    echo : callable, optional
        Called with one line per file written.
    paper : str
        ``a4`` or ``letter``.

    Returns
    -------
    list of Path
        The PDFs written: case reports in case-file order, then one checklist per shift.
    """
    from vascplan.pdf.page import write_pdf
    from vascplan.reports.service import (
        case_report_pdf,
        checklist_pdf,
        default_checklist_name,
        default_report_name,
    )

    folder = examples if examples is not None else examples_dir()
    written: list[Path] = []

    def emit(name: str, data: bytes) -> None:
        path = write_pdf(output_inside(out_dir, name), data)
        written.append(path)
        if echo is not None:
            echo(f"  wrote {path}")

    Path(out_dir).mkdir(parents=True, exist_ok=True)
    for case_path in sorted(folder.glob("case-*.yaml")):
        case, data = case_report_pdf(case_path, paper=paper)
        emit(default_report_name(case.patient.ref), data)
    unit_path = folder / DEMO_UNIT
    if unit_path.is_file():
        for shift in DEMO_SHIFTS:
            _, _, data = checklist_pdf(unit_path, shift, DEMO_DAY, paper=paper)
            emit(default_checklist_name(shift, DEMO_DAY), data)
    return written


def step_reports(ctx: Any) -> None:
    """A ``vascplan demo`` step: the case reports and the demo unit's checklists."""
    written = demo_pdfs(ctx.out_dir, ctx.examples, echo=ctx.say)
    ctx.written.extend(written)
