"""One patient's record as CSV or FHIR, and the shift's nursing checklist, from the store.

Each calls the existing writer (:mod:`vascplan.observations.csvio`, :mod:`~vascplan.
observations.fhir`, :mod:`vascplan.reports.checklist`) on the unit rebuilt from its events.
"""

from __future__ import annotations

import json
from datetime import datetime, timedelta

from vascplan.app.ward import snapshot
from vascplan.surveillance.unit import Unit
from vascplan.ward.store import WardStore


def patient_csv(store: WardStore, name: str, ref: str, at: datetime) -> str:
    """Every stored row of ``ref`` (originals and corrections) as the ``obs export`` CSV."""
    from vascplan.observations.csvio import export_rows

    snap = snapshot(store, name, at)
    snap.patient(ref)
    return export_rows(store.obs.entries(snap.unit.unit.key, ref=ref))


def patient_fhir(store: WardStore, name: str, ref: str, at: datetime) -> str:
    """The patient's findings as a FHIR R4 Bundle of Observations (JSON)."""
    from vascplan.observations.fhir import bundle

    snap = snapshot(store, name, at)
    snap.patient(ref)
    doc = bundle(snap.unit, store.obs.entries(snap.unit.unit.key, ref=ref), at)
    return json.dumps(doc, indent=2, ensure_ascii=False) + "\n"


def shift_at(unit: Unit, at: datetime) -> tuple[str, datetime]:
    """The shift running at ``at`` and the local date it started on."""
    local = at.astimezone(unit.unit.tz)
    starts = sorted(unit.shifts, key=lambda s: s.start)
    current = [s for s in starts if s.start <= local.time()]
    if current:
        return current[-1].name, local
    return starts[-1].name, local - timedelta(days=1)  # the night shift began yesterday


def patient_checklist(store: WardStore, name: str, ref: str, at: datetime) -> bytes:
    """The nursing checklist PDF of the shift running now, for this patient's bed."""
    from vascplan.reports.checklist import checklist_sheets, render_checklist

    snap = snapshot(store, name, at)
    p = snap.patient(ref)
    shift, day = shift_at(snap.unit, at)
    sheets = checklist_sheets(snap.unit, shift, day.date(), snap.protocol, beds=[p.bed])
    return render_checklist(sheets, generated_at=at.astimezone(snap.unit.unit.tz))
