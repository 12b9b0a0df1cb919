"""The nursing checklist: one sheet per patient per shift.

Each sheet has a header (bed, ref, device kind, size and side, insertion time, distal
perfusion cannula, risk tier), the baseline findings, a grid with one row per check that
falls due in the shift (from the surveillance schedule) and one column per check item,
boxes to write in and a column for initials, the escalation criteria in a heavy box, and
the caution. Times are printed in the unit's local time with the zone; a row whose UTC
offset differs from the shift start's (a clock change inside the shift) says so.

:func:`checklist_sheets` gathers what to print from the unit, protocol and schedule;
:func:`render_checklist` only draws it.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from datetime import UTC, date, datetime
from typing import Any

from reportlab.lib import colors
from reportlab.lib.styles import ParagraphStyle
from reportlab.platypus import (
    Flowable,
    KeepInFrame,
    PageBreak,
    Paragraph,
    Spacer,
    Table,
    TableStyle,
)

from vascplan.localtime import offset_text
from vascplan.pdf.page import PageLabel, PageSetup, build_pdf, fonts, frame_box, styles
from vascplan.pdf.text import clean, para, rich, rich_para

DEVICE_NAMES = {
    "va-ecmo-arterial": "VA-ECMO arterial return cannula",
    "microaxial-pump": "microaxial pump",
    "balloon-pump": "intra-aortic balloon pump",
    "large-bore-sheath": "large-bore sheath",
}

SIDE_NAMES = {"L": "left", "R": "right"}

"""Access vessels of the arm (the unit file's ``ACCESS_VESSELS`` that are not the leg's)."""

NOT_VALIDATED = (
    "The tier combines published risk factors; no validated score of limb-ischaemia risk on "
    "mechanical support exists."
)
"""Said beside every tier (REFERENCES.md: no validated risk score exists)."""


@dataclass(frozen=True)
class CheckRow:
    """One scheduled check: when it is due, its phase and interval, and the items due."""

    due: datetime
    phase: str
    interval_min: int
    items: tuple[str, ...]


@dataclass(frozen=True)
class ChecklistSheet:
    """Everything one patient's sheet prints (texts are raw; the renderer escapes them)."""

    unit_name: str
    shift_name: str
    shift_start: datetime
    shift_end: datetime
    bed: int
    ref: str
    nurse: str | None
    device: str
    inserted: datetime
    removed: datetime | None
    dpc: str
    risk_tier: str
    risk_reasons: tuple[str, ...]
    risk_total: float
    baseline: tuple[tuple[str, str], ...]
    items: tuple[tuple[str, str], ...]  # (id, wording), in protocol order
    rows: tuple[CheckRow, ...]
    escalation: tuple[tuple[str, str, int], ...]  # (finding, call, within_min)
    notes: tuple[str, ...] = field(default_factory=tuple)
    tier_changes: tuple[tuple[datetime, str, str], ...] = field(default_factory=tuple)
    """(from when, new tier, the team's note): tier events of the unit file in the shift."""
    """Said when the device sits in an arm artery: the protocol's items name the legs."""


def _utc(at: datetime) -> datetime:
    """``at`` in UTC: aware datetimes sharing a tzinfo compare by wall clock, which is
    wrong inside the hour repeated when the clocks go back."""
    return at.astimezone(UTC)


def _when(at: datetime) -> str:
    return f"{at:%Y-%m-%d %H:%M} {at.tzname()}"


def device_text(device: Any) -> str:
    """``17 Fr (outer) VA-ECMO arterial return cannula, right CFA``."""
    kind = DEVICE_NAMES.get(device.kind, device.kind)
    od = f", {device.outer_mm:g} mm outer" if getattr(device, "outer_mm", None) else ""
    return (
        f"{device.size_fr:g} Fr ({device.label} size{od}) {kind}, "
        f"{SIDE_NAMES.get(device.side, device.side)} {device.vessel}"
    )


