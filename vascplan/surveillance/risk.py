"""Limb-ischaemia risk tier and distal perfusion cannula advice, with reasons and sources.

This is NOT a validated score: no validated risk score for limb ischaemia on mechanical
support exists (REFERENCES.md). The rules live in ``data/surveillance/risk_rules.yaml``,
each with its source; this module only evaluates them and keeps the reasons visible.

Tests a rule may use (one registry, :data:`TESTS`): ``femoral-access``, ``sar-at-least``,
``pad``, ``diabetes``, ``female``, ``vessel-below-mm``, ``dwell-at-least-h``, ``any``.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import UTC, datetime, timedelta
from functools import lru_cache
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationInfo, model_validator

from vascplan.errors import InputError
from vascplan.fileio import did_you_mean, load_model
from vascplan.paths import data_dir
from vascplan.safety import REFERENCE_MARK
from vascplan.sizing.french import device_outer_mm
from vascplan.sizing.french import sar as sheath_artery_ratio
from vascplan.surveillance.protocol import DEVICE_KINDS, TIERS, Protocol
from vascplan.surveillance.unit import Patient

Tier = Literal["standard", "raised", "high"]

FEMORAL_VESSELS = ("CFA", "EIA", "SFA")
"""Access vessels of the leg: a device there can starve the leg below it (common practice)."""


@dataclass(frozen=True)
class Facts:
    """What the rules look at for one patient at one moment."""

    device_kind: str
    femoral: bool
    sar: float | None
    pad: bool
    diabetes: bool
    sex: str
    vessel_mm: float | None
    dwell_h: float
    dpc_in_place: bool


def _needs(threshold: float | None) -> float:
    assert threshold is not None  # rules that need one are checked at load time
    return threshold


TESTS: dict[str, tuple[bool, Callable[[Facts, float | None], bool]]] = {
    # name -> (needs a threshold, predicate)
    "femoral-access": (False, lambda f, t: f.femoral),
    "sar-at-least": (True, lambda f, t: f.sar is not None and f.sar >= _needs(t)),
    "pad": (False, lambda f, t: f.pad),
    "diabetes": (False, lambda f, t: f.diabetes),
    "female": (False, lambda f, t: f.sex == "female"),
    "vessel-below-mm": (True, lambda f, t: f.vessel_mm is not None and f.vessel_mm < _needs(t)),
    "dwell-at-least-h": (True, lambda f, t: f.dwell_h >= _needs(t)),
    "any": (False, lambda f, t: True),
}


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, str_strip_whitespace=True)


class _Rule(_Strict):
    id: str = Field(min_length=1, max_length=60)
    test: str
    devices: list[str] = Field(min_length=1)
    threshold: float | None = None

    def applies(self, facts: Facts) -> bool:
        if "all" not in self.devices and facts.device_kind not in self.devices:
            return False
        return TESTS[self.test][1](facts, self.threshold)


class Factor(_Rule):
    tier: Literal["raised", "high"]
    reason: str = Field(min_length=3)
    source: str = Field(min_length=3)


class DpcRule(_Rule):
    advise: bool
    basis: str = Field(min_length=3)


class Combine(_Strict):
    factors: int = Field(ge=2, le=20)
    tier: Literal["raised", "high"]
    source: str = Field(min_length=3)


class RiskRules(_Strict):
    """The validated rule table (``data/surveillance/risk_rules.yaml``)."""

    format: Literal["vascplan-risk-rules/1"]
    statement: str = Field(min_length=10)
    factors: list[Factor] = Field(min_length=1)
    combine: Combine
    dpc: list[DpcRule] = Field(min_length=1)

    @model_validator(mode="after")
    def _check(self, info: ValidationInfo) -> RiskRules:
        src = (info.context or {}).get("source", "<rules>")
        for group, rules in (("factors", self.factors), ("dpc", self.dpc)):
            for i, rule in enumerate(rules):
                if rule.test not in TESTS:
                    raise InputError(
                        src,
                        f"{group}.{i}.test",
                        f"unknown test {rule.test!r}{did_you_mean(rule.test, TESTS)}; "
                        f"one of {', '.join(TESTS)}",
                    )
                if TESTS[rule.test][0] and rule.threshold is None:
                    raise InputError(src, f"{group}.{i}.threshold", f"test {rule.test} needs one")
                for j, d in enumerate(rule.devices):
                    if d != "all" and d not in DEVICE_KINDS:
                        raise InputError(src, f"{group}.{i}.devices.{j}", f"unknown device {d!r}")
        return self


@lru_cache(maxsize=4)
def load_rules(path: str | None = None) -> RiskRules:
    """The risk rule table (the bundled one unless ``path`` is given)."""
    return load_model(path or data_dir() / "surveillance" / "risk_rules.yaml", RiskRules)


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
    ``data/anatomy/segments.csv`` through :func:`vascplan.anatomy.reference.load_reference`.
    """
    from vascplan.anatomy.reference import load_reference
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
class RiskAssessment:
    """One patient's limb-ischaemia risk at one moment (not a validated score).

    Attributes
    ----------
    tier : {"standard", "raised", "high"}
    sar : float or None
        Device outer diameter over the access-vessel diameter [-].
    device_od_mm : float
        Device outer diameter [mm].
    dpc_advised : bool
        Whether a distal perfusion cannula is advised (False when one is in place).
    reasons : list of str
        Each factor that set the tier, with its source.
    basis : list of str
        The basis of the cannula advice and of the tier's effect on the schedule.
    assumptions : list of str
        Every reference value used instead of a measurement.
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


def _tier_max(a: str, b: str) -> Tier:
    return TIERS[max(TIERS.index(a), TIERS.index(b))]  # type: ignore[return-value]


def dpc_advice(
    device_kind: str,
    sar: float | None,
    pad: bool,
    sex: str,
    vessel_mm: float | None,
    dpc_in_place: bool,
    *,
    access_vessel: str = "CFA",
    rules: RiskRules | None = None,
) -> tuple[bool, list[str]]:
    """Whether a distal perfusion cannula is advised, with its basis.

    Parameters
    ----------
    device_kind : str
        One of ``va-ecmo-arterial``, ``microaxial-pump``, ``balloon-pump``,
        ``large-bore-sheath``.
    sar : float or None
        Device outer diameter over the access-vessel diameter [-]; None when unknown.
    pad : bool
        Known peripheral arterial disease.
    sex : str
        ``female``, ``male`` or ``unspecified``.
    vessel_mm : float or None
        Access-vessel diameter [mm].
    dpc_in_place : bool
        A distal perfusion cannula is already in.
    access_vessel : str
        The vessel the device sits in; only femoral access (CFA, EIA, SFA) is considered.

    Returns
    -------
    (bool, list of str)
        The advice and its basis (the rule that decided, with its sources).

    Examples
    --------
    >>> dpc_advice("va-ecmo-arterial", 0.8, False, "male", 9.0, False)[0]
    True
    >>> dpc_advice("va-ecmo-arterial", 0.8, False, "male", 9.0, True)[0]
    False
    """
    if device_kind not in DEVICE_KINDS:
        raise ValueError(f"unknown device kind {device_kind!r}; one of {', '.join(DEVICE_KINDS)}")
    rules = rules or load_rules()
    if dpc_in_place:
        return False, [
            "a distal perfusion cannula is already in place: check its connection "
            "and flow at every check"
        ]
    if access_vessel not in FEMORAL_VESSELS:
        return False, [
            f"access from the {access_vessel}, not the leg: a distal perfusion "
            "cannula of the leg does not apply (common practice)"
        ]
    facts = Facts(device_kind, True, sar, pad, False, sex, vessel_mm, 0.0, False)
    for rule in rules.dpc:
        if rule.applies(facts):
            return rule.advise, [f"[{rule.id}] {rule.basis}"]
    return False, ["no rule matched (the rule table has no catch-all)"]


def assess_patient(patient: Patient, protocol: Protocol, at: datetime) -> RiskAssessment:
    """Risk tier, SAR and cannula advice for one patient at moment ``at``.

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
    Not a validated score. The tier is the highest tier any factor gives; ``combine``
    raised factors together give the combined tier (unit policy). A clinician's tier
    event (``events`` in the unit file) at or before ``at`` replaces the rules' tier.
    """
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
    ratio = round(sheath_artery_ratio(od.mm, vessel_mm), 3)
    # Real elapsed time: compare and subtract in UTC (same-zone datetimes use wall time).
    at_utc, inserted = at.astimezone(UTC), dev.inserted.astimezone(UTC)
    removed = None if dev.removed is None else dev.removed.astimezone(UTC)
    end = removed if removed is not None and removed < at_utc else at_utc
    dwell_h = max(0.0, (end - inserted).total_seconds() / 3600.0)
    dpc_in = patient.dpc_in_at(at_utc)
    facts = Facts(
        dev.kind,
        dev.vessel in FEMORAL_VESSELS,
        ratio,
        patient.pad,
        patient.diabetes,
        patient.sex,
        vessel_mm,
        dwell_h,
        dpc_in,
    )
    tier: Tier = "standard"
    reasons: list[str] = []
    ids: list[str] = []
    for factor in rules.factors:
        if factor.applies(facts):
            tier = _tier_max(tier, factor.tier)
            reasons.append(f"{factor.reason} ({factor.source})")
            ids.append(factor.id)
    if len(ids) >= rules.combine.factors:
        tier = _tier_max(tier, rules.combine.tier)
        reasons.append(
            f"{len(ids)} factors together (at least {rules.combine.factors} give "
            f"{rules.combine.tier}; {rules.combine.source})"
        )
    if not measured:
        reasons.append(f"SAR {ratio:.2f} uses a reference vessel diameter {REFERENCE_MARK}")
    for ev in patient.events:
        if ev.at.astimezone(UTC) <= at_utc:
            tier = ev.tier
            reasons.append(
                f"tier set to {ev.tier} by a clinician at {ev.at.isoformat()}"
                + (f": {ev.note}" if ev.note else "")
            )
    if not reasons:
        reasons.append("no listed risk factor applies")
    advised, basis = dpc_advice(
        dev.kind,
        ratio,
        patient.pad,
        patient.sex,
        vessel_mm,
        dpc_in,
        access_vessel=dev.vessel,
        rules=rules,
    )
    if removed is not None and removed <= at_utc:
        advised = False
        basis = [
            f"device removed at {removed.astimezone(dev.inserted.tzinfo).isoformat()}: a distal "
            "perfusion cannula is no longer in question; the after-removal checks go on "
            "(common practice)"
        ]
    elif at_utc < inserted:
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
        sar=ratio,
        device_od_mm=round(od.mm, 3),
        vessel_mm=vessel_mm,
        vessel_measured=measured,
        dwell_h=round(dwell_h, 2),
        dpc_in_place=dpc_in,
        dpc_advised=advised,
        reasons=reasons,
        basis=basis,
        assumptions=assumptions,
        factors=ids,
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
