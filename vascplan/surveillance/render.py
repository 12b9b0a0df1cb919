"""Renderers for risk and rota results: table, JSON, CSV and iCalendar (RFC 5545).

A renderer never computes: it only lays out a :class:`~vascplan.surveillance.rota.Rota`
or a list of :class:`~vascplan.surveillance.risk.RiskAssessment`. Every output carries
:data:`vascplan.safety.CAUTION`. Times are ISO 8601 in the unit's zone with their UTC offset.
"""

from __future__ import annotations

import csv
import io
import json
from collections.abc import Callable
from datetime import UTC, datetime, timedelta
from typing import Any
from zoneinfo import ZoneInfo

from vascplan.safety import CAUTION, REFERENCE_MARK
from vascplan.surveillance.protocol import Protocol
from vascplan.surveillance.risk import RiskAssessment, load_rules
from vascplan.surveillance.rota import UNASSIGNED, Rota, RotaCheck
from vascplan.textsafety import ical_text, neutralise_cell
from vascplan.texttable import Column, table_lines

PRODID = "-//vascplan//limb-check rota//EN"
ALARM_BEFORE_MIN = 5
"""Calendar reminder before each check [min] (unit policy; a display reminder only)."""


_UTC_NAMES = ("UTC", "Etc/UTC", "Etc/UCT", "Etc/Zulu", "Etc/Universal", "UCT", "Universal", "Zulu")


def iso(value: datetime) -> str:
    """ISO 8601 with seconds and UTC offset (``2026-12-01T14:20:00+00:00``)."""
    return value.isoformat(timespec="seconds")


# -- risk -------------------------------------------------------------------------------


def _limb_dict(a: RiskAssessment) -> dict[str, Any] | None:
    limb = a.limb
    if limb is None:
        return None

    def r(x: float | None, nd: int = 2) -> float | None:
        return None if x is None else round(x, nd)

    return {
        "occupied_cm": limb.occupied_cm,
        "lumen_left_pct": r(limb.lumen_left_pct),
        "distal_flow_pct": {
            "concentric": r(limb.distal_flow_pct_concentric),
            "eccentric": r(limb.distal_flow_pct_eccentric),
        },
        "perfusion_mmhg": limb.perfusion_mmhg,
        "map_mmhg": limb.mean_arterial_mmhg,
        "map_assumed": limb.map_assumed,
        "note": limb.note or None,
    }


def risk_to_dict(assessments: list[RiskAssessment], at: datetime, unit_name: str) -> dict[str, Any]:
    """The ``vascplan risk --format json`` document."""
    assumptions: list[str] = []
    for a in assessments:
        assumptions.extend(a.assumptions)
    return {
        "unit": unit_name,
        "at": iso(at),
        "patients": [
            {
                "ref": a.ref,
                "bed": a.bed,
                "tier": a.tier,
                "rules_tier": a.rules_tier,
                "sar": a.sar,
                "device_od_mm": a.device_od_mm,
                "vessel_mm": a.vessel_mm,
                "vessel_measured": a.vessel_measured,
                "dwell_h": a.dwell_h,
                "dpc_in_place": a.dpc_in_place,
                "dpc_advised": a.dpc_advised,
                "cannula_advice": None if a.advice is None else a.advice.to_dict(),
                "limb": _limb_dict(a),
                "factors": [w.to_dict() for w in a.weighted],
                "relative_risk_total": round(a.total, 3),
                "combination": a.combination,
                "validated_score": False,
                "reasons": a.reasons,
                "basis": a.basis,
                "assumptions": a.assumptions,
            }
            for a in assessments
        ],
        "statement": load_rules().statement,
        "caution": CAUTION,
        "assumptions": assumptions,
    }


TABLE_FOLD = 60
"""Terminal columns of a long cell (cannula advice, check items) before it folds (layout)."""


