"""The summary quantities in words: headers, definitions, lines, rows and notes.

They are the column headers with units, the definitions, the whole-scheme lines, the
spreadsheet rows and the notes under a summary table.

The terminal, the spreadsheet and the report all word a summary with these, so that a
quantity reads the same wherever it is shown.
"""

from __future__ import annotations

__all__ = [
    "DEFINITIONS",
    "HINGE_HEADERS",
    "REQUIREMENT_DEFINITION",
    "SCHEME_DEFINITIONS",
    "SUMMARY_COLUMNS",
    "activity_lines",
    "hinge_rows",
    "requirement_lines",
    "scheme_lines",
    "scheme_rows",
    "summary_header",
    "summary_notes",
    "summary_rows",
]

#: Plain-words definitions of the summary quantities (README and the report use these).
DEFINITIONS = {
    "start": "Start: the concentration at time zero, as given in the scheme (0 when not listed).",
    "half_life": (
        "Half-life: the first time at which a species that has a start value falls to half of "
        "it, found by root finding on the exact solution. Empty, with a note, when it never "
        "falls that low (for example a reversible step whose equilibrium lies above half)."
    ),
    "time_to_90_percent_remaining": (
        "90 % left at: the first time at which 90 % of the start value remains (the shelf-life "
        "meaning of 't90'; ln(10/9)/k for a single first-order decay)."
    ),
    "time_to_10_percent_remaining": (
        "10 % left at: the first time at which only 10 % of the start value remains, i.e. 90 % "
        "has gone (the degradation-study meaning of 'DT90'; ln(10)/k for a single decay)."
    ),
    "t_max": (
        "t_max: for a species that is formed and later consumed, the time of its highest "
        "concentration over all t >= 0, located where its exact rate of change is zero; it "
        "may lie after the end of the chosen time window (flagged)."
    ),
    "c_max": "c_max: the concentration of that species at t_max.",
    "yield_at_max": (
        "Yield at max: c_max divided by the total start concentration of the starting "
        "materials (a fraction of material only for 1:1 stoichiometry)."
    ),
    "limit": (
        "Limit: the concentration approached as t goes to infinity (equilibrium of reversible "
        "steps, accumulation in end products, a steady state kept up by a feed); empty when "
        "the species grows without bound."
    ),
    "limit_kind": (
        "Limit kind: transient (decays to zero), end product, equilibrium, steady state, "
        "inert, not formed, or unbounded."
    ),
    "time_to_limit": (
        "Within 1 % of limit at: the time after which the species stays within 1 % of its "
        "limit (a species whose limit is zero is compared with 1 % of the largest limit)."
    ),
    "lifetime": (
        "Lifetime 1/Σk: one over the sum of the rate constants of the steps that consume the "
        "species; how long a molecule survives on average once formed."
    ),
    "first_order_half_life": (
        "ln2/Σk: ln 2 times the lifetime; equals the half-life only for a species that is "
        "consumed by first-order steps and not formed again."
    ),
    "area_to_window_end": (
        "Area to end of window: the exact integral of the concentration from 0 to the end of "
        "the time window (no quadrature)."
    ),
    "area_to_infinity": (
        "Area to infinity: the same integral to t = infinity, where finite (species that "
        "decay to zero)."
    ),
    "mean_residence_time": (
        "Mean residence time: area to infinity divided by the start value, 1/k for a single "
        "first-order decay."
    ),
}

#: Plain-words definitions of the whole-scheme quantities (``scheme_summary`` in JSON).
SCHEME_DEFINITIONS = {
    "relaxation_times": (
        "Relaxation times: 1/|Re λ| for the nonzero eigenvalues λ of the rate matrix, longest "
        "first; every curve is a sum of terms decaying with these time constants."
    ),
    "oscillation_periods": (
        "Oscillation periods: 2π/|Im λ| of complex eigenvalues (damped oscillations, from "
        "cycles of steps)."
    ),
    "relaxation_note": (
        "Curve shape: where constants are equal along a path the rate matrix is defective and "
        "the curves contain t·e^(−kt) terms instead of pure exponentials."
    ),
    "time_to_limit": (
        "All within 1 % of their limits at: the latest of the species' times to their limits; "
        "empty when a species grows without bound."
    ),
    "selectivity": (
        "Selectivity between end products: the amounts formed (Δc), their ratios, and each "
        "product's share of all end products formed, at the end of the window and in the limit."
    ),
}

