"""``vascplan sheath-flow``: SAR, lumen left, distal flow and the perfusion cannula's flow."""

from __future__ import annotations

import json
import math
from typing import Any, cast

import click

from vascplan.errors import InputError
from vascplan.fileio import did_you_mean
from vascplan.safety import CAUTION
from vascplan.sizing.french import Label


class _Positive(click.ParamType):
    """A positive finite number; a bad value is one InputError line naming the option."""

    name = "number"

    def __init__(self, unit: str, range_name: str | None = None) -> None:
        self.unit = unit
        self.range_name = range_name

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None):
        if isinstance(value, float):
            return value
        option = param.opts[0] if param is not None and param.opts else "value"
        try:
            number = float(value)
        except (TypeError, ValueError):
            number = math.nan
        if not math.isfinite(number) or number <= 0.0:
            raise InputError(option, "", f"must be a positive number of {self.unit}, got {value!r}")
        if self.range_name is not None:
            from vascplan.sizing.tables import input_range

            low, high, unit = input_range(self.range_name)
            if not low <= number <= high:
                raise InputError(
                    option,
                    "",
                    f"must be between {low:g} and {high:g} {unit} (plausible range, "
                    f"data/sizing/input_ranges.csv), got {value!r}",
                )
        return number


class _OneOf(click.ParamType):
    """One of a few words; a wrong word is one InputError line with the nearest choice."""

    name = "choice"

    def __init__(self, *choices: str) -> None:
        self.choices = choices

    def get_metavar(self, param: click.Parameter, ctx: click.Context | None = None) -> str:
        return "[" + "|".join(self.choices) + "]"

    def convert(self, value: Any, param: click.Parameter | None, ctx: click.Context | None):
        if value in self.choices:
            return value
        option = param.opts[0] if param is not None and param.opts else "value"
        allowed = " or ".join(self.choices)
        raise InputError(
            option, "", f"must be {allowed}, got {value!r}{did_you_mean(str(value), self.choices)}"
        )


EPILOG = (
    "Example: vascplan sheath-flow --vessel-mm 6.5 --device-fr 17 --label outer "
    "--occupied-cm 15 --dpc-fr 7 --dpc-cm 15 --driving-mmhg 150\n\n"
    f"Caution: {CAUTION}"
)


