"""``vascplan sheath-flow``: the table, the JSON contract and one-line errors."""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from vascplan.cli import cli
from vascplan.safety import CAUTION
from vascplan.sizing.assess import assess_sheath_flow

BASE = ["sheath-flow", "--vessel-mm", "6.5", "--device-fr", "17", "--label", "outer",
        "--occupied-cm", "15"]
DPC = ["--dpc-fr", "7", "--dpc-cm", "15", "--driving-mmhg", "150"]


def run(args):
    return CliRunner().invoke(cli, args)


def test_json_contract_matches_the_library():
    res = run([*BASE, *DPC, "--format", "json"])
    assert res.exit_code == 0, res.output
    data = json.loads(res.output)
    for key in ("vessel_mm", "device_od_mm", "sar", "lumen_left_pct", "distal_flow_pct", "dpc",
                "assumptions", "caution"):
        assert key in data
    lib = assess_sheath_flow(6.5, 17, "outer", 15, dpc_fr=7, dpc_cm=15, driving_mmhg=150)
    assert data["vessel_mm"] == 6.5
    assert data["device_od_mm"] == pytest.approx(17 / 3, abs=1e-4)  # 1 Fr = 1/3 mm
    assert data["sar"] == pytest.approx(17 / 3 / 6.5, abs=1e-4)
    assert data["lumen_left_pct"] == pytest.approx(lib.limb.lumen_left_pct, abs=0.01)
    assert data["distal_flow_pct"]["concentric"] == pytest.approx(
        lib.limb.distal_flow_pct_concentric, abs=0.01
    )
    assert data["distal_flow_pct"]["eccentric"] == pytest.approx(
        lib.limb.distal_flow_pct_eccentric, abs=0.01
    )
    assert set(data["dpc"]) >= {"flow_ml_min", "reynolds", "regime"}
    assert data["dpc"]["regime"] in ("laminar", "transitional", "turbulent")
    assert data["dpc"]["flow_ml_min"] == pytest.approx(lib.dpc.flow_ml_min, abs=0.1)
    assert data["caution"] == CAUTION
    assert data["sar_threshold"]["value"] == 1.05
    assert data["assumptions"] == lib.assumptions
    assert "limb_flow_ml_min" in data["reference_defaults_used"]
    assert data["dpc"]["inner_assumed"] is True


def test_json_without_cannula_has_null_dpc():
    data = json.loads(run([*BASE, "--format", "json"]).output)
    assert data["dpc"] is None


def test_table_shows_figures_units_threshold_and_caution():
    res = run([*BASE, *DPC])
    assert res.exit_code == 0, res.output
    out = res.output
    # 17 Fr = 17/3 mm over 6.5 mm = 0.872 (French scale, exact); flow well above the floor.
    # The label column is as wide as its longest label, "distal perfusion cannula" (24),
    # and two spaces part the columns (vascplan.texttable).
    assert "  SAR" + " " * 23 + "0.872  (under the 1.05 limit: Hayashida et al. 2011)" in out
    assert "mm2" in out and "% of the open" in out
    assert "% of the resting flow" in out and "mL/min" in out
    assert "perfusion cannula" in out and "Re " in out
    assert "Assumptions:" in out
    assert "* rests on reference values, not measurements" in out
    assert f"Caution: {CAUTION}" in out


def test_sheath_outer_diameter_is_marked_assumed():
    res = run(["sheath-flow", "--vessel-mm", "6", "--device-fr", "6", "--label", "inner",
               "--occupied-cm", "10"])
    assert res.exit_code == 0
    assert "2.62 mm (assumed *)" in res.output  # Wahood 2022: 6 Fr sheath 2.62 mm outer
    assert "Wahood" in res.output


def test_measured_outer_diameter_overrides():
    data = json.loads(run([*BASE, "--outer-mm", "6.0", "--format", "json"]).output)
    assert data["device_od_mm"] == 6.0 and data["device_od_source"] == "measured"


def test_device_larger_than_artery_gives_zero_flow():
    data = json.loads(run(["sheath-flow", "--vessel-mm", "5", "--device-fr", "18", "--label",
                           "outer", "--occupied-cm", "10", "--format", "json"]).output)
    assert data["lumen_left_pct"] == 0.0
    assert data["distal_flow_pct"] == {"concentric": 0.0, "eccentric": 0.0}
    assert data["sar_threshold"]["reached"] is True
    assert any("no flow passes it" in a for a in data["assumptions"])


