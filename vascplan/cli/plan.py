"""``vascplan plan``: rank the access routes of one or more cases (thin layer)."""

from __future__ import annotations

import itertools
import json
import os
import sys
from collections.abc import Iterator
from typing import TextIO

import click

from vascplan.errors import InputError

EPILOG = """\b
Examples:
  vascplan plan vascplan/examples/case-DEMO-07-sfa-occlusion.yaml
  vascplan plan vascplan/examples/case-DEMO-07-sfa-occlusion.yaml --explain L-CFA
  vascplan plan case.yaml --weight crossover=2.5 --limit sar_max=1.0 --top 5
  vascplan plan case.yaml --all       (also routes with no path, other paths)
  vascplan plan registry/*.yaml --format jsonl > review.jsonl
  find registry -name '*.yaml' | vascplan plan --files-from - --format jsonl --jobs 2

Score: lower is better; feasible routes come first. Weights and limits live in
data/access/weights.yaml and data/access/limits.yaml, each with its basis.

With --format jsonl the cases are planned in --jobs worker processes and each line is
written as soon as its case is done, in the order given; a case that cannot be read or
planned gives {"case": FILE, "error": "..."} and the run goes on (exit status 2 at the
end). table and json read and check every file first: one bad file stops the run.
"""


@click.command(epilog=EPILOG)
@click.argument("cases", nargs=-1, type=click.Path(dir_okay=False))
@click.option("--files-from", "files_from", type=click.File("r", encoding="utf-8"),
              default=None, metavar="FILE",
              help="Read more case files from FILE, one path per line ('-' for standard "
                   "input); for any number of cases.")
@click.option("--jobs", type=click.IntRange(min=1), default=None,
              help="Worker processes for --format jsonl (default: all cores).")
@click.option("--format", "fmt", type=click.Choice(["table", "json", "jsonl"]),
              default="table", show_default=True,
              help="table for people; json (one object, or a list for several cases); "
                   "jsonl (one object per case per line).")
@click.option("--top", type=click.IntRange(min=1), default=None,
              help="Show only the best N routes of each case.")
@click.option("--explain", "explain", metavar="SITE", default=None,
              help="Print every factor and limit for the routes from SITE (e.g. L-CFA).")
@click.option("--weight", "weights", multiple=True, metavar="NAME=VALUE",
              help="Override a soft-factor weight (repeatable).")
@click.option("--limit", "limits", multiple=True, metavar="NAME=VALUE",
              help="Override a hard limit (repeatable).")
@click.option("--all", "all_routes", is_flag=True, default=False,
              help="List every route: also those with no path to the target and the "
                   "other paths of a route (by default only routes with a path, one per "
                   "site and direction).")
def plan(cases: tuple[str, ...], files_from: TextIO | None, jobs: int | None, fmt: str,
         top: int | None, explain: str | None, weights: tuple[str, ...],
         limits: tuple[str, ...], all_routes: bool) -> None:
    """Rank the access routes for each CASE file: site, direction, path and why.

    Every usable puncture site and direction is checked against the sheath size
    (SAR), the device profile and working length, and the disease on the way; blocked
    routes are kept with each reason code and where. Values marked * rest on
    reference anatomy, not a measurement.
    """
    from vascplan.case.load import load_case
    from vascplan.refdata.sites import load_sites, site_ids_for
    from vascplan.routes.plan import plan_case
    from vascplan.routes.settings import parse_assignments
    from vascplan.routes.table import render_explain, render_plan

    w = parse_assignments(weights, "--weight")
    lim = parse_assignments(limits, "--limit")
    if explain is not None and not site_ids_for(explain) and site_ids_for(explain.upper()):
        explain = explain.upper()  # site ids are upper case: accept l-cfa for L-CFA
    if explain is not None and not site_ids_for(explain):
        from vascplan.fileio import did_you_mean

        sites = load_sites()
        raise InputError("--explain", explain,
                         f"unknown site{did_you_mean(explain.upper(), sites)}; allowed: a "
                         f"site id ({', '.join(sites)}) or the segment id of one")
    if not cases and files_from is None:
        raise click.UsageError("give one or more CASE files, or --files-from FILE")
    paths: Iterator[str] = iter(cases)
    if files_from is not None:
        paths = itertools.chain(paths, _lines(files_from))
    if fmt == "jsonl" and explain is None:
        _stream(paths, jobs, w, lim, top, known=None if files_from else len(cases),
                all_routes=all_routes)
        return
    cases = tuple(paths)
    progress = sys.stderr.isatty() and len(cases) > 1
    # Every file is read and validated before anything is printed, so that one bad file
    # in a registry review stops the run with its error line and no partial output.
    loaded = [(path, load_case(path)) for path in cases]
    results = []
    for i, (path, case) in enumerate(loaded, start=1):
        result = plan_case(case, weights=w, limits=lim, top=None if explain else top,
                           source=str(path), all_routes=all_routes or explain is not None)
        data = result.to_dict()
        if explain is not None:
            click.echo(render_explain(data, [r.to_dict() for r in result.route(explain)]), nl=False)
        elif fmt == "jsonl":
            click.echo(json.dumps(data, ensure_ascii=False, separators=(",", ":")))
        elif fmt == "json":
            results.append(data)
        else:
            click.echo(render_plan(data) + ("\n" if i < len(cases) else ""), nl=False)
        if progress:
            click.echo(f"\rplanned {i}/{len(cases)}", err=True, nl=False)
    if progress:
        click.echo("", err=True)
    if fmt == "json" and explain is None:
        out = results[0] if len(results) == 1 else results
        click.echo(json.dumps(out, indent=2, ensure_ascii=False))


def _lines(handle: TextIO) -> Iterator[str]:
    """The paths in a --files-from file, one a line, read as they come; blanks skipped."""
    for line in handle:
        path = line.rstrip("\r\n")
        if path.strip():
            yield path


def _stream(paths: Iterator[str], jobs: int | None, weights: dict, limits: dict,
            top: int | None, known: int | None, all_routes: bool = False) -> None:
    """Write one JSON line per case as each is planned; exit 2 at the end if any failed."""
    from vascplan.routes.batch import default_jobs, plan_stream

    progress = sys.stderr.isatty()
    failed = done = 0
    out = sys.stdout
    stream = plan_stream(paths, jobs=jobs or default_jobs(), weights=weights, limits=limits,
                         top=top, all_routes=all_routes)
    for outcome in stream:
        try:
            out.write(outcome.line + "\n")
            out.flush()
        except BrokenPipeError:  # the reader stopped (| head): stop quietly
            stream.close()
            os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
            click.get_current_context().exit(1)
        done += 1
        failed += not outcome.ok
        if progress:
            total = f"/{known}" if known else ""
            click.echo(f"\rplanned {done}{total}" + (f", {failed} failed" if failed else ""),
                       err=True, nl=False)
    if progress and done:
        click.echo("", err=True)
    if failed:
        click.echo(f"error: {failed} of {done} cases failed; their error lines are in the "
                   "output", err=True)
        click.get_current_context().exit(2)
