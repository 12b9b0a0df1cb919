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
    PageBreak,
    Paragraph,
    Spacer,
    Table,
    TableStyle,
)

from vascplan.localtime import offset_text
from vascplan.pdf.page import (
    NARROW_MARGIN_PT,
    PageLabel,
    PageSetup,
    build_pdf,
    fonts,
    frame_box,
)
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
"""Said beside every tier: no validated score of limb-ischaemia risk on large-bore support
exists (the risk rules' statement)."""


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
    per_side: tuple[str, ...] = field(default_factory=tuple)
    """Item ids checked and written down for each limb (L and R) on its own."""
    limb: str = "leg"
    """The limb at risk below the device: ``leg`` or ``arm`` (the columns' L and R)."""
    bedside_reasons: tuple[str, ...] = field(default_factory=tuple)
    """The risk factors in a few words, without their sources (those are in the report)."""


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


def _per_side(protocol: Any, item_id: str) -> bool:
    try:
        return bool(protocol.item(item_id).per_side)
    except KeyError:
        return False


def bedside_reasons(risk: Any) -> tuple[str, ...]:
    """The risk factors that set the tier, in a few words each and without their sources
    (the bedside sheet cites nothing; the risk output and the case report do).

    The words are the risk rules' own ``reason`` up to its first colon, without remarks in
    brackets; the SAR is added with ``*`` when the vessel diameter is a reference value.
    """
    import re

    from vascplan.surveillance.risk import load_rules

    by_id = {f.id: f.reason for f in load_rules().factors}
    out = []
    for fid in getattr(risk, "factors", ()) or ():
        text = by_id.get(fid, fid).split(":", 1)[0]
        out.append(re.sub(r"\s*\([^)]*\)", "", text).strip())
    sar = getattr(risk, "sar", None)
    if sar is not None:
        out.append(f"SAR {sar:.2f}" + ("" if getattr(risk, "vessel_measured", True) else " *"))
    # A clinician's tier (with the note the team wrote) is a reason of its own.
    out += [str(r) for r in getattr(risk, "reasons", ()) if str(r).startswith("tier set to")]
    return tuple(out) or ("no listed risk factor",)


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
                dpc += f"; {advice.short()} (basis: risk output and case report)"
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
                escalation=tuple(
                    (text, e.call, e.within_min)
                    for e, text in protocol.escalation_for(
                    p.device.kind, p.device.limb, dpc_in_place=p.dpc is not None
                )
                ),
                notes=tuple(notes),
                tier_changes=changes,
                per_side=tuple(i for i in item_ids if _per_side(protocol, i)),
                limb=p.device.limb,
                bedside_reasons=bedside_reasons(risk),
            )
        )
    return sheets


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


# ---------------------------------------------------------------------------
# Rendering
#
# One sheet per patient per shift, portrait: the header line (ref, bed, device and side,
# tier, risk factors), the shift line (unit, times, nurse, insertion, distal cannula,
# baseline), the grid (a row per check: time due, a box per item per limb, initials, the
# action taken or whom it was escalated to), the key when there is room, the escalation
# box in the protocol's words for the device and limb, the signature and handover box, and
# a footer naming where the basis is. Rows take the height left on the page, between
# ROW_MAX_PT and ROW_MIN_PT; a shift with more rows than fit at ROW_MIN_PT continues on a
# second page that repeats the header and ends with the escalation box.

FONT_MIN_PT = 7.0
"""The smallest text on the sheet [pt]: readable when printed (common practice for forms)."""

ROW_MIN_PT = 8.6
"""Least height of a grid row [pt] (about 3 mm): a tick, a number or initials written
small (unit policy); 48 rows of 15-min checks fit one A4 or Letter page."""

ROW_MAX_PT = 16.0
"""Most height of a grid row [pt] (about 5.6 mm: common practice for handwritten forms)."""

ROW_KEY_PT = 11.0
"""The key of the columns is printed when rows can still be at least this high [pt]."""


def _style(name: str, size: float = FONT_MIN_PT, bold: bool = False, lead: float = 1.18) -> Any:
    f = fonts()
    return ParagraphStyle(
        name, fontName=f.bold if bold else f.regular, fontSize=size, leading=size * lead
    )


