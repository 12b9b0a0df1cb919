"""Laminar flow through an eccentric annulus, solved numerically over the cross-section.

A sheath or cannula in an artery rarely sits in the middle: it lies against the wall.
The flow round it then exceeds the concentric-annulus value (Bird, Stewart and
Lightfoot, *Transport Phenomena*, 2nd ed., ch. 2), so the concentric result is a lower
bound and the touching (fully eccentric) result an upper bound for the flow round a
straight device.

The fully developed axial velocity ``w`` solves the Poisson problem
``laplacian(w) = -G / mu`` on the cross-section with ``w = 0`` on both walls. In
dimensionless form (outer radius 1, ``G / mu = 1``) the flow rate of a tube is
``pi / 8``; every result here is returned as the ratio to that tube, the *flow factor*.

The solver uses second-order finite differences on a square grid with the
Shortley-Weller stencil at the curved walls and the mirror symmetry about the line
of centres (only the upper half is solved). The touching case, which the route
planner and the risk module call often, is read from a table computed once by this
solver (``data/sizing/eccentric_annulus_factor.csv``, written by
:func:`build_touching_table`) and interpolated monotonically, so that a call takes
microseconds.
"""

from __future__ import annotations

import csv
import math
from functools import lru_cache
from typing import TYPE_CHECKING, Any

from vascplan.paths import data_dir
from vascplan.sizing.concentric import concentric_annulus_factor

if TYPE_CHECKING:
    import numpy as np

TABLE_FILE = "sizing/eccentric_annulus_factor.csv"
"""Relative path (under ``data/``) of the touching-annulus ratio table."""

NARROW_GAP_TOUCHING_RATIO = 2.5
"""Eccentric/concentric flow ratio of a touching annulus as the gap closes.

Lubrication theory: the local gap is ``delta (1 + e cos theta)``, the local flow goes
as the gap cubed, and the mean of ``(1 + e cos theta)**3`` over a turn is
``1 + 1.5 e**2``, which is 2.5 when the tubes touch (``e = 1``). See White, *Viscous
Fluid Flow*, section on the eccentric annulus (from memory).
"""


def _axis_hit(
    px: np.ndarray, py: np.ndarray, dx: float, dy: float, cx: float, r: float, inside: bool
) -> np.ndarray:
    """Distance along (dx, dy) from points to the circle (cx, 0, r); inf when missed.

    ``inside`` says whether the points lie inside the circle (the ray then always
    leaves it at the positive root) or outside (the ray may enter at the smaller root).
    """
    import numpy as np

    ox = px - cx
    oy = py
    b = ox * dx + oy * dy
    c = ox * ox + oy * oy - r * r
    disc = b * b - c
    out = np.full(px.shape, np.inf)
    ok = disc >= 0
    sq = np.sqrt(np.where(ok, disc, 0.0))
    if inside:
        t = -b + sq
        out[ok] = t[ok]
    else:
        t = -b - sq
        hit = ok & (t > 0)
        out[hit] = t[hit]
    return out


