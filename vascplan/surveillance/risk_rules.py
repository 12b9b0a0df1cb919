"""The limb-ischaemia risk rule table: factors with weights, and the tier thresholds.

This is NOT a validated score: no validated risk score for limb ischaemia on mechanical
support exists. The rules live in ``data/surveillance/risk_rules.yaml``, each with its
source; this module validates them and combines the factors that apply.

Tests a factor may use (one registry, :data:`TESTS`): ``any``, ``femoral-access``,
``sar-at-limit``, ``sar-at-least``, ``distal-flow-below-floor``, ``pad``, ``diabetes``,
``female``, ``vessel-below-mm``, ``dwell-at-least-h``, ``dpc-in-place``.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from functools import lru_cache
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, ValidationInfo, model_validator

from vascplan.errors import InputError
from vascplan.fileio import did_you_mean, load_model
from vascplan.paths import data_dir
from vascplan.surveillance.protocol import DEVICE_KINDS

Tier = Literal["standard", "raised", "high"]


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
    sar_at_limit: bool = False
    distal_flow_low: bool = False


def _needs(threshold: float | None) -> float:
    assert threshold is not None  # rules that need one are checked at load time
    return threshold


TESTS: dict[str, tuple[bool, Callable[[Facts, float | None], bool]]] = {
    # name -> (needs a threshold, predicate)
    "any": (False, lambda f, t: True),
    "femoral-access": (False, lambda f, t: f.femoral),
    "sar-at-limit": (False, lambda f, t: f.sar_at_limit),
    "sar-at-least": (True, lambda f, t: f.sar is not None and f.sar >= _needs(t)),
    "distal-flow-below-floor": (False, lambda f, t: f.distal_flow_low),
    "pad": (False, lambda f, t: f.pad),
    "diabetes": (False, lambda f, t: f.diabetes),
    "female": (False, lambda f, t: f.sex == "female"),
    "vessel-below-mm": (True, lambda f, t: f.vessel_mm is not None and f.vessel_mm < _needs(t)),
    "dwell-at-least-h": (True, lambda f, t: f.dwell_h >= _needs(t)),
    "dpc-in-place": (False, lambda f, t: f.dpc_in_place),
}


class _Strict(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, str_strip_whitespace=True)


class Factor(_Strict):
    id: str = Field(min_length=1, max_length=60)
    test: str
    devices: list[str] = Field(min_length=1)
    threshold: float | None = None
    weight: float = Field(gt=0, le=100)
    group: str | None = None
    min_tier: Literal["raised", "high"] | None = None
    reason: str = Field(min_length=3)
    source: str = Field(min_length=3)

    def applies(self, facts: Facts) -> bool:
        if "all" not in self.devices and facts.device_kind not in self.devices:
            return False
        return TESTS[self.test][1](facts, self.threshold)


class TierThreshold(_Strict):
    at_least: float = Field(gt=0)
    source: str = Field(min_length=3)


class RiskRules(_Strict):
    """The validated rule table (``data/surveillance/risk_rules.yaml``)."""

    format: Literal["vascplan-risk-rules/2"]
    statement: str = Field(min_length=10)
    combination: str = Field(min_length=10)
    tiers: dict[Literal["raised", "high"], TierThreshold]
    factors: list[Factor] = Field(min_length=1)

    @model_validator(mode="after")
    def _check(self, info: ValidationInfo) -> RiskRules:
        src = (info.context or {}).get("source", "<rules>")
        if set(self.tiers) != {"raised", "high"}:
            raise InputError(src, "tiers", "give both raised and high")
        if not self.tiers["raised"].at_least < self.tiers["high"].at_least:
            raise InputError(src, "tiers.high.at_least", "must be above raised.at_least")
        ids = [f.id for f in self.factors]
        for i, rule in enumerate(self.factors):
            if ids.index(rule.id) != i:
                raise InputError(src, f"factors.{i}.id", f"factor {rule.id!r} is named twice")
            if rule.test not in TESTS:
                raise InputError(
                    src,
                    f"factors.{i}.test",
                    f"unknown test {rule.test!r}{did_you_mean(rule.test, TESTS)}; "
                    f"one of {', '.join(TESTS)}",
                )
            if TESTS[rule.test][0] and rule.threshold is None:
                raise InputError(src, f"factors.{i}.threshold", f"test {rule.test} needs one")
            for j, d in enumerate(rule.devices):
                if d != "all" and d not in DEVICE_KINDS:
                    raise InputError(src, f"factors.{i}.devices.{j}", f"unknown device {d!r}")
        return self

    def tier_for(self, total: float, floor: str | None = None) -> Tier:
        """The tier a combined relative risk gives (the thresholds are unit policy), not
        below ``floor`` (the highest ``min_tier`` of the factors that apply)."""
        order = ("standard", "raised", "high")
        tier = "standard"
        if total >= self.tiers["high"].at_least:
            tier = "high"
        elif total >= self.tiers["raised"].at_least:
            tier = "raised"
        if floor is not None and order.index(floor) > order.index(tier):
            tier = floor
        return tier  # type: ignore[return-value]

    def min_tier(self, factor_ids: list[str]) -> str | None:
        """The highest ``min_tier`` among the given factors, or None."""
        order = ("standard", "raised", "high")
        floors = [f.min_tier for f in self.factors if f.id in factor_ids and f.min_tier]
        return max(floors, key=order.index) if floors else None


@lru_cache(maxsize=4)
def load_rules(path: str | None = None) -> RiskRules:
    """The risk rule table (the bundled one unless ``path`` is given)."""
    return load_model(path or data_dir() / "surveillance" / "risk_rules.yaml", RiskRules)


@dataclass(frozen=True)
class WeightedFactor:
    """One factor that applies: its weight, whether it counts, and why.

    ``counted`` is False for a factor of a group whose larger member already counts.
    """

    id: str
    weight: float
    counted: bool
    reason: str
    source: str
    min_tier: str | None = None

    def to_dict(self) -> dict[str, object]:
        return {
            "id": self.id,
            "weight": self.weight,
            "counted": self.counted,
            "reason": self.reason,
            "source": self.source,
            "min_tier": self.min_tier,
        }


def combine(rules: RiskRules, facts: Facts) -> tuple[list[WeightedFactor], float]:
    """The factors that apply, with their weights, and their product.

    Parameters
    ----------
    rules : RiskRules
    facts : Facts

    Returns
    -------
    (list of WeightedFactor, float)
        Every factor that applies (in the file's order) and the combined relative risk:
        the product of the weights that count (of a group, only the largest).

    Notes
    -----
    Multiplying relative risks treats the factors as independent, and odds ratios as
    relative risks; both are unit policy and are said beside the total. Not a
    validated score.

    References
    ----------
    Alderman JD et al. J Am Coll Cardiol 1987;9(3):524 (relative risks of limb ischaemia
    with balloon pumps). Marbach JA et al. Int J Cardiol 2022 (distal cannula, OR 0.31).
    """
    applying = [f for f in rules.factors if f.applies(facts)]
    best: dict[str, Factor] = {}
    for f in applying:
        if f.group is not None and (f.group not in best or f.weight > best[f.group].weight):
            best[f.group] = f
    out = [
        WeightedFactor(
            f.id, f.weight, f.group is None or best[f.group] is f, f.reason, f.source, f.min_tier
        )
        for f in applying
    ]
    total = math.prod(w.weight for w in out if w.counted)
    return out, total