class VerticalText(Flowable):
    """A column heading written bottom-to-top, to keep narrow columns legible."""

    def __init__(self, text: str, size: float = FONT_MIN_PT) -> None:
        super().__init__()
        self.text = clean(text)
        self.size = size

    def wrap(self, avail_width: float, avail_height: float) -> tuple[float, float]:
        from reportlab.pdfbase.pdfmetrics import stringWidth

        self._length = stringWidth(self.text, fonts().bold, self.size)
        return self.size + 2, self._length + 4

    def draw(self) -> None:
        c = self.canv
        c.saveState()
        c.setFont(fonts().bold, self.size)
        c.translate(self.size, 1)
        c.rotate(90)
        c.drawString(0, 0, self.text)
        c.restoreState()


HEADINGS = {
    "capillary-refill": "refill",
    "temperature": "temp",
    "pump-position": "position",
    "circuit-flow": "flow",
    "access-site": "access",
    "arm-pulses": "wrist pulses",
    "hand-colour": "hand colour",
    "hand-temperature": "hand temp",
    "finger-refill": "finger refill",
    "hand-sensation": "sensation",
    "hand-movement": "movement",
}
"""Short column headings of the bundled protocol's items (the key gives their wording);
any other item is headed by its id."""


def _item_heading(item_id: str) -> str:
    return HEADINGS.get(item_id, item_id.replace("-", " "))


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


def _header(sheet: ChecklistSheet, page: int, pages: int) -> list[Any]:
    """The header line and the shift line (repeated on a continuation page)."""
    of = f" (page {page} of {pages})" if pages > 1 else ""
    line = rich(
        "<font size=10><b>Limb-perfusion checklist: bed {bed}, {ref}</b></font>{of} &#183; "
        "{device} &#183; <b>tier {tier}</b>: {reasons}",
        bed=sheet.bed,
        ref=sheet.ref,
        of=of,
        device=sheet.device,
        tier=sheet.risk_tier.upper(),
        reasons="; ".join(sheet.bedside_reasons) or "; ".join(sheet.risk_reasons),
    )
    shift = f"{sheet.shift_name}: {_when(sheet.shift_start)} to {_when(sheet.shift_end)}"
    inserted = _when(sheet.inserted) + (
        f"; removed {_when(sheet.removed)}" if sheet.removed else ""
    )
    base = "; ".join(f"{k} {v}" for k, v in sheet.baseline)
    info = rich(
        "<b>Shift</b> {shift} &#183; <b>Nurse</b> {nurse} &#183; "
        "<b>Inserted</b> {inserted} &#183; <b>Distal perfusion cannula</b> {dpc} &#183; "
        "<b>Baseline</b> (compare every check): {base}. ",
        shift=shift,
        nurse=sheet.nurse or "not assigned in the unit file: write name",
        inserted=inserted,
        dpc=sheet.dpc,
        base=base,
    ) + _changes_markup(sheet)
    return [
        PageLabel(f"bed {sheet.bed}, {sheet.ref}"),
        Paragraph(line, _style("ck-line", 8.5, lead=1.2)),
        Paragraph(info, _style("ck-info")),
        Spacer(1, 1.5),
    ]


def _columns(sheet: ChecklistSheet) -> list[tuple[str, str | None]]:
    """The item columns, (item id, side or None), left before right."""
    out: list[tuple[str, str | None]] = []
    for item_id, _ in sheet.items:  # the limbs first, then the device and access site
        if item_id in sheet.per_side:
            out += [(item_id, "L"), (item_id, "R")]
    out += [(item_id, None) for item_id, _ in sheet.items if item_id not in sheet.per_side]
    return out


def _due_width(sheet: ChecklistSheet) -> float:
    from reportlab.pdfbase.pdfmetrics import stringWidth

    texts = [due_text(r, sheet) for r in sheet.rows] or ["none"]
    return max(36.0, 6 + max(stringWidth(t, fonts().bold, FONT_MIN_PT) for t in texts))


