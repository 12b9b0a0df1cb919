"""The observation store's schema: the tables and the numbered migrations that build them.

A migration is frozen once released: migration 1 builds the tables exactly as first
released, every later change is a new migration appended to :data:`MIGRATIONS`. Each is
applied in its own transaction and recorded in ``schema_version``, so an existing store
upgrades in place (SQLite and PostgreSQL alike); a store at a higher version than this
vascplan knows is refused before anything is touched.
"""

from __future__ import annotations

import contextlib
import re
import unicodedata
from collections.abc import Callable, Iterator
from datetime import UTC, datetime

import sqlalchemy as sa
from sqlalchemy.engine import Connection, Engine

from vascplan.errors import StoreError

metadata = sa.MetaData()

schema_version = sa.Table(
    "schema_version",
    metadata,
    sa.Column("version", sa.Integer, primary_key=True, autoincrement=False),
    sa.Column("description", sa.Text, nullable=False),
    sa.Column("applied_at", sa.Text, nullable=False),
)

batches = sa.Table(
    "obs_batch",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("kind", sa.Text, nullable=False),  # add | import | correct
    sa.Column("source", sa.Text, nullable=False),
    sa.Column("unit", sa.Text, nullable=False),
    sa.Column("entered_at", sa.Text, nullable=False),
    sa.Column("rows", sa.Integer, nullable=False),
    sa.Column("unit_id", sa.Text, nullable=True),  # migration 5; set on every new batch
)

entries = sa.Table(
    "obs_entry",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("batch_id", sa.Integer, sa.ForeignKey("obs_batch.id"), nullable=False),
    sa.Column("unit", sa.Text, nullable=False),
    sa.Column("bed", sa.Integer, nullable=False),
    sa.Column("ref", sa.Text, nullable=False),
    sa.Column("time_utc", sa.Text, nullable=False),  # 2026-12-01T14:20:00+00:00
    sa.Column("time_local", sa.Text, nullable=False),  # as the unit's clock showed it
    sa.Column("recorded_by", sa.Text, nullable=False),
    sa.Column("item", sa.Text, nullable=False),
    sa.Column("site", sa.Text, nullable=False),
    sa.Column("value", sa.Text, nullable=False),
    sa.Column("corrects", sa.Integer, sa.ForeignKey("obs_entry.id"), nullable=True),
    sa.Column("reason", sa.Text, nullable=True),
    sa.Column("entered_at", sa.Text, nullable=False),
    sa.Column("unit_id", sa.Text, nullable=True),  # the unit's stable id (migration 5)
    sa.Column("prev_hash", sa.Text, nullable=True),  # the hash chain (migration 6)
    sa.Column("entry_hash", sa.Text, nullable=True),
)
"""The entry table as the queries see it. Its indexes are made by the migrations only:
``obs_entry_batch`` (batch id; migration 4), and since migration 5, which moved the keys
from the unit's display name to its stable id: ``obs_entry_one_original`` (the duplicate
key), ``obs_entry_unit_ref_time`` (unit id, ref, time) and ``obs_entry_unit_id_time``
(unit id, time)."""


# ---------------------------------------------------------------------------
# Migrations: append new ones at the end; never edit one that has shipped.


def _m1_tables(conn: Connection) -> None:
    # Frozen: the tables exactly as first released (commit d11926a), declared here and not
    # taken from the live ``batches`` / ``entries`` so that a later change to those can
    # never alter what migration 1 builds. Never edit; add a migration instead.
    v1 = sa.MetaData()
    sa.Table(
        "obs_batch",
        v1,
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("kind", sa.Text, nullable=False),
        sa.Column("source", sa.Text, nullable=False),
        sa.Column("unit", sa.Text, nullable=False),
        sa.Column("entered_at", sa.Text, nullable=False),
        sa.Column("rows", sa.Integer, nullable=False),
    )
    sa.Table(
        "obs_entry",
        v1,
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("batch_id", sa.Integer, sa.ForeignKey("obs_batch.id"), nullable=False),
        sa.Column("unit", sa.Text, nullable=False),
        sa.Column("bed", sa.Integer, nullable=False),
        sa.Column("ref", sa.Text, nullable=False),
        sa.Column("time_utc", sa.Text, nullable=False),
        sa.Column("time_local", sa.Text, nullable=False),
        sa.Column("recorded_by", sa.Text, nullable=False),
        sa.Column("item", sa.Text, nullable=False),
        sa.Column("site", sa.Text, nullable=False),
        sa.Column("value", sa.Text, nullable=False),
        sa.Column("corrects", sa.Integer, sa.ForeignKey("obs_entry.id"), nullable=True),
        sa.Column("reason", sa.Text, nullable=True),
        sa.Column("entered_at", sa.Text, nullable=False),
        sa.Index("obs_entry_patient_time", "unit", "ref", "time_utc"),
    )
    v1.create_all(conn)


