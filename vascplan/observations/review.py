"""Review of the record: overdue checks and deterioration, each alert with whom to call.

For each patient of a unit, as at a moment ``at``:

- checks overdue against the protocol's schedule, and by how long;
- every rule of :data:`RULES` evaluated on the latest findings (after corrections),
  against the patient's baseline and the other leg;
- the acute limb ischaemia category (:mod:`~vascplan.observations.ali`) and the
  ankle-brachial index (:mod:`~vascplan.observations.abi`).

Each alert names its rule, the finding that raised it, its source and whom to call from
the protocol's escalation criteria. NIRS thresholds come from the protocol's ``review``
section because no guideline fixes them; the output says so. A computation here never
prints: :func:`render_table` and :func:`to_json` are the renderers.
"""

from __future__ import annotations

from bisect import bisect_right
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from datetime import UTC, datetime, timedelta, tzinfo
from pathlib import Path
from typing import Any

from vascplan.localtime import day_hm, hm, utc
from vascplan.observations.abi import AbiResult, ankle_brachial_index, arm_sites
from vascplan.observations.alerts import group_alerts, group_key
from vascplan.observations.ali import AliResult, classify_leg, worst
from vascplan.observations.findings import (
    ENTERED_IN_ERROR,
    PEDAL_ARTERIES,
    SIDES,
    WRIST_ARTERIES,
)
from vascplan.observations.store import CurrentFinding, ObservationStore
from vascplan.safety import CAUTION
from vascplan.surveillance.protocol import Protocol, load_protocol
from vascplan.surveillance.schedule import ScheduledCheck, patient_schedule
from vascplan.surveillance.unit import Patient, Unit

NO_CALL = "the protocol names no one for this finding; follow local policy"
ALI_SOURCE = (
    "Rutherford et al., J Vasc Surg 1997;26:517 (clinical categories of acute limb ischaemia)"
)
ABI_SOURCE = (
    "ABI per Aboyans et al., Circulation 2012;126:2890 (AHA scientific statement); "
    "bands per the 2016 AHA/ACC lower-extremity PAD guideline"
)


@dataclass(frozen=True)
class Rule:
    """One alert rule: its id, the escalation criteria it maps to (first found wins), its source."""

    id: str
    escalation: tuple[str, ...]
    source: str
    meaning: str


RULES: dict[str, Rule] = {
    r.id: r
    for r in (
        Rule(
            "check-overdue",
            ("check-missed",),
            "the protocol's schedule and tolerance",
            "a scheduled check was not recorded",
        ),
        Rule(
            "nirs-fall",
            ("nirs-fall",),
            "protocol review threshold nirs_relative_fall_pct",
            "calf NIRS fell from baseline by at least the threshold",
        ),
        Rule(
            "nirs-limb-difference",
            ("nirs-fall",),
            "protocol review threshold nirs_limb_difference_pct",
            "calf NIRS differs between the legs by at least the threshold",
        ),
        Rule(
            "nirs-floor",
            ("nirs-fall",),
            "protocol review threshold nirs_absolute_floor_pct",
            "calf NIRS below the absolute floor",
        ),
        Rule(
            "refill-slow",
            ("perfusion-reduced",),
            "protocol review threshold capillary_refill_slow_s",
            "capillary refill slower than the threshold",
        ),
        Rule(
            "wrist-signal-lost",
            ("pulse-lost",),
            "common practice (a lost radial or ulnar signal below an arm device)",
            "a radial or ulnar pulse or Doppler signal present at baseline or an earlier check "
            "is now absent",
        ),
        Rule(
            "pedal-signal-lost",
            ("pulse-lost",),
            "common practice (a lost pedal signal that was present)",
            "a pedal pulse or Doppler signal present at baseline or an earlier check is now absent",
        ),
        Rule(
            "skin-change",
            ("perfusion-reduced",),
            "six Ps: pallor and poikilothermia (common practice); compared with the "
            "other leg and the earlier check: common practice",
            "a leg pale, mottled or blue, or cool or cold, where the other leg at the same "
            "check or the same leg earlier was normal and warm",
        ),
        Rule(
            "ali-category",
            ("ali-{category}",),
            ALI_SOURCE,
            "acute limb ischaemia category IIa or worse",
        ),
        Rule(
            "calf-tense",
            ("compartment",),
            "compartment syndrome signs (common practice; clinical reviews seen)",
            "a tense calf",
        ),
        Rule(
            "access-bleeding",
            ("bleeding",),
            "common practice",
            "bleeding or haematoma at the access site",
        ),
        Rule(
            "dpc-fault",
            ("dpc-fault",),
            "common practice",
            "distal perfusion cannula kinked or without flow",
        ),
        Rule(
            "abi-abnormal", ("perfusion-reduced",), ABI_SOURCE, "ankle-brachial index 0.90 or below"
        ),
        Rule(
            "circuit-fault",
            ("circuit-fault",),
            "unit policy (ECMO circuit flow below the prescription)",
            "ECMO circuit flow low or none",
        ),
        Rule(
            "device-moved",
            ("device-moved",),
            "unit policy (device position watched at the skin mark)",
            "cannula, pump or balloon mark moved",
        ),
        Rule(
            "forearm-tense",
            ("compartment",),
            "compartment syndrome signs (common practice; clinical reviews seen), "
            "applied to the arm",
            "a tense forearm",
        ),
        Rule(
            "finger-refill-slow",
            ("perfusion-reduced",),
            "protocol review threshold capillary_refill_slow_s, applied to the fingers",
            "finger capillary refill slower than the threshold",
        ),
    )
}

