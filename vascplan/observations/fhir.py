"""The observation record as an HL7 FHIR R4 Bundle (type ``collection``) of Observations.

One Observation per finding, as it stands after its corrections (status ``corrected``
with a note giving the original value, who corrected it and why; ``entered-in-error``
for a withdrawn finding), plus one derived ankle-brachial index Observation per leg
where pressures allow it. Plain JSON (dicts): no FHIR library at run time; the tests
validate the output with ``fhir.resources``.

Codes: a standard code only where it was confirmed in a published source
(:data:`STANDARD_CODES`: LOINC and SNOMED CT, as cited beside each); everything else uses
the local code systems below, and the README says which is which. Units are UCUM.
"""

from __future__ import annotations

import json
import uuid
from collections.abc import Callable, Iterable, Iterator, Sequence
from datetime import datetime
from typing import Any, TextIO

from vascplan.observations.abi import ankle_brachial_index, arm_sites
from vascplan.observations.findings import ENTERED_IN_ERROR, ITEMS, SIDES
from vascplan.observations.store import CurrentFinding, Entry, current_findings
from vascplan.safety import CAUTION
from vascplan.surveillance.unit import Unit

LOINC = "http://loinc.org"
SNOMED = "http://snomed.info/sct"
UCUM = "http://unitsofmeasure.org"
CATEGORY_SYSTEM = "http://terminology.hl7.org/CodeSystem/observation-category"
LOCAL_ITEM = "urn:vascplan:obs"
"""Local code system of our items (``nirs``, ``pulse``...), where no standard code was confirmed."""
LOCAL_VALUE = "urn:vascplan:obs-value"
"""Local code system of our categorical values (``doppler``, ``tense``...)."""
LOCAL_SITE = "urn:vascplan:site"
"""Local code system of sites (``R-DPA``, ``L``, ``L-ARM``)."""
PATIENT_REF = "urn:vascplan:patient-ref"
STAFF_ID = "urn:vascplan:staff-id"
ENTRY_ID = "urn:vascplan:obs-entry"

STANDARD_CODES: dict[str, tuple[str, str, str]] = {
    # item -> (system, code, display as published in the LOINC and SNOMED CT browsers (seen)
    # and in
    # FHIR implementation guides that use the code with this display)
    "refill": (LOINC, "44963-7", "Capillary refill [Time] of Nail bed"),
    # The nail bed is a finger's or a toe's: the same code fits the fingers below an arm device.
    "finger-refill": (LOINC, "44963-7", "Capillary refill [Time] of Nail bed"),
    "pain": (LOINC, "72514-3", "Pain severity - 0-10 verbal numeric rating [Score] - Reported"),
}
"""Items with a confirmed standard code. ``pulse`` keeps a local code: LOINC 44974-4 is
pulse intensity *by palpation*, and our grade ``doppler`` is not a palpation finding; its
display ("arterial pulse at one artery (foot, leg, wrist or arm)...") names no limb, the
artery is in ``bodySite``. The device and circuit items (``circuit-flow``, ``position``,
``dpc``) and the hand items other than finger refill have no standard code we could confirm:
they use the local system :data:`LOCAL_ITEM` with the item's meaning as display and text."""
ABI_CODE = (SNOMED, "446841001", "Ankle brachial pressure index (observable entity)")
"""SNOMED CT 446841001 (seen in a draft FHIR implementation guide; the same
fully specified name is used by HL7 Lithuania's CVD guide)."""


def _full_url(unit: str, key: str) -> str:
    return "urn:uuid:" + str(uuid.uuid5(uuid.NAMESPACE_URL, f"vascplan:{unit}:{key}"))


def _code(item: str) -> dict[str, Any]:
    spec = ITEMS[item]
    coding = [{"system": LOCAL_ITEM, "code": item, "display": spec.meaning}]
    if item in STANDARD_CODES:
        system, code, display = STANDARD_CODES[item]
        coding.insert(0, {"system": system, "code": code, "display": display})
    return {"coding": coding, "text": spec.meaning}


def _value(item: str, value: str) -> dict[str, Any]:
    spec = ITEMS[item]
    if value == ENTERED_IN_ERROR:
        return {}
    if spec.numeric:
        if spec.integer:
            return {"valueInteger": int(float(value))}
        return {
            "valueQuantity": {
                "value": float(value),
                "unit": spec.unit,
                "system": UCUM,
                "code": spec.unit,
            }
        }
    return {
        "valueCodeableConcept": {"coding": [{"system": LOCAL_VALUE, "code": value}], "text": value}
    }


