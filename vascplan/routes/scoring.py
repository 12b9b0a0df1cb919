"""The soft factors: points for what makes a route harder, each with its sentence.

Score convention: a route's score is the sum of its factors' points, and **lower is
better** (0 means nothing counts against it). Ranking puts every feasible route before
every blocked one (and unreachable ones last), then the lower score, then the shorter
path.

One registry, :data:`FACTORS`; each factor's weight is the entry of the same name in
``data/access/weights.yaml`` (with its basis), overridable in the case or on the
command line.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass

from vascplan.routes.facts import Devices, RouteFacts
from vascplan.routes.vessels import CALCIFICATION_GRADES, VesselView

ARCH_TARGETS = ("AO-ASC", "AO-ARCH")
"""Targets every route must reach through the arch: no arch_traversal points."""

SCORE_CONVENTION = "lower is better: the sum of the factors' points; feasible routes first"


@dataclass(frozen=True)
class Factor:
    """One soft factor of a route.

    Attributes
    ----------
    name : str
        The weight's name in ``data/access/weights.yaml``.
    points : float
        Points added to the score (lower is better).
    detail : str
        The sentence, with the quantity and the weight.
    """

    name: str
    points: float
    detail: str

    def to_dict(self) -> dict[str, object]:
        """``{"name", "points", "detail"}``, points to two decimals."""
        return {"name": self.name, "points": round(self.points, 2), "detail": self.detail}


@dataclass(frozen=True)
class ScoreContext:
    """What every factor may read."""

    view: VesselView
    devices: Devices
    weights: Mapping[str, float]
    limits: Mapping[str, float]


FactorFn = Callable[[RouteFacts, ScoreContext], list[Factor]]


def f_sar(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """SAR times its weight."""
    if facts.sar is None or facts.min_lumen is None:
        return []
    from vascplan.nearlimit import format_near_limit

    w = ctx.weights["sar"]
    limit = facts.sar_limit.value if facts.sar_limit is not None else None
    return [Factor("sar", w * facts.sar,
                   f"SAR {format_near_limit(facts.sar, limit)} over the sheath's stretch "
                   f"(binding at {facts.min_lumen[1]}) x {w:g} points")]


def f_puncture_calcification(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Calcification grade in the puncture zone."""
    half = ctx.limits["puncture_zone_cm"]
    step = ctx.view.calcification_step(facts.site.segment, facts.puncture_cm - half,
                                       facts.puncture_cm + half)
    if step == 0:
        return []
    w = ctx.weights["puncture_calcification"]
    return [Factor("puncture_calcification", w * step,
                   f"{CALCIFICATION_GRADES[step]} calcification at the puncture "
                   f"(grade {step} x {w:g}): harder puncture, compression and closure")]


