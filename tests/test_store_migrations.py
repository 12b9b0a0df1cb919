"""The store's versioned schema: migration 1 frozen as released, upgrades in place, refusals.

The released schema is taken from ``tests/data/store_v3_d11926a.sql``: a store made by the
first release of the store (commit d11926a, schema version 3) and dumped with sqlite3.
"""

from __future__ import annotations

import sqlite3
from datetime import UTC, datetime

import pytest
import sqlalchemy as sa
from click.testing import CliRunner

from tests.obs_fixtures import UNIT, db_urls  # noqa: F401 - fixture
from vascplan.cli import cli
from vascplan.errors import InputError, StoreError
from vascplan.observations import migrations
from vascplan.observations import store as store_module
from vascplan.observations.findings import make_finding
from vascplan.observations.migrations import MIGRATIONS, SCHEMA_VERSION, migrate
from vascplan.observations.store import open_store, resolve_db

RELEASED = UNIT.parent / "data" / "store_v3_d11926a.sql"
T0 = datetime(2026, 12, 1, 16, 0, tzinfo=UTC)
QUERY_INDEXES = {"obs_entry_unit_id_time", "obs_entry_batch", "obs_entry_unit_ref_time"}
"""Batch id (migration 4); unit id and instant, unit id, ref and instant (5, which moved the
keys from the unit's display name to its stable id)."""
OLD_QUERY_INDEXES = {"obs_entry_unit_time", "obs_entry_batch"}
"""Made by migration 4: unit and instant; batch id (the duplicate key's index is from 3)."""


def _engine(db: str) -> sa.Engine:
    url, path = resolve_db(db)
    if path is not None:
        return store_module._sqlite_engine(url)
    return sa.create_engine(url)


def _old_store(db: str, version: int) -> None:
    """A store at ``version``, with two findings and one correction when it has tables."""
    engine = _engine(db)
    # From version 6 on an entry carries chain hashes: the rows are written at 5 and the
    # later migrations bring them up, as an upgraded store of that version holds them.
    rows_at = min(version, 5)
    try:
        assert migrate(engine, db, upto=rows_at) == rows_at
        if version >= 1:
            # No explicit ids: PostgreSQL's serial must stay in step for later writes.
            values = "'U', 1, 'DEMO-11', '2026-12-01T16:00:00+00:00', '2026-12-01T16:00:00+00:00'"
            with engine.begin() as conn:
                for sql in (
                    "INSERT INTO obs_batch (kind, source, unit, entered_at, rows) VALUES "
                    "('import', 'old.csv', 'U', '2026-12-01T22:00:00+00:00', 2)",
                    "INSERT INTO obs_entry (batch_id, unit, bed, ref, time_utc, time_local, "
                    "recorded_by, item, site, value, entered_at) VALUES "
                    f"((SELECT max(id) FROM obs_batch), {values}, 'RN-A', 'nirs', 'L', '64', "
                    "'2026-12-01T22:00:00+00:00')",
                    "INSERT INTO obs_entry (batch_id, unit, bed, ref, time_utc, time_local, "
                    "recorded_by, item, site, value, entered_at) VALUES "
                    f"((SELECT max(id) FROM obs_batch), {values}, 'RN-A', 'nirs', 'R', '61', "
                    "'2026-12-01T22:00:00+00:00')",
                    "INSERT INTO obs_batch (kind, source, unit, entered_at, rows) VALUES "
                    "('correct', 'correct R', 'U', '2026-12-01T22:05:00+00:00', 1)",
                    "INSERT INTO obs_entry (batch_id, unit, bed, ref, time_utc, time_local, "
                    "recorded_by, item, site, value, corrects, reason, entered_at) VALUES "
                    f"((SELECT max(id) FROM obs_batch), {values}, 'RN-B', 'nirs', 'R', '59', "
                    "(SELECT id FROM obs_entry WHERE site = 'R'), 'misread', "
                    "'2026-12-01T22:05:00+00:00')",
                ):
                    if version >= 5:  # a store at 5 keys its rows by unit id, as its vascplan did
                        sql = sql.replace("(kind, ", "(unit_id, kind, ").replace(
                            "(batch_id, ", "(unit_id, batch_id, "
                        )
                        sql = sql.replace("VALUES ('", "VALUES ('u', '").replace(
                            "VALUES ((", "VALUES ('u', ("
                        )
                    conn.exec_driver_sql(sql)
        if version > rows_at:
            assert migrate(engine, db, upto=version) == version
    finally:
        engine.dispose()


def _index_names(store) -> set[str]:  # type: ignore[no-untyped-def]
    with store.engine.connect() as conn:
        return {i["name"] for i in sa.inspect(conn).get_indexes("obs_entry")}


