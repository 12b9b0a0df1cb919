"""Tube and annulus flow, the eccentric solver, Reynolds number and friction factors."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import solve_bvp, trapezoid

from vascplan.sizing import flow
from vascplan.sizing.eccentric import (
    NARROW_GAP_TOUCHING_RATIO,
    eccentric_annulus_factor,
    solve_annulus_factor,
    touching_annulus_factor,
    touching_table_kappas,
)

MU = 0.0035
RHO = 1060.0


def _bvp_flow(r_in: float, r_out: float, gradient: float, mu: float) -> float:
    """Flow of the axial Stokes problem solved numerically (not from the closed form).

    (1/r) d/dr (r du/dr) = -G/mu with u = 0 on the walls (u'(0) = 0 for a tube), in
    units of the outer radius and G R^2/mu, solved with scipy's collocation BVP solver
    (its singular-term form at r = 0 for the tube), then Q = integral of 2 pi r u dr.
    """
    kappa = r_in / r_out
    x = np.linspace(kappa, 1.0, 200)
    if kappa == 0.0:
        sing = np.array([[0.0, 0.0], [0.0, -1.0]])

        def ode(xx, y):
            return np.vstack([y[1], -np.ones_like(xx)])

        def bc(ya, yb):
            return np.array([ya[1], yb[0]])

        sol = solve_bvp(ode, bc, x, np.zeros((2, x.size)), S=sing, tol=1e-10, max_nodes=100000)
    else:

        def ode(xx, y):
            return np.vstack([y[1], -1.0 - y[1] / xx])

        def bc(ya, yb):
            return np.array([ya[0], yb[0]])

        sol = solve_bvp(ode, bc, x, np.zeros((2, x.size)), tol=1e-10, max_nodes=100000)
    assert sol.success, sol.message
    fine = np.linspace(kappa, 1.0, 20001)
    q_dimensionless = float(trapezoid(2 * math.pi * fine * sol.sol(fine)[0], fine))
    return q_dimensionless * gradient * r_out**4 / mu


def test_poiseuille_against_numerical_solution():
    # Hagen-Poiseuille (Bird, Stewart and Lightfoot, 2nd ed., eq. 2.3-21) against the
    # same flow problem solved numerically with scipy.
    d, length, dp = 3e-3, 0.12, 2000.0
    q_numeric = _bvp_flow(0.0, d / 2, dp / length, MU)
    q_ours = dp / flow.tube_resistance(d, length, MU)
    assert q_ours == pytest.approx(q_numeric, rel=1e-5)


@pytest.mark.parametrize("kappa", [0.05, 0.3, 0.5, 0.8, 0.95])
def test_concentric_annulus_against_numerical_solution(kappa):
    # Concentric annulus (Bird, Stewart and Lightfoot, 2nd ed., eq. 2.4-17) against scipy.
    r_out, g = 3.25e-3, 1e5
    q_numeric = _bvp_flow(kappa * r_out, r_out, g, MU)
    q_tube = math.pi * g * r_out**4 / (8 * MU)
    assert flow.concentric_annulus_factor(kappa) * q_tube == pytest.approx(q_numeric, rel=1e-5)


# White, Fluid Mechanics, Table 6.3 (laminar friction factors of a concentric annulus):
# f Re_Dh with the hydraulic diameter D_h = outer minus inner diameter (from memory,
# printed to 2 decimals).
WHITE_TABLE_6_3 = {0.01: 80.11, 0.05: 86.27, 0.1: 89.37, 0.2: 92.35, 0.4: 94.71, 0.6: 95.59,
                   0.8: 95.92}


@pytest.mark.parametrize(("kappa", "f_re"), sorted(WHITE_TABLE_6_3.items()))
def test_concentric_annulus_friction_against_white_table(kappa, f_re):
    # f Re_Dh = 2 dp D_h**2 / (L mu V) with V = Q / area.
    r_out, g = 1e-3, 1.0
    q = flow.concentric_annulus_factor(kappa) * math.pi * g * r_out**4 / (8 * MU)
    area = math.pi * r_out**2 * (1 - kappa**2)
    d_h = 2 * r_out * (1 - kappa)
    ours = 2 * g * d_h**2 / (MU * q / area)
    assert ours == pytest.approx(f_re, abs=0.006)


def test_annulus_limits():
    # No inner tube: the annulus is a tube (Poiseuille); no gap: no flow.
    assert flow.concentric_annulus_factor(0.0) == 1.0
    assert flow.concentric_annulus_factor(1e-12) == pytest.approx(1.0, abs=0.05)
    assert flow.concentric_annulus_factor(1.0) == 0.0
    # Approaching the narrow gap the closed form meets the parallel-plate limit
    # (4/3) gap**3 (flow between plates, Bird, Stewart and Lightfoot problem 2B.5).
    for gap in (1e-2, 1e-3):
        assert flow.concentric_annulus_factor(1 - gap) / (4 / 3 * gap**3) == pytest.approx(
            1.0, abs=1.5 * gap
        )
    # The series branch joins the closed form continuously.
    a = flow.concentric_annulus_factor(0.999 - 1e-12)
    b = flow.concentric_annulus_factor(0.999 + 1e-12)
    assert a == pytest.approx(b, rel=1e-6)
    assert touching_annulus_factor(0.0) == 1.0
    assert touching_annulus_factor(1.0) == 0.0


def _white_series(kappa: float, eccentricity: float) -> float:
    """Exact eccentric-annulus flow (bipolar coordinates; Piercy, Hooper and Winny 1933).

    White, Viscous Fluid Flow, section 3-3 "the eccentric annulus" (flow-rate formula,
    equation number not checked): with outer radius a, inner b, centre distance c,
    F = (a^2 - b^2 + c^2)/(2c), M = sqrt(F^2 - a^2), alpha = ln((F+M)/(F-M))/2,
    beta = ln((F-c+M)/(F-c-M))/2,
    Q = pi G/(8 mu) [a^4 - b^4 - 4c^2M^2/(beta-alpha)
                     - 8c^2M^2 sum n exp(-n(beta+alpha))/sinh(n(beta-alpha))].
    Returned over the tube flow pi G a^4/(8 mu) with a = 1.
    """
    a, b, c = 1.0, kappa, eccentricity * (1 - kappa)
    f = (a * a - b * b + c * c) / (2 * c)
    m = math.sqrt(f * f - a * a)
    alpha = 0.5 * math.log((f + m) / (f - m))
    beta = 0.5 * math.log((f - c + m) / (f - c - m))
    n_max = int(min(2e6, 40.0 / beta)) + 10
    n = np.arange(1, n_max + 1, dtype=float)
    series = np.sum(n * np.exp(-n * (beta + alpha) - np.log(-np.expm1(-2 * n * (beta - alpha)))
                               - n * (beta - alpha) + math.log(2.0)))
    return a**4 - b**4 - 4 * c * c * m * m / (beta - alpha) - 8 * c * c * m * m * series


@pytest.mark.parametrize("kappa", [0.3, 0.6, 0.85])
def test_eccentric_solver_zero_eccentricity_is_concentric(kappa):
    # The finite-difference solver with the tubes centred against the closed form.
    assert solve_annulus_factor(kappa, 0.0, 200) == pytest.approx(
        flow.concentric_annulus_factor(kappa), rel=2e-3
    )


@pytest.mark.parametrize(("kappa", "ecc"), [(0.5, 0.5), (0.5, 0.9), (0.2, 0.7), (0.87, 0.6)])
def test_eccentric_solver_against_exact_series(kappa, ecc):
    assert eccentric_annulus_factor(kappa, ecc) == pytest.approx(
        _white_series(kappa, ecc), rel=2e-3
    )


def test_series_reduces_to_concentric():
    # Sanity of the reference itself: nearly centred, the series is the closed form.
    assert _white_series(0.5, 1e-4) == pytest.approx(flow.concentric_annulus_factor(0.5), rel=1e-6)


@pytest.mark.parametrize("kappa", [0.1, 0.42, 0.62, 0.87, 0.93])
def test_touching_table_against_nearly_touching_series(kappa):
    # The touching case is the limit of the series as the eccentricity goes to 1.
    assert touching_annulus_factor(kappa) == pytest.approx(_white_series(kappa, 0.9999), rel=5e-3)


def test_touching_ratio_tends_to_lubrication_limit():
    # Narrow gap: Q_ecc/Q_conc = 1 + 1.5 e^2 = 2.5 when touching (lubrication theory).
    ratio = touching_annulus_factor(0.97) / flow.concentric_annulus_factor(0.97)
    assert ratio == pytest.approx(NARROW_GAP_TOUCHING_RATIO, rel=5e-3)
    ratio_wide = touching_annulus_factor(0.5) / flow.concentric_annulus_factor(0.5)
    assert 1.0 < ratio_wide < NARROW_GAP_TOUCHING_RATIO


def test_table_kappas_are_increasing():
    ks = touching_table_kappas()
    assert ks == sorted(set(ks))


@settings(max_examples=80, deadline=None)
@given(st.floats(min_value=0.0, max_value=0.999), st.floats(min_value=1e-4, max_value=0.2))
def test_bracket_and_monotonicity(kappa, step):
    # Centred gives the least flow, touching the most; a bigger inner tube passes less.
    k2 = min(kappa + step, 1.0)
    conc, touch = flow.concentric_annulus_factor(kappa), touching_annulus_factor(kappa)
    assert conc <= touch * (1 + 1e-9) <= 1.0 + 1e-9
    assert touching_annulus_factor(k2) <= touch
    assert flow.concentric_annulus_factor(k2) <= conc


# --- Reynolds number and friction factors, checked against the fluids library --------

fluids = pytest.importorskip("fluids")


@pytest.mark.parametrize(("v", "d"), [(0.3, 0.006), (3.0, 0.0019), (1.0, 0.01)])
def test_reynolds_against_fluids(v, d):
    assert flow.reynolds(v, d, RHO, MU) == pytest.approx(
        fluids.core.Reynolds(V=v, D=d, rho=RHO, mu=MU), rel=1e-12
    )


@pytest.mark.parametrize("re", [10.0, 500.0, 2000.0])
def test_laminar_friction_against_fluids(re):
    # fluids switches to turbulent at 2,040; below that both are 64/Re.
    ref = fluids.friction.friction_factor(re, 0.0)
    assert flow.darcy_friction(re) == pytest.approx(ref, rel=1e-12)


@pytest.mark.parametrize("re", [4000.0, 1e4, 1e5, 1e6])
@pytest.mark.parametrize("ed", [0.0, 1e-4, 1e-2])
def test_turbulent_friction_against_fluids_colebrook(re, ed):
    ref = fluids.friction.friction_factor(re, eD=ed, Method="Colebrook")
    assert flow.darcy_friction(re, ed) == pytest.approx(ref, rel=1e-9)


def test_transitional_friction_is_continuous_and_between():
    lam = 64.0 / flow.LAMINAR_MAX_RE
    turb = fluids.friction.Colebrook(flow.TURBULENT_MIN_RE, 0.0)
    assert flow.darcy_friction(flow.LAMINAR_MAX_RE) == pytest.approx(lam, rel=1e-12)
    assert flow.darcy_friction(flow.TURBULENT_MIN_RE - 1e-6) == pytest.approx(turb, rel=1e-6)
    mid = flow.darcy_friction(3000.0)
    assert lam < mid < turb
    assert flow.regime_of(2299.9) == "laminar"
    assert flow.regime_of(2300.0) == "transitional"
    assert flow.regime_of(4000.0) == "turbulent"


@pytest.mark.parametrize(("q_ml_min", "d_mm"), [(100.0, 1.9), (3000.0, 2.5), (4000.0, 6.0)])
def test_pressure_drop_against_fluids(q_ml_min, d_mm):
    q, d, length, k = q_ml_min / 60e6, d_mm / 1000, 0.15, 1.5
    v = q / (math.pi * d * d / 4)
    re = fluids.core.Reynolds(V=v, D=d, rho=RHO, mu=MU)
    if 2040 <= re < 4000:
        pytest.skip("fluids and ours differ by design in the transition")
    fd = fluids.friction.friction_factor(re, 0.0, Method="Colebrook")
    ref = fluids.core.dP_from_K(fluids.core.K_from_f(fd, length, d) + k, RHO, v)
    ours = flow.pipe_pressure_drop(q, d, length, density_kg_m3=RHO, viscosity_pa_s=MU, minor_k=k)
    assert ours == pytest.approx(ref, rel=1e-9)


def test_mmhg_in_pascal():
    # 1 mmHg = 133.322387415 Pa (conventional); scipy's mmHg is the torr, 101325/760 Pa,
    # which differs by 1.4e-7 relative.
    from scipy.constants import mmHg

    ours = flow.MMHG_PA
    assert ours == pytest.approx(mmHg, rel=2e-7)
    assert ours != mmHg


def test_blood_defaults_are_sourced():
    blood = flow.blood_defaults()
    assert blood["viscosity_pa_s"].value == 0.0035  # Hund et al., Fluids 2017
    assert blood["density_kg_m3"].value == 1060
    assert "Hund" in blood["viscosity_pa_s"].source


def test_bundled_table_row_is_reproduced_by_the_solver():
    # The touching table is the solver's own output at its recorded grid; recomputing a
    # row guards against a stale table after a solver change (the accuracy itself is
    # checked against the exact series above).
    import csv

    from vascplan.paths import data_dir

    with open(data_dir() / "sizing" / "eccentric_annulus_factor.csv", encoding="utf-8") as fh:
        rows = {row["kappa"]: row for row in csv.DictReader(fh)}
    row = rows["0.300"]
    fresh = solve_annulus_factor(0.3, 1.0, int(row["cells"]))
    assert fresh == pytest.approx(float(row["factor_touching"]), rel=1e-8)


# --- Laminar entry loss (Shah 1978) against a numerical solution of developing flow ---


def test_laminar_entry_loss_against_numerical_developing_flow():
    # Shah's correlation (J Fluids Eng 1978;100:177, stated within about 2 % of the
    # full solutions) against the boundary-layer equations marched numerically
    # (tests/developing_flow.py). Compared as the whole apparent pressure drop,
    # 64 xi + K_entry, with xi = L/(D Re); 3 % allows for the grid and for the
    # boundary-layer model itself.
    from tests.developing_flow import developing_pressure_drop

    xis = [0.001, 0.005, 0.01, 0.02, 0.05, 0.1]
    numeric = developing_pressure_drop(xis)
    re = 1000.0
    for xi in xis:
        ours = 64.0 * xi + flow.laminar_entry_k(xi * re, re)
        assert ours == pytest.approx(numeric[xi], rel=0.03), xi
    # Far downstream the extra loss settles near Shah's 1.25 velocity heads.
    assert numeric[0.1] - 6.4 == pytest.approx(flow.SHAH_K_INFINITY, rel=0.08)


@settings(max_examples=60, deadline=None)
@given(
    lod=st.floats(min_value=1.0, max_value=2000.0),
    re=st.floats(min_value=1.0, max_value=2300.0),
    more=st.floats(min_value=1.0, max_value=3.0),
)
def test_entry_loss_grows_with_length_and_stays_below_the_long_tube_value(lod, re, more):
    k = flow.laminar_entry_k(lod, re)
    assert 0.0 <= k <= flow.SHAH_K_INFINITY
    assert flow.laminar_entry_k(lod * more, re) >= k - 1e-12


@settings(max_examples=80, deadline=None)
@given(
    d_mm=st.floats(min_value=0.8, max_value=8.0),
    lod=st.floats(min_value=5.0, max_value=2000.0),
    q_ml_min=st.floats(min_value=1.0, max_value=8000.0),
    more=st.floats(min_value=1.001, max_value=2.0),
)
def test_pressure_drop_increases_with_flow_in_every_regime(d_mm, lod, q_ml_min, more):
    # The cannula solver relies on a unique root: the loss must rise with the flow,
    # through the transition too, even with no minor losses.
    d = d_mm / 1000
    kw = dict(density_kg_m3=RHO, viscosity_pa_s=MU, developing=True)
    low = flow.pipe_pressure_drop(q_ml_min / 60e6, d, lod * d, **kw)
    high = flow.pipe_pressure_drop(q_ml_min * more / 60e6, d, lod * d, **kw)
    assert high > low


# Bird, Stewart and Lightfoot, Transport Phenomena, 2nd ed., Example 2.3-1 (from
# memory): glycerine in a horizontal tube 1 ft long, 0.1 in inside diameter; 40 psi
# drives 0.00398 ft3/min; the Hagen-Poiseuille equation (eq. 2.3-21) gives the
# viscosity 4.92 g/(cm s) = 0.492 Pa s. Tolerance 1 % (the book rounds to 3 figures).
def test_hagen_poiseuille_textbook_worked_example():
    psi, ft, inch, ft3_min = 6894.757, 0.3048, 0.0254, 0.3048**3 / 60
    dp, length, d, q = 40 * psi, 1 * ft, 0.1 * inch, 0.00398 * ft3_min
    mu = 0.492
    assert dp / flow.tube_resistance(d, length, mu) == pytest.approx(q, rel=0.01)


@pytest.mark.parametrize("re", [2300.0, 2600.0, 3000.0, 3500.0, 3999.0])
def test_transitional_friction_lies_between_the_laminar_and_turbulent_laws_of_fluids(re):
    # In the transition neither law holds; the interpolated factor must stay between
    # the laminar 64/Re and the turbulent Colebrook value at the same Re (fluids).
    lam = fluids.friction.friction_laminar(re)
    turb = fluids.friction.Colebrook(re, 0.0)
    assert lam * (1 - 1e-12) <= flow.darcy_friction(re) <= turb