def _observation(unit: str, f: CurrentFinding) -> dict[str, Any]:
    e = f.entry
    fix = f.correction
    status = "final"
    if f.value == ENTERED_IN_ERROR:
        status = "entered-in-error"
    elif fix is not None:
        status = "corrected"
    res: dict[str, Any] = {
        "resourceType": "Observation",
        "identifier": [{"system": ENTRY_ID, "value": f"{unit}/{e.id}"}],
        "status": status,
        "category": [{"coding": [{"system": CATEGORY_SYSTEM, "code": "exam"}]}],
        "code": _code(e.item),
        "subject": {
            "identifier": {"system": PATIENT_REF, "value": e.ref},
            "display": f"{e.ref} (bed {e.bed})",
        },
        "effectiveDateTime": e.time_local,
        "issued": (fix or e).entered_at.isoformat(),
        "performer": [{"identifier": {"system": STAFF_ID, "value": e.by}, "display": e.by}],
        **_value(e.item, f.value),
    }
    if e.site:
        res["bodySite"] = {"coding": [{"system": LOCAL_SITE, "code": e.site}], "text": e.site}
    if fix is not None:
        res["note"] = [
            {
                "text": f"Corrected by {fix.by} at {fix.entered_at.isoformat()} (entry {fix.id}): "
                f"{fix.reason}. "
                f"Original value {e.value!r} recorded by {e.by} (entry {e.id}).",
            }
        ]
    return res


class _Pressures:
    """The latest pressure per patient and site, kept while findings stream past.

    Memory grows with patients and sites, never with the number of findings.
    """

    def __init__(self) -> None:
        self.by_ref: dict[str, dict[str, CurrentFinding]] = {}

    def see(self, f: CurrentFinding) -> None:
        if f.item == "pressure" and f.value != ENTERED_IN_ERROR:
            self.by_ref.setdefault(f.entry.ref, {})[f.site] = f  # time order: the latest wins


def _abi_observations(
    unit: Unit, pressures: _Pressures, reference: Callable[[int], str]
) -> Iterator[dict[str, Any]]:
    for ref, latest in pressures.by_ref.items():
        arms_at = arm_sites(latest)
        arms = {s: float(latest[a].value) for s, a in arms_at.items()}
        for side in SIDES:
            ankle_rows = {
                a: latest[f"{side}-{a}"] for a in ("PTA", "DPA") if f"{side}-{a}" in latest
            }
            r = ankle_brachial_index({a: float(f.value) for a, f in ankle_rows.items()}, arms)
            if r.index is None:
                continue
            used = list(ankle_rows.values()) + [latest[a] for a in arms_at.values()]
            when = max(f.time for f in used)
            system, code, display = ABI_CODE
            yield {
                "resourceType": "Observation",
                "status": "final",
                "category": [{"coding": [{"system": CATEGORY_SYSTEM, "code": "exam"}]}],
                "code": {
                    "coding": [{"system": system, "code": code, "display": display}],
                    "text": "ankle-brachial index",
                },
                "subject": {
                    "identifier": {"system": PATIENT_REF, "value": ref},
                    "display": ref,
                },
                "effectiveDateTime": when.astimezone(unit.unit.tz).isoformat(),
                "bodySite": {"coding": [{"system": LOCAL_SITE, "code": side}], "text": side},
                "valueQuantity": {"value": r.index, "unit": "1", "system": UCUM, "code": "1"},
                "interpretation": [{"text": f"{r.band} (2016 AHA/ACC bands)"}],
                "derivedFrom": [{"reference": reference(f.entry.id)} for f in used],
                "note": [
                    {"text": f"Computed per Aboyans et al., Circulation 2012;126:2890: {r.basis}."}
                ],
            }