@click.command("sheath-flow", epilog=EPILOG)
@click.option(
    "--vessel-mm",
    type=_Positive("mm", "vessel_mm"),
    help="Minimal lumen diameter of the artery the device occupies [mm].",
)
@click.option("--device-fr", type=_Positive("Fr", "device_fr"), help="Device size label [Fr].")
@click.option(
    "--label",
    type=_OneOf("outer", "inner"),
    help="outer: catheter or cannula (labelled by outer size); inner: introducer sheath.",
)
@click.option(
    "--occupied-cm",
    type=_Positive("cm", "occupied_cm"),
    help="Length of artery the device occupies [cm].",
)
@click.option(
    "--outer-mm",
    type=_Positive("mm", "outer_mm"),
    default=None,
    help="Measured outer diameter of the device [mm]; overrides the label.",
)
@click.option(
    "--dpc-fr",
    type=_Positive("Fr", "dpc_fr"),
    default=None,
    help="Distal perfusion cannula size [Fr].",
)
@click.option(
    "--dpc-cm",
    type=_Positive("cm", "dpc_cm"),
    default=None,
    help="Distal perfusion cannula length [cm].",
)
@click.option(
    "--driving-mmhg",
    type=_Positive("mmHg", "driving_mmhg"),
    default=None,
    help="Pressure driving the cannula flow: return line minus distal artery [mmHg].",
)
@click.option(
    "--dpc-label",
    type=_OneOf("outer", "inner"),
    default="outer",
    show_default=True,
    help="inner when a sheath serves as the perfusion line.",
)
@click.option(
    "--line-mm",
    type=_Positive("mm", "line_mm"),
    default=None,
    help="Inner diameter of a connecting line (side-arm, extension) upstream of the "
    "cannula [mm]; with --line-cm.",
)
@click.option(
    "--line-cm",
    type=_Positive("cm", "line_cm"),
    default=None,
    help="Length of that connecting line [cm]; with --line-mm.",
)
@click.option(
    "--limb-flow-ml-min",
    type=_Positive("mL/min", "limb_flow_ml_min"),
    default=None,
    help="Resting limb flow [mL/min]; default from data/sizing/limb_defaults.yaml.",
)
@click.option(
    "--perfusion-mmhg",
    type=_Positive("mmHg", "perfusion_mmhg"),
    default=None,
    help="Perfusion pressure across the leg [mmHg]; default likewise.",
)
@click.option(
    "--map-mmhg",
    type=_Positive("mmHg", "map_mmhg"),
    default=None,
    help="The patient's mean arterial pressure [mmHg]: perfusion = MAP - venous pressure. "
    "Default by device kind (VA-ECMO 65, others 90; data/sizing/limb_defaults.yaml).",
)
@click.option(
    "--device-kind",
    type=_OneOf("va-ecmo-arterial", "microaxial-pump", "balloon-pump", "large-bore-sheath"),
    default=None,
    help="What the device is: sets the default MAP and the device rules of the cannula advice.",
)
@click.option(
    "--pad/--no-pad",
    default=False,
    help="Known peripheral arterial disease on that side (a rule of the cannula advice).",
)
@click.option(
    "--viscosity-mpa-s",
    type=_Positive("mPa s", "viscosity_mpa_s"),
    default=None,
    help="Blood viscosity [mPa s]; default 3.5.",
)
@click.option(
    "--density-kg-m3",
    type=_Positive("kg/m3", "density_kg_m3"),
    default=None,
    help="Blood density [kg/m3]; default 1060.",
)
@click.option("--format", "fmt", type=_OneOf("table", "json"), default="table", show_default=True)
def sheath_flow(
    vessel_mm: float | None,
    device_fr: float | None,
    label: str | None,
    occupied_cm: float | None,
    outer_mm: float | None,
    dpc_fr: float | None,
    dpc_cm: float | None,
    driving_mmhg: float | None,
    dpc_label: str,
    line_mm: float | None,
    line_cm: float | None,
    limb_flow_ml_min: float | None,
    perfusion_mmhg: float | None,
    map_mmhg: float | None,
    device_kind: str | None,
    pad: bool,
    viscosity_mpa_s: float | None,
    density_kg_m3: float | None,
    fmt: str,
) -> None:
    """SAR, lumen left and distal flow with a device in an artery.

    Shows the sheath-to-artery ratio beside its published threshold, the lumen left
    round the device, the estimated flow to the leg as a percentage of the resting
    flow (device centred .. device against the wall), whether a distal perfusion cannula
    is advised (the same rule as plan and risk) and, given --dpc-fr, --dpc-cm and
    --driving-mmhg, the cannula's flow. Every assumption is listed.
    """
    from vascplan.sizing.assess import assess_sheath_flow
    from vascplan.sizing.tables import SizingValueError

    for option, value, allowed in (
        ("--vessel-mm", vessel_mm, "the artery's minimal lumen diameter in mm"),
        ("--device-fr", device_fr, "the device's French size"),
        ("--label", label, "outer (catheter or cannula) or inner (sheath)"),
        ("--occupied-cm", occupied_cm, "the length of artery the device occupies in cm"),
    ):
        if value is None:
            raise InputError(option, "", f"is required: give {allowed}")
    dpc = {"--dpc-fr": dpc_fr, "--dpc-cm": dpc_cm, "--driving-mmhg": driving_mmhg}
    given = [k for k, v in dpc.items() if v is not None]
    if given and len(given) < 3:
        missing = [k for k in dpc if k not in given]
        raise InputError(
            missing[0],
            "",
            f"is needed with {' and '.join(given)} (give all three cannula options or none)",
        )
    line = {"--line-mm": line_mm, "--line-cm": line_cm}
    line_given = [k for k, v in line.items() if v is not None]
    if len(line_given) == 1:
        missing_line = next(k for k in line if k not in line_given)
        raise InputError(
            missing_line,
            "",
            f"is needed with {line_given[0]} (give both line options or none)",
        )
    if line_given and not given:
        raise InputError(
            "--dpc-fr",
            "",
            "is needed with --line-mm and --line-cm (the line feeds a perfusion cannula: "
            "give --dpc-fr, --dpc-cm and --driving-mmhg)",
        )
    try:
        result = assess_sheath_flow(
            cast(float, vessel_mm),
            cast(float, device_fr),
            cast(Label, label),
            cast(float, occupied_cm),
            outer_mm=outer_mm,
            dpc_fr=dpc_fr,
            dpc_cm=dpc_cm,
            driving_mmhg=driving_mmhg,
            dpc_label=cast(Label, dpc_label),
            limb_flow_ml_min=limb_flow_ml_min,
            perfusion_mmhg=perfusion_mmhg,
            viscosity_pa_s=None if viscosity_mpa_s is None else viscosity_mpa_s / 1000.0,
            density_kg_m3=density_kg_m3,
            line_mm=line_mm,
            line_cm=line_cm,
            mean_arterial_mmhg=map_mmhg,
            device_kind=device_kind,
            pad=pad,
        )
    except SizingValueError as exc:
        raise InputError("--" + exc.field.replace("_", "-"), "", str(exc)) from None
    except ValueError as exc:
        raise InputError("sheath-flow", "", str(exc)) from None
    if fmt == "json":
        click.echo(json.dumps(result.to_json(), indent=2))
    else:
        from vascplan.sizing.render import render_sheath_flow

        click.echo(render_sheath_flow(result))
