"""Renderers of the sizing results for people (terminal text); no computation."""

from __future__ import annotations

from typing import TYPE_CHECKING

from vascplan.safety import CAUTION, REFERENCE_MARK

if TYPE_CHECKING:
    from vascplan.sizing.assess import SheathFlowAssessment


def render_sheath_flow(result: SheathFlowAssessment) -> str:
    """The terminal view of a :class:`~vascplan.sizing.assess.SheathFlowAssessment`.

    A renderer: it formats the figures the assessment holds and computes nothing.
    """
    limb = result.limb
    th = result.sar_threshold
    advice = result.advice
    if result.sar_at_or_above_threshold:
        sar_note = f"at or above the {th.value:g} limit: {th.short_source}"
    elif advice.governs:
        sar_note = (
            f"under the {th.value:g} limit ({th.short_source}), which does not protect the "
            "leg here: see the cannula advice"
        )
    else:
        sar_note = f"under the {th.value:g} limit: {th.short_source}"
    od_note = {
        "measured": "measured",
        "label": "from the label",
        "wall-allowance": f"assumed {REFERENCE_MARK}",
    }[result.device_od.source]
    open_mm2 = result.open_lumen_mm2
    flow_mark = f" {REFERENCE_MARK}" if limb.defaults_used else ""
    lines = [
        f"Device {result.device_fr:g} Fr ({result.label} label) in a {result.vessel_mm:.2f} mm "
        f"artery over {limb.occupied_cm:g} cm",
        "",
        f"  device outer diameter  {result.device_od.mm:.2f} mm ({od_note})",
        f"  SAR                    {result.sar:.3f}  ({sar_note})",
        f"  lumen left             {limb.lumen_left_mm2:.2f} mm2 = {limb.lumen_left_pct:.1f} % "
        f"of the open {open_mm2:.2f} mm2",
        f"  distal flow            {limb.distal_flow_pct_concentric:.1f} .. "
        f"{limb.distal_flow_pct_eccentric:.1f} % of the resting flow "
        f"({limb.distal_flow_ml_min_concentric:.0f} .. {limb.distal_flow_ml_min_eccentric:.0f} "
        f"of {limb.baseline_flow_ml_min:.0f} mL/min; device centred .. against the wall)"
        f"{flow_mark}",
    ]
    lines.append(f"  perfusion pressure     {limb.perfusion_mmhg:g} mmHg{flow_mark}")
    lines.append(f"  distal perfusion cannula  {advice.headline} [{advice.rule}]")
    lines += [f"    basis: {b}" for b in advice.basis]
    if advice.governs:
        lines.append(f"    which governs: {advice.governs}")
    if result.dpc is not None:
        d = result.dpc
        lines.append(
            f"  perfusion cannula      {d.flow_ml_min:.0f} mL/min (inner {d.inner_mm:.2f} mm, "
            f"{d.velocity_m_s:.2f} m/s, Re {d.reynolds:.0f}, {d.regime})"
            f"{f' {REFERENCE_MARK}' if d.inner_assumed else ''}"
        )
        if d.line_mm is not None:
            lines.append(
                f"    through a line       {d.line_mm:g} mm x {d.line_cm:g} cm "
                f"(Re {d.line_reynolds:.0f})"
            )
        if d.above_typical:
            lines.append(
                "    above the flows usually measured through such a cannula: "
                "an upper estimate (see the assumptions)"
            )
    else:
        lines.append(
            "  perfusion cannula flow not described (give --dpc-fr, --dpc-cm, --driving-mmhg)"
        )
    lines += ["", "Assumptions:"]
    lines += [f"  - {a}" for a in result.assumptions]
    if (
        flow_mark
        or (result.dpc is not None and result.dpc.inner_assumed)
        or (result.device_od.source == "wall-allowance")
    ):
        lines.append(
            f"  {REFERENCE_MARK} rests on reference values, not measurements (see the assumptions)"
        )
    lines += ["", f"Caution: {CAUTION}"]
    return "\n".join(lines)
