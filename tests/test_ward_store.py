"""The ward's record: append-only tables, accounts as events, a unit file in and out again,
and the ward commands (unit, users, audit, serve)."""

from __future__ import annotations

from datetime import UTC, datetime

import pytest
import sqlalchemy as sa
from click.testing import CliRunner

from tests.obs_fixtures import db_url, db_urls  # noqa: F401 - fixtures
from tests.ward_fixtures import UNIT, UNIT_NAME, local, seed
from vascplan.cli import cli
from vascplan.paths import examples_dir
from vascplan.surveillance.unit import load_unit

WARD_TABLES = ("ward_user", "ward_event", "ward_audit", "ward_form", "ward_setting")


def test_ward_tables_refuse_update_and_delete(db_urls):  # noqa: F811
    # The triggers refuse UPDATE and DELETE even for the tables' owner; on PostgreSQL the
    # tool's own role may not even try (INSERT and SELECT only).
    from vascplan.ward.store import open_ward

    tool_url, owner_url = db_urls
    with open_ward(owner_url) as store:
        seed_at = local("2026-12-01T10:10")
        store.user_event("rn-x", "add", by="t", at=seed_at, role="nurse", pw_hash="h")
        store.add_event(UNIT_NAME, "", "unit", seed_at, {"timezone": "UTC"}, by="t", now=seed_at)
        store.audit("t", "-", "sign-in", "x", seed_at)
        store.claim_form("tok", "check", "x", seed_at)
        store.secret()
    urls = [(owner_url, "append-only")]
    if tool_url != owner_url:
        urls.append((tool_url, "permission denied"))
    for url, refusal in urls:
        with open_ward(url) as store:
            for table in WARD_TABLES:
                for sql in (f"UPDATE {table} SET at_utc = 'x'", f"DELETE FROM {table}"):
                    refused = pytest.raises(sa.exc.DatabaseError, match=refusal)
                    with refused, store.engine.begin() as conn:
                        conn.exec_driver_sql(sql)
                with store.engine.connect() as conn:
                    assert conn.exec_driver_sql(f"SELECT count(*) FROM {table}").scalar() == 1


def test_accounts_are_events_and_the_state_is_derived(tmp_path):
    from vascplan.app.accounts import add_user, authenticate, disable_user
    from vascplan.app.ward import FormErrors
    from vascplan.ward.store import open_ward

    at = datetime(2026, 12, 1, 10, tzinfo=UTC)
    with open_ward(str(tmp_path / "w.db")) as store:
        add_user(store, "rn-ada", "nurse", "first password", by="admin", now=at)
        assert authenticate(store, "rn-ada", "first password").role == "nurse"  # type: ignore[union-attr]
        assert authenticate(store, "rn-ada", "wrong password") is None
        with pytest.raises(FormErrors, match="exists already"):
            add_user(store, "rn-ada", "admin", "other password", by="admin", now=at)
        disable_user(store, "rn-ada", by="admin", now=at)
        assert authenticate(store, "rn-ada", "first password") is None
        assert [(u.username, u.disabled) for u in store.users()] == [("rn-ada", True)]
        # The hash is kept, never the password.
        with store.engine.connect() as conn:
            hashes = conn.exec_driver_sql("SELECT pw_hash FROM ward_user").scalars().all()
        assert hashes[0].startswith("$argon2id$") and "first password" not in hashes[0]
        assert len(hashes) == 2  # add, disable: two rows, nothing updated


def test_demo_unit_round_trip(tmp_path):
    out = tmp_path / "exported.yaml"
    db = str(tmp_path / "w.db")
    demo = examples_dir() / "unit-demo.yaml"
    runner = CliRunner()
    r = runner.invoke(cli, ["unit", "import", str(demo), "--db", db])
    assert r.exit_code == 0, r.output
    assert "stored" in r.stdout and "(6 patients)" in r.stdout
    name = load_unit(demo).unit.name
    r = runner.invoke(cli, ["unit", "export", name, "--db", db, "-o", str(out)])
    assert r.exit_code == 0, r.output
    before, after = load_unit(demo), load_unit(out)
    assert after.unit == before.unit and after.shifts == before.shifts
    assert after.staff == before.staff and after.protocol == before.protocol

    def key(u):  # type: ignore[no-untyped-def]
        return [
            (
                p.ref,
                p.bed,
                p.sex,
                p.height_cm,
                p.pad,
                p.diabetes,
                p.vessel_mm,
                p.device.kind,
                p.device.side,
                p.device.vessel,
                p.device.size_fr,
                p.device.label,
                p.device.outer_mm,
                p.device.inserted.astimezone(UTC),
                p.device.removed and p.device.removed.astimezone(UTC),
                p.dpc and (p.dpc.size_fr, p.dpc.inserted.astimezone(UTC)),
                [(e.at.astimezone(UTC), e.tier, e.note) for e in p.events],
                p.baseline,
            )
            for p in sorted(u.patients, key=lambda p: p.bed)
        ]

    assert key(after) == key(before)
    # A second import of the same unit is refused in one line.
    again = runner.invoke(cli, ["unit", "import", str(demo), "--db", db])
    assert again.exit_code == 2 and "already holds the unit" in again.stderr


