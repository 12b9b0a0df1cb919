"""The ward's own record in the observation store: accounts, unit and patient events, audit.

The tables are made by migration 7 (:mod:`vascplan.observations.migrations`) and are
append-only like the findings (triggers refuse ``UPDATE`` and ``DELETE``): a user's role
and whether the account is disabled, or a patient's device, are derived from the events
in order, never updated in place.

This module imports SQLAlchemy at the top: only the ward commands and the web face import it.
"""

from __future__ import annotations

import json
import secrets
from collections.abc import Iterator
from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import Any

import sqlalchemy as sa
from sqlalchemy.engine import Connection

from vascplan.errors import InputError, StoreError
from vascplan.observations.store import ObservationStore, open_store

metadata = sa.MetaData()

users_t = sa.Table(
    "ward_user",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("username", sa.Text, nullable=False),
    sa.Column("kind", sa.Text, nullable=False),
    sa.Column("role", sa.Text, nullable=True),
    sa.Column("pw_hash", sa.Text, nullable=True),
    sa.Column("by", sa.Text, nullable=False),
    sa.Column("at_utc", sa.Text, nullable=False),
)
events_t = sa.Table(
    "ward_event",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("unit", sa.Text, nullable=False),
    sa.Column("ref", sa.Text, nullable=False),
    sa.Column("kind", sa.Text, nullable=False),
    sa.Column("at_utc", sa.Text, nullable=False),
    sa.Column("data", sa.Text, nullable=False),
    sa.Column("recorded_by", sa.Text, nullable=False),
    sa.Column("entered_at", sa.Text, nullable=False),
)
audit_t = sa.Table(
    "ward_audit",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("at_utc", sa.Text, nullable=False),
    sa.Column("author", sa.Text, nullable=False),
    sa.Column("address", sa.Text, nullable=False),
    sa.Column("action", sa.Text, nullable=False),
    sa.Column("what", sa.Text, nullable=False),
)
forms_t = sa.Table(
    "ward_form",
    metadata,
    sa.Column("token", sa.Text, primary_key=True),
    sa.Column("kind", sa.Text, nullable=False),
    sa.Column("result", sa.Text, nullable=False),
    sa.Column("at_utc", sa.Text, nullable=False),
)
settings_t = sa.Table(
    "ward_setting",
    metadata,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("key", sa.Text, nullable=False),
    sa.Column("value", sa.Text, nullable=False),
    sa.Column("at_utc", sa.Text, nullable=False),
)

ROLES = ("nurse", "physician", "admin")
"""Who may do what: a nurse records checks and events; a physician also sets a tier; an
admin also manages accounts (unit policy)."""

EVENT_KINDS = (
    "unit",
    "admit",
    "device-inserted",
    "device-repositioned",
    "device-removed",
    "dpc-in",
    "dpc-out",
    "monitoring-started",
    "tier-set",
    "discharge",
)
"""Unit and patient events, in the words the store, the CLI and the pages use."""

USERNAME_MAX = 60


def utc_text(moment: datetime) -> str:
    """An aware moment as stored: UTC, whole seconds, ISO 8601."""
    if moment.tzinfo is None:
        raise ValueError("a stored moment must be time-zone aware")
    return moment.astimezone(UTC).replace(microsecond=0).isoformat()


@dataclass(frozen=True)
class User:
    username: str
    role: str
    disabled: bool
    pw_hash: str = field(repr=False)


@dataclass(frozen=True)
class WardEvent:
    id: int
    unit: str
    ref: str
    kind: str
    at: datetime
    data: dict[str, Any]
    by: str
    entered_at: datetime


@dataclass(frozen=True)
class AuditRow:
    id: int
    at: datetime
    author: str
    address: str
    action: str
    what: str


