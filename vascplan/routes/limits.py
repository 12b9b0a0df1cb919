"""The hard limits: a route that breaks one is kept, marked not feasible, with its reasons.

One registry, :data:`CHECKS`: each check takes the route's facts and returns the
:class:`Block` entries it finds (one per broken limit, naming the segment where). The
numbers come from ``data/access/limits.yaml`` (each with its source), overridable.

Reason codes (the JSON contract, ``blocked_by[].code``):

======================  =============================================================
``unmeasured``          large-bore device (``large_bore_fr`` outer or more) whose fit
                        rests on a reference diameter (fails the SAR limit at mean -
                        2 SD of the segment's reference)
``sheath-too-large``    SAR in a segment the sheath occupies at or above that
                        segment's limit (limits by site)
``device-too-large``    device profile wider than the vessel beyond the sheath tip
``too-short``           path length plus the outside allowance exceeds the working length
``occlusion-en-route``  an occlusion other than the target lies on the path
``site-avoided``        the site is listed in the case's ``avoid``
``site-diseased``       stenosis, occlusion or stent in the puncture zone
``no-crossover``        the bifurcation is stented or grafted: no up-and-over
``unreachable``         no path from this site in this direction reaches the target
``tried-before``        this access was tried before and failed (``access_tried``)
``sheath-too-long``     the sheath reaches the target lesion or leaves less working
                        room than ``working_room_cm``; the detail gives the longest
                        sheath that would do
``device-exceeds-sheath`` device profile larger than the sheath's inner diameter
``graft-anastomosis``   a graft anastomosis within the puncture zone
======================  =============================================================
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

from vascplan.nearlimit import format_limit, format_near_limit
from vascplan.routes.facts import Devices, RouteFacts
from vascplan.routes.sarlimits import (
    LimitUsed,
    binding,
    fit_on,
    limits_table,
    needed_mld_mm,
    sheath_fits,
)
from vascplan.routes.settings import Setting
from vascplan.routes.vessels import VesselView

REASON_CODES: dict[str, str] = {
    "unmeasured": "a large-bore device's fit rests on a reference diameter (it would fail "
                  "the SAR limit at the reference mean - 2 SD)",
    "sheath-too-large": "sheath-to-artery ratio in a segment the sheath occupies at or above "
                        "that segment's limit",
    "device-too-large": "device profile wider than the vessel beyond the sheath tip",
    "too-short": "path length plus the allowance outside the body exceeds the working length",
    "occlusion-en-route": "an occlusion other than the target lies on the path",
    "site-avoided": "the site is listed in the case's avoid list",
    "site-diseased": "stenosis, occlusion or stent in the puncture zone",
    "no-crossover": "the aortic bifurcation is stented or grafted: no up-and-over",
    "unreachable": "no path from this site in this direction reaches the target",
    "tried-before": "this access was tried before and failed (access_tried in the case)",
    "sheath-too-long": "the sheath reaches the target lesion or leaves less working room "
                       "than the limit",
    "device-exceeds-sheath": "device profile larger than the sheath's inner diameter",
    "graft-anastomosis": "a bypass graft anastomosis lies within the puncture zone",
}
"""Every reason code with its meaning (README table)."""


@dataclass(frozen=True)
class Block:
    """One broken hard limit.

    Attributes
    ----------
    code : str
        A key of :data:`REASON_CODES`.
    segment : str
        Where (segment id, or ``GRAFT:<name>``).
    detail : str
        The sentence, with the numbers and the limit's source.
    """

    code: str
    segment: str
    detail: str

    def to_dict(self) -> dict[str, str]:
        """``{"code", "segment", "detail"}``."""
        return {"code": self.code, "segment": self.segment, "detail": self.detail}


@dataclass(frozen=True)
class LimitContext:
    """What every check may read."""

    view: VesselView
    devices: Devices
    limits: Mapping[str, float]
    settings: Mapping[str, Setting] = field(default_factory=dict)

    def table(self) -> dict[str, Setting]:
        """The limits table with this context's values (bundled entries where not given)."""
        return limits_table(self.limits, self.settings)


Check = Callable[[RouteFacts, LimitContext], list[Block]]


