"""Evaluating a chunk of sets: summaries for the whole stack, curves with their bound."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..analysis import BATCH_QUANTITIES
from ..errors import GrowthError
from .inputs import set_matrices
from .plan import SweepPlan

__all__ = ["CURVE_RTOL", "ChunkResult", "chunk_result", "evaluate_chunk"]


@dataclass
class ChunkResult:
    """What one chunk produces.

    Attributes
    ----------
    index : int
        Chunk number.
    start, stop : int
        Sets ``start .. stop-1``.
    parameters : ndarray, shape (b, p + s)
        Parameter values in the units of the columns.
    summary : ndarray, shape (b, q)
        Summary quantities in the units of the columns; NaN where not applicable.
    curves : ndarray, shape (b, m, n) or None
        Concentrations [conc] at the plan's times.
    bound : ndarray, shape (b,) or None
        With the curves: the certified relative error bound of each set's curves, the
        worst over its times (see :func:`kinetics.propagate.propagate_certified`).
    """

    index: int
    start: int
    stop: int
    parameters: np.ndarray
    summary: np.ndarray
    curves: np.ndarray | None = None
    bound: np.ndarray | None = None


#: Curves of a plain-double sweep are recomputed in full precision for the members whose
#: certified bound exceeds this (stiff sets: the double route loses about 1e-16 sigma t).
CURVE_RTOL = 1e-9


def _propagate_batch(K, K_low, c0, times, feed, precision):
    """Curves of the exact pairs ``K + K_low`` and the worst bound of each member.

    Curves (b, m, n) [conc] and the worst certified relative bound of each member (b,).

    With ``precision="double"`` the members whose plain-double bound exceeds
    :data:`CURVE_RTOL` (or that overflow in double) are recomputed with ``"auto"``.
    """
    from ..engine import propagate_batch

    if precision != "double":
        conc, bound = propagate_batch(
            K, c0, times, feed, precision=precision, return_bound=True, K_low=K_low
        )
        return conc, bound.max(axis=1, initial=0.0)
    try:
        conc, bound = propagate_batch(
            K, c0, times, feed, precision="double", return_bound=True, K_low=K_low
        )
        worst = bound.max(axis=1, initial=0.0)
    except GrowthError:  # plain double can overflow on very stiff members: decide below
        conc = np.zeros((K.shape[0], np.size(times), K.shape[1]))
        worst = np.full(K.shape[0], np.inf)
    redo = np.flatnonzero(~(worst <= CURVE_RTOL))
    if redo.size:
        conc[redo], again = propagate_batch(
            K[redo], c0[redo], times, feed, precision="auto", return_bound=True, K_low=K_low[redo]
        )
        worst[redo] = again.max(axis=1, initial=0.0)
    return conc, worst


def _reference_summaries(plan: SweepPlan, K, K_low, c0, feed) -> dict[str, np.ndarray]:
    """:func:`kinetics.analysis.summarise` once per set (the definition; slow)."""
    from ..analysis import summarise

    b, n = c0.shape
    out = {q: np.full((b, n), np.nan) for q in BATCH_QUANTITIES}
    names = plan.scheme.species_names
    t_window = float(plan.times[-1])
    for i in range(b):
        s = summarise(K[i], c0[i], names, feed=feed, t_window=t_window, K_low=K_low[i])
        for j, name in enumerate(names):
            d = s[name]
            for q in BATCH_QUANTITIES:
                v = getattr(d, q)
                if v is not None and math.isfinite(v):
                    out[q][i, j] = v
    return out


def chunk_result(
    plan: SweepPlan, start: int, stop: int, curves: bool = False, index: int = -1
) -> ChunkResult:
    r"""Evaluate sets ``start .. stop-1`` of ``plan`` (one stacked batch).

    Parameters
    ----------
    plan : SweepPlan
    start, stop : int
        Set range.
    curves : bool
        Also return the concentration curves at ``plan.times``.
    index : int
        Chunk number to record in the result.

    Returns
    -------
    ChunkResult

    Notes
    -----
    .. math:: c^{(i)}(t) = e^{tK^{(i)}} c_0^{(i)} + \int_0^t e^{sK^{(i)}}\,ds\, f

    for every set ``i`` at once; the summary quantities are those of
    :func:`kinetics.analysis.summarise` (see :mod:`kinetics.sweep_summary`).  Each member is
    computed independently of the others, so the result does not depend on how the sets
    are split into chunks or which machine runs them.
    """
    if plan.scheme.timeline:  # operations: each set solved as its own run
        from .runs import run_chunk

        display, summary, conc, bound = run_chunk(plan, start, stop, curves)
        return ChunkResult(index, start, stop, display, summary, conc, bound)
    display, _ = plan.set_values(start, stop)
    K, K_low, c0, feed = set_matrices(plan, start, stop)
    if plan.summary_method == "reference":
        q = _reference_summaries(plan, K, K_low, c0, feed)
    else:
        from ..sweep_summary import summarise_batch

        q = summarise_batch(K, c0, feed, t_window=float(plan.times[-1]), K_low=K_low)
    if plan.scheme.requirements:
        from ..analysis.requirements import first_broken_batch

        q["first_broken"] = first_broken_batch(
            K, c0, plan.scheme.requirements, plan.scheme.species_names, feed,
            float(plan.times[-1]), K_low=K_low,
        )  # fmt: skip
    from ..solution import time_factor

    tf = time_factor(plan.time_unit)
    factors = _activity_factors(plan, K, K_low)
    summary = np.empty((stop - start, len(plan.columns)))
    for j, col in enumerate(plan.columns):
        v = q[col.quantity][:, col.index]
        if col.quantity in ("half_life", "t_max", "first_broken"):
            summary[:, j] = v / tf
        else:
            summary[:, j] = v if factors is None else v * factors[:, col.index]
    if not curves:
        return ChunkResult(index, start, stop, display, summary)
    conc, bound = _propagate_batch(K, K_low, c0, plan.times, feed, plan.precision)
    if factors is not None:
        conc = conc * factors[:, None, :]
    return ChunkResult(index, start, stop, display, summary, conc, bound)


def _activity_factors(plan: SweepPlan, K, K_low) -> np.ndarray | None:
    """Activity per amount of each set and species (b, n), or None for concentrations.

    The decay constants are each set's :math:`-K_{ii}` (:mod:`kinetics.activity`).
    """
    if plan.activity_unit is None:
        return None
    from ..activity import activity_factors_for

    decay = 0.0 - (np.diagonal(K, axis1=1, axis2=2) + np.diagonal(K_low, axis1=1, axis2=2))
    return activity_factors_for(plan.scheme, decay, plan.activity_unit)


def evaluate_chunk(plan: SweepPlan, k: int, curves: bool = False) -> ChunkResult:
    """Evaluate chunk ``k`` of ``plan`` (see :func:`chunk_result`)."""
    start, stop = plan.chunk_bounds(k)
    return chunk_result(plan, start, stop, curves, index=k)
