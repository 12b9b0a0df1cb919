"""The review's read and the trend's walk as they were before issue 16, kept as a reference.

Used only by tests (old-vs-new equivalence) and by ``tests/bench/bench_review_trend.py``
(the old figures beside the new): the review read the unit's whole history and kept each
patient's rows; the trend re-ran the whole review, schedule included, on every check's
history (quadratic in the checks).
"""

from __future__ import annotations

from datetime import UTC

from vascplan.localtime import utc
from vascplan.observations.findings import ENTERED_IN_ERROR, SIDES
from vascplan.observations.review import UnitReview, review_patient, withdrawal_notes
from vascplan.observations.trend import PatientTrend


def old_review_unit(unit, store, at, protocol):  # type: ignore[no-untyped-def]
    """The review before issue 16: the whole unit's history, filtered by ref."""
    every = store.current(unit.unit.key, until=at, include_withdrawn=True)
    patients = []
    for p in sorted(unit.patients, key=lambda p: p.bed):
        mine = [f for f in every if f.entry.ref == p.ref]
        kept = [f for f in mine if f.value != ENTERED_IN_ERROR]
        patients.append(review_patient(unit, p, protocol, kept, at))
        # shown, never reviewed (a withdrawal's note came with the tamper-proof record)
        patients[-1].notes.extend(withdrawal_notes(mine, at.tzinfo or UTC))
    return UnitReview(unit.unit.name, at, protocol.name, protocol.review.note, patients)


def old_patient_trend(unit, patient, protocol, findings, at):  # type: ignore[no-untyped-def]
    """The trend page's data before issue 16: a whole review (and schedule) at every check."""
    mine = sorted(
        (f for f in findings if utc(f.time) <= utc(at)), key=lambda f: (utc(f.time), f.entry.id)
    )
    times = sorted({utc(f.time) for f in mine})
    onsets, before = [], set()
    for t in times:
        upto = [f for f in mine if utc(f.time) <= t]
        alerts = review_patient(unit, patient, protocol, upto, t).alerts
        onsets += [(t, a) for a in alerts if (a.rule, a.side) not in before]
        before = {(a.rule, a.side) for a in alerts}
    final = review_patient(unit, patient, protocol, mine, at)
    base = {s: float(v) for s, v in patient.baseline.nirs.items()}
    for side in SIDES:
        if side not in base:
            first = next((f for f in mine if f.item == "nirs" and f.site == side), None)
            if first is not None:
                base[side] = float(first.value)
    overdue = [utc(o.due) for o in final.overdue]
    return PatientTrend(patient, mine, times, onsets, final.alerts, base, overdue)


def old_trend_pdf(unit, store, patients, at, protocol) -> bytes:  # type: ignore[no-untyped-def]
    """``obs trend`` before issue 16 (PDF bytes): the whole unit read, then the old walk."""
    from vascplan.observations.trend import render_trend_pdf

    every = store.current(unit.unit.key, until=at)
    trends = [
        old_patient_trend(unit, p, protocol, [f for f in every if f.entry.ref == p.ref], at)
        for p in patients
    ]
    return render_trend_pdf(unit, protocol, trends, at)
