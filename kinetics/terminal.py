"""Terminal rendering with rich: tables with units in every header.

Colour is used only when writing to a terminal (rich detects it; ``NO_COLOR``
is honoured).  This module prints; the library modules never do.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from rich.console import Console
from rich.table import Table

if TYPE_CHECKING:
    from .scheme import Scheme
    from .solution import Solution

__all__ = ["console", "render_check", "render_solution"]


def console() -> Console:
    """A console on stdout (plain text when stdout is not a terminal)."""
    return Console(highlight=False, soft_wrap=False)


def _num(x, digits: int = 6) -> str:
    if x is None:
        return "—"
    return f"{x:.{digits}g}"


def render_check(scheme: Scheme, report: dict) -> None:
    """Print the ``check`` summary: species, steps, balance and structure."""
    out = console()
    title = report["title"] or report["source"]
    out.print(f"[bold]{_escape(title)}[/bold]")
    unit = report["concentration_unit"]
    if report["temperature_K"] is not None:
        t = report["temperature_K"]
        out.print(f"temperature: {t:.6g} K ({t - 273.15:.6g} °C)")

    table = Table(title="Species (matrix order)", title_justify="left")
    for header in ("species", "role", "formula", "molar mass [g/mol]", f"start [{unit}]"):
        table.add_column(header)
    for d in report["species_details"]:
        start = d["start"] if d["excess"] is None else d["excess"]
        label = _num(start) if d["excess"] is None else f"{_num(start)} (held)"
        table.add_row(
            _escape(d["name"]),
            d["role"],
            _escape(d["formula"] or "—"),
            _num(d["molar_mass_g_per_mol"]),
            label,
        )
    out.print(table)

    steps = Table(title="Steps", title_justify="left")
    for header in ("line", "step", "constant", "as written", "k [1/s]"):
        steps.add_column(header)
    for r in report["reactions"]:
        steps.add_row(
            str(r["line"]),
            _escape(r["equation"]),
            _escape(r["constant"]),
            _escape(r["given"]),
            _num(r["k_per_s"], 8),
        )
    out.print(steps)

    if report["feed"]:
        feeds = ", ".join(f"{_escape(k)} {_num(v)} {unit}/s" for k, v in report["feed"].items())
        out.print(f"feed: {feeds}")

    balance = report["balance"]
    if not balance["checked"]:
        verdict = "not checked (no formulas or molar masses given)"
    elif balance["ok"]:
        verdict = "[green]balanced[/green]"
    else:
        verdict = "[red]NOT balanced[/red]"
    out.print(f"mass balance: {verdict}")
    for r in balance["reactions"]:
        if r["atoms"] == "unbalanced":
            left = " ".join(f"{k}{v:g}" for k, v in sorted(r["left"].items()))
            right = " ".join(f"{k}{v:g}" for k, v in sorted(r["right"].items()))
            out.print(f"  line {r['line']}: {_escape(r['equation'])}: left {left}, right {right}")
    if balance["max_relative_residual"] is not None:
        out.print(f"  largest relative residual of m·K = 0: {balance['max_relative_residual']:.3g}")
    for step in balance["mass_changing_steps"]:
        out.print(f"  {_escape(step['equation'])}: {_escape(step['reason'])}")

    net = report["network"]
    if net["reversible_pairs"]:
        out.print(
            "reversible pairs: " + ", ".join(" <=> ".join(p) for p in net["reversible_pairs"])
        )
    if net["cycles"]:
        out.print("cycles: " + "; ".join(" -> ".join(c + c[:1]) for c in net["cycles"]))
    if net["strongly_connected_components"]:
        comps = "; ".join("{" + ", ".join(c) + "}" for c in net["strongly_connected_components"])
        out.print("strongly connected components: " + comps)
    if net["sub_schemes"]:
        out.print(
            "disconnected sub-schemes: "
            + "; ".join("{" + ", ".join(c) + "}" for c in net["sub_schemes"])
        )


def render_solution(solution: Solution, time_unit: str, max_rows: int = 25) -> None:
    """Print the concentration table (thinned to about ``max_rows`` rows)."""
    out = console()
    frame = solution.to_frame(time_unit)
    n = len(frame)
    step = max(1, (n - 1) // (max_rows - 1)) if n > max_rows else 1
    rows = list(range(0, n, step))
    if rows[-1] != n - 1:
        rows.append(n - 1)
    table = Table(
        title=f"Concentrations ({n} points; every {step}. shown)" if step > 1 else "Concentrations"
    )
    for column in frame.columns:
        table.add_column(_escape(column), justify="right")
    for i in rows:
        table.add_row(*(f"{v:.6g}" for v in frame.iloc[i]))
    out.print(table)


def _escape(text: str) -> str:
    from rich.markup import escape

    return escape(str(text))
