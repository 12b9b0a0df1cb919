"""``vascplan demo``: run every job on the bundled invented examples."""

from __future__ import annotations

import click


@click.command(epilog="Example: vascplan demo --out demo-output")
@click.option(
    "--out",
    type=click.Path(file_okay=False),
    default="demo-output",
    show_default=True,
    help="Folder for every output file (created if missing).",
)
def demo(out: str) -> None:
    """Run every job on the bundled invented examples (DEMO-nn cases).

    Validates each example case, then writes its annotated arterial tree (JSON and
    table) and what later steps add, printing every path written.
    """
    from vascplan.demo import run_demo

    run_demo(out, echo=click.echo)
