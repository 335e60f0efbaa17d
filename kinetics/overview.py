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

from . import __version__

if TYPE_CHECKING:
    from .scheme import Scheme
    from .solution import Solution

__all__ = [
    "CAUTION",
    "CHECK_TABLE_ROWS",
    "DEFINITIONS",
    "SCHEME_DEFINITIONS",
    "Summary",
    "check_report",
    "compute_summary",
    "inputs_tables",
    "scheme_lines",
    "scheme_rows",
    "solution_json",
    "summary_in_units",
    "summary_rows",
]

#: The two-line caution printed by ``solve`` and ``report`` (short form of SAFETY.md).
CAUTION = (
    "Caution: a first-order, isothermal, ideally mixed model; not a hazard or safety assessment.\n"
    "Runaway, heat release, gas evolution and scale-up need a process-safety review: "
    "see SAFETY.md (kinetics safety)."
)

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

#: Keys of a species summary that hold a time [s] (converted to the table's time unit).
TIME_KEYS = frozenset(
    {
        "relaxation_times",
        "oscillation_periods",
        "growth_times",
        "half_life",
        "time_to_90_percent_remaining",
        "time_to_10_percent_remaining",
        "lifetime",
        "first_order_half_life",
        "t_max",
        "time_to_limit",
        "mean_residence_time",
        "time",
    }
)
#: Keys that hold an area under a curve [concentration * s].
AREA_KEYS = frozenset({"area_to_window_end", "area_to_infinity"})

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


def _finite(x):
    """JSON has no inf/nan: map them to None."""
    if x is None:
        return None
    x = float(x)
    return x if x == x and abs(x) != float("inf") else None


#: Largest table ``kinetics check`` prints by default [rows]: above it a table is no
#: longer read but scrolled, and drawing tens of thousands of rows takes seconds.  A
#: scheme with more species or steps gets an overview instead (counts, the balance
#: verdict and every problem found); ``--full-tables`` and ``--json`` give everything.
CHECK_TABLE_ROWS = 200

#: Largest scheme whose ``check --json`` carries the dense rate matrix.
DENSE_JSON_MAX = 2000


def check_report(scheme: Scheme) -> dict:
    """Everything ``kinetics check`` reports, as a JSON-ready dict."""
    from .balance import mass_balance
    from .network import summarise_network

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
            _finite(c.si_value(scheme.temperature))
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
    }


class Summary(dict):
    """Species -> summary quantities (a plain dict), with the whole-scheme quantities.

    Attributes
    ----------
    scheme : dict
        Relaxation times, oscillation periods, the note on equal constants, the time for all
        species to come within 1 % of their limits, end products and their selectivity
        (see :class:`kinetics.analysis.SchemeSummary`); JSON key ``scheme_summary``.
    """

    def __init__(self, species=(), scheme: dict | None = None) -> None:
        super().__init__(species)
        self.scheme = dict(scheme or {})


def solution_json(
    solution: Solution,
    time_unit: str,
    summary: dict | None = None,
    settings: dict | None = None,
) -> dict:
    """The ``solve --json`` object: table settings, the table and the summary.

    Parameters
    ----------
    solution : Solution
    time_unit : str
        Unit of ``times`` and of every time in ``summary``.
    summary : dict, optional
        Species -> quantities, already in ``time_unit`` (see :func:`summary_in_units`);
        written as ``null`` when not given.
    settings : dict, optional
        How the grid was asked for (``until``, ``points``, ``times``), as written.
    """
    from .solution import time_factor

    times = solution.times / time_factor(time_unit)  # the time column of Solution.to_frame
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
        "times": times.tolist(),
        "concentrations": {
            name: solution.concentrations[:, i].tolist() for i, name in enumerate(solution.species)
        },
        **_certificate(solution),
    }


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
        "error_bound": [_finite(float(b)) for b in solution.error_bound],
        "error_bound_note": CERTIFICATE_NOTE,
    }


