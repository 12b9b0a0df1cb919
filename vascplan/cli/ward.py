"""``vascplan unit``, ``users``, ``audit`` and ``serve``: thin commands over vascplan.app.

SQLAlchemy, argon2 and the web stack are imported inside the commands, never when this
module loads.
"""

from __future__ import annotations

import getpass
import sys
from datetime import UTC, datetime

import click

from vascplan.cli.obs import DB_ENVVAR, DB_HELP
from vascplan.errors import InputError
from vascplan.safety import CAUTION

CLI_AUTHOR = "cli:{user}"
"""How a command-line change is signed in the audit trail (the operating-system user)."""


def _db_option(f):
    """``--db`` as every store command takes it (``VASCPLAN_DB`` when not given)."""
    return click.option(
        "--db",
        "db",
        metavar="PATH-OR-URL",
        default=None,
        envvar=DB_ENVVAR,
        show_envvar=True,
        help=DB_HELP,
    )(f)


def _author() -> str:
    return CLI_AUTHOR.format(user=getpass.getuser())


def _now() -> datetime:
    return datetime.now(UTC)


def _open(db: str | None):
    from vascplan.ward.store import open_ward

    return open_ward(db)


@click.group(epilog=f"Caution: {CAUTION}\n\nExample: vascplan unit import unit.yaml")
def unit() -> None:
    """Seed the store from a unit file, or write the store's unit back as one."""


@unit.command("import", epilog="Example: vascplan unit import vascplan/examples/unit-demo.yaml")
@click.argument("unit_file", metavar="UNIT.yaml", type=click.Path(dir_okay=False))
@_db_option
def unit_import(unit_file: str, db: str | None) -> None:
    """Store a unit file's settings and each patient's events (admission, device, cannula,
    tier changes, removal), so that the board and the commands work from the store."""
    from vascplan.app.events import import_unit_file

    with _open(db) as store:
        now = _now()
        imported, n = import_unit_file(store, unit_file, author=_author(), now=now)
        store.audit(
            _author(), "cli", "import", f"unit {imported.unit.name!r} from {unit_file}", now
        )
    click.echo(
        f"stored {n} events of {imported.unit.name!r} ({len(imported.patients)} patients) "
        f"in {store.shown}"
    )


@unit.command(
    "export", epilog="Example: vascplan unit export 'Cardiac critical care (demo)' -o unit.yaml"
)
@click.argument("name", metavar="NAME")
@click.option("-o", "--output", type=click.Path(dir_okay=False), help="Write to FILE atomically.")
@_db_option
def unit_export(name: str, output: str | None, db: str | None) -> None:
    """Write the unit as it stands in the store as a unit file (``vascplan-unit/1``)."""
    from vascplan.app.events import export_unit_text
    from vascplan.app.ward import unit_name
    from vascplan.fileio import atomic_write_text

    with _open(db) as store:
        text = export_unit_text(store, unit_name(store, name))
        store.audit(_author(), "cli", "export", f"unit {name!r} as a unit file", _now())
    if output:
        atomic_write_text(output, text)
        click.echo(f"wrote {output}", err=True)
    else:
        click.echo(text, nl=False)


@click.group(epilog=f"Caution: {CAUTION}\n\nExample: vascplan users add ward-admin --role admin")
def users() -> None:
    """Accounts for the ward pages: add, disable, list (passwords never shown)."""


def _read_password() -> str:
    if sys.stdin.isatty():
        first = getpass.getpass("password: ")
        if getpass.getpass("again: ") != first:
            raise InputError("password", "", "the two passwords differ; nothing was stored")
        return first
    line = sys.stdin.readline()
    return line.rstrip("\r\n")


@users.command(
    "add",
    epilog="Example: printf '%s\\n' \"$PW\" | vascplan users add rn-ada --role nurse",
)
@click.argument("username", metavar="USER")
@click.option(
    "--role", required=True, type=click.Choice(["nurse", "physician", "admin"]), help="Role."
)
@_db_option
def users_add(username: str, role: str, db: str | None) -> None:
    """Add an account; the password is read from standard input or asked for, never an
    option (it would show in the shell history and the process list)."""
    from vascplan.app.accounts import add_user
    from vascplan.app.ward import FormErrors

    password = _read_password()
    with _open(db) as store:
        try:
            add_user(store, username, role, password, by=_author(), now=_now())
        except FormErrors as exc:
            field, message = next(iter(exc.errors.items()))
            raise InputError("users add", field, message) from None
        store.audit(_author(), "cli", "user-add", f"{username} as {role}", _now())
    click.echo(f"added {username} ({role}) to {store.shown}")


