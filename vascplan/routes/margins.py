"""Margins of a route against each constraint (issue 12), in the constraint's unit.

Positive: room left; negative: short (or over) by that much. None: not checked for this
route (no path, a crossing access for the device's constraints, no inner label).
"""

from __future__ import annotations

from typing import Any

from vascplan.routes.facts import RouteFacts
from vascplan.routes.limits import LimitContext


def _r(value: float | None, digits: int = 2) -> float | None:
    return None if value is None else round(value, digits)


def route_margins(facts: RouteFacts, ctx: LimitContext) -> dict[str, Any]:
    """``{"sar", "shaft_cm", "working_room_cm", "device_in_sheath_mm"}``.

    - ``sar``: the binding segment's SAR limit less its SAR [-];
    - ``shaft_cm``: device working length less (path + ``outside_body_cm``) [cm];
    - ``working_room_cm``: room the sheath tip leaves before the target lesion less
      ``working_room_cm`` [cm] (treatment with a sheath only);
    - ``device_in_sheath_mm``: sheath inner diameter less device profile [mm].
    """
    d = ctx.devices
    out: dict[str, Any] = {"sar": None, "shaft_cm": None, "working_room_cm": None,
                           "device_in_sheath_mm": None}
    if facts.path is None:
        return out
    if facts.sar is not None and facts.sar_limit is not None:
        out["sar"] = _r(facts.sar_limit.value - facts.sar, 3)
    therapeutic = facts.role == "therapeutic"
    if therapeutic and facts.length_cm is not None and d.working_length_cm is not None:
        out["shaft_cm"] = _r(d.working_length_cm - facts.length_cm
                             - ctx.limits["outside_body_cm"], 1)
    procedure = ctx.view.case.procedure
    treating = procedure is None or procedure.purpose == "treat"
    if treating and facts.to_lesion_cm is not None and not d.sheathless and facts.inside_cm > 0:
        out["working_room_cm"] = _r(facts.to_lesion_cm - facts.inside_cm
                                    - ctx.limits["working_room_cm"], 1)
    inner = d.sheath_inner_mm
    if therapeutic and inner is not None and d.device_od_mm is not None:
        out["device_in_sheath_mm"] = _r(inner - d.device_od_mm, 2)
    return out
