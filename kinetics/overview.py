"""JSON-ready overviews of a scheme and of a solution (pure: no printing, no files).

These dictionaries are a contract: the ``check --json`` and ``solve --json``
outputs are exactly them, and users' scripts read their keys.

``check_report(scheme)`` keys: ``title``, ``source``, ``species`` (names in
matrix order), ``excess_species``, ``species_details``, ``rate_matrix`` (rows,
1/s), ``feed`` (name -> value per second), ``initial`` (name -> value),
``concentration_unit``, ``temperature_K``, ``constants``, ``reactions``
(one object per step: ``equation``, ``k_per_s``, ``reaction``, ``direction``,
``constant``, ``given``, ``line``), ``balance`` (``ok`` and per-reaction
details), ``network`` (roles, reversible pairs, cycles, components).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from . import __version__

if TYPE_CHECKING:
    from .scheme import Scheme
    from .solution import Solution

__all__ = ["check_report", "solution_json"]


def _finite(x):
    """JSON has no inf/nan: map them to None."""
    if x is None:
        return None
    x = float(x)
    return x if x == x and abs(x) != float("inf") else None


def check_report(scheme: Scheme) -> dict:
    """Everything ``kinetics check`` reports, as a JSON-ready dict."""
    from .balance import mass_balance
    from .network import summarise_network

    balance = mass_balance(scheme)
    network = summarise_network(scheme)
    K = scheme.rate_matrix()
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
        "rate_matrix": K.tolist(),
        "feed": dict(scheme.feed),
        "initial": {name: scheme.initial.get(name, 0.0) for name in scheme.species_names},
        "excess": dict(scheme.excess),
        "concentration_unit": scheme.concentration_unit,
        "temperature_K": scheme.temperature,
        "constants": constants,
        "reactions": steps,
        "balance": balance.to_dict(),
        "network": network.to_dict(),
    }


def solution_json(solution: Solution, time_unit: str, summary: dict | None = None) -> dict:
    """The ``solve --json`` object: table settings, the table and the summary."""
    frame = solution.to_frame(time_unit)
    out = {
        "source": solution.scheme.source,
        "software": f"kinetics {__version__}",
        "species": solution.species,
        "time_unit": time_unit,
        "concentration_unit": solution.concentration_unit,
        "points": len(solution.times),
        "times": frame.iloc[:, 0].tolist(),
        "concentrations": {
            name: solution.concentrations[:, i].tolist() for i, name in enumerate(solution.species)
        },
    }
    if summary is not None:
        out["summary"] = summary
    return out
