"""The patient's body in the route planner (issue 12): body mass index and what it changes.

Body mass index (Quetelet): weight [kg] / height [m]^2. At ``obesity_bmi`` or more
(``limits.yaml``) the groin is deeper (``obese_groin_extra_cm`` added to the femoral
skin-to-artery allowance) and the femoral sites score ``obesity_femoral``; at
``severe_obesity_bmi`` or more the femoral-first ordering rule no longer holds, so the
radial competes on its score (Hibbert B et al., JACC Cardiovasc Interv 2012;5(8):819-826).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace
from typing import Any

from vascplan.refdata.sites import AccessSite

FEMORAL_KINDS = ("CFA", "SFA")
"""Segment kinds of the groin and thigh punctures whose depth and risk obesity changes."""


def body_mass_index(patient: Any) -> float | None:
    """Weight / height^2 [kg/m^2]; None without a weight.

    >>> from types import SimpleNamespace
    >>> round(body_mass_index(SimpleNamespace(weight_kg=81.0, height_cm=180.0)), 2)
    25.0
    """
    weight = getattr(patient, "weight_kg", None)
    if weight is None:
        return None
    metres = float(patient.height_cm) / 100.0
    return float(weight) / (metres * metres)


def is_femoral(site: AccessSite) -> bool:
    """True for a common femoral or mid-thigh puncture."""
    return site.segment.partition("-")[2] in FEMORAL_KINDS


def site_for_body(site: AccessSite, bmi: float | None,
                  limits: Mapping[str, float]) -> AccessSite:
    """The site with its skin allowance for this body: deeper groin at ``obesity_bmi``."""
    if bmi is None or not is_femoral(site) or bmi < limits["obesity_bmi"]:
        return site
    return replace(site, skin_depth_cm=site.skin_depth_cm + limits["obese_groin_extra_cm"])


def femoral_first_lifted(bmi: float | None, limits: Mapping[str, float]) -> bool:
    """True when the femoral-first ordering rule no longer holds (``severe_obesity_bmi``)."""
    return bmi is not None and bmi >= limits["severe_obesity_bmi"]
