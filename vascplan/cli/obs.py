"""``vascplan obs``: record, review, plot and export limb checks (thin commands).

SQLAlchemy and reportlab are imported inside the commands, never when this module loads.
"""

from __future__ import annotations

import json
import sys
from datetime import UTC, datetime
from typing import TextIO, cast

import click

from vascplan.errors import InputError
from vascplan.plausibility import STORE_ID_MAX, AsciiInt
from vascplan.safety import CAUTION
from vascplan.vocabulary import ITEMS

DB_HELP = (
    "Observation store: a file path or a postgresql:// URL "
    "(default $XDG_DATA_HOME/vascplan/observations.db)."
)
DB_ENVVAR = "VASCPLAN_DB"
"""Environment variable read when ``--db`` is not given (the option wins)."""


def _db_option(f):
    return click.option(
        "--db",
        "db",
        metavar="PATH-OR-URL",
        default=None,
        envvar=DB_ENVVAR,
        show_envvar=True,
        help=DB_HELP,
        callback=_check_db,
    )(f)


def _check_db(ctx: click.Context, param: click.Parameter, value: str | None) -> str | None:
    from vascplan.storeurl import check_db

    return check_db(value)


def _identifier(ctx: click.Context, param: click.Parameter, value: str) -> str:
    """``--by``: a staff id, required, printable, at most 60 characters."""
    from vascplan.textsafety import check_identifier

    name = f"--{param.name}"
    if not value.strip():
        who = "who makes the correction" if ctx.command.name == "correct" else "who made the check"
        raise InputError(name, "", f"{who} is required (a staff id, e.g. RN-A)")
    return check_identifier(value, name, max_len=60)


def _free_text(ctx: click.Context, param: click.Parameter, value: str) -> str:
    """``--reason``: printable free text within the stated maximum."""
    from vascplan.textsafety import check_free_text

    if not value.strip():
        raise InputError(f"--{param.name}", "", "a correction needs a reason")
    return check_free_text(value, f"--{param.name}")


def _stderr_is_terminal() -> bool:
    return sys.stderr.isatty()


def _open_for_reading(db: str | None):
    """Open the store for a command that only reads, saying so when it was not there.

    A mistyped ``--db`` would otherwise pass silently for a record with no checks in it.
    The note goes to standard error only at a terminal, so that captured output (a
    script, a pipe) stays the data alone.
    """
    from vascplan.observations.store import open_store, resolve_db

    _url, path = resolve_db(db)
    if path is not None and not path.exists() and _stderr_is_terminal():
        click.echo(
            f"note: there was no observation store at {path}; a new empty one was made, "
            "so no check is on record (check --db)",
            err=True,
        )
    return open_store(db)


@click.group(epilog=f"Caution: {CAUTION}\n\nExample: vascplan obs review unit.yaml")
def obs() -> None:
    """Record, review, plot and export limb checks.

    Findings are stored append-only: a correction is a new entry pointing to the one
    it corrects, with who and why.
    """


def _unit(path: str):
    from vascplan.surveillance.unit import load_unit

    return load_unit(path)


def _note(text: str) -> None:
    """A note on standard error, at a terminal only (captured output stays the data alone)."""
    if _stderr_is_terminal():
        click.echo(f"note: {text}", err=True)


def _unit_notes(unit, unit_path: str, store) -> None:
    """Say when the unit file has no ``id``, or names a unit the store does not know."""
    from vascplan.observations.integrity import units_on_record

    key = unit.unit.key
    if unit.unit.id is None:
        _note(
            f"{unit_path}: the unit has no `id`; its record is kept under {key!r} (from its "
            f"name): add `id: {key}` under `unit:` so that renaming the unit keeps its record"
        )
    known = units_on_record(store)
    if known and key not in known:
        same = [uid for uid, name in known.items() if name.casefold() == unit.unit.name.casefold()]
        hint = f"; {unit.unit.name!r} is on record as unit id {same[0]!r}" if same else ""
        _note(
            f"the store {store.shown} has no record of unit id {key!r} (it holds "
            f"{', '.join(sorted(known))}){hint}: check the unit file's `id`"
        )


def _check_author(unit, by: str, source: str = "--by", field: str = "") -> str:
    """``by`` must be one of the unit's staff (its unit file), until a sign-in supplies it."""
    staff = sorted({a.nurse for a in unit.staff})
    name = by.strip()
    if not staff:
        raise InputError(
            source, field, "the unit file lists no staff: add them under `staff:` to record checks"
        )
    if name not in staff:
        raise InputError(
            source, field, f"{name!r} is not on the unit's staff; allowed: {', '.join(staff)}"
        )
    return name


