"""Flow through a distal perfusion cannula, in numbers and in words.

:func:`cannula_flow` is :func:`~vascplan.sizing.cannula_solver.solve_cannula` (the
numbers: the physics and its references are in that module) with
:func:`cannula_assumptions` (the sentences: every assumption behind the figure, each
reference default with its source).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Literal

from vascplan.sizing import flow
from vascplan.sizing.cannula_solver import (
    CANNULA_DEFAULTS,
    CANNULA_WALLS,
    CannulaSolution,
    InnerDiameter,
    cannula_defaults,
    cannula_wall_mm,
    inner_diameter,
    junction_k,
    solve_cannula,
)
from vascplan.sizing.french import MM_PER_FR

__all__ = [
    "CANNULA_DEFAULTS",
    "CANNULA_WALLS",
    "CannulaFlow",
    "CannulaSolution",
    "InnerDiameter",
    "cannula_assumptions",
    "cannula_defaults",
    "cannula_flow",
    "cannula_inner_mm",
    "cannula_wall_mm",
    "inner_diameter",
    "inner_note",
    "junction_k",
    "solve_cannula",
]


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


def inner_note(inner: InnerDiameter) -> str | None:
    """The assumption sentence behind an inner diameter (None for a measurement)."""
    size_fr, mm = inner.size_fr, inner.mm
    if inner.source == "measured":
        return None
    if inner.source == "sheath-label":
        return (
            f"{size_fr:g} Fr sheath used as the perfusion line: inner diameter {mm:.2f} mm "
            "taken from its label (a sheath's nominal size is its minimum inner diameter, "
            "ISO 11070:2014 7.2)."
        )
    return (
        f"{size_fr:g} Fr cannula (labelled by outer size): inner diameter {mm:.2f} mm assumed "
        f"= {size_fr * MM_PER_FR:.2f} mm outer minus two {inner.wall_mm:.2f} mm walls from "
        f"the {inner.wall_basis}; give the maker's inner diameter when known."
    )


def cannula_inner_mm(
    size_fr: float, label: Literal["outer", "inner"] = "outer", inner_mm: float | None = None
) -> tuple[float, str | None]:
    """Inner diameter of a cannula or sheath used as one, with the assumption if any.

    :func:`inner_diameter` (the number) and :func:`inner_note` (the sentence) together.

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
    inner = inner_diameter(size_fr, label, inner_mm)
    return inner.mm, inner_note(inner)


_DEFAULT_WHAT = {
    "viscosity_pa_s": "Blood viscosity",
    "density_kg_m3": "Blood density",
    "roughness_mm": "Wall roughness",
}


def cannula_assumptions(sol: CannulaSolution) -> list[str]:
    """Every assumption behind a :class:`CannulaSolution`, as sentences, in order.

    Parameters
    ----------
    sol : CannulaSolution

    Returns
    -------
    list of str
        The inner diameter's basis, each reference default with its source, the
        minor losses, the flow model, the connecting line (or its absence), a
        transitional Reynolds number and a flow above the usual range.
    """
    out: list[str] = []
    note = inner_note(sol.inner)
    if note:
        out.append(note)

    def default(name: str) -> None:
        ref = sol.defaults.get(name)
        if ref is not None:
            out.append(
                f"{_DEFAULT_WHAT[name]} {ref.value:g} {ref.unit} is a reference default, "
                f"not a measurement: {ref.cite()}."
            )

    default("viscosity_pa_s")
    default("density_kg_m3")
    if sol.entrance_exit is not None:
        k_in, k_out = sol.entrance_exit
        out.append(
            f"Entrance loss K {k_in.value:g} ({k_in.cite()}) and exit loss K "
            f"{k_out.value:g} ({k_out.cite()})."
        )
    default("roughness_mm")
    out.append(
        "Steady flow entering each tube with a uniform profile; the extra loss of laminar "
        "flow still developing along a short tube is counted (Shah, J Fluids Eng "
        "1978;100:177; from memory); straight tubes without kinks."
    )
    if sol.line_mm is not None:
        out.append(
            f"Connecting line {sol.line_mm:g} mm x {sol.line_cm:g} cm in series upstream of "
            f"the cannula, joined by a sharp change of bore (K {sol.junction_k:.2f} on the "
            "cannula's velocity; Rennels and Hudson 2012 contraction, Borda-Carnot expansion)."
        )
    else:
        out.append(
            "No connecting line, side-arm, stopcock or connector is counted (describe one "
            "as a connecting line, --line-mm and --line-cm): each lowers the flow, so the "
            "figure is an upper estimate; the driving pressure is taken as given."
        )
    if sol.regime == "transitional":
        out.append(
            f"Re {sol.reynolds:.0f} is in the transitional range ({flow.LAMINAR_MAX_RE:.0f}-"
            f"{flow.TURBULENT_MIN_RE:.0f}): the friction factor there is interpolated and "
            "the flow less certain."
        )
    if sol.above_typical:
        typical = sol.typical_high
        out.append(
            f"The computed {sol.flow_ml_min:.0f} mL/min is above the {typical.value:g} mL/min "
            f"or so usually measured through a 6-8 Fr distal perfusion cannula "
            f"({typical.cite()}): the driving pressure is taken as given (the pressure at the "
            "take-off is often lower than the return-line pressure), and connectors, "
            "stopcocks and side-ports are not counted unless described; read the figure as "
            "an upper estimate."
        )
    return out


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
        The numbers of :func:`solve_cannula` with the sentences of
        :func:`cannula_assumptions`.

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
    sol = solve_cannula(
        size_fr,
        length_cm,
        driving_mmhg,
        label=label,
        inner_mm=inner_mm,
        viscosity_pa_s=viscosity_pa_s,
        density_kg_m3=density_kg_m3,
        minor_k=minor_k,
        roughness_mm=roughness_mm,
        line_mm=line_mm,
        line_cm=line_cm,
    )
    return CannulaFlow(
        flow_ml_min=sol.flow_ml_min,
        reynolds=sol.reynolds,
        regime=sol.regime,
        inner_mm=sol.inner.mm,
        velocity_m_s=sol.velocity_m_s,
        friction_factor=sol.friction_factor,
        assumptions=cannula_assumptions(sol),
        inner_assumed=sol.inner.source != "measured",
        line_mm=sol.line_mm,
        line_cm=sol.line_cm,
        line_reynolds=sol.line_reynolds,
        above_typical=sol.above_typical,
    )