_SQLITE_GUARDS = [
    f"CREATE TRIGGER {table}_no_{verb.lower()} BEFORE {verb} ON {table} "
    "BEGIN SELECT RAISE(ABORT, 'observation record is append-only'); END"
    for table in ("obs_entry", "obs_batch", "schema_version")
    for verb in ("UPDATE", "DELETE")
]

_PG_GUARDS = [
    "CREATE FUNCTION vascplan_refuse_change() RETURNS trigger LANGUAGE plpgsql AS "
    "$$ BEGIN RAISE EXCEPTION 'observation record is append-only'; END $$",
    *[
        f"CREATE TRIGGER {table}_append_only BEFORE UPDATE OR DELETE ON {table} "
        "FOR EACH ROW EXECUTE FUNCTION vascplan_refuse_change()"
        for table in ("obs_entry", "obs_batch", "schema_version")
    ],
    *[
        f"CREATE TRIGGER {table}_no_truncate BEFORE TRUNCATE ON {table} "
        "FOR EACH STATEMENT EXECUTE FUNCTION vascplan_refuse_change()"
        for table in ("obs_entry", "obs_batch", "schema_version")
    ],
]


def _m2_append_only(conn: Connection) -> None:
    for ddl in _PG_GUARDS if conn.dialect.name == "postgresql" else _SQLITE_GUARDS:
        conn.exec_driver_sql(ddl)


def _m3_one_finding_per_time(conn: Connection) -> None:
    # The same item at the same site and moment is stored once; a second value is a correction.
    conn.exec_driver_sql(
        "CREATE UNIQUE INDEX obs_entry_one_original ON obs_entry "
        "(unit, bed, time_utc, item, site) WHERE corrects IS NULL"
    )


def _m4_query_indexes(conn: Connection) -> None:
    # A unit's findings by time (review windows, exports, the duplicate check of a new
    # batch: one index search per instant instead of a scan of the unit), and a batch's
    # rows by batch id (the ids returned by a write).
    conn.exec_driver_sql("CREATE INDEX obs_entry_unit_time ON obs_entry (unit, time_utc)")
    conn.exec_driver_sql("CREATE INDEX obs_entry_batch ON obs_entry (batch_id)")


@contextlib.contextmanager
def _guards_lifted(conn: Connection, tables: tuple[str, ...]) -> Iterator[None]:
    """Let a migration fill a new column of existing rows, inside its own transaction.

    The update guards of ``tables`` are dropped (SQLite) or disabled (PostgreSQL, which
    only the tables' owner may do) and put back before the migration commits.
    """
    pg = conn.dialect.name == "postgresql"
    for table in tables:
        if pg:
            conn.exec_driver_sql(f"ALTER TABLE {table} DISABLE TRIGGER {table}_append_only")
        else:
            conn.exec_driver_sql(f"DROP TRIGGER {table}_no_update")
    yield
    for table in tables:
        if pg:
            conn.exec_driver_sql(f"ALTER TABLE {table} ENABLE TRIGGER {table}_append_only")
        else:
            conn.exec_driver_sql(
                next(
                    g for g in _SQLITE_GUARDS if g.startswith(f"CREATE TRIGGER {table}_no_update ")
                )
            )


def _m5_slug(name: str) -> str:
    # Frozen copy of vascplan.surveillance.unit.unit_slug as released with migration 5
    # (tests check that the two agree): old records get the id an old unit file defaults to.
    folded = unicodedata.normalize("NFKD", name).encode("ascii", "ignore").decode("ascii")
    slug = re.sub(r"[^a-z0-9]+", "-", folded.lower()).strip("-")[:64].strip("-")
    return slug or "unit"


