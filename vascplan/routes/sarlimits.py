"""SAR limits by site: which limit holds for each segment a sheath occupies, and the fit.

The limits live in ``data/access/limits.yaml``: ``sar_max`` (transfemoral, Hayashida et
al. 2011) for every segment, unless an entry names the segment's kind in its
``segments`` (the radial, ulnar and brachial take the arm-artery limit of Saito et al.
1999; the axillary and subclavian the transaxillary one of van der Wulp et al.).
Moderate or severe calcification lowers a segment's limit to ``sar_max_calcified``
(calcified arteries do not stretch; common practice), never raises it.

Every verdict compares unrounded values: a segment breaks its limit when
``sheath outer diameter / MLD >= limit``.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass

from vascplan.nearlimit import ceil_to, format_limit
from vascplan.routes.pathfind import Leg
from vascplan.routes.settings import LIMITS_FILE, Setting, load_table
from vascplan.routes.vessels import CALCIFICATION_GRADES, VesselView

DEFAULT_LIMIT = "sar_max"
CALCIFIED_LIMIT = "sar_max_calcified"
NEEDED_MLD_STEP_MM = 0.1
"""Needed MLDs are rounded up to this step [mm], so the printed figure is safe."""

_EDGE_CM = 1e-4
"""As :mod:`vascplan.routes.vessels`: a stretch stopping at a lesion's edge does not enter it."""

MIN_LEG_CM = 4 * _EDGE_CM
"""Legs shorter than this [cm] are a node touched in passing, not a segment occupied."""


@dataclass(frozen=True)
class LimitUsed:
    """The SAR limit that holds for one segment, and where it comes from.

    Attributes
    ----------
    name : str
        Its name in ``limits.yaml`` (``sar_max_radial``).
    value : float
        The limit [-].
    label : str
        Short name (``radial``).
    cite : str
        Short source printed beside it.
    """

    name: str
    value: float
    label: str
    cite: str

    def text(self) -> str:
        """``1.00 (radial: Saito et al., ...)``: the limit with its source, for outputs."""
        return f"{format_limit(self.value)} ({self.label}: {self.cite})"

    def to_dict(self) -> dict[str, object]:
        """``{"name", "value", "label", "source"}``."""
        return {"name": self.name, "value": self.value, "label": self.label,
                "source": self.cite}


def limits_table(values: Mapping[str, float],
                 settings: Mapping[str, Setting] | None = None) -> dict[str, Setting]:
    """The limits table with ``values`` applied: ``settings`` (after overrides) where given,
    the bundled entries for the rest; a value that differs replaces the entry's value."""
    from dataclasses import replace

    out = dict(load_table(LIMITS_FILE))
    out.update(settings or {})
    return {name: s if values.get(name, s.value) == s.value
            else replace(s, value=values[name]) for name, s in out.items()}


def segment_kind(node: str) -> str:
    """The kind of a segment id: ``R-RAD`` -> ``RAD``, ``AO-INFRA`` -> ``AO-INFRA``.

    >>> segment_kind("L-AXA"), segment_kind("AO-INFRA")
    ('AXA', 'AO-INFRA')
    """
    side, sep, kind = node.partition("-")
    return kind if sep and side in ("L", "R") else node


def _used(setting: Setting) -> LimitUsed:
    return LimitUsed(setting.name, setting.value, setting.label or setting.name,
                     setting.cite or setting.basis)


def limit_for(node: str, calcified: bool, settings: Mapping[str, Setting]) -> LimitUsed:
    """The SAR limit for a segment.

    Parameters
    ----------
    node : str
        Segment id.
    calcified : bool
        True when the stretch occupied is moderately or severely calcified.
    settings : mapping of str to Setting
        The limits table after overrides.

    Returns
    -------
    LimitUsed
    """
    kind = segment_kind(node)
    site = next((s for s in settings.values() if kind in s.segments), settings[DEFAULT_LIMIT])
    low = settings[CALCIFIED_LIMIT]
    if calcified and low.value < site.value:
        return _used(low)
    return _used(site)


@dataclass(frozen=True)
class SegmentFit:
    """The sheath in one segment it occupies.

    Attributes
    ----------
    node : str
    mld_mm : float
        Minimal lumen over the stretch occupied [mm]; 0 for an occlusion.
    sar : float or None
        Sheath outer diameter / MLD [-]; None for an occlusion.
    limit : LimitUsed
    measured : bool
        False when the segment's diameter is a reference value.
    calcification : str
        Worst grade over the stretch.
    """

    node: str
    mld_mm: float
    sar: float | None
    limit: LimitUsed
    measured: bool
    calcification: str

    @property
    def over(self) -> bool:
        """At or over its limit (unrounded); an occlusion counts as over."""
        return self.sar is None or self.sar >= self.limit.value

    @property
    def load(self) -> float:
        """SAR as a share of its limit: the segment with the largest binds."""
        return float("inf") if self.sar is None else self.sar / self.limit.value


def fit_on(view: VesselView, node: str, lo_cm: float, hi_cm: float, od_mm: float,
           settings: Mapping[str, Setting]) -> SegmentFit:
    """The fit of a sheath of outer diameter ``od_mm`` on one stretch of a segment."""
    mld = view.mld_mm(node, lo_cm, hi_cm)
    step = view.calcification_step(node, lo_cm, hi_cm)
    calcified = step >= CALCIFICATION_GRADES.index("moderate")
    return SegmentFit(node, mld, od_mm / mld if mld > 0 else None,
                      limit_for(node, calcified, settings),
                      view.node(node).get("diameter_source") == "measured",
                      CALCIFICATION_GRADES[step])


def sheath_fits(view: VesselView, legs: Iterable[Leg], od_mm: float,
                settings: Mapping[str, Setting]) -> list[SegmentFit]:
    """One fit per leg the sheath occupies (zero-length legs left out), in path order."""
    out: list[SegmentFit] = []
    for leg in legs:
        if leg.length_cm < MIN_LEG_CM:
            continue
        out.append(fit_on(view, leg.node, leg.lo_cm + _EDGE_CM, leg.hi_cm - _EDGE_CM,
                          od_mm, settings))
    return out


def binding(fits: Iterable[SegmentFit]) -> SegmentFit | None:
    """The fit nearest (or furthest over) its limit; occlusions left out (reported apart).

    With one limit along the stretch this is the narrowest segment.
    """
    open_fits = [f for f in fits if f.sar is not None]
    return max(open_fits, key=lambda f: f.load, default=None)


def needed_mld_mm(od_mm: float, limit: float) -> float:
    """The MLD a segment needs for ``od_mm / MLD`` to stay under ``limit`` [mm].

    ``od_mm / limit`` rounded up to 0.1 mm, one step more if the SAR at that MLD would
    still be at the limit: a segment measured at the printed figure or more passes.

    >>> needed_mld_mm(9.1, 1.05)   # 24 Fr standard-wall sheath, transfemoral limit
    8.7
    >>> needed_mld_mm(8.4, 1.0)    # SAR exactly 1.0 at 8.4 mm is at the limit: 8.5
    8.5
    """
    need = ceil_to(od_mm / limit, NEEDED_MLD_STEP_MM)
    if od_mm / need >= limit:
        need = round(need + NEEDED_MLD_STEP_MM, 10)
    return need
