"""Checks of the record's integrity: the hash chain, the guard triggers, the units on record.

``vascplan obs verify`` runs :func:`verify`: it walks every entry in id order, recomputing
each hash (:mod:`vascplan.observations.chain`), checks that every guard trigger of the
append-only record is there and enabled, and that every batch still holds as many
entries as it was written with. A row changed or removed behind the tool's back (after
dropping a trigger in SQLite, or as the tables' owner in PostgreSQL) is named.
"""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass

import sqlalchemy as sa

from vascplan.observations.chain import CHAIN_FIELDS, check_chain
from vascplan.observations.migrations import batches, entries, guard_triggers
from vascplan.observations.store import ObservationStore


@dataclass(frozen=True)
class Verdict:
    """The outcome of :func:`verify`: ``intact`` and the one line that says so or not."""

    intact: bool
    line: str
    entries: int
    head: str


def _rows(store: ObservationStore, chunk: int = 2000) -> Iterator[dict]:
    cols = [entries.c[name] for name in (*CHAIN_FIELDS, "entry_hash")]
    after = 0
    while True:
        q = sa.select(*cols).where(entries.c.id > after).order_by(entries.c.id).limit(chunk)
        with store.engine.connect() as conn:
            page = [dict(r._mapping) for r in conn.execute(q)]
        yield from page
        if len(page) < chunk:
            return
        after = page[-1]["id"]


def missing_guards(store: ObservationStore) -> list[str]:
    """Guard triggers of the record that are missing (or disabled, on PostgreSQL)."""
    dialect = store.engine.dialect.name
    with store.engine.connect() as conn:
        if dialect == "postgresql":
            found = set(
                conn.exec_driver_sql(
                    "SELECT t.tgname FROM pg_trigger t JOIN pg_class c ON c.oid = t.tgrelid "
                    "WHERE c.relnamespace = current_schema()::regnamespace "
                    "AND NOT t.tgisinternal AND t.tgenabled IN ('O', 'A')"
                ).scalars()
            )
        else:
            found = set(
                conn.exec_driver_sql(
                    "SELECT name FROM sqlite_master WHERE type = 'trigger'"
                ).scalars()
            )
    return [name for name in guard_triggers(dialect) if name not in found]


def short_batches(store: ObservationStore) -> list[tuple[int, int, int]]:
    """Batches holding fewer or more entries than written: (batch id, written, held)."""
    held = (
        sa.select(entries.c.batch_id, sa.func.count().label("n"))
        .group_by(entries.c.batch_id)
        .subquery()
    )
    q = (
        sa.select(batches.c.id, batches.c.rows, sa.func.coalesce(held.c.n, 0))
        .select_from(batches.outerjoin(held, held.c.batch_id == batches.c.id))
        .where(batches.c.rows != sa.func.coalesce(held.c.n, 0))
        .order_by(batches.c.id)
    )
    with store.engine.connect() as conn:
        return [(int(a), int(b), int(c)) for a, b, c in conn.execute(q)]


def verify(store: ObservationStore, head: str | None = None) -> Verdict:
    """Prove the record unbroken, or name the first altered entry (one line).

    Parameters
    ----------
    store : ObservationStore
    head : str, optional
        A chain head noted earlier (from an earlier ``obs verify``): it must still be the
        hash of one of the entries, else entries were rewritten or removed since.
    """
    report = check_chain(_rows(store), expect=head)
    problems = []
    if report.broken_at is not None:
        problems.append(report.problem)
    elif head is not None and not report.seen_head:
        problems.append(
            f"the chain head {head} noted earlier is no longer in the record "
            "(entries rewritten or removed since)"
        )
    short = short_batches(store)
    if short and report.broken_at is None:
        bid, written, held = short[0]
        problems.append(f"batch {bid} was written with {written} entries and now holds {held}")
    gone = missing_guards(store)
    if gone:
        problems.append(
            f"guard trigger{'s' if len(gone) > 1 else ''} {', '.join(gone)} missing or "
            "disabled: the record is not protected against change"
        )
    if problems:
        return Verdict(
            False, f"record NOT intact in {store.shown}: {'; '.join(problems)}", report.entries,
            report.head,
        )  # fmt: skip
    return Verdict(
        True,
        f"record intact in {store.shown}: {report.entries} entries in an unbroken chain, "
        f"head {report.head}",
        report.entries,
        report.head,
    )


def units_on_record(store: ObservationStore) -> dict[str, str]:
    """Unit ids on record, each with the display name of its latest batch."""
    q = (
        sa.select(batches.c.unit_id, batches.c.unit, sa.func.max(batches.c.id).label("last"))
        .group_by(batches.c.unit_id, batches.c.unit)
        .order_by(sa.literal_column("last"))
    )
    with store.engine.connect() as conn:
        return {str(uid): str(name) for uid, name, _ in conn.execute(q) if uid is not None}
