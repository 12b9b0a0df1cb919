"""The throw-away PostgreSQL server scripts of CI: .ci/pg-start and .ci/pg-stop."""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent


def _run(script: str, *args: str, env: dict[str, str]) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        ["bash", str(ROOT / ".ci" / script), *args],
        capture_output=True,
        text=True,
        env=env,
        timeout=120,
        check=False,
    )


def test_pg_start_without_server_programs_skips_cleanly(tmp_path):
    env = {**os.environ, "VASCPLAN_PG_BINDIR": str(tmp_path / "none"), "CI": "false"}
    r = _run("pg-start", env=env)
    assert r.returncode == 0
    assert r.stdout == ""  # nothing for .ci/run to export: the PostgreSQL tests skip
    assert r.stderr.strip() == (
        "pg-start: no PostgreSQL server programs (initdb) found; "
        "the PostgreSQL tests will be skipped"
    )


def _bindir() -> str | None:
    found = sorted(Path("/usr/lib/postgresql").glob("*/bin/initdb"))
    if found:
        return str(found[-1].parent)
    initdb = shutil.which("initdb")
    return str(Path(initdb).parent) if initdb else None


@pytest.mark.postgres
def test_pg_start_serves_on_loopback_and_pg_stop_removes_it():
    if not os.environ.get("VASCPLAN_TEST_PG_URL"):
        # Starting a second server costs seconds: only where CI has shown one can be had.
        pytest.skip("pg-start test skipped: no VASCPLAN_TEST_PG_URL (run .ci/run)")
    if _bindir() is None:
        pytest.skip("no PostgreSQL server programs (initdb) on this machine")
    if os.geteuid() == 0 and shutil.which("runuser") is None:
        pytest.skip("running as root without runuser")
    r = _run("pg-start", env=dict(os.environ))
    if not r.stdout:
        pytest.skip(f"pg-start could not start a server here: {r.stderr.strip()}")
    out = dict(line.split("=", 1) for line in r.stdout.splitlines())
    url, folder = out["VASCPLAN_TEST_PG_URL"], out["VASCPLAN_PG_DIR"]
    owner = out["VASCPLAN_TEST_PG_OWNER_URL"]
    try:
        assert url.startswith("postgresql://vascplan_tool:") and "@127.0.0.1:" in url
        assert owner.startswith("postgresql://vascplan_owner:") and "@127.0.0.1:" in owner
        import sqlalchemy as sa

        from vascplan.observations.store import resolve_db

        for u in (url, owner):
            engine = sa.create_engine(resolve_db(u)[0])
            with engine.connect() as conn:
                assert conn.exec_driver_sql("SELECT current_database()").scalar() == (
                    "vascplan_test"
                )
                # Only the owner may change the schema (PostgreSQL has_database_privilege).
                may_create = conn.exec_driver_sql(
                    "SELECT has_database_privilege(current_database(), 'CREATE')"
                ).scalar()
                assert may_create is (u == owner)
            engine.dispose()
    finally:
        stop = _run("pg-stop", folder, env=dict(os.environ))
    assert stop.returncode == 0
    assert not Path(folder).exists()
