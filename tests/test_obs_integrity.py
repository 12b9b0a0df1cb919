"""A record that cannot be quietly rewritten (issue 18, deliverable 7).

Stable unit ids, SQLite's guards against every way round the append-only rule, the
PostgreSQL roles, the hash chain and ``obs verify``, authors checked against the staff.
"""

from __future__ import annotations

import hashlib
import json
import sqlite3
from datetime import UTC, datetime

import pytest
import sqlalchemy as sa
from click.testing import CliRunner

from tests.obs_fixtures import PG_OWNER_URL, UNIT, db_urls  # noqa: F401 - fixture
from vascplan.cli import cli
from vascplan.cli import obs as obs_cli
from vascplan.errors import StoreError
from vascplan.observations import migrations
from vascplan.observations.findings import make_finding
from vascplan.observations.store import open_store
from vascplan.surveillance.unit import unit_slug

T0 = datetime(2026, 12, 1, 16, 0, tzinfo=UTC)


def run(*args):  # type: ignore[no-untyped-def]
    return CliRunner().invoke(cli, [str(a) for a in args])


def _f(hour: int = 16, site: str = "L", value: str = "64"):  # type: ignore[no-untyped-def]
    return make_finding(
        time=T0.replace(hour=hour), bed=1, ref="DEMO-11", by="RN-A", item="nirs", site=site,
        value=value, source="t",
    )  # fmt: skip


def _three(db: str) -> None:
    with open_store(db) as store:
        store.record([_f(16), _f(17), _f(18)], unit="icu-1", kind="add", source="t")


def _verify(db: str):  # type: ignore[no-untyped-def]
    return run("obs", "verify", "--db", db)


# --- unit ids -------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("name", "slug"),
    [
        ("Cardiac critical care (demo)", "cardiac-critical-care-demo"),
        ("  ICU 2 / North ", "icu-2-north"),
        ("Réanimation Médicale", "reanimation-medicale"),
        ("!!!", "unit"),
    ],
)
def test_slug_by_hand_and_frozen_copy_agree(name, slug):
    # Expected ids written by hand: lower case, accents dropped, runs of other characters
    # one hyphen, none at either end.
    assert unit_slug(name) == slug
    assert migrations._m5_slug(name) == slug


def _unit_file(tmp_path, name: str, uid: str | None, file: str = "u.yaml"):  # type: ignore[no-untyped-def]
    text = UNIT.read_text().replace(
        "unit: {name: Cardiac critical care (demo), timezone: Europe/London}",
        f"unit: {{name: {name}, timezone: Europe/London"
        + (f", id: {uid}}}" if uid else "}"),
    )
    path = tmp_path / file
    path.write_text(text)
    return path


def test_renaming_the_unit_keeps_its_history(tmp_path):
    db = tmp_path / "o.db"
    before = _unit_file(tmp_path, "Harbourside ICU", "harbourside-icu", "a.yaml")
    r = run("obs", "add", "--unit", before, "--bed", 1, "--time", "2026-12-01T16:00",
            "--by", "RN-A", "--nirs", "R=40", "--db", db)  # fmt: skip
    assert r.exit_code == 0, r.output
    after = _unit_file(tmp_path, "HARBOURSIDE intensive care", "harbourside-icu", "b.yaml")
    r = run("obs", "review", after, "--at", "2026-12-01T16:30", "--format", "json", "--db", db)
    doc = json.loads(r.output)
    # The low NIRS (40 %, below the standard protocol's floor) stays in review under the
    # new display name.
    assert doc["unit"] == "HARBOURSIDE intensive care"
    assert "nirs-floor" in {a["rule"] for a in doc["patients"][0]["alerts"]}