def _risk_lines(risk: Any) -> tuple[str, ...]:
    """The factors with their weights (ids, short), and any clinician's tier event."""
    weighted = getattr(risk, "weighted", None)
    if not weighted:
        return tuple(str(r) for r in getattr(risk, "reasons", ()))
    factors = " x ".join(
        f"{w.id} {w.weight:g}" + ("" if w.counted else " (not counted)") for w in weighted
    )
    out = [f"factors {factors}"]
    if not getattr(risk, "vessel_measured", True):
        out.insert(0, "access vessel not measured: figures use a reference diameter *")
    out += [str(r) for r in getattr(risk, "reasons", ()) if str(r).startswith("tier set to")]
    return tuple(out)


def baseline_rows(baseline: Any) -> tuple[tuple[str, str], ...]:
    """The baseline findings as (what, value) pairs, sides and sites in a stable order."""
    out = []
    if baseline.nirs:
        out.append(
            ("Calf NIRS", ", ".join(f"{s} {v:g} %" for s, v in sorted(baseline.nirs.items())))
        )
    if baseline.doppler:
        out.append(("Doppler", ", ".join(f"{k} {v}" for k, v in sorted(baseline.doppler.items()))))
    if baseline.pulses:
        out.append(("Pulses", ", ".join(f"{k} {v}" for k, v in sorted(baseline.pulses.items()))))
    return tuple(out) or (("None recorded", "the unit file holds no baseline: record one now"),)


def checklist_sheets(
    unit: Any,
    shift_name: str,
    day: date,
    protocol: Any,
    *,
    beds: Iterable[int] | None = None,
) -> list[ChecklistSheet]:
    """Gather the sheets of one shift from the unit file, protocol and check schedule.

    Parameters
    ----------
    unit : Unit
        The validated unit file.
    shift_name : str
        A shift of the unit (``day``).
    day : date
        The local date the shift starts on.
    protocol : Protocol
        The unit's surveillance protocol.
    beds : iterable of int, optional
        Only these beds, in the order given, each once (each must hold a patient);
        every patient, by bed, when omitted.

    Raises
    ------
    InputError
        Unknown shift or an empty bed.
    """
    from vascplan.surveillance.risk import assess_patient
    from vascplan.surveillance.schedule import patient_schedule
    from vascplan.surveillance.unit import shift_window

    shift = unit.shift_named(shift_name)
    start, end = shift_window(unit, shift, datetime.combine(day, shift.start))
    # Through UTC and back: a start in the hour the clocks skip (01:30 on a spring-forward
    # night in London) then prints as the wall time that exists at that instant (02:30 BST).
    start, end = (_utc(t).astimezone(unit.unit.tz) for t in (start, end))
    patients = (
        [unit.patient_at_bed(b) for b in dict.fromkeys(beds)]  # a bed asked twice: one sheet
        if beds is not None
        else sorted(unit.patients, key=lambda p: p.bed)
    )
    sheets = []
    for p in patients:
        risk = assess_patient(p, protocol, start)
        checks = patient_schedule(unit, p, protocol, start, end)
        rows = tuple(
            CheckRow(c.due.astimezone(unit.unit.tz), c.phase, c.interval_min, tuple(c.items))
            for c in checks
            if _utc(start) <= _utc(c.due) < _utc(end)  # real time, not wall clock
        )
        used = {i for r in rows for i in r.items}
        nirs = bool(p.baseline.nirs)
        dpc_in = p.dpc is not None
        wanted = list(protocol.items_for(p.device.kind, nirs, dpc_in, limb=p.device.limb))
        item_ids = [i for i in wanted if i in used] + sorted(used - set(wanted))
        if not rows:
            item_ids = wanted
        advice = getattr(risk, "advice", None)
        if p.dpc is None:
            dpc = "none"
            if advice is not None:
                dpc += f"; {advice.short()}. Basis: {advice.basis[0]}"
        else:
            dpc = f"{p.dpc.size_fr:g} Fr, in since {_when(p.dpc.inserted.astimezone(unit.unit.tz))}"
            if p.dpc.removed is not None:
                dpc += f", removed {_when(p.dpc.removed.astimezone(unit.unit.tz))}"
        changes = tuple(
            (e.at.astimezone(unit.unit.tz), str(e.tier), e.note)
            for e in sorted(getattr(p, "events", ()) or (), key=lambda e: _utc(e.at))
            if _utc(start) < _utc(e.at) < _utc(end)
        )
        notes = []
        if not rows:
            notes.append("No check falls due for this patient in this shift.")
        sheets.append(
            ChecklistSheet(
                unit_name=unit.unit.name,
                shift_name=shift.name,
                shift_start=start,
                shift_end=end,
                bed=p.bed,
                ref=p.ref,
                nurse=unit.nurse_for(p.bed, shift.name),
                device=device_text(p.device),
                inserted=p.device.inserted.astimezone(unit.unit.tz),
                removed=p.device.removed.astimezone(unit.unit.tz) if p.device.removed else None,
                dpc=dpc,
                risk_tier=str(risk.tier),
                risk_reasons=_risk_lines(risk),
                risk_total=float(getattr(risk, "total", 1.0)),
                baseline=baseline_rows(p.baseline),
                items=tuple((i, protocol.item_text(i)) for i in item_ids),
                rows=rows,
                escalation=tuple((e.finding, e.call, e.within_min) for e in protocol.escalation),
                notes=tuple(notes),
                tier_changes=changes,
            )
        )
    return sheets