# How each item's site is typed on the command line (the metavar's site part and an
# example site). The items, their meanings and allowed values come from the one vocabulary.
_SITE_SYNTAX: dict[str, tuple[str, tuple[str, ...]]] = {
    "artery": ("SITE=", ("R-DPA", "L-RAD")),
    "artery-or-side": ("SITE=", ("R", "R-CFA")),
    "side": ("SIDE=", ("R",)),
    "optional-side": ("[SIDE=]", ("", "R")),
    "optional-artery-or-side": ("[SITE=]", ("", "R", "R-CFA")),
    "artery-or-arm": ("SITE=", ("R-PTA", "R-ARM")),
    "none": ("", ("",)),
}


def _item_help(name: str) -> tuple[str, str, str]:
    """(option name, metavar, help) of one check item, from :data:`vascplan.vocabulary.ITEMS`."""
    spec = ITEMS[name]
    site_part, sites = _SITE_SYNTAX[spec.sites]
    if spec.values:
        kind, value, allowed = "WORD", spec.values[0], " | ".join(spec.values)
    else:
        lo, hi = spec.number_range or (0, 0)
        kind, value, allowed = "N", f"{(lo + hi) / 2:g}", f"{lo:g}-{hi:g}"
    examples = " or ".join(f"{site}={value}" if site else value for site in sites)
    return name, f"{site_part}{kind}", f"{spec.meaning}, e.g. {examples} ({allowed})"


_ITEM_OPTIONS = [_item_help(name) for name in ITEMS]


def _item_options(f):
    for name, metavar, text in reversed(_ITEM_OPTIONS):
        f = click.option(
            f"--{name}", name.replace("-", "_"), metavar=metavar, multiple=True, help=text
        )(f)
    return f


@obs.command(
    "add",
    epilog=(
        "Example: vascplan obs add --unit unit.yaml --bed 1 --time 2026-12-01T16:00 --by RN-A "
        "--pulse R-DPA=doppler --pulse R-PTA=palpable --nirs L=68 --nirs R=64 --refill R=2 "
        "--sensation R=normal --motor R=normal --calf R=soft --pain 2 --access R=dry --dpc ok"
    ),
)
@click.option(
    "--unit", "unit_path", required=True, type=click.Path(dir_okay=False), help="Unit file."
)
@click.option("--bed", type=AsciiInt(1, 999), required=True, help="Bed number.")
@click.option(
    "--time",
    "time_text",
    default=None,
    help="When the check was made: now (the default), or ISO 8601 (local to the unit "
    "without an offset).",
)
@click.option(
    "--by", "by", required=True, callback=_identifier, help="Who made the check (staff id)."
)
@_item_options
@_db_option
def add(
    unit_path: str,
    bed: int,
    time_text: str | None,
    by: str,
    db: str | None,
    **items: tuple[str, ...],
) -> None:
    """Record one check: each item option is one finding (repeat an option for each site)."""
    from vascplan.observations.findings import check_time, make_finding, split_option
    from vascplan.observations.store import open_store
    from vascplan.plausibility import check_check_time
    from vascplan.plausibility import now as plausible_now

    unit = _unit(unit_path)
    by = _check_author(unit, by)
    patient = unit.patient_at_bed(bed)
    said = ""
    if time_text is None or time_text.strip().lower() == "now":
        moment = plausible_now().astimezone(unit.unit.tz).replace(second=0, microsecond=0)
        said = " (now: " + ("no --time given" if time_text is None else "--time now") + ")"
    else:
        moment = check_time(time_text, unit.unit.tz, "--time")
    check_check_time(moment, patient.device.inserted, "--time")
    findings = []
    for name, _, _ in _ITEM_OPTIONS:
        for text in items[name.replace("-", "_")]:
            site, value = split_option(text)
            findings.append(
                make_finding(
                    time=moment,
                    bed=bed,
                    ref=patient.ref,
                    by=by,
                    item=name,
                    site=site,
                    value=value,
                    source=f"--{name}",
                )
            )
    if not findings:
        raise InputError("add", "", "give at least one finding, e.g. --nirs L=64 (see --help)")
    keys = [(f.item, f.site) for f in findings]
    for i, key in enumerate(keys):
        if keys.index(key) != i:
            raise InputError(f"--{key[0]}", "", f"site {key[1] or '(none)'} is given twice")
    with open_store(db) as store:
        _unit_notes(unit, unit_path, store)
        ids = store.record(
            findings, unit=unit.unit.key, unit_name=unit.unit.name, kind="add", source="obs add"
        )
    click.echo(
        f"stored {len(ids)} findings for bed {bed} ({patient.ref}) at "
        f"{moment.isoformat()}{said}: entries {ids[0]}-{ids[-1]} in {store.shown}"
    )
    left = _not_in_check(unit, unit_path, patient, moment, findings)
    if left:
        click.echo(
            "partial check: not recorded, so still due: " + ", ".join(left) + " (see vascplan due)"
        )


