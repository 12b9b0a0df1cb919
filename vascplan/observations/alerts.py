"""Alerts a nurse can act on: grouped by limb, most urgent first, repeats merged.

The review (:mod:`~vascplan.observations.review`) raises one alert per rule and site. For
the bedside they are grouped by patient and limb (``R-leg``, ``L-arm``, the device and its
circuit, the check schedule), the groups sorted by urgency (the shortest ``within_min`` of
the protocol's escalation criteria among their alerts), and alerts of the same rule in a
group merged into one line with their count and the first and last time. Nothing is
dropped: the JSON keeps every alert with its group key.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from vascplan.localtime import utc

DEVICE_RULES = ("access-bleeding", "dpc-fault", "circuit-fault", "device-moved")
"""Rules about the device, its access site and its circuit rather than one limb."""
ARM_RULES = ("wrist-signal-lost", "finger-refill-slow", "forearm-tense", "hand-change")
"""Rules about the arm below an arm device."""

GROUP_LABELS = {"device": "device and access site", "checks": "check schedule"}


def alert_limb(rule: str) -> str:
    """``leg``, ``arm``, ``device`` or ``checks``: what an alert of ``rule`` is about."""
    if rule == "check-overdue":
        return "checks"
    if rule in DEVICE_RULES:
        return "device"
    if rule in ARM_RULES:
        return "arm"
    return "leg"


def group_key(rule: str, side: str | None) -> str:
    """The group an alert belongs to within its patient: ``R-leg``, ``L-arm``, ``legs``
    (both or neither side), ``device`` or ``checks``.

    >>> group_key("calf-tense", "R"), group_key("dpc-fault", "R"), group_key("check-overdue", None)
    ('R-leg', 'device', 'checks')
    """
    limb = alert_limb(rule)
    if limb in ("device", "checks"):
        return limb
    return f"{side}-{limb}" if side in ("L", "R") else f"{limb}s"


def group_label(key: str) -> str:
    """``R-leg`` -> ``right leg``; ``device`` -> ``device and access site``."""
    if key in GROUP_LABELS:
        return GROUP_LABELS[key]
    side, _, limb = key.partition("-")
    if not limb:
        return f"both {key}"
    return f"{'left' if side == 'L' else 'right'} {limb}"


@dataclass(frozen=True)
class AlertLine:
    """Alerts of one rule in one group, merged.

    Attributes
    ----------
    rule : str
    count : int
        How many alerts were merged.
    first, last : datetime or None
        The earliest and latest finding time among them.
    detail : str
        The details of the merged alerts, latest first, each once, joined by ``; ``.
    call : str or None
        Whom to call and how fast (the most urgent among them).
    within_min : int or None
    source : str
    """

    rule: str
    count: int
    first: datetime | None
    last: datetime | None
    detail: str
    call: str | None
    within_min: int | None
    source: str


@dataclass(frozen=True)
class AlertGroup:
    """The alerts of one patient's limb (or device, or schedule), most urgent first."""

    key: str
    label: str
    within_min: int | None
    lines: tuple[AlertLine, ...]


def _urgency(within: int | None) -> float:
    return float("inf") if within is None else float(within)


def group_alerts(alerts: Sequence[Any]) -> list[AlertGroup]:
    """Group, merge and sort one patient's alerts (objects with ``rule``, ``side``,
    ``time``, ``detail``, ``call``, ``within_min``, ``source``).

    Groups come most urgent first (ties: in the order their first alert was raised);
    within a group, lines most urgent first, then by whom to call (so that alerts calling
    the same person sit together), then by rule.
    """
    by_group: dict[str, dict[str, list[Any]]] = {}
    for a in alerts:
        by_group.setdefault(group_key(a.rule, a.side), {}).setdefault(a.rule, []).append(a)
    groups = []
    for key, rules in by_group.items():
        lines = []
        for rule, same in rules.items():
            timed = sorted((a for a in same if a.time is not None), key=lambda a: utc(a.time))
            urgent = min(same, key=lambda a: _urgency(a.within_min))
            latest = timed[-1] if timed else same[-1]
            details = [latest.detail] + [a.detail for a in reversed(timed or same)]
            lines.append(
                AlertLine(
                    rule=rule,
                    count=len(same),
                    first=timed[0].time if timed else None,
                    last=timed[-1].time if timed else None,
                    detail="; ".join(dict.fromkeys(details)),
                    call=urgent.call,
                    within_min=urgent.within_min,
                    source=latest.source,
                )
            )
        lines.sort(key=lambda ln: (_urgency(ln.within_min), ln.call or "", ln.rule))
        within = lines[0].within_min
        groups.append(AlertGroup(key, group_label(key), within, tuple(lines)))
    order = {k: i for i, k in enumerate(by_group)}
    groups.sort(key=lambda g: (_urgency(g.within_min), order[g.key]))
    return groups


__all__ = ["AlertGroup", "AlertLine", "alert_limb", "group_alerts", "group_key", "group_label"]
