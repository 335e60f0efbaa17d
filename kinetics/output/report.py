"""A self-contained HTML report of one solved scheme.

One file, viewable offline: the styles are inline, the plots are embedded as
base64 PNG images, nothing is fetched from the network.  Every text that comes
from the user's file (title, species names, constants, the scheme itself) is
escaped with :func:`html.escape`.

Sections: provenance (software version, date, SHA-256 of the input), the caution
box, the scheme as written, the species graph, the inputs with units, the
balance verdict, the summary quantities with their definitions, the
concentration plot and the concentration table.
"""

from __future__ import annotations

import base64
import datetime as _dt
from html import escape
from typing import TYPE_CHECKING

from kinetics import files
from kinetics._version import __version__
from kinetics.output.overview import (
    CAUTION,
    RAMP_NOTE,
    certificate_sentence,
    event_table,
    inputs_tables,
)
from kinetics.output.summary_text import (
    DEFINITIONS,
    HINGE_HEADERS,
    REQUIREMENT_DEFINITION,
    SCHEME_DEFINITIONS,
    SUMMARY_COLUMNS,
    activity_lines,
    hinge_rows,
    requirement_lines,
    scheme_lines,
    summary_header,
    summary_notes,
)
from kinetics.time_text import in_time_unit

if TYPE_CHECKING:
    from kinetics.scheme import Scheme
    from kinetics.solution import Solution

__all__ = ["build_report", "write_report"]

_CSS = """
:root { --ink: #1d232a; --muted: #5b6570; --line: #d5dae0; --band: #f3f5f7; }
* { box-sizing: border-box; }
body { font-family: system-ui, -apple-system, "Segoe UI", Roboto, "DejaVu Sans", sans-serif;
       color: var(--ink); margin: 0; background: #fff; line-height: 1.45; }
main { max-width: 1180px; margin: 0 auto; padding: 24px 28px 48px; }
h1 { font-size: 1.55rem; margin: 0 0 6px; }
h2 { font-size: 1.15rem; margin: 30px 0 10px; padding-bottom: 4px;
     border-bottom: 2px solid var(--line); }
h3 { font-size: 1rem; margin: 18px 0 6px; }
.meta { color: var(--muted); font-size: 0.9rem; }
.meta code { font-size: 0.82rem; word-break: break-all; }
.caution { border: 2px solid #9a6a00; border-left-width: 10px; background: #fff7e0;
           padding: 12px 16px; margin: 18px 0; border-radius: 4px; }
.caution strong { display: block; margin-bottom: 4px; }
pre.scheme { background: var(--band); border: 1px solid var(--line); padding: 12px 14px;
             overflow-x: auto; font-size: 0.88rem; border-radius: 4px; }
table { border-collapse: collapse; font-size: 0.88rem; margin: 6px 0 12px; }
th, td { border: 1px solid var(--line); padding: 4px 8px; text-align: left;
         vertical-align: top; }
th { background: var(--band); font-weight: 600; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
.scroll { overflow: auto; max-height: 520px; border: 1px solid var(--line); }
.scroll table { margin: 0; }
.scroll th { position: sticky; top: 0; }
figure { margin: 10px 0 18px; }
figure img { max-width: 100%; height: auto; border: 1px solid var(--line); }
figcaption { color: var(--muted); font-size: 0.85rem; margin-top: 4px; }
.ok { color: #1b6e2a; font-weight: 600; }
.bad { color: #a11d1d; font-weight: 600; }
dl.defs dt { font-weight: 600; margin-top: 8px; }
dl.defs dd { margin: 2px 0 0 18px; color: #333; }
.notes li { margin: 2px 0; }
footer { margin-top: 36px; color: var(--muted); font-size: 0.82rem;
         border-top: 1px solid var(--line); padding-top: 8px; }
@media print { .scroll { max-height: none; overflow: visible; } main { max-width: none; } }
"""


def _num(value, digits: int = 6) -> str:
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, int | float):
        return f"{value:.{digits}g}"
    return escape(str(value))


def _table(headers: list[str], rows: list[list], numeric: set[int] | None = None) -> str:
    """An HTML table; ``rows`` hold already-formatted (escaped) cell strings."""
    numeric = numeric or set()
    head = "".join(f"<th>{escape(h)}</th>" for h in headers)
    body = []
    for row in rows:
        cells = "".join(
            f'<td class="num">{c}</td>' if i in numeric else f"<td>{c}</td>"
            for i, c in enumerate(row)
        )
        body.append(f"<tr>{cells}</tr>")
    return f"<table><thead><tr>{head}</tr></thead><tbody>{''.join(body)}</tbody></table>"


