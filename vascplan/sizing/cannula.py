"""Flow through a distal perfusion cannula (or any tube) from a driving pressure.

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
from dataclasses import dataclass, field
from typing import Literal

import numpy as np

from vascplan.sizing import flow
from vascplan.sizing.french import MM_PER_FR
from vascplan.sizing.tables import ReferenceValue, positive, read_csv, read_values

CANNULA_WALLS = "cannula_walls.csv"
CANNULA_DEFAULTS = "cannula_defaults.yaml"


@dataclass(frozen=True)
class CannulaFlow:
    """Flow through a cannula and how it was obtained.

    Attributes
    ----------
    flow_ml_min : float
        Volume flow [mL/min].
    reynolds : float
        Reynolds number at that flow [-].
    regime : {"laminar", "transitional", "turbulent"}
        By the Reynolds number (laminar below 2,300, turbulent from 4,000).
    inner_mm : float
        Inner diameter used [mm].
    velocity_m_s : float
        Mean velocity [m/s].
    friction_factor : float
        Darcy friction factor at that flow [-].
    assumptions : list of str
        Every assumption behind the figure.
    inner_assumed : bool
        True when the inner diameter is not a measurement (wall table or sheath label).
    line_mm, line_cm : float or None
        Inner diameter [mm] and length [cm] of the connecting line in series, if any.
    line_reynolds : float or None
        Reynolds number in that line [-].
    above_typical : bool
        True when the flow is above what is usually measured through such a cannula
        (``typical_flow_ml_min_high`` of ``data/sizing/cannula_defaults.yaml``).
    """

    flow_ml_min: float
    reynolds: float
    regime: flow.Regime
    inner_mm: float
    velocity_m_s: float
    friction_factor: float
    assumptions: list[str] = field(default_factory=list)
    inner_assumed: bool = False
    line_mm: float | None = None
    line_cm: float | None = None
    line_reynolds: float | None = None
    above_typical: bool = False


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
    fr = np.array([float(r["outer_fr"]) for r in rows])
    wall = np.array([float(r["wall_mm"]) for r in rows])
    certainty = " and ".join(sorted({r["certainty"] for r in rows}))
    return float(np.interp(outer_fr, fr, wall)), f"cannula wall table ({certainty})"


def cannula_inner_mm(
    size_fr: float, label: Literal["outer", "inner"] = "outer", inner_mm: float | None = None
) -> tuple[float, str | None]:
    """Inner diameter of a cannula or sheath used as one, with the assumption if any.

    Parameters
    ----------
    size_fr : float
        Label [Fr].
    label : {"outer", "inner"}
        ``"outer"`` for a cannula or catheter (the default), ``"inner"`` for an
        introducer sheath used as a perfusion line (its label is its inner size).
    inner_mm : float, optional
        Measured or maker's inner diameter [mm], used as is.

    Returns
    -------
    (float, str or None)
        Inner diameter [mm] and the assumption sentence (None for a measurement).

    Examples
    --------
    >>> cannula_inner_mm(6, "inner")[0]
    2.0
    >>> round(cannula_inner_mm(6)[0], 3)   # 2.0 mm outer minus two 0.2 mm walls
    1.6
    """
    size_fr = float(size_fr)
    if not math.isfinite(size_fr) or size_fr <= 0.0:
        raise ValueError(f"size_fr must be a positive number, got {size_fr}")
    if inner_mm is not None:
        if not math.isfinite(inner_mm) or inner_mm <= 0.0:
            raise ValueError(f"inner_mm must be a positive number, got {inner_mm}")
        return float(inner_mm), None
    if label == "inner":
        mm = size_fr * MM_PER_FR
        return mm, (
            f"{size_fr:g} Fr sheath used as the perfusion line: inner diameter {mm:.2f} mm "
            "taken from its label (a sheath's nominal size is its minimum inner diameter, "
            "ISO 11070:2014 7.2)."
        )
    if label != "outer":
        raise ValueError(f"label must be 'outer' or 'inner', got {label!r}")
    wall, basis = cannula_wall_mm(size_fr)
    mm = size_fr * MM_PER_FR - 2.0 * wall
    if mm <= 0.0:
        raise ValueError(f"a {size_fr:g} Fr cannula has no lumen with a {wall:.2f} mm wall")
    return mm, (
        f"{size_fr:g} Fr cannula (labelled by outer size): inner diameter {mm:.2f} mm assumed "
        f"= {size_fr * MM_PER_FR:.2f} mm outer minus two {wall:.2f} mm walls from the {basis}; "
        "give the maker's inner diameter when known."
    )


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


def cannula_flow(
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
) -> CannulaFlow:
    """Flow through a distal perfusion cannula driven by a pressure difference.

    Parameters
    ----------
    size_fr : float
        Cannula label [Fr].
    length_cm : float
        Length of the cannula [cm].
    driving_mmhg : float
        Pressure difference driving the flow [mmHg] (return-line minus distal arterial).
    label : {"outer", "inner"}
        How the size is labelled (see :func:`cannula_inner_mm`).
    inner_mm : float, optional
        Measured inner diameter [mm].
    viscosity_pa_s, density_kg_m3 : float, optional
        Blood properties; defaults from ``data/sizing/blood.yaml``.
    minor_k : float, optional
        Sum of entrance and exit loss coefficients [-]; default from
        ``data/sizing/cannula_defaults.yaml`` (0.5 + 1.0).
    roughness_mm : float, optional
        Wall roughness [mm]; default smooth.
    line_mm, line_cm : float, optional
        Inner diameter [mm] and length [cm] of a connecting line (side-arm, extension
        tubing, connector) in series upstream of the cannula; both or neither.

    Returns
    -------
    CannulaFlow

    Raises
    ------
    ValueError
        A size, length or pressure that is not a positive number, or a line only
        partly described.

    Notes
    -----
    Steady flow; laminar flow enters each tube with a uniform profile and develops
    along it (Shah 1978, :func:`vascplan.sizing.flow.laminar_entry_k`); straight tubes
    without kinks. Unless a line is given, no connector, stopcock or side-port is
    counted, so the flow is an upper estimate.

    Examples
    --------
    >>> res = cannula_flow(7, 15, 150)
    >>> res.regime in ("laminar", "transitional", "turbulent"), res.flow_ml_min > 0
    (True, True)
    """
    from scipy.optimize import brentq

    length_cm = positive("length_cm", length_cm)
    driving_mmhg = positive("driving_mmhg", driving_mmhg)
    if (line_mm is None) != (line_cm is None):
        raise ValueError("a connecting line needs both line_mm and line_cm")
    if line_mm is not None and line_cm is not None:
        line_mm = positive("line_mm", line_mm)
        line_cm = positive("line_cm", line_cm)
    d_mm, inner_note = cannula_inner_mm(size_fr, label, inner_mm)
    assumptions: list[str] = [inner_note] if inner_note else []
    blood = flow.blood_defaults()
    extra = cannula_defaults()

    def pick(value: float | None, name: str, table: dict[str, ReferenceValue], what: str):
        if value is not None:
            if not math.isfinite(value) or value < 0.0:
                raise ValueError(f"{name} must be a number >= 0, got {value}")
            return float(value)
        ref = table[name]
        assumptions.append(
            f"{what} {ref.value:g} {ref.unit} is a reference default, not a measurement: "
            f"{ref.cite()}."
        )
        return ref.value

    mu = pick(viscosity_pa_s, "viscosity_pa_s", blood, "Blood viscosity")
    rho = pick(density_kg_m3, "density_kg_m3", blood, "Blood density")
    if minor_k is None:
        k_in, k_out = extra["entrance_k"], extra["exit_k"]
        k_entrance, k_exit = k_in.value, k_out.value
        assumptions.append(
            f"Entrance loss K {k_in.value:g} ({k_in.cite()}) and exit loss K "
            f"{k_out.value:g} ({k_out.cite()})."
        )
    else:
        total = pick(minor_k, "minor_k", extra, "Minor losses")
        k_entrance, k_exit = 0.0, total
    rough = pick(roughness_mm, "roughness_mm", extra, "Wall roughness")
    if mu <= 0.0 or rho <= 0.0:
        raise ValueError("viscosity_pa_s and density_kg_m3 must be positive")
    assumptions.append(
        "Steady flow entering each tube with a uniform profile; the extra loss of laminar "
        "flow still developing along a short tube is counted (Shah, J Fluids Eng "
        "1978;100:177; from memory); straight tubes without kinks."
    )

    # Tubes in flow order: (diameter m, length m, relative roughness).
    tubes: list[tuple[float, float, float]] = []
    if line_mm is not None and line_cm is not None:
        tubes.append((line_mm * 1e-3, line_cm * 1e-2, rough / line_mm))
        k_joint = junction_k(line_mm, d_mm)
        assumptions.append(
            f"Connecting line {line_mm:g} mm x {line_cm:g} cm in series upstream of the "
            f"cannula, joined by a sharp change of bore (K {k_joint:.2f} on the cannula's "
            "velocity; Rennels and Hudson 2012 contraction, Borda-Carnot expansion)."
        )
    else:
        k_joint = 0.0
        assumptions.append(
            "No connecting line, side-arm, stopcock or connector is counted (describe one "
            "as a connecting line, --line-mm and --line-cm): each lowers the flow, so the "
            "figure is an upper estimate; the driving pressure is taken as given."
        )
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
    regime = flow.regime_of(re)
    rel = rough / d_mm
    if regime == "transitional":
        assumptions.append(
            f"Re {re:.0f} is in the transitional range ({flow.LAMINAR_MAX_RE:.0f}-"
            f"{flow.TURBULENT_MIN_RE:.0f}): the friction factor there is interpolated and "
            "the flow less certain."
        )
    line_re = None
    if line_mm is not None:
        line_d = line_mm * 1e-3
        line_re = flow.reynolds(q / (math.pi * line_d * line_d / 4.0), line_d, rho, mu)
    flow_ml_min = q * 60e6
    typical = extra["typical_flow_ml_min_high"]
    # The typical range is for the 5-10 Fr cannulas used for distal perfusion
    # (REFERENCES.md, Limb ischaemia); larger tubes are not compared with it.
    above = flow_ml_min > typical.value and float(size_fr) <= 10.0
    if above:
        assumptions.append(
            f"The computed {flow_ml_min:.0f} mL/min is above the {typical.value:g} mL/min or "
            f"so usually measured through a 6-8 Fr distal perfusion cannula ({typical.cite()}): "
            "the driving pressure is taken as given (the pressure at the take-off is often "
            "lower than the return-line pressure), and connectors, stopcocks and side-ports "
            "are not counted unless described; read the figure as an upper estimate."
        )
    return CannulaFlow(
        flow_ml_min=flow_ml_min,
        reynolds=re,
        regime=regime,
        inner_mm=d_mm,
        velocity_m_s=velocity,
        friction_factor=flow.darcy_friction(re, rel),
        assumptions=assumptions,
        inner_assumed=inner_note is not None,
        line_mm=line_mm,
        line_cm=line_cm,
        line_reynolds=line_re,
        above_typical=above,
    )
