"""French sizes, outer diameters and the sheath-to-artery ratio.

The French (Charriere) scale gives a tube's outer diameter: 1 Fr is exactly 1/3 mm.
Catheters and cannulas are labelled by their outer size. Introducer sheaths are
labelled by the largest device they admit, i.e. their inner size (ISO 11070:2014,
7.2, seen via a summary); their outer diameter is larger by the wall, and varies by
maker, so the user's measured ``outer_mm`` wins and a table is the fallback.
"""

from __future__ import annotations

import bisect
import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Literal

from vascplan.sizing.tables import read_csv

MM_PER_FR = 1.0 / 3.0
"""Outer diameter per French [mm]: 1 Fr = 1/3 mm (the Charrière scale, exact; common practice)."""

SHEATH_TABLE = "sheath_walls.csv"

Label = Literal["outer", "inner"]


@dataclass(frozen=True)
class OuterDiameter:
    """A device's outer diameter and how it was obtained.

    Attributes
    ----------
    mm : float
        Outer diameter [mm].
    source : str
        ``"measured"`` (given by the user), ``"label"`` (the French label is the outer
        size) or ``"wall-allowance"`` (a sheath's inner label plus a tabulated wall).
    assumption : str or None
        The sentence to show the user when the value is not a measurement or a label.
    """

    mm: float
    source: str
    assumption: str | None = None


def _check_size(name: str, value: float) -> float:
    value = float(value)
    if not math.isfinite(value) or value <= 0.0:
        raise ValueError(f"{name} must be a positive number, got {value}")
    return value


def fr_to_mm(fr: float) -> float:
    """Outer diameter of a French size.

    Parameters
    ----------
    fr : float
        Size [Fr], positive.

    Returns
    -------
    float
        Diameter [mm], ``fr / 3`` exactly.

    Examples
    --------
    >>> fr_to_mm(9)
    3.0
    """
    return _check_size("fr", fr) * MM_PER_FR


def mm_to_fr(mm: float) -> float:
    """French size of an outer diameter.

    Parameters
    ----------
    mm : float
        Diameter [mm], positive.

    Returns
    -------
    float
        Size [Fr], ``3 * mm``.

    Examples
    --------
    >>> mm_to_fr(2.0)
    6.0
    """
    return _check_size("mm", mm) * 3.0


def interpolate(x: float, xs: Sequence[float], ys: Sequence[float]) -> float:
    """Piecewise-linear interpolation in a table, end values kept beyond the ends.

    Parameters
    ----------
    x : float
        Where to read the table.
    xs, ys : sequence of float
        The table, ``xs`` increasing.

    Examples
    --------
    >>> interpolate(5.0, [4.0, 6.0], [1.0, 2.0])
    1.5
    >>> interpolate(9.0, [4.0, 6.0], [1.0, 2.0])
    2.0
    """
    if x <= xs[0]:
        return float(ys[0])
    if x >= xs[-1]:
        return float(ys[-1])
    hi = bisect.bisect_right(xs, x)
    x0, x1, y0, y1 = xs[hi - 1], xs[hi], ys[hi - 1], ys[hi]
    slope = (y1 - y0) / (x1 - x0)
    return float(slope * (x - x0) + y0)


def sheath_outer_table() -> tuple[list[float], list[float], tuple[dict[str, str], ...]]:
    """The standard-wall sheath table: inner labels [Fr], outer diameters [mm], rows."""
    rows = read_csv(SHEATH_TABLE)
    fr = [float(r["inner_fr"]) for r in rows]
    od = [float(r["outer_mm"]) for r in rows]
    return fr, od, rows


