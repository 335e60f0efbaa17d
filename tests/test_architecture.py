"""The architecture of the package (issue 13), checked on the source by
tools/import_graph.py: imports inside functions count, TYPE_CHECKING blocks do not."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import networkx as nx
import pytest

ROOT = Path(__file__).resolve().parents[1]
#: Parts of the package whose imports are held to the rules here: all of it.
CHECKED = ("kinetics",)


@pytest.fixture(scope="module")
def graph():
    spec = importlib.util.spec_from_file_location(
        "import_graph", ROOT / "tools" / "import_graph.py"
    )
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module.analyse()


def _checked(name: str) -> bool:
    return any(name == c or name.startswith(c + ".") for c in CHECKED)


def test_no_import_cycle_through_the_checked_modules(graph):
    g, sccs, _cycles, _private, _modules = graph
    assert [c for c in sccs if any(_checked(m) for m in c)] == []
    assert nx.is_directed_acyclic_graph(g.subgraph([m for m in g if _checked(m)]))


def test_no_private_name_imported_by_the_checked_modules(graph):
    _g, _sccs, _cycles, private, _modules = graph
    assert [(who, what) for who, what in private if _checked(who)] == []


def test_the_library_never_imports_the_command_line(graph):
    g = graph[0]
    inward = [
        (a, b)
        for a, b in g.edges
        if b.startswith("kinetics.cli") and not a.startswith(("kinetics.cli", "kinetics.__main__"))
    ]
    assert inward == []


def test_no_module_imports_the_package_root(graph):
    # the version comes from kinetics._version; the root re-exports, it is never imported
    assert sorted(a for a, b in graph[0].edges if b == "kinetics") == []


def test_analysis_imports_neither_output_nor_the_command_line(graph):
    g = graph[0]
    upward = [
        (a, b)
        for a, b in g.edges
        if a.startswith("kinetics.analysis")
        and b.startswith(
            (
                "kinetics.output",
                "kinetics.cli",
                "kinetics.sweep",
                "kinetics.fit",
                "kinetics.optimise",
            )
        )
    ]
    assert upward == []