# ---------------------------------------------------------------------------
# Rendering


class VerticalText(Flowable):
    """A column heading written bottom-to-top, to keep narrow columns legible."""

    def __init__(self, text: str, size: float = 7.0) -> None:
        super().__init__()
        self.text = clean(text)
        self.size = size

    def wrap(self, avail_width: float, avail_height: float) -> tuple[float, float]:
        from reportlab.pdfbase.pdfmetrics import stringWidth

        self._length = stringWidth(self.text, fonts().bold, self.size)
        return self.size + 2, self._length + 2

    def draw(self) -> None:
        c = self.canv
        c.saveState()
        c.setFont(fonts().bold, self.size)
        c.translate(self.size, 1)
        c.rotate(90)
        c.drawString(0, 0, self.text)
        c.restoreState()


def _item_heading(item_id: str) -> str:
    return item_id.replace("-", " ")


def _changes_markup(sheet: ChecklistSheet) -> str:
    """``<b>From 12:00 GMT: HIGH</b> (set by the team: note).`` for each tier change in
    the shift, escaped, ready to join our own markup."""
    out = []
    for at, tier, note in sheet.tier_changes:
        when = f"{at:%H:%M} {at.tzname()}"
        if at.date() != sheet.shift_start.date():
            when = f"{at:%d %b} {when}"
        out.append(
            rich(
                "<b>From {when}: {tier}</b> (set by the team{sep}{note}). ",
                when=when,
                tier=tier.upper(),
                sep=": " if note else "",
                note=note,
            )
        )
    return "".join(out)


def _header_table(sheet: ChecklistSheet, width: float) -> Table:
    st = styles()
    label, cell = st["cell-bold"], st["cell"]
    shift = f"{sheet.shift_name}: {_when(sheet.shift_start)} to {_when(sheet.shift_end)}"
    rows = [
        [
            para("Bed", label),
            para(str(sheet.bed), st["alarm"]),
            para("Ref", label),
            para(sheet.ref, st["alarm"]),
        ],
        [
            para("Unit", label),
            para(sheet.unit_name, cell),
            para("Shift", label),
            para(shift, cell),
        ],
        [
            para("Device", label),
            para(sheet.device, cell),
            para("Inserted", label),
            para(
                _when(sheet.inserted)
                + (f"; removed {_when(sheet.removed)}" if sheet.removed else ""),
                cell,
            ),
        ],
        [
            para("Distal perfusion cannula", label),
            para(sheet.dpc, cell),
            para("Nurse", label),
            para(sheet.nurse or "not assigned in the unit file: write name", cell),
        ],
        [
            para("Risk tier", label),
            Paragraph(  # each piece escaped on its own: user text never meets .format
                rich(
                    "<font size=10><b>{tier}</b></font> (combined relative risk {total}, "
                    "not a validated score)  {reasons}. ",
                    tier=sheet.risk_tier.upper(),
                    total=f"{sheet.risk_total:.2f}",
                    reasons="; ".join(sheet.risk_reasons) or "no risk factor recorded",
                )
                + _changes_markup(sheet)
                + rich("<i>{note}</i>", note=NOT_VALIDATED),
                st["small"],
            ),
            "",
            "",
        ],
    ]
    t = Table(rows, colWidths=[0.2 * width, 0.33 * width, 0.11 * width, 0.36 * width])
    t.setStyle(
        TableStyle(
            [
                ("GRID", (0, 0), (-1, -1), 0.4, colors.grey),
                ("SPAN", (1, -1), (-1, -1)),
                ("BACKGROUND", (0, 0), (0, -1), colors.Color(0.92, 0.92, 0.92)),
                ("BACKGROUND", (2, 0), (2, -2), colors.Color(0.92, 0.92, 0.92)),
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("TOPPADDING", (0, 0), (-1, -1), 2),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 2),
            ]
        )
    )
    return t