def _img(png: bytes, alt: str) -> str:
    data = base64.b64encode(png).decode("ascii")
    return f'<img src="data:image/png;base64,{data}" alt="{escape(alt)}">'


def _inputs_section(scheme: Scheme) -> str:
    tables = inputs_tables(scheme)
    parts = ["<h2>Inputs</h2>"]
    unit = scheme.concentration_unit
    if scheme.temperature is not None:
        t = scheme.temperature
        parts.append(f"<p>Temperature: {t:.6g} K ({t - 273.15:.6g} °C)</p>")
    parts.append(f"<p>Concentration unit: {escape(unit)}</p>")
    parts.append("<h3>Species</h3>")
    rows = []
    headers = list(tables["species"][0]) if tables["species"] else ["species"]
    for r in tables["species"]:
        rows.append([_num(r[h]) if h != "species" else escape(r[h]) for h in headers])
    parts.append(_table(headers, rows, numeric={3, 4, 5, 6}))
    parts.append("<h3>Rate constants (as given and in SI units)</h3>")
    rows = [
        [
            escape(c["constant"]),
            escape(c["as written"]),
            escape(c["unit as written"]),
            _num(c["SI value"], 10),
            escape(c["SI unit"]),
            _num(c["Ea [J/mol]"]),
            str(c["line"]),
        ]
        for c in tables["constants"]
    ]
    parts.append(
        _table(
            [
                "constant",
                "as written",
                "unit as written",
                "SI value",
                "SI unit",
                "Ea [J/mol]",
                "line",
            ],
            rows,
            numeric={3, 5, 6},
        )
    )
    parts.append("<h3>Steps (a reversible reaction gives two)</h3>")
    rows = [
        [escape(s["step"]), escape(s["constant"]), _num(s["effective k [1/s]"], 10), str(s["line"])]
        for s in tables["steps"]
    ]
    parts.append(_table(["step", "constant", "effective k [1/s]", "line"], rows, {2, 3}))
    return "\n".join(parts)


def _balance_section(scheme: Scheme) -> str:
    from kinetics.balance import mass_balance

    b = mass_balance(scheme)
    if not b.checked:
        verdict = "not checked (no formulas or molar masses given)"
    elif b.ok:
        verdict = '<span class="ok">balanced</span>'
    else:
        verdict = '<span class="bad">not balanced</span>'
    if scheme.allow_imbalance:
        verdict += " (the file declares <code>balance: lumped</code>)"
    parts = ["<h2>Balance</h2>", f"<p>Mass balance: {verdict}</p>"]
    rows = []
    for r in b.reactions:
        if r["atoms"] in ("balanced", "unbalanced"):
            detail = (
                " ".join(f"{escape(k)}{v:g}" for k, v in sorted(r["left"].items()))
                + " → "
                + " ".join(f"{escape(k)}{v:g}" for k, v in sorted(r["right"].items()))
            )
        else:
            detail = escape(r.get("reason", ""))
        rows.append([str(r["line"]), escape(r["equation"]), escape(r["atoms"]), detail])
    parts.append(_table(["line", "reaction", "atoms", "element counts"], rows, {0}))
    if b.max_relative_residual is not None:
        parts.append(
            f"<p>Largest relative residual of m·K = 0 (molar masses m): "
            f"{b.max_relative_residual:.3g}</p>"
        )
    if b.mass_changing_steps:
        items = "".join(
            f"<li>{escape(s['equation'])}: {escape(s['reason'])}</li>"
            for s in b.mass_changing_steps
        )
        parts.append(f"<p>Steps that change the tracked mass:</p><ul>{items}</ul>")
    return "\n".join(parts)


def _summary_cell(entry: dict, key: str) -> str:
    """The text of one summary quantity of a species: its number, or why there is none."""
    cell = _num(entry.get(key))
    if key == "t_max" and entry.get("t_max") is not None and entry.get("t_max_beyond_window"):
        cell += " (after the window)"
    if key == "limit" and entry.get("limit") is None and entry.get("unbounded"):
        cell = "unbounded"
    return cell


