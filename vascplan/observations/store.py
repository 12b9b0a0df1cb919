"""The append-only observation store: SQLite by default, PostgreSQL for a shared record.

One schema through SQLAlchemy Core, versioned by ordered migration functions recorded in
a ``schema_version`` table: each migration is frozen once released (migration 1 builds the
tables exactly as first released), later changes are new numbered migrations, applied in
order, one transaction each, so an existing store upgrades in place; a store made by a
newer vascplan is refused with one line. Nothing is ever updated or deleted: a correction is a new
entry pointing to the entry it corrects, with who and why, and triggers on both backends
refuse ``UPDATE`` and ``DELETE``. Every write is one transaction, so a batch lands whole
or not at all. A new SQLite file is created readable and writable by its owner only.

This module imports SQLAlchemy at the top: only the ``obs`` commands import it.
"""

from __future__ import annotations

import contextlib
import os
import stat
from collections.abc import Callable, Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from datetime import UTC, datetime, timedelta
from pathlib import Path

import sqlalchemy as sa
from sqlalchemy.engine import Connection, Engine

from vascplan.errors import InputError, StoreError
from vascplan.observations.findings import ENTERED_IN_ERROR, Finding, check_value
from vascplan.observations.migrations import (
    MIGRATIONS,
    SCHEMA_VERSION,
    batches,
    entries,
    metadata,
    migrate,
    schema_version,
    stored_version,
)

__all__ = [
    "MIGRATIONS",
    "SCHEMA_VERSION",
    "CurrentFinding",
    "Entry",
    "ObservationStore",
    "batches",
    "current_findings",
    "default_db_path",
    "entries",
    "metadata",
    "open_store",
    "resolve_db",
    "schema_version",
    "stream_current",
]

DB_FILE_NAME = "observations.db"
BUSY_TIMEOUT_S = 60.0
"""How long an SQLite writer waits for another writer before giving up [s] (common practice)."""
CHUNK_ROWS = 500
"""Rows sent to the database per statement inside one import transaction."""

# ---------------------------------------------------------------------------
# Opening


def default_db_path() -> Path:
    """``$XDG_DATA_HOME/vascplan/observations.db`` (``~/.local/share`` when unset)."""
    base = os.environ.get("XDG_DATA_HOME") or str(Path.home() / ".local" / "share")
    return Path(base) / "vascplan" / DB_FILE_NAME


def resolve_db(db: str | None) -> tuple[sa.URL, Path | None]:
    """Turn ``--db`` into an SQLAlchemy URL and, for SQLite, the file path.

    ``postgresql://`` and ``postgres://`` map to the psycopg 3 driver; anything that is
    not a URL is a file path.

    >>> resolve_db("postgresql://u@127.0.0.1/obs")[0].drivername
    'postgresql+psycopg'
    >>> resolve_db("/tmp/x.db")[1]
    PosixPath('/tmp/x.db')
    """
    if db is None:
        path = default_db_path()
    elif "://" in db:
        try:
            url = sa.make_url(db)
        except sa.exc.ArgumentError:
            raise InputError("--db", "", f"{db!r} is not a database URL") from None
        name = url.drivername
        if name in ("postgresql", "postgres", "postgresql+psycopg"):
            return url.set(drivername="postgresql+psycopg"), None
        if name == "sqlite" and url.database:
            path = Path(url.database)
        else:
            raise InputError(
                "--db",
                "",
                f"unsupported database {name!r}; give a file path or a postgresql:// URL",
            )
    else:
        path = Path(db)
    return sa.URL.create("sqlite", database=str(path)), path


def _require_postgres_driver() -> None:
    """A PostgreSQL store needs psycopg, the optional extra ``vascplan[postgres]``."""
    import importlib.util

    if importlib.util.find_spec("psycopg") is None:
        raise StoreError(
            "a postgresql:// store needs the PostgreSQL driver (psycopg), which is not "
            "installed: install vascplan[postgres] (pip install 'vascplan[postgres]')"
        )


def _create_private_file(path: Path) -> None:
    """Create an empty SQLite file with mode 0600 whatever the umask."""
    path.parent.mkdir(parents=True, exist_ok=True, mode=0o700)
    try:
        fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
    except FileExistsError:
        return
    try:
        os.fchmod(fd, stat.S_IRUSR | stat.S_IWUSR)  # umask can only take bits away; set exactly
    finally:
        os.close(fd)


