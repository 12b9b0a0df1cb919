"""Steady flow of blood through a tube and round a device: resistances, Reynolds, friction.

Units are SI inside this module (metres, pascals, m3/s, Pa s); the limb and cannula
modules take clinical units and convert. Blood is treated as a Newtonian fluid with
the defaults of ``data/sizing/blood.yaml`` (3.5 mPa s, 1,060 kg/m3; Hund, Kameneva
and Antaki, Fluids 2017;2:10; common practice).

Flow *factors* are dimensionless: the flow of a cross-section over the Hagen-Poiseuille
flow of the open tube with the same outer radius, pressure gradient and viscosity.

References
----------
Bird, Stewart and Lightfoot, *Transport Phenomena*, 2nd ed., Wiley 2002, ch. 2:
Hagen-Poiseuille (eq. 2.3-21) and the concentric annulus (eq. 2.4-17).
Colebrook, J Inst Civil Eng 1939;11:133 (turbulent friction factor).
"""

from __future__ import annotations

import math
from typing import Literal

from vascplan.sizing.concentric import (  # re-exported: flow.concentric_annulus_factor
    concentric_annulus_factor as concentric_annulus_factor,
)
from vascplan.sizing.eccentric import eccentric_annulus_factor, touching_annulus_factor
from vascplan.sizing.tables import ReferenceValue, positive, read_values

Regime = Literal["laminar", "transitional", "turbulent"]

LAMINAR_MAX_RE = 2300.0
"""Upper Reynolds number of laminar pipe flow used here (common practice: 2,000-2,300;
the ``fluids`` library switches at 2,040)."""

TURBULENT_MIN_RE = 4000.0
"""Lower Reynolds number of fully turbulent pipe flow used here (common practice)."""

MMHG_PA = 133.322387415
"""One millimetre of mercury [Pa] (conventional value, 13.5951 g/cm3 x 9.80665 m/s2 x 1 mm)."""


def blood_defaults() -> dict[str, ReferenceValue]:
    """Viscosity and density defaults with their sources (``data/sizing/blood.yaml``)."""
    return read_values("blood.yaml")


def default_viscosity_pa_s() -> float:
    """Default blood viscosity [Pa s]."""
    return blood_defaults()["viscosity_pa_s"].value


def default_density_kg_m3() -> float:
    """Default blood density [kg/m3]."""
    return blood_defaults()["density_kg_m3"].value


def tube_resistance(diameter_m: float, length_m: float, viscosity_pa_s: float) -> float:
    """Hagen-Poiseuille resistance of a straight tube, laminar and fully developed.

    Parameters
    ----------
    diameter_m : float
        Inner diameter [m].
    length_m : float
        Length [m].
    viscosity_pa_s : float
        Dynamic viscosity [Pa s].

    Returns
    -------
    float
        Pressure drop over volume flow, ``128 mu L / (pi D**4)`` [Pa s/m3]
        (Bird, Stewart and Lightfoot, 2nd ed., eq. 2.3-21).

    Examples
    --------
    >>> round(tube_resistance(0.002, 0.1, 0.0035) / 1e9, 4)
    0.8913
    """
    d = positive("diameter_m", diameter_m)
    return (
        128.0
        * positive("viscosity_pa_s", viscosity_pa_s)
        * positive("length_m", length_m)
        / (math.pi * d**4)
    )


def annulus_factor(kappa: float, eccentricity: float) -> float:
    """Flow factor of an annulus: closed form when concentric, numerical otherwise.

    Parameters
    ----------
    kappa : float
        Inner radius over outer radius [-].
    eccentricity : float
        0 concentric, 1 the inner tube lying against the wall [-].

    Returns
    -------
    float
        Annulus flow over the open-tube flow [-].
    """
    if eccentricity == 0.0:
        return concentric_annulus_factor(kappa)
    if eccentricity == 1.0:
        return touching_annulus_factor(kappa)
    return eccentric_annulus_factor(kappa, eccentricity)


