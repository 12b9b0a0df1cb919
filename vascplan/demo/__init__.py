"""``vascplan demo``: every job run on the bundled invented examples.

The demo is an application at the top of the house: it imports the domain packages,
and none of them imports it. It is a list of steps, :data:`DEMO_STEPS`, each a function
of a :class:`~vascplan.demo.context.DemoContext`, one module per capability:

- :mod:`~vascplan.demo.cases`: validate the example cases, annotated trees;
- :mod:`~vascplan.demo.routes`: access route plans;
- :mod:`~vascplan.demo.surveillance`: risk and rota of the demo unit;
- :mod:`~vascplan.demo.observations`: the observation record's review, trend, exports;
- :mod:`~vascplan.demo.reports`: case reports and nursing checklists.

A later capability adds its own step by appending to the list (or with
:func:`register_step`); a step writes its files through
:meth:`DemoContext.write_text` / :meth:`DemoContext.write_bytes` (atomic, inside the
output folder) and reports them with :meth:`DemoContext.say`.
"""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

from vascplan.demo.context import DemoContext, DemoStep
from vascplan.paths import examples_dir
from vascplan.safety import CAUTION

__all__ = ["DEMO_STEPS", "DemoContext", "DemoStep", "register_step", "run_demo"]


DEMO_STEPS: list[tuple[str, DemoStep | str]] = [
    ("validate the example cases", "vascplan.demo.cases:step_validate"),
    ("annotated arterial trees", "vascplan.demo.cases:step_tree"),
    ("access route plans", "vascplan.demo.routes:step_plan"),
    (
        "limb surveillance: risk and rota of the demo unit",
        "vascplan.demo.surveillance:step_surveillance",
    ),
    (
        "observation record: review of the demo checks",
        "vascplan.demo.observations:step_observations",
    ),
    ("printed outputs: case reports and nursing checklists", "vascplan.demo.reports:step_reports"),
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