def _summary_section(summary: dict | None, time_unit: str, conc_unit: str) -> str:
    parts = ["<h2>Summary quantities (exact)</h2>"]
    if not summary:
        parts.append("<p>No summary quantities are available.</p>")
        return "\n".join(parts)
    headers = ["species"] + [summary_header(c, time_unit, conc_unit) for c in SUMMARY_COLUMNS]
    rows = []
    for name, entry in summary.items():
        rows.append([escape(name)] + [_summary_cell(entry, key) for key, _, _ in SUMMARY_COLUMNS])
    # two tables: the decision quantities, then time scales and areas
    split = [k for k, _, _ in SUMMARY_COLUMNS].index("time_to_limit") + 1
    for first, last, caption in ((1, split, "Main quantities"), (split, None, "Time scales")):
        cols = list(range(first, last if last is not None else len(headers)))
        part_rows = [[row[0]] + [row[i] for i in cols] for row in rows]
        part_headers = [headers[0]] + [headers[i] for i in cols]
        numeric = {j for j, i in enumerate(cols, 1) if SUMMARY_COLUMNS[i - 1][0] != "limit_kind"}
        parts.append(f"<h3>{caption}</h3>")
        parts.append(f'<div class="scroll">{_table(part_headers, part_rows, numeric)}</div>')
    notes = summary_notes(summary, time_unit, conc_unit)
    if notes:
        items = "".join(f"<li>{escape(n)}</li>" for n in notes)
        parts.append(f'<ul class="notes">{items}</ul>')
    lines = scheme_lines(getattr(summary, "scheme", None) or {}, time_unit, conc_unit)
    if lines:
        parts.append("<h3>Whole scheme</h3>")
        parts.append(_table(["quantity", "value"], [[escape(a), escape(b)] for a, b in lines]))
    checked = requirement_lines(getattr(summary, "requirements", None) or {}, time_unit)
    if checked:
        parts.append("<h3>Requirements</h3>")
        parts.append(_table(["requirement", "when"], [[escape(a), escape(b)] for a, b in checked]))
        label, _, rest = REQUIREMENT_DEFINITION.partition(": ")
        parts.append(f'<dl class="defs"><dt>{escape(label)}</dt><dd>{escape(rest)}</dd></dl>')
    parts.append('<h3>Definitions</h3><dl class="defs">')
    texts = [DEFINITIONS.get(key) for key, _header, _ in SUMMARY_COLUMNS]
    for text in [*texts, *SCHEME_DEFINITIONS.values()]:
        if text:
            label, _, rest = text.partition(": ")
            parts.append(f"<dt>{escape(label)}</dt><dd>{escape(rest)}</dd>")
    parts.append("</dl>")
    parts.append(
        "<p>Times are in "
        + escape(time_unit)
        + ", concentrations in "
        + escape(conc_unit)
        + "; an empty cell (—) means the quantity does not apply.</p>"
    )
    return "\n".join(parts)


#: Most operations listed in the timeline section (the first and the last ones).
REPORT_EVENTS = 200


def _timeline_section(scheme: Scheme, solution: Solution, time_unit: str) -> str:
    """The operations as written, what each moved, and the notes of the timeline."""
    parts = ["<h2>Timeline of operations</h2>"]
    written = []
    for s in scheme.timeline.statements:
        place = s.place
        where = f"{place.source}:{place.line}" if place.line else place.source
        written.append([escape(where), escape(place.text.strip() or type(s).__name__)])
    if scheme.timeline.volume is not None:
        parts.append(f"<p>Volume of the run at time 0: {scheme.timeline.volume * 1000:.6g} L</p>")
    if written and len(written) <= REPORT_EVENTS:
        parts.append(_table(["written at", "statement"], written))
    elif written:
        parts.append(f"<p>{len(written):,} timeline statements (see the scheme and record).</p>")
    rows = event_table(solution, time_unit)
    if rows:
        shown = rows if len(rows) <= REPORT_EVENTS else rows[:REPORT_EVENTS]
        headers = list(rows[0])
        cells = [[_num(r[h]) if h not in ("action", "species") else escape(r[h]) for h in headers]
                 for r in shown]  # fmt: skip
        numeric = {i for i, h in enumerate(headers) if h not in ("action", "species")}
        parts.append(
            f"<h3>Operations applied ({len(rows):,}"
            + (f"; the first {REPORT_EVENTS} shown" if len(shown) < len(rows) else "")
            + ")</h3>"
        )
        parts.append(f'<div class="scroll">{_table(headers, cells, numeric)}</div>')
        parts.append(
            "<p>A time of an addition or removal appears twice in the concentration table: "
            "just before and just after the operation. <em>change</em> is what the operation "
            "moved (negative: taken out, e.g. an eluate).</p>"
        )
    else:
        parts.append("<p>No operation was applied inside the window.</p>")
    if solution.ramp_estimate is not None:
        worst = float(solution.ramp_estimate.max(initial=0.0))
        parts.append(f"<p>Temperature ramps: largest estimate {worst:.2g}. {escape(RAMP_NOTE)}</p>")
    if solution.notes:
        items = "".join(f"<li>{escape(in_time_unit(n, time_unit))}</li>" for n in solution.notes)
        parts.append(f'<ul class="notes">{items}</ul>')
    return "\n".join(parts)


