"""Limb-ischaemia risk tier and distal perfusion cannula advice, with reasons and sources.

This is NOT a validated score: no validated risk score for limb ischaemia on mechanical
support exists. The tier multiplies the weights of the factors that apply (relative risks
from published series, or unit policy) and compares the total with the thresholds of
``data/surveillance/risk_rules.yaml`` (:mod:`vascplan.surveillance.risk_rules`). The SAR
and the distal flow come from the sizing package; the cannula advice is the one rule every
output shares (:func:`vascplan.sizing.advice.cannula_advice`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from functools import lru_cache

from vascplan.safety import REFERENCE_MARK
from vascplan.sizing.advice import CannulaAdvice, cannula_advice, not_applicable
from vascplan.sizing.french import device_outer_mm
from vascplan.sizing.french import sar as sheath_artery_ratio
from vascplan.surveillance.protocol import TIERS, Protocol
from vascplan.surveillance.risk_rules import (
    Facts,
    RiskRules,
    Tier,
    WeightedFactor,
    combine,
    load_rules,
)
from vascplan.surveillance.unit import Patient

__all__ = [
    "TIERS",
    "FEMORAL_VESSELS",
    "LimbFigures",
    "RiskAssessment",
    "RiskRules",
    "assess_patient",
    "load_rules",
    "reference_diameter",
    "tier_changes",
]

FEMORAL_VESSELS = ("CFA", "EIA", "SFA")
"""Access vessels of the leg: a device there can starve the leg below it (common practice)."""


@dataclass(frozen=True)
class ReferenceDiameter:
    vessel: str
    sex: str
    diameter_mm: float
    source: str


@lru_cache(maxsize=1)
def _reference_table() -> dict[tuple[str, str], ReferenceDiameter]:
    """(segment id, sex) -> reference diameter, read from the one reference anatomy table.

    The access vessels of the unit file (:data:`~vascplan.surveillance.unit.ACCESS_VESSELS`)
    map to the segment rows of each side (``CFA`` on the right is ``R-CFA``) of
    ``data/anatomy/segments.csv`` through :func:`vascplan.refdata.anatomy.load_reference`.
    """
    from vascplan.refdata.anatomy import load_reference
    from vascplan.surveillance.unit import ACCESS_VESSELS

    table: dict[tuple[str, str], ReferenceDiameter] = {}
    for seg_id, row in load_reference().items():
        vessel = seg_id[2:]
        if row.side not in ("L", "R") or vessel not in ACCESS_VESSELS:
            continue
        for sex in ("female", "male"):
            table[(seg_id, sex)] = ReferenceDiameter(
                vessel, sex, row.diameter_mean_mm(sex), row.diameter_source
            )
    return table


def reference_diameter(
    vessel: str, sex: str, *, side: str | None = None
) -> tuple[ReferenceDiameter, str]:
    """A reference access-vessel diameter by sex, and the assumption sentence to show.

    Used only when the unit file gives no measured ``vessel_mm``. The value comes from
    the reference anatomy table (``data/anatomy/segments.csv``): for the femoral, iliac
    and axillary access vessels it is the minimal lumen diameter by CT in patients who
    are candidates for large-bore devices. Where the sex is not given, the women's
    (smaller, so more cautious) value is taken and that is said. ``side`` (``L`` or
    ``R``) picks the segment row of that side; without it the smaller of the two sides
    is taken (the table gives both sides the same value).

    Examples
    --------
    >>> ref, note = reference_diameter("CFA", "male")
    >>> ref.diameter_mm        # Chiam et al., Int J Cardiol 2013: femoral MLD, men
    7.3
    """
    table = _reference_table()
    used_sex = sex if sex in ("male", "female") else "female"
    sides = (side,) if side in ("L", "R") else ("L", "R")

    def pick(for_sex: str) -> ReferenceDiameter:
        return min(
            (table[(f"{s}-{vessel}", for_sex)] for s in sides), key=lambda r: r.diameter_mm
        )

    ref = pick(used_sex)
    who = {"male": "men", "female": "women"}[used_sex]
    note = (
        f"no measured {vessel} diameter: reference {ref.diameter_mm:g} mm for {who} used "
        f"{REFERENCE_MARK} ({ref.source})"
    )
    if used_sex != sex:
        if pick("male").diameter_mm != ref.diameter_mm:
            note += "; sex not given, the smaller women's value taken"
        else:
            note = note.replace(f" for {who} used", " used (the same for women and men)")
    return ref, note


@dataclass(frozen=True)
class LimbFigures:
    """The sizing figures behind the tier and the advice for one patient.

    Attributes
    ----------
    occupied_cm : float
        Length of artery the device occupies [cm] (a reference default, flagged).
    lumen_left_pct : float or None
        Lumen left round the device [% of the open lumen].
    distal_flow_pct_concentric, distal_flow_pct_eccentric : float or None
        Estimated distal flow, device centred .. against the wall [% of resting flow].
    perfusion_mmhg, mean_arterial_mmhg : float or None
        The pressures used [mmHg]; ``map_assumed`` when the MAP is a default.
    note : str
        Why the flow was not estimated, when it was not.
    """

    occupied_cm: float
    lumen_left_pct: float | None
    distal_flow_pct_concentric: float | None
    distal_flow_pct_eccentric: float | None
    perfusion_mmhg: float | None
    mean_arterial_mmhg: float | None
    map_assumed: bool
    note: str = ""


@dataclass(frozen=True)
class RiskAssessment:
    """One patient's limb-ischaemia risk at one moment (not a validated score).

    Attributes
    ----------
    tier : {"standard", "raised", "high"}
        From the combined relative risk, or a clinician's tier event.
    rules_tier : {"standard", "raised", "high"}
        The tier the rules give, before any clinician's event.
    sar : float or None
        Device outer diameter over the access-vessel diameter [-].
    device_od_mm : float
        Device outer diameter [mm].
    dpc_advised : bool
        Whether a distal perfusion cannula is advised (False when one is in place).
    advice : CannulaAdvice
        The shared cannula rule's answer (rule, basis, which figure governs).
    weighted : list of WeightedFactor
        Every factor that applies, with its weight and source.
    total : float
        The combined relative risk: product of the weights that count [-].
    limb : LimbFigures
        Lumen left, distal flow and the pressures used.
    reasons : list of str
        Each factor with its weight and source, the total, and any clinician's event.
    basis : list of str
        The basis of the cannula advice and of the tier's effect on the schedule.
    assumptions : list of str
        Every reference value used instead of a measurement.
    factors : list of str
        Ids of the factors that apply.
    """

    ref: str
    bed: int
    tier: Tier
    sar: float | None
    device_od_mm: float
    vessel_mm: float
    vessel_measured: bool
    dwell_h: float
    dpc_in_place: bool
    dpc_advised: bool
    reasons: list[str] = field(default_factory=list)
    basis: list[str] = field(default_factory=list)
    assumptions: list[str] = field(default_factory=list)
    factors: list[str] = field(default_factory=list)
    weighted: list[WeightedFactor] = field(default_factory=list)
    total: float = 1.0
    rules_tier: Tier = "standard"
    advice: CannulaAdvice | None = None
    limb: LimbFigures | None = None
    combination: str = ""


def _limb_figures(patient: Patient, od_mm: float, vessel_mm: float) -> tuple[LimbFigures, str]:
    """Distal flow past the device at the patient's (or the default) perfusion pressure,
    and the assumption line for the reference values it rests on."""
    from vascplan.sizing.limb import limb_defaults, limb_flow_with_device, perfusion_pressure
    from vascplan.sizing.tables import SizingValueError

    defaults = limb_defaults()
    occ = defaults["occupied_cm"]
    kind = patient.device.kind
    pressure = perfusion_pressure(patient.map_mmhg, kind)
    flow_ref = defaults["limb_flow_ml_min"]
    note = (
        f"{patient.ref}: distal flow estimated over an occupied length of {occ.value:g} cm "
        f"{REFERENCE_MARK} ({occ.cite()}) from a resting limb flow of {flow_ref.value:g} mL/min "
        f"{REFERENCE_MARK} ({flow_ref.cite()}); {pressure.basis}"
        + (f" {REFERENCE_MARK}" if pressure.map_assumed else "")
    )
    try:
        est = limb_flow_with_device(
            vessel_mm, od_mm, occ.value, mean_arterial_mmhg=patient.map_mmhg, device_kind=kind
        )
    except SizingValueError as exc:
        return LimbFigures(
            occ.value, None, None, None, pressure.perfusion_mmhg, pressure.mean_arterial_mmhg,
            pressure.map_assumed, f"distal flow not estimated: {exc}",
        ), note
    return LimbFigures(
        occ.value,
        est.lumen_left_pct,
        est.distal_flow_pct_concentric,
        est.distal_flow_pct_eccentric,
        pressure.perfusion_mmhg,
        pressure.mean_arterial_mmhg,
        pressure.map_assumed,
    ), note


def _reason(w: WeightedFactor) -> str:
    counted = "" if w.counted else ", not counted: the larger factor of its group counts"
    floor = f"; tier at least {w.min_tier}" if w.min_tier else ""
    return f"x{w.weight:g} {w.reason} ({w.source}{counted}){floor}"


def assess_patient(patient: Patient, protocol: Protocol, at: datetime) -> RiskAssessment:
    """Risk tier, SAR, distal flow and cannula advice for one patient at moment ``at``.

    Parameters
    ----------
    patient : Patient
        From a validated unit file.
    protocol : Protocol
        The unit's protocol: the tier's effect on the check intervals goes into ``basis``.
    at : datetime
        Aware moment; dwell time runs from insertion to ``at`` (or to removal).

    Returns
    -------
    RiskAssessment

    Notes
    -----
    Not a validated score. The combined relative risk is the product of the weights of
    the factors that apply (:func:`vascplan.surveillance.risk_rules.combine`); the tier is
    the highest whose threshold it reaches. Without a measured ``vessel_mm`` the SAR, the
    flow, the advice and the tier use the sex's reference diameter, flagged ``*``, and
    the reasons say the access vessel was not measured. A clinician's tier event at or
    before ``at`` replaces the rules' tier.

    References
    ----------
    Alderman JD et al. J Am Coll Cardiol 1987;9(3):524. Cheng R et al. Ann Thorac Surg
    2014. Marbach JA et al. Int J Cardiol 2022. Klein WM et al. J Vasc Surg 2003.
    """
    from vascplan.sizing.assess import sar_threshold

    rules = load_rules()
    dev = patient.device
    assumptions: list[str] = []
    od = device_outer_mm(dev.size_fr, dev.label, dev.outer_mm)
    if od.assumption:
        assumptions.append(f"{patient.ref}: {od.assumption} {REFERENCE_MARK}")
    if patient.vessel_mm is not None:
        vessel_mm, measured = patient.vessel_mm, True
    else:
        ref, note = reference_diameter(dev.vessel, patient.sex)
        vessel_mm, measured = ref.diameter_mm, False
        assumptions.append(f"{patient.ref}: {note}")
    ratio = sheath_artery_ratio(od.mm, vessel_mm)
    # Real elapsed time: compare and subtract in UTC (same-zone datetimes use wall time).
    at_utc, inserted = at.astimezone(UTC), dev.inserted.astimezone(UTC)
    removed = None if dev.removed is None else dev.removed.astimezone(UTC)
    end = removed if removed is not None and removed < at_utc else at_utc
    dwell_h = max(0.0, (end - inserted).total_seconds() / 3600.0)
    dpc_in = patient.dpc_in_at(at_utc)
    # After removal the tier keeps the cannula the device had (it came out with the device).
    dpc_for_tier = dpc_in or (
        removed is not None
        and removed <= at_utc
        and patient.dpc_in_at(removed - timedelta(seconds=1))
    )
    limb, flow_note = _limb_figures(patient, od.mm, vessel_mm)
    assumptions.append(flow_note)
    mark = "" if measured else f" {REFERENCE_MARK}"
    th = sar_threshold()
    advice = cannula_advice(
        dev.kind,
        sar=ratio,
        distal_flow_pct=limb.distal_flow_pct_eccentric,
        sar_limit=th.value,
        sar_limit_source=th.short_source,
        access_vessel=dev.vessel,
        pad=patient.pad,
        dpc_in_place=dpc_in,
        flow_note=f" {REFERENCE_MARK}",
        worst_flow_pct=limb.distal_flow_pct_concentric,
    )
    facts = Facts(
        dev.kind,
        dev.vessel in FEMORAL_VESSELS,
        ratio,
        patient.pad,
        patient.diabetes,
        patient.sex,
        vessel_mm,
        dwell_h,
        dpc_for_tier,
        sar_at_limit=ratio >= th.value,
        distal_flow_low=limb.distal_flow_pct_eccentric is not None
        and limb.distal_flow_pct_eccentric < advice.floor_pct,
    )
    weighted, total = combine(rules, facts)
    floor = rules.min_tier([w.id for w in weighted])
    rules_tier = rules.tier_for(total, floor)
    tier: Tier = rules_tier
    reasons = [_reason(w) for w in weighted]
    thresholds = ", ".join(
        f"{name} at {t.at_least:g} ({t.source})" for name, t in rules.tiers.items()
    )
    floor_text = "" if floor is None else f", at least {floor} by the device's rule"
    reasons.append(
        f"combined relative risk {total:.2f}{mark} -> {rules_tier}{floor_text} (thresholds: "
        f"{thresholds}; {rules.combination}); not a validated score"
    )
    if not measured:
        reasons.insert(
            0,
            f"access vessel not measured: SAR {ratio:.2f}, distal flow, advice and tier use "
            f"the reference diameter {vessel_mm:g} mm {REFERENCE_MARK}; measure the "
            f"{dev.vessel} (minimal lumen diameter)",
        )
    if limb.note:
        reasons.append(limb.note)
    for ev in patient.events:
        if ev.at.astimezone(UTC) <= at_utc:
            tier = ev.tier
            reasons.append(
                f"tier set to {ev.tier} by a clinician at {ev.at.isoformat()}"
                + (f": {ev.note}" if ev.note else "")
            )
    if removed is not None and removed <= at_utc:
        advice = not_applicable(
            "device-removed",
            f"device removed at {removed.astimezone(dev.inserted.tzinfo).isoformat()}: a distal "
            "perfusion cannula is no longer in question; the after-removal checks go on "
            "(common practice)",
        )
    basis = list(advice.basis)
    if advice.governs:
        basis.append(f"which governs: {advice.governs}")
    if at_utc < inserted:
        basis.append(
            f"assessed before the device goes in ({dev.inserted.isoformat()}): advice for "
            "the planned device"
        )
    if tier in protocol.tiers:
        tighter = ", ".join(
            f"{name} every {every} min" for name, every in protocol.tiers[tier].every_min.items()
        )
        basis.append(
            f"tier {tier}: {tighter} ({protocol.tiers[tier].source}, protocol {protocol.name})"
        )
    basis.append(rules.statement)
    return RiskAssessment(
        ref=patient.ref,
        bed=patient.bed,
        tier=tier,
        sar=round(ratio, 3),
        device_od_mm=round(od.mm, 3),
        vessel_mm=vessel_mm,
        vessel_measured=measured,
        dwell_h=round(dwell_h, 2),
        dpc_in_place=dpc_in,
        dpc_advised=advice.advised,
        reasons=reasons,
        basis=basis,
        assumptions=assumptions,
        factors=[w.id for w in weighted],
        weighted=weighted,
        total=total,
        rules_tier=rules_tier,
        advice=advice,
        limb=limb,
        combination=rules.combination,
    )


def tier_changes(
    patient: Patient, protocol: Protocol, until: datetime
) -> list[tuple[datetime, Tier]]:
    """Moments at which the patient's tier changes, from insertion to ``until``.

    The first entry is the tier at insertion. Changes come from dwell-time rules
    crossing their thresholds, from a distal cannula going in or out, and from
    clinicians' tier events.
    """
    rules = load_rules()
    dev = patient.device
    inserted = dev.inserted.astimezone(UTC)  # real elapsed time: add hours in UTC
    moments = {inserted}
    for factor in rules.factors:
        if factor.test == "dwell-at-least-h" and factor.threshold is not None:
            moments.add(inserted + timedelta(hours=factor.threshold))
    if patient.dpc is not None:
        moments.add(patient.dpc.inserted.astimezone(UTC))
        if patient.dpc.removed is not None:
            moments.add(patient.dpc.removed.astimezone(UTC))
    moments.update(ev.at.astimezone(UTC) for ev in patient.events)
    tz = dev.inserted.tzinfo
    until_utc = until.astimezone(UTC)
    out: list[tuple[datetime, Tier]] = []
    for moment in sorted(m for m in moments if m <= until_utc):
        tier = assess_patient(patient, protocol, moment).tier
        if not out or out[-1][1] != tier:
            out.append((moment.astimezone(tz), tier))
    return out