def _not_in_check(unit, unit_path: str, patient, moment: datetime, findings) -> list[str]:
    """What the protocol asks at a check of ``patient`` at ``moment`` that ``findings``
    (one check) do not record (``nirs:R``...)."""
    from vascplan.observations.coverage import latest_by_need, needs
    from vascplan.observations.review import unit_protocol

    protocol = unit_protocol(unit, _base_dir(unit_path))
    dev = patient.device
    items = protocol.items_for(
        dev.kind, bool(patient.baseline.nirs), patient.dpc_in_at(moment), dev.limb
    )
    wanted = needs(protocol, items)
    seen = latest_by_need(wanted, ((f.time, f.item, f.site) for f in findings))
    return [n.label for n in wanted if n not in seen]


@obs.command("import", epilog="Example: vascplan obs import night-checks.csv --unit unit.yaml")
@click.argument("csv_path", metavar="FILE.csv", type=click.Path(dir_okay=False))
@click.option(
    "--unit", "unit_path", required=True, type=click.Path(dir_okay=False), help="Unit file."
)
@_db_option
def import_(csv_path: str, unit_path: str, db: str | None) -> None:
    """Store a long-form CSV of findings: the whole file, or nothing when any row is bad."""
    from vascplan.observations.csvio import parse_csv
    from vascplan.observations.store import open_store

    unit = _unit(unit_path)
    findings, lines = parse_csv(csv_path, unit)
    for f, line in zip(findings, lines, strict=True):
        _check_author(unit, f.by, csv_path, f"line {line}, column by")
    with open_store(db) as store:
        _unit_notes(unit, unit_path, store)
        ids = store.record(
            findings,
            unit=unit.unit.key,
            unit_name=unit.unit.name,
            kind="import",
            source=csv_path,
            lines=lines,
        )
    click.echo(f"stored {len(ids)} findings from {csv_path} in {store.shown}")


@obs.command(
    "template",
    epilog="Example: vascplan obs template -o checks.csv\n\nExample: vascplan obs template --guide",
)
@click.option(
    "-o",
    "--output",
    type=click.Path(dir_okay=False),
    default=None,
    help="Write here instead of standard output (and show the guide to the columns).",
)
@click.option(
    "--guide", is_flag=True, help="Show what each item takes as site and value, not the CSV."
)
@click.option(
    "--db",
    "db",
    metavar="PATH-OR-URL",
    default=None,
    envvar=DB_ENVVAR,
    show_envvar=True,
    help="Accepted like every obs command; the template does not open the store.",
)
def template(output: str | None, guide: bool, db: str | None) -> None:
    """Write the CSV template for `obs import` (header and one example row per item)."""
    from vascplan.fileio import atomic_write_text
    from vascplan.observations.csvio import template_guide, template_text

    if guide:
        click.echo(template_guide(), nl=False)
        return
    text = template_text()
    if output:
        atomic_write_text(output, text, mode=0o666)  # a blank template: no patient data
        click.echo(f"wrote {output}")
        click.echo(template_guide(), nl=False)
    else:
        click.echo(text, nl=False)