def test_unknown_unit_id_and_missing_id_are_said(tmp_path, monkeypatch):
    monkeypatch.setattr(obs_cli, "_stderr_is_terminal", lambda: True)
    db = tmp_path / "o.db"
    known = _unit_file(tmp_path, "Ward A", "ward-a", "a.yaml")
    r = run("obs", "add", "--unit", known, "--bed", 1, "--time", "2026-12-01T16:00",
            "--by", "RN-A", "--nirs", "L=64", "--db", db)  # fmt: skip
    assert r.exit_code == 0 and "note" not in r.stderr
    other = _unit_file(tmp_path, "Ward A", None, "b.yaml")
    r = run("obs", "add", "--unit", other, "--bed", 1, "--time", "2026-12-01T17:00",
            "--by", "RN-A", "--nirs", "L=64", "--db", db)  # fmt: skip
    assert r.exit_code == 0
    lines = r.stderr.splitlines()
    assert lines[0] == (
        f"note: {other}: the unit has no `id`; its record is kept under 'ward-a' (from its "
        "name): add `id: ward-a` under `unit:` so that renaming the unit keeps its record"
    )
    assert len(lines) == 1  # its default id is the one on record: nothing unknown
    typo = _unit_file(tmp_path, "Ward A", "ward-b", "c.yaml")
    r = run("obs", "add", "--unit", typo, "--bed", 1, "--time", "2026-12-01T18:00",
            "--by", "RN-A", "--nirs", "L=64", "--db", db)  # fmt: skip
    assert r.stderr.splitlines()[0] == (
        f"note: the store sqlite:///{db} has no record of unit id 'ward-b' (it holds ward-a); "
        "'Ward A' is on record as unit id 'ward-a': check the unit file's `id`"
    )
    # A review of a unit id the store does not know says so too (a typo would else show
    # an empty record).
    typo2 = _unit_file(tmp_path, "Ward C", "ward-c", "d.yaml")
    r = run("obs", "review", typo2, "--at", "2026-12-01T18:30", "--db", db)
    assert r.stderr.splitlines()[0] == (
        f"note: the store sqlite:///{db} has no record of unit id 'ward-c' (it holds ward-a, "
        "ward-b): check the unit file's `id`"
    )


# --- authors --------------------------------------------------------------------------------


def test_author_must_be_on_the_staff(tmp_path):
    # tests/unit_minimal.yaml lists one nurse, RN-A.
    r = run("obs", "add", "--unit", UNIT, "--bed", 1, "--time", "2026-12-01T16:00",
            "--by", "RN-Z", "--nirs", "L=64", "--db", tmp_path / "o.db")  # fmt: skip
    assert (r.exit_code, r.output) == (
        2,
        "error: --by: 'RN-Z' is not on the unit's staff; allowed: RN-A\n",
    )


def test_import_authors_must_be_on_the_staff(tmp_path):
    p = tmp_path / "c.csv"
    p.write_text(
        "time,bed,ref,by,item,site,value\n"
        "2026-12-01T16:00,1,DEMO-11,RN-A,nirs,L,64\n"
        "2026-12-01T16:00,1,DEMO-11,someone,nirs,R,64\n"
    )
    db = tmp_path / "o.db"
    r = run("obs", "import", p, "--unit", UNIT, "--db", db)
    assert (r.exit_code, r.output) == (
        2,
        f"error: {p}: line 3, column by: 'someone' is not on the unit's staff; allowed: RN-A\n",
    )
    with open_store(str(db)) as store:
        assert store.count() == 0  # nothing of the file stored