def _m5_unit_ids(conn: Connection) -> None:
    # Records are keyed by the unit's stable id, not its display name: a new column on
    # batches and entries, filled for old rows from the name (the id a unit file without
    # ``id`` gets), and the duplicate key and the query indexes moved onto it.
    for table in ("obs_batch", "obs_entry"):
        conn.exec_driver_sql(f"ALTER TABLE {table} ADD COLUMN unit_id TEXT")
    with _guards_lifted(conn, ("obs_batch", "obs_entry")):
        for table in ("obs_batch", "obs_entry"):
            names = conn.exec_driver_sql(f"SELECT DISTINCT unit FROM {table}").scalars().all()
            for name in names:
                conn.execute(
                    sa.text(f"UPDATE {table} SET unit_id = :id WHERE unit = :name"),
                    {"id": _m5_slug(name), "name": name},
                )
    for index in ("obs_entry_one_original", "obs_entry_patient_time", "obs_entry_unit_time"):
        conn.exec_driver_sql(f"DROP INDEX {index}")
    conn.exec_driver_sql(
        "CREATE UNIQUE INDEX obs_entry_one_original ON obs_entry "
        "(unit_id, bed, time_utc, item, site) WHERE corrects IS NULL"
    )
    conn.exec_driver_sql(
        "CREATE INDEX obs_entry_unit_ref_time ON obs_entry (unit_id, ref, time_utc)"
    )
    conn.exec_driver_sql("CREATE INDEX obs_entry_unit_id_time ON obs_entry (unit_id, time_utc)")


_SQLITE_INSERT_GUARDS = [
    # REPLACE conflict resolution (INSERT OR REPLACE, REPLACE INTO) deletes the colliding
    # row without firing its DELETE trigger: refuse any insert that would collide instead.
    "CREATE TRIGGER obs_entry_no_replace BEFORE INSERT ON obs_entry "
    "WHEN EXISTS (SELECT 1 FROM obs_entry WHERE id = NEW.id) "
    "OR (NEW.corrects IS NULL AND EXISTS (SELECT 1 FROM obs_entry WHERE corrects IS NULL "
    "AND unit_id = NEW.unit_id AND bed = NEW.bed AND time_utc = NEW.time_utc "
    "AND item = NEW.item AND site = NEW.site)) "
    "BEGIN SELECT RAISE(ABORT, 'observation record is append-only'); END",
    "CREATE TRIGGER obs_entry_chained BEFORE INSERT ON obs_entry "
    "WHEN NEW.unit_id IS NULL OR NEW.prev_hash IS NULL OR NEW.entry_hash IS NULL "
    "BEGIN SELECT RAISE(ABORT, 'an entry needs its unit id and chain hashes'); END",
    "CREATE TRIGGER obs_batch_no_replace BEFORE INSERT ON obs_batch "
    "WHEN EXISTS (SELECT 1 FROM obs_batch WHERE id = NEW.id) "
    "BEGIN SELECT RAISE(ABORT, 'observation record is append-only'); END",
    "CREATE TRIGGER schema_version_no_replace BEFORE INSERT ON schema_version "
    "WHEN EXISTS (SELECT 1 FROM schema_version WHERE version = NEW.version) "
    "BEGIN SELECT RAISE(ABORT, 'observation record is append-only'); END",
]

_PG_CHAIN_CHECKS = [
    "ALTER TABLE obs_entry ADD CONSTRAINT obs_entry_chained CHECK "
    "(unit_id IS NOT NULL AND prev_hash IS NOT NULL AND entry_hash IS NOT NULL)",
    "ALTER TABLE obs_batch ADD CONSTRAINT obs_batch_unit_id CHECK (unit_id IS NOT NULL)",
]