def annulus_resistance(
    outer_diameter_m: float,
    inner_diameter_m: float,
    length_m: float,
    viscosity_pa_s: float,
    eccentricity: float = 0.0,
) -> float:
    """Resistance of the annulus between a vessel and a device in it.

    Parameters
    ----------
    outer_diameter_m : float
        Vessel lumen diameter [m].
    inner_diameter_m : float
        Device outer diameter [m]; must be smaller than the lumen.
    length_m : float
        Occupied length [m].
    viscosity_pa_s : float
        Dynamic viscosity [Pa s].
    eccentricity : float
        0 concentric (lower flow bound), 1 touching (upper bound) [-].

    Returns
    -------
    float
        Pressure drop over volume flow [Pa s/m3].
    """
    outer = positive("outer_diameter_m", outer_diameter_m)
    inner = float(inner_diameter_m)
    if not 0.0 <= inner < outer:
        raise ValueError("the device must be smaller than the lumen for an annulus")
    factor = annulus_factor(inner / outer, eccentricity)
    return tube_resistance(outer, length_m, viscosity_pa_s) / factor


def reynolds(
    velocity_m_s: float, diameter_m: float, density_kg_m3: float, viscosity_pa_s: float
) -> float:
    """Reynolds number ``rho V D / mu`` [-].

    Parameters
    ----------
    velocity_m_s : float
        Mean velocity [m/s].
    diameter_m : float
        Inner (or hydraulic) diameter [m].
    density_kg_m3 : float
        Density [kg/m3].
    viscosity_pa_s : float
        Dynamic viscosity [Pa s].

    Examples
    --------
    >>> round(reynolds(1.0, 0.002, 1060.0, 0.0035), 1)
    605.7
    """
    return abs(velocity_m_s) * diameter_m * density_kg_m3 / viscosity_pa_s


def regime_of(re: float) -> Regime:
    """Laminar, transitional or turbulent by the Reynolds number.

    Examples
    --------
    >>> regime_of(1000), regime_of(3000), regime_of(10000)
    ('laminar', 'transitional', 'turbulent')
    """
    if re < LAMINAR_MAX_RE:
        return "laminar"
    if re < TURBULENT_MIN_RE:
        return "transitional"
    return "turbulent"


def colebrook_friction(re: float, relative_roughness: float = 0.0) -> float:
    """Darcy friction factor of turbulent pipe flow, Colebrook equation solved exactly.

    ``1/sqrt(f) = -2 log10(eps/(3.7 D) + 2.51/(Re sqrt(f)))`` (Colebrook, J Inst Civil
    Eng 1939;11:133), solved for ``f`` with Brent's method.

    Parameters
    ----------
    re : float
        Reynolds number [-], positive.
    relative_roughness : float
        Wall roughness over diameter [-]; 0 for a smooth tube.

    Returns
    -------
    float
        Darcy friction factor [-].

    Examples
    --------
    >>> round(colebrook_friction(1e5), 4)
    0.018
    """
    from scipy.optimize import brentq

    re = positive("re", re)
    if relative_roughness < 0.0:
        raise ValueError("relative_roughness must be >= 0")

    def residual(x: float) -> float:  # x = 1/sqrt(f)
        return x + 2.0 * math.log10(relative_roughness / 3.7 + 2.51 * x / re)

    x = brentq(residual, 0.5, 200.0, xtol=1e-14, rtol=1e-14)
    return 1.0 / (x * x)


def darcy_friction(re: float, relative_roughness: float = 0.0) -> float:
    """Darcy friction factor in any regime.

    Parameters
    ----------
    re : float
        Reynolds number [-], positive.
    relative_roughness : float
        Wall roughness over diameter [-].

    Returns
    -------
    float
        ``64/Re`` when laminar (Re < 2,300); Colebrook when turbulent (Re >= 4,000);
        between them a straight line in Re from the laminar value at 2,300 to the
        Colebrook value at 4,000 (common practice: the transition is not predictable,
        the line keeps the pressure drop continuous and increasing with flow).

    Examples
    --------
    >>> darcy_friction(640.0)
    0.1
    """
    re = positive("re", re)
    if re < LAMINAR_MAX_RE:
        return 64.0 / re
    if re >= TURBULENT_MIN_RE:
        return colebrook_friction(re, relative_roughness)
    f_low = 64.0 / LAMINAR_MAX_RE
    f_high = colebrook_friction(TURBULENT_MIN_RE, relative_roughness)
    t = (re - LAMINAR_MAX_RE) / (TURBULENT_MIN_RE - LAMINAR_MAX_RE)
    return f_low + t * (f_high - f_low)


