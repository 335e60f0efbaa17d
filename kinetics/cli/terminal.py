"""Terminal rendering with rich: tables with units in every header.

Colour is used only when writing to a terminal (rich detects it; ``NO_COLOR``
is honoured).  This module prints; the library modules never do.  Tables are built
from plain arrays and lists (the command line never needs pandas).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Literal

from rich.console import Console
from rich.table import Table

if TYPE_CHECKING:
    from kinetics.scheme import Scheme
    from kinetics.solution import Solution

__all__ = [
    "console",
    "print_fitted",
    "progress",
    "render_check",
    "render_solution",
    "render_summary",
]

#: Width used when stdout is not a terminal: wide enough never to cut a column.
PIPE_WIDTH = 10_000


def console(stderr: bool = False) -> Console:
    """A console on stdout (or stderr): colour only on a terminal, no truncation in pipes.

    When the stream is not a terminal (a file, a pipe, a test), the width is set
    very large so that tables are never wrapped or truncated, and no colour codes
    are written.
    """
    probe = Console(stderr=stderr)
    if probe.is_terminal:
        return Console(stderr=stderr, highlight=False, soft_wrap=False)
    return Console(stderr=stderr, highlight=False, soft_wrap=False, width=PIPE_WIDTH, no_color=True)


class _Progress:
    """A progress bar on stderr that appears only if the work lasts over ``delay`` seconds."""

    def __init__(self, total: int, description: str, delay: float) -> None:
        import sys
        import threading

        from rich.progress import (
            BarColumn,
            Progress,
            TextColumn,
            TimeElapsedColumn,
            TimeRemainingColumn,
        )

        self._enabled = console(stderr=True).is_terminal
        self._progress = Progress(
            TextColumn("{task.description}"),
            BarColumn(),
            TextColumn("{task.completed}/{task.total}"),
            TimeElapsedColumn(),
            TimeRemainingColumn(),
            console=Console(stderr=True),
            transient=True,
            # stdout passes through the bar only when it is the same screen; a table
            # redirected to a file or a pipe must never be diverted to stderr
            redirect_stdout=sys.stdout.isatty(),
        )
        self._task = self._progress.add_task(description, total=total)
        self._started = False
        self._timer = threading.Timer(delay, self._start) if self._enabled else None

    def _start(self) -> None:
        self._started = True
        self._progress.start()

    def __enter__(self):
        if self._timer is not None:
            self._timer.daemon = True
            self._timer.start()
        return self

    def step(self, description: str | None = None) -> None:
        """Mark one piece of work as done (and name the next one)."""
        if description is None:
            self._progress.advance(self._task)
        else:
            self._progress.update(self._task, advance=1, description=description)

    def describe(self, description: str) -> None:
        """Name the piece of work now running."""
        self._progress.update(self._task, description=description)

    def __exit__(self, *exc) -> None:
        if self._timer is not None:
            self._timer.cancel()
        if self._started:
            self._progress.stop()


def progress(total: int, description: str = "working", delay: float = 0.8) -> _Progress:
    """A context manager with ``step()``/``describe()``: a progress bar on stderr.

    Shown only when stderr is a terminal and the work lasts longer than ``delay``
    seconds; quiet otherwise (pipes, files, scripts, tests).
    """
    return _Progress(total, description, delay)


def _num(x, digits: int = 6) -> str:
    if x is None:
        return "—"
    return f"{x:.{digits}g}"


def render_check(scheme: Scheme, report: dict, full_tables: bool = False) -> None:
    """Print the ``check`` summary: species, steps, balance and structure.

    Parameters
    ----------
    scheme : Scheme
    report : dict
        :func:`kinetics.output.overview.check_report` of ``scheme``.
    full_tables : bool, optional
        Print every table however long.  Otherwise a scheme with more than
        :data:`CHECK_TABLE_ROWS` species or steps gets an overview: counts of
        species, roles, steps and components, the balance verdict and every
        problem found, and where to find the rest (``--full-tables``, ``--json``).
    """
    from kinetics.output.overview import CHECK_TABLE_ROWS

    out = console()
    title = report["title"] or report["source"]
    out.print(f"[bold]{_escape(title)}[/bold]")
    unit = report["concentration_unit"]
    if report["temperature_K"] is not None:
        t = report["temperature_K"]
        out.print(f"temperature: {t:.6g} K ({t - 273.15:.6g} °C)")
    rows = max(len(report["species_details"]), len(report["reactions"]))
    brief = rows > CHECK_TABLE_ROWS and not full_tables
    if brief:
        _print_counts(report, out)
    else:
        _print_check_tables(report, out)
    _render_rate_matrix(report, out)

    if report["feed"]:
        if brief and len(report["feed"]) > CHECK_TABLE_ROWS:
            out.print(f"feed: {len(report['feed'])} species fed")
        else:
            feeds = ", ".join(f"{_escape(k)} {_num(v)} {unit}/s" for k, v in report["feed"].items())
            out.print(f"feed: {feeds}")
    _print_balance(report["balance"], out, brief)
    if brief:
        _print_network_counts(report["network"], out)
    else:
        _print_network(report["network"], out)


def _print_check_tables(report: dict, out: Console) -> None:
    """The species and steps tables of ``check``, one row each."""
    unit = report["concentration_unit"]
    table = Table(title="Species (matrix order)", title_justify="left")
    for header in ("species", "role", "formula", "molar mass [g/mol]", f"start [{unit}]"):
        table.add_column(_escape(header))
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
        steps.add_column(_escape(header))
    for r in report["reactions"]:
        steps.add_row(
            str(r["line"]),
            _escape(r["equation"]),
            _escape(r["constant"]),
            _escape(r["given"]),
            _num(r["k_per_s"], 8),
        )
    out.print(steps)


def _print_counts(report: dict, out: Console) -> None:
    """The overview of a large scheme instead of its tables: counts and ranges."""
    from collections import Counter

    from kinetics.output.overview import CHECK_TABLE_ROWS

    details, steps = report["species_details"], report["reactions"]
    out.print(
        f"[bold]Overview[/bold]: {len(details)} species and {len(steps)} steps; tables are "
        f"printed for up to {CHECK_TABLE_ROWS} rows (--full-tables prints them all, "
        "--json gives everything as one object)"
    )
    roles = Counter(d["role"] for d in details)
    out.print("species: " + ", ".join(f"{n} {role}" for role, n in roles.most_common()))
    with_formula = sum(1 for d in details if d["formula"])
    with_mass = sum(1 for d in details if d["molar_mass_g_per_mol"] is not None)
    started = sum(1 for d in details if d["excess"] is None and d["start"])
    out.print(
        f"  {started} with a start value, {with_formula} with a formula, "
        f"{with_mass} with a molar mass"
    )
    reactions = len(report["balance"]["reactions"])
    reverse = sum(1 for r in steps if r["direction"] == "reverse")
    out.print(
        f"steps: {len(steps)} from {reactions} reactions ({reverse} reversible), "
        f"{len(report['constants'])} rate constants"
    )
    rates = [r["k_per_s"] for r in steps if r["k_per_s"] is not None]
    if rates:
        out.print(f"  k from {_num(min(rates))} to {_num(max(rates))} 1/s")


def _balance_verdict(balance: dict) -> str:
    """Balanced (where checked), not balanced, or not checked: the words of the verdict."""
    if not balance["checked"]:
        return "not checked (no formulas or molar masses given)"
    if not balance["ok"]:
        return "[red]NOT balanced[/red]"
    verdict = "[green]balanced[/green]"
    unchecked = [r for r in balance["reactions"] if r["atoms"] == "not checked"]
    if unchecked:
        verdict += f" where checked ({len(unchecked)} of {len(balance['reactions'])} "
        verdict += "reactions not checked)"
    return verdict


def _print_balance(balance: dict, out: Console, brief: bool = False) -> None:
    """The balance verdict, every problem it found, and the mass exchanged with excess."""
    out.print(f"mass balance: {_balance_verdict(balance)}")
    for r in balance["reactions"]:
        if r["atoms"] == "not checked" and balance["checked"]:
            out.print(f"  line {r['line']}: {_escape(r['equation'])}: {_escape(r['reason'])}")
        if r["atoms"] == "unbalanced":
            left = " ".join(f"{k}{v:g}" for k, v in sorted(r["left"].items()))
            right = " ".join(f"{k}{v:g}" for k, v in sorted(r["right"].items()))
            out.print(f"  line {r['line']}: {_escape(r['equation'])}: left {left}, right {right}")
    if balance["max_relative_residual"] is not None:
        out.print(f"  largest relative residual of m·K = 0: {balance['max_relative_residual']:.3g}")
    changing = balance["mass_changing_steps"]
    exchanging = 0
    for step in changing:
        if brief and "creates or destroys" not in step["reason"]:
            exchanging += 1  # not a problem: mass taken from or given to excess species
            continue
        out.print(f"  {_escape(step['equation'])}: {_escape(step['reason'])}")
    if exchanging:
        verb = "step exchanges" if exchanging == 1 else "steps exchange"
        out.print(
            f"  {exchanging} {verb} mass with species held in excess "
            "(listed by --full-tables and --json)"
        )


def _print_network(net: dict, out: Console) -> None:
    """Reversible pairs, cycles and components, each listed."""
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


def _print_network_counts(net: dict, out: Console) -> None:
    """Reversible pairs, cycles and components of a large scheme, counted."""
    if net["reversible_pairs"]:
        out.print(f"reversible pairs: {len(net['reversible_pairs'])}")
    if net["cycles"]:
        out.print(f"cycles: {len(net['cycles'])} (listed by --full-tables and --json)")
    for key, label in (
        ("strongly_connected_components", "strongly connected components"),
        ("sub_schemes", "disconnected sub-schemes"),
    ):
        if net[key]:
            sizes = sorted((len(c) for c in net[key]), reverse=True)
            out.print(f"{label}: {len(sizes)}, the largest with {sizes[0]} species")


#: Summary columns shown in the terminal (the files carry all of them).
TERMINAL_SUMMARY = (
    "start",
    "half_life",
    "time_to_90_percent_remaining",
    "t_max",
    "c_max",
    "limit",
    "time_to_limit",
    "lifetime",
)


def _width(text: str) -> int:
    from rich.cells import cell_len

    return cell_len(text)


def print_fitted(
    out: Console,
    headers: list[str],
    rows: list[list[str]],
    left: int = 1,
    align: Literal["left", "right"] = "left",
) -> None:
    """Print a table whose cells are never cut, in parts as wide as the console.

    Columns that do not fit the console's width go to a further table below, each part
    repeating the first ``left`` (label) columns.

    Each column is as wide as its widest cell (headers wrap at spaces); only a column wider
    than the console on its own folds its text onto further lines, keeping every character.

    Parameters
    ----------
    out : rich.console.Console
    headers : list of str
        Plain text (escaped here).
    rows : list of list of str
        Plain text cells.
    left : int
        Label columns, repeated in every part, aligned by ``align``; the others right.
    align : {"left", "right"}
    """
    widths, full = [], []
    for j, header in enumerate(headers):
        cells = max((_width(row[j]) for row in rows), default=1)
        word = max((_width(w) for w in header.split()), default=1)
        widths.append(max(cells, word, min(_width(header), _HEADER_WIDTH)))
        full.append(max(cells, _width(header)))
    if 1 + sum(w + 3 for w in full) <= out.width:
        widths = full  # everything fits on one line per row, headers too
    # a column takes its width, one space of padding on each side and one border; the
    # labels give way (fold) first, so that they and the widest other column fit
    widest = max(1, out.width - 4)
    widths = [min(w, widest) for w in widths]
    other = max((w + 3 for w in widths[left:]), default=0)
    spare = out.width - 1 - other - 3 * left
    if left and sum(widths[:left]) > spare:
        widths[:left] = [max(1, spare // left)] * left
    cost = [w + 3 for w in widths]
    budget = out.width - 1 - sum(cost[:left])
    groups: list[list[int]] = []
    for j in range(left, len(headers)):
        if groups and sum(cost[k] for k in groups[-1]) + cost[j] <= budget:
            groups[-1].append(j)
        else:
            groups.append([j])
    for group in groups or [[]]:
        table = Table()
        for j in [*range(left), *group]:
            table.add_column(
                _escape(headers[j]),
                justify=align if j < left else "right",
                width=widths[j],
                overflow="fold",
            )
        for row in rows:
            table.add_row(*(_escape(row[j]) for j in [*range(left), *group]))
        out.print(table)


#: Headers up to this width stay on one line when the cells are narrower.
_HEADER_WIDTH = 14


def render_summary(summary: dict, time_unit: str, conc_unit: str, out=None) -> None:
    """Print the summary quantities as tables with units in every header.

    Then the whole-scheme quantities (relaxation times, selectivity...) of
    :attr:`Summary.scheme`.
    """
    from kinetics.output.summary_text import (
        SUMMARY_COLUMNS,
        requirement_lines,
        scheme_lines,
        summary_header,
        summary_notes,
    )

    out = out or console()
    out.print("[bold]Summary[/bold] (on the exact solution, not read off the grid)")
    columns = [c for c in SUMMARY_COLUMNS if c[0] in TERMINAL_SUMMARY]
    headers = ["species"] + [summary_header(c, time_unit, conc_unit) for c in columns]
    rows = []
    for name, entry in summary.items():
        cells = [str(name)]
        for key, _, _ in columns:
            value = entry.get(key)
            text = _cell(value)
            if key == "t_max" and value is not None and entry.get("t_max_beyond_window"):
                text += " (after window)"
            if key == "limit" and value is None and entry.get("unbounded"):
                text = "unbounded"
            cells.append(text)
        rows.append(cells)
    print_fitted(out, headers, rows)
    for note in summary_notes(summary, time_unit, conc_unit):
        out.print(f"  note: {_escape(note)}")
    lines = scheme_lines(getattr(summary, "scheme", None) or {}, time_unit, conc_unit)
    if lines:
        out.print("[bold]Whole scheme[/bold]")
        for label, text in lines:
            out.print(f"  {_escape(label)}: {_escape(text)}")
    checked = requirement_lines(getattr(summary, "requirements", None) or {}, time_unit)
    if checked:
        out.print("[bold]Requirements[/bold] (on the exact solution)")
        for label, text in checked:
            out.print(f"  {_escape(label)}: {_escape(text)}")


def render_solution(
    solution: Solution,
    time_unit: str,
    max_rows: int = 25,
    summary: dict | None = None,
    species: list[str] | None = None,
    max_columns: int = 12,
    activity: dict | None = None,
    sensitivity: dict | None = None,
) -> None:
    """Print the summary table (when given) and the concentration table (about ``max_rows`` rows).

    Parameters
    ----------
    solution : Solution
    time_unit : str
        Unit of the time column and of the times in ``summary``.
    max_rows : int, optional
        The table is thinned to about this many rows (first and last always shown).
    summary : dict, optional
        Species -> quantities in ``time_unit`` (see
        :func:`kinetics.analysis.solution_summary.summary_in_units`).
    species : list of str, optional
        Columns to show (default: every species, at most ``max_columns`` of them).
    max_columns : int, optional
        Without ``species``, show only the first this many species and say so.
    activity : dict, optional
        What a solution in activity units adds to the summary
        (:func:`kinetics.analysis.solution_summary.activity_summary`).
    sensitivity : dict, optional
        Sensitivities of the summary quantities, printed ranked
        (:func:`kinetics.analysis.summary_sensitivity.ranked`).
    """
    from kinetics.output.summary_text import activity_lines

    out = console()
    hidden = 0
    if not species and len(solution.species) > max_columns:
        hidden = len(solution.species) - max_columns
        species = solution.species[:max_columns]
    if summary:
        from kinetics.analysis.solution_summary import Summary

        kept = {k: v for k, v in summary.items() if not species or k in species}
        shown = Summary(
            kept, getattr(summary, "scheme", None), getattr(summary, "requirements", None)
        )
        render_summary(shown, time_unit, solution.concentration_unit, out)
    lines = activity_lines(activity, time_unit)
    if lines:
        out.print("[bold]Activity maxima and equilibria[/bold]")
        for label, text in lines:
            out.print(f"  {_escape(label)}: {_escape(text)}")
    if sensitivity is not None:
        _render_hinges(sensitivity, out)
    _render_table(solution, time_unit, species or solution.species, max_rows, out)
    if hidden:
        out.print(
            f"{hidden} more species not shown; choose columns with --species, "
            "or write them all with --out table.csv"
        )
    if solution.after is not None:
        render_events(solution, time_unit, out)


def _render_hinges(sensitivity: dict, out: Console) -> None:
    """Print the sensitivities of the summary quantities, largest first."""
    from kinetics.analysis.summary_sensitivity import ranked
    from kinetics.output.summary_text import HINGE_HEADERS, hinge_rows

    out.print("[bold]What this answer hinges on[/bold] (exact ∂ln Q/∂ln p, largest first)")
    rows = hinge_rows(ranked(sensitivity))
    if rows:
        print_fitted(out, list(HINGE_HEADERS), rows, left=2)
    else:
        out.print("  no summary quantity depends on a parameter")


def _render_table(
    solution: Solution, time_unit: str, shown_species: list[str], max_rows: int, out: Console
) -> None:
    """Print the concentration table, thinned to about ``max_rows`` rows (first and last kept).

    The table is made straight from the arrays (the command line never needs pandas).
    """
    from kinetics.units import time_factor

    unit = solution.concentration_unit
    headers = [f"time [{time_unit}]"] + [f"{name} [{unit}]" for name in shown_species]
    columns = [solution.times / time_factor(time_unit)]
    columns += [solution.concentrations[:, solution.species.index(name)] for name in shown_species]
    n = len(solution.times)
    step = max(1, (n - 1) // (max_rows - 1)) if n > max_rows else 1
    rows = list(range(0, n, step))
    if rows[-1] != n - 1:
        rows.append(n - 1)
    title = f"{'Activities' if solution.activity_unit else 'Concentrations'}[/bold] (exact)"
    if step > 1:
        title += f": {len(rows)} of {n} points shown (1 in {step}); --out writes them all"
    out.print(f"[bold]{title}")
    after = solution.after.tolist() if solution.after is not None else [False] * n
    cells = [
        [f"{c[i]:.6g}" + ("+" if k == 0 and after[i] else "") for k, c in enumerate(columns)]
        for i in rows
    ]
    print_fitted(out, headers, cells, align="right")
    if any(after):
        out.print("t+ : just after the operations at time t (the row before is just before them)")


def render_events(solution: Solution, time_unit: str, out: Console, max_rows: int = 25) -> None:
    """Print the operations of a run (what each moved) and the notes about the timeline."""
    from kinetics.output.overview import event_table
    from kinetics.time_text import in_time_unit

    rows = event_table(solution, time_unit)
    if rows:
        shown = rows if len(rows) <= max_rows else rows[: max_rows - 1] + rows[-1:]
        title = "Operations[/bold] (what each moved, exact)"
        if len(shown) < len(rows):
            title += f": {len(shown)} of {len(rows)} shown; --out table.csv writes them all"
        out.print(f"[bold]{title}")
        always = list(rows[0])[:4]  # time, action, species, change
        headers = [
            h for h in rows[0] if h in always or any(r[h] not in (None, "", 0.0) for r in rows)
        ]
        cells = [[_cell(r[h]) for h in headers] for r in shown]
        print_fitted(out, headers, cells, align="right")
    if solution.ramp_estimate is not None:
        worst = float(solution.ramp_estimate.max(initial=0.0))
        out.print(
            f"temperature ramps: estimated error of the sub-steps up to {worst:.2g} (relative; "
            "an estimate beside the certified bound, see --json ramp_estimate)"
        )
    for note in solution.notes:
        out.print(f"note: {_escape(in_time_unit(note, time_unit))}")


def _cell(value) -> str:
    """One table cell: "—" for no value, yes/no, six significant digits, markup escaped."""
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return f"{value:.6g}"
    return _escape(str(value))


def _escape(text: str) -> str:
    from rich.markup import escape

    return escape(str(text))


def _render_rate_matrix(report: dict, out: Console, max_species: int = 12) -> None:
    """Print K [1/s] for small schemes (column j: what happens to species j)."""
    names = report["species"]
    K = report["rate_matrix"]
    if K is None or len(names) > max_species:
        out.print(
            f"rate matrix K: {len(names)} x {len(names)} (shown for up to {max_species} "
            "species; all entries are in check --json)"
        )
        return
    out.print(r"[bold]Rate matrix K \[1/s][/bold] (dc/dt = K c + f; column = species consumed)")
    table = Table()
    table.add_column("", justify="left")
    for name in names:
        table.add_column(_escape(name), justify="right")
    for name, row in zip(names, K, strict=True):
        table.add_row(_escape(name), *("0" if v == 0 else f"{v:.4g}" for v in row))
    out.print(table)
