"""Flow through a distal perfusion cannula from its size, length and driving pressure."""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from vascplan.sizing.cannula import cannula_defaults, cannula_flow, cannula_inner_mm, junction_k
from vascplan.sizing.flow import LAMINAR_MAX_RE, laminar_entry_k

fluids = pytest.importorskip("fluids")

MU, RHO, MMHG = 0.0035, 1060.0, 133.322387415


def _fluids_pressure_drop(res, length_cm: float, k: float) -> float:
    """Pressure drop of the solved flow recomputed with the fluids library [Pa].

    Friction and the entrance/exit losses come from fluids; the laminar entry loss
    (Shah 1978, checked against a numerical solution in test_flow.py) is added.
    """
    d = res.inner_mm / 1000
    v = res.flow_ml_min / 60e6 / (math.pi * d * d / 4)
    re = fluids.core.Reynolds(V=v, D=d, rho=RHO, mu=MU)
    fd = fluids.friction.friction_factor(re, 0.0, Method="Colebrook")
    entry = laminar_entry_k(length_cm / 100 / d, min(re, LAMINAR_MAX_RE))
    return fluids.core.dP_from_K(fluids.core.K_from_f(fd, length_cm / 100, d) + k + entry, RHO, v)


def test_minor_losses_match_fluids_crane_values():
    # Crane TP-410 via fluids: sharp entrance K 0.5, exit K 1.0.
    d = cannula_defaults()
    assert d["entrance_k"].value == fluids.fittings.entrance_sharp(method="Crane")
    assert d["exit_k"].value == fluids.fittings.exit_normal()


def test_laminar_flow_reproduces_the_driving_pressure_in_fluids():
    res = cannula_flow(5, 20, 40, viscosity_pa_s=MU, density_kg_m3=RHO)
    assert res.regime == "laminar" and res.reynolds < 2040  # fluids' laminar range
    assert _fluids_pressure_drop(res, 20, 1.5) == pytest.approx(40 * MMHG, rel=1e-8)


def test_long_slow_laminar_flow_without_minor_losses_is_poiseuille():
    # Hagen-Poiseuille Q = pi D^4 dp / (128 mu L), computed here from the formula; at
    # Re ~ 80 over 200 diameters the friction is 64/Re * L/D = 160 velocity heads and
    # the entry loss at most 1.25 (under 1 %).
    res = cannula_flow(6, 30, 20, inner_mm=1.5, minor_k=0.0)
    d, dp = 1.5e-3, 20 * MMHG
    q = math.pi * d**4 * dp / (128 * MU * 0.30)
    assert res.reynolds < 100
    assert res.flow_ml_min == pytest.approx(q * 60e6, rel=1e-2)
    assert res.flow_ml_min < q * 60e6  # the entry loss only ever lowers the flow


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


# Distal perfusion cannula flows in practice are of the order of 100-400 mL/min for
# 6-8 Fr (from memory; REFERENCES.md gives 5-10 Fr into the SFA). Without connectors
# the model must not exceed that range grossly at the issue's example, and it must
# flag a figure above it.
def test_issue_example_is_near_the_clinical_range_and_flagged_when_above():
    res = cannula_flow(7, 15, 150)
    assert 300 < res.flow_ml_min < 450
    assert res.regime == "laminar"
    big = cannula_flow(8, 15, 150)
    assert big.above_typical and big.flow_ml_min > 400
    assert any("upper estimate" in a and "from memory" in a for a in big.assumptions)
    small = cannula_flow(6, 15, 100)
    assert not small.above_typical and 100 < small.flow_ml_min < 400
    assert any("No connecting line" in a for a in small.assumptions)


def test_a_connecting_line_lowers_the_flow():
    alone = cannula_flow(7, 15, 150)
    with_line = cannula_flow(7, 15, 150, line_mm=2.0, line_cm=25)
    assert with_line.flow_ml_min < alone.flow_ml_min
    assert with_line.line_reynolds is not None
    assert any("Connecting line 2 mm x 25 cm" in a for a in with_line.assumptions)
    with pytest.raises(ValueError, match="both line_mm and line_cm"):
        cannula_flow(7, 15, 150, line_mm=2.0)


def test_a_line_of_the_cannula_bore_adds_length_only():
    # Same bore, no junction: the line and cannula together are one longer tube, apart
    # from the second entry development (a line of the same bore is continuous in fact,
    # so the series figure is the lower of the two).
    res = cannula_flow(7, 15, 150, inner_mm=1.9, line_mm=1.9, line_cm=10)
    one = cannula_flow(7, 25, 150, inner_mm=1.9)
    assert res.flow_ml_min <= one.flow_ml_min
    assert res.flow_ml_min == pytest.approx(one.flow_ml_min, rel=0.08)


@pytest.mark.parametrize(("d1", "d2"), [(3.0, 1.9), (2.0, 1.0), (1.95, 1.9)])
def test_contraction_against_fluids_rennels(d1, d2):
    # Sharp contraction, Rennels and Hudson 2012, as implemented in fluids.
    ref = fluids.fittings.contraction_sharp(Di1=d1 / 1000, Di2=d2 / 1000, method="Rennels")
    assert junction_k(d1, d2) == pytest.approx(ref, rel=1e-9)


@pytest.mark.parametrize(("d1", "d2"), [(1.0, 2.0), (1.5, 1.9)])
def test_expansion_against_fluids_borda_carnot(d1, d2):
    # fluids gives the sudden expansion on the upstream (small) velocity; ours is on
    # the downstream velocity: multiply by (A2/A1)^2 = (d2/d1)^4.
    ref = fluids.fittings.diffuser_sharp(Di1=d1 / 1000, Di2=d2 / 1000, method="Rennels")
    assert junction_k(d1, d2) == pytest.approx(ref * (d2 / d1) ** 4, rel=1e-9)


def test_the_solver_gives_numbers_and_the_wording_is_apart():
    from vascplan.sizing.cannula import cannula_assumptions, inner_diameter, solve_cannula

    # A sheath's label is its inner size: 6 Fr = 6/3 = 2.0 mm
    # (French gauge: 1 Fr = 1/3 mm, common practice).
    assert inner_diameter(6, "inner").mm == pytest.approx(2.0)
    assert inner_diameter(6, "inner").source == "sheath-label"
    sol = solve_cannula(7, 15, 150, viscosity_pa_s=MU, density_kg_m3=RHO)
    # Blood properties given: only the wall roughness is a reference default.
    assert sorted(sol.defaults) == ["roughness_mm"]
    words = cannula_assumptions(sol)
    assert not any(w.startswith("Blood viscosity") for w in words)
    assert any(w.startswith("Wall roughness") for w in words)
    # The wrapper is the two together: the same flow, the same sentences.
    res = cannula_flow(7, 15, 150, viscosity_pa_s=MU, density_kg_m3=RHO)
    assert res.flow_ml_min == sol.flow_ml_min
    assert res.assumptions == words
    # Hagen-Poiseuille check of the solver's own numbers: Re = rho v D / mu (hand formula).
    d = sol.inner.mm / 1000
    assert sol.reynolds == pytest.approx(RHO * sol.velocity_m_s * d / MU, rel=1e-12)
    assert sol.flow_ml_min == pytest.approx(sol.velocity_m_s * math.pi * d * d / 4 * 60e6)
