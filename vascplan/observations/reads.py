"""The reads the review and the trend need: each patient's open episode, never the whole unit.

A review (and a trend page) of a patient looks at the device now in place: the schedule
runs from its insertion, through every phase after it (after removal, the after-removal
phases continue the same episode). So each patient on the unit is read from

    ``min(inserted, at) - pre_insertion_lookback_h``

up to ``at``: the open phases, and the pre-procedure limb check made shortly before the
device went in (the look-back, ``data/observations/review_window.csv``, unit policy).
One index search per patient on (unit, ref, time) through
:meth:`~vascplan.observations.store.ObservationStore.current_by_ref`; the history of
discharged patients, and of an earlier stay under the same ref, is not read, so the
read does not grow with the record.

What the window means for the rules (the only change from reading everything):

- the NIRS baseline fallback, "first recorded value" (when the unit file gives no
  ``baseline.nirs`` for a leg), is the first value recorded since the look-back before
  this device's insertion, not a value from an earlier stay under the same ref;
- likewise the latest value of an item, and the earlier value a change is measured from
  (a pedal signal that was present, skin that was normal), come from this episode.

A baseline older than the look-back belongs in the unit file (``baseline.nirs``,
``baseline.pulses``, ``baseline.doppler``), where the review reads it first.

This module imports the store (SQLAlchemy) at the top: only the ``obs`` commands import it.
"""

from __future__ import annotations

import csv
from collections.abc import Iterable
from datetime import datetime, timedelta
from functools import lru_cache

from vascplan.localtime import utc
from vascplan.observations.store import CurrentFinding, ObservationStore
from vascplan.paths import data_dir
from vascplan.surveillance.unit import Patient, Unit


@lru_cache(maxsize=1)
def pre_insertion_lookback() -> timedelta:
    """The look-back before a device's insertion (``data/observations/review_window.csv``)."""
    path = data_dir() / "observations" / "review_window.csv"
    with open(path, newline="", encoding="utf-8") as fh:
        rows = {r["name"]: r for r in csv.DictReader(fh)}
    return timedelta(hours=float(rows["pre_insertion_lookback_h"]["value"]))


def window_start(patient: Patient, at: datetime) -> datetime:
    """The earliest check time the review of ``patient`` as at ``at`` reads (UTC).

    >>> from vascplan.surveillance.unit import load_unit
    >>> p = load_unit("tests/unit_minimal.yaml").patients[0]
    >>> (utc(p.device.inserted) - window_start(p, p.device.inserted)).total_seconds() / 3600
    24.0
    """
    return min(utc(patient.device.inserted), utc(at)) - pre_insertion_lookback()


def episode_findings(
    store: ObservationStore,
    unit: Unit,
    patients: Iterable[Patient],
    at: datetime,
    *,
    include_withdrawn: bool = False,
) -> dict[str, list[CurrentFinding]]:
    """Each patient's findings (after corrections) in their window, up to ``at``, by ref.

    Parameters
    ----------
    store : ObservationStore
    unit : Unit
        The unit file (its stable id keys the store).
    patients : iterable of Patient
        The patients to read (those on the unit).
    at : datetime
        The moment of the review (aware); the latest check time read.
    include_withdrawn : bool
        Keep findings withdrawn as entered in error (to be shown, never reviewed).

    Returns
    -------
    dict of str to list of CurrentFinding
        Every patient's ref, with their findings in time order (possibly none).
    """
    windows = {p.ref: window_start(p, at) for p in patients}
    return store.current_by_ref(
        unit.unit.key, windows, until=at, include_withdrawn=include_withdrawn
    )
