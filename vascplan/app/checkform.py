"""The bedside check form: the protocol's check items for a patient, as finding fields.

The protocol (``data/protocols/*.yaml``) says which items a device kind and limb need; the
finding vocabulary (:mod:`vascplan.observations.findings`) says what each finding allows.
This module only joins the two: each protocol item becomes the findings that record it,
one per limb (left, right) for leg items, the wrist arteries for arm items, the access
site on the device's side. A protocol item that names no finding (``records``) is shown as
a reminder, not recorded.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from vascplan.observations.findings import ITEMS, SIDES
from vascplan.surveillance.protocol import Protocol
from vascplan.surveillance.unit import Patient

SIDE_NAMES = {"L": "left", "R": "right"}


@dataclass(frozen=True)
class FormField:
    """One finding the form asks for.

    Attributes
    ----------
    name : str
        The form field's name, ``ITEM:SITE`` (``pulse:R-DPA``, ``pain:``).
    item, site : str
        The finding's item and site words.
    label : str
        What the nurse reads beside the field.
    limb : str
        ``L``, ``R`` or empty (not about one limb).
    choices : tuple of str
        Allowed words; empty for a number.
    low, high : float or None
        The number's plausible range.
    unit : str
        The number's unit as shown.
    """

    name: str
    item: str
    site: str
    label: str
    limb: str
    choices: tuple[str, ...] = ()
    low: float | None = None
    high: float | None = None
    unit: str = ""


@dataclass
class FormSection:
    """One protocol item: its wording and the fields that record it (none: a reminder)."""

    item_id: str
    text: str
    fields: list[FormField] = field(default_factory=list)


_UNIT_SHOWN = {"%": "%", "s": "s", "mm[Hg]": "mmHg", "{score}": "0-10"}


def _field(item: str, site: str, label: str, limb: str) -> FormField:
    spec = ITEMS[item]
    lo, hi = spec.number_range if spec.number_range else (None, None)
    return FormField(
        name=f"{item}:{site}",
        item=item,
        site=site,
        label=label,
        limb=limb,
        choices=spec.values,
        low=lo,
        high=hi,
        unit=_UNIT_SHOWN.get(spec.unit, spec.unit),
    )


def _per_side(item: str, label: str) -> list[FormField]:
    return [_field(item, s, f"{label}, {SIDE_NAMES[s]}", s) for s in SIDES]


def _arteries(arteries: tuple[str, ...]) -> list[FormField]:
    # Artery by artery, left then right: the form's two columns are the two limbs.
    return [
        _field("pulse", f"{s}-{a}", f"{a} pulse, {SIDE_NAMES[s]}", s)
        for a in arteries
        for s in SIDES
    ]


def _label(item: str) -> str:
    meaning = ITEMS[item].meaning
    return meaning[:1].upper() + meaning[1:]


def fields_for(protocol: Protocol, item_id: str, patient: Patient) -> list[FormField]:
    """The finding fields that record protocol item ``item_id`` for ``patient``.

    The protocol says which observation item records it (``records``) and whether each
    limb is checked on its own (``per_side``), as the review's coverage reads it
    (:mod:`vascplan.observations.coverage`); this only lays out the sites: a pulse at
    each artery of the limb (pedal arteries for a leg, wrist arteries for an arm), the
    access site and the distal cannula on the device's side.
    """
    dev = patient.device
    side = dev.side
    spec = protocol.item(item_id)
    item = spec.records
    if item is None or item not in ITEMS:
        return []  # shown as a reminder: nothing in the record's vocabulary records it
    if item == "pulse":
        arm = spec.limb == "arm" or (spec.limb == "any" and dev.limb == "arm")
        return _arteries(("RAD", "ULN") if arm else ("DPA", "PTA"))
    if item == "access":
        site = f"{side}-{dev.vessel}"
        return [_field("access", site, f"Access site {site}", side)]
    if item in ("dpc", "position"):
        return [_field(item, side, f"{_label(item)}, {SIDE_NAMES[side]}", side)]
    fields = _per_side(item, _label(item)) if spec.per_side else [
        _field(item, "", _label(item), "")
    ]
    if item == "calf":  # the pain score goes with the calf (same protocol item)
        fields.append(_field("pain", "", "Pain score", ""))
    return fields


def check_sections(protocol: Protocol, patient: Patient, items: list[str]) -> list[FormSection]:
    """The form's sections for the protocol items ``items`` (from the patient's schedule)."""
    return [
        FormSection(item_id, protocol.item_text(item_id), fields_for(protocol, item_id, patient))
        for item_id in items
    ]