def test_correction_needs_the_unit_and_a_staff_author_and_withdrawal_shows_in_review(tmp_path):
    db = tmp_path / "o.db"
    r = run("obs", "add", "--unit", UNIT, "--bed", 1, "--time", "2026-12-01T16:00",
            "--by", "RN-A", "--nirs", "R=40", "--db", db)  # fmt: skip
    assert r.exit_code == 0, r.output
    r = run("obs", "review", UNIT, "--at", "2026-12-01T16:30", "--db", db)
    assert "ALERT nirs-floor" in r.output
    base = ("obs", "correct", "--entry", 1, "--withdraw", "--reason", "wrong patient")
    r = run(*base, "--by", "RN-A", "--db", db)
    assert r.exit_code == 2 and "Missing option '--unit'" in r.output
    r = run(*base, "--by", "anyone", "--unit", UNIT, "--db", db)
    assert r.output == "error: --by: 'anyone' is not on the unit's staff; allowed: RN-A\n"
    other = _unit_file(tmp_path, "Elsewhere", "elsewhere")
    r = run(*base, "--by", "RN-A", "--unit", other, "--db", db)
    assert r.output.startswith("error: --entry: no entry 1 of unit elsewhere in ")
    r = run(*base, "--by", "RN-A", "--unit", UNIT, "--db", db)
    assert r.exit_code == 0, r.output
    r = run("obs", "review", UNIT, "--at", "2026-12-01T16:30", "--db", db)
    assert "ALERT nirs-floor" not in r.output  # withdrawn: not reviewed...
    line = [x for x in r.output.splitlines() if "withdrawn:" in x]
    assert len(line) == 1  # ... but shown, with who and why
    assert line[0].startswith("  withdrawn: nirs R of 2026-12-01 16:00+00:00 (40) by RN-A at ")
    assert line[0].endswith(": wrong patient")


# --- SQLite: every way round the append-only rule ------------------------------------------


@pytest.mark.parametrize(
    "statement",
    [
        # A stored finding rewritten under its own id and key (absent -> palpable).
        "INSERT OR REPLACE INTO obs_entry SELECT id, batch_id, unit, bed, ref, time_utc, "
        "time_local, recorded_by, item, site, '99', corrects, reason, entered_at, unit_id, "
        "prev_hash, entry_hash FROM obs_entry WHERE id = 2",
        "REPLACE INTO obs_entry SELECT id, batch_id, unit, bed, ref, time_utc, time_local, "
        "recorded_by, item, site, '99', corrects, reason, entered_at, unit_id, prev_hash, "
        "entry_hash FROM obs_entry WHERE id = 2",
        # The same key under a new id: REPLACE would delete the original through the index.
        "INSERT OR REPLACE INTO obs_entry SELECT 99, batch_id, unit, bed, ref, time_utc, "
        "time_local, recorded_by, item, site, '99', corrects, reason, entered_at, unit_id, "
        "prev_hash, entry_hash FROM obs_entry WHERE id = 2",
        "UPDATE obs_entry SET value = '99' WHERE id = 2",
        "UPDATE OR REPLACE obs_entry SET id = 1 WHERE id = 2",
        "DELETE FROM obs_entry WHERE id = 2",
        "INSERT INTO obs_entry SELECT * FROM obs_entry WHERE id = 2 "
        "ON CONFLICT (id) DO UPDATE SET value = '99'",
        "INSERT OR REPLACE INTO obs_batch SELECT id, 'add', 'x', unit, entered_at, 0, unit_id "
        "FROM obs_batch WHERE id = 1",
        "INSERT OR REPLACE INTO schema_version VALUES (1, 'x', 'x')",
        "DELETE FROM schema_version",
    ],
)
def test_sqlite_refuses_every_rewrite_behind_the_tools_back(tmp_path, statement):
    db = str(tmp_path / "o.db")
    _three(db)
    # Another program on the file: sqlite3 itself, without the tool's connection settings
    # (recursive_triggers off, as any fresh connection has it).
    conn = sqlite3.connect(db)
    with pytest.raises(sqlite3.DatabaseError) as exc:
        conn.execute(statement)
        conn.commit()
    conn.close()
    assert "append-only" in str(exc.value)
    with open_store(db) as store:
        assert [e.value for e in store.entries("icu-1")] == ["64", "64", "64"]
        assert store.count() == 3
    r = _verify(db)
    assert r.exit_code == 0, r.output
    assert r.output.startswith(
        f"record intact in sqlite:///{db}: 3 entries in an unbroken chain, head "
    )