def _m6_hash_chain(conn: Connection) -> None:
    # Every entry carries the hash of the one before it (vascplan.observations.chain):
    # two new columns, filled for old rows in id order; and on SQLite, inserts that would
    # replace a stored row refused.
    from vascplan.observations.chain import GENESIS, link

    for column in ("prev_hash", "entry_hash"):
        conn.exec_driver_sql(f"ALTER TABLE obs_entry ADD COLUMN {column} TEXT")
    rows = [dict(r._mapping) for r in conn.exec_driver_sql("SELECT * FROM obs_entry ORDER BY id")]
    with _guards_lifted(conn, ("obs_entry",)):
        prev = GENESIS
        for row in rows:
            prev = link([row], row["id"], prev)
            conn.execute(
                sa.text("UPDATE obs_entry SET prev_hash = :p, entry_hash = :h WHERE id = :id"),
                {"p": row["prev_hash"], "h": row["entry_hash"], "id": row["id"]},
            )
    guards = _PG_CHAIN_CHECKS if conn.dialect.name == "postgresql" else _SQLITE_INSERT_GUARDS
    for ddl in guards:
        conn.exec_driver_sql(ddl)


# The ward (``vascplan serve``, ``vascplan users``, ``vascplan unit``): accounts, unit and
# patient events, the audit trail, one-time form tokens and the server's own settings.
# Every table is append-only like the observation record: a user's current role or a
# patient's current device is derived from the events, never updated in place.
_WARD_TABLES = ("ward_user", "ward_event", "ward_audit", "ward_form", "ward_setting")


def _m7_ward(conn: Connection) -> None:
    # Frozen once released, like migration 1: the tables declared here, not taken from
    # vascplan.ward.store, so that a later change there can never alter what this builds.
    v7 = sa.MetaData()
    sa.Table(
        "ward_user",
        v7,
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("username", sa.Text, nullable=False),
        sa.Column("kind", sa.Text, nullable=False),  # add | disable | enable | password
        sa.Column("role", sa.Text, nullable=True),
        sa.Column("pw_hash", sa.Text, nullable=True),
        sa.Column("by", sa.Text, nullable=False),
        sa.Column("at_utc", sa.Text, nullable=False),
        sa.Index("ward_user_name", "username", "id"),
    )
    sa.Table(
        "ward_event",
        v7,
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("unit", sa.Text, nullable=False),
        sa.Column("ref", sa.Text, nullable=False),  # empty for a unit-wide event
        sa.Column("kind", sa.Text, nullable=False),
        sa.Column("at_utc", sa.Text, nullable=False),
        sa.Column("data", sa.Text, nullable=False),  # JSON object
        sa.Column("recorded_by", sa.Text, nullable=False),
        sa.Column("entered_at", sa.Text, nullable=False),
        sa.Index("ward_event_unit_time", "unit", "at_utc"),
    )
    sa.Table(
        "ward_audit",
        v7,
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("at_utc", sa.Text, nullable=False),
        sa.Column("author", sa.Text, nullable=False),
        sa.Column("address", sa.Text, nullable=False),
        sa.Column("action", sa.Text, nullable=False),
        sa.Column("what", sa.Text, nullable=False),
    )
    sa.Table(
        "ward_form",
        v7,
        sa.Column("token", sa.Text, primary_key=True),
        sa.Column("kind", sa.Text, nullable=False),
        sa.Column("result", sa.Text, nullable=False),
        sa.Column("at_utc", sa.Text, nullable=False),
    )
    sa.Table(
        "ward_setting",
        v7,
        sa.Column("id", sa.Integer, primary_key=True),
        sa.Column("key", sa.Text, nullable=False),
        sa.Column("value", sa.Text, nullable=False),
        sa.Column("at_utc", sa.Text, nullable=False),
    )
    v7.create_all(conn)
    if conn.dialect.name == "postgresql":
        for table in _WARD_TABLES:
            conn.exec_driver_sql(
                f"CREATE TRIGGER {table}_append_only BEFORE UPDATE OR DELETE ON {table} "
                "FOR EACH ROW EXECUTE FUNCTION vascplan_refuse_change()"
            )
            conn.exec_driver_sql(
                f"CREATE TRIGGER {table}_no_truncate BEFORE TRUNCATE ON {table} "
                "FOR EACH STATEMENT EXECUTE FUNCTION vascplan_refuse_change()"
            )
    else:
        for table in _WARD_TABLES:
            for verb in ("UPDATE", "DELETE"):
                conn.exec_driver_sql(
                    f"CREATE TRIGGER {table}_no_{verb.lower()} BEFORE {verb} ON {table} "
                    "BEGIN SELECT RAISE(ABORT, 'ward record is append-only'); END"
                )