def risk_table(assessments: list[RiskAssessment], at: datetime, unit_name: str) -> str:
    """A readable risk summary; ``*`` marks a figure built on a reference value."""
    lines = [
        f"Limb-ischaemia risk, {unit_name}, at {iso(at)}",
        f"Caution: {CAUTION}",
        load_rules().statement,
        "",
    ]
    columns = [
        Column("bed", "right"),
        Column("ref"),
        Column("tier"),
        Column("RR", "right"),
        Column("SAR", "right"),
        Column("flow %", "right"),
        Column("DPC", fold=TABLE_FOLD),
    ]
    rows = []
    for a in assessments:
        ref_mark = "" if a.vessel_measured else REFERENCE_MARK
        sar = "-" if a.sar is None else f"{a.sar:.3f}{ref_mark}"
        flow = a.limb.distal_flow_pct_eccentric if a.limb is not None else None
        flow_text = "-" if flow is None else f"{flow:.1f}{REFERENCE_MARK}"
        dpc = a.advice.headline if a.advice is not None else "-"
        rows.append([str(a.bed), a.ref, a.tier, f"{a.total:.2f}", sar, flow_text, dpc])
    lines += table_lines(columns, rows)
    lines.append(
        "RR: combined relative risk (product of the factor weights; not a validated score). "
        f"flow %: best-case distal flow, % of resting flow. {REFERENCE_MARK}: rests on a "
        "reference value."
    )
    for a in assessments:
        lines += ["", f"Bed {a.bed} {a.ref}: tier {a.tier} (not a validated score)"]
        lines += [f"  reason: {r}" for r in a.reasons]
        if a.advice is not None:
            lines.append(f"  distal perfusion cannula: {a.advice.headline} [{a.advice.rule}]")
        lines += [f"  basis: {b}" for b in a.basis]
        lines += [f"  assumption: {x}" for x in a.assumptions]
    return "\n".join(lines) + "\n"


# -- rota -------------------------------------------------------------------------------


def _check_dict(c: RotaCheck) -> dict[str, Any]:
    return {
        "time": iso(c.time),
        "due": iso(c.due),
        "bed": c.bed,
        "ref": c.ref,
        "nurse": c.nurse,
        "phase": c.phase,
        "items": list(c.items),
        "shift": c.shift,
        "tier": c.tier,
        "interval_min": c.interval_min,
        "tolerance_min": c.tolerance_min,
        "within_window": c.within_window,
    }


def rota_to_dict(rota: Rota) -> dict[str, Any]:
    """The ``vascplan rota --format json`` document."""
    return {
        "unit": rota.unit,
        "timezone": rota.timezone,
        "protocol": rota.protocol,
        "from": iso(rota.start),
        "to": iso(rota.end),
        "nurse": rota.nurse,
        "checks": [_check_dict(c) for c in rota.checks],
        "unmet": [{**_check_dict(u.check), "reason": u.reason} for u in rota.unmet],
        "handovers": [
            {
                "at": iso(h.at),
                "shift": h.shift,
                "due_soon": [_check_dict(c) for c in h.due_soon],
                "overdue": [_check_dict(c) for c in h.overdue],
            }
            for h in rota.handovers
        ],
        "unstaffed": [
            {"bed": bed, "ref": ref, "shifts": shifts} for bed, ref, shifts in rota.unstaffed
        ],
        "caution": CAUTION,
        "assumptions": rota.assumptions,
    }


def rota_json(rota: Rota) -> str:
    return json.dumps(rota_to_dict(rota), indent=2, ensure_ascii=False) + "\n"


def _when(c: RotaCheck) -> str:
    text = c.time.strftime("%Y-%m-%d %H:%M %z")
    if c.late_min:
        text += f" (due {c.due.strftime('%H:%M')})"
    return text


