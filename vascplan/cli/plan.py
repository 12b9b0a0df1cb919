"""``vascplan plan``: rank the access routes of one or more cases (thin layer)."""

from __future__ import annotations

import json
import sys

import click

from vascplan.errors import InputError

EPILOG = """\b
Examples:
  vascplan plan examples/case-DEMO-07-sfa-occlusion.yaml
  vascplan plan examples/case-DEMO-07-sfa-occlusion.yaml --explain L-CFA
  vascplan plan case.yaml --weight crossover=2.5 --limit sar_max=1.0 --top 5
  vascplan plan case.yaml --all       (also routes with no path, other paths)
  vascplan plan registry/*.yaml --format jsonl > review.jsonl

Score: lower is better; feasible routes come first. Weights and limits live in
data/access/weights.yaml and data/access/limits.yaml, each with its basis.
"""


@click.command(epilog=EPILOG)
@click.argument("cases", nargs=-1, required=True, type=click.Path(dir_okay=False))
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
def plan(cases: tuple[str, ...], fmt: str, top: int | None, explain: str | None,
         weights: tuple[str, ...], limits: tuple[str, ...], all_routes: bool) -> None:
    """Rank the access routes for each CASE file: site, direction, path and why.

    Every usable puncture site and direction is checked against the sheath size
    (SAR), the device profile and working length, and the disease on the way; blocked
    routes are kept with each reason code and where. Values marked * rest on
    reference anatomy, not a measurement.
    """
    from vascplan.case.load import load_case
    from vascplan.routes.plan import plan_case
    from vascplan.routes.settings import parse_assignments
    from vascplan.routes.sites import load_sites, site_ids_for
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
