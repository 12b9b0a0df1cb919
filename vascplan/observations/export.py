"""Streamed exports of the observation record: FHIR Bundle, FHIR NDJSON, long-form CSV.

Rows go from the store to the output one at a time (see
:meth:`~vascplan.observations.store.ObservationStore.iter_entries`), so peak memory does
not grow with the record's length. A file is written through a temporary file renamed
into place: a failure part-way leaves the previous file (or none), never half of one.
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from collections.abc import Iterable, Iterator
from datetime import datetime
from pathlib import Path
from typing import TextIO

from vascplan.observations.store import Entry, ObservationStore, stream_current
from vascplan.surveillance.unit import Unit

FORMATS = ("fhir", "ndjson", "csv")
"""``fhir``: one HL7 FHIR R4 Bundle (JSON); ``ndjson``: one FHIR Observation a line (the
FHIR bulk-data format); ``csv``: the long-form CSV with corrections."""


class _Counted:
    """Pass rows through, counting them."""

    def __init__(self, rows: Iterable[Entry]) -> None:
        self.rows = rows
        self.n = 0

    def __iter__(self) -> Iterator[Entry]:
        for row in self.rows:
            self.n += 1
            yield row


def write_export(
    out: TextIO,
    store: ObservationStore,
    unit: Unit,
    fmt: str,
    *,
    generated: datetime,
    since: datetime | None = None,
    until: datetime | None = None,
) -> int:
    """Write the unit's record (checks made from ``since`` to ``until``) to ``out``.

    Parameters
    ----------
    out : text stream
    store : ObservationStore
    unit : Unit
        The unit file (its name and time zone).
    fmt : {"fhir", "ndjson", "csv"}
    generated : datetime
        The Bundle's timestamp (aware).
    since, until : datetime, optional
        Bounds on the check time, both included (aware). A derived ankle-brachial index
        uses the pressures inside the window.

    Returns
    -------
    int
        The stored rows read (originals and corrections).
    """
    rows = _Counted(store.iter_entries(unit.unit.name, since=since, until=until))
    if fmt == "csv":
        from vascplan.observations.csvio import write_export as write_csv

        write_csv(out, rows)
        return rows.n
    from vascplan.observations.fhir import write_bundle, write_ndjson

    findings = stream_current(rows, include_withdrawn=True)
    if fmt == "ndjson":
        write_ndjson(out, unit, findings)
    else:
        write_bundle(out, unit, findings, generated)
    return rows.n


@contextlib.contextmanager
def atomic_text_output(path: str | os.PathLike[str], mode: int = 0o600) -> Iterator[TextIO]:
    """A UTF-8 text file written in place of ``path`` only when the block ends without error.

    The file is made with ``mode`` (default owner-only: an export holds patient refs).
    """
    target = Path(path)
    target.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=target.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            yield fh
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, mode)
        os.replace(tmp, target)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise
