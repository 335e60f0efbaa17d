r"""Optimum settings under the requirements of a scheme (``kinetics optimise``).

:func:`optimise` finds the settings (temperature, the quench time, named quantities,
constants, start and excess values, each between bounds) at which a target species is
highest or lowest, at the end time or at its best time, while every ``require`` line of
the scheme holds; it reports the optimum, the target there, which requirements are
active, and the range of each setting within which the target stays within 1 % of the
best.

The package, by concept: :mod:`~kinetics.optimise.settings` (``--over NAME=LO:HI:UNIT``
and the scheme at a set of values), :mod:`~kinetics.optimise.model` (the target and the
requirement margins, exactly, with exact derivatives), :mod:`~kinetics.optimise.search`
(grid, starts, local refinement), :mod:`~kinetics.optimise.result` (:class:`Optimum`) and
:mod:`~kinetics.optimise.api` (:func:`optimise`, the flat ranges, the landscape of a
figure).
"""

from kinetics.optimise.api import flat_ranges, landscape, optimise
from kinetics.optimise.model import Goal, Model
from kinetics.optimise.result import Optimum
from kinetics.optimise.settings import Setting, parse_over

__all__ = [
    "Goal",
    "Model",
    "Optimum",
    "Setting",
    "flat_ranges",
    "landscape",
    "optimise",
    "parse_over",
]
