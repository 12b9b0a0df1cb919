"""One sheath-flow assessment: SAR, lumen left, distal flow and the perfusion cannula.

This is what ``vascplan sheath-flow`` shows and what the route planner's large-bore
mode reports: the same functions, one result object, one JSON shape.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Literal, cast

from vascplan.safety import CAUTION, REFERENCE_MARK
from vascplan.sizing.advice import CannulaAdvice, cannula_advice
from vascplan.sizing.cannula import CannulaFlow, cannula_flow
from vascplan.sizing.french import OuterDiameter, device_outer_mm, sar
from vascplan.sizing.limb import LimbFlowEstimate, limb_flow_with_device
from vascplan.sizing.tables import SizingValueError, check_range, threshold


@dataclass(frozen=True)
class Threshold:
    """A published threshold beside which a figure is shown."""

    name: str
    value: float
    meaning: str
    source: str
    certainty: str
    short_source: str = ""


@dataclass(frozen=True)
class SheathFlowAssessment:
    """SAR, lumen left, distal flow range and (optionally) the perfusion cannula's flow.

    Attributes
    ----------
    vessel_mm : float
        Minimal lumen diameter of the artery the device occupies [mm].
    device_fr : float
        Device label [Fr].
    label : {"outer", "inner"}
        How the device is labelled.
    device_od : OuterDiameter
        Outer diameter of the device [mm] and its basis.
    sar : float
        Device outer diameter over the vessel lumen [-].
    sar_threshold : Threshold
        The SAR threshold to show beside it.
    limb : LimbFlowEstimate
        Lumen left and distal flow range.
    dpc : CannulaFlow or None
        The distal perfusion cannula's flow, when one was described.
    advice : CannulaAdvice
        Whether a distal perfusion cannula is advised: the rule every output shares.
    assumptions : list of str
        Every assumption, in order.
    """

    vessel_mm: float
    device_fr: float
    label: str
    device_od: OuterDiameter
    sar: float
    sar_threshold: Threshold
    limb: LimbFlowEstimate
    dpc: CannulaFlow | None
    advice: CannulaAdvice
    assumptions: list[str] = field(default_factory=list)

    @property
    def sar_at_or_above_threshold(self) -> bool:
        """True when the SAR reaches the threshold."""
        return self.sar >= self.sar_threshold.value

    @property
    def open_lumen_mm2(self) -> float:
        """Cross-section of the open artery, ``pi d**2 / 4`` [mm2]."""
        return math.pi * self.vessel_mm**2 / 4.0

    def to_json(self) -> dict[str, Any]:
        """The machine contract of ``vascplan sheath-flow --format json``."""

        def r(x: float, nd: int = 4) -> float:
            return round(float(x), nd)

        limb = self.limb
        return {
            "vessel_mm": r(self.vessel_mm),
            "device_fr": r(self.device_fr),
            "label": self.label,
            "device_od_mm": r(self.device_od.mm),
            "device_od_source": self.device_od.source,
            "sar": r(self.sar),
            "sar_threshold": {
                "value": self.sar_threshold.value,
                "source": self.sar_threshold.source,
                "certainty": self.sar_threshold.certainty,
                "reached": self.sar_at_or_above_threshold,
            },
            "occupied_cm": r(limb.occupied_cm),
            "lumen_left_mm2": r(limb.lumen_left_mm2),
            "lumen_left_pct": r(limb.lumen_left_pct, 2),
            "distal_flow_pct": {
                "concentric": r(limb.distal_flow_pct_concentric, 2),
                "eccentric": r(limb.distal_flow_pct_eccentric, 2),
            },
            "distal_flow_ml_min": {
                "concentric": r(limb.distal_flow_ml_min_concentric, 1),
                "eccentric": r(limb.distal_flow_ml_min_eccentric, 1),
                "baseline": r(limb.baseline_flow_ml_min, 1),
            },
            "dpc": None
            if self.dpc is None
            else {
                "flow_ml_min": r(self.dpc.flow_ml_min, 1),
                "reynolds": r(self.dpc.reynolds, 1),
                "regime": self.dpc.regime,
                "inner_mm": r(self.dpc.inner_mm),
                "velocity_m_s": r(self.dpc.velocity_m_s),
                "inner_assumed": self.dpc.inner_assumed,
                "line": None
                if self.dpc.line_mm is None
                else {
                    "inner_mm": self.dpc.line_mm,
                    "length_cm": self.dpc.line_cm,
                    "reynolds": r(cast(float, self.dpc.line_reynolds), 1),
                },
                "above_typical": self.dpc.above_typical,
            },
            "perfusion_mmhg": r(limb.perfusion_mmhg, 1),
            "cannula_advice": self.advice.to_dict(),
            "reference_defaults_used": list(limb.defaults_used),
            "assumptions": list(self.assumptions),
            "caution": CAUTION,
        }


def sar_threshold() -> Threshold:
    """The SFAR threshold of ``data/sizing/thresholds.csv`` (1.05, Hayashida et al. 2011)."""
    value, row = threshold("sfar")
    return Threshold(
        "sfar", value, row["meaning"], row["source"], row["certainty"], row["short_source"]
    )


def assess_sheath_flow(
    vessel_mm: float,
    device_fr: float,
    label: Literal["outer", "inner"],
    occupied_cm: float,
    *,
    outer_mm: float | None = None,
    dpc_fr: float | None = None,
    dpc_cm: float | None = None,
    driving_mmhg: float | None = None,
    dpc_label: Literal["outer", "inner"] = "outer",
    limb_flow_ml_min: float | None = None,
    perfusion_mmhg: float | None = None,
    viscosity_pa_s: float | None = None,
    density_kg_m3: float | None = None,
    line_mm: float | None = None,
    line_cm: float | None = None,
    mean_arterial_mmhg: float | None = None,
    device_kind: str | None = None,
    pad: bool = False,
) -> SheathFlowAssessment:
    """Assess a device in an artery, and the distal perfusion cannula if given.

    Parameters
    ----------
    vessel_mm : float
        Minimal lumen diameter of the occupied stretch [mm].
    device_fr : float
        Device label [Fr].
    label : {"outer", "inner"}
        ``"outer"`` catheter or cannula, ``"inner"`` introducer sheath.
    occupied_cm : float
        Length of artery the device occupies [cm].
    outer_mm : float, optional
        Measured outer diameter of the device [mm].
    dpc_fr, dpc_cm, driving_mmhg : float, optional
        Distal perfusion cannula size [Fr], length [cm] and driving pressure [mmHg];
        all three or none.
    dpc_label : {"outer", "inner"}
        How the cannula is labelled (``"inner"`` for a sheath used as one).
    limb_flow_ml_min, perfusion_mmhg, viscosity_pa_s, density_kg_m3 : float, optional
        Overrides of the limb and blood defaults [mL/min, mmHg, Pa s, kg/m3].
    line_mm, line_cm : float, optional
        Connecting line in series with the cannula: inner diameter [mm], length [cm].
    mean_arterial_mmhg : float, optional
        The patient's mean arterial pressure [mmHg] (perfusion = MAP - venous), used
        unless ``perfusion_mmhg`` is given; default by ``device_kind``.
    device_kind : str, optional
        ``va-ecmo-arterial``, ``microaxial-pump``, ``balloon-pump`` or
        ``large-bore-sheath``: the default MAP and the device rules of the cannula advice.
    pad : bool
        Known peripheral arterial disease (a device rule of the advice).

    Returns
    -------
    SheathFlowAssessment

    Raises
    ------
    SizingValueError
        A value outside its plausible range (``data/sizing/input_ranges.csv``), a
        measured outer diameter not larger than a sheath's inner label, or the cannula
        or its line only partly described; ``field`` names the parameter.
    ValueError
        A cannula with no lumen, or a limb bed that the open artery alone cannot feed.

    Examples
    --------
    >>> a = assess_sheath_flow(6.5, 17, "outer", 15)
    >>> round(a.sar, 3), a.dpc is None
    (0.872, True)
    """
    checks = {
        "vessel_mm": vessel_mm,
        "device_fr": device_fr,
        "occupied_cm": occupied_cm,
        "outer_mm": outer_mm,
        "dpc_fr": dpc_fr,
        "dpc_cm": dpc_cm,
        "driving_mmhg": driving_mmhg,
        "line_mm": line_mm,
        "line_cm": line_cm,
        "limb_flow_ml_min": limb_flow_ml_min,
        "perfusion_mmhg": perfusion_mmhg,
        "map_mmhg": mean_arterial_mmhg,
        "viscosity_mpa_s": None if viscosity_pa_s is None else viscosity_pa_s * 1000.0,
        "density_kg_m3": density_kg_m3,
    }
    for name, value in checks.items():
        if value is not None:
            check_range(name, value)
    dpc_args = {"dpc_fr": dpc_fr, "dpc_cm": dpc_cm, "driving_mmhg": driving_mmhg}
    given = [k for k, v in dpc_args.items() if v is not None]
    if given and len(given) < 3:
        missing = [k for k in dpc_args if k not in given]
        raise SizingValueError(
            missing[0], f"the perfusion cannula needs {', '.join(missing)} as well"
        )
    if (line_mm is None) != (line_cm is None):
        missing_line = "line_cm" if line_cm is None else "line_mm"
        raise SizingValueError(missing_line, "a connecting line needs line_mm and line_cm")
    if line_mm is not None and not given:
        raise SizingValueError(
            "dpc_fr", "a connecting line belongs to a perfusion cannula: give the cannula too"
        )
    label_mm = float(device_fr) / 3.0  # 1 Fr = 1/3 mm (French scale)
    if outer_mm is not None and label == "inner" and outer_mm <= label_mm:
        raise SizingValueError(
            "outer_mm",
            f"outer diameter {outer_mm:g} mm is not larger than the {device_fr:g} Fr "
            f"sheath's inner size {label_mm:.2f} mm (a sheath is labelled by inner size; "
            "use label outer for a catheter or cannula)",
        )
    od = device_outer_mm(device_fr, label, outer_mm)
    ratio = sar(od.mm, vessel_mm)
    assumptions: list[str] = []
    if od.assumption:
        assumptions.append(od.assumption)
    elif od.source == "label":
        assumptions.append(
            f"{device_fr:g} Fr labelled by outer size: outer diameter {od.mm:.2f} mm "
            "(1 Fr = 1/3 mm)."
        )
    else:
        note = f"Outer diameter {od.mm:.2f} mm as measured or given by the maker"
        if label == "outer" and abs(od.mm - label_mm) > 1.0 / 3.0:
            note += (
                f"; it differs from the {device_fr:g} Fr label's {label_mm:.2f} mm by more "
                "than 1 Fr: check the label and the measurement"
            )
        assumptions.append(note + ".")
    th = sar_threshold()
    assumptions.append(
        f"SAR threshold {th.value:g}: {th.meaning} ({th.source}; {th.certainty}); derived "
        "from transfemoral valve implantation, weaker with newer smaller devices (Front "
        "Cardiovasc Med 2021, doi 10.3389/fcvm.2021.738854): a limit for access-site "
        "complications of sheaths taken out at the end of a procedure, not a measure of what a "
        "device left in place leaves for the leg (the distal flow estimate answers that)."
    )
    limb = limb_flow_with_device(
        vessel_mm,
        od.mm,
        occupied_cm,
        limb_flow_ml_min=limb_flow_ml_min,
        perfusion_mmhg=perfusion_mmhg,
        viscosity_pa_s=viscosity_pa_s,
        density_kg_m3=density_kg_m3,
        mean_arterial_mmhg=mean_arterial_mmhg,
        device_kind=device_kind,
    )
    assumptions.extend(limb.assumptions)
    advice = cannula_advice(
        device_kind,
        sar=ratio,
        distal_flow_pct=limb.distal_flow_pct_eccentric,
        sar_limit=th.value,
        sar_limit_source=th.short_source,
        pad=pad,
        flow_note=f" {REFERENCE_MARK}" if limb.defaults_used else "",
        worst_flow_pct=limb.distal_flow_pct_concentric,
    )
    assumptions.append(
        "Cannula advice assumes the device lies in an artery of the leg (CFA, EIA or SFA)."
    )
    dpc = None
    if len(given) == 3:
        dpc = cannula_flow(
            cast(float, dpc_fr),
            cast(float, dpc_cm),
            cast(float, driving_mmhg),
            label=dpc_label,
            viscosity_pa_s=viscosity_pa_s,
            density_kg_m3=density_kg_m3,
            line_mm=line_mm,
            line_cm=line_cm,
        )
        assumptions.extend(a for a in dpc.assumptions if a not in assumptions)
    return SheathFlowAssessment(
        vessel_mm=float(vessel_mm),
        device_fr=float(device_fr),
        label=label,
        device_od=od,
        sar=ratio,
        sar_threshold=th,
        limb=limb,
        dpc=dpc,
        advice=advice,
        assumptions=assumptions,
    )