def solve_annulus_factor(kappa: float, eccentricity: float, cells: int = 200) -> float:
    """Flow factor of an annulus, solved by finite differences.

    Parameters
    ----------
    kappa : float
        Inner radius over outer radius, ``0 <= kappa < 1`` [-].
    eccentricity : float
        Distance between the centres over the largest possible (``1 - kappa``):
        0 concentric, 1 touching [-].
    cells : int
        Grid cells across the outer diameter; the error falls as ``cells**-2``.

    Returns
    -------
    float
        Flow rate over the flow of the open tube of the same outer radius [-].

    Notes
    -----
    Second-order finite differences with the Shortley-Weller stencil at both walls;
    the flow is the sum of the nodal velocities times the cell area. With 200 cells
    the result is within about 0.5 % of the exact solution for ``kappa <= 0.9``.

    Examples
    --------
    >>> round(solve_annulus_factor(0.0, 0.0), 2)   # the open tube
    1.0
    """
    import numpy as np
    from scipy.sparse import csr_matrix
    from scipy.sparse.linalg import spsolve

    if not 0.0 <= kappa < 1.0:
        raise ValueError(f"kappa must be in [0, 1), got {kappa}")
    if not 0.0 <= eccentricity <= 1.0:
        raise ValueError(f"eccentricity must be in [0, 1], got {eccentricity}")
    h = 2.0 / cells
    d = eccentricity * (1.0 - kappa)
    xs = -1.0 + h * np.arange(cells + 1)
    ys = h * (np.arange(cells // 2 + 1) + 0.5)
    gx, gy = np.meshgrid(xs, ys, indexing="ij")
    tol = 1e-9
    inside = (gx**2 + gy**2 < 1.0 - tol) & ((gx - d) ** 2 + gy**2 > kappa**2 + tol)
    if kappa == 0.0:
        inside = gx**2 + gy**2 < 1.0 - tol
    index = -np.ones(gx.shape, dtype=np.int64)
    ii, jj = np.nonzero(inside)
    n = ii.size
    index[ii, jj] = np.arange(n)
    px, py = gx[ii, jj], gy[ii, jj]

    diag = np.zeros(n)
    rows: list[np.ndarray] = []
    cols: list[np.ndarray] = []
    vals: list[np.ndarray] = []

    def arm(di: int, dj: int) -> tuple[np.ndarray, np.ndarray]:
        """Arm length and neighbour index (-1 for a wall) in one direction."""
        ni, nj = ii + di, jj + dj
        length = np.full(n, h)
        nb = -np.ones(n, dtype=np.int64)
        valid = (ni >= 0) & (ni <= cells) & (nj < ys.size)
        if dj == -1:
            # The mirror: the node below the first row is the node itself.
            mirror = nj < 0
            nb[mirror] = np.arange(n)[mirror]
            valid &= ~mirror
        nb[valid] = index[ni[valid], nj[valid]]
        wall = nb < 0
        if np.any(wall):
            t_out = _axis_hit(px[wall], py[wall], di, dj, 0.0, 1.0, inside=True)
            if kappa > 0.0:
                t_in = _axis_hit(px[wall], py[wall], di, dj, d, kappa, inside=False)
                t_out = np.minimum(t_out, t_in)
            length[wall] = np.clip(t_out, 1e-6 * h, h)
        return length, nb

    east, e_nb = arm(1, 0)
    west, w_nb = arm(-1, 0)
    north, n_nb = arm(0, 1)
    south, s_nb = arm(0, -1)
    me = np.arange(n)
    for a, b, nb, b_nb in ((east, west, e_nb, w_nb), (north, south, n_nb, s_nb)):
        # d2w ~ 2/(a+b) * ((w_a - w)/a - (w - w_b)/b), walls hold w = 0.
        ca = 2.0 / (a * (a + b))
        cb = 2.0 / (b * (a + b))
        diag -= ca + cb
        for coef, idx in ((ca, nb), (cb, b_nb)):
            has = idx >= 0
            rows.append(me[has])
            cols.append(idx[has])
            vals.append(coef[has])
    rows.append(me)
    cols.append(me)
    vals.append(diag)
    mat = csr_matrix(
        (np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(n, n)
    )
    w = spsolve(mat, -np.ones(n))
    flow = 2.0 * float(np.sum(w)) * h * h
    return flow / (math.pi / 8.0)


def touching_table_kappas() -> list[float]:
    """Radius ratios at which the touching-annulus table is computed [-]."""
    fine = [0.0, 0.005, 0.01, 0.02, 0.03, 0.05, 0.075]
    coarse = [round(0.1 + 0.05 * i, 3) for i in range(17)]  # 0.10 .. 0.90
    narrow = [0.92, 0.94, 0.96, 0.97, 0.98]
    return fine + coarse + narrow


def _cells_for(kappa: float) -> int:
    """Grid cells across the diameter so that the widest gap holds at least ~80 cells."""
    gap = 2.0 * (1.0 - kappa)  # widest gap of a touching annulus, in outer radii
    cells = int(math.ceil(2.0 * 80.0 / gap / 2.0) * 2)
    return max(400, min(cells, 4000))


def build_touching_table(path: str | None = None) -> list[tuple[float, float, int]]:
    """Compute the touching-annulus flow factors and write them as CSV.

    Parameters
    ----------
    path : str, optional
        Where to write; default the bundled ``data/sizing/eccentric_annulus_factor.csv``.

    Returns
    -------
    list of (kappa, factor, cells)
        ``factor`` is the touching-annulus flow over the open-tube flow [-].

    Notes
    -----
    Takes a minute; run ``python -m vascplan.sizing.eccentric`` after changing the
    solver. The tests check the table against fresh solves and against the exact
    bipolar-coordinate series.
    """
    from vascplan.fileio import atomic_write_text

    rows = []
    for kappa in touching_table_kappas():
        cells = _cells_for(kappa)
        factor = 1.0 if kappa == 0.0 else solve_annulus_factor(kappa, 1.0, cells)
        rows.append((kappa, factor, cells))
    lines = ["kappa,factor_touching,cells,source"]
    src = "computed by vascplan.sizing.eccentric.solve_annulus_factor (finite differences)"
    for kappa, factor, cells in rows:
        lines.append(f"{kappa:.3f},{factor:.9e},{cells},{src}")
    lines.append(f"1.000,0,0,narrow-gap limit (factor 0; ratio {NARROW_GAP_TOUCHING_RATIO})")
    target = path or str(data_dir() / TABLE_FILE)
    atomic_write_text(target, "\n".join(lines) + "\n")
    return rows


@lru_cache(maxsize=1)
def _touching_interpolant() -> Any:
    """PCHIP of ``factor / (1 - kappa)**3`` over kappa (monotone between table points)."""
    import numpy as np
    from scipy.interpolate import PchipInterpolator

    kappas: list[float] = []
    scaled: list[float] = []
    with open(data_dir() / TABLE_FILE, newline="", encoding="utf-8") as fh:
        for row in csv.DictReader(fh):
            kappa = float(row["kappa"])
            if kappa >= 1.0:
                continue
            kappas.append(kappa)
            scaled.append(float(row["factor_touching"]) / (1.0 - kappa) ** 3)
    # Narrow-gap limit: concentric factor ~ (4/3) gap**3, touching 2.5 times that.
    kappas.append(1.0)
    scaled.append(NARROW_GAP_TOUCHING_RATIO * 4.0 / 3.0)
    return PchipInterpolator(np.array(kappas), np.array(scaled))


def touching_annulus_factor(kappa: float) -> float:
    """Flow factor of an annulus whose inner tube lies against the outer wall.

    Parameters
    ----------
    kappa : float
        Inner radius over outer radius, ``0 <= kappa <= 1`` [-].

    Returns
    -------
    float
        Flow over the open-tube flow of the same outer radius [-]; 0 when ``kappa`` is 1.

    Notes
    -----
    Interpolated (monotone cubic, PCHIP) in the bundled table computed by
    :func:`solve_annulus_factor`; the narrow-gap end uses the lubrication limit
    (:data:`NARROW_GAP_TOUCHING_RATIO`). Error under about 0.5 %.

    Examples
    --------
    >>> touching_annulus_factor(0.0)
    1.0
    >>> touching_annulus_factor(1.0)
    0.0
    """
    if not 0.0 <= kappa <= 1.0:
        raise ValueError(f"kappa must be in [0, 1], got {kappa}")
    if kappa == 0.0:
        return 1.0
    if kappa == 1.0:
        return 0.0
    return min(1.0, float(_touching_interpolant()(kappa)) * (1.0 - kappa) ** 3)


@lru_cache(maxsize=512)
def _cached_solve(kappa: float, eccentricity: float) -> float:
    return solve_annulus_factor(kappa, eccentricity, _cells_for(kappa) // 2)


def eccentric_annulus_factor(kappa: float, eccentricity: float = 1.0) -> float:
    """Flow factor of an annulus with any eccentricity.

    Parameters
    ----------
    kappa : float
        Inner radius over outer radius, ``0 <= kappa <= 1`` [-].
    eccentricity : float
        0 concentric, 1 touching (the default: the sheath lies against the wall) [-].

    Returns
    -------
    float
        Flow over the open-tube flow of the same outer radius [-].

    Notes
    -----
    ``eccentricity`` 1 reads the table (:func:`touching_annulus_factor`); other values
    are solved by finite differences (tens of milliseconds, cached by the ratios
    rounded to 4 decimals). The solve at the rounded radius ratio is scaled by the exact
    concentric factor's ratio between the given and the rounded ratio: near a narrow gap
    the factor goes as ``(1 - kappa)**3``, so rounding alone would shift it by up to about
    1 % and could put it below the concentric flow, which no offset can pass (Piercy,
    Hooper and Winny 1933, as in White, Viscous Fluid Flow: flow rises with eccentricity).
    """
    if not 0.0 <= eccentricity <= 1.0:
        raise ValueError(f"eccentricity must be in [0, 1], got {eccentricity}")
    if eccentricity == 1.0 or kappa in (0.0, 1.0):
        return touching_annulus_factor(kappa)
    if not 0.0 <= kappa <= 1.0:
        raise ValueError(f"kappa must be in [0, 1], got {kappa}")
    kappa_key = min(round(kappa, 4), 0.9999)  # 1.0 would be no gap at all
    factor = _cached_solve(kappa_key, round(eccentricity, 4))
    if 0.0 < kappa_key < 1.0:
        factor *= concentric_annulus_factor(kappa) / concentric_annulus_factor(kappa_key)
    return factor


if __name__ == "__main__":  # pragma: no cover - maintenance
    for k, f, c in build_touching_table():
        print(f"{k:.3f} {f:.6e} cells={c}")