MIGRATIONS: list[tuple[int, str, Callable[[Connection], None]]] = [
    (1, "batches and entries", _m1_tables),
    (2, "append-only triggers", _m2_append_only),
    (3, "one original finding per item, site and time", _m3_one_finding_per_time),
    (4, "indexes on unit and time, and on batch", _m4_query_indexes),
    (5, "records keyed by the unit's stable id", _m5_unit_ids),
    (6, "hash chain of entries; inserts that replace refused", _m6_hash_chain),
    (7, "ward: users, events, audit trail, form tokens, settings", _m7_ward),
]


def guard_triggers(dialect: str) -> list[str]:
    """The triggers that keep the record append-only, by name (``obs verify`` checks them)."""
    if dialect == "postgresql":
        return [
            f"{table}_{what}"
            for table in ("obs_entry", "obs_batch", "schema_version")
            for what in ("append_only", "no_truncate")
        ]
    return [g.split()[2] for g in _SQLITE_GUARDS + _SQLITE_INSERT_GUARDS]


SCHEMA_VERSION = MIGRATIONS[-1][0]


# ---------------------------------------------------------------------------
# Applying


def migrate(engine: Engine, shown: str, upto: int | None = None) -> int:
    """Apply the migrations not yet applied, in order, one transaction each.

    Parameters
    ----------
    engine : Engine
        The database.
    shown : str
        The database as shown to a user (password hidden), for the messages.
    upto : int, optional
        Stop after this version (tests build older stores with it); default the latest.

    Returns
    -------
    int
        The store's schema version afterwards.

    Raises
    ------
    StoreError
        The store was made by a newer vascplan (nothing is changed).
    """
    target = SCHEMA_VERSION if upto is None else upto
    current = stored_version(engine)
    _refuse_newer(shown, current)
    for version, description, step in MIGRATIONS:
        if version <= current or version > target:
            continue
        try:
            with engine.begin() as conn:
                if conn.dialect.name == "postgresql":
                    conn.exec_driver_sql("SELECT pg_advisory_xact_lock(7261997)")  # one migrator
                if not sa.inspect(conn).has_table("schema_version"):
                    metadata.create_all(conn, tables=[schema_version])
                now_at = (
                    conn.execute(sa.select(sa.func.max(schema_version.c.version))).scalar() or 0
                )
                _refuse_newer(shown, now_at)
                if now_at >= version:  # another process got here first
                    current = now_at
                    continue
                step(conn)
                conn.execute(
                    sa.insert(schema_version).values(
                        version=version, description=description, applied_at=_now_text()
                    )
                )
        except sa.exc.DBAPIError as exc:
            if getattr(exc.orig, "sqlstate", None) == INSUFFICIENT_PRIVILEGE:
                raise StoreError(
                    f"{shown}: the store is at schema version {current} and this vascplan needs "
                    f"{target}, but this database user may only add and read records: run "
                    "`vascplan obs migrate --db OWNER-URL` as the store's owner first"
                ) from None
            raise
        current = version
    return current


INSUFFICIENT_PRIVILEGE = "42501"
"""PostgreSQL's SQLSTATE for an action the role may not take."""


def stored_version(engine: Engine) -> int:
    """The highest migration applied to the database (0 for an empty one)."""
    with engine.connect() as conn:
        if not sa.inspect(conn).has_table("schema_version"):
            return 0
        return int(conn.execute(sa.select(sa.func.max(schema_version.c.version))).scalar() or 0)


def _refuse_newer(shown: str, current: int) -> None:
    if current > SCHEMA_VERSION:
        raise StoreError(
            f"{shown}: this store is at schema version {current}; this vascplan "
            f"knows up to {SCHEMA_VERSION}: upgrade vascplan"
        )


def _now_text() -> str:
    return datetime.now(UTC).replace(microsecond=0).isoformat()