def _grid(sheet: ChecklistSheet, rows: Sequence[CheckRow], width: float, row_h: float) -> Table:
    """The check grid: a row per check, a box per item per limb, initials, action."""
    cols = _columns(sheet)
    due_w, initials_w = _due_width(sheet), 16.0
    action_w = max(72.0, 0.17 * width)
    item_w = (width - due_w - initials_w - action_w) / max(len(cols), 1)
    small, bold = _style("ck-cell"), _style("ck-bold", bold=True)
    head0: list[Any] = [
        rich_para("<b>Due</b><br/>{zone}", small, zone=sheet.shift_start.tzname() or "")
    ]
    head1: list[Any] = [""]
    spans: list[tuple[str, tuple[int, int], tuple[int, int]]] = [("SPAN", (0, 0), (0, 1))]
    c = 1
    for item_id, side in cols:
        if side in (None, "L"):
            head0.append(VerticalText(_item_heading(item_id)))
            if side is None:
                spans.append(("SPAN", (c, 0), (c, 1)))
        else:
            head0.append("")
        head1.append(side or "")
        if side == "L":
            spans.append(("SPAN", (c, 0), (c + 1, 0)))
        c += 1
    head0 += [VerticalText("initials"), para("Action taken / escalated to (whom, when)", bold)]
    head1 += ["", ""]
    spans += [("SPAN", (c, 0), (c, 1)), ("SPAN", (c + 1, 0), (c + 1, 1))]
    data: list[list[Any]] = [head0, head1]
    due_style = _style("ck-due", bold=True, lead=1.1)
    for r in rows:
        data.append(
            [rich_para("<b>{due}</b>", due_style, due=due_text(r, sheet))]
            + ["" for _ in cols]
            + ["", ""]
        )
    if not sheet.rows:  # (not when measuring a sheet's fixed parts with no row)
        data.append([para("none", small)] + ["" for _ in cols] + ["", ""])
    t = Table(
        data,
        colWidths=[due_w] + [item_w] * len(cols) + [initials_w, action_w],
        rowHeights=[None, FONT_MIN_PT + 3] + [row_h] * (len(data) - 2),
        repeatRows=2,
    )
    style: list[Any] = [
        *spans,
        ("GRID", (0, 0), (-1, -1), 0.5, colors.black),
        ("LINEAFTER", (0, 0), (0, -1), 1.4, colors.black),
        ("LINEBEFORE", (-2, 0), (-2, -1), 1.4, colors.black),
        ("LINEBELOW", (0, 1), (-1, 1), 1.4, colors.black),
        ("BACKGROUND", (0, 0), (-1, 1), colors.Color(0.88, 0.88, 0.88)),
        ("VALIGN", (0, 0), (-1, 0), "BOTTOM"),
        ("VALIGN", (0, 1), (-1, -1), "MIDDLE"),
        ("ALIGN", (1, 0), (-2, 1), "CENTER"),
        ("FONT", (1, 1), (-3, 1), fonts().bold, FONT_MIN_PT + 0.5),
        ("TOPPADDING", (0, 0), (-1, 0), 1),
        ("BOTTOMPADDING", (0, 0), (-1, 0), 1),
        ("TOPPADDING", (0, 1), (-1, -1), 0),
        ("BOTTOMPADDING", (0, 1), (-1, -1), 0.5),
        ("LEFTPADDING", (0, 0), (-1, -1), 1.5),
        ("RIGHTPADDING", (0, 0), (-1, -1), 1.5),
    ]
    # A heavier line between the items of one limb pair and the next, so L and R read apart.
    for k, (_, side) in enumerate(cols, start=1):
        if side == "R" or side is None:
            style.append(("LINEAFTER", (k, 0), (k, -1), 1.0, colors.black))
    for n, r in enumerate(rows, start=2):
        if n % 4 == 1:  # every fourth row a little heavier: easier to follow a line across
            style.append(("LINEBELOW", (0, n), (-1, n), 0.9, colors.black))
        for k, (item_id, _) in enumerate(cols, start=1):
            if item_id not in r.items:  # not due at this check: shaded
                style.append(("BACKGROUND", (k, n), (k, n), colors.Color(0.72, 0.72, 0.72)))
    t.setStyle(TableStyle(style))
    return t


def _key(sheet: ChecklistSheet) -> Any:
    """What each column asks, in the protocol's words."""
    side = "arm" if sheet.limb == "arm" else "leg"
    parts = [rich("<b>{h}</b>: {t}", h=_item_heading(i), t=t) for i, t in sheet.items]
    parts.append(
        rich(
            "<b>L, R</b>: left and right {side}, each checked and written on its own "
            "(a value, or a tick when normal); <b>shaded box</b>: not due at that check",
            side=side,
        )
    )
    return Paragraph("<b>Key.</b> " + " &#183; ".join(parts), _style("ck-key"))


