"""Renderers of the sizing results for people (terminal text); no computation."""

from __future__ import annotations

from typing import TYPE_CHECKING

from vascplan.safety import CAUTION, REFERENCE_MARK
from vascplan.texttable import Column, table_lines

if TYPE_CHECKING:
    from vascplan.sizing.assess import SheathFlowAssessment

VALUE_FOLD = 76
"""Terminal columns of a figure's description before it folds (layout only)."""


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
    rows: list[tuple[str, str]] = [
        ("device outer diameter", f"{result.device_od.mm:.2f} mm ({od_note})"),
        ("SAR", f"{result.sar:.3f}  ({sar_note})"),
        (
            "lumen left",
            f"{limb.lumen_left_mm2:.2f} mm2 = {limb.lumen_left_pct:.1f} % "
            f"of the open {open_mm2:.2f} mm2",
        ),
        (
            "distal flow",
            f"{limb.distal_flow_pct_concentric:.1f} .. "
            f"{limb.distal_flow_pct_eccentric:.1f} % of the resting flow "
            f"({limb.distal_flow_ml_min_concentric:.0f} .. "
            f"{limb.distal_flow_ml_min_eccentric:.0f} of {limb.baseline_flow_ml_min:.0f} mL/min; "
            f"device centred .. against the wall){flow_mark}",
        ),
        ("perfusion pressure", f"{limb.perfusion_mmhg:g} mmHg{flow_mark}"),
        ("distal perfusion cannula", f"{advice.headline} [{advice.rule}]"),
    ]
    rows += [("", f"basis: {b}") for b in advice.basis]
    if advice.governs:
        rows.append(("", f"which governs: {advice.governs}"))
    if result.dpc is not None:
        d = result.dpc
        rows.append(
            (
                "perfusion cannula",
                f"{d.flow_ml_min:.0f} mL/min (inner {d.inner_mm:.2f} mm, "
                f"{d.velocity_m_s:.2f} m/s, Re {d.reynolds:.0f}, {d.regime})"
                f"{f' {REFERENCE_MARK}' if d.inner_assumed else ''}",
            )
        )
        if d.line_mm is not None:
            rows.append(
                (
                    "",
                    f"through a line {d.line_mm:g} mm x {d.line_cm:g} cm "
                    f"(Re {d.line_reynolds:.0f})",
                )
            )
        if d.above_typical:
            rows.append(
                (
                    "",
                    "above the flows usually measured through such a cannula: "
                    "an upper estimate (see the assumptions)",
                )
            )
    else:
        rows.append(
            (
                "perfusion cannula",
                "flow not described (give --dpc-fr, --dpc-cm, --driving-mmhg)",
            )
        )
    lines = [
        f"Device {result.device_fr:g} Fr ({result.label} label) in a {result.vessel_mm:.2f} mm "
        f"artery over {limb.occupied_cm:g} cm",
        "",
    ]
    lines += table_lines(
        [Column("what"), Column("value", fold=VALUE_FOLD)], rows, indent="  ", header=False
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