def _concentration_table(solution: Solution, time_unit: str, species) -> str:
    frame = solution.to_frame(time_unit)
    if species:
        unit = solution.concentration_unit
        frame = frame[[frame.columns[0]] + [f"{n} [{unit}]" for n in species]]
    values = frame.to_numpy()
    rows = [[f"{v:.8g}" for v in row] for row in values]
    table = _table([str(c) for c in frame.columns], rows, set(range(len(frame.columns))))
    return f'<div class="scroll">{table}</div>'


def build_report(
    scheme: Scheme,
    solution: Solution,
    summary: dict | None,
    time_unit: str,
    *,
    sha256: str = "",
    settings: dict | None = None,
    species: list[str] | None = None,
    title: str | None = None,
    plot_solution: Solution | None = None,
    generated: _dt.datetime | None = None,
    sensitivity: dict | None = None,
) -> str:
    """The HTML text of the report.

    Parameters
    ----------
    scheme : Scheme
    solution : Solution
        The solved table (its times are the rows of the concentration table).
    summary : dict or None
        Species -> quantities in ``time_unit`` (see
        :func:`kinetics.analysis.solution_summary.summary_in_units`).
    time_unit : str
        Unit of time throughout the report.
    sha256 : str, optional
        Hex digest of the scheme file as read.
    settings : dict, optional
        The grid as asked for (shown under provenance).
    species : list of str, optional
        Species to plot and tabulate (default: all).
    title : str, optional
        Overrides the scheme's title.
    plot_solution : Solution, optional
        A finer solution used for the plot only (default: ``solution``).
    generated : datetime, optional
        Date of the report (default: now, UTC).
    sensitivity : dict, optional
        Sensitivities of the summary quantities: the ranked table "what this answer hinges
        on" (:func:`kinetics.analysis.summary_sensitivity.summary_sensitivities`).

    Returns
    -------
    str
        One complete HTML document.
    """
    heading = title if title is not None else (scheme.title or scheme.source)
    when = (generated or _dt.datetime.now(_dt.UTC)).strftime("%Y-%m-%d %H:%M:%S UTC")
    parts = _head(heading, scheme, solution, sha256, settings or {}, when)
    parts.append(_caution_box())
    parts.append("<h2>Scheme as written</h2>")
    parts.append(f'<pre class="scheme">{escape(scheme.text.rstrip())}</pre>')
    parts.append(_graph_section(scheme))
    parts.append(_inputs_section(scheme))
    parts.append(_balance_section(scheme))
    if solution.after is not None:
        parts.append(_timeline_section(scheme, solution, time_unit))
    parts.append(_summary_section(summary, time_unit, solution.concentration_unit))
    parts.append(_activity_section(solution, summary, time_unit))
    parts.append(_hinge_section(sensitivity))
    plotted = plot_solution or solution
    unit = solution.concentration_unit
    parts.append(_plot_section(plotted, time_unit, unit, summary, species, heading))
    parts.append(
        f"<h3>Table ({len(solution.times)} points; exact values, 8 significant digits)</h3>"
    )
    sentence = certificate_sentence(solution)
    if sentence is not None:
        parts.append(f'<p class="certificate">{escape(sentence)}</p>')
    parts.append(_concentration_table(solution, time_unit, species))
    parts.append(
        f"<footer>kinetics {escape(__version__)} · {escape(when)} · input SHA-256 "
        f"{escape(sha256 or 'not recorded')}</footer>"
    )
    parts.append("</main></body></html>")
    return "\n".join(parts) + "\n"