SHAH_K_INFINITY = 1.25
"""Incremental pressure-drop number of a long tube with laminar flow entering uniform [-]
(Shah, J Fluids Eng 1978;100:177; Shah and London 1978; from memory)."""


def laminar_entry_k(length_over_diameter: float, re: float) -> float:
    """Extra loss of laminar flow still developing from a uniform entry profile.

    Shah's correlation for the apparent Fanning friction factor of a circular tube
    (Shah, "A correlation for laminar hydrodynamic entry length solutions for circular
    and noncircular ducts", J Fluids Eng 1978;100:177-179; from memory; stated within
    about 2 % of the full solutions):

    ``f_app Re = 3.44 / sqrt(x) + (K / (4 x) + 16 - 3.44 / sqrt(x)) / (1 + 0.00021 / x**2)``

    with ``x = L / (D Re)`` and ``K`` = :data:`SHAH_K_INFINITY`. Returned as the
    loss over and above fully developed flow, ``4 f_app L / D - 64 / Re * L / D``, in
    velocity heads ``rho V**2 / 2``.

    Parameters
    ----------
    length_over_diameter : float
        Tube length over inner diameter [-], positive.
    re : float
        Reynolds number [-], positive; the correlation is for laminar flow.

    Returns
    -------
    float
        Extra loss coefficient [-]: near 0 when the flow has no length to develop in,
        tending to 1.25 in a long tube. The tests check it against a numerical
        solution of the developing flow.

    Examples
    --------
    >>> round(laminar_entry_k(1e6, 100.0), 3)   # long tube: the whole increment
    1.25
    """
    lod = positive("length_over_diameter", length_over_diameter)
    x = lod / positive("re", re)
    root = math.sqrt(x)
    f_app_re = 3.44 / root + (SHAH_K_INFINITY / (4.0 * x) + 16.0 - 3.44 / root) / (
        1.0 + 0.00021 / (x * x)
    )
    return 4.0 * (f_app_re - 16.0) * x


def pipe_pressure_drop(
    flow_m3_s: float,
    diameter_m: float,
    length_m: float,
    *,
    density_kg_m3: float,
    viscosity_pa_s: float,
    relative_roughness: float = 0.0,
    minor_k: float = 0.0,
    developing: bool = False,
) -> float:
    """Pressure drop of a flow through a tube, friction plus minor losses.

    ``dp = (f L / D + K + K_entry) rho V**2 / 2`` with ``f`` from
    :func:`darcy_friction` (Darcy-Weisbach) and ``K_entry`` the laminar entry loss
    (:func:`laminar_entry_k`) when ``developing``.

    Parameters
    ----------
    flow_m3_s : float
        Volume flow [m3/s], >= 0.
    diameter_m, length_m : float
        Inner diameter and length [m].
    density_kg_m3 : float
        Density [kg/m3].
    viscosity_pa_s : float
        Dynamic viscosity [Pa s].
    relative_roughness : float
        Roughness over diameter [-].
    minor_k : float
        Sum of minor-loss coefficients (entrance, exit) [-].
    developing : bool
        Add the loss of laminar flow developing from a uniform profile at the tube's
        entry. Above Re 2,300 the value at Re 2,300 is kept (conservative: turbulent
        flow develops within a few diameters with a smaller extra loss), which keeps
        the pressure drop continuous and increasing with the flow.

    Returns
    -------
    float
        Pressure drop [Pa].
    """
    if flow_m3_s <= 0.0:
        return 0.0
    area = math.pi * diameter_m**2 / 4.0
    velocity = flow_m3_s / area
    re = reynolds(velocity, diameter_m, density_kg_m3, viscosity_pa_s)
    f = darcy_friction(re, relative_roughness)
    k = minor_k
    if developing:
        k += laminar_entry_k(length_m / diameter_m, min(re, LAMINAR_MAX_RE))
    return (f * length_m / diameter_m + k) * density_kg_m3 * velocity**2 / 2.0