@obs.command(
    "correct",
    epilog=(
        "Example: vascplan obs correct --unit unit.yaml --entry 42 --value 61 --by RN-B "
        '--reason "misread the monitor"'
    ),
)
@click.option(
    "--entry",
    "entry_id",
    type=AsciiInt(1, STORE_ID_MAX),
    required=True,
    help="Entry id to correct (see `obs export --format csv`).",
)
@click.option("--value", default=None, help="The right value (same vocabulary as the item).")
@click.option("--withdraw", is_flag=True, help="Mark the finding as entered in error instead.")
@click.option(
    "--by",
    "by",
    required=True,
    callback=_identifier,
    help="Who makes the correction (one of the unit's staff).",
)
@click.option("--reason", required=True, callback=_free_text, help="Why.")
@click.option(
    "--unit",
    "unit_path",
    required=True,
    type=click.Path(dir_okay=False),
    help="Unit file: the entry must be this unit's and --by one of its staff.",
)
@_db_option
def correct(
    entry_id: int,
    value: str | None,
    withdraw: bool,
    by: str,
    reason: str,
    unit_path: str,
    db: str | None,
) -> None:
    """Correct a stored finding: a new entry pointing to it; the original is kept."""
    from vascplan.observations.store import open_store

    if withdraw == (value is not None):
        raise InputError("--value", "", "give either --value or --withdraw")
    unit = _unit(unit_path)
    by = _check_author(unit, by)
    with open_store(db) as store:
        new_id = store.correct(
            entry_id, value or "", by=by, reason=reason, withdraw=withdraw, unit=unit.unit.key
        )
    click.echo(f"stored correction {new_id} of entry {entry_id} in {store.shown}")


@obs.command(
    "review",
    epilog=(
        "Exit status: 0 no alert open, 1 at least one alert open (an overdue check is an alert), "
        "2 bad input.\n\nExample: vascplan obs review unit.yaml --at 2026-12-01T20:00 --format json"
    ),
)
@click.argument("unit_path", metavar="UNIT", type=click.Path(dir_okay=False))
@click.option(
    "--at", "at_text", default=None, help="Review as at this time (ISO 8601; default now)."
)
@click.option(
    "--format", "fmt", type=click.Choice(["table", "json"]), default="table", show_default=True
)
@_db_option
def review(unit_path: str, at_text: str | None, fmt: str, db: str | None) -> None:
    """Overdue checks and deterioration per patient, with the rule, source and whom to call."""
    from vascplan.observations.review import render_table, review_unit, to_json
    from vascplan.textsafety import safe_terminal

    unit = _unit(unit_path)
    at = _at(at_text, unit)
    with _open_for_reading(db) as store:
        _unit_notes(unit, unit_path, store)
        result = review_unit(unit, store, at, base_dir=_base_dir(unit_path))
    if fmt == "json":
        click.echo(safe_terminal(json.dumps(to_json(result), indent=2, ensure_ascii=False)))
    else:
        click.echo(safe_terminal(render_table(result)))
    sys.exit(1 if result.open_alerts else 0)


@obs.command("trend", epilog="Example: vascplan obs trend unit.yaml --bed 1 -o bed1-trend.pdf")
@click.argument("unit_path", metavar="UNIT", type=click.Path(dir_okay=False))
@click.option(
    "--bed",
    "beds",
    type=AsciiInt(1, 999),
    multiple=True,
    help="Bed (repeat for several; default every bed).",
)
@click.option(
    "-o", "--output", type=click.Path(dir_okay=False), required=True, help="PDF file to write."
)
@click.option("--at", "at_text", default=None, help="Plot up to this time (ISO 8601; default now).")
@_db_option
def trend(
    unit_path: str, beds: tuple[int, ...], output: str, at_text: str | None, db: str | None
) -> None:
    """Trend PDF: each leg's NIRS, capillary refill and pedal signals, one page a patient."""
    from vascplan.observations.trend import write_trend_pdf

    unit = _unit(unit_path)
    patients = [unit.patient_at_bed(b) for b in beds] if beds else list(unit.patients)
    if not patients:
        raise InputError(unit_path, "patients", "the unit file has no patients")
    at = _at(at_text, unit)
    with _open_for_reading(db) as store:
        _unit_notes(unit, unit_path, store)
        write_trend_pdf(unit, store, patients, at, output, base_dir=_base_dir(unit_path))
    click.echo(f"wrote {output} ({len(patients)} pages)")