class WardStore:
    """Accounts, events and the audit trail on the same database as the findings."""

    def __init__(self, obs: ObservationStore) -> None:
        self.obs = obs
        self.engine = obs.engine
        self.shown = obs.shown

    def close(self) -> None:
        self.obs.close()

    def __enter__(self) -> WardStore:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def _writing(self):
        return self.obs._writing()

    # -- accounts

    def users(self) -> list[User]:
        """Every account as it stands now, by name."""
        state: dict[str, User] = {}
        with self.engine.connect() as conn:
            for r in conn.execute(sa.select(users_t).order_by(users_t.c.id)):
                state[r.username] = _apply_user(state.get(r.username), r)
        return [state[k] for k in sorted(state)]

    def user(self, username: str) -> User | None:
        current: User | None = None
        with self.engine.connect() as conn:
            q = sa.select(users_t).where(users_t.c.username == username).order_by(users_t.c.id)
            for r in conn.execute(q):
                current = _apply_user(current, r)
        return current

    def user_event(
        self,
        username: str,
        kind: str,
        *,
        by: str,
        at: datetime,
        role: str | None = None,
        pw_hash: str | None = None,
    ) -> None:
        """Append one account event (``add``, ``disable``, ``enable``, ``password``)."""
        with self._writing() as conn:
            conn.execute(
                sa.insert(users_t).values(
                    username=username,
                    kind=kind,
                    role=role,
                    pw_hash=pw_hash,
                    by=by,
                    at_utc=utc_text(at),
                )
            )

    # -- events

    def add_event(
        self,
        unit: str,
        ref: str,
        kind: str,
        at: datetime,
        data: dict[str, Any],
        *,
        by: str,
        now: datetime,
        conn: Connection | None = None,
    ) -> int:
        """Append one unit or patient event; return its id."""
        if kind not in EVENT_KINDS:
            raise InputError("event", "kind", f"unknown event {kind!r}; one of {EVENT_KINDS}")
        values = {
            "unit": unit,
            "ref": ref,
            "kind": kind,
            "at_utc": utc_text(at),
            "data": json.dumps(data, sort_keys=True, ensure_ascii=False),
            "recorded_by": by,
            "entered_at": utc_text(now),
        }
        if conn is not None:
            return _inserted(conn.execute(sa.insert(events_t).values(**values)))
        with self._writing() as c:
            return _inserted(c.execute(sa.insert(events_t).values(**values)))

    def writing(self):
        """One write transaction for several events (an import lands whole or not at all)."""
        return self._writing()

    def events(self, unit: str, *, until: datetime | None = None) -> list[WardEvent]:
        """A unit's events in time order (then in the order they were written)."""
        q = sa.select(events_t).where(events_t.c.unit == unit)
        if until is not None:
            q = q.where(events_t.c.at_utc <= utc_text(until))
        q = q.order_by(events_t.c.at_utc, events_t.c.id)
        with self.engine.connect() as conn:
            return [_event(r) for r in conn.execute(q)]

    def units(self) -> list[str]:
        """Names of the units that have a unit event, in the order they were first set."""
        q = (
            sa.select(events_t.c.unit, sa.func.min(events_t.c.id).label("first"))
            .where(events_t.c.kind == "unit")
            .group_by(events_t.c.unit)
            .order_by("first")
        )
        with self.engine.connect() as conn:
            return [r.unit for r in conn.execute(q)]

    # -- audit

    def audit(self, author: str, address: str, action: str, what: str, at: datetime) -> None:
        """Append one audit row (its own transaction, so that a refused write still shows)."""
        with self._writing() as conn:
            conn.execute(
                sa.insert(audit_t).values(
                    at_utc=utc_text(at),
                    author=author,
                    address=address or "-",
                    action=action,
                    what=what[:2000],
                )
            )

    def audit_rows(self, *, limit: int | None = None) -> list[AuditRow]:
        """The audit trail, oldest first (the last ``limit`` rows when given)."""
        q = sa.select(audit_t).order_by(audit_t.c.id.desc())
        if limit is not None:
            q = q.limit(limit)
        with self.engine.connect() as conn:
            rows = [
                AuditRow(
                    r.id,
                    datetime.fromisoformat(r.at_utc),
                    r.author,
                    r.address,
                    r.action,
                    r.what,
                )
                for r in conn.execute(q)
            ]
        return rows[::-1]

    def iter_audit(self) -> Iterator[AuditRow]:
        yield from self.audit_rows()

    # -- one-time form tokens

    def form_result(self, token: str) -> str | None:
        """What a form with this token already recorded, or None when it is unused."""
        with self.engine.connect() as conn:
            return conn.execute(
                sa.select(forms_t.c.result).where(forms_t.c.token == token)
            ).scalar()

    def claim_form(self, token: str, kind: str, result: str, at: datetime) -> bool:
        """Mark a form token as used; False when it was used already (a form sent twice)."""
        try:
            with self.engine.begin() as conn:
                conn.execute(
                    sa.insert(forms_t).values(
                        token=token, kind=kind, result=result, at_utc=utc_text(at)
                    )
                )
        except sa.exc.IntegrityError:
            return False
        return True

    # -- settings

    def secret(self) -> str:
        """The key that signs session cookies, made on first use and shared by every server
        process on this store (so that several workers or hosts accept one another's
        sessions)."""
        q = (
            sa.select(settings_t.c.value)
            .where(settings_t.c.key == "session-secret")
            .order_by(settings_t.c.id)
        )
        with self.engine.connect() as conn:
            found = conn.execute(q).scalar()
        if found:
            return str(found)
        with self._writing() as conn:
            found = conn.execute(q).scalar()  # another process may have made it meanwhile
            if found:
                return str(found)
            conn.execute(
                sa.insert(settings_t).values(
                    key="session-secret",
                    value=secrets.token_urlsafe(48),
                    at_utc=utc_text(datetime.now(UTC)),
                )
            )
        # Two processes starting at once on PostgreSQL may both have written one: every
        # process uses the first written, so all agree.
        with self.engine.connect() as conn:
            return str(conn.execute(q).scalar())


def _inserted(result: sa.CursorResult[Any]) -> int:
    key = result.inserted_primary_key
    assert key is not None
    return int(key[0])


def _apply_user(current: User | None, r: sa.Row) -> User:
    if r.kind == "add" or current is None:
        return User(r.username, r.role or "nurse", False, r.pw_hash or "")
    if r.kind == "disable":
        return User(current.username, current.role, True, current.pw_hash)
    if r.kind == "enable":
        return User(current.username, current.role, False, current.pw_hash)
    if r.kind == "password":
        return User(current.username, current.role, current.disabled, r.pw_hash or "")
    if r.kind == "role":
        return User(current.username, r.role or current.role, current.disabled, current.pw_hash)
    raise StoreError(f"unknown account event {r.kind!r} in the store")


def _event(r: sa.Row) -> WardEvent:
    return WardEvent(
        id=r.id,
        unit=r.unit,
        ref=r.ref,
        kind=r.kind,
        at=datetime.fromisoformat(r.at_utc),
        data=json.loads(r.data),
        by=r.recorded_by,
        entered_at=datetime.fromisoformat(r.entered_at),
    )


def open_ward(db: str | None) -> WardStore:
    """Open (creating and migrating if needed) the store with its ward tables."""
    return WardStore(open_store(db))
