"""The access-site catalogue: where a sheath can go in, and what each site costs.

The table is ``data/access/sites.csv``, one row per site and side, every value with its
source column (a citation, or common practice / from memory). A contralateral
"up-and-over" route is not a site of its own: it is the other groin's retrograde
common femoral route, found by the path search and marked by the ``crossover`` factor.
"""

from __future__ import annotations

import csv
from dataclasses import dataclass
from functools import cache

from vascplan.errors import InputError
from vascplan.paths import data_dir

SITES_FILE = "sites.csv"
DIRECTIONS = ("retrograde", "antegrade")
POSITIONS = ("supine", "prone")


@dataclass(frozen=True)
class AccessSite:
    """One puncture site of the catalogue.

    Attributes
    ----------
    id : str
        Site id (``R-CFA``, ``L-RAD-DIST``).
    segment : str
        Segment id of the arterial tree it punctures.
    side : str
        ``L`` or ``R``.
    name : str
        Plain name.
    puncture_fraction : float
        Usual puncture point as a fraction of the segment's length from its origin [-].
    skin_depth_cm : float
        Skin-to-artery allowance [cm], added to the path length.
    directions : tuple of str
        Directions the site allows (``retrograde``, ``antegrade``).
    compressible : bool
        Whether the puncture can be compressed over bone.
    crossover : bool
        Whether a route from this site may go up-and-over the aortic bifurcation to
        the other leg (the common femoral only; a puncture below the groin serves its
        own leg, common practice).
    position : str
        Patient position needed (``supine`` or ``prone``).
    upper_sheath_fr : float
        Usual largest sheath for the site [Fr].
    complication_relative : float
        Relative vascular-complication risk, retrograde common femoral = 1 [-].
    bleeding_relative : float
        Relative access-site bleeding risk, retrograde common femoral = 1 [-].
    sources : dict of str to str
        The source of each value, by column name.
    notes : str
        A sentence for the user.
    """

    id: str
    segment: str
    side: str
    name: str
    puncture_fraction: float
    skin_depth_cm: float
    directions: tuple[str, ...]
    compressible: bool
    crossover: bool
    position: str
    upper_sheath_fr: float
    complication_relative: float
    bleeding_relative: float
    sources: dict[str, str]
    notes: str

    def puncture_cm(self, segment_length_cm: float) -> float:
        """Puncture point [cm from the segment's origin] on a segment of this length."""
        return self.puncture_fraction * segment_length_cm


def _number(path: str, row: int, column: str, raw: str) -> float:
    try:
        return float(raw)
    except ValueError:
        raise InputError(path, f"row {row}.{column}", f"must be a number (got {raw!r})") from None


@cache
def load_sites() -> dict[str, AccessSite]:
    """Read the catalogue.

    Returns
    -------
    dict of str to AccessSite
        By site id, in table order.

    Raises
    ------
    InputError
        A malformed row (bad number, direction or position, missing source).

    Examples
    --------
    >>> load_sites()["R-RAD"].directions
    ('retrograde',)
    """
    path = data_dir() / "access" / SITES_FILE
    src = str(path)
    try:
        with open(path, newline="", encoding="utf-8") as fh:
            rows = list(csv.DictReader(fh))
    except FileNotFoundError:
        raise InputError(src, "", "access-site catalogue not found") from None
    out: dict[str, AccessSite] = {}
    for i, row in enumerate(rows, start=2):
        directions = tuple(d.strip() for d in row["directions"].split(";") if d.strip())
        bad = [d for d in directions if d not in DIRECTIONS]
        if bad or not directions:
            raise InputError(src, f"row {i}.directions", f"allowed: {', '.join(DIRECTIONS)}")
        if row["position"] not in POSITIONS:
            raise InputError(src, f"row {i}.position", f"allowed: {', '.join(POSITIONS)}")
        sources = {k[: -len("_source")]: v for k, v in row.items() if k.endswith("_source")}
        missing = [k for k, v in sources.items() if not v.strip()]
        if missing:
            raise InputError(src, f"row {i}.{missing[0]}_source", "every value needs its source")
        out[row["site"]] = AccessSite(
            id=row["site"],
            segment=row["segment"],
            side=row["side"],
            name=row["name"],
            puncture_fraction=_number(src, i, "puncture_fraction", row["puncture_fraction"]),
            skin_depth_cm=_number(src, i, "skin_depth_cm", row["skin_depth_cm"]),
            directions=directions,
            compressible=row["compressible"].strip().lower() == "yes",
            crossover=row.get("crossover", "no").strip().lower() == "yes",
            position=row["position"],
            upper_sheath_fr=_number(src, i, "upper_sheath_fr", row["upper_sheath_fr"]),
            complication_relative=_number(src, i, "complication_relative",
                                          row["complication_relative"]),
            bleeding_relative=_number(src, i, "bleeding_relative", row["bleeding_relative"]),
            sources=sources,
            notes=row.get("notes", ""),
        )
    return out


def site_ids_for(name: str) -> list[str]:
    """Site ids matching a user's word: a site id, or a segment id (all its sites).

    Examples
    --------
    >>> site_ids_for("L-RAD")
    ['L-RAD', 'L-RAD-DIST']
    """
    sites = load_sites()
    if name in sites and sites[name].segment != name:
        return [name]
    found = [s.id for s in sites.values() if s.segment == name]
    if found:
        return found
    return [name] if name in sites else []
