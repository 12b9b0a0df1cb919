"""The leg with a device in place: lumen left and distal flow range."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from vascplan.sizing.limb import limb_defaults, limb_flow_with_device

MMHG = 133.322387415  # Pa


def test_defaults_are_sourced_and_marked():
    d = limb_defaults()
    for key in ("limb_flow_ml_min", "mean_arterial_mmhg", "venous_mmhg", "occupied_cm"):
        assert d[key].certainty in ("from memory", "common practice", "seen")
        assert d[key].source


def test_against_hand_built_series_circuit():
    # Independent rebuild of the circuit from the textbook formulas: bed resistance
    # P/Q, open stretch Hagen-Poiseuille 8 mu L/(pi R^4), annulus
    # 8 mu L/(pi R^4 [(1-k^4) - (1-k^2)^2/ln(1/k)]) (Bird, Stewart and Lightfoot,
    # eqs. 2.3-21 and 2.4-17).
    vessel, device, occ, q_ml, p_mmhg, mu = 6.5, 17 / 3, 15.0, 400.0, 85.0, 0.0035
    r_big, length = vessel / 2000, occ / 100
    k = device / vessel
    r_total = p_mmhg * MMHG / (q_ml / 60e6)
    r_open = 8 * mu * length / (math.pi * r_big**4)
    r_ann = r_open / ((1 - k**4) - (1 - k * k) ** 2 / math.log(1 / k))
    expected_pct = 100 * r_total / (r_total - r_open + r_ann)
    est = limb_flow_with_device(
        vessel, device, occ, limb_flow_ml_min=q_ml, perfusion_mmhg=p_mmhg, viscosity_pa_s=mu
    )
    assert est.distal_flow_pct_concentric == pytest.approx(expected_pct, rel=1e-9)
    assert est.distal_flow_ml_min_concentric == pytest.approx(q_ml * expected_pct / 100)
    assert est.lumen_left_mm2 == pytest.approx(math.pi / 4 * (vessel**2 - device**2))
    assert est.lumen_left_pct == pytest.approx(100 * (1 - k * k))
    assert est.distal_flow_pct_concentric < est.distal_flow_pct_eccentric < 100
    # No reference defaults were used for the overridden values.
    assert not any("Resting limb flow" in a for a in est.assumptions)
    assert not any("Blood viscosity" in a for a in est.assumptions)


def test_defaults_are_listed_as_assumptions():
    est = limb_flow_with_device(8.0, 6.0, 10.0)
    text = " ".join(est.assumptions)
    assert "Resting limb flow 350 mL/min is a reference default" in text
    # Perfusion = MAP 90 - venous 10 = 80 mmHg (physiology; both reference defaults).
    assert "Perfusion pressure 80 mmHg = mean arterial pressure 90 mmHg is a reference" in text
    assert "against the wall" in text


@pytest.mark.parametrize("device", [6.0, 6.5, 9.0])
def test_device_filling_the_lumen_leaves_no_flow(device):
    est = limb_flow_with_device(6.0, device, 10.0)
    assert est.lumen_left_mm2 == 0.0
    assert est.distal_flow_pct_concentric == est.distal_flow_pct_eccentric == 0.0
    assert any("no flow passes it" in a for a in est.assumptions)


def test_thin_device_leaves_almost_all_flow():
    est = limb_flow_with_device(8.0, 0.5, 10.0)
    assert 99.0 < est.distal_flow_pct_concentric <= est.distal_flow_pct_eccentric <= 100.0


def test_bad_inputs():
    with pytest.raises(ValueError, match="vessel_mm"):
        limb_flow_with_device(-1, 2, 3)
    with pytest.raises(ValueError, match="occupied_cm"):
        limb_flow_with_device(6, 2, 0)
    with pytest.raises(ValueError, match="would need .* mmHg to carry"):
        limb_flow_with_device(1.0, 0.5, 50, limb_flow_ml_min=5000, perfusion_mmhg=1)


@settings(max_examples=60, deadline=None)
@given(
    vessel=st.floats(min_value=3.0, max_value=12.0),
    frac=st.floats(min_value=0.05, max_value=1.1),
    grow=st.floats(min_value=0.001, max_value=2.0),
    occ=st.floats(min_value=1.0, max_value=40.0),
)
def test_bigger_device_never_leaves_more_flow(vessel, frac, grow, occ):
    small = limb_flow_with_device(vessel, frac * vessel, occ)
    big = limb_flow_with_device(vessel, frac * vessel + grow, occ)
    assert big.lumen_left_mm2 <= small.lumen_left_mm2
    assert big.distal_flow_pct_concentric <= small.distal_flow_pct_concentric
    assert big.distal_flow_pct_eccentric <= small.distal_flow_pct_eccentric
    assert small.distal_flow_pct_concentric <= small.distal_flow_pct_eccentric


@settings(max_examples=40, deadline=None)
@given(occ=st.floats(min_value=1.0, max_value=30.0), more=st.floats(min_value=0.01, max_value=20))
def test_longer_occupied_stretch_never_leaves_more_flow(occ, more):
    short = limb_flow_with_device(6.5, 5.5, occ)
    long = limb_flow_with_device(6.5, 5.5, occ + more)
    assert long.distal_flow_pct_concentric <= short.distal_flow_pct_concentric
    assert long.distal_flow_pct_eccentric <= short.distal_flow_pct_eccentric


def test_defaults_used_are_named():
    assert limb_flow_with_device(8.0, 6.0, 10.0).defaults_used == (
        "limb_flow_ml_min", "perfusion_mmhg", "viscosity_pa_s", "density_kg_m3"
    )
    est = limb_flow_with_device(
        8.0, 6.0, 10.0, limb_flow_ml_min=300, perfusion_mmhg=70, viscosity_pa_s=0.004,
        density_kg_m3=1050,
    )
    assert est.defaults_used == ()
