"""Terminal tables: never a cut number or name, at any console width."""

from __future__ import annotations

import io

import numpy as np
import pytest
from rich.cells import cell_len
from rich.console import Console

import kinetics
from kinetics.cli import terminal

LONG = """Parent_compound_long -> Daughter_intermediate_long   k1 = 0.123456789 1/s
Daughter_intermediate_long -> Granddaughter_product_long   k2 = 0.0123456789 1/s
start Parent_compound_long = 50.000001 mol/L
"""


@pytest.fixture
def screen(monkeypatch):
    buffers = {}

    def make(width):
        buffers["io"] = io.StringIO()
        console = Console(file=buffers["io"], width=width, no_color=True, highlight=False)
        monkeypatch.setattr(terminal, "console", lambda stderr=False: console)
        return buffers

    return make


@pytest.mark.parametrize("width", [60, 80, 120])
def test_solve_tables_keep_every_character(screen, width):
    out = screen(width)
    scheme = kinetics.parse(LONG)
    solution = kinetics.solve(scheme, np.linspace(0.0, 60.0, 6))
    summary = solution.summary("s")
    terminal.render_solution(solution, "s", summary=summary)
    text = out["io"].getvalue()
    lines = text.splitlines()
    assert max(cell_len(line) for line in lines) <= width
    assert "…" not in text
    for name in scheme.species_names:  # every name whole in the label column
        assert f"│ {name} " in text
    for row in solution.to_frame("s").to_numpy():
        for value in row:
            assert f" {value:.6g} " in text
    for entry in summary.values():
        for key in ("start", "half_life", "t_max", "c_max", "time_to_limit", "lifetime"):
            if entry[key] is not None:
                assert f" {entry[key]:.6g} " in text
    assert "Whole scheme" in text
    assert "  relaxation times [s]: 81, 8.1" in text


def test_one_column_wider_than_the_screen_folds_without_loss(screen):
    out = screen(30)
    terminal.print_fitted(
        terminal.console(), ["species", "value [mol/L]"], [["S" * 40, "1.23456789012345"]]
    )
    text = out["io"].getvalue()
    assert max(cell_len(line) for line in text.splitlines()) <= 30
    assert "…" not in text
    assert "".join(c for c in text if c == "S") == "S" * 40
    assert "1.23456789012345" in text


def test_a_quantity_without_a_value_shows_a_dash_not_an_empty_cell(screen):
    """A -> B: the parent has no maximum after t = 0 and the product no half-life
    (closed forms: A decays monotonically, B rises monotonically), shown as "—"."""
    out = screen(120)
    scheme = kinetics.parse("A -> B  k1 = 0.1 1/s\nstart A = 1 mol/L")
    solution = kinetics.solve(scheme, np.linspace(0.0, 60.0, 4))
    summary = solution.summary("s")
    assert summary["B"]["half_life"] is None
    terminal.render_summary(summary, "s", "mol/L", out=terminal.console())
    row_b = next(line for line in out["io"].getvalue().splitlines() if line.startswith("│ B "))
    assert "—" in row_b