@pytest.mark.parametrize(
    ("args", "line"),
    [
        (["sheath-flow", "--vessel-mm", "-1", "--device-fr", "17", "--label", "outer",
          "--occupied-cm", "15"],
         "error: --vessel-mm: must be a positive number of mm, got '-1'"),
        (["sheath-flow", "--vessel-mm", "abc", "--device-fr", "17"],
         "error: --vessel-mm: must be a positive number of mm, got 'abc'"),
        ([*BASE[:-2], "--occupied-cm", "0"],
         "error: --occupied-cm: must be a positive number of cm, got '0'"),
        (["sheath-flow", "--vessel-mm", "6.5", "--device-fr", "17", "--occupied-cm", "15"],
         "error: --label: is required: give outer (catheter or cannula) or inner (sheath)"),
        (["sheath-flow", "--device-fr", "17", "--label", "outer", "--occupied-cm", "15"],
         "error: --vessel-mm: is required: give the artery's minimal lumen diameter in mm"),
        ([*BASE, "--dpc-fr", "7"],
         "error: --dpc-cm: is needed with --dpc-fr (give all three cannula options or none)"),
        ([*BASE, "--dpc-fr", "7", "--dpc-cm", "15"],
         "error: --driving-mmhg: is needed with --dpc-fr and --dpc-cm "
         "(give all three cannula options or none)"),
        ([*BASE, *DPC[:-1], "nan"],
         "error: --driving-mmhg: must be a positive number of mmHg, got 'nan'"),
        ([*BASE[:-4], "--label", "outr", *BASE[-2:]],
         "error: --label: must be outer or inner, got 'outr' (did you mean 'outer'?)"),
        ([*BASE, "--format", "yaml"], "error: --format: must be table or json, got 'yaml'"),
        ([*BASE, "--dpc-fr", "1", "--dpc-cm", "15", "--driving-mmhg", "150"],
         "error: --dpc-fr: must be between 3 and 30 Fr (plausible range, "
         "data/sizing/input_ranges.csv), got '1'"),
        (["sheath-flow", "--vessel-mm", "1e9", *BASE[3:]],
         "error: --vessel-mm: must be between 1 and 40 mm (plausible range, "
         "data/sizing/input_ranges.csv), got '1e9'"),
        (["sheath-flow", "--vessel-mm", "0.001", *BASE[3:]],
         "error: --vessel-mm: must be between 1 and 40 mm (plausible range, "
         "data/sizing/input_ranges.csv), got '0.001'"),
        ([*BASE[:4], "1e-6", *BASE[5:]],
         "error: --device-fr: must be between 0.5 and 40 Fr (plausible range, "
         "data/sizing/input_ranges.csv), got '1e-6'"),
        ([*BASE[:-1], "0.15"],
         "error: --occupied-cm: must be between 1 and 100 cm (plausible range, "
         "data/sizing/input_ranges.csv), got '0.15'"),
        ([*BASE, "--device-fr", "x"],
         "error: --device-fr: must be a positive number of Fr, got 'x'"),
        ([*BASE, *DPC, "--line-mm", "2"],
         "error: --line-cm: is needed with --line-mm (give both line options or none)"),
        ([*BASE, "--line-mm", "2", "--line-cm", "20"],
         "error: --dpc-fr: is needed with --line-mm and --line-cm (the line feeds a "
         "perfusion cannula: give --dpc-fr, --dpc-cm and --driving-mmhg)"),
        (["sheath-flow", "--vessel-mm", "8", "--device-fr", "14", "--label", "inner",
          "--outer-mm", "4", "--occupied-cm", "15"],
         "error: --outer-mm: outer diameter 4 mm is not larger than the 14 Fr sheath's "
         "inner size 4.67 mm (a sheath is labelled by inner size; use label outer for a "
         "catheter or cannula)"),
        ([*BASE, "--viscosity-mpa-s", "0.5"],
         "error: --viscosity-mpa-s: must be between 1 and 20 mPa s (plausible range, "
         "data/sizing/input_ranges.csv), got '0.5'"),
        # Hagen-Poiseuille by hand: 128 mu L Q / (pi D^4) = 128 * 0.0035 * 0.4 *
        # (350e-6/60) / (pi * 0.002**4) Pa = 156 mmHg.
        (["sheath-flow", "--vessel-mm", "2", "--device-fr", "4", "--label", "outer",
          "--occupied-cm", "40"],
         "error: --vessel-mm: an open 2 mm artery over 40 cm would need 156 mmHg to carry "
         "the resting limb flow of 350 mL/min, more than the 80 mmHg perfusion pressure: "
         "check the vessel diameter and occupied length, or give the limb flow and perfusion "
         "pressure of this limb"),
    ],
)
def test_bad_options_are_one_line_exit_2(args, line):
    res = run(args)
    assert res.exit_code == 2
    assert res.output.strip() == line
    assert "Traceback" not in res.output


