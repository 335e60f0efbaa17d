"""JSON-ready overviews of a scheme and of a solution (pure: no printing, no files).

These dictionaries are a contract: the ``check --json`` and ``solve --json``
outputs are exactly them, and users' scripts read their keys.

``check_report(scheme)`` keys: ``title``, ``source``, ``species`` (names in
matrix order), ``excess_species``, ``species_details``, ``rate_matrix`` (rows,
1/s), ``feed`` (name -> value per second), ``initial`` (name -> value),
``concentration_unit``, ``temperature_K``, ``constants``, ``reactions``
(one object per step: ``equation``, ``k_per_s``, ``reaction``, ``direction``,
``constant``, ``given``, ``line``), ``balance`` (``ok`` and per-reaction
details), ``network`` (roles, reversible pairs, cycles, components), ``warnings``
(sentences about probable mistakes, see :attr:`kinetics.scheme.Scheme.warnings`).

Above :data:`DENSE_JSON_MAX` species the dense ``rate_matrix`` would be
hundreds of megabytes of JSON: it is then ``null`` and the nonzero entries are
given as ``rate_matrix_entries`` (``[row, column, value]`` triplets, 1/s).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from kinetics._version import __version__
from kinetics.jsonready import finite_or_none
from kinetics.time_text import in_time_unit
from kinetics.units import time_factor

if TYPE_CHECKING:
    from kinetics.scheme import Scheme
    from kinetics.solution import Solution

__all__ = [
    "CAUTION",
    "CERTIFICATE_NOTE",
    "CHECK_TABLE_ROWS",
    "DENSE_JSON_MAX",
    "RAMP_NOTE",
    "certificate_rows",
    "certificate_sentence",
    "check_report",
    "event_rows",
    "event_table",
    "inputs_tables",
    "solution_json",
]

#: The two-line caution printed by ``solve`` and ``report`` (short form of SAFETY.md).
CAUTION = (
    "Caution: a first-order, isothermal, ideally mixed model; not a hazard or safety assessment.\n"
    "Runaway, heat release, gas evolution and scale-up need a process-safety review: "
    "see SAFETY.md (kinetics safety)."
)

#: Largest table ``kinetics check`` prints by default [rows]: above it a table is no
#: longer read but scrolled, and drawing tens of thousands of rows takes seconds.  A
#: scheme with more species or steps gets an overview instead (counts, the balance
#: verdict and every problem found); ``--full-tables`` and ``--json`` give everything.
CHECK_TABLE_ROWS = 200

#: Largest scheme whose ``check --json`` carries the dense rate matrix.
DENSE_JSON_MAX = 2000


def check_report(scheme: Scheme) -> dict:
    """Everything ``kinetics check`` reports, as a JSON-ready dict."""
    from kinetics.balance import mass_balance
    from kinetics.network import summarise_network

    balance = mass_balance(scheme)
    network = summarise_network(scheme)
    K = scheme.rate_matrix_sparse().tocoo()
    if len(scheme.species) <= DENSE_JSON_MAX:
        dense_rows = K.toarray().tolist()
        entries = None
    else:
        dense_rows = None
        entries = [
            [int(i), int(j), float(v)] for i, j, v in zip(K.row, K.col, K.data, strict=True) if v
        ]
    details = []
    for s in scheme.species + scheme.excess_species:
        details.append(
            {
                "name": s.name,
                "role": network.roles[s.name],
                "formula": s.formula,
                "molar_mass_g_per_mol": s.molar_mass,
                "start": scheme.initial.get(s.name, 0.0) if not s.excess else None,
                "excess": scheme.excess.get(s.name) if s.excess else None,
                "feed_per_s": scheme.feed.get(s.name),
            }
        )
    steps = []
    for i, step in enumerate(scheme.steps):
        constant = scheme.constants[step.constant]
        reaction = scheme.reactions[step.reaction]
        steps.append(
            {
                "equation": step.equation,
                "k_per_s": float(scheme.rates[i]),
                "reaction": reaction.equation,
                "direction": step.direction,
                "constant": step.constant,
                "given": constant.text,
                "line": reaction.line,
            }
        )
    constants = {}
    for name, c in scheme.constants.items():
        entry = {"given": c.text, "unit": c.unit, "order": c.order + 1, "line": c.line}
        entry["si_value"] = (
            finite_or_none(c.si_value(scheme.temperature))
            if (c.arrhenius is None or scheme.temperature is not None)
            else None
        )
        if c.arrhenius is not None:
            entry["arrhenius"] = {
                "A": c.arrhenius.prefactor_text,
                "Ea": c.arrhenius.energy_text,
                "Ea_J_per_mol": c.arrhenius.activation_energy,
            }
        constants[name] = entry
    return {
        "title": scheme.title,
        "source": scheme.source,
        "software": f"kinetics {__version__}",
        "species": scheme.species_names,
        "excess_species": [s.name for s in scheme.excess_species],
        "species_details": details,
        "rate_matrix": dense_rows,
        **({"rate_matrix_entries": entries} if entries is not None else {}),
        "feed": dict(scheme.feed),
        "initial": {name: scheme.initial.get(name, 0.0) for name in scheme.species_names},
        "excess": dict(scheme.excess),
        "concentration_unit": scheme.concentration_unit,
        "temperature_K": scheme.temperature,
        "constants": constants,
        "reactions": steps,
        "balance": balance.to_dict(),
        "network": network.to_dict(),
        "warnings": list(scheme.warnings),
        "operations": _operations(scheme),
    }


def _operations(scheme: Scheme) -> dict | None:
    """The timeline of a scheme as written (``check --json``); None without operations.

    It holds each statement's line and text, and the volume of the run [L].
    """
    line = scheme.timeline
    if not line and line.volume is None:
        return None
    return {
        "statements": [
            {"line": s.place.line, "text": s.place.text.strip()} for s in line.statements
        ],
        "volume_L": None if line.volume is None else line.volume * 1000,
    }


def solution_json(
    solution: Solution,
    time_unit: str,
    summary: dict | None = None,
    settings: dict | None = None,
    sensitivity: dict | None = None,
) -> dict:
    """The ``solve --json`` object: table settings, the table and the summary.

    Parameters
    ----------
    solution : Solution
    time_unit : str
        Unit of ``times`` and of every time in ``summary``.
    summary : dict, optional
        Species -> quantities, already in ``time_unit`` (see
        :func:`kinetics.analysis.solution_summary.summary_in_units`);
        written as ``null`` when not given.  A solution in activity units adds the key
        ``activity`` (:func:`kinetics.analysis.solution_summary.activity_summary`), its
        ``concentration_unit`` and ``concentrations`` then hold activities.
    settings : dict, optional
        How the grid was asked for (``until``, ``points``, ``times``), as written.
    sensitivity : dict, optional
        Normalised sensitivities of the summary quantities, key ``sensitivity``: quantity
        -> species -> parameter -> value
        (:func:`kinetics.analysis.summary_sensitivity.summary_sensitivities`).

    Notes
    -----
    A scheme with ``require`` lines adds ``requirements`` (one object per line: ``text``,
    ``first_broken`` in ``time_unit`` or null when it always holds, ``beyond_window``,
    ``holds_at_start``, ``holds_between``, ``broken_by_operation``), ``all_hold_from`` and
    ``all_hold_until`` (the first window in which all hold together; ``all_hold_until``
    null when it has no end, both null when they never hold together).
    """
    from kinetics.analysis.solution_summary import SUMMARY_SKIPPED_NOTE, activity_summary

    times = solution.times / time_factor(time_unit)  # the time column of Solution.to_frame
    activity = activity_summary(solution, summary)
    return {
        "source": solution.scheme.source,
        "title": solution.scheme.title,
        "software": f"kinetics {__version__}",
        "species": solution.species,
        "time_unit": time_unit,
        "concentration_unit": solution.concentration_unit,
        "settings": dict(settings or {}),
        "points": len(solution.times),
        "summary": summary,
        **({} if summary is not None else {"summary_note": SUMMARY_SKIPPED_NOTE}),
        "scheme_summary": getattr(summary, "scheme", None) or None,
        **_requirements(summary),
        **({"activity": activity} if activity is not None else {}),
        **({"sensitivity": sensitivity} if sensitivity is not None else {}),
        "times": times.tolist(),
        "concentrations": {
            name: solution.concentrations[:, i].tolist() for i, name in enumerate(solution.species)
        },
        **_certificate(solution),
        "events": event_rows(solution, time_unit),
        **_timeline(solution, time_unit),
    }


def _requirements(summary) -> dict:
    """The requirements of a scheme with ``require`` lines; nothing for a scheme without.

    The keys are ``requirements`` and ``all_hold_until`` (with ``all_hold_from``), in the
    summary's time unit.
    """
    checked = getattr(summary, "requirements", None)
    if not checked:
        return {}
    return {
        "requirements": checked["requirements"],
        "all_hold_from": checked["all_hold_from"],
        "all_hold_until": checked["all_hold_until"],
    }


def _timeline(solution: Solution, time_unit: str) -> dict:
    """The rows just after operations and the notes of a run (times in ``time_unit``)."""
    if solution.after is None:
        return {}
    notes = [in_time_unit(n, time_unit) for n in solution.notes]
    out: dict = {"after": solution.after.tolist(), "timeline_notes": notes}
    if solution.ramp_estimate is not None:
        out["ramp_estimate"] = [finite_or_none(float(x)) for x in solution.ramp_estimate]
        out["ramp_estimate_note"] = RAMP_NOTE
    return out


#: What ``ramp_estimate`` is, in one sentence (JSON note, report).
RAMP_NOTE = (
    "ramp_estimate[k] estimates the relative error of the temperature-ramp sub-steps at "
    "times[k] (differences of successive refinements, checked against a stiff integrator in "
    "the tests); it is an estimate beside the certified error_bound, not part of it"
)


def event_rows(solution: Solution, time_unit: str) -> list[dict]:
    r"""The recorded operations of a solution as JSON-ready objects, in time order.

    Keys: ``time`` [time_unit], ``action`` (``add``, ``remove``, ``temperature``,
    ``feed on``, ``feed off``), ``species`` (None for a temperature or an addition of
    solvent alone), ``change`` (signed, in the solution's concentration unit: what was
    added, minus what was removed, 0 for temperatures and feeds), ``temperature_K`` (the
    new temperature), ``rate`` (a feed's rate [concentration unit per time_unit]),
    ``volume_L`` (the run's volume just after, in a run with volumes), ``error_bound``
    (certified relative bound of ``change``) and ``ramp_estimate``.

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("P -> D  k = 1 1/h\nD -> X  k2 = 0.1 1/h\nstart P = 1 M\n"
    ...                    "every 1 h: remove 100 % of D")
    >>> rows = event_rows(kinetics.solve(s, [0, 7200]), "h")
    >>> [(r["time"], r["action"], r["species"]) for r in rows]
    [(1.0, 'remove', 'D'), (2.0, 'remove', 'D')]
    """
    factor = time_factor(time_unit)
    scale = dict.fromkeys(solution.species, 1.0)
    if solution.unit_factors is not None:
        scale = dict(zip(solution.species, solution.unit_factors.tolist(), strict=True))
    rows = []
    for e in solution.events:
        rate = None
        if e.action.startswith("feed") and e.value is not None and e.species is not None:
            rate = finite_or_none(e.value * scale[e.species] * factor)
        rows.append(
            {
                "time": finite_or_none(e.time / factor),
                "action": e.action,
                "species": e.species,
                "change": finite_or_none(e.change),
                "temperature_K": e.value if e.action == "temperature" else None,
                "rate": rate,
                "volume_L": None if e.volume is None else finite_or_none(e.volume * 1000),
                "error_bound": finite_or_none(float(e.error_bound)),
                "ramp_estimate": finite_or_none(float(e.ramp_estimate)),
            }
        )
    return rows


def event_table(solution: Solution, time_unit: str) -> list[dict]:
    """:func:`event_rows` as table rows with units in the column names (CSV, Excel, report).

    Columns: ``time [time_unit]``, ``action``, ``species``, ``change [unit]``,
    ``temperature [K]``, ``feed rate [unit/time_unit]``, ``volume after [L]`` (in a run with
    volumes), ``relative error bound``, ``ramp estimate`` (with ramps).
    """
    unit = solution.concentration_unit
    rows = event_rows(solution, time_unit)
    volumes = any(r["volume_L"] is not None for r in rows)
    ramps = any(r["ramp_estimate"] for r in rows)
    table = []
    for r in rows:
        row = {
            f"time [{time_unit}]": r["time"],
            "action": r["action"],
            "species": r["species"] or "",
            f"change [{unit}]": r["change"],
            "temperature [K]": r["temperature_K"],
            f"feed rate [{unit}/{time_unit}]": r["rate"],
        }
        if volumes:
            row["volume after [L]"] = r["volume_L"]
        row["relative error bound"] = r["error_bound"]
        if ramps:
            row["ramp estimate"] = r["ramp_estimate"]
        table.append(row)
    return table


#: What ``error_bound`` certifies, in one sentence (JSON note, report, Excel).
CERTIFICATE_NOTE = (
    "error_bound[k] bounds the relative error of every concentration above 1e-290 at "
    "times[k] against the exact solution for the constants as written: input "
    "representation, rounding of every operation, Taylor truncation, the time grid and the "
    "final rounding to double are all included"
)


def _certificate(solution: Solution) -> dict:
    if solution.error_bound is None:
        return {}
    return {
        "error_bound": [finite_or_none(float(b)) for b in solution.error_bound],
        "error_bound_note": CERTIFICATE_NOTE,
    }


def certificate_sentence(solution: Solution) -> str | None:
    r"""The certificate of a solution in one sentence (None when it has none).

    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k1 = 0.1 1/s\nstart A = 1 mol/L")
    >>> print(certificate_sentence(kinetics.solve(s, [0, 1, 2])))  # doctest: +ELLIPSIS
    Every concentration above 1e-290 is within 1.1e-16 (relative) of the exact solution ...
    """
    if solution.error_bound is None or solution.error_bound.size == 0:
        return None
    worst = float(solution.error_bound.max())
    return (
        f"Every concentration above 1e-290 is within {worst:.2g} (relative) of the exact "
        "solution for the constants as written, at every time of the table (rounding of "
        "every operation, truncation, the time grid and the final rounding included)."
    )


def certificate_rows(solution: Solution, time_unit: str) -> list[dict]:
    """One row per time: the time in ``time_unit`` and its relative error bound."""
    if solution.error_bound is None:
        return []
    factor = time_factor(time_unit)
    return [
        {f"time [{time_unit}]": float(t) / factor, "relative error bound": finite_or_none(float(b))}
        for t, b in zip(solution.times, solution.error_bound, strict=True)
    ]


def inputs_tables(scheme: Scheme) -> dict[str, list[dict]]:
    """The scheme as parsed, as rows for spreadsheets and reports.

    Returns
    -------
    dict
        ``species`` (name, role, formula, molar mass [g/mol], start, excess, feed),
        ``constants`` (name, as written, unit as written, SI value, SI unit),
        ``steps`` (equation, constant, effective k [1/s], line) and ``settings``
        (temperature, concentration unit, title, source).
    """
    from kinetics.network import summarise_network

    roles = summarise_network(scheme).roles
    unit = scheme.concentration_unit
    species = []
    for s in scheme.species + scheme.excess_species:
        species.append(
            {
                "species": s.name,
                "role": roles.get(s.name, ""),
                "formula": s.formula or "",
                "molar mass [g/mol]": s.molar_mass,
                f"start [{unit}]": None if s.excess else scheme.initial.get(s.name, 0.0),
                f"held in excess [{unit}]": scheme.excess.get(s.name) if s.excess else None,
                f"feed [{unit}/s]": scheme.feed.get(s.name),
            }
        )
    constants = []
    for name, c in scheme.constants.items():
        si = None
        if c.arrhenius is None or scheme.temperature is not None:
            si = finite_or_none(c.si_value(scheme.temperature))
        si_unit = {0: "1/s", 1: "m3/(mol s)"}.get(c.order, f"m{3 * c.order}/(mol{c.order} s)")
        constants.append(
            {
                "constant": name,
                "as written": c.text,
                "unit as written": c.unit,
                "SI value": si,
                "SI unit": si_unit,
                "Ea [J/mol]": c.arrhenius.activation_energy if c.arrhenius else None,
                "line": c.line,
            }
        )
    steps = []
    for i, step in enumerate(scheme.steps):
        steps.append(
            {
                "step": step.equation,
                "constant": step.constant,
                "effective k [1/s]": float(scheme.rates[i]),
                "line": scheme.reactions[step.reaction].line,
            }
        )
    settings: list[dict] = [
        {"setting": "title", "value": scheme.title},
        {"setting": "source", "value": scheme.source},
        {"setting": "concentration unit", "value": unit},
        {
            "setting": "temperature [K]",
            "value": scheme.temperature if scheme.temperature is not None else "",
        },
    ]
    return {"species": species, "constants": constants, "steps": steps, "settings": settings}
