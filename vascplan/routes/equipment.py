"""Equipment per access (issue 12): which sheath or catheter a route assumes, and why.

The therapeutic access takes the procedure's sheath; a crossing access the default of
``data/access/equipment.yaml`` for its segment kind; a case entry
(``procedure.access_equipment``) wins over both. The result is a :class:`Devices` for
that route (sheath fields replaced) and the ``equipment`` object of the route's JSON.
"""

from __future__ import annotations

from dataclasses import replace
from functools import cache
from typing import Any

from vascplan.errors import InputError
from vascplan.fileio import read_document
from vascplan.paths import data_dir
from vascplan.refdata.sites import AccessSite
from vascplan.routes.facts import Devices
from vascplan.routes.order import segment_kind

EQUIPMENT_FILE = "equipment.yaml"


@cache
def crossing_defaults() -> tuple[dict[str, Any], ...]:
    """The crossing defaults, in file order (the entry with no kinds last)."""
    path = data_dir() / "access" / EQUIPMENT_FILE
    data = read_document(path)
    rows = data.get("crossing") if isinstance(data, dict) else None
    if not rows or any(not r.get("basis") for r in rows):
        raise InputError(str(path), "crossing", "expected entries each with a basis")
    return tuple(rows)


def _default_for(segment: str) -> dict[str, Any]:
    kind = segment_kind(segment)
    rows = crossing_defaults()
    return next((r for r in rows if kind in r.get("kinds", ())),
                next(r for r in rows if not r.get("kinds")))


def route_devices(case: Any, site: AccessSite, direction: str, role: str,
                  devices: Devices) -> tuple[Devices, dict[str, Any]]:
    """The devices one route assumes and its ``equipment`` object.

    Parameters
    ----------
    case : Case
    site : AccessSite
    direction : str
    role : {"therapeutic", "crossing"}
    devices : Devices
        The procedure's devices (the therapeutic sheath).

    Returns
    -------
    (Devices, dict)
        ``equipment``: ``{"size_fr", "label", "length_cm", "sheathless", "default",
        "basis"}``; ``default`` is true when taken from the catalogue, not the case.
    """
    from vascplan.case.access import matches
    from vascplan.sizing.french import device_outer_mm

    stated = next((e for e in case.procedure.access_equipment
                   if matches(e.site, e.direction, site.id, site.segment, direction)), None)
    if stated is not None:
        spec: dict[str, Any] = {"size_fr": stated.size_fr, "label": stated.label,
                                "length_cm": stated.length_cm, "sheathless": stated.sheathless,
                                "outer_mm": stated.outer_mm, "default": False,
                                "basis": "stated in the case file (procedure.access_equipment)"}
    elif role == "therapeutic":
        sheath = case.procedure.sheath
        return devices, {"size_fr": sheath.size_fr, "label": sheath.label,
                         "length_cm": sheath.length_cm, "sheathless": False, "default": False,
                         "basis": "the procedure's sheath (procedure.sheath in the case file)"}
    else:
        row = _default_for(site.segment)
        spec = {"size_fr": float(row["size_fr"]), "label": row["label"],
                "length_cm": row.get("length_cm"), "sheathless": bool(row.get("sheathless")),
                "outer_mm": None, "default": True,
                "basis": " ".join(str(row["basis"]).split())}
    od = device_outer_mm(spec["size_fr"], spec["label"], spec.pop("outer_mm"))
    length = 0.0 if spec["sheathless"] else float(spec["length_cm"] or 0.0)
    if spec["sheathless"]:
        spec["length_cm"] = None
    new = replace(devices, sheath_fr=float(spec["size_fr"]), sheath_length_cm=length,
                  sheath_od_mm=float(od.mm),
                  sheath_od_assumed=od.assumption if od.source != "measured" else None,
                  sheath_label=spec["label"], sheathless=bool(spec["sheathless"]))
    return new, spec