def test_help_has_an_example():
    res = run(["sheath-flow", "--help"])
    assert res.exit_code == 0
    assert "Example: vascplan sheath-flow --vessel-mm 6.5" in res.output


def test_device_larger_than_artery_still_names_the_defaults_used():
    # Regression: the early return for a device filling the lumen dropped the list.
    data = json.loads(run(["sheath-flow", "--vessel-mm", "5", "--device-fr", "18", "--label",
                           "outer", "--occupied-cm", "10", "--format", "json"]).output)
    assert "limb_flow_ml_min" in data["reference_defaults_used"]


def test_inner_and_outer_labels_differ_by_the_sheath_wall():
    # The same 14 Fr: a cannula is 14/3 = 4.67 mm outside (French scale); a sheath
    # labelled 14 Fr inside is larger by its wall (REFERENCES.md: 5.3-6.0 mm, memory).
    outer = json.loads(run(["sheath-flow", "--vessel-mm", "7", "--device-fr", "14", "--label",
                            "outer", "--occupied-cm", "12", "--format", "json"]).output)
    inner = json.loads(run(["sheath-flow", "--vessel-mm", "7", "--device-fr", "14", "--label",
                            "inner", "--occupied-cm", "12", "--format", "json"]).output)
    assert outer["device_od_mm"] == pytest.approx(14 / 3, abs=1e-4)
    assert 5.3 <= inner["device_od_mm"] <= 6.0
    assert inner["sar"] > outer["sar"]
    assert inner["distal_flow_pct"]["eccentric"] < outer["distal_flow_pct"]["eccentric"]
    assert any("wall allowance" in a for a in inner["assumptions"])


def test_measured_outer_diameter_far_from_the_label_is_questioned():
    data = json.loads(run([*BASE, "--outer-mm", "3", "--format", "json"]).output)
    assert data["device_od_mm"] == 3.0
    assert any("differs from the 17 Fr label's 5.67 mm" in a for a in data["assumptions"])


def test_connecting_line_in_the_json():
    data = json.loads(run([*BASE, *DPC, "--line-mm", "2", "--line-cm", "25", "--format",
                           "json"]).output)
    plain = json.loads(run([*BASE, *DPC, "--format", "json"]).output)
    assert data["dpc"]["line"]["inner_mm"] == 2.0 and data["dpc"]["line"]["length_cm"] == 25
    assert data["dpc"]["flow_ml_min"] < plain["dpc"]["flow_ml_min"]
    assert plain["dpc"]["line"] is None


def test_blood_density_is_overridable():
    # Issue 4: viscosity 3.5 mPa s and density 1,060 kg/m3 are defaults, overridable.
    args = [*BASE, *DPC, "--format", "json"]
    plain = json.loads(run(args).output)
    lighter = json.loads(run([*args, "--density-kg-m3", "1000"]).output)
    assert "density_kg_m3" in plain["reference_defaults_used"]
    assert "density_kg_m3" not in lighter["reference_defaults_used"]
    # Re = rho V D / mu: a lighter fluid at a similar speed has a lower Reynolds number.
    assert lighter["dpc"]["reynolds"] < plain["dpc"]["reynolds"]
    assert not any("Blood density" in a for a in lighter["assumptions"])
    res = run([*args, "--density-kg-m3", "13"])
    assert res.exit_code == 2
    assert res.output.strip() == (
        "error: --density-kg-m3: must be between 1000 and 1100 kg/m3 (plausible range, "
        "data/sizing/input_ranges.csv), got '13'"
    )
