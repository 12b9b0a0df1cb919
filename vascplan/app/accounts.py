"""Accounts and the audit trail: add, disable and list users, sign in, read the audit.

Passwords are kept only as argon2 hashes (argon2-cffi's defaults, RFC 9106) and never
printed. argon2 is imported inside the functions that hash, so that importing this module
stays light.
"""

from __future__ import annotations

import contextlib
import re
from datetime import datetime

from vascplan.app.ward import FormErrors
from vascplan.errors import InputError
from vascplan.ward.store import ROLES, USERNAME_MAX, AuditRow, User, WardStore

USERNAME = re.compile(rf"^[A-Za-z0-9][A-Za-z0-9._-]{{0,{USERNAME_MAX - 1}}}$")
PASSWORD_MIN = 10
"""Shortest password accepted (unit policy; NIST SP 800-63B asks for at least 8)."""
PASSWORD_MAX = 200

_DUMMY_HASH: str | None = None

HASHER_OPTIONS: dict[str, int] = {}
"""argon2 cost parameters for new hashes; empty means argon2-cffi's defaults (RFC 9106 low
memory profile). Tests lower them to keep the suite fast; a hash carries its own parameters,
so verifying never depends on this."""


def _hasher():
    from argon2 import PasswordHasher

    return PasswordHasher(**HASHER_OPTIONS)


def check_new_user(username: str, role: str, password: str) -> dict[str, str]:
    """Mistakes in a new account, each on its field (empty when all is well)."""
    errors: dict[str, str] = {}
    if not USERNAME.match(username):
        errors["username"] = (
            f"user name {username!r} is not allowed: letters, digits, '.', '_' or '-', "
            f"starting with a letter or digit, at most {USERNAME_MAX} characters"
        )
    if role not in ROLES:
        errors["role"] = f"role {role!r} is not allowed; one of {', '.join(ROLES)}"
    if not PASSWORD_MIN <= len(password) <= PASSWORD_MAX:
        errors["password"] = f"the password must be {PASSWORD_MIN}-{PASSWORD_MAX} characters"
    return errors


def add_user(
    store: WardStore, username: str, role: str, password: str, *, by: str, now: datetime
) -> User:
    """Create an account (or give a disabled name a new start); refuse a live duplicate."""
    errors = check_new_user(username, role, password)
    existing = store.user(username)
    if existing is not None and not existing.disabled and "username" not in errors:
        errors["username"] = f"user {username!r} exists already"
    if errors:
        raise FormErrors(errors)
    store.user_event(username, "add", by=by, at=now, role=role, pw_hash=_hasher().hash(password))
    user = store.user(username)
    assert user is not None
    return user


def disable_user(store: WardStore, username: str, *, by: str, now: datetime) -> None:
    """Disable an account: it can no longer sign in; its records keep its name."""
    user = store.user(username)
    if user is None:
        raise InputError("USER", "", f"no user {username!r}")
    if user.disabled:
        raise InputError("USER", "", f"user {username!r} is disabled already")
    store.user_event(username, "disable", by=by, at=now)


def list_users(store: WardStore) -> list[User]:
    return store.users()


def authenticate(store: WardStore, username: str, password: str) -> User | None:
    """The account when the name and password match and it is not disabled, else None.

    A wrong name costs the same hashing time as a wrong password (no timing hint that the
    name exists).
    """
    from argon2.exceptions import InvalidHashError, VerificationError

    global _DUMMY_HASH
    hasher = _hasher()
    user = store.user(username) if USERNAME.match(username or "") else None
    if user is None or user.disabled:
        if _DUMMY_HASH is None:
            _DUMMY_HASH = hasher.hash("not a password of anyone")
        with contextlib.suppress(VerificationError):
            hasher.verify(_DUMMY_HASH, password or "-")
        return None
    try:
        hasher.verify(user.pw_hash, password)
    except (VerificationError, InvalidHashError):
        return None
    return user


def audit_trail(store: WardStore, limit: int | None = None) -> list[AuditRow]:
    return store.audit_rows(limit=limit)


def audit_text(rows: list[AuditRow]) -> str:
    """The audit trail as a text table (``vascplan audit``)."""
    lines = ["instant (UTC)              author          address          action        what"]
    for r in rows:
        lines.append(
            f"{r.at.isoformat():26} {r.author[:15]:15} {r.address[:16]:16} "
            f"{r.action[:13]:13} {r.what}"
        )
    return "\n".join(lines) + "\n"