def _baseline_table(sheet: ChecklistSheet, width: float) -> Table:
    st = styles()
    rows = [
        [para("Baseline", st["cell-bold"]), para("compare every check with these", st["small"])]
    ]
    rows += [[para(k, st["cell-bold"]), para(v, st["cell"])] for k, v in sheet.baseline]
    t = Table(rows, colWidths=[0.2 * width, 0.8 * width])
    t.setStyle(
        TableStyle(
            [
                ("BACKGROUND", (0, 0), (-1, 0), colors.Color(0.92, 0.92, 0.92)),
                ("BOX", (0, 0), (-1, -1), 0.4, colors.grey),
                ("LINEBELOW", (0, 0), (-1, -2), 0.25, colors.lightgrey),
                ("TOPPADDING", (0, 0), (-1, -1), 1.5),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 1.5),
            ]
        )
    )
    return t


def _ambiguous(at: datetime) -> bool:
    """True when the local wall time ``at`` shows happens twice (the hour repeated when
    the clocks go back)."""
    other = at.replace(fold=1 - at.fold)
    return other.utcoffset() != at.utcoffset()


def zone_text(at: datetime) -> str:
    """The zone and UTC offset of aware ``at``: ``BST +01:00``; the offset alone where
    the zone has no abbreviation (``-04:00`` in America/Santiago)."""
    name, offset = at.tzname() or "", offset_text(at)
    return f"{name} {offset}" if name and name[0] not in "+-" else offset


def due_text(row: CheckRow, sheet: ChecklistSheet) -> str:
    """The due time as printed: ``HH:MM``, with the date when it is not the shift's first
    day, and the zone with its UTC offset when the offset differs from the shift start's
    or the wall time happens twice that night (so the first 01:15 reads
    ``01:15 BST +01:00``, the second ``01:15 GMT +00:00``)."""
    text = f"{row.due:%H:%M}"
    if row.due.date() != sheet.shift_start.date():
        text = f"{row.due:%d %b} {text}"
    if row.due.utcoffset() != sheet.shift_start.utcoffset() or _ambiguous(row.due):
        text += f" {zone_text(row.due)}"
    return text


ROW_HEIGHT_PT = 15.0
"""Height [pt] of a grid row: room for a handwritten value (common practice for forms)."""