def _sqlite_engine(url: sa.URL) -> Engine:
    engine = sa.create_engine(url, connect_args={"timeout": BUSY_TIMEOUT_S})

    @sa.event.listens_for(engine, "connect")
    def _connect(dbapi_conn, _record) -> None:
        dbapi_conn.isolation_level = None  # we issue BEGIN ourselves
        cur = dbapi_conn.cursor()
        cur.execute("PRAGMA foreign_keys = ON")
        cur.execute("PRAGMA synchronous = FULL")
        cur.close()

    @sa.event.listens_for(engine, "begin")
    def _begin(conn: Connection) -> None:
        # Take the write lock at the start: writers queue instead of failing mid-way.
        conn.exec_driver_sql("BEGIN IMMEDIATE")

    return engine


def open_store(db: str | None = None) -> ObservationStore:
    """Open (creating and migrating if needed) the observation store.

    Parameters
    ----------
    db : str, optional
        A file path, ``sqlite:///path``, or ``postgresql://user:pw@host/dbname``;
        default :func:`default_db_path`.

    Raises
    ------
    StoreError
        The database cannot be reached, or was made by a newer vascplan.
    """
    url, path = resolve_db(db)
    shown = url.render_as_string(hide_password=True)
    if path is not None:
        if path.is_dir():
            raise InputError("--db", "", f"{path} is a folder; give a database file")
        try:
            _create_private_file(path)
        except OSError as exc:
            raise StoreError(
                f"cannot create the observation store {path}: {exc.strerror}"
            ) from None
        engine = _sqlite_engine(url)
    else:
        _require_postgres_driver()
        engine = sa.create_engine(url, pool_pre_ping=False)
    store = ObservationStore(engine, shown)
    try:
        store.migrate()
    except sa.exc.DatabaseError as exc:  # also a file that is not an SQLite database
        engine.dispose()
        raise StoreError(f"cannot open the observation store {shown}: {_first_line(exc)}") from None
    return store


# ---------------------------------------------------------------------------
# Reading


@dataclass(frozen=True)
class Entry:
    """One stored row: an original finding or a correction of one.

    Attributes
    ----------
    id : int
    time : datetime
        When the check was made (UTC, aware).
    time_local : str
        The same moment as written in the unit's time zone, with its offset.
    corrects : int or None
        The id of the original entry this one corrects.
    reason : str or None
        Why it was corrected.
    entered_at : datetime
        When the row was written (UTC).
    """

    id: int
    batch_id: int
    unit: str
    bed: int
    ref: str
    time: datetime
    time_local: str
    by: str
    item: str
    site: str
    value: str
    corrects: int | None
    reason: str | None
    entered_at: datetime


@dataclass(frozen=True)
class CurrentFinding:
    """A finding as it stands after its corrections (the latest correction wins).

    Attributes
    ----------
    entry : Entry
        The original entry.
    value : str
        The current value (the latest correction's, or the original's).
    correction : Entry or None
        The latest correction, when there is one.
    """

    entry: Entry
    value: str
    correction: Entry | None

    @property
    def time(self) -> datetime:
        return self.entry.time

    @property
    def item(self) -> str:
        return self.entry.item

    @property
    def site(self) -> str:
        return self.entry.site


def _first_line(exc: sa.exc.DBAPIError) -> str:
    text = str(exc.orig if exc.orig is not None else exc).strip()
    return text.splitlines()[0] if text else type(exc).__name__


def _utc_text(moment: datetime) -> str:
    return moment.astimezone(UTC).replace(microsecond=0).isoformat()


def _since_text(moment: datetime) -> str:
    """A lower bound as stored text: stored times are whole seconds, so round up."""
    moment = moment.astimezone(UTC)
    if moment.microsecond:
        moment = moment.replace(microsecond=0) + timedelta(seconds=1)
    return moment.isoformat()


def _now_text() -> str:
    return _utc_text(datetime.now(UTC))


def _entry(row: sa.Row) -> Entry:
    return Entry(
        id=row.id,
        batch_id=row.batch_id,
        unit=row.unit,
        bed=row.bed,
        ref=row.ref,
        time=datetime.fromisoformat(row.time_utc),
        time_local=row.time_local,
        by=row.recorded_by,
        item=row.item,
        site=row.site,
        value=row.value,
        corrects=row.corrects,
        reason=row.reason,
        entered_at=datetime.fromisoformat(row.entered_at),
    )


