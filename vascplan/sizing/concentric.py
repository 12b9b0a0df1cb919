"""The concentric annulus in closed form: the piece both the flow and the eccentric
annulus modules stand on (it imports nothing of the house).

References
----------
Bird, Stewart and Lightfoot, *Transport Phenomena*, 2nd ed., Wiley 2002, eq. 2.4-17.
"""

from __future__ import annotations

import math


def concentric_annulus_factor(kappa: float) -> float:
    """Flow factor of a concentric annulus, exact (laminar, fully developed).

    Parameters
    ----------
    kappa : float
        Inner radius over outer radius, ``0 <= kappa <= 1`` [-].

    Returns
    -------
    float
        ``(1 - k**4) - (1 - k**2)**2 / ln(1/k)``: the annulus flow over the open-tube
        flow (Bird, Stewart and Lightfoot, 2nd ed., eq. 2.4-17). 1 at ``kappa`` 0,
        0 at 1.

    Examples
    --------
    >>> round(concentric_annulus_factor(0.5), 5)
    0.12598
    """
    if not 0.0 <= kappa <= 1.0 or math.isnan(kappa):
        raise ValueError(f"kappa must be in [0, 1], got {kappa}")
    if kappa == 0.0:
        return 1.0
    if kappa == 1.0:
        return 0.0
    if kappa > 0.999:
        # Series in the gap g = 1 - kappa avoids cancellation: (4/3) g**3 (1 - g/2 + g**2/60).
        g = 1.0 - kappa
        return 4.0 / 3.0 * g**3 * (1.0 - g / 2.0 + g * g / 60.0)
    one_k2 = 1.0 - kappa * kappa
    return (1.0 - kappa**4) - one_k2 * one_k2 / math.log(1.0 / kappa)