def _grid(sheet: ChecklistSheet, width: float) -> Table:
    st = styles()
    ids = [i for i, _ in sheet.items]
    due_w, every_w, initials_w = 114.0, 20.0, 38.0  # due: room for "25 Oct 01:15 AEDT +11:00"
    item_w = (width - due_w - every_w - initials_w) / max(len(ids), 1)
    head = [
        rich_para(
            "<b>Due</b> ({zone})<br/>bed {bed}<br/>{ref}",
            st["small"],
            zone=sheet.shift_start.tzname(),
            bed=sheet.bed,
            ref=sheet.ref,
        )
    ]
    head += [VerticalText("every (min)")]
    head += [VerticalText(_item_heading(i)) for i in ids]
    head += [VerticalText("initials")]
    rows: list[list[Any]] = [head]
    for r in sheet.rows:
        cells: list[Any] = [
            rich_para("<b>{due}</b>", st["due"], due=due_text(r, sheet)),
            para(r.interval_min, st["tiny"]),
        ]
        cells += ["" for _ in ids]
        cells.append("")
        rows.append(cells)
    if not sheet.rows:
        rows.append([para("none", st["cell"]), ""] + ["" for _ in ids] + [""])
    t = Table(
        rows,
        colWidths=[due_w, every_w] + [item_w] * len(ids) + [initials_w],
        repeatRows=1,
        rowHeights=[None] + [ROW_HEIGHT_PT] * (len(rows) - 1),
    )
    style = [
        ("GRID", (0, 0), (-1, -1), 0.6, colors.black),
        ("LINEAFTER", (1, 0), (1, -1), 1.4, colors.black),
        ("ALIGN", (1, 1), (1, -1), "CENTER"),
        ("LEFTPADDING", (1, 0), (1, -1), 2),
        ("RIGHTPADDING", (1, 0), (1, -1), 2),
        ("LINEBEFORE", (-1, 0), (-1, -1), 1.4, colors.black),
        ("LINEBELOW", (0, 0), (-1, 0), 1.4, colors.black),
        ("VALIGN", (0, 0), (-1, 0), "BOTTOM"),
        ("VALIGN", (0, 1), (-1, -1), "MIDDLE"),
        ("ALIGN", (1, 0), (-1, 0), "CENTER"),
        ("BACKGROUND", (0, 0), (-1, 0), colors.Color(0.90, 0.90, 0.90)),
        ("TOPPADDING", (0, 1), (-1, -1), 1),
        ("BOTTOMPADDING", (0, 1), (-1, -1), 1),
    ]
    for n, r in enumerate(sheet.rows, start=1):
        for k, i in enumerate(ids, start=2):
            if i not in r.items:  # not due at this check: shaded and crossed
                style.append(("BACKGROUND", (k, n), (k, n), colors.Color(0.78, 0.78, 0.78)))
    t.setStyle(TableStyle(style))
    return t


def _item_key(sheet: ChecklistSheet, width: float) -> Any:
    """What each column means: one flowing paragraph of bold heading and wording, so the
    key takes a few lines and a 12-check shift stays on one sheet (A4 and Letter)."""
    st = styles()
    entries = [(_item_heading(i), text) for i, text in sheet.items]
    entries.append(("every (min)", "minutes of real time since the previous check"))
    entries.append(("shaded box", "not due at that check"))
    parts = [rich("<b>{h}</b>: {t}", h=h, t=t) for h, t in entries]
    return Paragraph("<b>Key.</b> " + " &#183; ".join(parts), st["tiny"])


def escalation_box(escalation: Sequence[tuple[str, str, int]], width: float) -> Table:
    """The escalation criteria in a heavy box: finding, whom to call, how fast."""
    st = styles()
    rows: list[list[Any]] = [
        [
            para("CALL AT ONCE IF YOU FIND", st["alarm"]),
            para("Call", st["cell-bold"]),
            para("Within", st["cell-bold"]),
        ]
    ]
    for finding, call, within in escalation:
        rows.append(
            [
                para(finding, st["small"]),
                para(call, st["small"]),
                rich_para("<b>{m} min</b>", st["small"], m=within),
            ]
        )
    t = Table(rows, colWidths=[0.61 * width, 0.29 * width, 0.10 * width])
    t.setStyle(
        TableStyle(
            [
                ("BOX", (0, 0), (-1, -1), 2.5, colors.black),
                ("LINEBELOW", (0, 0), (-1, 0), 1.2, colors.black),
                ("BACKGROUND", (0, 0), (-1, 0), colors.Color(0.82, 0.82, 0.82)),
                ("LINEBELOW", (0, 1), (-1, -2), 0.3, colors.grey),
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("VALIGN", (0, 0), (-1, 0), "BOTTOM"),
                ("TOPPADDING", (0, 0), (-1, -1), 0.8),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 0.8),
                ("BOTTOMPADDING", (0, -1), (-1, -1), 2.2),  # clear of the heavy frame
            ]
        )
    )
    return t


