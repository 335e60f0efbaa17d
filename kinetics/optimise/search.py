r"""The global part of the search: a coarse grid over the settings, and the local starts.

The starts are those of the local searches (:mod:`kinetics.optimise.local`).

1. *Global start.*  The target and the requirement margins on a grid over the bounds
   (about 81 points in all; one engine call per value of the settings other than the
   time, at every time of the grid at once).  With ``best_time`` the time is not gridded:
   for each grid point the best time in ``[0, end]`` is found exactly on the exact
   solution (:mod:`kinetics.analysis`: the turning points of the target species and the
   windows in which every requirement holds, :mod:`kinetics.analysis.requirements`).
2. *Starts.*  The best grid points that no neighbour beats (one per hill of the target,
   feasible ones first, the least infeasible when none is feasible).
3. *Local refinement* from each start (:mod:`kinetics.optimise.local`); the best feasible
   end point wins (:func:`best_of`).
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass

import numpy as np

from ..analysis.problem import Problem
from ..analysis.requirements import requirements_on
from ..analysis.survey import Survey
from .model import Model, Point

__all__ = [
    "FEASIBLE_TOL",
    "GRID_POINTS",
    "Candidate",
    "best_of",
    "choose_starts",
    "grid_candidates",
    "margin_scales",
    "violation",
]

#: Points of the coarse grid in all (per axis: the d-th root, at least 3).
GRID_POINTS = 81
#: A margin above this fraction of its level counts as met (rounding of the margins).
FEASIBLE_TOL = 1e-9


@dataclass(frozen=True)
class Candidate:
    """A point of the grid or of a local search.

    Attributes
    ----------
    x : ndarray
        Settings [internal units].
    objective : float
    violation : float
        Sum of the scaled shortfalls of the requirements (0 when all hold).
    """

    x: np.ndarray
    objective: float
    violation: float


def margin_scales(model: Model, thresholds: np.ndarray) -> np.ndarray:
    """Scale of each margin: its level, or the largest start value for a level of 0."""
    floor = max(float(model.scheme.initial_vector.max(initial=0.0)), 1e-300)
    return np.where(thresholds > 0, np.abs(thresholds), floor)


def violation(model: Model, point: Point) -> float:
    """Sum of the scaled shortfalls of the requirements at ``point`` (0 when all hold)."""
    if point.margins.size == 0:
        return 0.0
    short = np.maximum(-point.margins / margin_scales(model, point.thresholds), 0.0)
    return float(np.sum(short[short > FEASIBLE_TOL]))


def _axis(lo: float, hi: float, count: int) -> np.ndarray:
    return np.linspace(lo, hi, count)


def _best_time(model: Model, x: np.ndarray) -> Candidate:
    """The best feasible time in ``[0, end]`` for the other settings of ``x``, exactly."""
    here = model.scheme_at(x)
    Kh, Kl = here.rate_matrix_pair()
    feed = here.feed_vector if here.feed else None
    end = model.goal.end
    assert end is not None  # a best-time search has its latest time (checked by optimise)
    problem = Problem(
        Kh, here.initial_vector, feed, names=here.species_names, t_window=end, K_low=Kl
    )
    survey = Survey.of(problem)
    windows = [(0.0, math.inf)]
    if here.requirements:
        windows = list(requirements_on(survey, here.requirements).windows)
    turns = survey.turns[model.index]
    kind = 1 if model.goal.sign > 0 else -1
    candidates = [0.0, end]
    for a, b in windows:
        candidates += [a, min(b, end)]
        inside = (turns.t > a) & (turns.t < min(b, end)) & (turns.type == kind)
        candidates += [float(t) for t in turns.t[inside]]
    times = np.unique(np.clip(candidates, 0.0, end))
    targets, margins, _ = model.values(x, times)  # every candidate time in one engine call
    levels = np.array([r.threshold for r in here.requirements])
    best = None
    for k, t in enumerate(times):
        y = np.array(x, dtype=float)
        y[model.time_at] = t
        p = Point(y, float(t), float(targets[k]), margins[k], levels)
        c = Candidate(y, p.objective, violation(model, p))
        if best is None or _better(model, c, best):
            best = c
    assert best is not None
    return best


def _better(model: Model, a: Candidate, b: Candidate) -> bool:
    """True when ``a`` is better than ``b``: feasible first, then the target."""
    if (a.violation == 0) != (b.violation == 0):
        return a.violation == 0
    if a.violation > 0:
        return a.violation < b.violation
    return model.goal.sign * (a.objective - b.objective) > 0


def grid_candidates(model: Model, per_axis: int | None = None) -> list[tuple[tuple, Candidate]]:
    """Every point of the coarse grid, keyed by its grid index (step 1 of the module)."""
    lo, hi = model.lower, model.upper
    d = len(model.settings)
    time_at = model.time_at
    timed = time_at is not None and not model.goal.best_time
    gridded = [j for j in range(d) if not (model.goal.best_time and j == time_at)]
    count = per_axis or max(3, round(GRID_POINTS ** (1 / max(len(gridded), 1))))
    axes = {j: _axis(lo[j], hi[j], count) for j in gridded}
    others = [j for j in gridded if j != time_at or not timed]
    out = []
    for index in itertools.product(range(count), repeat=len(others)):
        x = np.array([(lo[j] + hi[j]) / 2 for j in range(d)])
        for j, k in zip(others, index, strict=True):
            x[j] = axes[j][k]
        if model.goal.best_time:
            out.append((index, _best_time(model, x)))
        elif time_at is not None:  # timed: the best_time case is the branch above
            times = axes[time_at]
            targets, margins, here = model.values(x, times)
            for k, t in enumerate(times):
                y = x.copy()
                y[time_at] = t
                thr = np.array([r.threshold for r in here.requirements])
                p = Point(y, t, float(targets[k]), margins[k], thr)
                key = _insert(index, others, time_at, k)
                out.append((key, Candidate(y, p.objective, violation(model, p))))
        else:
            p = model.point(x)
            out.append((index, Candidate(x, p.objective, violation(model, p))))
    return out


def _insert(index: tuple, others: list[int], at: int, k: int) -> tuple:
    """The grid index with the time's position ``k`` put in its place."""
    keyed = dict(zip(others, index, strict=True))
    keyed[at] = k
    return tuple(keyed[j] for j in sorted(keyed))


def choose_starts(model: Model, grid, count: int) -> list[Candidate]:
    """The best grid points that no neighbour on the grid beats (one per hill).

    Best first, at most ``count`` (step 2).
    """
    table = dict(grid)
    ranked = sorted(
        grid,
        key=lambda kc: (kc[1].violation > 0, kc[1].violation, -model.goal.sign * kc[1].objective),
    )
    out: list[Candidate] = []
    for key, c in ranked:
        around = itertools.product((-1, 0, 1), repeat=len(key))
        near = (tuple(a + b for a, b in zip(key, step, strict=True)) for step in around)
        if not any(_better(model, table[k], c) for k in near if k in table and k != key):
            out.append(c)
        if len(out) == count:
            break
    return out


def best_of(model: Model, candidates) -> Candidate:
    """The best of ``candidates`` (feasible first, then the target)."""
    best = None
    for c in candidates:
        if best is None or _better(model, c, best):
            best = c
    assert best is not None
    return best