def escalation_box(escalation: Sequence[tuple[str, str, int]], width: float) -> Table:
    """The escalation criteria in a heavy box, most urgent first: the findings, whom to
    call and how fast, in the protocol's words for the patient's device and limb; findings
    that call the same people as fast share a row."""
    small, bold = _style("ck-esc", lead=1.06), _style("ck-esc-b", bold=True, lead=1.06)
    groups: dict[tuple[int, str], list[str]] = {}
    for finding, call, within in escalation:
        groups.setdefault((within, call), []).append(finding)
    rows: list[list[Any]] = [
        [
            para("CALL AT ONCE IF YOU FIND", _style("ck-alarm", 8, bold=True, lead=1.1)),
            para("Call", bold),
            para("Within", bold),
        ]
    ]
    for (within, call), findings in sorted(groups.items(), key=lambda g: g[0][0]):
        rows.append(
            [
                para("; or ".join(findings), small),
                para(call, small),
                rich_para("<b>{m} min</b>", small, m=within),
            ]
        )
    t = Table(rows, colWidths=[0.585 * width, 0.345 * width, 0.07 * width])
    t.setStyle(
        TableStyle(
            [
                ("BOX", (0, 0), (-1, -1), 2.0, colors.black),
                ("LINEBELOW", (0, 0), (-1, 0), 1.0, colors.black),
                ("BACKGROUND", (0, 0), (-1, 0), colors.Color(0.82, 0.82, 0.82)),
                ("LINEBELOW", (0, 1), (-1, -2), 0.3, colors.grey),
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("TOPPADDING", (0, 0), (-1, -1), 0.3),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 0.5),
                ("LEFTPADDING", (0, 0), (-1, -1), 2),
                ("RIGHTPADDING", (0, 0), (-1, -1), 2),
                ("BOTTOMPADDING", (0, -1), (-1, -1), 1.6),  # clear of the heavy frame
            ]
        )
    )
    return t


HANDOVER_MAX_PT = 90.0
"""The most height [pt] a page's spare room adds to the handover and signature box."""


def _signatures(width: float, extra: float = 0.0) -> Table:
    """The handover note and the signatures of each nurse who fills the sheet; ``extra``
    [pt] of the page's spare room makes them taller."""
    small = _style("ck-sig")
    t = Table(
        [
            [para("Handover (findings, actions pending, calls made):", small)],
            [para("Initials and full name of each nurse who signs this sheet:", small)],
        ],
        colWidths=[width],
        rowHeights=[16 + 0.6 * extra, 15 + 0.4 * extra],
    )
    t.setStyle(
        TableStyle(
            [
                ("BOX", (0, 0), (-1, -1), 1.0, colors.black),
                ("LINEBELOW", (0, 0), (-1, 0), 0.6, colors.black),
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("TOPPADDING", (0, 0), (-1, -1), 0.5),
                ("LEFTPADDING", (0, 0), (-1, -1), 2),
            ]
        )
    )
    return t


def _bottom(sheet: ChecklistSheet, width: float, extra: float = 0.0) -> Table:
    """The footer naming where the basis is, and beside it the handover and signatures."""
    text_w = 0.5 * width
    t = Table(
        [[_footer(sheet), _signatures(width - text_w - 3, extra)]],
        colWidths=[text_w + 3, width - text_w - 3],
    )
    t.setStyle(
        TableStyle(
            [
                ("VALIGN", (0, 0), (-1, -1), "TOP"),
                ("LEFTPADDING", (0, 0), (-1, -1), 0),
                ("RIGHTPADDING", (0, 0), (-1, -1), 0),
                ("TOPPADDING", (0, 0), (-1, -1), 0),
                ("BOTTOMPADDING", (0, 0), (-1, -1), 0),
                ("RIGHTPADDING", (0, 0), (0, 0), 3),
            ]
        )
    )
    return t


TIER_NOTE = "The tier is not a validated score (none exists)."
"""The bedside form of :data:`NOT_VALIDATED`."""

BASIS_FOOTER = (
    "Basis of the tier, times and criteria (sources, thresholds): the risk output "
    "(vascplan risk) and the case report; none is cited here. "
)