def _assert_latest_and_guarded(store) -> None:  # type: ignore[no-untyped-def]
    assert store.version() == SCHEMA_VERSION
    with store.engine.connect() as conn:
        versions = conn.exec_driver_sql("SELECT version FROM schema_version ORDER BY version")
        assert versions.scalars().all() == list(range(1, SCHEMA_VERSION + 1))
    assert QUERY_INDEXES | {"obs_entry_one_original"} <= _index_names(store)
    # A row-level trigger fires only on a row: make sure there is one.
    guard = make_finding(
        time=T0.replace(hour=18), bed=2, ref="DEMO-12", by="RN-A", item="nirs", site="L",
        value="70", source="t",
    )  # fmt: skip
    store.record([guard], unit="GUARD", kind="add", source="t")
    for statement in ("UPDATE obs_entry SET value = '10'", "DELETE FROM obs_batch"):
        with pytest.raises(sa.exc.DBAPIError) as exc, store.engine.begin() as conn:
            conn.exec_driver_sql(statement)
        assert "append-only" in str(exc.value.orig)


def _schema_objects(conn: sqlite3.Connection) -> set[tuple[str, str, str]]:
    rows = conn.execute(
        "SELECT type, name, sql FROM sqlite_master "
        "WHERE name NOT LIKE 'sqlite_%' AND sql IS NOT NULL"
    )
    return {(t, n, " ".join(sql.split())) for t, n, sql in rows}


def test_migrations_are_numbered_in_order():
    assert [v for v, _, _ in MIGRATIONS] == list(range(1, len(MIGRATIONS) + 1))
    assert len(MIGRATIONS) == SCHEMA_VERSION


def test_migrations_1_to_3_build_the_released_schema(tmp_path):
    # Migration 1 is frozen: today's migrations 1-3 must build what the first release built.
    released = sqlite3.connect(":memory:")
    released.executescript(RELEASED.read_text())
    db = str(tmp_path / "v3.db")
    _old_store(db, 0)  # schema_version only
    engine = _engine(db)
    migrate(engine, db, upto=3)
    engine.dispose()
    ours = sqlite3.connect(db)
    assert _schema_objects(ours) == _schema_objects(released)
    ours.close()


def test_released_store_upgrades_in_place(tmp_path):
    path = tmp_path / "released.db"
    conn = sqlite3.connect(path)
    conn.executescript(RELEASED.read_text())
    conn.close()
    with open_store(str(path)) as store:
        _assert_latest_and_guarded(store)
        # The record is untouched: two findings, the right one corrected 61 -> 59.
        # Migration 5 keys them by the id of a unit file named "DEMO ward" without `id`.
        now = {(f.site, f.value) for f in store.current("demo-ward")}
        assert now == {("L", "64"), ("R", "59")}
        assert [e.id for e in store.entries("demo-ward")] == [1, 2, 3]
        # Writes work on the upgraded store, and the duplicate key still holds.
        later = make_finding(
            time=T0.replace(hour=17), bed=1, ref="DEMO-11", by="RN-A", item="nirs",
            site="L", value="63", source="t",
        )  # fmt: skip
        assert store.record([later], unit="demo-ward", kind="add", source="t") == [5]
        with pytest.raises(InputError, match="already stored"):
            store.record([later], unit="demo-ward", kind="add", source="t")


@pytest.mark.parametrize("version", range(SCHEMA_VERSION))
def test_upgrade_from_every_earlier_version(db_urls, version):  # noqa: F811
    _tool_url, owner_url = db_urls  # migrations run as the tables' owner
    _old_store(owner_url, version)
    with open_store(owner_url) as store:
        _assert_latest_and_guarded(store)
        # Migration 5 keys the old rows by the id a unit file named "U" defaults to: "u".
        if version >= 1:
            assert {(f.site, f.value) for f in store.current("u")} == {("L", "64"), ("R", "59")}
            assert store.count("u") == 3
        else:
            assert store.count("u") == 0


def test_one_transaction_per_migration(tmp_path, monkeypatch):
    # A failing migration rolls back alone: the earlier stay applied and the store is usable.
    def broken(conn):  # type: ignore[no-untyped-def]
        conn.exec_driver_sql("CREATE INDEX obs_entry_extra ON obs_entry (item)")
        conn.exec_driver_sql("CREATE INDEX broken ON no_such_table (x)")

    broken_at = SCHEMA_VERSION + 1
    monkeypatch.setattr(migrations, "MIGRATIONS", [*MIGRATIONS, (broken_at, "broken", broken)])
    monkeypatch.setattr(migrations, "SCHEMA_VERSION", broken_at)
    db = str(tmp_path / "o.db")
    with pytest.raises(StoreError):
        open_store(db)
    monkeypatch.undo()
    with open_store(db) as store:
        assert store.version() == SCHEMA_VERSION
        assert "obs_entry_extra" not in _index_names(store)