def entries(
    unit: Unit, findings: Iterable[CurrentFinding], *, standalone: bool = False
) -> Iterator[dict[str, Any]]:
    """Bundle entries (``fullUrl`` and ``resource``), one finding at a time.

    One Observation per finding in the order given, then the derived ankle-brachial
    indices (from each patient's latest pressures among ``findings``). Memory holds the
    latest pressures per patient, never the findings.

    Parameters
    ----------
    unit : Unit
        The unit file (its name and time zone).
    findings : iterable of CurrentFinding
        The findings as they stand, withdrawn ones included, in time order (as
        :meth:`~vascplan.observations.store.ObservationStore.iter_current` yields them).
    standalone : bool
        Resources to stand outside a Bundle (NDJSON): each gets a logical ``id`` (the
        UUID of its ``fullUrl``), the caution in ``meta.tag``, and ``derivedFrom`` refers
        to ``Observation/<id>``.
    """
    name = unit.unit.name

    def reference(entry_id: int) -> str:
        url = _full_url(name, str(entry_id))
        return f"Observation/{url.removeprefix('urn:uuid:')}" if standalone else url

    def wrap(url: str, resource: dict[str, Any]) -> dict[str, Any]:
        if standalone:
            resource = {
                "resourceType": resource["resourceType"],
                "id": url.removeprefix("urn:uuid:"),
                "meta": {"tag": [_NOTICE]},
                **resource,
            }
        return {"fullUrl": url, "resource": resource}

    pressures = _Pressures()
    for f in findings:
        pressures.see(f)
        yield wrap(_full_url(name, str(f.entry.id)), _observation(name, f))
    for i, obs in enumerate(_abi_observations(unit, pressures, reference)):
        key = f"abi:{obs['subject']['identifier']['value']}:{obs['bodySite']['text']}:{i}"
        yield wrap(_full_url(name, key), obs)


_NOTICE = {"system": "urn:vascplan:notice", "code": "decision-support", "display": CAUTION}
"""The caution as a FHIR tag (a Bundle or an Observation has no place for free text)."""


def _header(generated: datetime) -> dict[str, Any]:
    return {
        "resourceType": "Bundle",
        "meta": {"tag": [_NOTICE]},
        "type": "collection",
        "timestamp": generated.replace(microsecond=0).isoformat(),
    }


def bundle(unit: Unit, rows: Sequence[Entry], generated: datetime) -> dict[str, Any]:
    """The unit's stored findings as a FHIR R4 Bundle (``collection``) of Observations.

    Parameters
    ----------
    unit : Unit
        The unit file (its name and time zone).
    rows : sequence of Entry
        Every stored row of the unit (originals and corrections), as
        :meth:`~vascplan.observations.store.ObservationStore.entries` returns them.
    generated : datetime
        The Bundle's timestamp (aware).

    Returns
    -------
    dict
        JSON-ready, whole in memory (see :func:`write_bundle` for a long record). The
        caution is carried in ``meta.tag`` (a Bundle has no note element).
    """
    out = _header(generated)
    found = list(entries(unit, current_findings(rows, include_withdrawn=True)))
    if found:  # FHIR JSON has no empty arrays
        out["entry"] = found
    return out


def write_bundle(
    out: TextIO, unit: Unit, findings: Iterable[CurrentFinding], generated: datetime
) -> int:
    """Write the Bundle of :func:`bundle` to ``out`` as it goes; return the entries written.

    The JSON is written entry by entry (one entry a line), so memory does not grow with
    the record; the text parses to the same document as :func:`bundle` gives.
    """
    head = json.dumps(_header(generated), indent=2, ensure_ascii=False)
    stream = entries(unit, findings)
    first = next(stream, None)
    if first is None:
        out.write(head + "\n")
        return 0
    out.write(head[: -len("\n}")] + ',\n  "entry": [\n    ')
    out.write(json.dumps(first, ensure_ascii=False))
    n = 1
    for entry in stream:
        out.write(",\n    ")
        out.write(json.dumps(entry, ensure_ascii=False))
        n += 1
    out.write("\n  ]\n}\n")
    return n


def write_ndjson(out: TextIO, unit: Unit, findings: Iterable[CurrentFinding]) -> int:
    """Write one Observation a line (FHIR bulk data's NDJSON); return the lines written.

    Each resource stands alone: a logical id, the caution in ``meta.tag``, and
    ``derivedFrom`` as ``Observation/<id>`` (see :func:`entries`).
    """
    n = 0
    for entry in entries(unit, findings, standalone=True):
        out.write(json.dumps(entry["resource"], ensure_ascii=False))
        out.write("\n")
        n += 1
    return n