@users.command("disable", epilog="Example: vascplan users disable rn-ada")
@click.argument("username", metavar="USER")
@_db_option
def users_disable(username: str, db: str | None) -> None:
    """Disable an account: it can no longer sign in; what it recorded keeps its name."""
    from vascplan.app.accounts import disable_user

    with _open(db) as store:
        disable_user(store, username, by=_author(), now=_now())
        store.audit(_author(), "cli", "user-disable", username, _now())
    click.echo(f"disabled {username}")


@users.command("list", epilog="Example: vascplan users list")
@_db_option
def users_list(db: str | None) -> None:
    """Every account with its role and whether it is disabled."""
    from vascplan.app.accounts import list_users

    with _open(db) as store:
        rows = list_users(store)
    if not rows:
        click.echo("no accounts yet: vascplan users add NAME --role admin")
        return
    width = max(len(u.username) for u in rows)
    for u in rows:
        click.echo(f"{u.username:{width}}  {u.role:9}  {'disabled' if u.disabled else 'active'}")


@click.command(epilog=f"Example: vascplan audit --last 50\n\nCaution: {CAUTION}")
@click.option("--last", type=click.IntRange(min=1), default=None, help="Only the last N rows.")
@_db_option
def audit(last: int | None, db: str | None) -> None:
    """The audit trail: every sign-in, record, correction, event, export and account change,
    with who, when (UTC) and from which address."""
    from vascplan.app.accounts import audit_text, audit_trail

    with _open(db) as store:
        rows = audit_trail(store, last)
    click.echo(audit_text(rows), nl=False)


LOOPBACK = ("127.0.0.1", "::1", "localhost")


@click.command(
    epilog="Example: vascplan serve --db ward.db --port 8440\n\n"
    "Example: vascplan serve --host 0.0.0.0 --tls-cert ward.crt --tls-key ward.key"
    f"\n\nCaution: {CAUTION}"
)
@_db_option
@click.option("--host", default="127.0.0.1", show_default=True, help="Address to listen on.")
@click.option("--port", type=click.IntRange(1, 65535), default=8440, show_default=True)
@click.option("--unit", "unit_name", default=None, help="Unit to show (default the store's first).")
@click.option("--tls-cert", type=click.Path(dir_okay=False, exists=True), help="TLS certificate.")
@click.option("--tls-key", type=click.Path(dir_okay=False, exists=True), help="TLS private key.")
@click.option(
    "--insecure-http",
    is_flag=True,
    help="Serve plain HTTP on a non-loopback address (passwords cross the network readable).",
)
@click.option(
    "--idle-min",
    type=click.IntRange(1, 24 * 60),
    default=30,
    show_default=True,
    help="Minutes without a request before a session ends (unit policy).",
)
@click.option("--workers", type=click.IntRange(1, 64), default=1, show_default=True)
def serve(
    db: str | None,
    host: str,
    port: int,
    unit_name: str | None,
    tls_cert: str | None,
    tls_key: str | None,
    insecure_http: bool,
    idle_min: int,
    workers: int,
) -> None:
    """Serve the ward pages: the unit board, bedside checks, events, accounts, audit.

    Binds the loopback address unless told otherwise; any other address needs a TLS
    certificate and key, or --insecure-http (warned about on every start).
    """
    import os

    if (tls_cert is None) != (tls_key is None):
        raise InputError("--tls-cert", "", "give both --tls-cert and --tls-key, or neither")
    tls = tls_cert is not None
    if host not in LOOPBACK and not tls and not insecure_http:
        raise InputError(
            "--host",
            "",
            f"{host} is reachable from other machines: give --tls-cert and --tls-key, "
            "or --insecure-http to accept plain HTTP",
        )
    if insecure_http and not tls:
        click.echo(
            "WARNING: plain HTTP: passwords and patient data cross the network readable; "
            "use --tls-cert and --tls-key",
            err=True,
        )
    import uvicorn

    from vascplan.app.ward import unit_name as pick_unit
    from vascplan.ward.store import open_ward

    with open_ward(db) as store:
        name = pick_unit(store, unit_name)
        shown = store.shown
    os.environ["VASCPLAN_SERVE_DB"] = db or ""
    os.environ["VASCPLAN_SERVE_UNIT"] = name
    os.environ["VASCPLAN_SERVE_IDLE_MIN"] = str(idle_min)
    os.environ["VASCPLAN_SERVE_HTTPS"] = "1" if tls else ""
    scheme = "https" if tls else "http"
    click.echo(f"serving {name!r} from {shown} on {scheme}://{host}:{port}/board", err=True)
    uvicorn.run(
        "vascplan.web.serve:app_from_environment",
        factory=True,
        host=host,
        port=port,
        workers=workers,
        ssl_certfile=tls_cert,
        ssl_keyfile=tls_key,
        log_level="warning",
        proxy_headers=False,
    )
