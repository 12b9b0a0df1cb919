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
PG_OWNER_URL = os.environ.get("VASCPLAN_TEST_PG_OWNER_URL", "")
PG_SKIP = (
    "PostgreSQL store tests skipped: no server (set VASCPLAN_TEST_PG_URL, e.g. by running "
    ".ci/run, which starts one on 127.0.0.1)"
)


def _pg_engine(url: str):  # type: ignore[no-untyped-def]
    import sqlalchemy as sa

    from vascplan.observations.store import resolve_db

    return sa.create_engine(resolve_db(url)[0])


def _pg_schema(tmp_path, migrated: bool):  # type: ignore[no-untyped-def]
    """A fresh schema made by the owner role: yields (tool URL, owner URL) on it.

    The tool role (``VASCPLAN_TEST_PG_URL``) may use the schema and, through the default
    privileges ``.ci/pg-start`` set, only read and add rows in the owner's tables. With no
    ``VASCPLAN_TEST_PG_OWNER_URL`` (an older server), the one URL plays both parts.
    """
    if not PG_URL:
        pytest.skip(PG_SKIP)
    import sqlalchemy as sa

    owner_url = PG_OWNER_URL or PG_URL
    schema = f"test_{uuid.uuid4().hex[:12]}"
    admin = _pg_engine(owner_url)
    try:
        with admin.begin() as conn:
            conn.exec_driver_sql(f'CREATE SCHEMA "{schema}"')
            tool = sa.make_url(PG_URL).username
            if PG_OWNER_URL and tool:
                conn.exec_driver_sql(f'GRANT USAGE ON SCHEMA "{schema}" TO "{tool}"')
    except sa.exc.OperationalError as exc:
        admin.dispose()
        pytest.skip(
            "PostgreSQL store tests skipped: the server in VASCPLAN_TEST_PG_URL cannot be "
            f"reached ({exc.orig})"
        )
    path = quote(f"-csearch_path={schema}")
    urls = tuple(f"{u}{'&' if '?' in u else '?'}options={path}" for u in (PG_URL, owner_url))
    if migrated:
        from vascplan.observations.store import open_store

        open_store(urls[1]).close()
    try:
        yield urls
    finally:
        with admin.begin() as conn:
            conn.exec_driver_sql(f'DROP SCHEMA "{schema}" CASCADE')
        admin.dispose()


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def db_url(request, tmp_path):  # type: ignore[no-untyped-def]
    """A ``--db`` value for an empty store: an SQLite file, or a fresh PostgreSQL schema.

    On PostgreSQL the URL is the tool's restricted role; the owner has migrated the schema.
    """
    if request.param == "sqlite":
        yield str(tmp_path / "obs.db")
        return
    for tool_url, _owner_url in _pg_schema(tmp_path, migrated=True):
        yield tool_url


@pytest.fixture(params=["sqlite", pytest.param("postgresql", marks=pytest.mark.postgres)])
def db_urls(request, tmp_path):  # type: ignore[no-untyped-def]
    """(tool URL, owner URL) of one empty, unmigrated store (the same file on SQLite)."""
    if request.param == "sqlite":
        yield (str(tmp_path / "obs.db"),) * 2
        return
    yield from _pg_schema(tmp_path, migrated=False)
