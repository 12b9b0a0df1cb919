"""Planning the bundled invented examples for ``vascplan demo``.

:func:`demo_plans` plans every ``examples/case-*.yaml`` and writes each plan as JSON
(``<ref>-plan.json``) and as the people's table (``<ref>-plan.txt``), atomically.
:func:`step_plan` is the same as a step of :mod:`vascplan.demo`
(listed in :data:`vascplan.demo.DEMO_STEPS`).
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

from vascplan.fileio import atomic_write_text, output_inside
from vascplan.paths import examples_dir


def demo_plans(
    out_dir: Path, examples: Path | None = None, echo: Callable[[str], None] | None = None
) -> list[Path]:
    """Plan every example case and write the plans.

    Parameters
    ----------
    out_dir : Path
        Output folder (created if missing).
    examples : Path, optional
        Folder of ``case-*.yaml`` files; default the bundled ``examples/``.
    echo : callable, optional
        Called with one line per file written.

    Returns
    -------
    list of Path
        The files written, JSON and table for each case, in case-file order.
    """
    from vascplan.routes.plan import plan_file
    from vascplan.routes.table import render_plan

    written: list[Path] = []
    folder = examples if examples is not None else examples_dir()
    for case_path in sorted(folder.glob("case-*.yaml")):
        data = plan_file(case_path, all_routes=False).to_dict()  # as `vascplan plan` shows it
        ref = data["case"]
        for name, text in (
            (f"{ref}-plan.json", json.dumps(data, indent=2, ensure_ascii=False) + "\n"),
            (f"{ref}-plan.txt", render_plan(data)),
        ):
            path = atomic_write_text(output_inside(out_dir, name), text)
            written.append(path)
            if echo is not None:
                echo(f"  wrote {path}")
    return written


def step_plan(ctx: Any) -> None:
    """A :mod:`vascplan.demo` step: the access route plans of the example cases."""
    ctx.written.extend(demo_plans(ctx.out_dir, ctx.examples, ctx.say))