def f_puncture_plaque(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Mild plaques (below ``puncture_plaque_max_pct``) in the puncture zone."""
    half = ctx.limits["puncture_zone_cm"]
    mild_below = ctx.limits["puncture_plaque_max_pct"]
    mild = [s for s in ctx.view.disease_near(facts.site.segment, facts.puncture_cm, half)
            if getattr(s.item, "kind", "stent") == "stenosis" and s.item.percent < mild_below]
    if not mild:
        return []
    w = ctx.weights["puncture_plaque"]
    where = ", ".join(f"{s.item.percent:g}% at {s.start_cm:g}-{s.end_cm:g} cm" for s in mild)
    return [Factor("puncture_plaque", w * len(mild),
                   f"mild plaque in the puncture zone ({where}): puncture beside it under "
                   f"ultrasound x {w:g}")]


def f_site_risk(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """The site's relative complication risk."""
    w = ctx.weights["site_risk"]
    s = facts.site
    return [Factor("site_risk", w * s.complication_relative,
                   f"{s.name}: complication risk {s.complication_relative:g} x retrograde "
                   f"common femoral ({s.sources.get('complication', '')}) x {w:g}")]


def f_sheath_size(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Sheath larger than the site usually takes."""
    over = ctx.devices.sheath_fr - facts.site.upper_sheath_fr
    if over <= 0:
        return []
    w = ctx.weights["site_sheath_size"]
    return [Factor("site_sheath_size", w * over,
                   f"{ctx.devices.sheath_fr:g} Fr is {over:g} Fr above the usual upper size "
                   f"for this site ({facts.site.upper_sheath_fr:g} Fr) x {w:g}")]


def f_stenoses(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Non-target stenoses to cross, and those narrower than the device."""
    if facts.path is None:
        return []
    out: list[Factor] = []
    significant = ctx.limits["significant_stenosis_pct"]
    spans = [s for s in ctx.view.lesions_on(facts.path.legs, kind="stenosis")
             if s.item.percent >= significant]
    if spans:
        w = ctx.weights["stenosis_en_route"]
        names = ", ".join(f"{s.node} {s.item.percent:g}%" for s in spans)
        out.append(Factor("stenosis_en_route", w * len(spans),
                          f"{len(spans)} stenosis(es) of {significant:g}% or more to cross "
                          f"({names}) x {w:g}"))
    od = ctx.devices.device_od_mm
    if od is not None:
        tight = []
        for s in ctx.view.lesions_on(facts.beyond_legs, kind="stenosis"):
            mld = ctx.view.mld_mm(s.node, s.start_cm, s.end_cm)
            if mld < od:
                tight.append(f"{s.node} {mld:.1f} mm")
        if tight:
            w = ctx.weights["stenosis_tighter_than_device"]
            out.append(Factor("stenosis_tighter_than_device", w * len(tight),
                              f"narrower than the {od:.2f} mm device, dilate first: "
                              f"{', '.join(tight)} x {w:g}"))
    return out


def f_crossover(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Up-and-over the aortic bifurcation."""
    if facts.path is None or not ctx.view.crosses_bifurcation(facts.path):
        return []
    w = ctx.weights["crossover"]
    return [Factor("crossover", w, "up-and-over the aortic bifurcation to the other leg")]


def f_arch(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Catheter work in the aortic arch, more the more of it is crossed.

    Not counted when the target lies in the ascending aorta or the arch itself (a
    microaxial pump, a valve): every route must then reach the arch, and the arch is
    the destination, not a detour (common practice).
    """
    if facts.path is None or ctx.view.target_segment in ARCH_TARGETS:
        return []
    share = ctx.view.arch_share(facts.path)
    if share is None:
        return []
    w = ctx.weights["arch_traversal"]
    return [Factor("arch_traversal", w * (0.5 + 0.5 * share),
                   f"crosses {share:.0%} of the aortic arch (embolic stroke risk) x {w:g}")]


def f_prone(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Prone positioning."""
    if facts.site.position != "prone":
        return []
    return [Factor("prone", ctx.weights["prone"],
                   "needs the patient prone (airway, monitoring, no second groin route)")]


def f_length_margin(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Working length left over, below the comfortable margin."""
    d = ctx.devices
    if facts.length_cm is None or d.working_length_cm is None:
        return []
    comfortable = ctx.limits["comfortable_margin_cm"]
    margin = d.working_length_cm - facts.length_cm - ctx.limits["outside_body_cm"]
    if margin >= comfortable:
        return []
    w = ctx.weights["length_margin"]
    share = 1.0 if comfortable <= 0 else min(1.0, max(0.0, 1.0 - margin / comfortable))
    return [Factor("length_margin", w * share,
                   f"{margin:.0f} cm of working length to spare (comfortable: "
                   f"{comfortable:g} cm) x {w:g}")]


def f_anticoagulation(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Anticoagulated patient: the site's bleeding risk."""
    if not getattr(ctx.view.case.patient, "anticoagulated", False):
        return []
    w = ctx.weights["anticoagulation"]
    s = facts.site
    over = "compressible over bone" if s.compressible else "not compressible over bone"
    return [Factor("anticoagulation", w * s.bleeding_relative,
                   f"anticoagulated; site {over}, bleeding risk {s.bleeding_relative:g} x "
                   f"common femoral x {w:g}")]


def f_approach(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Which cap of the target occlusion the route arrives at, and its shape."""
    lesion = ctx.view.target_lesion
    if facts.path is None or facts.approach == "none" or lesion is None:
        return []
    out: list[Factor] = []
    if facts.approach == "distal-cap":
        out.append(Factor("approach_distal_cap", ctx.weights["approach_distal_cap"],
                          "retrograde approach to the distal cap (below the groin usually the "
                          "second choice after an antegrade one)"))
        cap = getattr(lesion.item, "distal_cap", None)
        which = "distal"
    else:
        cap = getattr(lesion.item, "proximal_cap", None)
        which = "proximal"
    if cap in ("blunt", "flush"):
        name = f"cap_{cap}"
        hint = " (favours the distal cap)" if which == "proximal" else ""
        out.append(Factor(name, ctx.weights[name],
                          f"arrives at the {which} cap, which is {cap}{hint}"))
    return out


def f_graft(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Through a bypass graft."""
    if facts.path is None:
        return []
    grafts = ctx.view.grafts_on(facts.path)
    if not grafts:
        return []
    w = ctx.weights["graft_traversal"]
    return [Factor("graft_traversal", w * len(grafts),
                   f"through the bypass graft {', '.join(grafts)} x {w:g}")]


def f_pedal_loop(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Round the pedal loop."""
    if facts.path is None or not ctx.view.uses_pedal_loop(facts.path):
        return []
    return [Factor("pedal_loop", ctx.weights["pedal_loop"],
                   "round the pedal loop (plantar arch and dorsalis pedis)")]


def f_anastomosis_near(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """A graft anastomosis near the puncture (outside the puncture zone, within
    ``anastomosis_near_cm``): puncture away from it under ultrasound."""
    half = ctx.limits["puncture_zone_cm"]
    near = ctx.limits["anastomosis_near_cm"]
    hits = [(n, cm) for n, cm in ctx.view.anastomoses_on(facts.site.segment)
            if half < abs(cm - facts.puncture_cm) <= near]
    if not hits:
        return []
    w = ctx.weights["graft_anastomosis_near"]
    where = ", ".join(f"graft {n} at {cm:g} cm" for n, cm in hits)
    return [Factor("graft_anastomosis_near", w * len(hits),
                   f"graft anastomosis near the puncture ({where}) x {w:g}")]


def f_obesity(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """A femoral or mid-thigh puncture at ``obesity_bmi`` or more (``severe_obesity_femoral``
    from ``severe_obesity_bmi``)."""
    from vascplan.routes.body import body_mass_index, is_femoral

    bmi = body_mass_index(ctx.view.case.patient)
    if bmi is None or bmi < ctx.limits["obesity_bmi"] or not is_femoral(facts.site):
        return []
    name = ("severe_obesity_femoral" if bmi >= ctx.limits["severe_obesity_bmi"]
            else "obesity_femoral")
    w = ctx.weights[name]
    return [Factor(name, w,
                   f"body mass index {bmi:.1f} kg/m2 ({ctx.limits['obesity_bmi']:g} or more): "
                   f"deeper groin (+{ctx.limits['obese_groin_extra_cm']:g} cm skin to artery), "
                   "more femoral complications and bleeding (TROP registry, EuroIntervention; "
                   f"Hibbert et al., JACC Cardiovasc Interv 2012) x {w:g}")]


FACTORS: tuple[FactorFn, ...] = (
    f_sar, f_puncture_calcification, f_puncture_plaque, f_site_risk, f_sheath_size,
    f_stenoses, f_crossover, f_arch, f_prone, f_length_margin, f_anticoagulation, f_approach,
    f_graft, f_pedal_loop, f_anastomosis_near, f_obesity,
)
"""The registry of soft factors, in the order they are listed."""


def soft_factors(facts: RouteFacts, ctx: ScoreContext) -> list[Factor]:
    """Every soft factor of a route, in registry order."""
    out: list[Factor] = []
    for fn in FACTORS:
        out.extend(fn(facts, ctx))
    return out