#: What the requirement lines mean (terminal, report, spreadsheet).
REQUIREMENT_DEFINITION = (
    "Requirements: for every require line, the first time it is broken (a root of the exact "
    "solution, found after the end of the window too and then flagged) or 'holds'; and the "
    "time window in which all of them hold together (the shelf life of a stability scheme, "
    "the earliest and latest safe quench of a process)."
)

#: Columns of the summary table: (key, header, kind), kind is "time", "conc", "area" or "".
SUMMARY_COLUMNS = (
    ("start", "start", "conc"),
    ("half_life", "half-life", "time"),
    ("time_to_90_percent_remaining", "90 % left at", "time"),
    ("time_to_10_percent_remaining", "10 % left at", "time"),
    ("t_max", "t_max", "time"),
    ("c_max", "c_max", "conc"),
    ("yield_at_max", "yield at max [-]", ""),
    ("limit", "limit", "conc"),
    ("limit_kind", "limit kind", ""),
    ("time_to_limit", "within 1 % of limit at", "time"),
    ("lifetime", "lifetime 1/Σk", "time"),
    ("first_order_half_life", "ln2/Σk", "time"),
    ("area_to_window_end", "area to end of window", "area"),
    ("area_to_infinity", "area to infinity", "area"),
    ("mean_residence_time", "mean residence time", "time"),
)


def summary_header(key_header_kind: tuple[str, str, str], time_unit: str, conc_unit: str) -> str:
    """Column header with its unit in brackets, e.g. ``t_max [min]``."""
    _, header, kind = key_header_kind
    unit = {"time": time_unit, "conc": conc_unit, "area": f"{conc_unit}·{time_unit}"}.get(kind)
    return f"{header} [{unit}]" if unit else header


def _listing(values, digits: int = 6) -> str:
    """``[1.0, 2.5]`` -> ``"1, 2.5"``; a mapping -> ``"C 1, D 2.5"``; empty -> ``"—"``."""
    if isinstance(values, dict):
        items = [f"{k} {'—' if v is None else format(v, f'.{digits}g')}" for k, v in values.items()]
    else:
        items = ["—" if v is None else format(v, f".{digits}g") for v in values]
    return ", ".join(items) if items else "—"


def scheme_lines(scheme: dict, time_unit: str, conc_unit: str) -> list[tuple[str, str]]:
    """The whole-scheme quantities as (label with unit, text) pairs, for tables and reports.

    Parameters
    ----------
    scheme : dict
        :attr:`kinetics.analysis.solution_summary.Summary.scheme`, already in ``time_unit``.
    time_unit, conc_unit : str
        Units for the labels.
    """
    if not scheme:
        return []
    lines = [(f"relaxation times [{time_unit}]", _listing(scheme.get("relaxation_times") or []))]
    if scheme.get("oscillation_periods"):
        lines.append(
            (f"oscillation periods [{time_unit}]", _listing(scheme["oscillation_periods"]))
        )
    if scheme.get("growth_times"):
        lines.append((f"growth e-folding times [{time_unit}]", _listing(scheme["growth_times"])))
    if scheme.get("relaxation_note"):
        lines.append(("curve shape", scheme["relaxation_note"]))
    pct = f"{100 * scheme.get('tolerance', 0.01):g} %"
    settle = scheme.get("time_to_limit")
    lines.append(
        (
            f"all within {pct} of their limits at [{time_unit}]",
            _listing([settle]) if settle is not None else scheme.get("time_to_limit_note") or "—",
        )
    )
    products = scheme.get("end_products") or []
    lines.append(("end products", ", ".join(products) if products else "none"))
    for where, label in (
        ("at_window_end", "at the end of the window"),
        ("in_limit", "in the limit"),
    ):
        formed = scheme.get(f"amount_formed_{where}")
        if formed is None:
            continue
        lines.append((f"amount formed {label} [{conc_unit}]", _listing(formed)))
        if len(formed) > 1:
            lines.append(
                (
                    f"ratio of amounts formed {label}",
                    _listing(scheme[f"selectivity_ratios_{where}"]),
                )
            )
        share = scheme.get(f"selectivity_{where}")
        if share is not None:
            lines.append((f"share of end products formed {label}", _listing(share)))
    if scheme.get("timeline_note"):
        lines.append(("with operations", scheme["timeline_note"]))
    lines.extend(_record_lines(scheme.get("temperature_log")))
    return lines