def headline(block: Mapping[str, str]) -> str:
    """The short line a table shows for a broken limit.

    ``unmeasured`` says what to measure and to what size; the others name the code and
    the segment.

    >>> headline({"code": "unmeasured", "segment": "R-CFA",
    ...           "detail": "measure R-CFA: needs MLD >= 8.7 mm for this 24 Fr sheath (outer"})
    'unmeasured: measure R-CFA: needs MLD >= 8.7 mm for this 24 Fr sheath'
    >>> headline({"code": "too-short", "segment": "L-POP", "detail": "..."})
    'too-short at L-POP'
    """
    if block["code"] == "unmeasured":
        return f"unmeasured: {block['detail'].split(' (', 1)[0]}"
    return f"{block['code']} at {block['segment']}"


def _star(assumed: bool) -> str:
    return "*" if assumed else ""


def bind_sar(facts: RouteFacts, ctx: LimitContext) -> None:
    """Apply the SAR limits by site to a route's sheath stretch (sets ``facts.fits``,
    ``min_lumen``, ``sar`` and ``sar_limit`` to those of the binding segment).

    Each segment the sheath occupies is judged against its own limit
    (:mod:`vascplan.routes.sarlimits`); the binding segment is the one whose SAR is
    nearest (or furthest over) its limit. Without a stretch (a sheath that stops at the
    skin), the puncture point.
    """
    if facts.path is None:
        return
    table = ctx.table()
    od = ctx.devices.sheath_od_mm
    fits = sheath_fits(ctx.view, facts.sheath_legs, od, table)
    if not fits:
        p = facts.puncture_cm
        fits = [fit_on(ctx.view, facts.site.segment, p, p, od, table)]
    facts.fits = fits
    bound = binding(fits)
    if bound is None:  # every segment occluded: occlusion-en-route reports it
        facts.sar, facts.sar_limit = None, fits[0].limit
        facts.min_lumen = (0.0, fits[0].node)
        return
    facts.min_lumen = (bound.mld_mm, bound.node)
    facts.sar = bound.sar
    facts.sar_limit = bound.limit


def sar_limit(facts: RouteFacts, ctx: LimitContext) -> LimitUsed:
    """The SAR limit of the route's binding segment (binding it first if needed)."""
    if facts.sar_limit is None:
        bind_sar(facts, ctx)
    if facts.sar_limit is None:
        table = ctx.table()
        s = table["sar_max"]
        return LimitUsed(s.name, s.value, s.label or s.name, s.cite)
    return facts.sar_limit


