"""Renderers for risk and rota results: table, JSON, CSV and iCalendar (RFC 5545).

A renderer never computes: it only lays out a :class:`~vascplan.surveillance.rota.Rota`
or a list of :class:`~vascplan.surveillance.risk.RiskAssessment`. Every output carries
:data:`vascplan.safety.CAUTION`. Times are ISO 8601 in the unit's zone with their UTC offset.
"""

from __future__ import annotations

import csv
import io
import json
from datetime import UTC, datetime, timedelta
from typing import Any
from zoneinfo import ZoneInfo

from vascplan.safety import CAUTION, REFERENCE_MARK
from vascplan.surveillance.protocol import Protocol
from vascplan.surveillance.risk import RiskAssessment, load_rules
from vascplan.surveillance.rota import UNASSIGNED, Rota, RotaCheck
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
        writer.writerow([d[name] for name in CSV_COLUMNS])
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


def rota_ics(
    rota: Rota,
    protocol: Protocol,
    stamp: datetime | None = None,
    duration_min: float | None = None,
) -> bytes:
    """The rota as an iCalendar file (RFC 5545) written with the ``icalendar`` library.

    Each check is a VEVENT with a stable UID (unit, bed, ref, due time), DTSTAMP, DTSTART
    with the unit's TZID (a VTIMEZONE covering the rota is included; in UTC inside a clock
    change's repeated hour, where a TZID time would be read as the first occurrence), DTEND,
    a display VALARM :data:`ALARM_BEFORE_MIN` minutes before, the check items and the
    caution in its description; the calendar carries the caution in X-WR-CALDESC.

    Notes
    -----
    Speed (40 beds x 14 days, about 20,000 events): the text of each set of items is built
    once, the properties every event shares (DTSTAMP, CATEGORIES, the alarm's ACTION and
    TRIGGER) are one object each, the VTIMEZONE covers only the rota's dates, and the
    properties are written in the order added rather than sorted (their order carries no
    meaning in RFC 5545); ``tests/bench/bench_rota.py`` gives the figures.
    """
    import icalendar

    stamp = (stamp or datetime.now(UTC)).astimezone(UTC)
    length = timedelta(minutes=duration_min or protocol.check_duration_min.value)
    tz = ZoneInfo(rota.timezone)
    cal = icalendar.Calendar()
    cal.add("prodid", PRODID)
    cal.add("version", "2.0")
    cal.add("calscale", "GREGORIAN")
    cal.add("x-wr-calname", f"Limb checks, {rota.unit}" + (f", {rota.nurse}" if rota.nurse else ""))
    cal.add("x-wr-caldesc", CAUTION)
    cal.add("x-wr-timezone", rota.timezone)
    if rota.timezone not in _UTC_NAMES:  # UTC times are written with Z, no VTIMEZONE needed
        cal.add_component(
            icalendar.Timezone.from_tzinfo(
                tz,
                tzid=rota.timezone,
                first_date=(rota.start.astimezone(tz) - timedelta(days=2)).date(),
                last_date=(rota.end.astimezone(tz) + timedelta(days=2)).date(),
            )
        )
    # One object each for what every event shares; each item set's text built once.
    dtstamp = icalendar.vDDDTypes(stamp)
    categories = icalendar.vCategory(["limb-check"])
    action = icalendar.vText("DISPLAY")
    trigger = icalendar.vDDDTypes(timedelta(minutes=-ALARM_BEFORE_MIN))
    texts: dict[tuple[str, ...], str] = {}
    unit_key = "".join(ch for ch in rota.unit if ch.isalnum())[:40] or "unit"
    for c in rota.checks:
        items = tuple(c.items)
        if items not in texts:
            texts[items] = "\n".join(f"- {protocol.item_text(i)}" for i in items)
        ev = icalendar.Event()
        due_utc = c.due.astimezone(UTC)
        ev.add("uid", f"{unit_key}-bed{c.bed}-{c.ref}-{due_utc:%Y%m%dT%H%M%SZ}@vascplan")
        ev.add("dtstamp", dtstamp, encode=False)
        start = _ics_time(c.time)
        ev.add("dtstart", start)
        ev.add("dtend", (start.astimezone(UTC) + length).astimezone(start.tzinfo))
        ev.add("summary", f"Limb check bed {c.bed} {c.ref} ({c.phase})")
        late = "" if not c.late_min else f"\nDue {iso(c.due)}; staggered to {iso(c.time)}."
        if not c.within_window:
            late += "\nOUTSIDE its tolerance window: see the rota's unmet list."
        ev.add(
            "description",
            f"Nurse: {c.nurse}. Tier: {c.tier}. Every {c.interval_min} min.{late}\n"
            f"{texts[items]}\n\n{CAUTION}",
        )
        ev.add("categories", categories, encode=False)
        alarm = icalendar.Alarm()
        alarm.add("action", action, encode=False)
        alarm.add("description", f"Limb check bed {c.bed} {c.ref}")
        alarm.add("trigger", trigger, encode=False)
        ev.add_component(alarm)
        cal.add_component(ev)
    return cal.to_ical(sorted=False)
