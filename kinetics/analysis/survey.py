"""Everything the summary quantities share for one problem, computed once.

The scan, the turning points of every species and the limits.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from kinetics.analysis.limits import LimitParts, limit_parts
from kinetics.analysis.problem import Problem
from kinetics.analysis.results import Maximum
from kinetics.analysis.scan import Grid, scan
from kinetics.analysis.turning import Turns, maxima, samples, turning_points

__all__ = ["Survey"]


@dataclass(frozen=True)
class Survey:
    """The scan, turning points and limits of one problem.

    Build it with :meth:`of`; every quantity of :mod:`kinetics.analysis.crossings` and
    :mod:`kinetics.analysis.summary` reads it.
    """

    problem: Problem
    grid: Grid
    turns: tuple[Turns, ...]
    limits: LimitParts

    @classmethod
    def of(cls, problem: Problem) -> Survey:
        """Scan ``problem``, find its turning points and its limits."""
        grid = scan(problem)
        return cls(problem, grid, turning_points(problem, grid), limit_parts(problem))

    def samples(self, i: int) -> tuple[np.ndarray, ...]:
        """Times, values, slopes and curvatures of c_i, monotone between samples."""
        return samples(self.grid, self.turns[i], i)

    def maxima(self, i: int) -> list[Maximum]:
        """The local maxima of species ``i`` (see :func:`kinetics.analysis.turning.maxima`)."""
        return maxima(self.problem, self.turns[i], self.limits.limit, i)