_ALI_ESCALATION_FALLBACK = {"III": ("ali-III", "ali-IIb"), "IIb": ("ali-IIb",), "IIa": ("ali-IIa",)}


@dataclass(frozen=True)
class Alert:
    """One open alert.

    Attributes
    ----------
    rule : str
        A key of :data:`RULES`.
    detail : str
        The finding and the numbers that raised it.
    source : str
        The rule's source (and the threshold's, from the protocol).
    call : str or None
        Whom to call and how fast, from the protocol's escalation criteria; None when the
        protocol names no one for this finding.
    within_min : int or None
        How fast [min], from the escalation criterion.
    escalation : str or None
        The escalation criterion's id.
    side : str or None
        ``L`` or ``R`` when the alert is about one leg.
    time : datetime or None
        When the finding was made.
    """

    rule: str
    detail: str
    source: str
    call: str | None
    within_min: int | None
    escalation: str | None
    side: str | None = None
    time: datetime | None = None


@dataclass(frozen=True)
class Overdue:
    """A scheduled check with part or all of it not recorded since its window opened.

    ``missing`` lists what is still to record (``nirs:L``, ``refill:R``, ``dpc``: see
    :mod:`~vascplan.observations.coverage`); ``items`` is everything the check asks for.
    """

    due: datetime
    minutes_late: int
    phase: str
    missing: tuple[str, ...] = ()
    items: tuple[str, ...] = ()

    @property
    def partial(self) -> bool:
        """Some of the check was recorded, not all."""
        return 0 < len(self.missing) < len(self.items)


@dataclass
class PatientReview:
    ref: str
    bed: int
    last_check: datetime | None
    overdue: list[Overdue] = field(default_factory=list)
    alerts: list[Alert] = field(default_factory=list)
    ali: dict[str, AliResult] = field(default_factory=dict)
    abi: dict[str, AbiResult] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)

    @property
    def ali_category(self) -> str | None:
        """The more severe leg's category."""
        return worst([r.category for r in self.ali.values()])


@dataclass
class UnitReview:
    unit: str
    at: datetime
    protocol: str
    review_note: str
    patients: list[PatientReview]

    @property
    def open_alerts(self) -> int:
        return sum(len(p.alerts) for p in self.patients)


# ---------------------------------------------------------------------------


