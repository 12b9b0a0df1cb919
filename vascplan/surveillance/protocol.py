"""The surveillance protocol: check phases, tier intensification, items, escalation, review.

A protocol file (``format: vascplan-protocol/1``) is validated as strictly as a case file:
unknown fields are refused, every value carries its ``source`` (a citation, ``common
practice``, ``from memory`` or ``unit policy``), and every mistake is one line naming the
file, the field and what is allowed. The bundled protocol is
``data/protocols/standard.yaml``; a unit names it (``protocol: standard``) or gives a path
to its own file, relative to the unit file.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationInfo, model_validator

from vascplan.errors import InputError
from vascplan.fileio import did_you_mean, load_model
from vascplan.paths import data_dir

PROTOCOL_FORMAT = "vascplan-protocol/1"

DEVICE_KINDS = ("va-ecmo-arterial", "microaxial-pump", "balloon-pump", "large-bore-sheath")
TIERS = ("standard", "raised", "high")

_NAME = r"^[A-Za-z0-9][A-Za-z0-9_-]*$"


class _Strict(BaseModel):
    # strict: "15" is not a number of minutes, "yes" not true (issue 18)
    model_config = ConfigDict(
        extra="forbid", frozen=True, str_strip_whitespace=True, strict=True, allow_inf_nan=False
    )


Source = Field(
    min_length=3,
    max_length=400,
    description="citation, common practice, from memory or unit policy",
)


def _source(info: ValidationInfo) -> str:
    return (info.context or {}).get("source", "<protocol>")


class Tagged(_Strict):
    """A number with its source."""

    value: float
    source: str = Source


class TaggedFlag(_Strict):
    """A yes/no setting with its source."""

    value: bool
    source: str = Source


class Phase(_Strict):
    """One phase of checks: every ``every_min`` for ``for_min`` minutes or ``count`` checks.

    A phase with neither lasts until the device is removed (only the last after-insertion
    phase may do so).
    """

    name: str = Field(pattern=_NAME, max_length=40)
    after: Literal["insertion", "removal"]
    every_min: int = Field(ge=1, le=1440)
    for_min: int | None = Field(default=None, ge=1, le=7 * 1440)
    count: int | None = Field(default=None, ge=1, le=200)
    source: str = Source

    @model_validator(mode="after")
    def _one_length(self) -> Phase:
        if self.for_min is not None and self.count is not None:
            raise ValueError("give for_min or count, not both")
        return self

    @property
    def open_ended(self) -> bool:
        return self.for_min is None and self.count is None


class TierRule(_Strict):
    """How a risk tier tightens phase intervals: phase name -> every_min."""

    every_min: dict[str, int] = Field(default_factory=dict)
    source: str = Source


class ToleranceBand(_Strict):
    """How late a check with an interval up to ``up_to_every_min`` may be placed."""

    up_to_every_min: int = Field(ge=1, le=10080)
    tolerance_min: int = Field(ge=0, le=240)
    source: str = Source


class CheckItem(_Strict):
    id: str = Field(pattern=_NAME, max_length=40)
    text: str = Field(min_length=3, max_length=300)
    devices: list[str] = Field(min_length=1)
    when: Literal["always", "nirs-monitored", "dpc-in-place"] = "always"
    limb: Literal["leg", "arm", "any"] = Field(
        default="any",
        description="the limb the item examines: leg (femoral/iliac access), arm (axillary/"
        "subclavian access) or any",
    )
    records: str | None = Field(
        default=None,
        description="the observation item (obs add --ITEM) that records this check",
    )
    per_side: bool = Field(
        default=False,
        description="each limb (L and R) is checked and recorded on its own",
    )
    source: str = Source


class Escalation(_Strict):
    """A finding, whom it means calling, and how fast."""

    id: str = Field(pattern=_NAME, max_length=40)
    finding: str = Field(min_length=3, max_length=400)
    arm_finding: str | None = Field(
        default=None,
        min_length=3,
        max_length=400,
        description="the finding in words for a device in an arm artery",
    )
    limb: Literal["leg", "arm", "any"] = "any"
    devices: list[str] = Field(default_factory=lambda: ["all"], min_length=1)
    when: Literal["always", "dpc-in-place"] = "always"
    call: str = Field(min_length=3, max_length=200)
    within_min: int = Field(ge=1, le=1440)
    source: str = Source


class Threshold(_Strict):
    value: float
    source: str = Source


class Review(_Strict):
    """Thresholds the observation review flags against (all configurable)."""

    note: str = Field(min_length=3, max_length=400)
    nirs_relative_fall_pct: Threshold
    nirs_limb_difference_pct: Threshold
    nirs_absolute_floor_pct: Threshold
    capillary_refill_slow_s: Threshold

    @model_validator(mode="after")
    def _ranges(self, info: ValidationInfo) -> Review:
        limits = {
            "nirs_relative_fall_pct": (1, 100),
            "nirs_limb_difference_pct": (1, 100),
            "nirs_absolute_floor_pct": (1, 100),
            "capillary_refill_slow_s": (1, 10),
        }
        for name, (lo, hi) in limits.items():
            value = getattr(self, name).value
            if not lo <= value <= hi:
                raise InputError(
                    _source(info), f"review.{name}.value", f"must be {lo}-{hi} (got {value:g})"
                )
        return self

    def values(self) -> dict[str, float]:
        """The thresholds by name (``nirs_relative_fall_pct`` -> 20.0 ...).

        >>> load_protocol("standard", "u").review.values()["capillary_refill_slow_s"]
        3.0
        """
        names = (
            "nirs_relative_fall_pct",
            "nirs_limb_difference_pct",
            "nirs_absolute_floor_pct",
            "capillary_refill_slow_s",
        )
        return {n: float(getattr(self, n).value) for n in names}


class Protocol(_Strict):
    """A validated surveillance protocol."""

    format: Literal["vascplan-protocol/1"]
    name: str = Field(min_length=1, max_length=80)
    phases: list[Phase] = Field(min_length=2)
    tiers: dict[Literal["raised", "high"], TierRule] = Field(default_factory=dict)
    new_cannula_restarts: TaggedFlag
    check_duration_min: Tagged
    tolerance: list[ToleranceBand] = Field(min_length=1)
    handover_window_min: Tagged
    items: list[CheckItem] = Field(min_length=1)
    escalation: list[Escalation] = Field(min_length=1)
    review: Review

    @model_validator(mode="after")
    def _cross_checks(self, info: ValidationInfo) -> Protocol:
        src = _source(info)
        names = [p.name for p in self.phases]
        for i, p in enumerate(self.phases):
            if names.index(p.name) != i:
                raise InputError(src, f"phases.{i}.name", f"phase {p.name!r} is named twice")
        after_ins = [i for i, p in enumerate(self.phases) if p.after == "insertion"]
        after_rem = [i for i, p in enumerate(self.phases) if p.after == "removal"]
        if not after_ins:
            raise InputError(src, "phases", "needs at least one phase after insertion")
        if not after_rem:
            raise InputError(src, "phases", "needs at least one phase after removal")
        if after_ins != list(range(len(after_ins))):
            raise InputError(
                src,
                f"phases.{after_rem[0]}.after",
                "list the phases after insertion first, then those after removal",
            )
        last_ins = after_ins[-1]
        if not self.phases[last_ins].open_ended:
            raise InputError(
                src,
                f"phases.{last_ins}",
                "the last phase after insertion must run until removal (no for_min or count)",
            )
        for i, p in enumerate(self.phases):
            if p.open_ended and i != last_ins:
                raise InputError(
                    src,
                    f"phases.{i}",
                    "give for_min or count; only the last phase after insertion runs until removal",
                )
        for tier, rule in self.tiers.items():
            for phase_name, every in rule.every_min.items():
                field = f"tiers.{tier}.every_min.{phase_name}"
                if phase_name not in names:
                    raise InputError(
                        src,
                        field,
                        f"unknown phase {phase_name!r}{did_you_mean(phase_name, names)}; "
                        f"phases are {', '.join(names)}",
                    )
                base = self.phases[names.index(phase_name)].every_min
                if not 1 <= every <= base:
                    raise InputError(
                        src,
                        field,
                        "a tier may only tighten a phase: "
                        f"every_min must be 1-{base} (got {every})",
                    )
        if self.check_duration_min.value <= 0 or self.check_duration_min.value > 60:
            raise InputError(
                src, "check_duration_min.value", "must be above 0 and at most 60 minutes"
            )
        if not 0 < self.handover_window_min.value <= 720:
            raise InputError(
                src, "handover_window_min.value", "must be above 0 and at most 720 minutes"
            )
        bounds = [b.up_to_every_min for b in self.tolerance]
        for i in range(1, len(bounds)):
            if bounds[i] <= bounds[i - 1]:
                raise InputError(
                    src,
                    f"tolerance.{i}.up_to_every_min",
                    "bands must rise: each up_to_every_min above the one before",
                )
        for field, every in self._all_intervals():
            band = self._band(every)
            if band is None:
                raise InputError(
                    src,
                    field,
                    f"no tolerance band covers every_min {every}; the widest band is "
                    f"up_to_every_min {bounds[-1]}",
                )
            if band[1].tolerance_min >= every:
                raise InputError(
                    src,
                    f"tolerance.{band[0]}.tolerance_min",
                    f"must be shorter than every interval it covers ({every} min at {field})",
                )
        ids = [it.id for it in self.items]
        for i, it in enumerate(self.items):
            if ids.index(it.id) != i:
                raise InputError(src, f"items.{i}.id", f"item {it.id!r} is listed twice")
            for j, d in enumerate(it.devices):
                if d != "all" and d not in DEVICE_KINDS:
                    raise InputError(
                        src,
                        f"items.{i}.devices.{j}",
                        f"unknown device kind {d!r}{did_you_mean(d, DEVICE_KINDS)}; "
                        f"use all or one of {', '.join(DEVICE_KINDS)}",
                    )
        from vascplan.vocabulary import ITEMS as OBS_ITEMS

        for i, it in enumerate(self.items):
            if it.records is not None and it.records not in OBS_ITEMS:
                raise InputError(
                    src,
                    f"items.{i}.records",
                    f"unknown observation item {it.records!r}"
                    f"{did_you_mean(it.records, OBS_ITEMS)}; items are {', '.join(OBS_ITEMS)}",
                )
        for i, e in enumerate(self.escalation):
            for j, d in enumerate(e.devices):
                if d != "all" and d not in DEVICE_KINDS:
                    raise InputError(
                        src,
                        f"escalation.{i}.devices.{j}",
                        f"unknown device kind {d!r}{did_you_mean(d, DEVICE_KINDS)}; "
                        f"use all or one of {', '.join(DEVICE_KINDS)}",
                    )
        esc = [e.id for e in self.escalation]
        for i, e in enumerate(self.escalation):
            if esc.index(e.id) != i:
                raise InputError(src, f"escalation.{i}.id", f"escalation {e.id!r} is listed twice")
        return self

    def _all_intervals(self) -> list[tuple[str, int]]:
        out = [(f"phases.{i}.every_min", p.every_min) for i, p in enumerate(self.phases)]
        for tier, rule in self.tiers.items():
            out += [(f"tiers.{tier}.every_min.{n}", e) for n, e in rule.every_min.items()]
        return out

    def _band(self, every_min: int) -> tuple[int, ToleranceBand] | None:
        for i, band in enumerate(self.tolerance):
            if every_min <= band.up_to_every_min:
                return i, band
        return None

    # -- queries -------------------------------------------------------------------------

    def phases_after(self, event: Literal["insertion", "removal"]) -> list[Phase]:
        """The phases that follow ``event``, in order."""
        return [p for p in self.phases if p.after == event]

    def interval_min(self, phase: Phase, tier: str) -> int:
        """The check interval [min] of ``phase`` for a patient in ``tier``."""
        rule = self.tiers.get(tier)  # type: ignore[call-overload]
        if rule is not None and phase.name in rule.every_min:
            return rule.every_min[phase.name]
        return phase.every_min

    def tolerance_min(self, every_min: int) -> int:
        """How late [min] a check with interval ``every_min`` may be placed."""
        band = self._band(every_min)
        # Every interval the protocol can produce is covered (checked at load time).
        return band[1].tolerance_min if band is not None else 0

    def items_for(
        self,
        device_kind: str,
        nirs_monitored: bool,
        dpc_in_place: bool,
        limb: Literal["leg", "arm"] = "leg",
    ) -> list[str]:
        """The ids of the check items for a device kind and what is in place, in file order.

        ``limb`` is the limb downstream of the access: ``leg`` for a femoral or iliac
        device, ``arm`` for an axillary or subclavian one (``Device.limb``); items marked
        for the other limb are left out.

        >>> p = load_protocol("standard", "u")
        >>> "arm-pulses" in p.items_for("microaxial-pump", False, False, limb="arm")
        True
        >>> "calf" in p.items_for("microaxial-pump", False, False, limb="arm")
        False
        """
        out = []
        for it in self.items:
            if "all" not in it.devices and device_kind not in it.devices:
                continue
            if it.limb not in ("any", limb):
                continue
            if it.when == "nirs-monitored" and not nirs_monitored:
                continue
            if it.when == "dpc-in-place" and not dpc_in_place:
                continue
            out.append(it.id)
        return out

    def item_text(self, item_id: str) -> str:
        """The wording of a check item (for checklists and calendar descriptions)."""
        for it in self.items:
            if it.id == item_id:
                return it.text
        raise KeyError(item_id)

    def item(self, item_id: str) -> CheckItem:
        """The check item ``item_id``."""
        for it in self.items:
            if it.id == item_id:
                return it
        raise KeyError(item_id)

    def escalation_for(
        self, device_kind: str, limb: Literal["leg", "arm"] = "leg", dpc_in_place: bool = True
    ) -> list[tuple[Escalation, str]]:
        """The escalation criteria for a device kind and the limb at risk, in file order,
        each with its finding in the words for that limb (``arm_finding`` for an arm);
        a criterion ``when: dpc-in-place`` only while a distal perfusion cannula is in.

        >>> p = load_protocol("standard", "u")
        >>> arm = dict((e.id, text) for e, text in p.escalation_for("microaxial-pump", "arm"))
        >>> "calf" in arm["compartment"].lower(), "nirs-fall" in arm, "circuit-fault" in arm
        (False, False, False)
        """
        out = []
        for e in self.escalation:
            if "all" not in e.devices and device_kind not in e.devices:
                continue
            if e.limb not in ("any", limb):
                continue
            if e.when == "dpc-in-place" and not dpc_in_place:
                continue
            text = e.arm_finding if limb == "arm" and e.arm_finding else e.finding
            out.append((e, text))
        return out

    def escalation_by_id(self, escalation_id: str) -> Escalation:
        for e in self.escalation:
            if e.id == escalation_id:
                return e
        ids = [e.id for e in self.escalation]
        raise KeyError(f"unknown escalation {escalation_id!r}{did_you_mean(escalation_id, ids)}")


def bundled_protocols() -> list[str]:
    """Names of the protocols shipped in ``data/protocols``."""
    return sorted(p.stem for p in (data_dir() / "protocols").glob("*.yaml"))


def load_protocol(name_or_path: str, source: str, base_dir: Path | None = None) -> Protocol:
    """Load a bundled protocol by name, or a protocol file by path.

    Parameters
    ----------
    name_or_path : str
        A bundled name (``standard``) or a path to a YAML/JSON protocol file; a relative
        path is taken relative to ``base_dir`` (the unit file's folder).
    source : str
        Where the name came from (the unit file), for the error when it resolves to nothing.
    base_dir : Path, optional
        The unit file's folder: relative paths start from it, and a path must stay inside
        it or the bundled protocols (``../../etc/passwd`` is refused). Without it (a
        library call, not a unit file) the path is taken as given.

    Raises
    ------
    InputError
        Unknown name, missing file, or any mistake inside the protocol file (one line).

    Examples
    --------
    >>> load_protocol("standard", "unit.yaml").phases[0].every_min
    15
    """
    if re.fullmatch(_NAME, name_or_path) and not name_or_path.endswith((".yaml", ".yml", ".json")):
        path = data_dir() / "protocols" / f"{name_or_path}.yaml"
        if not path.is_file():
            names = bundled_protocols()
            raise InputError(
                source,
                "protocol",
                f"unknown protocol {name_or_path!r}{did_you_mean(name_or_path, names)}; bundled: "
                f"{', '.join(names)}, or give a path to a protocol file",
            )
    elif base_dir is not None:  # named in a unit file: stays in its folder (issue 18)
        from vascplan.fileio import path_inside

        path = path_inside(
            name_or_path,
            [base_dir, data_dir() / "protocols"],
            source,
            "protocol",
            "the unit file's folder or the bundled protocols",
        )
    else:
        path = Path(name_or_path)
    if path.is_dir():
        raise InputError(source, "protocol", f"{name_or_path!r} is a folder; give a protocol file")
    if not path.is_file():
        raise InputError(source, "protocol", f"protocol file {str(path)!r} not found")
    return load_model(path, Protocol)
