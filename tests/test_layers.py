"""The house's import structure: no circle among modules, arrows only run down the layers.

The order is the one written in DEVELOPERS.md ("Layers"); the graph is read from the source
with :mod:`ast` (every import, at the top of a module or inside a function, so that a lazy
import cannot hide an arrow that runs back up).
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "vascplan"

LAYERS: list[set[str]] = [
    # 0: foundation, imports nothing of the house
    {"vascplan", "errors", "safety", "localtime", "nearlimit"},
    # 1: text made safe for files and terminals
    {"textsafety", "storeurl"},
    # 2: files and paths, plain-text tables
    {"paths", "fileio", "texttable"},
    # 3: reference data read from the bundled tables; the page stack every PDF goes through
    {"refdata", "pdf", "plausibility"},
    # 4: the case model; the check-item vocabulary
    {"case", "vocabulary"},
    # 5: the patient's arterial tree
    {"anatomy"},
    # 6: sizing and flow
    {"sizing"},
    # 7: access routes and the ward's surveillance, side by side (neither imports the other)
    {"routes", "surveillance"},
    # 8: the observation record
    {"observations"},
    # 9: printed outputs; the ward's own record (accounts, events, audit)
    {"reports", "ward"},
    # 10: the application layer
    {"app"},
    # 11: the demo, an application that runs every capability
    {"demo"},
    # 12: the faces
    {"cli", "web"},
    # 13: the entry point
    {"__main__"},
]
"""Top-level packages and modules of ``vascplan`` from the bottom up."""


def _modules() -> dict[str, Path]:
    mods = {}
    for path in PACKAGE.rglob("*.py"):
        parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
        if parts[-1] == "__init__":
            parts = parts[:-1]
        mods[".".join(parts)] = path
    return mods


def _imports(name: str, path: Path, known: set[str]) -> set[str]:
    """The house modules ``name`` imports (a ``from pkg import mod`` counts as ``pkg.mod``)."""
    found = set()
    is_package = path.name == "__init__.py"
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        targets: list[str] = []
        if isinstance(node, ast.Import):
            targets = [alias.name for alias in node.names]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = name.split(".") if is_package else name.split(".")[:-1]
                base = base[: len(base) - (node.level - 1)]
                source = ".".join(base + ([node.module] if node.module else []))
            else:
                source = node.module or ""
            for alias in node.names:
                full = f"{source}.{alias.name}"
                targets.append(full if full in known else source)
        for target in targets:
            while target and target not in known:
                target = target.rpartition(".")[0]
            if target and target != name:
                found.add(target)
    return found


def _graph() -> dict[str, set[str]]:
    mods = _modules()
    known = set(mods)
    return {name: _imports(name, path, known) for name, path in mods.items()}


def _top(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else parts[0]


def _layer_of(top: str) -> int:
    for number, layer in enumerate(LAYERS):
        if top in layer:
            return number
    raise AssertionError(
        f"vascplan.{top} has no layer: add it to LAYERS in tests/test_layers.py and to the "
        "Layers section of DEVELOPERS.md"
    )


def _cycles(graph: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected components with more than one module (Tarjan 1972)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in sorted(graph[v]):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                found.append(sorted(component))

    for v in sorted(graph):
        if v not in index:
            visit(v)
    return found


def test_the_graph_reader_sees_lazy_and_relative_imports(tmp_path):
    # A made-up module with a lazy import inside a function and a relative import: both
    # are arrows, the graph must hold them.
    src = tmp_path / "m.py"
    src.write_text(
        "from . import sibling\n"
        "def f():\n"
        "    from vascplan.routes.plan import plan_case\n"
        "    return plan_case\n",
        encoding="utf-8",
    )
    known = {"vascplan.sizing.m", "vascplan.sizing.sibling", "vascplan.routes.plan"}
    assert _imports("vascplan.sizing.m", src, known) == {
        "vascplan.sizing.sibling",
        "vascplan.routes.plan",
    }


def test_the_cycle_finder_finds_a_made_up_circle():
    graph = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}
    assert _cycles(graph) == [["a", "b", "c"]]


def test_no_import_circle_among_modules():
    assert _cycles(_graph()) == []


def test_every_top_level_package_has_a_layer():
    for module in _graph():
        _layer_of(_top(module))


def test_arrows_only_run_down_the_layers():
    wrong = []
    for module, targets in sorted(_graph().items()):
        top = _top(module)
        for target in sorted(targets):
            other = _top(target)
            if other != top and _layer_of(other) >= _layer_of(top):
                wrong.append(f"{module} -> {target}")
    assert wrong == []


@pytest.mark.parametrize(
    "package", ["routes", "surveillance", "observations", "reports", "sizing", "anatomy", "case"]
)
def test_no_domain_package_imports_the_demo_or_the_faces(package):
    graph = _graph()
    above = {"demo", "cli", "web", "app", "__main__"}
    hits = [
        f"{m} -> {t}"
        for m, ts in graph.items()
        if _top(m) == package
        for t in ts
        if _top(t) in above
    ]
    assert hits == []


def test_private_modules_are_imported_only_inside_their_package():
    wrong = []
    for module, targets in sorted(_graph().items()):
        for target in targets:
            package, _, leaf = target.rpartition(".")
            if (
                leaf.startswith("_")
                and not leaf.startswith("__")
                and not (module == package or module.startswith(package + "."))
            ):
                wrong.append(f"{module} -> {target}")
    assert wrong == []


def test_the_moved_modules_are_gone_under_their_old_names():
    # One name per thing: the reference table is vascplan.refdata.anatomy and the sizing
    # tables vascplan.sizing.tables; the old names must not come back beside them.
    mods = _modules()
    assert "vascplan.refdata.anatomy" in mods and "vascplan.anatomy.reference" not in mods
    assert "vascplan.sizing.tables" in mods and "vascplan.sizing._tables" not in mods


def test_developers_md_states_the_same_layers():
    text = (PACKAGE.parent / "DEVELOPERS.md").read_text(encoding="utf-8")
    section = text.split("### Layers", 1)[1].split("\n## ", 1)[0].split("\n### ", 1)[0]
    for layer in LAYERS:
        for name in layer:
            assert f"`{name}`" in section, name