def test_risk_from_the_store_is_the_risk_from_the_file(tmp_path):
    # The same model, the same rules: the board's tier equals `vascplan risk` on the file.
    from vascplan.app.ward import board
    from vascplan.surveillance.service import risk_for_unit
    from vascplan.ward.store import open_ward

    db = str(tmp_path / "w.db")
    at = local("2026-12-01T12:00")
    seed(db, at)
    _, assessments, _ = risk_for_unit(UNIT, "2026-12-01T12:00")
    with open_ward(db) as store:
        rows = board(store, UNIT_NAME, at).rows
    assert [(r.ref, r.tier) for r in rows] == [(a.ref, a.tier) for a in assessments]


def test_users_cli_reads_the_password_from_stdin_and_never_prints_it(tmp_path):
    db = str(tmp_path / "w.db")
    runner = CliRunner()
    add = ["users", "add", "ward-admin", "--role", "admin", "--db", db]
    r = runner.invoke(cli, add, input="a long secret 1\n")
    assert r.exit_code == 0, r.output
    listed = runner.invoke(cli, ["users", "list", "--db", db])
    assert listed.stdout.split() == ["ward-admin", "admin", "active"]
    assert "a long secret" not in listed.output and "argon2" not in listed.output
    short = runner.invoke(cli, ["users", "add", "rn-b", "--role", "nurse", "--db", db], input="x\n")
    assert short.exit_code == 2 and "the password must be 10-200 characters" in short.stderr
    no_arg = runner.invoke(cli, ["users", "add", "rn-b", "--role", "nurse", "--password", "x" * 12])
    assert no_arg.exit_code == 2 and "--password" in no_arg.stderr
    r = runner.invoke(cli, ["users", "disable", "ward-admin", "--db", db])
    assert r.exit_code == 0
    assert runner.invoke(cli, ["users", "list", "--db", db]).stdout.split()[-1] == "disabled"
    audit = runner.invoke(cli, ["audit", "--db", db])
    assert "user-add" in audit.stdout and "user-disable" in audit.stdout
    assert "ward-admin as admin" in audit.stdout


def test_serve_refuses_an_open_address_without_tls(tmp_path):
    db = str(tmp_path / "w.db")
    seed(db, local("2026-12-01T10:00"))
    r = CliRunner().invoke(cli, ["serve", "--db", db, "--host", "0.0.0.0"])
    assert r.exit_code == 2
    assert r.stderr.strip().startswith("error: --host: 0.0.0.0 is reachable from other machines")


def test_serve_insecure_http_warns_on_every_start(tmp_path, monkeypatch):
    import uvicorn

    db = str(tmp_path / "w.db")
    seed(db, local("2026-12-01T10:00"))
    calls = []
    monkeypatch.setattr(uvicorn, "run", lambda *a, **k: calls.append(k))
    r = CliRunner().invoke(cli, ["serve", "--db", db, "--host", "0.0.0.0", "--insecure-http"])
    assert r.exit_code == 0, r.output
    assert "WARNING: plain HTTP" in r.stderr
    assert calls[0]["host"] == "0.0.0.0" and calls[0]["port"] == 8440


def test_serve_on_an_empty_store_says_to_import_a_unit(tmp_path):
    r = CliRunner().invoke(cli, ["serve", "--db", str(tmp_path / "w.db")])
    assert r.exit_code == 2 and "vascplan unit import UNIT.yaml" in r.stderr


def test_every_process_gets_the_same_session_key(db_url):  # noqa: F811
    from vascplan.ward.store import open_ward

    with open_ward(db_url) as one, open_ward(db_url) as two:
        first = one.secret()
        assert len(first) >= 64 and two.secret() == first == one.secret()


def test_serve_needs_both_tls_files(tmp_path):
    cert = tmp_path / "ward.crt"
    cert.write_text("not really a certificate")
    r = CliRunner().invoke(cli, ["serve", "--db", str(tmp_path / "w.db"), "--tls-cert", str(cert)])
    assert r.exit_code == 2
    assert r.stderr.strip() == "error: --tls-cert: give both --tls-cert and --tls-key, or neither"