def _record_lines(record: dict | None) -> list[tuple[str, str]]:
    """The mean kinetic temperature of a record and each constant's isothermal equivalent.

    The equivalent isothermal temperature is given for each Arrhenius constant (see
    :meth:`kinetics.temperature_log.TemperatureLog.summary`).
    """
    if not record:
        return []

    def degrees(celsius) -> str:
        return (
            "— (the window ends before the first reading)"
            if celsius is None
            else (f"{celsius:.4g} °C")
        )

    energy = record["activation_energy_J_per_mol"] / 1000
    lines = [
        (
            f"mean kinetic temperature of {record['source']} (Ea {energy:g} kJ/mol, "
            "common practice)",
            degrees(record["mean_kinetic_temperature_degC"]),
        )
    ]
    for e in record["equivalent_temperatures"]:
        steps = ", ".join(e["steps"]) or "no step"
        lines.append(
            (
                f"equivalent isothermal temperature of {e['constant']} ({steps}; Ea "
                f"{e['activation_energy_J_per_mol'] / 1000:g} kJ/mol)",
                degrees(e["temperature_degC"]),
            )
        )
    lines.append(("temperature record", record["held"]))
    return lines


def _span(a, b, unit: str = "") -> str:
    """``from 3 h on`` (no end) or ``from 3 to 5 h``."""
    unit = f" {unit}" if unit else ""
    return f"from {a:.6g}{unit} on" if b is None else f"from {a:.6g} to {b:.6g}{unit}"


def requirement_lines(checked: dict, time_unit: str) -> list[tuple[str, str]]:
    """The requirements of a summary as (label, text) pairs.

    Parameters
    ----------
    checked : dict
        :attr:`kinetics.analysis.solution_summary.Summary.requirements`, in ``time_unit``.
    time_unit : str

    Examples
    --------
    >>> row = {"text": "API >= 90 %", "first_broken": 10.5, "beyond_window": False,
    ...        "holds_at_start": True, "holds_between": [[0.0, 10.5]]}
    >>> checked = {"requirements": [row], "all_hold_from": 0.0, "all_hold_until": 10.5}
    >>> for label, text in requirement_lines(checked, "d"):
    ...     print(f"{label}: {text}")
    require API >= 90 %: first broken at 10.5 d
    all requirements hold [d]: from 0 to 10.5
    """
    rows = checked.get("requirements") or []
    lines = []
    for row in rows:
        when = row.get("first_broken")
        spans = row.get("holds_between") or []
        if when is None:
            text = "holds at all times" if row.get("holds_at_start") else "holds"
        elif when == 0:
            text = "broken from the start"
        else:
            text = f"first broken at {when:.6g} {time_unit}"
            if row.get("broken_by_operation"):
                text += " (by the operation at that time)"
            if row.get("beyond_window"):
                text += " (after the window)"
        again = [s for s in spans if s[0] > 0]
        if again:
            word = "holds again" if row.get("holds_at_start") else "holds"
            text += f"; {word} " + ", ".join(_span(a, b, time_unit) for a, b in again)
        lines.append((f"require {row.get('text', '')}", text))
    if rows:
        start, end = checked.get("all_hold_from"), checked.get("all_hold_until")
        text = "never all together" if start is None else _span(start, end)
        lines.append((f"all requirements hold [{time_unit}]", text))
    return lines


def scheme_rows(summary, time_unit: str, conc_unit: str) -> list[dict]:
    """The whole-scheme quantities of a summary as rows ``quantity``, ``value``.

    The summary is a :class:`~kinetics.analysis.solution_summary.Summary`; its requirements
    follow (:func:`requirement_lines`).
    """
    lines = scheme_lines(getattr(summary, "scheme", None) or {}, time_unit, conc_unit)
    lines += requirement_lines(getattr(summary, "requirements", None) or {}, time_unit)
    return [{"quantity": label, "value": text} for label, text in lines]


def summary_rows(summary: dict[str, dict], time_unit: str, conc_unit: str) -> list[dict]:
    """One row per species with unit-labelled headers (summary already in ``time_unit``)."""
    rows = []
    for name, entry in summary.items():
        row: dict = {"species": name}
        for column in SUMMARY_COLUMNS:
            row[summary_header(column, time_unit, conc_unit)] = entry.get(column[0])
        maxima = entry.get("maxima") or []
        if len(maxima) > 1:
            row[f"all maxima (time [{time_unit}], height [{conc_unit}])"] = "; ".join(
                f"{m['time']:.6g}, {m['height']:.6g}" for m in maxima if m.get("time") is not None
            )
        row["notes"] = "; ".join(entry.get("notes") or [])
        rows.append(row)
    # make every row carry the same keys (spreadsheets and frames want a rectangle)
    keys = list(dict.fromkeys(k for row in rows for k in row))
    notes_last = [k for k in keys if k != "notes"] + ["notes"]
    return [{k: row.get(k) for k in notes_last} for row in rows]