def rota_table(rota: Rota) -> str:
    """A readable rota: each nurse's worklist, the unmet checks and the handovers."""
    head = f"Limb-check rota, {rota.unit} ({rota.timezone}), {iso(rota.start)} to {iso(rota.end)}"
    if rota.nurse:
        head += f", nurse {rota.nurse}"
    lines = [head, f"Caution: {CAUTION}", ""]
    for bed, ref, shifts in rota.unstaffed:
        lines.append(
            f"NO NURSE named for bed {bed} {ref} on the {', '.join(shifts)} shift"
            f"{'s' if len(shifts) > 1 else ''}: its checks are listed as {UNASSIGNED}"
        )
    if rota.unstaffed:
        lines.append("")
    columns = [
        Column("time"),
        Column("bed", "right"),
        Column("ref"),
        Column("phase"),
        Column("items", fold=TABLE_FOLD),
        Column("window"),
    ]
    for nurse, checks in rota.worklists().items():
        lines.append(f"== {nurse}: {len(checks)} checks")
        rows = [
            [
                _when(c),
                str(c.bed),
                c.ref,
                c.phase,
                ", ".join(c.items),
                "" if c.within_window else "LATE: outside its window",
            ]
            for c in checks
        ]
        lines += table_lines(columns, rows, indent="  ")
        lines.append("")
    if rota.unmet:
        lines.append(f"== Cannot be met within their windows: {len(rota.unmet)}")
        lines += [
            f"  bed {u.check.bed} {u.check.ref} due {iso(u.check.due)}: {u.reason}"
            for u in rota.unmet
        ]
        lines.append("")
    for h in rota.handovers:
        lines.append(f"== Handover to {h.shift} at {h.at.strftime('%Y-%m-%d %H:%M %z')}")
        lines += [f"  due soon: {_when(c)} bed {c.bed} {c.ref} ({c.nurse})" for c in h.due_soon]
        lines += [f"  overdue:  {_when(c)} bed {c.bed} {c.ref} ({c.nurse})" for c in h.overdue]
        if not h.due_soon and not h.overdue:
            lines.append("  nothing due in the first window, nothing overdue")
    lines += [f"Assumption: {a}" for a in rota.assumptions]
    return "\n".join(lines) + "\n"


CSV_COLUMNS = (
    "time",
    "due",
    "bed",
    "ref",
    "nurse",
    "phase",
    "items",
    "shift",
    "tier",
    "interval_min",
    "tolerance_min",
    "within_window",
    "caution",
)
"""Columns of ``rota --format csv``, the header on the first line (items joined by ``;``)."""


def rota_csv(rota: Rota) -> str:
    """One row per check after the header; the caution is the last column of every row.

    RFC 4180 style with ``\n`` line ends: a field is quoted only when it holds a comma,
    a quote or a line break (a quote doubled inside); ``True``/``False`` for
    ``within_window``; items joined by ``;``. A rota without checks is the header and the
    caution as a ``#`` comment line.
    """
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(CSV_COLUMNS)
    for c in rota.checks:
        d = _check_dict(c)
        d["items"] = ";".join(c.items)
        d["caution"] = CAUTION
        writer.writerow([neutralise_cell(d[name]) for name in CSV_COLUMNS])  # no formula
    text = buffer.getvalue()
    return text if rota.checks else text + f"# {CAUTION}\n"


def _ics_time(value: datetime) -> datetime:
    """A time to write with its TZID, or in UTC where the local time is ambiguous.

    RFC 5545 s3.3.5: a local time that occurs twice (clocks going back) "refers to the
    first occurrence", so a check in the repeated hour is written in UTC instead.
    """
    other = value.replace(fold=1 - value.fold)
    if other.utcoffset() != value.utcoffset():
        return value.astimezone(UTC)
    return value


def _ics_escape(text: str) -> str:
    """RFC 5545 s3.3.11 TEXT escaping: backslash, semicolon, comma; a line break as ``\\n``."""
    return (
        text.replace("\\", "\\\\")
        .replace(";", "\\;")
        .replace(",", "\\,")
        .replace("\r\n", "\\n")
        .replace("\n", "\\n")
        .replace("\r", "\\n")
    )


def _ics_line(text: str) -> str:
    """A non-standard property's value on one line: line breaks as ``\\n``, nothing else."""
    return text.replace("\r\n", "\\n").replace("\n", "\\n").replace("\r", "\\n")


