r"""Sets of a sweep whose scheme has operations: each set solved as its own run.

A scheme with a timeline (additions, removals, temperature changes, feed windows;
:mod:`kinetics.timeline`) is not one rate matrix per set: each set is the scheme with its
values (:meth:`kinetics.scheme.Scheme.with_values`, so that operations whose times,
amounts or parts are named quantities move with them), solved exactly stretch by stretch
(:func:`kinetics.solve`), and summarised on that piecewise solution
(:func:`kinetics.analysis.run_summary.summarise_run`).  This costs a solve per set
(milliseconds, not microseconds), and gives the same numbers as solving the set alone.

Curves are the concentrations at the plan's times; at a time of an operation the value
just after it (the table of :func:`kinetics.solve` has both).  Their bound is the
certified ``error_bound`` of the run (a ramp's sub-step estimate is not part of it).
"""

from __future__ import annotations

from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np

from ..errors import UsageError
from ..timeline import At, TemperatureRamp, TemperatureStep

if TYPE_CHECKING:
    from ..scheme import Scheme
    from .plan import SweepPlan

__all__ = ["check_run_parameters", "run_chunk", "set_scheme"]


def check_run_parameters(scheme: Scheme, named) -> None:
    """Refuse what a run with operations cannot vary: the Arrhenius parameters of a
    constant when the operations change the temperature (the law itself must then be
    kept, with a named quantity for its A or Ea).

    Parameters
    ----------
    scheme : Scheme
    named : iterable
        The grid axes and spreads (each with ``name`` and ``kind``).

    Raises
    ------
    kinetics.errors.UsageError

    Examples
    --------
    >>> import kinetics
    >>> s = kinetics.parse("A -> B  k = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\\n"
    ...     "temperature = 25 degC\\nstart A = 1 M\\nat 1 h: temperature = 40 degC")
    >>> from types import SimpleNamespace as P
    >>> check_run_parameters(s, [P(name="k.Ea", kind="energy")])
    Traceback (most recent call last):
    ...
    kinetics.errors.UsageError: k.Ea cannot be varied in a run whose operations change \
the temperature; name it in the file (Ea_k = 80 kJ/mol, then Ea = Ea_k in the law) and vary \
the name
    """
    heats = any(
        isinstance(s, TemperatureRamp)
        or (isinstance(s, At) and isinstance(s.action, TemperatureStep))
        for s in scheme.timeline.statements
    )
    for p in named:
        if p.kind in ("prefactor", "energy") and heats:
            base, _, part = p.name.partition(".")
            raise UsageError(
                f"{p.name} cannot be varied in a run whose operations change the temperature",
                f"name it in the file ({part}_{base} = "
                + ("80 kJ/mol" if part == "Ea" else "1e13 1/s")
                + f", then {part} = {part}_{base} in the law) and vary the name",
            )


def set_scheme(plan: SweepPlan, internal: np.ndarray, low: np.ndarray) -> Scheme:
    """The scheme of one set: its values given exactly, its operations following them.

    Parameters
    ----------
    plan : SweepPlan
    internal, low : numpy.ndarray
        The set's values in internal units and their exact rests, shape (p + s,).
    """
    from ..scheme import arrhenius_pairs

    scheme = plan.scheme
    quantities: dict[str, Fraction] = {}
    initial, excess, arrhenius = {}, {}, {}
    temperature = None
    for j, p in enumerate([*plan.parameters, *plan.spreads]):
        exact = Fraction(float(internal[j])) + Fraction(float(low[j]))
        if p.kind == "temperature":
            temperature = float(internal[j])
        elif p.kind == "start":
            initial[p.target] = float(internal[j])
        elif p.kind == "excess":
            excess[p.target] = float(internal[j])
        elif p.kind in ("prefactor", "energy"):
            arrhenius.setdefault(p.target, {})[p.kind] = float(internal[j])
        else:  # a rate constant or a named quantity: exact, the rest follows
            quantities[p.target or p.name] = exact
    if arrhenius:  # no temperature operations (check_run_parameters): plain at the set's T
        t = scheme.temperature if temperature is None else temperature
        for name, parts in arrhenius.items():
            hi, lo = arrhenius_pairs(
                scheme.constants[name].arrhenius,
                t,
                prefactor=parts.get("prefactor"),
                energy=parts.get("energy"),
            )
            quantities[name] = Fraction(float(hi)) + Fraction(float(lo))
    return scheme.with_values(
        temperature=temperature, initial=initial, excess=excess, quantities=quantities
    )


def run_chunk(plan: SweepPlan, start: int, stop: int, curves: bool = False):
    """Summary rows (and curves) of sets ``start .. stop-1``, each solved as its own run.

    Returns
    -------
    (display, summary, curves or None, bound or None)
        As :class:`kinetics.sweep.evaluation.ChunkResult` holds them.
    """
    from ..analysis.run_summary import summarise_run
    from ..solution import solve
    from ..units import time_factor

    display, internal = plan.set_values(start, stop)
    low = plan.internal_low(start, stop)
    b, n = stop - start, len(plan.scheme.species)
    tf = time_factor(plan.time_unit)
    summary = np.full((b, len(plan.columns)), np.nan)
    conc = np.empty((b, plan.times.size, n)) if curves else None
    bound = np.empty(b) if curves else None
    names = plan.scheme.species_names
    for i in range(b):
        run = solve(set_scheme(plan, internal[i], low[i]), plan.times)
        per, _ = summarise_run(run)
        for j, col in enumerate(plan.columns):
            v = per[names[col.index]].get(col.quantity)
            if v is not None:
                summary[i, j] = v / tf if col.quantity in ("half_life", "t_max") else v
        if curves:
            rows = np.searchsorted(run.times, plan.times, side="right") - 1  # just after
            conc[i] = run.concentrations[rows]
            bound[i] = float(run.error_bound.max(initial=0.0))
    return display, summary, conc, bound