class ObservationStore:
    """The observation record on one database.

    Use :func:`open_store` to get one. Every public write is one transaction.
    """

    def __init__(self, engine: Engine, shown: str) -> None:
        self.engine = engine
        self.shown = shown
        """The database as shown to a user (password hidden)."""

    def close(self) -> None:
        self.engine.dispose()

    @contextlib.contextmanager
    def _writing(self) -> Iterator[Connection]:
        """One write transaction; database failures become one-line StoreErrors."""
        try:
            with self.engine.begin() as conn:
                yield conn
        except sa.exc.IntegrityError as exc:
            raise StoreError(
                f"the observation store {self.shown} refused the write ({_first_line(exc)}); "
                "nothing was stored"
            ) from None
        except sa.exc.OperationalError as exc:
            raise StoreError(
                f"the observation store {self.shown} could not be written ({_first_line(exc)}); "
                "nothing was stored"
            ) from None

    def __enter__(self) -> ObservationStore:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    # -- schema

    def migrate(self, upto: int | None = None) -> int:
        """Apply the migrations not yet applied, in order, one transaction each.

        See :func:`vascplan.observations.migrations.migrate` (``upto`` stops at that version).
        """
        return migrate(self.engine, self.shown, upto)

    def version(self) -> int:
        """The store's schema version (the highest migration applied)."""
        return stored_version(self.engine)

    # -- writing

    def record(
        self,
        findings: Sequence[Finding],
        *,
        unit: str,
        kind: str,
        source: str,
        progress: Callable[[int], None] | None = None,
        lines: Sequence[int] | None = None,
    ) -> list[int]:
        """Store a batch of findings in one transaction; return their entry ids.

        Parameters
        ----------
        findings : sequence of Finding
            Already validated (see :func:`~vascplan.observations.findings.make_finding`).
        unit : str
            The unit's name (from its unit file).
        kind : str
            ``add`` or ``import``.
        source : str
            The file or command the batch came from (kept with the batch).
        progress : callable, optional
            Called with the number of rows sent so far, inside the transaction (tests use
            it to kill the process part-way).
        lines : sequence of int, optional
            The file line of each finding, to name it when it is already stored.

        Raises
        ------
        InputError
            A finding with the same bed, time, item and site is already stored (nothing of
            the batch is stored).
        """
        if not findings:
            return []
        now = _now_text()
        rows = [
            {
                "unit": unit,
                "bed": f.bed,
                "ref": f.ref,
                "time_utc": _utc_text(f.time),
                "time_local": f.time.replace(microsecond=0).isoformat(),
                "recorded_by": f.by,
                "item": f.item,
                "site": f.site,
                "value": f.value,
                "corrects": None,
                "reason": None,
                "entered_at": now,
            }
            for f in findings
        ]
        with self._writing() as conn:
            self._refuse_stored(conn, unit, rows, source, lines)
            batch_id = conn.execute(
                sa.insert(batches).values(
                    kind=kind, source=source, unit=unit, entered_at=now, rows=len(rows)
                )
            ).inserted_primary_key[0]  # type: ignore[index]
            for row in rows:
                row["batch_id"] = batch_id
            for start in range(0, len(rows), CHUNK_ROWS):
                conn.execute(sa.insert(entries), rows[start : start + CHUNK_ROWS])
                if progress is not None:
                    progress(min(start + CHUNK_ROWS, len(rows)))
            ids = (
                conn.execute(
                    sa.select(entries.c.id)
                    .where(entries.c.batch_id == batch_id)
                    .order_by(entries.c.id)
                )
                .scalars()
                .all()
            )
        return list(ids)

    def _refuse_stored(
        self,
        conn: Connection,
        unit: str,
        rows: list[dict],
        source: str,
        lines: Sequence[int] | None,
    ) -> None:
        # Only the batch's own instants are read (an index search each on unit and time),
        # never the unit's whole history nor everything between the batch's first and last.
        times = sorted({r["time_utc"] for r in rows})
        stored: dict[tuple, int] = {}
        for start in range(0, len(times), CHUNK_ROWS):
            q = (
                sa.select(
                    entries.c.id, entries.c.bed, entries.c.time_utc, entries.c.item, entries.c.site
                )
                .where(entries.c.unit == unit, entries.c.corrects.is_(None))
                .where(entries.c.time_utc.in_(times[start : start + CHUNK_ROWS]))
            )
            for found in conn.execute(q):
                stored[(found.bed, found.time_utc, found.item, found.site)] = found.id
        for i, r in enumerate(rows):
            hit = stored.get((r["bed"], r["time_utc"], r["item"], r["site"]))
            if hit is not None:
                where = f"line {lines[i]}" if lines is not None else "finding"
                raise InputError(
                    source,
                    where,
                    f"{r['item']} {r['site'] or ''} for bed {r['bed']} at {r['time_local']} "
                    "is already "
                    f"stored (entry {hit}); use `vascplan obs correct` to change it; "
                    "nothing was stored",
                )

    def correct(
        self, entry_id: int, value: str, *, by: str, reason: str, withdraw: bool = False
    ) -> int:
        """Store a correction of entry ``entry_id``; return the new entry's id.

        The correction keeps the original's patient, time, item and site, points to the
        original (a correction of a correction points to the same original) and carries
        who and why. ``withdraw`` marks the finding as entered in error.

        Raises
        ------
        InputError
            Unknown entry, a value not allowed for the item, or no reason given.
        """
        if not reason.strip():
            raise InputError("--reason", "", "a correction needs a reason")
        if not by.strip():
            raise InputError("--by", "", "a correction needs who made it")
        with self._writing() as conn:
            row = conn.execute(sa.select(entries).where(entries.c.id == entry_id)).first()
            if row is None:
                raise InputError("--entry", "", f"no entry {entry_id} in {self.shown}")
            if withdraw:
                new_value = ENTERED_IN_ERROR
            else:
                try:
                    new_value = check_value(row.item, value)
                except ValueError as exc:
                    raise InputError("--value", "", str(exc)) from None
            root = row.corrects if row.corrects is not None else row.id
            now = _now_text()
            batch_id = conn.execute(
                sa.insert(batches).values(
                    kind="correct",
                    source=f"correct {entry_id}",
                    unit=row.unit,
                    entered_at=now,
                    rows=1,
                )
            ).inserted_primary_key[0]  # type: ignore[index]
            new_id = conn.execute(
                sa.insert(entries).values(
                    batch_id=batch_id,
                    unit=row.unit,
                    bed=row.bed,
                    ref=row.ref,
                    time_utc=row.time_utc,
                    time_local=row.time_local,
                    recorded_by=by.strip(),
                    item=row.item,
                    site=row.site,
                    value=new_value,
                    corrects=root,
                    reason=reason.strip(),
                    entered_at=now,
                )
            ).inserted_primary_key[0]  # type: ignore[index]
        return int(new_id)

    # -- reading

    def _query(
        self,
        unit: str,
        *,
        ref: str | None = None,
        since: datetime | None = None,
        until: datetime | None = None,
    ) -> sa.Select:
        q = sa.select(entries).where(entries.c.unit == unit)
        if ref is not None:
            q = q.where(entries.c.ref == ref)
        if since is not None:
            q = q.where(entries.c.time_utc >= _since_text(since))
        if until is not None:
            q = q.where(entries.c.time_utc <= _utc_text(until))
        return q.order_by(entries.c.time_utc, entries.c.id)

    def entries(
        self,
        unit: str,
        *,
        ref: str | None = None,
        since: datetime | None = None,
        until: datetime | None = None,
    ) -> list[Entry]:
        """Rows of ``unit`` (originals and corrections), in time then entry order.

        Parameters
        ----------
        unit : str
        ref : str, optional
            Only this patient's rows.
        since, until : datetime, optional
            Only checks made at or after ``since`` and at or before ``until`` (aware; both
            bounds included). A correction carries its original's check time, so a window
            holds every correction of the findings in it and nothing else.
        """
        with self.engine.connect() as conn:
            return [
                _entry(r)
                for r in conn.execute(self._query(unit, ref=ref, since=since, until=until))
            ]

    def iter_entries(
        self,
        unit: str,
        *,
        since: datetime | None = None,
        until: datetime | None = None,
        chunk: int = 2000,
    ) -> Iterator[Entry]:
        """Like :meth:`entries`, one row at a time: memory does not grow with the record.

        Rows are read ``chunk`` at a time, each chunk in its own short read (keyset pages
        on check time and entry id), so that a long export never holds the database: on
        SQLite a writer waits for one chunk at most, not for the whole export. A row
        written during the export is included when it sorts after the rows already read.
        """
        q = self._query(unit, since=since, until=until).limit(chunk)
        after: tuple[str, int] | None = None
        while True:
            page = q
            if after is not None:
                t, i = after
                page = q.where(
                    entries.c.time_utc >= t,
                    sa.not_(sa.and_(entries.c.time_utc == t, entries.c.id <= i)),
                )
            with self.engine.connect() as conn:
                rows = conn.execute(page).all()
            for r in rows:
                yield _entry(r)
            if len(rows) < chunk:
                return
            after = (rows[-1].time_utc, rows[-1].id)

    def current(
        self,
        unit: str,
        *,
        ref: str | None = None,
        since: datetime | None = None,
        until: datetime | None = None,
        include_withdrawn: bool = False,
    ) -> list[CurrentFinding]:
        """The findings as they stand after corrections, in time order.

        A finding withdrawn as entered in error is left out unless ``include_withdrawn``.
        ``since`` and ``until`` bound the check time as in :meth:`entries`.
        """
        return current_findings(
            self.entries(unit, ref=ref, since=since, until=until), include_withdrawn
        )

    def current_by_ref(
        self,
        unit: str,
        windows: Mapping[str, datetime | None],
        *,
        until: datetime | None = None,
        include_withdrawn: bool = False,
    ) -> dict[str, list[CurrentFinding]]:
        """Each named patient's findings from their own lower bound up to ``until``.

        The read a review needs: only the patients now on the unit (a discharged patient's
        history is not read), each from the start of the window the review looks at (for
        example the start of the open phase, or ``at`` minus the alert look-back, whichever
        is earlier). One index search per patient on (unit, ref, time).

        Parameters
        ----------
        unit : str
        windows : mapping of str to datetime or None
            Patient ref -> the earliest check time wanted (aware; included), or None for
            the patient's whole history.
        until : datetime, optional
            The latest check time wanted (included), typically the review's ``at``.
        include_withdrawn : bool
            Keep findings withdrawn as entered in error.

        Returns
        -------
        dict of str to list of CurrentFinding
            Every ref of ``windows``, each with its findings in time order (possibly none).
        """
        out: dict[str, list[CurrentFinding]] = {}
        with self.engine.connect() as conn:
            for ref, since in windows.items():
                q = self._query(unit, ref=ref, since=since, until=until)
                rows = [_entry(r) for r in conn.execute(q)]
                out[ref] = current_findings(rows, include_withdrawn)
        return out

    def iter_current(
        self,
        unit: str,
        *,
        since: datetime | None = None,
        until: datetime | None = None,
        include_withdrawn: bool = False,
    ) -> Iterator[CurrentFinding]:
        """Like :meth:`current` for the whole unit, one finding at a time (for exports).

        Memory holds one instant's rows at a time (see :func:`stream_current`).
        """
        yield from stream_current(
            self.iter_entries(unit, since=since, until=until), include_withdrawn
        )

    def count(self, unit: str | None = None) -> int:
        q = sa.select(sa.func.count()).select_from(entries)
        if unit is not None:
            q = q.where(entries.c.unit == unit)
        with self.engine.connect() as conn:
            return int(conn.execute(q).scalar() or 0)


