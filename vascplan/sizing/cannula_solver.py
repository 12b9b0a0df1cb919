"""The numbers of the flow through a distal perfusion cannula (or any tube) from a driving
pressure: :func:`solve_cannula`. The wording is :mod:`vascplan.sizing.cannula`.

The driving pressure is, for a distal perfusion cannula, the return-line pressure of
the extracorporeal circuit minus the distal arterial pressure. The flow solves

    driving pressure = sum over the tubes of (f(Re) L / D + K_entry(Re)) rho V**2 / 2
                       + K_entrance rho V_first**2 / 2 + K_junction rho V**2 / 2
                       + K_exit rho V_cannula**2 / 2

where the Darcy friction factor ``f`` depends on the Reynolds number and so on the
flow itself (laminar 64/Re, Colebrook when turbulent, a line between; see
:func:`vascplan.sizing.flow.darcy_friction`), ``K_entry`` is the extra loss of laminar
flow still developing in a short tube (Shah 1978; a 15 cm, 7 Fr cannula at the usual
flows is shorter than its laminar entry length, so this matters), and the tubes are
the cannula and, when given, a connecting line (side-arm or extension tubing) in
series, joined by a sharp contraction or expansion. The right-hand side increases
with the flow, so the root is unique; it is found with Brent's method (scipy
``brentq``).

The figure is an upper estimate: connectors, stopcocks and side-ports are counted only
when described as a line, and the driving pressure is taken as given. Flows measured
through 6-8 Fr distal perfusion cannulas are of the order of 100-400 mL/min (from
memory); a higher figure is flagged.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

from vascplan.sizing import flow
from vascplan.sizing.french import MM_PER_FR, interpolate
from vascplan.sizing.tables import ReferenceValue, positive, read_csv, read_values

CANNULA_WALLS = "cannula_walls.csv"
CANNULA_DEFAULTS = "cannula_defaults.yaml"


def cannula_defaults() -> dict[str, ReferenceValue]:
    """Minor-loss coefficients and roughness (``data/sizing/cannula_defaults.yaml``)."""
    return read_values(CANNULA_DEFAULTS)


def cannula_wall_mm(outer_fr: float) -> tuple[float, str]:
    """Wall thickness of a cannula labelled by outer size, from the table, with its basis.

    Parameters
    ----------
    outer_fr : float
        Label [Fr].

    Returns
    -------
    (float, str)
        Wall thickness [mm], linearly interpolated between rows of
        ``data/sizing/cannula_walls.csv`` (end rows kept beyond the ends), and the
        table's source and certainty.
    """
    rows = read_csv(CANNULA_WALLS)
    fr = [float(r["outer_fr"]) for r in rows]
    wall = [float(r["wall_mm"]) for r in rows]
    certainty = " and ".join(sorted({r["certainty"] for r in rows}))
    return interpolate(outer_fr, fr, wall), f"cannula wall table ({certainty})"


InnerSource = Literal["measured", "sheath-label", "wall-table"]


@dataclass(frozen=True)
class InnerDiameter:
    """A cannula's inner diameter and where it comes from (numbers only).

    Attributes
    ----------
    mm : float
        Inner diameter [mm].
    source : {"measured", "sheath-label", "wall-table"}
        Given as a measurement, a sheath's label (its inner size), or the label's outer
        size minus two walls from ``data/sizing/cannula_walls.csv``.
    size_fr : float
        The label [Fr].
    wall_mm : float or None
        The wall thickness used (``wall-table`` only) [mm].
    wall_basis : str or None
        The wall table's source and certainty (``wall-table`` only).
    """

    mm: float
    source: InnerSource
    size_fr: float
    wall_mm: float | None = None
    wall_basis: str | None = None


def inner_diameter(
    size_fr: float, label: Literal["outer", "inner"] = "outer", inner_mm: float | None = None
) -> InnerDiameter:
    """Inner diameter of a cannula or sheath used as one, and its source.

    Parameters
    ----------
    size_fr : float
        Label [Fr].
    label : {"outer", "inner"}
        ``"outer"`` for a cannula or catheter (the default), ``"inner"`` for an
        introducer sheath used as a perfusion line (its label is its inner size,
        ISO 11070:2014 7.2).
    inner_mm : float, optional
        Measured or maker's inner diameter [mm], used as is.

    Returns
    -------
    InnerDiameter

    Examples
    --------
    >>> inner_diameter(6, "inner").mm
    2.0
    >>> round(inner_diameter(6).mm, 3)   # 2.0 mm outer minus two 0.2 mm walls
    1.6
    """
    size_fr = float(size_fr)
    if not math.isfinite(size_fr) or size_fr <= 0.0:
        raise ValueError(f"size_fr must be a positive number, got {size_fr}")
    if inner_mm is not None:
        if not math.isfinite(inner_mm) or inner_mm <= 0.0:
            raise ValueError(f"inner_mm must be a positive number, got {inner_mm}")
        return InnerDiameter(float(inner_mm), "measured", size_fr)
    if label == "inner":
        return InnerDiameter(size_fr * MM_PER_FR, "sheath-label", size_fr)
    if label != "outer":
        raise ValueError(f"label must be 'outer' or 'inner', got {label!r}")
    wall, basis = cannula_wall_mm(size_fr)
    mm = size_fr * MM_PER_FR - 2.0 * wall
    if mm <= 0.0:
        raise ValueError(f"a {size_fr:g} Fr cannula has no lumen with a {wall:.2f} mm wall")
    return InnerDiameter(mm, "wall-table", size_fr, wall, basis)


def junction_k(upstream_mm: float, downstream_mm: float) -> float:
    """Loss coefficient of a sharp change of bore, on the downstream tube's velocity.

    Parameters
    ----------
    upstream_mm, downstream_mm : float
        Inner diameters of the tube the flow leaves and the tube it enters [mm].

    Returns
    -------
    float
        Sharp contraction (narrower downstream): Rennels' fit,
        ``0.0696 (1 - b**5) l**2 + (l - 1)**2`` with ``l = 1 + 0.622 (1 - 0.215 b**2 -
        0.785 b**5)`` and ``b`` the diameter ratio (Rennels and Hudson, *Pipe Flow*,
        Wiley 2012, via the ``fluids`` library). Sudden expansion: Borda-Carnot,
        ``(1 - b**2)**2`` on the upstream velocity, i.e. ``(1/b**2 - 1)**2`` on the
        downstream one. 0 for the same bore.

    Examples
    --------
    >>> junction_k(2.0, 2.0)
    0.0
    >>> round(junction_k(1.0, 2.0), 4)   # expansion to twice the bore
    9.0
    """
    if upstream_mm == downstream_mm:
        return 0.0
    if downstream_mm < upstream_mm:
        b = downstream_mm / upstream_mm
        lam = 1.0 + 0.622 * (1.0 - 0.215 * b * b - 0.785 * b**5)
        return 0.0696 * (1.0 - b**5) * lam * lam + (lam - 1.0) ** 2
    b = upstream_mm / downstream_mm
    return (1.0 / (b * b) - 1.0) ** 2


@dataclass(frozen=True)
class CannulaSolution:
    """The numbers of a cannula flow solve and the reference values they rest on.

    :func:`solve_cannula` makes it; :func:`cannula_assumptions` words it.

    Attributes
    ----------
    inner : InnerDiameter
        The cannula's inner diameter and its source.
    length_cm, driving_mmhg : float
        Cannula length [cm] and driving pressure [mmHg].
    flow_ml_min, velocity_m_s, reynolds, friction_factor : float
        Volume flow [mL/min], mean velocity [m/s], Reynolds number [-] and Darcy friction
        factor [-] in the cannula.
    regime : {"laminar", "transitional", "turbulent"}
        By the Reynolds number.
    defaults : dict of str to ReferenceValue
        The reference values used in place of an input (``viscosity_pa_s``,
        ``density_kg_m3``, ``roughness_mm``), in the order they were taken.
    entrance_exit : tuple of ReferenceValue or None
        The entrance and exit loss coefficients when the minor losses were not given.
    line_mm, line_cm, line_reynolds, junction_k : float or None
        The connecting line in series (inner diameter [mm], length [cm], Reynolds
        number [-]) and the loss coefficient of its joint with the cannula [-].
    typical_high : ReferenceValue
        Flow usually measured through a 6-8 Fr distal perfusion cannula, upper end.
    above_typical : bool
        The flow is above ``typical_high`` for a cannula of 10 Fr or less.
    """

    inner: InnerDiameter
    length_cm: float
    driving_mmhg: float
    flow_ml_min: float
    velocity_m_s: float
    reynolds: float
    regime: flow.Regime
    friction_factor: float
    defaults: dict[str, ReferenceValue]
    entrance_exit: tuple[ReferenceValue, ReferenceValue] | None
    typical_high: ReferenceValue
    above_typical: bool
    line_mm: float | None = None
    line_cm: float | None = None
    line_reynolds: float | None = None
    junction_k: float | None = None


def solve_cannula(
    size_fr: float,
    length_cm: float,
    driving_mmhg: float,
    *,
    label: Literal["outer", "inner"] = "outer",
    inner_mm: float | None = None,
    viscosity_pa_s: float | None = None,
    density_kg_m3: float | None = None,
    minor_k: float | None = None,
    roughness_mm: float | None = None,
    line_mm: float | None = None,
    line_cm: float | None = None,
) -> CannulaSolution:
    """The flow through a cannula driven by a pressure difference: numbers only.

    Parameters and notes as :func:`vascplan.sizing.cannula.cannula_flow`, which adds the wording
    (:func:`cannula_assumptions`).

    Returns
    -------
    CannulaSolution

    Examples
    --------
    >>> sol = solve_cannula(7, 15, 150)
    >>> sol.inner.source, sol.flow_ml_min > 0, sorted(sol.defaults)
    ('wall-table', True, ['density_kg_m3', 'roughness_mm', 'viscosity_pa_s'])
    """
    from scipy.optimize import brentq

    length_cm = positive("length_cm", length_cm)
    driving_mmhg = positive("driving_mmhg", driving_mmhg)
    if (line_mm is None) != (line_cm is None):
        raise ValueError("a connecting line needs both line_mm and line_cm")
    if line_mm is not None and line_cm is not None:
        line_mm = positive("line_mm", line_mm)
        line_cm = positive("line_cm", line_cm)
    inner = inner_diameter(size_fr, label, inner_mm)
    d_mm = inner.mm
    defaults: dict[str, ReferenceValue] = {}
    blood = flow.blood_defaults()
    extra = cannula_defaults()

    def pick(value: float | None, name: str, table: dict[str, ReferenceValue]) -> float:
        if value is not None:
            if not math.isfinite(value) or value < 0.0:
                raise ValueError(f"{name} must be a number >= 0, got {value}")
            return float(value)
        defaults[name] = table[name]
        return table[name].value

    mu = pick(viscosity_pa_s, "viscosity_pa_s", blood)
    rho = pick(density_kg_m3, "density_kg_m3", blood)
    entrance_exit: tuple[ReferenceValue, ReferenceValue] | None
    if minor_k is None:
        entrance_exit = (extra["entrance_k"], extra["exit_k"])
        k_entrance, k_exit = entrance_exit[0].value, entrance_exit[1].value
    else:
        entrance_exit = None
        k_entrance, k_exit = 0.0, pick(minor_k, "minor_k", extra)
    rough = pick(roughness_mm, "roughness_mm", extra)
    if mu <= 0.0 or rho <= 0.0:
        raise ValueError("viscosity_pa_s and density_kg_m3 must be positive")

    # Tubes in flow order: (diameter m, length m, relative roughness).
    tubes: list[tuple[float, float, float]] = []
    k_joint = 0.0
    if line_mm is not None and line_cm is not None:
        tubes.append((line_mm * 1e-3, line_cm * 1e-2, rough / line_mm))
        k_joint = junction_k(line_mm, d_mm)
    d = d_mm * 1e-3
    tubes.append((d, length_cm * 1e-2, rough / d_mm))
    dp = driving_mmhg * flow.MMHG_PA

    def head(q: float, diameter: float) -> float:
        v = q / (math.pi * diameter * diameter / 4.0)
        return rho * v * v / 2.0

    def residual(q: float) -> float:
        total = 0.0
        for diameter, length, rel in tubes:
            total += flow.pipe_pressure_drop(
                q,
                diameter,
                length,
                density_kg_m3=rho,
                viscosity_pa_s=mu,
                relative_roughness=rel,
                developing=True,
            )
        total += k_entrance * head(q, tubes[0][0]) + (k_joint + k_exit) * head(q, d)
        return total - dp

    # Upper bound: the laminar friction of the cannula alone is never larger than the loss.
    q_high = dp / flow.tube_resistance(d, length_cm * 1e-2, mu) * 1.01
    q = brentq(residual, 0.0, q_high, xtol=1e-15, rtol=1e-12)
    area = math.pi * d * d / 4.0
    velocity = q / area
    re = flow.reynolds(velocity, d, rho, mu)
    line_re = None
    if line_mm is not None:
        line_d = line_mm * 1e-3
        line_re = flow.reynolds(q / (math.pi * line_d * line_d / 4.0), line_d, rho, mu)
    flow_ml_min = q * 60e6
    typical = extra["typical_flow_ml_min_high"]
    # The typical range is for the 5-10 Fr cannulas used for distal perfusion
    # (Limb ischaemia sources of cannula_defaults.yaml); larger tubes are not compared.
    return CannulaSolution(
        inner=inner,
        length_cm=length_cm,
        driving_mmhg=driving_mmhg,
        flow_ml_min=flow_ml_min,
        velocity_m_s=velocity,
        reynolds=re,
        regime=flow.regime_of(re),
        friction_factor=flow.darcy_friction(re, rough / d_mm),
        defaults=defaults,
        entrance_exit=entrance_exit,
        typical_high=typical,
        above_typical=flow_ml_min > typical.value and inner.size_fr <= 10.0,
        line_mm=line_mm,
        line_cm=line_cm,
        line_reynolds=line_re,
        junction_k=k_joint if line_mm is not None else None,
    )