def certificate_sentence(solution: Solution) -> str | None:
    """The certificate of a solution in one sentence (None when it has none).

    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k1 = 0.1 1/s\\nstart A = 1 mol/L")
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
    from .solution import time_factor

    if solution.error_bound is None:
        return []
    factor = time_factor(time_unit)
    return [
        {f"time [{time_unit}]": float(t) / factor, "relative error bound": _finite(float(b))}
        for t, b in zip(solution.times, solution.error_bound, strict=True)
    ]


#: Largest scheme whose summary quantities are computed by ``solve`` and ``report``
#: (each quantity costs many exact exponentials; above this size they take minutes).
SUMMARY_MAX = 200
SUMMARY_SKIPPED_NOTE = (
    f"summary quantities are computed for schemes of up to {SUMMARY_MAX} species; "
    "call kinetics.analysis.summarise for larger ones"
)


def compute_summary(solution: Solution) -> Summary | None:
    """Summary quantities of every species in SI time [s] and the concentration unit.

    Uses :func:`kinetics.analysis.summarise_all` on the scheme of ``solution`` with the
    solution's time window; the whole-scheme quantities are in :attr:`Summary.scheme`.
    Returns ``None`` above :data:`SUMMARY_MAX` species.
    """
    from .analysis import summarise_all

    scheme = solution.scheme
    if len(scheme.species) > SUMMARY_MAX:
        return None
    feed = scheme.feed_vector if scheme.feed else None
    window = float(solution.times[-1])
    K, K_low = scheme.rate_matrix_pair()
    per, whole = summarise_all(
        K,
        scheme.initial_vector,
        scheme.species_names,
        feed=feed,
        t_window=window,
        K_low=K_low,
    )
    out = {name: s.to_dict() for name, s in per.items()}
    scheme_wide = whole.to_dict()
    if solution.unit_factors is not None:  # reported in another unit (Solution.in_unit)
        factors = dict(zip(solution.species, solution.unit_factors, strict=True))
        for name, factor in factors.items():
            _scale_concentrations(out[name], float(factor))
        # amounts formed per end product in its reported unit (the ratios and shares stay
        # those of the amounts of substance)
        for key in ("amount_formed_at_window_end", "amount_formed_in_limit"):
            formed = scheme_wide.get(key)
            if formed:
                scheme_wide[key] = {
                    p: None if v is None else v * float(factors[p]) for p, v in formed.items()
                }
    return Summary(out, scheme_wide)


#: Keys of a species summary that hold a concentration (scaled by Solution.in_unit).
CONCENTRATION_KEYS = frozenset(k for k, _, kind in SUMMARY_COLUMNS if kind == "conc")


def _scale_concentrations(entry: dict, factor: float) -> None:
    for key in CONCENTRATION_KEYS | AREA_KEYS:
        if isinstance(entry.get(key), int | float):
            entry[key] = entry[key] * factor
    for maximum in entry.get("maxima") or []:
        if isinstance(maximum.get("height"), int | float):
            maximum["height"] = maximum["height"] * factor


def _convert_times(value, key: str, factor: float):
    if isinstance(value, dict):
        return {k: _convert_times(v, k, factor) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_convert_times(v, key, factor) for v in value]
    if isinstance(value, int | float) and not isinstance(value, bool):
        if key in TIME_KEYS or key in AREA_KEYS:
            return _finite(value / factor)
    if isinstance(value, float):
        return _finite(value)
    return value


def summary_in_units(summary: dict[str, dict], time_unit: str) -> Summary:
    """Convert every time-valued entry of a summary from seconds to ``time_unit``.

    Times [s] become [time_unit], areas [conc*s] become [conc*time_unit]; non-finite
    numbers become ``None`` (JSON null); concentrations are unchanged.  The whole-scheme
    quantities (:attr:`Summary.scheme`) are converted too.
    """
    from .solution import time_factor

    factor = time_factor(time_unit)
    scheme = _convert_times(getattr(summary, "scheme", {}), "", factor)
    return Summary({name: _convert_times(d, "", factor) for name, d in summary.items()}, scheme)


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
        :attr:`Summary.scheme`, already in ``time_unit``.
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
    return lines


def scheme_rows(summary, time_unit: str, conc_unit: str) -> list[dict]:
    """The whole-scheme quantities of a :class:`Summary` as rows ``quantity``, ``value``."""
    lines = scheme_lines(getattr(summary, "scheme", None) or {}, time_unit, conc_unit)
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
    from .network import summarise_network

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
            si = _finite(c.si_value(scheme.temperature))
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
    settings = [
        {"setting": "title", "value": scheme.title},
        {"setting": "source", "value": scheme.source},
        {"setting": "concentration unit", "value": unit},
        {
            "setting": "temperature [K]",
            "value": scheme.temperature if scheme.temperature is not None else "",
        },
    ]
    return {"species": species, "constants": constants, "steps": steps, "settings": settings}
