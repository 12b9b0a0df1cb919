"""Laminar flow developing in a tube from a uniform entry profile, solved numerically.

An independent reference for the entry loss of ``vascplan.sizing.flow.laminar_entry_k``
(Shah 1978): the boundary-layer (parabolized) equations of axisymmetric flow,

    u du/dxi + v du/deta = -dP/dxi + 4 (1/eta) d/deta(eta du/deta),
    (1/eta) d(eta v)/deta + du/dxi = 0,

with ``xi = x / (D Re)``, ``eta = r / R``, ``u`` over the mean velocity and ``P`` over
``rho U**2``, marched downstream implicitly (coefficients lagged one step, upwind
convection) with the pressure gradient fixed at each step by the flow rate. This is
the classical method of Bodoia and Osterle (Appl Sci Res 1961;10:265; from memory).
"""

from __future__ import annotations

import math

import numpy as np
from scipy.linalg import solve_banded


def developing_pressure_drop(xis: list[float], cells: int = 200) -> dict[float, float]:
    """Pressure drop from the entry to each ``xi``, in velocity heads ``rho U**2 / 2``."""
    eta = np.linspace(0.0, 1.0, cells + 1)
    h = eta[1] - eta[0]
    u = np.ones(cells + 1)
    u[-1] = 0.0
    v = np.zeros(cells + 1)
    weight = np.full(cells + 1, h)
    weight[0] = weight[-1] = h / 2
    weight = 2.0 * weight * eta  # trapezoid rule for the flow rate integral of 2 u eta
    mass = float(weight @ u)
    end = max(xis)
    steps = np.logspace(-7, math.log10(end), int(400 * (math.log10(end) + 7)))
    grid = np.union1d(np.concatenate([[0.0], steps]), xis)
    m = cells  # unknowns u_0 .. u_{cells-1}; the wall holds u = 0
    inner = np.arange(1, m)
    e = eta[inner]
    c_plus = 4.0 * (e + h / 2) / (e * h * h)
    c_minus = 4.0 * (e - h / 2) / (e * h * h)
    pressure = 0.0
    out: dict[float, float] = {}
    wanted = set(xis)
    for k in range(1, grid.size):
        dxi = grid[k] - grid[k - 1]
        diag = u[:m] / dxi
        upper = np.zeros(m)
        lower = np.zeros(m)
        diag[inner] += c_plus + c_minus
        upper[inner] = -c_plus
        lower[inner] = -c_minus
        diag[0] += 16.0 / h**2  # axis: 4 * 2 d2u/deta2 with du/deta = 0
        upper[0] = -16.0 / h**2
        vv = v[inner]
        pos = vv > 0
        diag[inner] += np.abs(vv) / h
        lower[inner] += np.where(pos, -vv / h, 0.0)
        upper[inner] += np.where(pos, 0.0, vv / h)
        band = np.zeros((3, m))
        band[0, 1:] = upper[:-1]
        band[1] = diag
        band[2, :-1] = lower[1:]
        a = solve_banded((1, 1), band, u[:m] * u[:m] / dxi)
        b = solve_banded((1, 1), band, -np.ones(m))
        gradient = (mass - weight[:m] @ a) / (weight[:m] @ b)  # u = a + gradient * b
        new = np.zeros(cells + 1)
        new[:m] = a + gradient * b
        source = -(new - u) / dxi * eta
        flux = np.concatenate([[0.0], np.cumsum((source[1:] + source[:-1]) / 2 * h)])
        v = np.zeros(cells + 1)
        v[1:] = flux[1:] / eta[1:]
        u = new
        pressure += gradient * dxi
        if grid[k] in wanted:
            out[float(grid[k])] = -2.0 * pressure
    return out