def _footer(sheet: ChecklistSheet) -> Any:
    return Paragraph(rich("{a}{b}", a=BASIS_FOOTER, b=TIER_NOTE), _style("ck-foot"))


def _height(flowables: Sequence[Any], width: float, height: float) -> float:
    total = 0.0
    for f in flowables:
        total += f.wrap(width, height)[1] + f.getSpaceBefore() + f.getSpaceAfter()
    return total


def _page(
    sheet: ChecklistSheet,
    rows: Sequence[CheckRow],
    page: int,
    pages: int,
    width: float,
    row_h: float,
    key: bool,
    extra: float = 0.0,
) -> list[Any]:
    story = _header(sheet, page, pages) + [_grid(sheet, rows, width, row_h)]
    story += [para(note, _style("ck-note", 9, bold=True)) for note in sheet.notes]
    if key:
        story += [Spacer(1, 1.5), _key(sheet)]
    story += [
        Spacer(1, 1.5),
        escalation_box(sheet.escalation, width),
        Spacer(1, 1.5),
        _bottom(sheet, width, extra),
    ]
    return story


def sheet_story(sheet: ChecklistSheet, width: float, height: float = 10_000.0) -> list[Any]:
    """The flowables of one patient's sheet: one page, or more when the shift has more
    rows than fit at :data:`ROW_MIN_PT` (each page then repeats the header and ends with
    the escalation box and signatures)."""
    n = max(len(sheet.rows), 1)
    room = height - 2.0  # rounding slack

    def fixed(key: bool, pages: int) -> float:
        probe = _page(sheet, sheet.rows[:0], 1, pages, width, ROW_MIN_PT, key)
        return _height(probe, width, height) + 0.5

    def spare(free: float, rows: int, row_h: float) -> float:
        """Height left under the rows, given to the handover box (at most HANDOVER_MAX_PT)."""
        return max(0.0, min(HANDOVER_MAX_PT, free - rows * row_h - 1.0))

    with_key = room - fixed(True, 1)
    if with_key / n >= ROW_KEY_PT:
        row_h = min(ROW_MAX_PT, with_key / n)
        extra = spare(with_key, n, row_h)
        return _page(sheet, sheet.rows, 1, 1, width, row_h, True, extra)
    plain = room - fixed(False, 1)
    if plain / n >= ROW_MIN_PT:
        row_h = min(ROW_MAX_PT, plain / n)
        return _page(sheet, sheet.rows, 1, 1, width, row_h, False, spare(plain, n, row_h))
    per_page = max(1, int((room - fixed(False, 2)) // ROW_MIN_PT))
    pages = -(-n // per_page)
    per_page = -(-n // pages)  # spread the rows evenly
    row_h = min(ROW_MAX_PT, (room - fixed(False, pages)) / per_page)
    story: list[Any] = []
    for k in range(pages):
        if k:
            story.append(PageBreak())
        chunk = sheet.rows[k * per_page : (k + 1) * per_page]
        story += _page(sheet, chunk, k + 1, pages, width, row_h, False)
    return story


def render_checklist(
    sheets: Sequence[ChecklistSheet], *, paper: str = "a4", generated_at: datetime | None = None
) -> bytes:
    """The checklist PDF: each patient's sheet on a page of its own (two when the shift
    holds more checks than one page can)."""
    if not sheets:
        raise ValueError("no patient to print")
    first = sheets[0]
    at = generated_at or datetime.now(first.shift_start.tzinfo)
    _, _, width, height = frame_box(paper, NARROW_MARGIN_PT)
    story: list[Any] = []
    for n, sheet in enumerate(sheets):
        if n:
            story.append(PageBreak())
        story += sheet_story(sheet, width, height)
    title = (
        f"Limb checks - {clean(first.unit_name)} - shift {first.shift_name} "
        f"{first.shift_start:%Y-%m-%d}"
    )
    setup = PageSetup(paper=paper, title=title, generated_at=at, margin_pt=NARROW_MARGIN_PT)
    return build_pdf(story, setup)


__all__ = [
    "CheckRow",
    "ChecklistSheet",
    "bedside_reasons",
    "checklist_sheets",
    "due_text",
    "escalation_box",
    "render_checklist",
    "sheet_story",
]
