"""Distal perfusion cannula advice: ONE rule, from the tool's own figures.

Every output that advises on a distal perfusion cannula (``sheath-flow``, the support
block of ``plan`` and the case report, ``risk`` and the checklist) calls
:func:`cannula_advice`, so they cannot disagree. The rule and its thresholds live in
``data/sizing/cannula_advice.yaml``, each with its source:

- ``distal-flow-floor``: the estimated distal flow in the best case (device lying against
  the wall) is below the floor, a percentage of the resting limb flow;
- ``sar-limit``: the SAR is at or above its limit;
- a device rule that advises (femoral VA-ECMO, known PAD with other large devices).

When none fires, the first matching device rule that does not advise gives the basis, and
the basis shows the figures that cleared the floor and the limit, so a "not advised" line
never stands beside figures saying the leg has almost no flow. Where the SAR and the flow
estimate disagree, the advice says which governs and why.

This module belongs to the sizing package and imports nothing from surveillance.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import lru_cache
from typing import Any, Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationInfo, model_validator

from vascplan.errors import InputError
from vascplan.fileio import did_you_mean, load_model
from vascplan.paths import data_dir

DEVICE_KINDS = ("va-ecmo-arterial", "microaxial-pump", "balloon-pump", "large-bore-sheath")
"""Kinds of device left in an artery (the same list as the unit file and the case file)."""

LEG_VESSELS = ("CFA", "EIA", "SFA")
"""Access vessels of the leg: a device there can starve the leg below it (common practice)."""

DEVICE_TESTS = ("always", "pad")
"""Tests a device rule may use."""


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, str_strip_whitespace=True)


class SourcedValue(_Strict):
    value: float = Field(gt=0)
    unit: str = Field(min_length=1)
    source: str = Field(min_length=3)
    certainty: str = Field(min_length=3)

    def cite(self) -> str:
        return f"{self.source} ({self.certainty})"


class DeviceRule(_Strict):
    id: str = Field(min_length=1, max_length=60)
    test: str
    devices: list[str] = Field(min_length=1)
    advise: bool
    basis: str = Field(min_length=3)
    when_advised: str | None = None

    def applies(self, device_kind: str | None, pad: bool) -> bool:
        if "all" not in self.devices and device_kind not in self.devices:
            return False
        return self.test == "always" or (self.test == "pad" and pad)


class AdviceRules(_Strict):
    """The validated rule file (``data/sizing/cannula_advice.yaml``)."""

    format: Literal["vascplan-cannula-advice/1"]
    distal_flow_floor: SourcedValue
    sar_versus_flow: str = Field(min_length=10)
    flow_versus_sar: str = Field(min_length=10)
    device_rules: list[DeviceRule] = Field(min_length=1)

    @model_validator(mode="after")
    def _check(self, info: ValidationInfo) -> AdviceRules:
        src = (info.context or {}).get("source", "<cannula advice>")
        for i, rule in enumerate(self.device_rules):
            if rule.test not in DEVICE_TESTS:
                raise InputError(
                    src,
                    f"device_rules.{i}.test",
                    f"unknown test {rule.test!r}{did_you_mean(rule.test, DEVICE_TESTS)}; "
                    f"one of {', '.join(DEVICE_TESTS)}",
                )
            for j, d in enumerate(rule.devices):
                if d != "all" and d not in DEVICE_KINDS:
                    raise InputError(
                        src,
                        f"device_rules.{i}.devices.{j}",
                        f"unknown device {d!r}{did_you_mean(d, DEVICE_KINDS)}; "
                        f"all or one of {', '.join(DEVICE_KINDS)}",
                    )
        if not any(
            r.test == "always" and "all" in r.devices and not r.advise for r in self.device_rules
        ):
            raise InputError(
                src,
                "device_rules",
                "needs a last rule 'test: always, devices: [all]' that "
                "does not advise, so every device has a basis",
            )
        return self


@lru_cache(maxsize=4)
def load_advice_rules(path: str | None = None) -> AdviceRules:
    """The cannula advice rules (the bundled file unless ``path`` is given)."""
    return load_model(path or data_dir() / "sizing" / "cannula_advice.yaml", AdviceRules)


@dataclass(frozen=True)
class CannulaAdvice:
    """Whether a distal perfusion cannula is advised, which rule decided, and why.

    Attributes
    ----------
    advised : bool
        True when a cannula is advised (False when one is in place or it does not apply).
    applies : bool
        False for a device in an arm artery or when a cannula is already in place.
    rule : str
        The rule that decided: ``distal-flow-floor``, ``sar-limit``, a device rule's id,
        ``in-place``, ``not-the-leg`` or ``device-removed``.
    fired : tuple of str
        Every rule that advises a cannula (empty when none does).
    basis : list of str
        The basis lines, the deciding rule first, each with its figures and sources.
    governs : str or None
        Where the SAR and the flow estimate disagree: which governs and why.
    distal_flow_pct : float or None
        Best-case distal flow used [% of resting flow]; None when not estimated.
    floor_pct : float
        The floor it was held against [% of resting flow].
    """

    advised: bool
    applies: bool
    rule: str
    fired: tuple[str, ...] = ()
    basis: list[str] = field(default_factory=list)
    governs: str | None = None
    distal_flow_pct: float | None = None
    floor_pct: float = 0.0
    summary: str = ""

    @property
    def headline(self) -> str:
        """``ADVISED``, ``not advised``, ``in place`` or ``does not apply`` (for tables)."""
        if self.rule == "in-place":
            return "in place"
        if not self.applies:
            return "does not apply"
        return "ADVISED" if self.advised else "not advised"

    def short(self) -> str:
        """The headline, the deciding rule and the figures, without the citations."""
        return f"{self.headline} [{self.rule}]" + (f": {self.summary}" if self.summary else "")

    def text(self) -> str:
        """One line for a report: the headline, the deciding rule and the basis."""
        lines = "; ".join(self.basis)
        gov = f" Which governs: {self.governs}." if self.governs else ""
        return f"{self.headline} [{self.rule}]: {lines}.{gov}"

    def to_dict(self) -> dict[str, Any]:
        """The JSON shape shared by ``sheath-flow``, ``plan`` and ``risk``."""
        return {
            "advised": self.advised,
            "applies": self.applies,
            "rule": self.rule,
            "fired": list(self.fired),
            "basis": list(self.basis),
            "governs": self.governs,
            "distal_flow_pct": None
            if self.distal_flow_pct is None
            else round(self.distal_flow_pct, 2),
            "floor_pct": self.floor_pct,
            "summary": self.summary,
        }


def not_applicable(rule: str, basis: str, *, advised: bool = False) -> CannulaAdvice:
    """An advice that does not come from the figures (device removed, and the like)."""
    floor = load_advice_rules().distal_flow_floor.value
    return CannulaAdvice(advised, False, rule, (), [basis], None, None, floor, basis)


def cannula_advice(
    device_kind: str | None,
    *,
    sar: float | None,
    distal_flow_pct: float | None,
    sar_limit: float,
    sar_limit_source: str,
    access_vessel: str = "CFA",
    pad: bool = False,
    dpc_in_place: bool = False,
    flow_note: str = "",
    worst_flow_pct: float | None = None,
    rules: AdviceRules | None = None,
) -> CannulaAdvice:
    """Whether a distal perfusion cannula is advised, from the tool's own figures.

    Parameters
    ----------
    device_kind : str or None
        ``va-ecmo-arterial``, ``microaxial-pump``, ``balloon-pump``,
        ``large-bore-sheath``; None when not known (the device rules are then skipped,
        and the basis says so).
    sar : float or None
        Device outer diameter over the lumen [-] (unrounded); None when unknown.
    distal_flow_pct : float or None
        Estimated distal flow, best case (device against the wall) [% of resting flow];
        None when it could not be estimated.
    sar_limit : float
        The SAR limit that applies [-] and ``sar_limit_source`` its short source.
    sar_limit_source : str
        Short source of the SAR limit, printed beside it.
    access_vessel : str
        The artery the device sits in; the leg's cannula applies to CFA, EIA, SFA only.
    pad : bool
        Known peripheral arterial disease (on that side).
    dpc_in_place : bool
        A distal perfusion cannula is already in.
    flow_note : str
        Appended to the flow figure (e.g. ``" *"`` when it rests on reference values).
    worst_flow_pct : float, optional
        The worst case (device centred) [% of resting flow]; when it falls under the floor
        but the best case does not, a not-advised basis says so.
    rules : AdviceRules, optional
        The rule file; the bundled one by default.

    Returns
    -------
    CannulaAdvice

    Raises
    ------
    ValueError
        An unknown device kind.

    Notes
    -----
    The rule is ``advise = flow < floor or sar >= limit or (a device rule advises)``,
    comparing unrounded figures. The floor and the device rules, with their sources, are
    in ``data/sizing/cannula_advice.yaml`` (floor: Klein et al., J Vasc Surg 2003,
    popliteal 61.9 of CFA 353 mL/min, used as a floor by unit policy).

    References
    ----------
    Klein WM et al. J Vasc Surg 2003;38:1060. Hayashida K et al. JACC Cardiovasc
    Interv 2011;4:851. Marbach JA et al. Int J Cardiol 2022.

    Examples
    --------
    >>> a = cannula_advice("microaxial-pump", sar=0.97, distal_flow_pct=0.7,
    ...                    sar_limit=1.05, sar_limit_source="Hayashida et al. 2011")
    >>> a.advised, a.rule
    (True, 'distal-flow-floor')
    >>> cannula_advice("balloon-pump", sar=0.26, distal_flow_pct=99.9, sar_limit=1.05,
    ...                sar_limit_source="Hayashida et al. 2011").advised
    False
    """
    if device_kind is not None and device_kind not in DEVICE_KINDS:
        raise ValueError(
            f"unknown device kind {device_kind!r}{did_you_mean(device_kind, DEVICE_KINDS)}; "
            f"one of {', '.join(DEVICE_KINDS)}"
        )
    rules = rules or load_advice_rules()
    floor = rules.distal_flow_floor
    if dpc_in_place:
        return CannulaAdvice(
            False,
            False,
            "in-place",
            (),
            [
                "a distal perfusion cannula is already in place: check its connection and flow "
                "at every check"
            ],
            None,
            distal_flow_pct,
            floor.value,
            "check its connection and flow at every check",
        )
    if access_vessel not in LEG_VESSELS:
        return CannulaAdvice(
            False,
            False,
            "not-the-leg",
            (),
            [
                f"access from the {access_vessel}, not the leg: a distal perfusion cannula of the "
                "leg does not apply; check the hand's perfusion, and for an axillary cannula a "
                "side graft sewn to the artery keeps the arm perfused (common practice)"
            ],
            None,
            distal_flow_pct,
            floor.value,
            f"device in the {access_vessel}: check the hand's perfusion",
        )
    flow_low = distal_flow_pct is not None and distal_flow_pct < floor.value
    sar_high = sar is not None and sar >= sar_limit
    flow_text = (
        "distal flow not estimated"
        if distal_flow_pct is None
        else f"best-case distal flow {distal_flow_pct:.1f} %{flow_note} of the resting flow "
        f"(device against the wall)"
    )
    sar_text = "SAR unknown" if sar is None else f"SAR {sar:.3f}"
    fired: list[str] = []
    basis: list[str] = []
    if flow_low:
        fired.append("distal-flow-floor")
        basis.append(
            f"[distal-flow-floor] {flow_text} is under the floor of {floor.value:g} % "
            f"({floor.cite()})"
        )
    if sar_high:
        fired.append("sar-limit")
        basis.append(
            f"[sar-limit] {sar_text} is at or above the limit {sar_limit:g} "
            f"({sar_limit_source}): the device is at least as wide as the limit allows for "
            "this lumen"
        )
    matching = [r for r in rules.device_rules if r.applies(device_kind, pad)]
    for r in matching:
        if r.advise:
            fired.append(r.id)
            basis.append(f"[{r.id}] {r.basis}")
    flow_short = (
        "flow not estimated"
        if distal_flow_pct is None
        else f"best-case distal flow {distal_flow_pct:.1f} %{flow_note} "
        f"{'under' if flow_low else 'at or above'} the {floor.value:g} % floor"
    )
    sar_short = (
        "SAR unknown"
        if sar is None
        else f"SAR {sar:.3f} {'at or above' if sar_high else 'under'} the {sar_limit:g} limit"
    )
    summary = f"{flow_short}; {sar_short}"
    governs = None
    if flow_low and not sar_high and sar is not None:
        governs = f"{sar_text} is under its limit {sar_limit:g}, yet {rules.sar_versus_flow}"
    elif sar_high and distal_flow_pct is not None and not flow_low:
        governs = f"{flow_text} clears the {floor.value:g} % floor, yet {rules.flow_versus_sar}"
    if fired:
        not_advising = next((r for r in matching if not r.advise), None)
        if not_advising is not None and not_advising.when_advised and (flow_low or sar_high):
            basis.append(f"[{not_advising.id}] {not_advising.when_advised}")
        if device_kind is None:
            basis.append("device kind not given: the device-kind rules were not applied")
        basis.append(f"figures: {summary}")
        return CannulaAdvice(
            True,
            True,
            fired[0],
            tuple(fired),
            basis,
            governs,
            distal_flow_pct,
            floor.value,
            summary + (f"; {', '.join(fired)}" if len(fired) > 1 else ""),
        )
    decider = next(r for r in matching if not r.advise)
    figures = (
        f"the figures clear both rules: {flow_text}, at or above the floor of "
        f"{floor.value:g} % ({floor.certainty}); {sar_text}, under the limit {sar_limit:g} "
        f"({sar_limit_source})"
        if distal_flow_pct is not None and sar is not None
        else f"{flow_text}; {sar_text}: the figure rules could not be checked in full, "
        "so judge the leg at the bedside"
    )
    basis = [f"[{decider.id}] {decider.basis}", figures]
    if worst_flow_pct is not None and worst_flow_pct < floor.value:
        basis.append(
            f"but with the device centred the estimate is {worst_flow_pct:.1f} %{flow_note}, "
            f"under the floor: the truth lies between, so watch the leg closely and reconsider "
            "at the first change (unit policy)"
        )
    if device_kind is None:
        basis.append("device kind not given: the device-kind rules were not applied")
    return CannulaAdvice(
        False, True, decider.id, (), basis, None, distal_flow_pct, floor.value, summary
    )