def _escalate(
    protocol: Protocol, rule: Rule, category: str | None = None
) -> tuple[str | None, int | None, str | None, str]:
    ids: tuple[str, ...] = rule.escalation
    if category is not None:
        ids = _ALI_ESCALATION_FALLBACK.get(category, ())
    known = {e.id: e for e in protocol.escalation}
    for i, eid in enumerate(ids):
        if eid in known:
            e = known[eid]
            note = (
                ""
                if i == 0
                else f" (the protocol has no {ids[0]} criterion; its {eid} criterion used)"
            )
            return f"{e.call} (within {e.within_min} min){note}", e.within_min, e.id, e.source
    return None, None, None, ""


def _alert(
    protocol: Protocol,
    rule_id: str,
    detail: str,
    *,
    side: str | None = None,
    time: datetime | None = None,
    extra_source: str = "",
    category: str | None = None,
) -> Alert:
    rule = RULES[rule_id]
    call, within, eid, _ = _escalate(protocol, rule, category)
    source = rule.source + (f": {extra_source}" if extra_source else "")
    return Alert(rule_id, detail, source, call, within, eid, side, time)


def _hm(moment: datetime, tz) -> str:
    """Local clock time with its UTC offset (``01:30+00:00``): the repeated hour reads apart."""
    return hm(moment, tz)