def summary_notes(summary: dict[str, dict], time_unit: str, conc_unit: str) -> list[str]:
    """The notes under a summary table, one sentence each and each once.

    Every local maximum of a species with more than one comes first, then the notes of
    each species.

    Parameters
    ----------
    summary : dict
        Species -> quantities, already in ``time_unit``.
    time_unit, conc_unit : str
        Units named in the notes.

    Examples
    --------
    >>> maxima = [{"time": 1.0, "height": 0.5}, {"time": 7.0, "height": 0.25}]
    >>> summary_notes({"B": {"maxima": maxima, "notes": ["B cycles"]}}, "min", "mol/L")
    ['B: local maxima 0.5 mol/L at 1 min, 0.25 mol/L at 7 min', 'B: B cycles']
    """
    notes = []
    for name, entry in summary.items():
        maxima = entry.get("maxima") or []
        if len(maxima) > 1:
            listed = ", ".join(
                f"{m['height']:.4g} {conc_unit} at {m['time']:.4g} {time_unit}"
                + (f" ({m['at_operation']} an operation)" if m.get("at_operation") else "")
                for m in maxima
                if m.get("time") is not None and m.get("height") is not None
            )
            notes.append(f"{name}: local maxima {listed}")
        notes.extend(f"{name}: {note}" for note in entry.get("notes") or [])
    return list(dict.fromkeys(notes))


_EQUILIBRIUM_WORDS = {
    "secular": "secular equilibrium",
    "transient": "transient equilibrium",
}


def activity_lines(activity: dict | None, time_unit: str) -> list[tuple[str, str]]:
    """What a summary in activity units adds, as (label, text) pairs.

    The pairs are the activity maxima, why they fall where the amounts peak, and the
    equilibria of daughters and parents.

    Parameters
    ----------
    activity : dict or None
        :func:`kinetics.analysis.solution_summary.activity_summary` (times in
        ``time_unit``).
    time_unit : str

    Examples
    --------
    >>> lines = activity_lines({"unit": "MBq", "maxima": {"D": {"time": 18.5,
    ...     "activity": 120.0}}, "maximum_note": "n", "equilibria": [{"parent": "P",
    ...     "daughter": "D", "kind": "transient", "ratio": 1.1}]}, "h")
    >>> lines[0]
    ('activity maxima', 'D 120 MBq at 18.5 h')
    >>> lines[2]
    ('D/P in the long run', 'transient equilibrium: activity ratio 1.1')
    """
    if not activity:
        return []
    unit = activity["unit"]
    maxima = activity.get("maxima") or {}
    listed = "; ".join(
        f"{name} {_listing([m['activity']])} {unit} at {_listing([m['time']])} {time_unit}"
        for name, m in maxima.items()
    )
    lines = [("activity maxima", listed or "none inside the window")]
    lines.append(("why there", activity.get("maximum_note", "")))
    for e in activity.get("equilibria") or []:
        label = f"{e['daughter']}/{e['parent']} in the long run"
        if e["kind"] in _EQUILIBRIUM_WORDS:
            text = f"{_EQUILIBRIUM_WORDS[e['kind']]}: activity ratio {_listing([e['ratio']])}"
        else:
            text = (
                f"no equilibrium: {e['daughter']} decays no faster than what feeds "
                f"{e['parent']}, so the ratio keeps growing"
            )
        lines.append((label, text))
    return lines


#: Headers of the ranked table "what this answer hinges on".
HINGE_HEADERS = ("rank", "answer", "hinges most on", "then on", "reading")


def hinge_rows(ranked_rows) -> list[list[str]]:
    """The ranked sensitivities as table rows (:data:`HINGE_HEADERS`).

    Parameters
    ----------
    ranked_rows : list of (quantity, species, [(parameter, value), ...])
        :func:`kinetics.analysis.summary_sensitivity.ranked`.

    Examples
    --------
    >>> hinge_rows([("t_max", "B", [("k2", -0.6), ("k1", -0.4)])])[0]
    ['1', 't_max B', 'k2 (-0.6)', 'k1 (-0.4)', '1 % more k2: t_max B about 0.6 % lower']
    """
    rows = []
    for rank, (key, species, found) in enumerate(ranked_rows, 1):
        cells = [f"{name} ({value:.4g})" for name, value in found[:2]]
        name, value = found[0]
        way = "higher" if value > 0 else "lower"
        reading = f"1 % more {name}: {key} {species} about {abs(value):.3g} % {way}"
        rows.append([str(rank), f"{key} {species}", cells[0], [*cells, "—"][1], reading])
    return rows
