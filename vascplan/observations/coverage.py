"""Which parts of a scheduled check the record covers: item by item, limb by limb.

A protocol check item names the observation item that records it (``records``) and
whether each limb is checked on its own (``per_side``). A scheduled check therefore needs
one finding per (observation item, side): ``nirs:L``, ``nirs:R``, ``refill:R``, ``dpc``.
A finding covers a need for every scheduled check whose window had opened when it was
made (``due - tolerance_min`` or later): the limb has been seen for that item since. A
check recorded for some items only leaves the others due, and an item recorded for one
limb leaves the other limb due.

The labels (``nirs:L``) are part of the interface: ``obs review --format json`` lists them
as ``missing`` and ``vascplan due`` as ``items``; the word before the colon is the
``obs add`` option that records it.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta
from typing import Any

from vascplan.localtime import utc
from vascplan.observations.findings import SIDES, WRIST_ARTERIES, side_of

ANY_FINDING = "*"
"""``Need.records`` of a protocol item that names no observation item: any finding counts."""

ARM_PULSE_ARTERIES = (*WRIST_ARTERIES, "BRA")
"""Arteries whose pulse counts for the arm below an arm device (the wrist, and the brachial
for a radial device)."""


@dataclass(frozen=True)
class Need:
    """One finding a scheduled check needs.

    Attributes
    ----------
    item : str
        The protocol's check item id (``capillary-refill``).
    records : str
        The observation item that records it (``refill``).
    side : str or None
        ``L`` or ``R`` for a per-side item, else None.
    limb : str
        ``leg``, ``arm`` or ``any``: which limb's arteries a pulse must be taken at.
    """

    item: str
    records: str
    side: str | None
    limb: str

    @property
    def label(self) -> str:
        """``refill:R``; the item word alone when it is not per side (``dpc``); the
        protocol's item id when it names no observation item."""
        if self.records == ANY_FINDING:
            return self.item
        return f"{self.records}:{self.side}" if self.side else self.records


def needs(protocol: Any, item_ids: Iterable[str]) -> list[Need]:
    """What a check of ``item_ids`` must record, in protocol order, left before right.

    An item that names no observation item (a unit's own protocol without ``records``)
    is covered by any finding of the patient, as before items were tracked one by one;
    its label is the item's id.

    >>> from vascplan.surveillance.protocol import load_protocol
    >>> p = load_protocol("standard", "u")
    >>> [n.label for n in needs(p, ["capillary-refill", "dpc"])]
    ['refill:L', 'refill:R', 'dpc']
    """
    out: list[Need] = []
    for item_id in item_ids:
        item = protocol.item(item_id)
        if item.records is None:
            out.append(Need(item.id, ANY_FINDING, None, item.limb))
            continue
        sides: Sequence[str | None] = SIDES if item.per_side else (None,)
        out.extend(Need(item.id, item.records, s, item.limb) for s in sides)
    return out


def _matches(need: Need, item: str, site: str) -> bool:
    if need.records == ANY_FINDING:
        return True
    if item != need.records:
        return False
    if need.side is None:
        return True
    if side_of(site) != need.side:
        return False
    if need.records == "pulse" and need.limb in ("leg", "arm"):
        artery = site.split("-", 1)[1] if "-" in site else ""
        return (artery in ARM_PULSE_ARTERIES) == (need.limb == "arm")
    return True


def latest_by_need(
    wanted: Iterable[Need], findings: Iterable[tuple[datetime, str, str]]
) -> dict[Need, datetime]:
    """The latest time (UTC) each need was recorded, from ``(time, item, site)`` findings."""
    wanted = list(dict.fromkeys(wanted))
    out: dict[Need, datetime] = {}
    for time, item, site in findings:
        t = utc(time)
        for n in wanted:
            if _matches(n, item, site) and (n not in out or out[n] < t):
                out[n] = t
    return out


def missing(
    check_needs: Sequence[Need],
    latest: dict[Need, datetime],
    due: datetime,
    tolerance_min: int,
) -> list[str]:
    """The labels of ``check_needs`` not recorded since the check's window opened."""
    opened = utc(due) - timedelta(minutes=tolerance_min)
    return [n.label for n in check_needs if latest.get(n) is None or latest[n] < opened]


__all__ = ["Need", "latest_by_need", "missing", "needs"]
