r"""Sets of a sweep whose scheme has operations: each set solved as its own run.

A scheme with a timeline (additions, removals, temperature changes, feed windows;
:mod:`kinetics.timeline`) is not one rate matrix per set: each set is the scheme with its
values (:meth:`kinetics.scheme.Scheme.with_values`, so that operations whose times,
amounts or parts are named quantities move with them), solved exactly stretch by stretch
(:func:`kinetics.solve`), and summarised on that piecewise solution
(:func:`kinetics.analysis.run_summary.summarise_run`; the ``first_broken`` column of each
``require`` line from :func:`kinetics.analysis.run_summary.run_requirements`).  This costs
a solve per set (milliseconds, not microseconds), and gives the same numbers as solving
the set alone.

Curves are the concentrations at the plan's times; at a time of an operation the value
just after it (the table of :func:`kinetics.solve` has both).  Their bound is the
certified ``error_bound`` of the run (a ramp's sub-step estimate is not part of it).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from .. import parameters

if TYPE_CHECKING:
    from ..scheme import Scheme
    from .plan import SweepPlan

__all__ = ["run_chunk", "set_scheme"]


def set_scheme(plan: SweepPlan, internal: np.ndarray, low: np.ndarray) -> Scheme:
    """The scheme of one set: its values given exactly, its operations following them.

    See :func:`kinetics.parameters.scheme_with`.

    Parameters
    ----------
    plan : SweepPlan
    internal, low : numpy.ndarray
        The set's values in internal units and their exact rests, shape (p + s,).
    """
    named = [*plan.parameters, *plan.spreads]  # each has name, kind and target
    return parameters.scheme_with(plan.scheme, named, internal, low)


def run_chunk(plan: SweepPlan, start: int, stop: int, curves: bool = False):
    """Summary rows (and curves) of sets ``start .. stop-1``, each solved as its own run.

    Returns
    -------
    (display, summary, curves or None, bound or None)
        As :class:`kinetics.sweep.evaluation.ChunkResult` holds them.
    """
    from ..analysis.run_summary import Run, summarise_run
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
        solution = solve(set_scheme(plan, internal[i], low[i]), plan.times)
        run = Run(solution)
        per, _ = summarise_run(solution, run=run)
        broken = _first_broken(solution, run)
        for j, col in enumerate(plan.columns):
            if col.quantity == "first_broken":
                v = broken[col.index]
            else:
                v = per[names[col.index]].get(col.quantity)
            if v is not None:
                timed = col.quantity in ("half_life", "t_max", "first_broken")
                summary[i, j] = v / tf if timed else v
        if conc is not None and bound is not None:
            rows = np.searchsorted(solution.times, plan.times, side="right") - 1  # just after
            conc[i] = solution.concentrations[rows]
            certified = solution.error_bound  # always given by a run with operations
            bound[i] = np.nan if certified is None else float(certified.max(initial=0.0))
    return display, summary, conc, bound


def _first_broken(solution, run) -> list[float | None]:
    """[s] The first time each requirement of the set is broken (None: it always holds).

    On the exact piecewise solution of the run
    (:func:`kinetics.analysis.run_summary.run_requirements`).
    """
    if not solution.scheme.requirements:
        return []
    from ..analysis.run_summary import run_requirements

    return [t.first_broken for t in run_requirements(solution, run=run).times]