def overdue_checks(
    unit: Unit,
    patient: Patient,
    protocol: Protocol,
    check_times: list[datetime],
    at: datetime,
    findings: list[CurrentFinding] | None = None,
    schedule: Sequence[ScheduledCheck] | None = None,
) -> list[Overdue]:
    """Scheduled checks overdue at ``at``.

    A scheduled check is overdue when its tolerance has run out (``due + tolerance_min``
    before ``at``) and part of it was not recorded at or after ``due - tolerance_min``:
    a finding counts for every scheduled check whose window had opened by then (the limb
    has been seen since). With ``findings``, a check counts only for the items and sides
    it records (:mod:`~vascplan.observations.coverage`); without, any check of the
    patient counts for the whole check. Nothing is due before the patient's monitoring
    start (:func:`~vascplan.surveillance.schedule.monitoring_start`).

    ``schedule``, when given, is the patient's schedule from insertion to any moment at
    or after ``at`` (in time order), computed once by a caller reviewing many moments
    (the trend); checks due at or after ``at`` are never overdue, so the result is that
    of the schedule up to ``at``.
    """
    from vascplan.observations.coverage import latest_by_need, missing, needs
    from vascplan.observations.findings import ENTERED_IN_ERROR

    if schedule is None:
        schedule = patient_schedule(unit, patient, protocol, patient.device.inserted, at)
    # Instants only: same-zone aware datetimes compare by wall time (PEP 495), which
    # would lose or invent overdue checks in the hour repeated when the clocks go back.
    at_utc = utc(at)
    out = []
    latest = max(utc(t) for t in check_times) if check_times else None
    wanted: dict[tuple[str, ...], Any] = {}
    seen = (
        latest_by_need(
            {n for s in schedule for n in wanted.setdefault(tuple(s.items),
                                                            needs(protocol, s.items))},
            ((f.time, f.item, f.site) for f in findings if f.value != ENTERED_IN_ERROR),
        )
        if findings is not None
        else {}
    )
    # The schedule is in time order. Without findings, a check due at or before the latest
    # recorded one was seen (its window had opened); with them, each item is looked at.
    begin = 0
    if findings is None and latest is not None:
        begin = bisect_right(schedule, latest, key=lambda s: utc(s.due))
    for i in range(begin, len(schedule)):
        s = schedule[i]
        wanted.setdefault(tuple(s.items), needs(protocol, s.items))
        tol = timedelta(minutes=s.tolerance_min)
        due = utc(s.due)
        if due >= at_utc:
            break
        if due + tol >= at_utc:
            continue
        labels = tuple(n.label for n in wanted[tuple(s.items)])
        if findings is not None:
            gap = tuple(missing(wanted[tuple(s.items)], seen, s.due, s.tolerance_min))
            if not gap:
                continue
        else:
            if latest is not None and latest >= due - tol:
                continue
            gap = labels
        late = int((at_utc - due).total_seconds() // 60)
        out.append(Overdue(s.due, late, s.phase, gap, labels))
    return out


def _latest(findings: list[CurrentFinding]) -> dict[tuple[str, str], CurrentFinding]:
    out: dict[tuple[str, str], CurrentFinding] = {}
    for f in findings:  # time order: later wins
        out[(f.item, f.site)] = f
    return out


def review_patient(
    unit: Unit,
    patient: Patient,
    protocol: Protocol,
    findings: list[CurrentFinding],
    at: datetime,
    *,
    schedule: Sequence[ScheduledCheck] | None = None,
) -> PatientReview:
    """Review one patient from their findings (already limited to times up to ``at``).

    ``schedule``: the patient's schedule computed once (see :func:`overdue_checks`).
    """
    tz = unit.unit.tz
    # Time order by instant (later wins in _latest), never by wall clock.
    at_utc = utc(at)
    findings = sorted(
        (f for f in findings if utc(f.time) <= at_utc), key=lambda f: (utc(f.time), f.entry.id)
    )
    times = sorted({utc(f.time) for f in findings})
    out = PatientReview(patient.ref, patient.bed, times[-1] if times else None)
    out.overdue = overdue_checks(unit, patient, protocol, times, at, findings, schedule)
    if out.overdue:
        first = out.overdue[0]
        out.alerts.append(
            _alert(
                protocol,
                "check-overdue",
                f"{len(out.overdue)} scheduled check(s) not recorded; the first was due "
                f"{day_hm(first.due, tz)} ({first.minutes_late} min ago)",
                extra_source=f"protocol {protocol.name!r}",
            )
        )
    latest = _latest(findings)
    thresholds = protocol.review
    _nirs_rules(out, patient, protocol, findings, latest, tz)

    slow = thresholds.capillary_refill_slow_s
    for side in SIDES:
        f = latest.get(("refill", side))
        if f is not None and float(f.value) > slow.value:
            out.alerts.append(
                _alert(
                    protocol,
                    "refill-slow",
                    f"{side} capillary refill {f.value} s at {_hm(f.time, tz)} "
                    f"(slow above {slow.value:g} s)",
                    side=side,
                    time=f.time,
                    extra_source=slow.source,
                )
            )

    _pedal_rules(out, patient, protocol, findings, latest, tz)
    _skin_rules(out, protocol, findings, latest, tz)

    for side in SIDES:
        sens = latest.get(("sensation", side))
        motor = latest.get(("motor", side))
        out.ali[side] = classify_leg(
            sens.value if sens else None,
            motor.value if motor else None,
            _arterial(latest, side),
            _venous(latest, side),
        )
        cat = out.ali[side].category
        if cat in ("IIa", "IIb", "III"):
            out.alerts.append(
                _alert(
                    protocol,
                    "ali-category",
                    f"{side} leg category {cat} ({out.ali[side].name}): "
                    + "; ".join(out.ali[side].basis),
                    side=side,
                    category=cat,
                )
            )

    for leg in SIDES:
        f = latest.get(("calf", leg))
        if f is not None and f.value == "tense":
            out.alerts.append(
                _alert(
                    protocol,
                    "calf-tense",
                    f"{leg} calf tense at {_hm(f.time, tz)}",
                    side=leg,
                    time=f.time,
                )
            )
    for (item, site), f in latest.items():
        if item == "access" and f.value in ("bleeding", "haematoma"):
            out.alerts.append(
                _alert(
                    protocol,
                    "access-bleeding",
                    f"access site {site or ''} {f.value} at {_hm(f.time, tz)}".replace("  ", " "),
                    side=site or None,
                    time=f.time,
                )
            )
        if item == "circuit-flow" and f.value in ("low", "none"):
            out.alerts.append(
                _alert(
                    protocol,
                    "circuit-fault",
                    f"ECMO circuit flow {f.value} at {_hm(f.time, tz)}",
                    time=f.time,
                )
            )
        if item == "position" and f.value == "moved":
            out.alerts.append(
                _alert(
                    protocol,
                    "device-moved",
                    f"device position mark moved at {_hm(f.time, tz)}",
                    side=site[:1] or None,
                    time=f.time,
                )
            )
        if item == "forearm" and f.value == "tense":
            out.alerts.append(
                _alert(
                    protocol,
                    "forearm-tense",
                    f"{site} forearm tense at {_hm(f.time, tz)}",
                    side=site,
                    time=f.time,
                )
            )
        if item == "finger-refill" and float(f.value) > slow.value:
            out.alerts.append(
                _alert(
                    protocol,
                    "finger-refill-slow",
                    f"{site} finger capillary refill {f.value} s at {_hm(f.time, tz)} "
                    f"(slow above {slow.value:g} s)",
                    side=site,
                    time=f.time,
                    extra_source=slow.source,
                )
            )
        if item == "dpc" and f.value in ("kinked", "no-flow", "disconnected"):
            out.alerts.append(
                _alert(
                    protocol,
                    "dpc-fault",
                    f"distal perfusion cannula {f.value} at {_hm(f.time, tz)}",
                    side=site or None,
                    time=f.time,
                )
            )

    # The arm pressure is the cuff pressure at L-ARM / R-ARM; a pressure recorded at the
    # brachial artery (L-BRA / R-BRA) is the same measurement and stands in for it.
    arms_at = arm_sites({site for item, site in latest if item == "pressure"})
    arms = {s: float(latest[("pressure", a)].value) for s, a in arms_at.items()}
    for side in SIDES:
        ankle = {
            a: float(latest[("pressure", f"{side}-{a}")].value)
            for a in ("PTA", "DPA")
            if ("pressure", f"{side}-{a}") in latest
        }
        r = ankle_brachial_index(ankle, arms)
        used = [latest[("pressure", f"{side}-{a}")].time for a in ankle]
        used += [latest[("pressure", a)].time for a in arms_at.values()]
        used = sorted(used, key=utc)
        if r.index is not None and utc(used[0]) != utc(used[-1]):
            # Pressures from different checks: say when, so a stale one is seen.
            r = replace(
                r, basis=f"{r.basis}; pressures taken {_hm(used[0], tz)} to {_hm(used[-1], tz)}"
            )
        out.abi[side] = r
        if r.band == "abnormal":
            out.alerts.append(
                _alert(
                    protocol,
                    "abi-abnormal",
                    f"{side} ABI {r.index:.2f} ({r.basis})",
                    side=side,
                    time=used[-1],
                )
            )
    return out


def _nirs_rules(
    out: PatientReview,
    patient: Patient,
    protocol: Protocol,
    findings: list[CurrentFinding],
    latest: dict,
    tz,
) -> None:
    th = protocol.review
    for side in SIDES:
        f = latest.get(("nirs", side))
        if f is None:
            continue
        value = float(f.value)
        if side in patient.baseline.nirs:
            base, basis = float(patient.baseline.nirs[side]), "baseline in the unit file"
        else:
            first = next(x for x in findings if x.item == "nirs" and x.site == side)
            base, basis = (
                float(first.value),
                f"first recorded value at {_hm(first.time, tz)} (no baseline in the unit file)",
            )
            if first is f:
                base = float("nan")
        if base == base and base > 0:
            fall = (base - value) / base * 100
            if fall >= th.nirs_relative_fall_pct.value:
                out.alerts.append(
                    _alert(
                        protocol,
                        "nirs-fall",
                        f"{side} NIRS {value:g}% at {_hm(f.time, tz)} is {fall:.0f}% below "
                        f"{base:g}% ({basis}); "
                        f"threshold {th.nirs_relative_fall_pct.value:g}% relative fall",
                        side=side,
                        time=f.time,
                        extra_source=f"{th.nirs_relative_fall_pct.source}; {th.note}",
                    )
                )
        floor = th.nirs_absolute_floor_pct.value
        if value < floor:
            out.alerts.append(
                _alert(
                    protocol,
                    "nirs-floor",
                    f"{side} NIRS {value:g}% at {_hm(f.time, tz)} is below {floor:g}%",
                    side=side,
                    time=f.time,
                    extra_source=f"{th.nirs_absolute_floor_pct.source}; {th.note}",
                )
            )
    left, right = latest.get(("nirs", "L")), latest.get(("nirs", "R"))
    # Readings within one check's duration (the protocol's check_duration_min) are one check.
    same_check = timedelta(minutes=protocol.check_duration_min.value)
    if (
        left is not None
        and right is not None
        and abs(utc(left.time) - utc(right.time)) <= same_check
    ):
        diff = abs(float(left.value) - float(right.value))
        limit = th.nirs_limb_difference_pct.value
        if diff >= limit:
            low = "L" if float(left.value) < float(right.value) else "R"
            out.alerts.append(
                _alert(
                    protocol,
                    "nirs-limb-difference",
                    f"NIRS L {left.value}% vs R {right.value}% at {_hm(left.time, tz)}"
                    + (f"/{_hm(right.time, tz)}" if utc(right.time) != utc(left.time) else "")
                    + ": "
                    f"{diff:g} points apart "
                    f"(threshold {limit:g} points); {low} is lower",
                    side=low,
                    time=max(left.time, right.time, key=utc),
                    extra_source=f"{th.nirs_limb_difference_pct.source}; {th.note}",
                )
            )


def _pedal_rules(
    out: PatientReview,
    patient: Patient,
    protocol: Protocol,
    findings: list[CurrentFinding],
    latest: dict,
    tz,
) -> None:
    for (item, site), f in sorted(latest.items()):
        artery = site.split("-")[-1]
        if (
            item != "pulse"
            or f.value != "absent"
            or artery not in (*PEDAL_ARTERIES, *WRIST_ARTERIES)
        ):
            continue
        rule = "pedal-signal-lost" if artery in PEDAL_ARTERIES else "wrist-signal-lost"
        earlier = [
            x
            for x in findings
            if x.item == "pulse"
            and x.site == site
            and utc(x.time) < utc(f.time)
            and x.value in ("palpable", "doppler")
        ]
        base = (
            patient.baseline.pulses.get(site) in ("palpable", "doppler")
            or patient.baseline.doppler.get(site) == "present"
        )
        if earlier or base:
            was = (
                f"{earlier[-1].value} at {_hm(earlier[-1].time, tz)}"
                if earlier
                else "present at baseline (unit file)"
            )
            out.alerts.append(
                _alert(
                    protocol,
                    rule,
                    f"{site} absent at {_hm(f.time, tz)}; was {was}",
                    side=site[0],
                    time=f.time,
                )
            )


SKIN_NORMAL = {"colour": "normal", "temperature": "warm"}
"""The normal value of the skin items; any other value is a change worth comparing."""


def _skin_rules(
    out: PatientReview,
    protocol: Protocol,
    findings: list[CurrentFinding],
    latest: dict,
    tz,
) -> None:
    for item, normal in SKIN_NORMAL.items():
        for side in SIDES:
            f = latest.get((item, side))
            if f is None or f.value == normal:
                continue
            other = latest.get((item, "R" if side == "L" else "L"))
            earlier = [
                x
                for x in findings
                if x.item == item
                and x.site == side
                and utc(x.time) < utc(f.time)
                and x.value == normal
            ]
            reasons = []
            if other is not None and utc(other.time) == utc(f.time) and other.value == normal:
                reasons.append(f"the other leg {normal}")
            if earlier:
                reasons.append(f"this leg {normal} at {_hm(earlier[-1].time, tz)}")
            if reasons:
                out.alerts.append(
                    _alert(
                        protocol,
                        "skin-change",
                        f"{side} leg {item} {f.value} at {_hm(f.time, tz)}; "
                        + " and ".join(reasons),
                        side=side,
                        time=f.time,
                    )
                )


def _arterial(latest: dict, side: str) -> str | None:
    grades = [
        latest[("pulse", f"{side}-{a}")].value
        for a in PEDAL_ARTERIES
        if ("pulse", f"{side}-{a}") in latest
    ]
    if not grades:
        return None
    return "audible" if any(g in ("palpable", "doppler") for g in grades) else "inaudible"


def _venous(latest: dict, side: str) -> str | None:
    values = [
        f.value for (item, site), f in latest.items() if item == "venous" and site[:1] == side
    ]
    if not values:
        return None
    return "audible" if "present" in values else "inaudible"


def withdrawal_notes(findings: list[CurrentFinding], tz: tzinfo) -> list[str]:
    """One line per finding withdrawn as entered in error: what, when, by whom and why."""
    return [
        f"withdrawn: {f.item} {f.site or ''} of {day_hm(f.time, tz)} ({f.entry.value}) by "
        f"{f.correction.by} at {day_hm(f.correction.entered_at, tz)}: {f.correction.reason}"
        for f in findings
        if f.value == ENTERED_IN_ERROR and f.correction is not None
    ]


def unit_protocol(unit: Unit, base_dir: Path | None = None, source: str = "unit file") -> Protocol:
    """The protocol the unit file names (bundled name or a path relative to ``base_dir``)."""
    return load_protocol(unit.protocol, source, base_dir)


def _read_findings(
    unit: Unit, store: ObservationStore, at: datetime
) -> dict[str, list[CurrentFinding]]:
    """The data-reading part of the review: each patient's window only
    (:func:`vascplan.observations.reads.episode_findings`; what the window means for the
    NIRS baseline fallback is said there)."""
    from vascplan.observations.reads import episode_findings

    return episode_findings(store, unit, unit.patients, at, include_withdrawn=True)


def review_unit(
    unit: Unit,
    store: ObservationStore,
    at: datetime,
    *,
    protocol: Protocol | None = None,
    base_dir: Path | None = None,
) -> UnitReview:
    """Review every patient of ``unit`` from the store, as at ``at`` (aware).

    A patient's findings are found by ref, so that checks made before a move to another
    bed still count; only the patients on the unit are read, each from the look-back
    before their device's insertion (:mod:`vascplan.observations.reads`).

    Returns
    -------
    UnitReview
        ``open_alerts`` is the number of open alerts (the ``obs review`` exit status is 1
        when it is above 0).
    """
    protocol = protocol or unit_protocol(unit, base_dir)
    # withdrawn findings are read to be shown, never reviewed
    by_ref = _read_findings(unit, store, at)
    patients = []
    for p in sorted(unit.patients, key=lambda p: p.bed):
        mine = by_ref[p.ref]
        kept = [f for f in mine if f.value != ENTERED_IN_ERROR]
        patients.append(review_patient(unit, p, protocol, kept, at))
        patients[-1].notes.extend(withdrawal_notes(mine, at.tzinfo or UTC))
    return UnitReview(unit.unit.name, at, protocol.name, protocol.review.note, patients)


# ---------------------------------------------------------------------------
# Renderers


def _iso(moment: datetime | None, tz: Any) -> str | None:
    return moment.astimezone(tz).isoformat() if moment is not None else None


def to_json(result: UnitReview) -> dict[str, Any]:
    """The machine contract of ``obs review --format json``."""
    tz = result.at.tzinfo
    return {
        "unit": result.unit,
        "at": result.at.isoformat(),
        "protocol": result.protocol,
        "review_note": result.review_note,
        "open_alerts": result.open_alerts,
        "patients": [
            {
                "ref": p.ref,
                "bed": p.bed,
                "last_check": p.last_check.astimezone(tz).isoformat() if p.last_check else None,
                "overdue": [
                    {
                        "due": o.due.astimezone(tz).isoformat(),
                        "minutes_late": o.minutes_late,
                        "phase": o.phase,
                        "missing": list(o.missing),
                    }
                    for o in p.overdue
                ],
                "alerts": [
                    {
                        "rule": a.rule,
                        "detail": a.detail,
                        "source": a.source,
                        "call": a.call,
                        "within_min": a.within_min,
                        "escalation": a.escalation,
                        "side": a.side,
                        "time": a.time.astimezone(tz).isoformat() if a.time else None,
                        "group": group_key(a.rule, a.side),
                    }
                    for a in p.alerts
                ],
                "alert_groups": [
                    {
                        "group": g.key,
                        "label": g.label,
                        "within_min": g.within_min,
                        "lines": [
                            {
                                "rule": ln.rule,
                                "count": ln.count,
                                "first": _iso(ln.first, tz),
                                "last": _iso(ln.last, tz),
                                "detail": ln.detail,
                                "call": ln.call,
                                "within_min": ln.within_min,
                            }
                            for ln in g.lines
                        ],
                    }
                    for g in group_alerts(p.alerts)
                ],
                "ali_category": p.ali_category,
                "ali_by_leg": {
                    s: {"category": r.category, "basis": r.basis, "missing": r.missing}
                    for s, r in p.ali.items()
                },
                "abi": {s: r.index for s, r in p.abi.items()},
                "notes": p.notes,
                "abi_detail": {
                    s: {"index": r.index, "band": r.band, "basis": r.basis}
                    for s, r in p.abi.items()
                },
            }
            for p in result.patients
        ],
        "caution": CAUTION,
    }


def render_table(result: UnitReview) -> str:
    """A readable review for the terminal."""
    lines = [
        f"Observation review: {result.unit}, as at {result.at.isoformat()} "
        f"(protocol {result.protocol})",
        f"NIRS thresholds: {result.review_note}",
        "",
    ]
    tz = result.at.tzinfo or UTC  # ``at`` is aware: the unit's zone
    for p in result.patients:
        last = day_hm(p.last_check, tz) if p.last_check else "none recorded"
        abi = ", ".join(
            f"{s} {r.index:.2f} {r.band}" if r.index is not None else f"{s} -"
            for s, r in p.abi.items()
        )
        lines.append(
            f"Bed {p.bed}  {p.ref}  last check {last}  "
            f"ALI category {p.ali_category or '-'}  ABI {abi}"
        )
        shown = p.overdue if len(p.overdue) <= 4 else [p.overdue[0], None, *p.overdue[-2:]]
        for o in shown:
            if o is None:
                lines.append(f"  ... {len(p.overdue) - 3} more overdue (all in --format json)")
                continue
            gap = f"; not yet recorded: {', '.join(o.missing)}" if o.partial else ""
            lines.append(
                f"  overdue  due {day_hm(o.due, tz)} ({o.phase}), {o.minutes_late} min late{gap}"
            )
        for g in group_alerts(p.alerts):
            urgency = f"within {g.within_min} min" if g.within_min is not None else "no call named"
            lines.append(f"  [{g.label}] most urgent: {urgency}")
            previous: tuple[str | None, int | None] | None = None
            for ln in g.lines:
                if (ln.call, ln.within_min) != previous:
                    # One call line heads each run of alerts calling the same person as fast.
                    lines.append(f"    call: {ln.call or NO_CALL}, for:")
                    previous = (ln.call, ln.within_min)
                times = ""
                if ln.count > 1 and ln.first is not None and ln.last is not None:
                    span = hm(ln.first, tz)
                    if utc(ln.first) != utc(ln.last):
                        span += f" to {hm(ln.last, tz)}"
                    times = f" x{ln.count} ({span})"
                elif ln.count > 1:
                    times = f" x{ln.count}"
                lines.append(f"      ALERT {ln.rule}{times}: {ln.detail}")
                # The NIRS note is in the head of the table: not repeated on each line.
                source = ln.source.replace(f"; {result.review_note}", "")
                lines.append(f"            source: {source}")
        if not p.alerts:
            lines.append("  no alert open")
        lines.extend(f"  {note}" for note in p.notes)
        lines.append("")
    lines.append(f"{result.open_alerts} alert(s) open.")
    lines.append(f"Caution: {CAUTION}")
    return "\n".join(lines)