def sheath_outer_mm(inner_fr: float) -> tuple[float, str]:
    """Outer diameter of a standard-wall sheath from its inner label, with the basis.

    Parameters
    ----------
    inner_fr : float
        Sheath label (inner size) [Fr].

    Returns
    -------
    (float, str)
        Outer diameter [mm] and a sentence naming the table row(s) and their certainty.

    Notes
    -----
    Between table rows the outer diameter is interpolated linearly; beyond the ends
    the wall allowance (outer minus label) of the end row is kept.
    """
    inner_fr = _check_size("inner_fr", inner_fr)
    fr, od, rows = sheath_outer_table()
    label_mm = inner_fr * MM_PER_FR
    if inner_fr <= fr[0]:
        allowance = od[0] - fr[0] * MM_PER_FR
        used = [rows[0]]
        how = f"the {rows[0]['inner_fr']} Fr row's wall allowance (kept for smaller sizes)"
        if inner_fr == fr[0]:
            how = f"the {rows[0]['inner_fr']} Fr row"
    elif inner_fr >= fr[-1]:
        allowance = od[-1] - fr[-1] * MM_PER_FR
        used = [rows[-1]]
        how = f"the {rows[-1]['inner_fr']} Fr row's wall allowance (kept for larger sizes)"
        if inner_fr == fr[-1]:
            how = f"the {rows[-1]['inner_fr']} Fr row"
    else:
        allowance = interpolate(inner_fr, fr, od) - label_mm
        hi = bisect.bisect_left(fr, inner_fr)
        if fr[hi] == inner_fr:
            used = [rows[hi]]
            how = f"the {rows[hi]['inner_fr']} Fr row"
        else:
            used = [rows[hi - 1], rows[hi]]
            how = (
                f"interpolation between the {rows[hi - 1]['inner_fr']} and "
                f"{rows[hi]['inner_fr']} Fr rows"
            )
    certainty = " and ".join(sorted({r["certainty"] for r in used}))
    sources = "; ".join(sorted({r["source"] for r in used}))
    outer = label_mm + float(allowance)
    basis = (
        f"{inner_fr:g} Fr sheath (labelled by inner size): outer diameter {outer:.2f} mm assumed "
        f"= {label_mm:.2f} mm label + {float(allowance):.2f} mm wall allowance, from {how} of the "
        f"standard-wall table ({sources}; {certainty}); outer size varies by maker, give "
        f"the measured outer diameter when known."
    )
    return outer, basis


def device_outer_mm(size_fr: float, label: Label, outer_mm: float | None = None) -> OuterDiameter:
    """Outer diameter of a device from its French label.

    Parameters
    ----------
    size_fr : float
        The label [Fr].
    label : {"outer", "inner"}
        ``"outer"`` for catheters and cannulas (labelled by outer size), ``"inner"``
        for introducer sheaths (labelled by inner size).
    outer_mm : float, optional
        The measured or maker's outer diameter [mm]; used as is when given.

    Returns
    -------
    OuterDiameter

    Raises
    ------
    ValueError
        A size that is not a positive number, or an unknown label.

    Examples
    --------
    >>> device_outer_mm(18, "outer").mm
    6.0
    >>> device_outer_mm(6, "inner").mm
    2.62
    >>> device_outer_mm(6, "inner", outer_mm=2.5).source
    'measured'
    """
    _check_size("size_fr", size_fr)
    if label not in ("outer", "inner"):
        raise ValueError(f"label must be 'outer' or 'inner', got {label!r}")
    if outer_mm is not None:
        return OuterDiameter(_check_size("outer_mm", outer_mm), "measured", None)
    if label == "outer":
        return OuterDiameter(fr_to_mm(size_fr), "label", None)
    mm, basis = sheath_outer_mm(size_fr)
    return OuterDiameter(round(mm, 6), "wall-allowance", basis)


def sar(device_od_mm: float, lumen_mm: float) -> float:
    """Sheath-to-artery ratio: device outer diameter over the minimal lumen diameter.

    Parameters
    ----------
    device_od_mm : float
        Device outer diameter [mm].
    lumen_mm : float
        Minimal lumen diameter of the artery (MLD) [mm].

    Returns
    -------
    float
        The ratio [-]; compare with the threshold of ``data/sizing/thresholds.csv``
        (1.05, Hayashida et al., JACC Cardiovasc Interv 2011).

    Examples
    --------
    >>> round(sar(6.0, 6.5), 3)
    0.923
    """
    return _check_size("device_od_mm", device_od_mm) / _check_size("lumen_mm", lumen_mm)
