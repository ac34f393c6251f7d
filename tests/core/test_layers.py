"""The house rules of imports: layers in one direction, and no import circle.

Every ``import`` and ``from ... import`` in the package is read with :mod:`ast`, at
module level, inside functions and under ``TYPE_CHECKING`` alike: a circle closed by a
function-level import is still a circle.  The layers are DEVELOPERS.md's ("The house").
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[2] / "geo_corrosion"

#: Top first.  A module may import its own layer or any layer below it, never above.
LAYERS: tuple[tuple[str, ...], ...] = (
    ("geo_corrosion", "geo_corrosion.cli", "geo_corrosion.testing"),
    ("geo_corrosion.pipeline", "geo_corrosion.registries", "geo_corrosion.portfolio"),
    ("geo_corrosion.stages",),
    ("geo_corrosion.exporters",),
    ("geo_corrosion.model",),
    ("geo_corrosion.zoning", "geo_corrosion.io", "geo_corrosion.measurements"),
    ("geo_corrosion.qa", "geo_corrosion.repair", "geo_corrosion.quantities",
     "geo_corrosion.pricing", "geo_corrosion.surfaces", "geo_corrosion.condition",
     "geo_corrosion.corrections"),
    ("geo_corrosion.config", "geo_corrosion.crs", "geo_corrosion._toml"),
    ("geo_corrosion.errors", "geo_corrosion.units", "geo_corrosion.plugins",
     "geo_corrosion._io", "geo_corrosion.cautions", "geo_corrosion.bibliography",
     "geo_corrosion.vocabulary", "geo_corrosion._timing"),
)


def module_name(path: Path) -> str:
    """Dotted module name of a file of the package."""
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def imports_of(path: Path, modules: set[str]) -> set[str]:
    """The package's modules that one file imports (the longest known dotted prefix)."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    out: set[str] = set()
    for node in ast.walk(tree):
        names: list[str] = []
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module and node.level == 0:
            names = [f"{node.module}.{a.name}" for a in node.names] + [node.module]
        for n in names:
            while n and n not in modules:
                n = n.rpartition(".")[0]
            if n.startswith("geo_corrosion"):
                out.add(n)
    return out


def import_graph() -> dict[str, set[str]]:
    """Module -> the modules of the package it imports (itself excluded)."""
    files = {module_name(p): p for p in PACKAGE.rglob("*.py")}
    mods = set(files)
    graph = {m: imports_of(p, mods) - {m} for m, p in files.items()}
    # ``from geo_corrosion.x import y`` where y is a submodule names both; keep the submodule
    for m, deps in graph.items():
        graph[m] = {d for d in deps if not any(e.startswith(d + ".") for e in deps)} | {
            d for d in deps if d not in files or files[d].name != "__init__.py"}
    return graph


def layer_of(module: str) -> int:
    """Index of the layer a module belongs to (longest matching prefix)."""
    best, found = -1, -1
    for i, layer in enumerate(LAYERS):
        for prefix in layer:
            if (module == prefix or module.startswith(prefix + ".")) and len(prefix) > best:
                best, found = len(prefix), i
    if found < 0:
        raise AssertionError(f"{module} is in no layer: add it to LAYERS and DEVELOPERS.md")
    return found


def find_cycle(graph: dict[str, set[str]]) -> list[str] | None:
    """One import circle of the graph, or None (iterative depth-first search)."""
    state: dict[str, int] = {}
    for start in sorted(graph):
        if state.get(start):
            continue
        stack = [(start, iter(sorted(graph[start])))]
        path = [start]
        state[start] = 1
        while stack:
            node, it = stack[-1]
            nxt = next(it, None)
            if nxt is None:
                state[node] = 2
                stack.pop()
                path.pop()
                continue
            if nxt not in graph:
                continue
            if state.get(nxt) == 1:
                return path[path.index(nxt):] + [nxt]
            if not state.get(nxt):
                state[nxt] = 1
                stack.append((nxt, iter(sorted(graph[nxt]))))
                path.append(nxt)
    return None


def test_every_module_has_a_layer() -> None:
    """A new top-level module or package must be placed in a layer (and in DEVELOPERS.md)."""
    for m in import_graph():
        layer_of(m)


def test_no_lower_layer_imports_a_higher_one() -> None:
    """Imports run one way: front end -> pipeline -> stages -> exporters -> model -> libraries."""
    wrong = sorted(f"{m} (layer {layer_of(m)}) imports {d} (layer {layer_of(d)})"
                   for m, deps in import_graph().items() for d in deps
                   if layer_of(d) < layer_of(m))
    assert not wrong, "\n".join(wrong)


def test_no_import_circle() -> None:
    """No circle of imports, whether at module level, in a function or for type checking."""
    graph = import_graph()
    # a package's __init__ re-exporting its own submodules is not a circle of design
    pruned = {m: {d for d in deps if not (d.startswith(m + ".") and
                                          (PACKAGE / Path(*m.split(".")[1:]) / "__init__.py")
                                          .is_file())}
              for m, deps in graph.items()}
    cycle = find_cycle(pruned)
    assert cycle is None, " -> ".join(cycle or [])


@pytest.mark.parametrize("graph, expected", [
    ({"a": {"b"}, "b": {"c"}, "c": {"a"}}, True),
    ({"a": {"b"}, "b": {"c"}, "c": set()}, False),
])
def test_find_cycle_finds_one(graph: dict[str, set[str]], expected: bool) -> None:
    """The circle finder itself: a three-module circle is found, a chain is not."""
    assert (find_cycle(graph) is not None) is expected