def test_verify_names_the_altered_entry_after_the_trigger_is_dropped(tmp_path):
    db = str(tmp_path / "o.db")
    _three(db)
    conn = sqlite3.connect(db)
    conn.execute("DROP TRIGGER obs_entry_no_update")  # cannot be prevented for the owner
    conn.execute("UPDATE obs_entry SET value = '90' WHERE id = 2")
    conn.commit()
    conn.close()
    r = _verify(db)
    assert r.exit_code == 1
    assert r.output == (
        f"record NOT intact in sqlite:///{db}: entry 2 altered (its content no longer matches its "
        "hash); guard trigger obs_entry_no_update missing or disabled: the record is not "
        "protected against change\n"
    )


def test_verify_names_a_rehashed_entry_and_a_removed_one(tmp_path):
    from vascplan.observations.chain import entry_hash

    db = str(tmp_path / "o.db")
    _three(db)
    conn = sqlite3.connect(db)
    conn.row_factory = sqlite3.Row
    conn.execute("DROP TRIGGER obs_entry_no_update")
    row = dict(conn.execute("SELECT * FROM obs_entry WHERE id = 1").fetchone())
    row["value"] = "30"  # and its own hash made to match: entry 2's link still gives it away
    conn.execute(
        "UPDATE obs_entry SET value = '30', entry_hash = ? WHERE id = 1", (entry_hash(row),)
    )
    conn.commit()
    r = _verify(db)
    assert r.exit_code == 1
    assert r.output.startswith(
        f"record NOT intact in sqlite:///{db}: entry 1 altered (entry 2 no longer links to it); "
    )
    conn.execute("DROP TRIGGER obs_entry_no_delete")
    conn.execute("UPDATE obs_entry SET value = '64', entry_hash = ? WHERE id = 1",
                 (entry_hash(row | {"value": "64"}),))  # fmt: skip
    conn.execute("DELETE FROM obs_entry WHERE id = 2")
    conn.commit()
    conn.close()
    r = _verify(db)
    assert r.output.startswith(
        f"record NOT intact in sqlite:///{db}: "
        "entry 2 removed (entry 3 no longer links to entry 1); "
    )


