"""Shared helpers of the ward tests: a seeded store, an injected clock, signing in."""

from __future__ import annotations

import re
from datetime import datetime
from pathlib import Path
from zoneinfo import ZoneInfo

UNIT = Path(__file__).parent / "data" / "ward_unit.yaml"
UNIT_NAME = "Ward test unit"
UNIT_KEY = "ward-test-unit"  # the unit's stable id (the file gives none: its name, slugged)
LONDON = ZoneInfo("Europe/London")
PASSWORDS = {
    "rn-ada": ("nurse", "nurse password 1"),
    "dr-bo": ("physician", "physician password 1"),
    "admin-cy": ("admin", "admin password 1"),
}


def local(text: str) -> datetime:
    """A London wall time (UTC+00:00 in December) as an aware moment."""
    return datetime.fromisoformat(text).replace(tzinfo=LONDON)


class Clock:
    """The server's clock, set by the test."""

    def __init__(self, at: datetime) -> None:
        self.at = at

    def __call__(self) -> datetime:
        return self.at


CHEAP_ARGON2 = {"time_cost": 1, "memory_cost": 1024, "parallelism": 1}
"""Low argon2 costs for test accounts (the defaults take about half a second a hash)."""


def seed(db: str, at: datetime) -> None:
    """Import the test unit and make one account of each role (cheap hashes)."""
    from vascplan.app import accounts
    from vascplan.app.accounts import add_user

    accounts.HASHER_OPTIONS.update(CHEAP_ARGON2)
    from vascplan.app.events import import_unit_file
    from vascplan.ward.store import open_ward

    with open_ward(db) as store:
        import_unit_file(store, UNIT, author="test", now=at)
        for name, (role, password) in PASSWORDS.items():
            add_user(store, name, role, password, by="test", now=at)


TOKEN = re.compile(r'name="csrf" value="([^"]+)"')
FORM_TOKEN = re.compile(r'name="form_token" value="([^"]+)"')


def csrf(html: str) -> str:
    m = TOKEN.search(html)
    assert m, "no CSRF token on the page"
    return m.group(1)


def sign_in(client, name: str) -> str:  # type: ignore[no-untyped-def]
    """Sign ``name`` in through the form; return the session's CSRF token."""
    page = client.get("/login")
    r = client.post(
        "/login",
        data={"username": name, "password": PASSWORDS[name][1], "csrf": csrf(page.text)},
        follow_redirects=False,
    )
    assert r.status_code == 303, r.text
    return csrf(client.get("/board").text)