def _signatures(width: float) -> Table:
    """One row of boxes: initials and full name of each nurse who signs the sheet."""
    st = styles()
    label = para("Initials and full name of each nurse who signs this sheet", st["small"])
    t = Table([[label, "", "", ""]], colWidths=[0.31 * width] + [0.23 * width] * 3, rowHeights=[20])
    t.setStyle(
        TableStyle(
            [("GRID", (1, 0), (-1, 0), 0.5, colors.black), ("VALIGN", (0, 0), (-1, -1), "MIDDLE")]
        )
    )
    return t


def sheet_story(sheet: ChecklistSheet, width: float) -> list[Any]:
    """The flowables of one patient's sheet."""
    st = styles()
    title = ParagraphStyle("sheet-title", parent=st["title"], fontSize=13, leading=15.5)
    title.spaceAfter = 2
    story: list[Any] = [
        PageLabel(f"bed {sheet.bed}, {sheet.ref}"),
        rich_para(
            "Limb-perfusion checklist: bed {bed}, {ref}", title, bed=sheet.bed, ref=sheet.ref
        ),
        _header_table(sheet, width),
        Spacer(1, 3),
        escalation_box(sheet.escalation, width),
        Spacer(1, 2),
        _baseline_table(sheet, width),
        Spacer(1, 3),
        _grid(sheet, width),
    ]
    for note in sheet.notes:
        story.append(para(note, st["alarm"]))
    story += [
        Spacer(1, 2),
        _item_key(sheet, width),
        Spacer(1, 3),
        _signatures(width),
    ]
    return story


ONE_SHEET_ROWS = 12
"""A shift of up to this many checks is printed on one sheet (README), A4 or Letter."""

MIN_FIT_SCALE = 0.85
"""The least scale [1] a one-sheet shift is shrunk to so that it fits its page; a sheet
that would need more (very long notes) runs on overleaf at full size instead."""


def _fitted(story: list[Any], sheet: ChecklistSheet, width: float, height: float) -> list[Any]:
    """``story`` shrunk just enough to fit one page when the shift has at most
    :data:`ONE_SHEET_ROWS` checks and a little too much text for the page (long risk
    reasons, the shorter US Letter); otherwise unchanged, so that the grid runs on."""
    if len(sheet.rows) > ONE_SHEET_ROWS:
        return story
    total = 0.0
    for f in story:
        total += f.wrap(width, height)[1] + f.getSpaceBefore() + f.getSpaceAfter()
    if total <= height or height / total < MIN_FIT_SCALE:
        return story
    # The page label stays outside, so the head of the page still names the patient.
    return [story[0], KeepInFrame(width, height - 1, story[1:], mode="shrink")]


def render_checklist(
    sheets: Sequence[ChecklistSheet], *, paper: str = "a4", generated_at: datetime | None = None
) -> bytes:
    """The checklist PDF, one patient per page (a long shift's grid runs on overleaf)."""
    if not sheets:
        raise ValueError("no patient to print")
    first = sheets[0]
    at = generated_at or datetime.now(first.shift_start.tzinfo)
    _, _, width, height = frame_box(paper)
    story: list[Any] = []
    for n, sheet in enumerate(sheets):
        if n:
            story.append(PageBreak())
        story += _fitted(sheet_story(sheet, width), sheet, width, height)
    title = (
        f"Limb checks - {clean(first.unit_name)} - shift {first.shift_name} "
        f"{first.shift_start:%Y-%m-%d}"
    )
    return build_pdf(story, PageSetup(paper=paper, title=title, generated_at=at))


__all__ = [
    "CheckRow",
    "ChecklistSheet",
    "checklist_sheets",
    "escalation_box",
    "render_checklist",
    "sheet_story",
]