@obs.command(
    "export",
    epilog=(
        "Example: vascplan obs export --unit unit.yaml --format fhir -o obs.json\n\n"
        "Example: vascplan obs export --unit unit.yaml --format ndjson "
        "--since 2026-12-01T00:00 --until 2026-12-01T23:59 -o obs.ndjson"
    ),
)
@click.option(
    "--unit", "unit_path", required=True, type=click.Path(dir_okay=False), help="Unit file."
)
@click.option(
    "--format",
    "fmt",
    type=click.Choice(["fhir", "ndjson", "csv"]),
    required=True,
    help="fhir: one HL7 FHIR R4 Bundle; ndjson: one FHIR Observation a line (bulk data); "
    "csv: the long-form CSV with corrections.",
)
@click.option(
    "--since",
    "since_text",
    default=None,
    help="Only checks made at or after this time (ISO 8601; local to the unit without an offset).",
)
@click.option(
    "--until",
    "until_text",
    default=None,
    help="Only checks made at or before this time (ISO 8601; local to the unit without an offset).",
)
@click.option(
    "-o",
    "--output",
    type=click.Path(dir_okay=False),
    default=None,
    help="Write here instead of standard output.",
)
@_db_option
def export(
    unit_path: str,
    fmt: str,
    since_text: str | None,
    until_text: str | None,
    output: str | None,
    db: str | None,
) -> None:
    """Export the unit's findings as FHIR (a Bundle or NDJSON) or the long-form CSV.

    Written as it is read: memory does not grow with the record.
    """
    from vascplan.fileio import atomic_output
    from vascplan.observations.export import write_export
    from vascplan.surveillance.unit import parse_local_time

    unit = _unit(unit_path)
    tz = unit.unit.tz
    since = parse_local_time(since_text, tz, "--since") if since_text is not None else None
    until = parse_local_time(until_text, tz, "--until") if until_text is not None else None
    if since is not None and until is not None and since > until:
        raise InputError(
            "--since", "", f"{since_text} is after --until {until_text}; give since <= until"
        )
    generated = datetime.now(UTC)
    with _open_for_reading(db) as store:
        _unit_notes(unit, unit_path, store)
        if output:
            with atomic_output(output, mode=0o600) as fh:
                n = write_export(
                    cast(TextIO, fh), store, unit, fmt, generated=generated, since=since,
                    until=until,
                )
            click.echo(f"wrote {output} ({n} stored rows)")
            click.echo(f"Caution: {CAUTION}")
            return
        write_export(
            sys.stdout,
            store,
            unit,
            fmt,
            generated=generated,
            since=since,
            until=until,
        )
    # FHIR carries the caution in meta.tag. A CSV has no place for it: it goes to a terminal
    # on stderr, never into a captured stream that a script parses.
    if fmt == "csv" and sys.stderr.isatty():
        click.echo(f"Caution: {CAUTION}", err=True)


@obs.command(
    "verify",
    epilog=(
        "Exit status: 0 the record is intact, 1 it is not (the line names the first altered "
        "entry or the missing guard), 2 bad input.\n\nExample: vascplan obs verify --db obs.db"
    ),
)
@click.option(
    "--head",
    default=None,
    metavar="SHA256",
    help="A chain head noted from an earlier verify: it must still be in the record.",
)
@_db_option
def verify(head: str | None, db: str | None) -> None:
    """Prove the record unbroken (hash chain, guard triggers, batch sizes) or name the break."""
    import re

    from vascplan.observations.integrity import verify as verify_record

    if head is not None and not re.fullmatch(r"[0-9a-f]{64}", head):
        raise InputError("--head", "", "give the 64 hexadecimal digits printed by obs verify")
    with _open_for_reading(db) as store:
        verdict = verify_record(store, head)
    click.echo(verdict.line)
    sys.exit(0 if verdict.intact else 1)


@obs.command(
    "migrate",
    epilog=(
        "Example: vascplan obs migrate --db postgresql://vascplan_owner@db.example/obs\n\n"
        "On PostgreSQL run it as the role that owns the tables; the everyday role may "
        "only add and read records."
    ),
)
@_db_option
def migrate(db: str | None) -> None:
    """Create or upgrade the store's schema to this vascplan's version (as its owner)."""
    from vascplan.observations.store import SCHEMA_VERSION, open_store

    with open_store(db) as store:
        version = store.version()
    click.echo(f"{store.shown} is at schema version {version} (this vascplan: {SCHEMA_VERSION})")


def _at(text: str | None, unit) -> datetime:
    from vascplan.surveillance.unit import parse_local_time

    if text is None:
        return datetime.now(UTC).astimezone(unit.unit.tz).replace(microsecond=0)
    return parse_local_time(text, unit.unit.tz, "--at")


def _base_dir(unit_path: str):
    from pathlib import Path

    return Path(unit_path).resolve().parent
