"""Flow through a distal perfusion cannula from its size, length and driving pressure."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from vascplan.sizing.cannula import cannula_defaults, cannula_flow, cannula_inner_mm

fluids = pytest.importorskip("fluids")

MU, RHO, MMHG = 0.0035, 1060.0, 133.322387415


def _fluids_pressure_drop(res, length_cm: float, k: float) -> float:
    """Pressure drop of the solved flow recomputed with the fluids library [Pa]."""
    d = res.inner_mm / 1000
    v = res.flow_ml_min / 60e6 / (math.pi * d * d / 4)
    re = fluids.core.Reynolds(V=v, D=d, rho=RHO, mu=MU)
    fd = fluids.friction.friction_factor(re, 0.0, Method="Colebrook")
    return fluids.core.dP_from_K(fluids.core.K_from_f(fd, length_cm / 100, d) + k, RHO, v)


def test_minor_losses_match_fluids_crane_values():
    # Crane TP-410 via fluids: sharp entrance K 0.5, exit K 1.0.
    d = cannula_defaults()
    assert d["entrance_k"].value == fluids.fittings.entrance_sharp(method="Crane")
    assert d["exit_k"].value == fluids.fittings.exit_normal()


def test_laminar_flow_reproduces_the_driving_pressure_in_fluids():
    res = cannula_flow(5, 20, 40, viscosity_pa_s=MU, density_kg_m3=RHO)
    assert res.regime == "laminar" and res.reynolds < 2040  # fluids' laminar range
    assert _fluids_pressure_drop(res, 20, 1.5) == pytest.approx(40 * MMHG, rel=1e-8)


def test_laminar_without_minor_losses_is_poiseuille():
    # Hagen-Poiseuille Q = pi D^4 dp / (128 mu L), computed here from the formula.
    res = cannula_flow(6, 30, 20, inner_mm=1.5, minor_k=0.0)
    d, dp = 1.5e-3, 20 * MMHG
    q = math.pi * d**4 * dp / (128 * MU * 0.30)
    assert res.flow_ml_min == pytest.approx(q * 60e6, rel=1e-8)


def test_turbulent_flow_reproduces_the_driving_pressure_in_fluids():
    res = cannula_flow(24, 10, 300, viscosity_pa_s=MU, density_kg_m3=RHO)
    assert res.regime == "turbulent" and res.reynolds > 4000
    assert _fluids_pressure_drop(res, 10, 1.5) == pytest.approx(300 * MMHG, rel=1e-8)
    assert res.friction_factor == pytest.approx(
        fluids.friction.Colebrook(res.reynolds, 0.0), rel=1e-8
    )


def test_transitional_flow_is_flagged():
    res = cannula_flow(10, 15, 150)
    assert res.regime == "transitional"
    assert any("transitional range" in a for a in res.assumptions)


def test_inner_diameter_basis():
    assert cannula_inner_mm(6, "inner") [0] == 2.0  # sheath: label is the inner size
    mm, note = cannula_inner_mm(8)
    assert mm == pytest.approx(8 / 3 - 2 * 0.25)  # 0.25 mm wall row of cannula_walls.csv
    assert "assumed" in note and "from memory" in note
    assert cannula_inner_mm(8, inner_mm=2.2) == (2.2, None)


def test_bad_inputs():
    with pytest.raises(ValueError, match="length_cm"):
        cannula_flow(7, 0, 150)
    with pytest.raises(ValueError, match="driving_mmhg"):
        cannula_flow(7, 15, -5)
    with pytest.raises(ValueError, match="size_fr"):
        cannula_flow(-7, 15, 150)
    with pytest.raises(ValueError, match="no lumen"):
        cannula_flow(1, 15, 150)


@settings(max_examples=40, deadline=None)
@given(
    fr=st.floats(min_value=4, max_value=24),
    more=st.floats(min_value=0.01, max_value=6),
    length=st.floats(min_value=5, max_value=60),
    dp=st.floats(min_value=5, max_value=400),
)
def test_bigger_cannula_never_gives_less_flow(fr, more, length, dp):
    bigger, smaller = cannula_flow(fr + more, length, dp), cannula_flow(fr, length, dp)
    assert bigger.flow_ml_min >= smaller.flow_ml_min


@settings(max_examples=40, deadline=None)
@given(
    fr=st.floats(min_value=4, max_value=24),
    length=st.floats(min_value=5, max_value=60),
    dp=st.floats(min_value=5, max_value=400),
    more=st.floats(min_value=0.1, max_value=200),
)
def test_higher_driving_pressure_never_gives_less_flow(fr, length, dp, more):
    low, high = cannula_flow(fr, length, dp), cannula_flow(fr, length, dp + more)
    assert high.flow_ml_min >= low.flow_ml_min
    assert cannula_flow(fr, length + 10, dp).flow_ml_min <= low.flow_ml_min
