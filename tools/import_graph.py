"""Import cycles and private names imported across modules, in the ``kinetics`` package.

Usage::

    python tools/import_graph.py [--verbose]

Every ``import`` and ``from ... import`` of a module counts, also those inside functions;
imports under ``if TYPE_CHECKING:`` do not (they never run).  A cycle is a strongly
connected component of the graph of modules with more than one member (its elementary
cycles are counted too); an import of the package root (``from kinetics import x`` where
``x`` is no submodule) is an edge to ``kinetics/__init__.py``.  A private name is one with
a leading underscore and no trailing double underscore, imported by ``from M import _x``
from another module; private modules (``from kinetics import _sweep_kernels``) are listed apart.
A string constant that is the full name of a module of the package (``"kinetics.cli.fit"``
in a table of commands loaded on demand) counts as an import of it.

Upward imports are edges from a module to one of a higher layer (:data:`LAYERS`, bottom
first); a module of no listed layer is not judged.
"""

from __future__ import annotations

import ast
import sys
from pathlib import Path

import networkx as nx

ROOT = Path(__file__).resolve().parents[1] / "kinetics"

#: Layers of the package, bottom first: the first part of a module's name after
#: ``kinetics.`` places it.
LAYERS = [
    [
        "errors",
        "_version",
        "jsonready",
        "files",
        "units",
        "time_text",
        "suggest",
        "_doubledouble",
        "collector",
    ],
    [
        "scheme",
        "rate_constants",
        "new_values",
        "definitions",
        "derivatives",
        "expressions",
        "laws",
        "activity",
        "requirements",
        "timeline_statements",
        "timeline",
        "temperature_log",
        "amounts",
        "balance",
        "network",
        "ratematrix",
        "parsing",
        "language",
    ],
    [
        "checks",
        "propagate",
        "sensitivity",
        "engine",
        "_kernels",
        "_blocks",
        "_block_exp",
        "_block_kernels",
    ],
    ["analysis", "solution", "timeline_solve"],
    ["parameters", "sweep", "sweep_summary", "_sweep_kernels", "fit", "measurements", "optimise"],
    ["output"],
    ["cli", "__main__"],
]


def module_name(path: Path) -> str:
    parts = ["kinetics", *path.relative_to(ROOT).with_suffix("").parts]
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def modules() -> dict[str, Path]:
    return {module_name(p): p for p in sorted(ROOT.rglob("*.py"))}


def _type_checking(test: ast.expr) -> bool:
    return (isinstance(test, ast.Name) and test.id == "TYPE_CHECKING") or (
        isinstance(test, ast.Attribute) and test.attr == "TYPE_CHECKING"
    )


def _imports(tree: ast.AST):
    """Import nodes outside ``if TYPE_CHECKING:`` blocks."""
    stack = [tree]
    while stack:
        node = stack.pop()
        for child in ast.iter_child_nodes(node):
            if isinstance(child, ast.If) and _type_checking(child.test):
                stack.extend(child.orelse)
                continue
            if isinstance(child, ast.Import | ast.ImportFrom):
                yield child
            stack.append(child)


def _base(name: str, node: ast.ImportFrom, path: Path) -> str:
    if not node.level:
        return node.module or ""
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    for _ in range(node.level - 1):
        package = package.rpartition(".")[0]
    return f"{package}.{node.module}" if node.module else package


def analyse():
    mods = modules()
    graph = nx.DiGraph()
    graph.add_nodes_from(mods)
    private_names, private_modules = [], []
    for name, path in mods.items():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        for node in ast.walk(tree):  # modules named in strings: loaded on demand
            named = isinstance(node, ast.Constant) and "." in str(node.value)
            if named and node.value in mods and node.value != name:
                graph.add_edge(name, node.value)
        for node in _imports(tree):
            if isinstance(node, ast.Import):
                for alias in node.names:
                    target = alias.name
                    while target and target not in mods:
                        target = target.rpartition(".")[0]
                    if target:
                        graph.add_edge(name, target)
                continue
            base = _base(name, node, path)
            if not base.startswith("kinetics"):
                continue
            for alias in node.names:
                sub = f"{base}.{alias.name}"
                if sub in mods:
                    graph.add_edge(name, sub)
                    if alias.name.startswith("_"):
                        private_modules.append((name, sub))
                    continue
                target = base
                while target and target not in mods:
                    target = target.rpartition(".")[0]
                if target and target != name:
                    graph.add_edge(name, target)
                    private = alias.name.startswith("_") and not alias.name.endswith("__")
                    if private:
                        private_names.append((name, f"{target}.{alias.name}"))
    graph.remove_edges_from(nx.selfloop_edges(graph))
    # a package's __init__ importing its own submodules is how a package re-exports;
    # an edge from a submodule back to its package's __init__ closes a cycle only
    # through such a re-export, and is reported as one
    sccs = [sorted(c) for c in nx.strongly_connected_components(graph) if len(c) > 1]
    cycles = list(nx.simple_cycles(graph))
    return graph, sccs, cycles, private_names, private_modules


def layer(module: str) -> int | None:
    """Index of the layer of ``module`` in :data:`LAYERS`, or None."""
    parts = module.split(".")
    if len(parts) < 2:
        return None
    for k, names in enumerate(LAYERS):
        if parts[1] in names:
            return k
    return None


def upward(graph) -> list[tuple[str, str]]:
    """Edges from a module to a module of a higher layer."""
    out = []
    for a, b in graph.edges:
        la, lb = layer(a), layer(b)
        if la is not None and lb is not None and lb > la:
            out.append((a, b))
    return sorted(out)


def main() -> None:
    verbose = "--verbose" in sys.argv
    graph, sccs, cycles, private_names, private_modules = analyse()
    print(f"modules: {graph.number_of_nodes()}, import edges: {graph.number_of_edges()}")
    print(f"import cycles (strongly connected groups): {len(sccs)}")
    for group in sccs:
        print("  " + " <-> ".join(group))
    print(f"elementary cycles: {len(cycles)}")
    if verbose:
        for cycle in cycles:
            print("  " + " -> ".join([*cycle, cycle[0]]))
    private_names = sorted(set(private_names))
    print(f"private names imported from another module: {len(private_names)}")
    for who, what in private_names:
        print(f"  {who}: {what}")
    root = sorted(who for who, what in graph.edges if what == "kinetics")
    print(f"modules importing the package root: {len(root)} {root if root else ''}")
    up = upward(graph)
    print(f"upward imports (to a higher layer): {len(up)}")
    for a, b in up:
        print(f"  {a} -> {b}")
    print(f"private modules imported: {len(private_modules)}")
    if verbose:
        for who, what in private_modules:
            print(f"  {who}: {what}")


if __name__ == "__main__":
    main()
