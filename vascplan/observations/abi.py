"""Ankle-brachial index as the AHA scientific statement prescribes, read with the 2016 bands.

Computation: Aboyans V, Criqui MH, Abraham P, et al. Measurement and interpretation of
the ankle-brachial index: a scientific statement from the American Heart Association.
Circulation 2012;126:2890-2909. For each leg, the higher of the posterior tibial and
dorsalis pedis systolic pressures is divided by the higher of the two arm systolic
pressures; the result is reported to two decimals.

Reading: the 2016 AHA/ACC guideline on lower-extremity peripheral artery disease
(bands in ``data/observations/abi_bands.csv``): > 1.40 noncompressible, 1.00-1.40 normal, 0.91-0.99
borderline, <= 0.90 abnormal. The bands were written for peripheral artery disease in
ambulant patients; a leg with a large-bore device in its artery is a different setting,
so the band is shown as a reading, not a diagnosis.
"""

from __future__ import annotations

import csv
from collections.abc import Collection
from dataclasses import dataclass
from decimal import ROUND_HALF_UP, Decimal
from functools import lru_cache

from vascplan.paths import data_dir

ANKLE_ARTERIES = ("PTA", "DPA")
"""The two ankle pressures the statement uses."""


def arm_sites(pressure_sites: Collection[str]) -> dict[str, str]:
    """Which recorded site gives each arm's pressure: ``L-ARM`` / ``R-ARM``, else the
    brachial artery (``L-BRA`` / ``R-BRA``), which is the same cuff measurement.

    >>> arm_sites({"R-BRA", "L-ARM", "L-BRA", "R-PTA"})
    {'L': 'L-ARM', 'R': 'R-BRA'}
    """
    out = {}
    for side in ("L", "R"):
        for site in (f"{side}-ARM", f"{side}-BRA"):
            if site in pressure_sites:
                out[side] = site
                break
    return out


@dataclass(frozen=True)
class Band:
    name: str
    lower_exclusive: float | None
    upper_inclusive: float | None
    meaning: str
    source: str


@lru_cache(maxsize=1)
def bands() -> list[Band]:
    """The bands of ``data/observations/abi_bands.csv``, lowest first."""
    with open(data_dir() / "observations" / "abi_bands.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    return [
        Band(
            r["band"],
            float(r["lower_exclusive"]) if r["lower_exclusive"] else None,
            float(r["upper_inclusive"]) if r["upper_inclusive"] else None,
            r["meaning"],
            r["source"],
        )
        for r in rows
    ]


@dataclass(frozen=True)
class AbiResult:
    """One leg's index.

    Attributes
    ----------
    index : float or None
        Two decimals; None when no ankle or no arm pressure was measured.
    band : str or None
        ``noncompressible``, ``normal``, ``borderline`` or ``abnormal``.
    basis : str
        Which pressures were used, or what is missing.
    """

    index: float | None
    band: str | None
    basis: str


def band_of(index: float) -> str:
    """The 2016 AHA/ACC band of a two-decimal index.

    >>> band_of(0.90), band_of(0.91), band_of(1.0), band_of(1.41)
    ('abnormal', 'borderline', 'normal', 'noncompressible')
    """
    for b in bands():
        above = b.lower_exclusive is None or index > b.lower_exclusive
        below = b.upper_inclusive is None or index <= b.upper_inclusive
        if above and below:
            return b.name
    raise ValueError(f"ABI {index} falls in no band of data/observations/abi_bands.csv")


def ankle_brachial_index(ankle_mmhg: dict[str, float], arm_mmhg: dict[str, float]) -> AbiResult:
    """One leg's ankle-brachial index (Aboyans et al. 2012).

    Parameters
    ----------
    ankle_mmhg : dict
        Systolic pressures [mmHg] at that leg's ankle arteries, keyed ``PTA`` / ``DPA``
        (other keys are ignored).
    arm_mmhg : dict
        Systolic arm pressures [mmHg], keyed ``L`` / ``R``. The statement asks for both
        arms; with one arm only the index is computed and the basis says so.

    Returns
    -------
    AbiResult

    Examples
    --------
    >>> r = ankle_brachial_index({"PTA": 110, "DPA": 96}, {"L": 124, "R": 130})
    >>> r.index, r.band
    (0.85, 'abnormal')
    """
    ankle = {a: p for a, p in ankle_mmhg.items() if a in ANKLE_ARTERIES}
    if not ankle:
        return AbiResult(None, None, "no PTA or DPA pressure measured")
    if not arm_mmhg:
        return AbiResult(None, None, "no arm pressure measured")
    top_artery = max(ankle, key=lambda a: ankle[a])
    top_arm = max(arm_mmhg, key=lambda s: arm_mmhg[s])
    if arm_mmhg[top_arm] <= 0:
        return AbiResult(None, None, "arm pressure is 0 mmHg")
    ratio = Decimal(str(ankle[top_artery])) / Decimal(str(arm_mmhg[top_arm]))
    index = float(ratio.quantize(Decimal("0.01"), rounding=ROUND_HALF_UP))
    basis = (
        f"{top_artery} {ankle[top_artery]:g} mmHg (higher of "
        f"{', '.join(a for a in ANKLE_ARTERIES if a in ankle)}) / "
        f"{top_arm}-ARM {arm_mmhg[top_arm]:g} mmHg (higher arm)"
    )
    missing = [a for a in ANKLE_ARTERIES if a not in ankle]
    if missing:
        basis += f"; {' and '.join(missing)} not measured"
    if len(arm_mmhg) < 2:
        basis += "; one arm only (the statement asks for both)"
    return AbiResult(index, band_of(index), basis)
