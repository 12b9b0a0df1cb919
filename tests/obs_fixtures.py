"""Shared fixtures of the observation tests: the same tests on SQLite and on PostgreSQL.

PostgreSQL runs when ``VASCPLAN_TEST_PG_URL`` names a server (``.ci/run`` starts one on
127.0.0.1 for the run); each test gets a fresh schema on it, dropped afterwards.
"""

from __future__ import annotations

import os
import uuid
from pathlib import Path
from urllib.parse import quote

import pytest

HERE = Path(__file__).parent
UNIT = HERE / "unit_minimal.yaml"
PG_URL = os.environ.get("VASCPLAN_TEST_PG_URL", "")
PG_SKIP = (
    "PostgreSQL store tests skipped: no server (set VASCPLAN_TEST_PG_URL, e.g. by running "
    ".ci/run, which starts one on 127.0.0.1)"
)


def _pg_engine(url: str):  # type: ignore[no-untyped-def]
    import sqlalchemy as sa

    from vascplan.observations.store import resolve_db

    return sa.create_engine(resolve_db(url)[0])


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def db_url(request, tmp_path):  # type: ignore[no-untyped-def]
    """A ``--db`` value for an empty store: an SQLite file, or a fresh PostgreSQL schema."""
    if request.param == "sqlite":
        yield str(tmp_path / "obs.db")
        return
    if not PG_URL:
        pytest.skip(PG_SKIP)
    import sqlalchemy as sa

    schema = f"test_{uuid.uuid4().hex[:12]}"
    admin = _pg_engine(PG_URL)
    try:
        with admin.begin() as conn:
            conn.exec_driver_sql(f'CREATE SCHEMA "{schema}"')
    except sa.exc.OperationalError as exc:
        admin.dispose()
        pytest.skip(
            "PostgreSQL store tests skipped: the server in VASCPLAN_TEST_PG_URL cannot be "
            f"reached ({exc.orig})"
        )
    sep = "&" if "?" in PG_URL else "?"
    yield f"{PG_URL}{sep}options={quote(f'-csearch_path={schema}')}"
    with admin.begin() as conn:
        conn.exec_driver_sql(f'DROP SCHEMA "{schema}" CASCADE')
    admin.dispose()
