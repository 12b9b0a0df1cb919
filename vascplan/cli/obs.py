"""``vascplan obs``: record, review, plot and export limb checks (thin commands).

SQLAlchemy and reportlab are imported inside the commands, never when this module loads.
"""

from __future__ import annotations

import json
import sys
from datetime import UTC, datetime

import click

from vascplan.errors import InputError
from vascplan.safety import CAUTION

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
    )(f)


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


_ITEM_OPTIONS = [
    ("pulse", "SITE=GRADE", "pedal pulse, e.g. R-DPA=doppler (palpable | doppler | absent)"),
    ("venous", "SITE=SIGNAL", "venous Doppler, e.g. R=present (present | absent)"),
    ("nirs", "SIDE=PCT", "calf tissue oxygen saturation, e.g. L=64"),
    ("refill", "SIDE=S", "capillary refill seconds, e.g. R=3"),
    ("colour", "SIDE=WORD", "skin colour, e.g. R=pale (normal | pale | mottled | blue)"),
    ("temperature", "SIDE=WORD", "skin temperature, e.g. R=cool (warm | cool | cold)"),
    ("sensation", "SIDE=WORD", "sensation, e.g. R=toes (normal | toes | beyond-toes | absent)"),
    ("motor", "SIDE=WORD", "movement, e.g. R=weak (normal | weak | paralysed)"),
    ("calf", "SIDE=WORD", "calf tension, e.g. R=soft (soft | tense)"),
    ("pain", "[SIDE=]N", "pain score 0-10, e.g. 3 or R=3"),
    (
        "access",
        "[SITE=]WORD",
        "access site, e.g. R-CFA=dry or R=dry (dry | ooze | bleeding | haematoma)",
    ),
    ("dpc", "[SITE=]WORD", "distal perfusion cannula, e.g. ok or R-SFA=ok (ok | kinked | no-flow)"),
    ("pressure", "SITE=MMHG", "systolic pressure, e.g. R-PTA=110 or R-ARM=124"),
]


def _item_options(f):
    for name, metavar, text in reversed(_ITEM_OPTIONS):
        f = click.option(f"--{name}", name, metavar=metavar, multiple=True, help=text)(f)
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
@click.option("--bed", type=int, required=True, help="Bed number.")
@click.option(
    "--time",
    "time_text",
    required=True,
    help="When the check was made (ISO 8601; local to the unit without an offset).",
)
@click.option("--by", "by", required=True, help="Who made the check (staff id).")
@_item_options
@_db_option
def add(
    unit_path: str, bed: int, time_text: str, by: str, db: str | None, **items: tuple[str, ...]
) -> None:
    """Record one check: each item option is one finding (repeat an option for each site)."""
    from vascplan.observations.findings import check_time, make_finding, split_option
    from vascplan.observations.store import open_store

    unit = _unit(unit_path)
    patient = unit.patient_at_bed(bed)
    moment = check_time(time_text, unit.unit.tz, "--time")
    findings = []
    for name, _, _ in _ITEM_OPTIONS:
        for text in items[name]:
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
        ids = store.record(findings, unit=unit.unit.name, kind="add", source="obs add")
    click.echo(
        f"stored {len(ids)} findings for bed {bed} ({patient.ref}) at {moment.isoformat()}: "
        f"entries {ids[0]}-{ids[-1]} in {store.shown}"
    )


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
    with open_store(db) as store:
        ids = store.record(
            findings, unit=unit.unit.name, kind="import", source=csv_path, lines=lines
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
        atomic_write_text(output, text)
        click.echo(f"wrote {output}")
        click.echo(template_guide(), nl=False)
    else:
        click.echo(text, nl=False)


@obs.command(
    "correct",
    epilog=(
        "Example: vascplan obs correct --entry 42 --value 61 --by RN-B "
        '--reason "misread the monitor"'
    ),
)
@click.option(
    "--entry",
    "entry_id",
    type=int,
    required=True,
    help="Entry id to correct (see `obs export --format csv`).",
)
@click.option("--value", default=None, help="The right value (same vocabulary as the item).")
@click.option("--withdraw", is_flag=True, help="Mark the finding as entered in error instead.")
@click.option("--by", "by", required=True, help="Who makes the correction.")
@click.option("--reason", required=True, help="Why.")
@_db_option
def correct(
    entry_id: int, value: str | None, withdraw: bool, by: str, reason: str, db: str | None
) -> None:
    """Correct a stored finding: a new entry pointing to it; the original is kept."""
    from vascplan.observations.store import open_store

    if withdraw == (value is not None):
        raise InputError("--value", "", "give either --value or --withdraw")
    with open_store(db) as store:
        new_id = store.correct(entry_id, value or "", by=by, reason=reason, withdraw=withdraw)
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

    unit = _unit(unit_path)
    at = _at(at_text, unit)
    with _open_for_reading(db) as store:
        result = review_unit(unit, store, at, base_dir=_base_dir(unit_path))
    if fmt == "json":
        click.echo(json.dumps(to_json(result), indent=2, ensure_ascii=False))
    else:
        click.echo(render_table(result))
    sys.exit(1 if result.open_alerts else 0)


@obs.command("trend", epilog="Example: vascplan obs trend unit.yaml --bed 1 -o bed1-trend.pdf")
@click.argument("unit_path", metavar="UNIT", type=click.Path(dir_okay=False))
@click.option(
    "--bed", "beds", type=int, multiple=True, help="Bed (repeat for several; default every bed)."
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
    from vascplan.observations.export import atomic_text_output, write_export
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
        if output:
            with atomic_text_output(output, mode=0o600) as fh:
                n = write_export(
                    fh, store, unit, fmt, generated=generated, since=since, until=until
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


def _at(text: str | None, unit) -> datetime:
    from vascplan.surveillance.unit import parse_local_time

    if text is None:
        return datetime.now(UTC).astimezone(unit.unit.tz).replace(microsecond=0)
    return parse_local_time(text, unit.unit.tz, "--at")


def _base_dir(unit_path: str):
    from pathlib import Path

    return Path(unit_path).resolve().parent
