"""``vascplan demo``: every job run on the bundled invented examples.

The demo is a list of steps, :data:`DEMO_STEPS`, each a function of a
:class:`DemoContext`. A later capability adds its own step by appending to the list
(or with :func:`register_step`); a step writes its files through
:meth:`DemoContext.write_text` / :meth:`DemoContext.write_bytes` (atomic, inside the
output folder) and reports them with :meth:`DemoContext.say`.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from vascplan.fileio import atomic_write_bytes, atomic_write_text, output_inside
from vascplan.paths import examples_dir
from vascplan.safety import CAUTION


@dataclass
class DemoContext:
    """What a demo step gets: the output folder, the example files, a printer.

    Attributes
    ----------
    out_dir : Path
        Output folder (created on first write).
    examples : Path
        Folder of the bundled invented examples.
    echo : callable
        Prints one line for the user.
    written : list of Path
        Every file written so far, in order.
    shared : dict
        Results one step leaves for later ones (``shared["cases"]``: ref -> Case).
    """

    out_dir: Path
    examples: Path
    echo: Callable[[str], None]
    written: list[Path] = field(default_factory=list)
    shared: dict[str, Any] = field(default_factory=dict)

    def case_files(self) -> list[Path]:
        """The bundled case files (``examples/case-*.yaml``), sorted."""
        return sorted(self.examples.glob("case-*.yaml"))

    def say(self, text: str) -> None:
        """Print one line."""
        self.echo(text)

    def write_text(self, name: str, text: str) -> Path:
        """Write ``out_dir/name`` atomically (the name is made safe) and report it."""
        path = atomic_write_text(output_inside(self.out_dir, name), text)
        self.written.append(path)
        self.echo(f"  wrote {path}")
        return path

    def write_bytes(self, name: str, data: bytes) -> Path:
        """Write ``out_dir/name`` atomically (the name is made safe) and report it."""
        path = atomic_write_bytes(output_inside(self.out_dir, name), data)
        self.written.append(path)
        self.echo(f"  wrote {path}")
        return path


DemoStep = Callable[[DemoContext], None]


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


DEMO_STEPS: list[tuple[str, DemoStep | str]] = [
    ("validate the example cases", step_validate),
    ("annotated arterial trees", step_tree),
    ("access route plans", "vascplan.routes.demo:step_plan"),
    (
        "limb surveillance: risk and rota of the demo unit",
        "vascplan.surveillance.demo:step_surveillance",
    ),
    (
        "observation record: review of the demo checks",
        "vascplan.observations.demo:step_observations",
    ),
    ("printed outputs: case reports and nursing checklists", "vascplan.reports.demo:step_reports"),
]
"""(title, step) in running order. A step is a function of :class:`DemoContext`, or
``"module:function"`` imported only when the demo reaches it."""


def _resolve(step: DemoStep | str) -> DemoStep:
    if isinstance(step, str):
        import importlib

        module_name, attr = step.split(":")
        return getattr(importlib.import_module(module_name), attr)
    return step


def register_step(title: str, step: DemoStep | str) -> None:
    """Append a step to the demo (idempotent for the same function)."""
    if all(existing is not step for _, existing in DEMO_STEPS):
        DEMO_STEPS.append((title, step))


def run_demo(
    out_dir: str | Path,
    echo: Callable[[str], None] = print,
    steps: list[tuple[str, DemoStep | str]] | None = None,
) -> list[Path]:
    """Run the demo steps in order.

    Parameters
    ----------
    out_dir : path-like
        Where every output goes.
    echo : callable
        Printer for progress lines.
    steps : list, optional
        Default :data:`DEMO_STEPS`.

    Returns
    -------
    list of Path
        Every file written.
    """
    ctx = DemoContext(out_dir=Path(out_dir), examples=examples_dir(), echo=echo)
    todo = DEMO_STEPS if steps is None else steps
    for number, (title, step) in enumerate(todo, start=1):
        echo(f"[{number}/{len(todo)}] {title}")
        _resolve(step)(ctx)
    echo(f"Caution: {CAUTION}")
    return ctx.written