def _activity_section(solution: Solution, summary: dict | None, time_unit: str) -> str:
    """Activity maxima and equilibria of a solution in activity units ("" otherwise)."""
    from kinetics.analysis.solution_summary import activity_summary

    lines = activity_lines(activity_summary(solution, summary), time_unit)
    if not lines:
        return ""
    rows = [[escape(a), escape(b)] for a, b in lines]
    return "<h3>Activity maxima and equilibria</h3>\n" + _table(["quantity", "value"], rows)


def _hinge_section(sensitivity: dict | None) -> str:
    """The ranked table "what this answer hinges on" ("" without sensitivities)."""
    from kinetics.analysis.summary_sensitivity import ranked

    rows = hinge_rows(ranked(sensitivity))
    if not rows:
        return ""
    cells = [[escape(cell) for cell in row] for row in rows]
    return (
        "<h3>What this answer hinges on</h3>\n<p>Normalised sensitivities ∂ln Q/∂ln p of "
        "the summary quantities, exact (Fréchet derivative of the exponential, implicit "
        "differentiation at crossings and maxima), largest first.</p>\n"
        + _table(list(HINGE_HEADERS), cells, {0})
    )


def _head(heading: str, scheme: Scheme, solution: Solution, sha256, settings, when) -> list:
    """The document head and the provenance lines (file, hash, software, date, grid)."""
    grid = ", ".join(f"{escape(str(k))} = {escape(str(v))}" for k, v in settings.items())
    return [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        '<link rel="icon" href="data:,">',
        f"<title>{escape(heading)} — kinetics report</title>",
        f"<style>{_CSS}</style></head><body><main>",
        f"<h1>{escape(heading)}</h1>",
        '<p class="meta">',
        f"Scheme file: <code>{escape(scheme.source)}</code><br>",
        f"SHA-256 of the file: <code>{escape(sha256 or 'not recorded')}</code><br>",
        f"Software: kinetics {escape(__version__)} · generated {escape(when)}<br>",
        f"Time grid: {grid or '—'} ({len(solution.times)} points)",
        "</p>",
    ]


def _caution_box() -> str:
    lines = CAUTION.splitlines()
    return (
        '<div class="caution" role="note"><strong>'
        + escape(lines[0])
        + "</strong>"
        + "<br>".join(escape(line) for line in lines[1:])
        + "<br>SAFETY.md (printed by <code>kinetics safety</code>) states the limits of the "
        "model in full; defer to local codes, licensed practice and your organisation's "
        "safety review.</div>"
    )


def _graph_section(scheme: Scheme) -> str:
    from kinetics.output.graph_figure import species_graph_figure
    from kinetics.output.plotting import figure_bytes

    graph = species_graph_figure(scheme)
    if graph is None:
        return (
            "<h2>Species graph</h2>\n<p>The scheme has too many species for a readable drawing.</p>"
        )
    return (
        "<h2>Species graph</h2>\n<figure>"
        + _img(figure_bytes(graph, "png", dpi=110), "species graph")
        + "<figcaption>One box per species, one arrow per step, labelled with its rate "
        "constant; dashed boxes are species held in excess.</figcaption></figure>"
    )


def _plot_section(solution: Solution, time_unit: str, unit: str, summary, species, heading):
    from kinetics.output.plotting import concentration_figure, figure_bytes

    figure = concentration_figure(solution, time_unit, summary, species=species, title=heading)
    return (
        f"<h2>{'Activities' if solution.activity_unit else 'Concentrations'}</h2>\n"
        '<figure id="concentration-plot">'
        + _img(figure_bytes(figure, "png", dpi=110), f"{solution.quantity} against time")
        + f"<figcaption>{solution.quantity.capitalize()} [{escape(unit)}] against time "
        f"[{escape(time_unit)}], "
        "linear scale (left) and logarithmic scale (right). Stars mark maxima, open circles "
        "half-lives.</figcaption></figure>"
    )


def write_report(path, html: str) -> None:
    """Write the report text to ``path`` (UTF-8), atomically."""
    with files.atomic_path(path) as tmp:
        tmp.write_text(html, encoding="utf-8")
