"""The measured facts of one candidate route, computed once and shared by limits and scoring."""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

from vascplan.refdata.sites import AccessSite
from vascplan.routes.pathfind import CatheterPath, Leg
from vascplan.routes.sarlimits import LimitUsed, SegmentFit
from vascplan.routes.vessels import VesselView


@dataclass
class Devices:
    """The devices of the procedure, with outer diameters resolved.

    Attributes
    ----------
    sheath_fr : float
        Sheath label [Fr].
    sheath_length_cm : float
        Sheath length [cm], skin inwards.
    sheath_od_mm : float
        Sheath outer diameter [mm].
    sheath_od_assumed : str or None
        The sentence saying how the outer diameter was estimated, None when measured.
    device_od_mm : float or None
        Device profile [mm] (labelled by outer size), None when the case has no device.
    working_length_cm : float or None
        Device working length [cm].
    device_kind : str or None
        Support device kind as stated in the case (``procedure.device.kind``).
    """

    sheath_fr: float
    sheath_length_cm: float
    sheath_od_mm: float
    sheath_od_assumed: str | None
    device_fr: float | None
    device_od_mm: float | None
    working_length_cm: float | None
    device_kind: str | None = None
    sheath_label: str = "inner"
    sheathless: bool = False

    @property
    def sheath_inner_mm(self) -> float | None:
        """Inner diameter of a sheath labelled by inner size: French / 3 [mm] (ISO 11070
        labels introducer sheaths by inner size); None for an outer label or sheathless."""
        from vascplan.sizing.french import MM_PER_FR

        if self.sheathless or self.sheath_label != "inner":
            return None
        return self.sheath_fr * MM_PER_FR


@dataclass
class RouteFacts:
    """One site, one direction, one path (or none), and what lies along it.

    Attributes
    ----------
    site : AccessSite
    direction : str
    path : CatheterPath or None
        None when the target cannot be reached from this site this way.
    puncture_cm : float
        Puncture point [cm from the punctured segment's origin].
    length_cm : float or None
        Skin entry to target point [cm]: skin depth plus the path in the vessels.
    sheath_legs, beyond_legs : list of Leg
        The stretch the sheath occupies, and from its tip to the target.
    min_lumen : (mm, node) or None
        MLD of the binding segment of the sheath's stretch: the smallest MLD until the
        SAR limits by site are applied (:func:`vascplan.routes.limits.bind_sar`), then
        the MLD of the segment whose SAR is nearest (or furthest over) its own limit.
    approach : str
        ``proximal-cap``, ``distal-cap`` or ``none``.
    sar : float or None
        Sheath outer diameter over ``min_lumen`` [-], unrounded.
    fits : list of SegmentFit
        The sheath in each segment it occupies, with that segment's SAR limit.
    sar_limit : LimitUsed or None
        The limit of the binding segment.
    crossover_dropped : bool
        True when the only paths found went up-and-over from a site that does not
        allow it (``sites.csv`` column ``crossover``), so the route is unreachable.
    """

    site: AccessSite
    direction: str
    path: CatheterPath | None
    puncture_cm: float
    length_cm: float | None = None
    sheath_legs: list[Leg] = field(default_factory=list)
    beyond_legs: list[Leg] = field(default_factory=list)
    min_lumen: tuple[float, str] | None = None
    approach: str = "none"
    sar: float | None = None
    crossover_dropped: bool = False
    fits: list[SegmentFit] = field(default_factory=list)
    sar_limit: LimitUsed | None = None
    role: str = "therapeutic"
    to_lesion_cm: float | None = None
    inside_cm: float = 0.0


def route_facts(view: VesselView, site: AccessSite, direction: str,
                path: CatheterPath | None, devices: Devices) -> RouteFacts:
    """Measure a candidate route.

    Parameters
    ----------
    view : VesselView
    site : AccessSite
    direction : {"retrograde", "antegrade"}
    path : CatheterPath or None
    devices : Devices

    Returns
    -------
    RouteFacts
    """
    puncture_cm = site.puncture_cm(view.length_cm(site.segment))
    facts = RouteFacts(site, direction, path, puncture_cm)
    if path is None:
        return facts
    facts.length_cm = site.skin_depth_cm + path.vessel_cm
    inside_cm = max(0.0, devices.sheath_length_cm - site.skin_depth_cm)
    facts.inside_cm = inside_cm
    facts.to_lesion_cm = _distance_to_target_lesion(view, path)
    reach_cm = min(inside_cm, facts.to_lesion_cm)
    facts.sheath_legs = path.portion(0.0, reach_cm)
    facts.beyond_legs = path.portion(reach_cm, path.vessel_cm) if reach_cm < path.vessel_cm else []
    facts.min_lumen = view.lumen_over(facts.sheath_legs)
    if facts.min_lumen is None:
        facts.min_lumen = (view.mld_mm(site.segment, puncture_cm, puncture_cm), site.segment)
    if facts.min_lumen[0] > 0:  # an occlusion (MLD 0) is reported as occlusion-en-route
        facts.sar = devices.sheath_od_mm / facts.min_lumen[0]
    facts.approach = approach_of(view, path)
    return facts


def approach_of(view: VesselView, path: CatheterPath | None) -> str:
    """``proximal-cap`` or ``distal-cap`` for an occlusion target (the way the last leg
    runs), else ``none``."""
    if path is None or not view.target_is_occlusion:
        return "none"
    last = path.legs[-1]
    return "proximal-cap" if last.to_cm >= last.from_cm else "distal-cap"


def _distance_to_target_lesion(view: VesselView, path: CatheterPath) -> float:
    """Distance along the path to where it first enters the target lesion [cm].

    The sheath stops short of the target lesion (crossing it is the procedure, done
    with the device); a lesion running across segments is entered at its first piece
    met along the path. Without a target lesion, the target point itself.
    """
    if view.target_lesion is None:
        return path.vessel_cm
    pieces = view.target_pieces()
    run = 0.0
    for leg in path.legs:
        hits = [p for p in pieces if p.node == leg.node and p.overlaps(leg.lo_cm, leg.hi_cm)]
        if hits:
            if leg.to_cm >= leg.from_cm:
                entry = max(leg.from_cm, min(p.start_cm for p in hits))
                return max(0.0, run + entry - leg.from_cm)
            entry = min(leg.from_cm, max(p.end_cm for p in hits))
            return max(0.0, run + leg.from_cm - entry)
        run += leg.length_cm
    return path.vessel_cm


def resolve_devices(case: Any) -> Devices:
    """Outer diameters of the case's sheath and device (``vascplan.sizing.french``).

    Sheaths are labelled by inner size unless the case says ``label: outer`` (a
    cannula), devices by outer size (ISO 11070:2014 7.2 via a summary, seen); a given
    ``outer_mm`` wins.
    """
    from vascplan.sizing.french import device_outer_mm

    sheath = case.procedure.sheath
    od = device_outer_mm(sheath.size_fr, sheath.label, sheath.outer_mm)
    device = case.procedure.device
    device_od = device_outer_mm(device.profile_fr, "outer").mm if device is not None else None
    return Devices(
        sheath_fr=float(sheath.size_fr),
        sheath_length_cm=float(sheath.length_cm),
        sheath_od_mm=float(od.mm),
        sheath_od_assumed=od.assumption if od.source != "measured" else None,
        device_fr=float(device.profile_fr) if device is not None else None,
        device_od_mm=device_od,
        working_length_cm=float(device.working_length_cm) if device is not None else None,
        device_kind=device.kind if device is not None else None,
        sheath_label=sheath.label,
    )
