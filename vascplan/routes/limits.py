"""The hard limits: a route that breaks one is kept, marked not feasible, with its reasons.

One registry, :data:`CHECKS`: each check takes the route's facts and returns the
:class:`Block` entries it finds (one per broken limit, naming the segment where). The
numbers come from ``data/access/limits.yaml`` (each with its source), overridable.

Reason codes (the JSON contract, ``blocked_by[].code``):

======================  =============================================================
``sheath-too-large``    SAR over the stretch the sheath occupies at or above the limit
``device-too-large``    device profile wider than the vessel beyond the sheath tip
``too-short``           path length plus the outside allowance exceeds the working length
``occlusion-en-route``  an occlusion other than the target lies on the path
``site-avoided``        the site is listed in the case's ``avoid``
``site-diseased``       stenosis, occlusion or stent in the puncture zone
``no-crossover``        the bifurcation is stented or grafted: no up-and-over
``unreachable``         no path from this site in this direction reaches the target
======================  =============================================================
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

from vascplan.routes.facts import Devices, RouteFacts
from vascplan.routes.vessels import CALCIFICATION_GRADES, VesselView

REASON_CODES: dict[str, str] = {
    "sheath-too-large": "sheath-to-artery ratio over the sheath's stretch at or above the limit",
    "device-too-large": "device profile wider than the vessel beyond the sheath tip",
    "too-short": "path length plus the allowance outside the body exceeds the working length",
    "occlusion-en-route": "an occlusion other than the target lies on the path",
    "site-avoided": "the site is listed in the case's avoid list",
    "site-diseased": "stenosis, occlusion or stent in the puncture zone",
    "no-crossover": "the aortic bifurcation is stented or grafted: no up-and-over",
    "unreachable": "no path from this site in this direction reaches the target",
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


Check = Callable[[RouteFacts, LimitContext], list[Block]]


def _star(assumed: bool) -> str:
    return "*" if assumed else ""


def sar_limit(facts: RouteFacts, ctx: LimitContext) -> tuple[float, str]:
    """The SAR limit for this route's sheath stretch, and why.

    Moderate or severe calcification anywhere on the stretch lowers it
    (``sar_max_calcified``; calcified arteries do not stretch, common practice); it never
    raises it above ``sar_max``.
    """
    worst = max((ctx.view.calcification_step(leg.node, leg.lo_cm, leg.hi_cm)
                 for leg in facts.sheath_legs), default=0)
    if worst >= CALCIFICATION_GRADES.index("moderate"):
        grade = CALCIFICATION_GRADES[worst]
        limit = min(ctx.limits["sar_max_calcified"], ctx.limits["sar_max"])
        return limit, f"limit for a {grade}ly calcified stretch"
    return ctx.limits["sar_max"], "limit (Hayashida et al., JACC Cardiovasc Interv 2011)"


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


def check_sheath(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``sheath-too-large``: SAR over the sheath's stretch at or above the limit."""
    if facts.path is None or facts.min_lumen is None or facts.sar is None:
        return []
    limit, why = sar_limit(facts, ctx)
    if facts.sar < limit:
        return []
    mld, node = facts.min_lumen
    d = ctx.devices
    od_star = _star(d.sheath_od_assumed is not None)
    mld_star = _star(ctx.view.node(node).get("diameter_source") != "measured")
    return [Block("sheath-too-large", node,
                  f"{d.sheath_fr:g} Fr sheath, outer {d.sheath_od_mm:.2f} mm{od_star}, in "
                  f"{node} with MLD {mld:.2f} mm{mld_star}: SAR {facts.sar:.2f} is at or "
                  f"above the {why} of {limit:.2f}")]


def check_device(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``device-too-large``: profile wider than the open vessel beyond the sheath tip.

    The target lesion is left out (crossing it is the procedure), and so are the other
    stenoses, which are a soft factor (they can be dilated first).
    """
    d = ctx.devices
    if facts.path is None or d.device_od_mm is None:
        return []
    lumen = ctx.view.open_lumen_over(facts.beyond_legs)
    if lumen is None or d.device_od_mm <= lumen[0]:
        return []
    mm, node = lumen
    star = _star(ctx.view.node(node).get("diameter_source") != "measured")
    return [Block("device-too-large", node,
                  f"{d.device_fr:g} Fr device ({d.device_od_mm:.2f} mm) is wider than "
                  f"{node} ({mm:.2f} mm{star}) beyond the sheath tip")]


def check_too_short(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """``too-short``: path plus the outside allowance longer than the working length."""
    d = ctx.devices
    if facts.length_cm is None or d.working_length_cm is None:
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


CHECKS: tuple[tuple[str, Check], ...] = (
    ("unreachable", check_unreachable),
    ("site-avoided", check_site_avoided),
    ("site-diseased", check_site_diseased),
    ("no-crossover", check_crossover),
    ("occlusion-en-route", check_occlusion),
    ("sheath-too-large", check_sheath),
    ("device-too-large", check_device),
    ("too-short", check_too_short),
)
"""The registry: every hard limit, in the order reasons are listed."""


def hard_limits(facts: RouteFacts, ctx: LimitContext) -> list[Block]:
    """Every broken hard limit of a route, in registry order."""
    out: list[Block] = []
    for _code, check in CHECKS:
        out.extend(check(facts, ctx))
    return out