def test_newer_store_is_refused_and_left_alone(tmp_path):
    db = str(tmp_path / "o.db")
    _old_store(db, 3)
    engine = _engine(db)
    with engine.begin() as conn:
        conn.exec_driver_sql(
            "INSERT INTO schema_version (version, description, applied_at) "
            "VALUES (99, 'from the future', '2027-01-01T00:00:00+00:00')"
        )
    engine.dispose()
    with pytest.raises(StoreError) as exc:
        open_store(db)
    assert str(exc.value).endswith(
        f"this store is at schema version 99; this vascplan knows up to {SCHEMA_VERSION}: "
        "upgrade vascplan"
    )
    # Nothing was applied: migration 4's indexes are not there.
    conn = sqlite3.connect(db)
    names = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type = 'index'")}
    conn.close()
    assert not OLD_QUERY_INDEXES & names
    # The command line: one line, exit 2 (the project's rule for an input it cannot use).
    r = CliRunner().invoke(
        cli, ["obs", "export", "--unit", str(UNIT), "--format", "csv", "--db", db]
    )
    assert r.exit_code == 2
    assert r.stderr.count("\n") == 1
    assert r.stderr.startswith("error: ") and "upgrade vascplan" in r.stderr


def _plans(store, action) -> list[str]:  # type: ignore[no-untyped-def]
    """SQLite's query plan of every SELECT on obs_entry that ``action`` sends."""
    sent: list[tuple[str, tuple]] = []

    def spy(conn, cursor, statement, parameters, context, executemany):  # type: ignore[no-untyped-def]
        if statement.lstrip().upper().startswith("SELECT") and "obs_entry" in statement:
            sent.append((statement, parameters))

    sa.event.listen(store.engine, "before_cursor_execute", spy)
    try:
        action()
    finally:
        sa.event.remove(store.engine, "before_cursor_execute", spy)
    plans = []
    with store.engine.connect() as conn:
        for statement, parameters in sent:
            rows = conn.exec_driver_sql("EXPLAIN QUERY PLAN " + statement, parameters)
            plans.append(" | ".join(r[-1] for r in rows))
    return plans


def test_writes_and_windows_search_indexes_instead_of_scanning(tmp_path):
    # SQLite's plan says SCAN for a full pass over a table and SEARCH ... USING INDEX for an
    # index lookup (sqlite.org/eqp.html).
    with open_store(str(tmp_path / "o.db")) as store:
        f = make_finding(
            time=T0, bed=1, ref="DEMO-11", by="RN-A", item="nirs", site="L", value="64",
            source="t",
        )  # fmt: skip
        plans = _plans(store, lambda: store.record([f], unit="U", kind="add", source="t"))
        # the duplicate check, the chain's last entry (by primary key), the new batch's ids
        assert len(plans) == 3
        assert "SEARCH obs_entry USING INTEGER PRIMARY KEY (rowid=?)" in plans[1]
        del plans[1]
        assert "USING INDEX obs_entry_unit_id_time (unit_id=? AND time_utc=?)" in plans[0]
        assert "INDEX obs_entry_batch (batch_id=?)" in plans[1]
        plans += _plans(store, lambda: store.entries("U", since=T0, until=T0))
        plans += _plans(store, lambda: store.current_by_ref("U", {"DEMO-11": T0}, until=T0))
        assert "obs_entry_unit_id_time (unit_id=? AND time_utc>? AND time_utc<?)" in plans[2]
        assert "INDEX obs_entry_unit_ref_time (unit_id=? AND ref=? AND time_utc>? AND" in plans[3]
        # The export's keyset pages: the second page starts inside the index on unit and time.
        store.record([later_finding(f)], unit="U", kind="add", source="t")
        pages = _plans(store, lambda: list(store.iter_entries("U", chunk=1)))
        assert len(pages) == 3  # two rows, one a page, then an empty page
        assert "USING INDEX obs_entry_unit_id_time (unit_id=? AND time_utc>?)" in pages[1]
        for plan in plans + pages:
            assert "SCAN obs_entry" not in plan, plan


def later_finding(f):  # type: ignore[no-untyped-def]
    from dataclasses import replace
    from datetime import timedelta

    return replace(f, time=f.time + timedelta(hours=1))
