"""Large-bore support mode: both iliofemoral axes and both axillary routes compared.

For a sheath or cannula left in place (``procedure.purpose: support``) the question is
not only whether it gets there, but what it leaves for the limb below. For each of the
four axes this reports the SAR on every segment the device occupies, the limiting
segment, the lumen left and the distal-flow estimate (``vascplan.sizing.limb``), and
whether a distal perfusion cannula would be advised (the one shared rule,
``vascplan.sizing.advice``).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from vascplan.nearlimit import format_near_limit
from vascplan.routes.facts import Devices, RouteFacts
from vascplan.routes.limits import Block
from vascplan.routes.pathfind import EPS_CM
from vascplan.routes.sarlimits import MIN_LEG_CM, limits_table, sheath_fits
from vascplan.routes.settings import Setting
from vascplan.routes.vessels import VesselView

SUPPORT_SITES = ("R-CFA", "L-CFA", "R-AXA", "L-AXA")
"""The four axes compared for large-bore support, all retrograde."""

LEG_SEGMENTS = ("CIA", "EIA", "IIA", "CFA", "PFA", "SFA", "POP", "TPT", "ATA", "PTA", "PER",
                "DPA", "PLA")
"""Segment kinds of the leg, for "known peripheral arterial disease" on that side."""

FEMORAL_ACCESS = ("CFA", "EIA", "SFA")
"""Access vessels of the leg (as ``vascplan.surveillance.risk`` expects)."""


def device_kind(view: VesselView, stated: str | None = None) -> tuple[str, str]:
    """The support device's kind for the cannula advice, and the sentence saying why.

    ``procedure.device.kind`` in the case wins. Without it, a device whose tip lies in
    the ascending aorta is taken as a microaxial pump (only a pump goes across the
    aortic valve; common practice), anything else as a large-bore sheath, and the
    output says it was assumed.
    """
    if stated is not None:
        return stated, f"support device kind {stated} (stated in the case file)"
    if view.target_segment == "AO-ASC":
        return "microaxial-pump", ("support device taken as a microaxial pump: its tip lies in "
                                   "the ascending aorta (the case file does not name the kind)")
    return "large-bore-sheath", ("support device taken as a large-bore sheath (the case file "
                                 "does not name the kind)")


def _pad_on_side(view: VesselView, side: str) -> bool:
    for lesions in view.lesions.values():
        for span in lesions:
            kind = span.node.split("-", 1)[-1]
            if span.node.startswith(f"{side}-") and kind in LEG_SEGMENTS:
                return True
    return False


def axis_report(view: VesselView, facts: RouteFacts, blocks: list[Block], devices: Devices,
                limits: dict[str, float], kind: str,
                settings: Mapping[str, Setting] | None = None) -> dict[str, Any]:
    """One axis of the comparison (see the module notes for the keys).

    Each segment is judged against its own SAR limit (limits by site,
    :mod:`vascplan.routes.sarlimits`) on unrounded values; ``sar`` and ``max_sar`` are
    unrounded, ``sar_limit_source`` names the limit's source. ``settings`` is the limits
    table after overrides (sources); without it the bundled one with ``limits`` applied.
    """
    from vascplan.safety import REFERENCE_MARK
    from vascplan.sizing.advice import cannula_advice
    from vascplan.sizing.limb import limb_flow_with_device
    from vascplan.sizing.tables import SizingValueError

    site = facts.site
    od = devices.sheath_od_mm
    segments: list[dict[str, Any]] = []
    legs = [leg for leg in facts.sheath_legs if leg.length_cm >= MIN_LEG_CM]
    table = limits_table(limits, settings)
    for leg, fit in zip(legs, sheath_fits(view, legs, od, table), strict=True):
        segments.append({
            "segment": leg.node,
            "from_cm": round(leg.from_cm, 2),
            "to_cm": round(leg.to_cm, 2),
            "mld_mm": round(fit.mld_mm, 2),
            "mld_source": view.node(leg.node).get("diameter_source"),
            "calcification": fit.calcification,
            "sar": fit.sar,
            "sar_limit": fit.limit.value,
            "sar_limit_label": fit.limit.label,
            "sar_limit_source": fit.limit.cite,
            "over_limit": fit.over,
            "load": fit.load,
        })
    limiting = max(segments, key=lambda s: s["load"], default=None)
    for seg in segments:
        del seg["load"]
    occupied_cm = sum(leg.length_cm for leg in facts.sheath_legs)
    out: dict[str, Any] = {
        "site": site.id,
        "side": site.side,
        "limb": "leg" if site.segment.endswith(("CFA", "EIA", "SFA")) else "arm",
        "feasible": not blocks,
        "blocked_by": [b.to_dict() for b in blocks],
        "device_od_mm": round(od, 2),
        "occupied_cm": round(occupied_cm, 1),
        "segments": segments,
        "limiting_segment": limiting["segment"] if limiting else None,
        "max_sar": limiting["sar"] if limiting else None,
        "max_sar_limit": limiting["sar_limit"] if limiting else None,
        "max_sar_limit_label": limiting["sar_limit_label"] if limiting else None,
        "max_sar_limit_source": limiting["sar_limit_source"] if limiting else None,
        "lumen_left_mm2": None,
        "lumen_left_pct": None,
        "distal_flow_pct": None,
        "flow_assumptions": [],
        "dpc": None,
    }
    if limiting is None or facts.path is None:
        return out
    vessel_mm = float(limiting["mld_mm"])  # the binding segment's MLD (limits by site)
    limiting_sar = None if limiting["sar"] is None else float(limiting["sar"])
    est = None
    if occupied_cm > EPS_CM and vessel_mm > 0:
        try:
            est = limb_flow_with_device(vessel_mm, od, occupied_cm, device_kind=kind,
                                        mean_arterial_mmhg=view.case.patient.map_mmhg)
        except SizingValueError as exc:
            # Outside the flow model's range (e.g. a long stretch too narrow to carry the
            # resting flow at all): no estimate, and the reason is shown.
            out["flow_assumptions"] = [f"distal flow not estimated: {exc}"]
            est = None
        if est is not None:
            out["lumen_left_mm2"] = round(est.lumen_left_mm2, 1)
            out["lumen_left_pct"] = round(est.lumen_left_pct, 1)
            out["distal_flow_pct"] = {"concentric": round(est.distal_flow_pct_concentric, 1),
                                      "eccentric": round(est.distal_flow_pct_eccentric, 1)}
            out["flow_assumptions"] = list(est.assumptions)
        if est is not None and out["limb"] == "arm":
            out["flow_assumptions"].append(
                "the limb model's resting flow and bed are the leg's; for the arm the "
                "percentages show the narrowing only (common practice)")
    access = site.segment.split("-", 1)[-1]
    vessel = access if access in FEMORAL_ACCESS else "AXA"
    advice = cannula_advice(
        kind, sar=od / vessel_mm if vessel_mm > 0 else None,
        distal_flow_pct=None if est is None else est.distal_flow_pct_eccentric,
        sar_limit=float(limiting["sar_limit"]),
        sar_limit_source=f"the plan's SAR limit for the {limiting['segment']}",
        access_vessel=vessel, pad=_pad_on_side(view, site.side),
        flow_note=f" {REFERENCE_MARK}" if est is not None and est.defaults_used else "",
        worst_flow_pct=None if est is None else est.distal_flow_pct_concentric)
    out["dpc"] = advice.to_dict()
    if out["limb"] == "arm" and out["lumen_left_pct"] is not None:
        out["arm_note"] = (
            f"no leg cannula helps the arm: with {out['lumen_left_pct']:.0f}% of the "
            f"{limiting['segment']} lumen left beside the device, check the hand's perfusion; "
            "for an axillary cannula a side graft sewn to the artery keeps the arm perfused "
            "(common practice)")
    if out["feasible"] and out["lumen_left_pct"] == 0 and limiting_sar is not None:
        out["lumen_note"] = (
            f"the device fills the {limiting['segment']} lumen (SAR "
            f"{format_near_limit(limiting_sar, limiting['sar_limit'])}): no "
            f"flow passes it to the {out['limb']}, which then depends on collaterals and a "
            "distal perfusion route; the SAR limit it meets comes from sheaths taken out at the "
            f"end of a procedure ({limiting['sar_limit_source']}), not from devices left in place")
    return out


def support_block(view: VesselView, axes: list[tuple[RouteFacts, list[Block]]],
                  devices: Devices, limits: dict[str, float],
                  settings: Mapping[str, Setting] | None = None) -> dict[str, Any]:
    """The ``support`` block of the plan: every axis, and the best feasible one.

    Parameters
    ----------
    view : VesselView
    axes : list of (RouteFacts, list of Block)
        The best path of each support site, with its broken limits.
    devices : Devices
    limits : dict of str to float
        The limits' values after overrides.
    settings : mapping of str to Setting, optional
        The limits table after overrides (SAR limits by site, their sources).

    Returns
    -------
    dict
        ``{"device_kind", "device_kind_basis", "device_od_mm", "axes": [...],
        "best_site"}``; ``best_site`` is the feasible axis with the lowest SAR.
    """
    kind, why = device_kind(view, devices.device_kind)
    reports = [axis_report(view, f, b, devices, limits, kind, settings) for f, b in axes]
    feasible = [r for r in reports if r["feasible"] and r["max_sar"] is not None]
    best = min(feasible, key=lambda r: r["max_sar"])["site"] if feasible else None
    return {"device_kind": kind, "device_kind_basis": why,
            "device_od_mm": round(devices.sheath_od_mm, 2),
            "axes": reports, "best_site": best}
