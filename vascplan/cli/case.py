"""``vascplan validate``, ``tree`` and ``schema``: thin commands over the library."""

from __future__ import annotations

import json

import click

from vascplan.errors import InputError
from vascplan.fileio import atomic_write_text
from vascplan.safety import CAUTION
from vascplan.textsafety import safe_terminal


@click.command(epilog="Example: vascplan validate examples/case-*.yaml")
@click.argument("cases", nargs=-1, required=True, type=click.Path())
def validate(cases: tuple[str, ...]) -> None:
    """Check case files (YAML or JSON).

    Prints one line per file: "ok: FILE (REF)", or "error: FILE: FIELD: MESSAGE"
    (on standard error) naming what is wrong and what is allowed; then the caution.
    Exit status 0 when every file is valid, 2 when any is not.
    """
    from vascplan.case.load import load_case

    failed = False
    for path in cases:
        try:
            case = load_case(path)
        except InputError as exc:
            failed = True
            click.echo(f"error: {exc}", err=True)
        else:
            click.echo(f"ok: {path} ({case.patient.ref})")
    click.echo(f"Caution: {CAUTION}")
    if failed:
        click.get_current_context().exit(2)


@click.command(
    epilog=(
        "Example: vascplan tree examples/case-DEMO-07-sfa-occlusion.yaml\n\n"
        "Example: vascplan tree --format json --out demo-output/DEMO-07-tree.json "
        "examples/case-DEMO-07-sfa-occlusion.yaml"
    )
)
@click.argument("case", type=click.Path())
@click.option(
    "--format",
    "fmt",
    type=click.Choice(["table", "json"]),
    default="table",
    show_default=True,
    help="table for reading, json for programs (contract: format vascplan-tree/1).",
)
@click.option(
    "--out",
    type=click.Path(dir_okay=False),
    default=None,
    help="Write to this file (atomically) instead of the terminal.",
)
@click.option(
    "--assumptions",
    "every_assumption",
    is_flag=True,
    help="In the table, list every reference value with its source (not only the count).",
)
def tree(case: str, fmt: str, out: str | None, every_assumption: bool) -> None:
    """Show a patient's annotated arterial tree.

    One row per segment: effective diameter, minimal luminal diameter (MLD), length
    for this patient's height, calcification, lesions, stents and sites to avoid.
    Every value marked * is a reference default, not a measurement; the JSON output
    lists each such assumption with its source.
    """
    from vascplan.anatomy.graph import build_tree
    from vascplan.anatomy.summary import render_tree_table, tree_summary
    from vascplan.case.load import load_case

    summary = tree_summary(build_tree(load_case(case)))
    if fmt == "json":
        text = json.dumps(summary, indent=2, ensure_ascii=False) + "\n"
    else:
        text = render_tree_table(summary, every_assumption=every_assumption)
    if out:
        click.echo(f"wrote {atomic_write_text(out, text)}")
    else:
        click.echo(safe_terminal(text), nl=False)


@click.command(
    epilog="Example: vascplan schema --out case.schema.json",
)
@click.option(
    "--out",
    type=click.Path(dir_okay=False),
    default=None,
    help="Write to this file (atomically) instead of the terminal.",
)
def schema(out: str | None) -> None:
    """Print the JSON Schema of the case file (format vascplan-case/1).

    Editors that understand JSON Schema can use it to check and complete case files
    as they are typed. Segment ids are listed as the allowed values.
    """
    from vascplan.case.schema import case_json_schema

    text = json.dumps(case_json_schema(), indent=2, ensure_ascii=False) + "\n"
    if out:  # nothing about a patient in it: 0666 less the umask
        click.echo(f"wrote {atomic_write_text(out, text, mode=0o666)}")
    else:
        click.echo(safe_terminal(text), nl=False)