def check_unreachable(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``unreachable``: no path at all."""
    if facts.path is not None:
        return []
    view = ctx.view
    target = view.target_segment
    why = "without doubling back"
    if facts.crossover_dropped:
        why += (" (up-and-over the aortic bifurcation is offered only from the common "
                "femoral; a puncture below the groin serves its own leg)")
    return [Block("unreachable", facts.site.segment,
                  f"no {facts.direction} path from {facts.site.id} reaches {target} at "
                  f"{view.target_cm:g} cm {why}")]


def check_site_avoided(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``site-avoided``: the case lists the site (or its segment) in ``avoid``."""
    out = []
    for entry in ctx.view.case.avoid:
        if entry.site in (facts.site.id, facts.site.segment):
            out.append(Block("site-avoided", facts.site.segment,
                             f"{entry.site} is not to be punctured: {entry.reason}"))
    return out


def check_site_diseased(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``site-diseased``: a lesion or stent within the puncture zone.

    A stenosis below ``puncture_plaque_max_pct`` is a mild plaque the operator punctures
    beside: it does not block (the ``puncture_plaque`` soft factor counts it).
    """
    half = ctx.limits["puncture_zone_cm"]
    spans = ctx.view.disease_near(facts.site.segment, facts.puncture_cm, half)
    mild_below = ctx.limits["puncture_plaque_max_pct"]
    out = []
    for span in spans:
        kind = getattr(span.item, "kind", "stent")
        if kind == "stenosis" and span.item.percent < mild_below:
            continue  # a mild plaque: punctured beside, scored as puncture_plaque
        what = f"{kind} ({span.item.percent:g}%)" if kind == "stenosis" else kind
        out.append(Block("site-diseased", facts.site.segment,
                         f"{what} at {span.start_cm:g}-{span.end_cm:g} cm lies within "
                         f"{half:g} cm of the puncture point ({facts.puncture_cm:.1f} cm)"))
    return out


def _fr_text(devices: Devices) -> str:
    return f"{devices.sheath_fr:g} Fr"


def pessimistic_mld_mm(view: VesselView, node: str, mld_mm: float) -> float | None:
    """The pessimistic end of a reference diameter: mean - 2 SD, floored [mm].

    The reference row's mean less two standard deviations (about the 2.5th centile of
    a normal distribution), not below the table's plausible minimum
    (``data/anatomy/segments.csv``), scaled by the share of the lumen a stenosis on the
    stretch leaves (``mld_mm`` over the reference mean). None when the row has no SD.

    References
    ----------
    The rule is common practice: a fit that holds at the lower end of the population
    range does not rest on the patient's unknown diameter (``limits.yaml``
    ``large_bore_fr``).
    """
    from vascplan.refdata.anatomy import load_reference

    attrs = view.node(node)
    sd = attrs.get("diameter_sd_mm")
    mean = attrs.get("diameter_mm")
    row = load_reference().get(node)
    if sd is None or not mean or row is None:
        return None
    low = max(row.diameter_min_mm, float(mean) - 2.0 * float(sd))
    return low * (mld_mm / float(mean))


def check_unmeasured(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``unmeasured``: a large-bore fit that rests on a reference diameter.

    A sheath or cannula of ``large_bore_fr`` or more (outer: French = outer mm x 3) is
    not judged on population means. A segment it occupies whose diameter was not
    measured blocks the route when the device would fail that segment's SAR limit at
    the pessimistic end of the reference (mean - 2 SD of the segment's reference row,
    floored at the plausible minimum; :func:`pessimistic_mld_mm`): an unmeasured aorta
    does not block a 14 Fr pump, an unmeasured common femoral does. The detail gives
    the MLD the segment would need (outer diameter / limit, rounded up to 0.1 mm).
    """
    d = ctx.devices
    from vascplan.sizing.french import MM_PER_FR

    outer_fr = round(d.sheath_od_mm / MM_PER_FR, 9)  # 12 Fr labelled outer is 4.0 mm
    if facts.path is None or outer_fr < ctx.limits["large_bore_fr"]:
        return []
    if not facts.fits:
        bind_sar(facts, ctx)
    od_star = _star(d.sheath_od_assumed is not None)
    out: list[Block] = []
    for fit in facts.fits:
        if fit.measured or any(b.segment == fit.node for b in out):
            continue
        low = pessimistic_mld_mm(ctx.view, fit.node, fit.mld_mm)
        if low is not None and low > 0 and d.sheath_od_mm / low < fit.limit.value:
            continue  # fits even at the lower end of the reference range
        need = needed_mld_mm(d.sheath_od_mm, fit.limit.value)
        low_text = "" if low is None else (
            f"; at the lower end of the reference range (mean - 2 SD, {low:.1f} mm*) the "
            f"SAR would be {d.sheath_od_mm / low:.2f}" if low > 0 else "")
        out.append(Block("unmeasured", fit.node,
                         f"measure {fit.node}: needs MLD >= {need:.1f} mm for this "
                         f"{_fr_text(d)} sheath (outer {d.sheath_od_mm:.2f} mm{od_star}, SAR "
                         f"limit {fit.limit.text()}); the {fit.mld_mm:.1f} mm* used is a "
                         f"reference value, not this patient's lumen{low_text}"))
    return out