ICS_FOLD_OCTETS = 74
"""Octets of content per physical line: with the folding space a line is at most 75 octets
(RFC 5545 s3.1: lines SHOULD NOT be longer than 75 octets, excluding the line break)."""


def ics_fold(line: str) -> str:
    r"""Fold one content line (RFC 5545 s3.1): at most 75 octets a line, CRLF plus a space.

    Never splits a UTF-8 character, nor an escape (a backslash stays with the character it
    escapes).

    >>> ics_fold("A" * 74) == "A" * 74
    True
    >>> ics_fold("A" * 73 + "\\n" + "B").split("\r\n ")
    ['AAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAAA', '\\nB']
    >>> [len(p.encode()) for p in ics_fold("é" * 40).split("\r\n ")]
    [74, 6]
    """
    limit = ICS_FOLD_OCTETS
    if line.isascii():
        if len(line) <= limit:
            return line
        parts = []
        i, n = 0, len(line)
        while n - i > limit:
            j = i + limit
            if line[j - 1] in "\\^" and j - 1 > i:
                j -= 1
            parts.append(line[i:j])
            i = j
        parts.append(line[i:])
        return "\r\n ".join(parts)
    parts, size = [], 0
    current: list[str] = []
    for ch in line:
        width = len(ch.encode("utf-8"))
        if current and size + width > limit:
            if len(current) > 1 and current[-1] in "\\^":
                carry = current.pop()
                parts.append("".join(current))
                current, size = [carry], len(carry.encode("utf-8"))
            else:
                parts.append("".join(current))
                current, size = [], 0
        current.append(ch)
        size += width
    parts.append("".join(current))
    return "\r\n ".join(parts)


def _ics_datetime(name: str, value: datetime) -> str:
    """``DTSTART;TZID=Europe/London:20261201T143000``, or ``...Z`` for a UTC time."""
    key = getattr(value.tzinfo, "key", None)
    if value.tzinfo is UTC or (key in _UTC_NAMES and not value.utcoffset()):
        return f"{name}:{value.astimezone(UTC):%Y%m%dT%H%M%S}Z"
    return f"{name};TZID={key}:{value:%Y%m%dT%H%M%S}"