def test_chain_by_hand_and_head_check(tmp_path):
    db = str(tmp_path / "o.db")
    _three(db)
    conn = sqlite3.connect(db)
    conn.row_factory = sqlite3.Row
    rows = [dict(r) for r in conn.execute("SELECT * FROM obs_entry ORDER BY id")]
    conn.close()
    # SHA-256 (FIPS 180-4) of the sorted, compact JSON of every column but entry_hash.
    prev = "0" * 64
    for row in rows:
        assert row["prev_hash"] == prev
        body = {k: v for k, v in row.items() if k != "entry_hash"}
        text = json.dumps(body, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
        prev = hashlib.sha256(text.encode("utf-8")).hexdigest()
        assert row["entry_hash"] == prev
    r = run("obs", "verify", "--head", rows[1]["entry_hash"], "--db", db)
    assert r.exit_code == 0 and r.output.endswith(f"head {prev}\n")
    r = run("obs", "verify", "--head", "ab" * 32, "--db", db)
    assert r.exit_code == 1 and "the chain head " + "ab" * 32 + " noted earlier" in r.output
    r = run("obs", "verify", "--head", "xyz", "--db", db)
    assert (r.exit_code, r.output) == (
        2,
        "error: --head: give the 64 hexadecimal digits printed by obs verify\n",
    )


def test_verify_an_upgraded_store_and_the_tools_pragmas(tmp_path):
    db = str(tmp_path / "o.db")
    with open_store(db) as store, store.engine.connect() as conn:
        assert conn.exec_driver_sql("PRAGMA recursive_triggers").scalar() == 1
    assert _verify(db).output.startswith(f"record intact in sqlite:///{db}: 0 entries")


# --- PostgreSQL: two roles ------------------------------------------------------------------


@pytest.mark.postgres
def test_postgres_tool_role_cannot_migrate_or_rewrite_and_owner_edit_is_found(db_urls):  # noqa: F811
    tool, owner = db_urls
    if not tool.startswith("postgresql"):
        pytest.skip("PostgreSQL roles: the SQLite store has one owner")
    if not PG_OWNER_URL:
        pytest.skip("no VASCPLAN_TEST_PG_OWNER_URL: the server has one role (old .ci/pg-start)")
    with pytest.raises(StoreError) as exc:
        open_store(tool)
    assert str(exc.value).endswith(
        "the store is at schema version 0 and this vascplan needs "
        f"{migrations.SCHEMA_VERSION}, but this database user may only add and read records: "
        "run `vascplan obs migrate --db OWNER-URL` as the store's owner first"
    )
    r = run("obs", "migrate", "--db", owner)
    assert r.exit_code == 0 and r.output.endswith(
        f"is at schema version {migrations.SCHEMA_VERSION} "
        f"(this vascplan: {migrations.SCHEMA_VERSION})\n"
    )
    _three(tool)
    with open_store(tool) as store:
        for sql in (
            "UPDATE obs_entry SET value = '99'",
            "DELETE FROM obs_entry",
            "TRUNCATE obs_entry",
            "ALTER TABLE obs_entry DISABLE TRIGGER obs_entry_append_only",
            "INSERT INTO obs_entry SELECT * FROM obs_entry WHERE id = 2 "
            "ON CONFLICT (id) DO UPDATE SET value = '99'",
        ):
            with pytest.raises(sa.exc.DBAPIError) as err, store.engine.begin() as conn:
                conn.exec_driver_sql(sql)
            text = str(err.value.orig)
            assert "permission denied" in text or "must be owner" in text, text
    assert _verify(tool).exit_code == 0
    with open_store(owner) as store, store.engine.begin() as conn:
        conn.exec_driver_sql("ALTER TABLE obs_entry DISABLE TRIGGER obs_entry_append_only")
        conn.exec_driver_sql("UPDATE obs_entry SET value = '90' WHERE id = 2")
    r = _verify(tool)
    assert r.exit_code == 1
    assert "entry 2 altered (its content no longer matches its hash)" in r.output
    assert "guard trigger obs_entry_append_only missing or disabled" in r.output


def test_a_bad_unit_id_is_one_line(tmp_path):
    bad = _unit_file(tmp_path, "Ward A", '"Ward A"')
    r = run("obs", "review", bad, "--db", tmp_path / "o.db")
    assert (r.exit_code, r.output) == (
        2,
        f"error: {bad}: unit.id: a unit id is lower-case letters, digits and inner hyphens, "
        "at most 64 characters, e.g. 'ward-a' (got 'Ward A')\n",
    )


def test_concurrent_writers_keep_one_chain(db_urls):  # noqa: F811
    # Two writers at once (threads, each its own connection): every batch stored, the chain
    # unbroken (SQLite's write lock; PostgreSQL's advisory lock around the chain's tail).
    import threading

    tool, owner = db_urls
    open_store(owner).close()  # migrated by the owner
    errors: list[BaseException] = []

    def writer(site: str) -> None:
        try:
            with open_store(tool) as store:
                for hour in range(12):
                    store.record([_f(hour, site)], unit="icu-1", kind="add", source=site)
        except BaseException as exc:  # pragma: no cover - reported below
            errors.append(exc)

    threads = [threading.Thread(target=writer, args=(s,)) for s in ("L", "R")]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert errors == []
    r = _verify(tool)
    assert r.exit_code == 0, r.output
    assert ": 24 entries in an unbroken chain" in r.output  # 2 writers x 12 hours
