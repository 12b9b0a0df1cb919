"""The demo's first steps: validate the bundled example cases and draw their trees."""

from __future__ import annotations

import json

from vascplan.demo.context import DemoContext


def step_validate(ctx: DemoContext) -> None:
    """Validate every bundled case file; the cases are left in ``shared["cases"]``."""
    from vascplan.case.load import load_case

    cases = {}
    for path in ctx.case_files():
        case = load_case(path)
        cases[case.patient.ref] = case
        ctx.say(f"  ok: {path.name} ({case.patient.ref})")
    ctx.shared["cases"] = cases


def step_tree(ctx: DemoContext) -> None:
    """Build each case's annotated tree; write it as JSON and as a table."""
    from vascplan.anatomy.graph import build_tree
    from vascplan.anatomy.summary import render_tree_table, tree_summary

    trees = {}
    for ref, case in ctx.shared["cases"].items():
        tree = build_tree(case)
        trees[ref] = tree
        summary = tree_summary(tree)
        ctx.write_text(f"{ref}-tree.json", json.dumps(summary, indent=2, ensure_ascii=False) + "\n")
        ctx.write_text(f"{ref}-tree.txt", render_tree_table(summary))
    ctx.shared["trees"] = trees