def _ics_duration(delta: timedelta) -> str:
    """An RFC 5545 duration of whole minutes (``-PT5M``)."""
    minutes = int(delta.total_seconds() // 60)
    sign = "-" if minutes < 0 else ""
    minutes = abs(minutes)
    days, minutes = divmod(minutes, 1440)
    hours, minutes = divmod(minutes, 60)
    text = f"{days}D" if days else ""
    if hours or minutes:
        text += "T" + (f"{hours}H" if hours else "") + (f"{minutes}M" if minutes else "")
    return f"{sign}P{text or 'T0M'}"


def write_rota_ics(
    rota: Rota,
    protocol: Protocol,
    write: Callable[[bytes], object],
    stamp: datetime | None = None,
    duration_min: float | None = None,
) -> None:
    """Write the rota as an iCalendar file (RFC 5545), one event at a time, to ``write``.

    Each check is a VEVENT with a stable UID (unit, bed, ref, due time), DTSTAMP, DTSTART
    with the unit's TZID (a VTIMEZONE covering the rota is included; in UTC inside a clock
    change's repeated hour, where a TZID time would be read as the first occurrence), DTEND,
    a display VALARM :data:`ALARM_BEFORE_MIN` minutes before, the check items and the
    caution in its description; the calendar carries the caution in X-WR-CALDESC.

    Notes
    -----
    The text is written directly, not through the ``icalendar`` library's objects (about
    11 KB of objects per event, 220 MB for 40 beds x 14 days): TEXT values escaped
    (RFC 5545 s3.3.11: ``\\``, ``\\;``, ``\\,``, a line break as ``\\n``), every
    content line folded at 75 octets (s3.1) and ended by CRLF. Only the VTIMEZONE (once per
    file, covering only the rota's dates) comes from ``icalendar``. Memory holds one
    event's text at a time besides what ``write`` keeps; ``tests/bench/bench_rota.py``
    gives the figures.
    """
    import icalendar

    stamp_text = f"DTSTAMP:{(stamp or datetime.now(UTC)).astimezone(UTC):%Y%m%dT%H%M%S}Z"
    length = timedelta(minutes=duration_min or protocol.check_duration_min.value)
    tz = ZoneInfo(rota.timezone)

    def lines(*content: str) -> None:
        write(("\r\n".join(ics_fold(x) for x in content) + "\r\n").encode("utf-8"))

    name = f"Limb checks, {rota.unit}" + (f", {rota.nurse}" if rota.nurse else "")
    lines(
        "BEGIN:VCALENDAR",
        f"PRODID:{_ics_escape(PRODID)}",
        "VERSION:2.0",
        "CALSCALE:GREGORIAN",
        # Non-standard properties are read back unescaped by common readers (the
        # ``icalendar`` library among them): only a line break is escaped, to keep one line.
        f"X-WR-CALNAME:{_ics_line(ical_text(name))}",
        f"X-WR-CALDESC:{_ics_line(CAUTION)}",
        f"X-WR-TIMEZONE:{_ics_line(rota.timezone)}",
    )
    if rota.timezone not in _UTC_NAMES:  # UTC times are written with Z, no VTIMEZONE needed
        write(
            icalendar.Timezone.from_tzinfo(
                tz,
                tzid=rota.timezone,
                first_date=(rota.start.astimezone(tz) - timedelta(days=2)).date(),
                last_date=(rota.end.astimezone(tz) + timedelta(days=2)).date(),
            ).to_ical(sorted=False)
        )
    # What every event shares is escaped once; each item set's text built once.
    texts: dict[tuple[str, ...], str] = {}
    trigger = f"TRIGGER:{_ics_duration(timedelta(minutes=-ALARM_BEFORE_MIN))}"
    unit_key = "".join(ch for ch in rota.unit if ch.isalnum())[:40] or "unit"
    caution = f"\n\n{CAUTION}"
    for c in rota.checks:
        items = tuple(c.items)
        if items not in texts:
            texts[items] = "\n".join(f"- {protocol.item_text(i)}" for i in items)
        due_utc = c.due.astimezone(UTC)
        start = _ics_time(c.time)
        end = (start.astimezone(UTC) + length).astimezone(start.tzinfo)
        late = "" if not c.late_min else f"\nDue {iso(c.due)}; staggered to {iso(c.time)}."
        if not c.within_window:
            late += "\nOUTSIDE its tolerance window: see the rota's unmet list."
        ref, nurse = ical_text(c.ref), ical_text(str(c.nurse))  # RFC 5545: no control chars
        description = (
            f"Nurse: {nurse}. Tier: {c.tier}. Every {c.interval_min} min.{late}\n"
            f"{texts[items]}{caution}"
        )
        lines(
            "BEGIN:VEVENT",
            "UID:"
            + _ics_escape(f"{unit_key}-bed{c.bed}-{ref}-{due_utc:%Y%m%dT%H%M%SZ}@vascplan"),
            stamp_text,
            _ics_datetime("DTSTART", start),
            _ics_datetime("DTEND", end),
            "SUMMARY:" + _ics_escape(f"Limb check bed {c.bed} {ref} ({c.phase})"),
            "DESCRIPTION:" + _ics_escape(description),
            "CATEGORIES:limb-check",
            "BEGIN:VALARM",
            "ACTION:DISPLAY",
            "DESCRIPTION:" + _ics_escape(f"Limb check bed {c.bed} {ref}"),
            trigger,
            "END:VALARM",
            "END:VEVENT",
        )
    lines("END:VCALENDAR")


def rota_ics(
    rota: Rota,
    protocol: Protocol,
    stamp: datetime | None = None,
    duration_min: float | None = None,
) -> bytes:
    """The rota as iCalendar bytes (:func:`write_rota_ics`)."""
    buffer = io.BytesIO()
    write_rota_ics(rota, protocol, buffer.write, stamp, duration_min)
    return buffer.getvalue()
