"""The leg with a device in its artery: how much of the resting flow still reaches it.

Model (steady, Newtonian, rigid vessel): the leg's vascular bed is one resistance set
from a resting limb flow and a perfusion pressure, ``R_total = P / Q``. The stretch of
artery the device occupies is, at baseline, an open tube (Hagen-Poiseuille); with the
device in place it is an annulus. So with the device the resistance is
``R_total - R_open + R_annulus`` at the same perfusion pressure, and the distal flow is
``100 * R_total / (R_total - R_open + R_annulus)`` percent of baseline. The concentric
annulus gives the lowest flow, the device lying against the wall the highest; the
truth for a straight device lies between.

The perfusion pressure is the mean arterial pressure (MAP) minus the venous pressure:
the patient's MAP when given, otherwise a default by device kind (a patient in shock on
VA-ECMO is not at a resting 90 mmHg), both from ``data/sizing/limb_defaults.yaml``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

from vascplan.sizing import flow
from vascplan.sizing.tables import ReferenceValue, SizingValueError, positive, read_values

LIMB_DEFAULTS = "limb_defaults.yaml"


def limb_defaults() -> dict[str, ReferenceValue]:
    """Resting limb flow, pressures and occupied length (``data/sizing/limb_defaults.yaml``)."""
    return read_values(LIMB_DEFAULTS)


@dataclass(frozen=True)
class PerfusionPressure:
    """The pressure across the limb's bed, and where each part of it comes from.

    Attributes
    ----------
    perfusion_mmhg : float
        Mean arterial minus venous pressure [mmHg].
    mean_arterial_mmhg, venous_mmhg : float
        The two pressures used [mmHg].
    map_assumed : bool
        True when the MAP is a reference default, not the patient's (flag it ``*``).
    basis : str
        One sentence naming the figures and their sources.
    """

    perfusion_mmhg: float
    mean_arterial_mmhg: float
    venous_mmhg: float
    map_assumed: bool
    basis: str


def default_map(device_kind: str | None = None) -> ReferenceValue:
    """The default mean arterial pressure for a device kind, else the general one.

    Examples
    --------
    >>> default_map("va-ecmo-arterial").value, default_map("balloon-pump").value
    (65.0, 90.0)
    """
    table = limb_defaults()
    if device_kind is not None:
        key = "mean_arterial_mmhg_" + device_kind.replace("-", "_")
        if key in table:
            return table[key]
    return table["mean_arterial_mmhg"]


def perfusion_pressure(
    mean_arterial_mmhg: float | None = None, device_kind: str | None = None
) -> PerfusionPressure:
    """Perfusion pressure across the limb: the MAP minus the venous pressure.

    Parameters
    ----------
    mean_arterial_mmhg : float, optional
        The patient's mean arterial pressure [mmHg]; default by ``device_kind``.
    device_kind : str, optional
        ``va-ecmo-arterial``, ``microaxial-pump``, ``balloon-pump`` or
        ``large-bore-sheath``: chooses the default MAP when none is given.

    Returns
    -------
    PerfusionPressure

    Raises
    ------
    ValueError
        A MAP not above the venous pressure.

    Notes
    -----
    Perfusion pressure = MAP - venous pressure (the pressure drop across a vascular bed;
    common practice). Defaults and their sources: ``data/sizing/limb_defaults.yaml``.

    Examples
    --------
    >>> perfusion_pressure(device_kind="va-ecmo-arterial").perfusion_mmhg
    55.0
    >>> perfusion_pressure(75).perfusion_mmhg
    65.0
    """
    table = limb_defaults()
    venous = table["venous_mmhg"]
    if mean_arterial_mmhg is not None:
        map_mmhg, assumed = positive("mean_arterial_mmhg", mean_arterial_mmhg), False
        map_text = f"the patient's mean arterial pressure {map_mmhg:g} mmHg"
    else:
        ref = default_map(device_kind)
        map_mmhg, assumed = ref.value, True
        general = ref is table["mean_arterial_mmhg"]
        who = f" for {device_kind}" if device_kind and not general else ""
        map_text = (
            f"mean arterial pressure {map_mmhg:g} mmHg{who} is a reference default, not the "
            f"patient's: {ref.cite()}"
        )
    if map_mmhg <= venous.value:
        raise SizingValueError(
            "mean_arterial_mmhg",
            f"mean arterial pressure {map_mmhg:g} mmHg is not above the venous pressure "
            f"{venous.value:g} mmHg: no pressure would drive the limb's flow",
        )
    perfusion = map_mmhg - venous.value
    basis = (
        f"Perfusion pressure {perfusion:g} mmHg = {map_text}, minus venous pressure "
        f"{venous.value:g} mmHg ({venous.cite()})."
    )
    return PerfusionPressure(perfusion, map_mmhg, venous.value, assumed, basis)


@dataclass(frozen=True)
class LimbFlowEstimate:
    """Distal flow with a device in the artery, as a range, with its assumptions.

    Attributes
    ----------
    vessel_mm, device_od_mm : float
        Lumen diameter of the artery and outer diameter of the device [mm].
    occupied_cm : float
        Length of artery the device occupies [cm].
    lumen_left_mm2 : float
        Cross-section left round the device [mm2].
    lumen_left_pct : float
        The same as a percentage of the open lumen [%].
    distal_flow_pct_concentric, distal_flow_pct_eccentric : float
        Distal flow as a percentage of the baseline, device centred (lower bound) and
        device against the wall (upper bound) [%].
    distal_flow_ml_min_concentric, distal_flow_ml_min_eccentric : float
        The same in absolute terms [mL/min].
    baseline_flow_ml_min, perfusion_mmhg : float
        The resting limb flow and perfusion pressure used.
    annulus_reynolds_max : float
        Reynolds number of the flow round the device (eccentric case, hydraulic
        diameter = lumen minus device) [-]; the model holds while it is laminar.
    assumptions : list of str
        Every assumption behind the figures, to show the user.
    defaults_used : tuple of str
        Names of the parameters taken from reference defaults instead of the caller
        (``limb_flow_ml_min``, ``perfusion_mmhg``, ``viscosity_pa_s``, ``density_kg_m3``);
        mark the flow figures as reference-based when it is not empty.
    """

    vessel_mm: float
    device_od_mm: float
    occupied_cm: float
    lumen_left_mm2: float
    lumen_left_pct: float
    distal_flow_pct_concentric: float
    distal_flow_pct_eccentric: float
    distal_flow_ml_min_concentric: float
    distal_flow_ml_min_eccentric: float
    baseline_flow_ml_min: float
    perfusion_mmhg: float
    annulus_reynolds_max: float
    assumptions: list[str] = field(default_factory=list)
    defaults_used: tuple[str, ...] = ()


def limb_flow_with_device(
    vessel_mm: float,
    device_od_mm: float,
    occupied_cm: float,
    *,
    limb_flow_ml_min: float | None = None,
    perfusion_mmhg: float | None = None,
    viscosity_pa_s: float | None = None,
    density_kg_m3: float | None = None,
    mean_arterial_mmhg: float | None = None,
    device_kind: str | None = None,
) -> LimbFlowEstimate:
    """Estimate the flow reaching the leg past a device in its artery.

    Parameters
    ----------
    vessel_mm : float
        Lumen diameter of the artery where the device lies (the MLD of the stretch) [mm].
    device_od_mm : float
        Outer diameter of the device [mm] (see :func:`vascplan.sizing.french.device_outer_mm`).
    occupied_cm : float
        Length of artery the device occupies [cm].
    limb_flow_ml_min : float, optional
        Resting limb flow at baseline [mL/min]; default from ``limb_defaults.yaml``.
    perfusion_mmhg : float, optional
        Arterial minus venous pressure across the leg [mmHg]; when not given, the
        ``mean_arterial_mmhg`` minus the venous default (:func:`perfusion_pressure`).
    viscosity_pa_s : float, optional
        Blood viscosity [Pa s]; default from ``blood.yaml``.
    density_kg_m3 : float, optional
        Blood density [kg/m3], for the Reynolds check only; default from ``blood.yaml``.
    mean_arterial_mmhg : float, optional
        The patient's mean arterial pressure [mmHg], when ``perfusion_mmhg`` is not given;
        default by ``device_kind``.
    device_kind : str, optional
        Chooses the default mean arterial pressure (``va-ecmo-arterial``: shock).

    Returns
    -------
    LimbFlowEstimate

    Raises
    ------
    ValueError
        A size, length, flow or pressure that is not a positive number, or a bed
        resistance smaller than that of the open stretch itself.

    Notes
    -----
    Steady laminar Newtonian flow in a rigid straight artery; no collaterals (all leg
    flow passes the device, which makes the estimate pessimistic); the bed resistance
    does not change (no autoregulation); entrance effects at the ends of the annulus
    are neglected; flow through the device itself is not counted. When the device is
    as large as the lumen or larger, no flow passes round it (lumen left 0, flow 0).

    Examples
    --------
    >>> est = limb_flow_with_device(6.5, 17 / 3, 15)
    >>> est.distal_flow_pct_concentric < est.distal_flow_pct_eccentric < 100
    True
    >>> limb_flow_with_device(6.0, 6.0, 10).distal_flow_pct_eccentric
    0.0
    """
    vessel_mm = positive("vessel_mm", vessel_mm)
    device_od_mm = positive("device_od_mm", device_od_mm)
    occupied_cm = positive("occupied_cm", occupied_cm)
    defaults = limb_defaults()
    blood = flow.blood_defaults()
    assumptions: list[str] = [
        "Blood as a Newtonian fluid in steady laminar flow through a rigid straight "
        "artery; pulsation, collaterals and autoregulation are ignored (no collaterals "
        "makes the estimate pessimistic).",
        "The leg's vascular bed is one resistance, perfusion pressure over resting limb "
        "flow, unchanged by the device; the device's stretch is an annulus in series.",
        "Distal flow range: device centred in the artery (lower) to device lying "
        "against the wall (upper).",
        "The occupied stretch is a uniform tube of the given lumen diameter, with and "
        "without the device; entrance effects at its ends are neglected.",
    ]
    defaults_used: list[str] = []

    def pick(value: float | None, name: str, table: dict[str, ReferenceValue], label: str):
        if value is not None:
            return positive(name, value)
        ref = table[name]
        defaults_used.append(name)
        assumptions.append(
            f"{label} {ref.value:g} {ref.unit} is a reference default, not a measurement: "
            f"{ref.cite()}."
        )
        return ref.value

    q_base_ml_min = pick(limb_flow_ml_min, "limb_flow_ml_min", defaults, "Resting limb flow")
    if perfusion_mmhg is not None:
        p_mmhg = positive("perfusion_mmhg", perfusion_mmhg)
    else:
        pressure = perfusion_pressure(mean_arterial_mmhg, device_kind)
        p_mmhg = pressure.perfusion_mmhg
        assumptions.append(pressure.basis)
        defaults_used.append("perfusion_mmhg" if pressure.map_assumed else "venous_mmhg")
    mu = pick(viscosity_pa_s, "viscosity_pa_s", blood, "Blood viscosity")
    rho = pick(density_kg_m3, "density_kg_m3", blood, "Blood density")

    open_mm2 = math.pi * vessel_mm**2 / 4.0
    if device_od_mm >= vessel_mm:
        assumptions.append(
            f"The device ({device_od_mm:.2f} mm) is as large as the lumen ({vessel_mm:.2f} mm) "
            "or larger: no lumen is left round it, so no flow passes it to the leg; the "
            "artery would have to stretch for the device to fit at all."
        )
        return LimbFlowEstimate(
            vessel_mm,
            device_od_mm,
            occupied_cm,
            0.0,
            0.0,
            0.0,
            0.0,
            0.0,
            0.0,
            q_base_ml_min,
            p_mmhg,
            0.0,
            assumptions,
            tuple(defaults_used),
        )

    left_mm2 = open_mm2 - math.pi * device_od_mm**2 / 4.0
    q_base = q_base_ml_min * 1e-6 / 60.0  # m3/s
    r_total = p_mmhg * flow.MMHG_PA / q_base
    d_v, d_d, length = vessel_mm * 1e-3, device_od_mm * 1e-3, occupied_cm * 1e-2
    r_open = flow.tube_resistance(d_v, length, mu)
    if r_open >= r_total:
        need_mmhg = r_open * q_base / flow.MMHG_PA
        raise SizingValueError(
            "vessel_mm",
            f"an open {vessel_mm:g} mm artery over {occupied_cm:g} cm would need "
            f"{need_mmhg:.0f} mmHg to carry the resting limb flow of {q_base_ml_min:g} mL/min, "
            f"more than the {p_mmhg:g} mmHg perfusion pressure: check the vessel diameter and "
            "occupied length, or give the limb flow and perfusion pressure of this limb",
        )
    pct: dict[float, float] = {}
    for ecc in (0.0, 1.0):
        r_ann = flow.annulus_resistance(d_v, d_d, length, mu, eccentricity=ecc)
        pct[ecc] = 100.0 * r_total / (r_total - r_open + r_ann)
    q_ecc = q_base * pct[1.0] / 100.0
    gap_m = d_v - d_d
    velocity = q_ecc / (left_mm2 * 1e-6)
    re = flow.reynolds(velocity, gap_m, rho, mu)
    if re >= flow.LAMINAR_MAX_RE:
        assumptions.append(
            f"The flow round the device may not be laminar (Re {re:.0f} >= "
            f"{flow.LAMINAR_MAX_RE:.0f}): the estimate is outside its validity range."
        )
    return LimbFlowEstimate(
        vessel_mm=vessel_mm,
        device_od_mm=device_od_mm,
        occupied_cm=occupied_cm,
        lumen_left_mm2=left_mm2,
        lumen_left_pct=100.0 * left_mm2 / open_mm2,
        distal_flow_pct_concentric=pct[0.0],
        distal_flow_pct_eccentric=pct[1.0],
        distal_flow_ml_min_concentric=q_base_ml_min * pct[0.0] / 100.0,
        distal_flow_ml_min_eccentric=q_base_ml_min * pct[1.0] / 100.0,
        baseline_flow_ml_min=q_base_ml_min,
        perfusion_mmhg=p_mmhg,
        annulus_reynolds_max=re,
        assumptions=assumptions,
        defaults_used=tuple(defaults_used),
    )
