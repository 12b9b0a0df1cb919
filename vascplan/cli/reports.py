"""``vascplan report`` and ``vascplan checklist``: thin commands over vascplan.reports."""

from __future__ import annotations

import click

from vascplan.safety import CAUTION

PAPER = click.Choice(["a4", "letter"], case_sensitive=False)


@click.command(
    epilog="Example: vascplan report examples/case-DEMO-07-sfa-occlusion.yaml -o DEMO-07.pdf"
    " --top 5"
    f"\n\nCaution: {CAUTION}",
)
@click.argument("case_file", metavar="CASE", type=click.Path(dir_okay=False))
@click.option(
    "-o",
    "--output",
    metavar="FILE.pdf",
    help="PDF to write (atomically); default <ref>-case-report.pdf here.",
)
@click.option("--paper", type=PAPER, default="a4", show_default=True, help="ISO A4 or US Letter.")
@click.option(
    "--top",
    type=int,
    default=None,
    metavar="N",
    help="Routes (by rank) printed with their full reasons (default 10); every other "
    "route still gets one line.",
)
def report(case_file: str, output: str | None, paper: str, top: int | None) -> None:
    """Case-conference PDF: summary, drawn arterial map, ranked routes, assumptions.

    The map draws the patient's tree with lesions, stents and grafts, the chosen route
    and the runner-up, and the target; the route table gives each route's verdict and
    reasons from the route planner.
    """
    from vascplan.reports.service import case_report_pdf, default_report_name, write_output

    case, data = case_report_pdf(case_file, paper=paper.lower(), top=top)
    path = write_output(data, output, ".", default_report_name(case.patient.ref))
    click.echo(f"wrote {path}")
    _note_renamed(case.patient.ref, output)


@click.command(
    epilog="Example: vascplan checklist examples/unit-demo.yaml --shift day --date 2026-12-02 "
    "-o day.pdf"
    f"\n\nCaution: {CAUTION}",
)
@click.argument("unit_file", metavar="UNIT", type=click.Path(dir_okay=False))
@click.option("--shift", required=True, help="Shift name from the unit file (e.g. day).")
@click.option(
    "--date",
    "day_text",
    required=True,
    metavar="YYYY-MM-DD",
    help="Local date the shift starts on.",
)
@click.option(
    "--bed",
    "beds",
    multiple=True,
    metavar="N",
    help="Only this bed (repeat for several); default every patient.",
)
@click.option(
    "-o",
    "--output",
    metavar="FILE.pdf",
    help="PDF to write (atomically); default checklist-<shift>-<date>.pdf here.",
)
@click.option("--paper", type=PAPER, default="a4", show_default=True, help="ISO A4 or US Letter.")
def checklist(
    unit_file: str, shift: str, day_text: str, beds: tuple[str, ...], output: str | None, paper: str
) -> None:
    """Nursing checklist PDF for a shift: one patient per page.

    Each sheet: bed, ref, device, insertion time, distal perfusion cannula, risk tier,
    baseline, a row per scheduled check with a box per item, the escalation criteria
    boxed, initials.
    """
    from vascplan.reports.service import (
        checklist_pdf,
        default_checklist_name,
        parse_bed,
        parse_day,
        write_output,
    )

    day = parse_day(day_text)
    numbers = [parse_bed(b) for b in beds]
    _, sheets, data = checklist_pdf(
        unit_file, shift, day, beds=numbers or None, paper=paper.lower()
    )
    name = default_checklist_name(shift, day, [s.ref for s in sheets] if beds else ())
    path = write_output(data, output, ".", name)
    click.echo(f"wrote {path} ({len(sheets)} patient{'s' if len(sheets) != 1 else ''})")
    if beds and len(sheets) == 1:
        _note_renamed(sheets[0].ref, output)


def _note_renamed(ref: str, output: str | None) -> None:
    """Say when a ref was not a safe file name and the default name got a hash of it."""
    from vascplan.textsafety import ref_file_part, safe_terminal

    if output is None and ref_file_part(ref)[1]:
        click.echo(
            safe_terminal(
                f"note: the ref {ref!r} is not a safe file name; the file name carries a short "
                "hash of it, so that no other patient's file is replaced"
            )
        )