def stream_current(
    rows: Iterable[Entry], include_withdrawn: bool = False
) -> Iterator[CurrentFinding]:
    """Apply corrections to rows that come in check-time order, yielding as it goes.

    A correction carries its original's check time, so an original and all its
    corrections fall in one instant: only one instant's rows are held at a time. The
    output is that of :func:`current_findings` on the same rows.
    """
    group: list[Entry] = []
    for e in rows:
        if group and e.time != group[0].time:
            yield from current_findings(group, include_withdrawn)
            group = []
        group.append(e)
    if group:
        yield from current_findings(group, include_withdrawn)


def current_findings(
    rows: Iterable[Entry], include_withdrawn: bool = False
) -> list[CurrentFinding]:
    """Apply corrections to stored rows: each original with its latest correction."""
    originals: dict[int, Entry] = {}
    latest: dict[int, Entry] = {}
    for e in rows:
        if e.corrects is None:
            originals[e.id] = e
        elif e.corrects not in latest or e.id > latest[e.corrects].id:
            latest[e.corrects] = e
    out = []
    for e in originals.values():
        fix = latest.get(e.id)
        value = fix.value if fix is not None else e.value
        if value == ENTERED_IN_ERROR and not include_withdrawn:
            continue
        out.append(CurrentFinding(e, value, fix))
    out.sort(key=lambda c: (c.time, c.entry.id))
    return out