def check_sheath(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``sheath-too-large``: SAR in a segment the sheath occupies at or over its limit.

    One entry per segment over its own limit (limits by site), compared unrounded; the
    printed SAR has enough digits to sit on the verdict's side of the limit.
    """
    if facts.path is None:
        return []
    if not facts.fits:
        bind_sar(facts, ctx)
    d = ctx.devices
    od_star = _star(d.sheath_od_assumed is not None)
    out: list[Block] = []
    for fit in facts.fits:
        if fit.sar is None or not fit.over or any(b.segment == fit.node for b in out):
            continue
        mld_star = _star(not fit.measured)
        why = fit.limit.label
        if fit.limit.name == "sar_max_calcified":
            why = f"{fit.calcification}ly calcified stretch"
        out.append(Block("sheath-too-large", fit.node,
                         f"{d.sheath_fr:g} Fr sheath, outer {d.sheath_od_mm:.2f} mm{od_star}, in "
                         f"{fit.node} with MLD {fit.mld_mm:.2f} mm{mld_star}: SAR "
                         f"{format_near_limit(fit.sar, fit.limit.value)} is at or above the "
                         f"{why} limit of {format_limit(fit.limit.value)} ({fit.limit.cite})"))
    return out


def check_device(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``device-too-large``: profile wider than the open vessel beyond the sheath tip.

    The target lesion is left out (crossing it is the procedure), and so are the other
    stenoses, which are a soft factor (they can be dilated first).
    """
    d = ctx.devices
    if facts.path is None or d.device_od_mm is None or facts.role != "therapeutic":
        return []
    lumen = ctx.view.open_lumen_over(facts.beyond_legs)
    if lumen is None or d.device_od_mm <= lumen[0]:
        return []
    mm, node = lumen
    star = _star(ctx.view.node(node).get("diameter_source") != "measured")
    od_text, mm_text = _apart(d.device_od_mm, mm)
    return [Block("device-too-large", node,
                  f"{d.device_fr:g} Fr device ({od_text} mm) is wider than "
                  f"{node} ({mm_text} mm{star}) beyond the sheath tip")]


def _apart(wider: float, narrower: float) -> tuple[str, str]:
    """Both figures with the fewest decimals (2 or more) that print them apart.

    >>> _apart(2.3333, 2.331)
    ('2.333', '2.331')
    """
    for places in range(2, 13):
        a, b = f"{wider:.{places}f}", f"{narrower:.{places}f}"
        if float(a) > float(b):
            return a, b
    return repr(wider), repr(narrower)


def check_too_short(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``too-short``: path plus the outside allowance longer than the working length."""
    d = ctx.devices
    if facts.length_cm is None or d.working_length_cm is None or facts.role != "therapeutic":
        return []
    outside = ctx.limits["outside_body_cm"]
    need = facts.length_cm + outside
    if need <= d.working_length_cm:
        return []
    return [Block("too-short", ctx.view.target_segment,
                  f"path {facts.length_cm:.1f} cm* + {outside:g} cm outside the body = "
                  f"{need:.1f} cm, more than the {d.working_length_cm:g} cm working length")]


def check_occlusion(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``occlusion-en-route``: each non-target occlusion the path runs through."""
    if facts.path is None:
        return []
    return [Block("occlusion-en-route", span.node,
                  f"occlusion of {span.node} at {span.start_cm:g}-{span.end_cm:g} cm "
                  f"lies on the path")
            for span in ctx.view.lesions_on(facts.path.legs, kind="occlusion")]


def check_crossover(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``no-crossover``: up-and-over through a covered bifurcation."""
    if facts.path is None or not ctx.view.crosses_bifurcation(facts.path):
        return []
    why = ctx.view.bifurcation_cover(ctx.limits["crossover_origin_cm"])
    if why is None:
        return []
    return [Block("no-crossover", "AO-INFRA", f"up-and-over is not possible: {why}")]


def check_tried(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``tried-before``: the case records this access (site, direction) as failed.

    Not raised when the entry says ``retry: true`` (the user asks for it again).
    """
    from vascplan.case.access import matches

    out = []
    for entry in getattr(ctx.view.case, "access_tried", ()):
        if entry.retry or not matches(entry.site, entry.direction, facts.site.id,
                                      facts.site.segment, facts.direction):
            continue
        out.append(Block("tried-before", facts.site.segment,
                         f"{facts.site.id} {facts.direction} was tried before and "
                         f"{entry.outcome}: {entry.reason} (set retry: true to plan it again)"))
    return out[:1]


def check_graft_anastomosis(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``graft-anastomosis``: a graft end on the punctured segment within
    ``puncture_zone_cm`` of the puncture point (near it, the soft factor
    ``graft_anastomosis_near`` counts it instead)."""
    half = ctx.limits["puncture_zone_cm"]
    out = []
    for name, cm in ctx.view.anastomoses_on(facts.site.segment):
        if abs(cm - facts.puncture_cm) <= half:
            out.append(Block("graft-anastomosis", facts.site.segment,
                             f"anastomosis of graft {name} at {cm:g} cm lies within {half:g} cm "
                             f"of the puncture point ({facts.puncture_cm:.1f} cm)"))
    return out


def _treating(ctx: LimitContext) -> bool:
    procedure = ctx.view.case.procedure
    return procedure is None or procedure.purpose == "treat"


def check_sheath_too_long(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``sheath-too-long``: the sheath tip reaches the target lesion (or target point) or
    leaves less working room before it than ``working_room_cm``.

    Treatment only: a support cannula's tip is meant to lie at its target. The detail
    gives the longest sheath that would do: skin depth + distance to the lesion -
    working room, rounded down to the whole cm.
    """
    import math

    if facts.path is None or facts.to_lesion_cm is None or not _treating(ctx):
        return []
    if ctx.devices.sheathless or facts.inside_cm <= 0:
        return []
    need = ctx.limits["working_room_cm"]
    room = facts.to_lesion_cm - facts.inside_cm
    if room >= need:
        return []
    longest = math.floor(facts.site.skin_depth_cm + facts.to_lesion_cm - need)
    where = "the target lesion" if ctx.view.target_lesion is not None else "the target"
    what = (f"its tip passes {where} by {-room:.1f} cm" if room < 0
            else f"it leaves {room:.1f} cm before {where}, under the {need:g} cm needed")
    advice = (f"the longest sheath that would do is {longest} cm"
              if longest > facts.site.skin_depth_cm
              else "no sheath leaves that room: go sheathless or puncture further away")
    return [Block("sheath-too-long", facts.site.segment,
                  f"{ctx.devices.sheath_length_cm:g} cm sheath ({facts.inside_cm:.1f} cm inside "
                  f"the artery) on a {facts.to_lesion_cm:.1f} cm* path to {where}: {what}; "
                  f"{advice}")]


def check_device_in_sheath(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``device-exceeds-sheath``: device profile (outer, French / 3) larger than the
    sheath's inner diameter (inner label, French / 3; ISO 11070).

    Therapeutic routes only (a crossing access takes a wire and a catheter, not the
    device); not checked for a sheath labelled by outer size or sheathless.
    """
    d = ctx.devices
    inner = d.sheath_inner_mm
    if facts.path is None or facts.role != "therapeutic" or inner is None \
            or d.device_od_mm is None or d.device_od_mm <= inner + 1e-9:
        return []
    return [Block("device-exceeds-sheath", facts.site.segment,
                  f"{d.device_fr:g} Fr device ({d.device_od_mm:.2f} mm outer) does not pass a "
                  f"{d.sheath_fr:g} Fr sheath ({inner:.2f} mm inner): "
                  f"{d.device_od_mm - inner:.2f} mm too large")]


CHECKS: tuple[tuple[str, Check], ...] = (
    ("tried-before", check_tried),
    ("unreachable", check_unreachable),
    ("site-avoided", check_site_avoided),
    ("site-diseased", check_site_diseased),
    ("graft-anastomosis", check_graft_anastomosis),
    ("no-crossover", check_crossover),
    ("occlusion-en-route", check_occlusion),
    ("unmeasured", check_unmeasured),
    ("sheath-too-large", check_sheath),
    ("device-too-large", check_device),
    ("too-short", check_too_short),
    ("sheath-too-long", check_sheath_too_long),
    ("device-exceeds-sheath", check_device_in_sheath),
)
"""The registry: every hard limit, in the order reasons are listed."""


def hard_limits(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """Every broken hard limit of a route, in registry order."""
    out: list[Block] = []
    for _code, check in CHECKS:
        out.extend(check(facts, ctx))
    return out
