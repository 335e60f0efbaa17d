"""Derivatives of the concentrations, under the name they have always had.

The one Fréchet derivative lives in :mod:`kinetics.engine.sensitivity`.
"""

from kinetics.engine.sensitivity import block_sensitivities, point_sensitivities, sensitivities

__all__ = ["block_sensitivities", "point_sensitivities", "sensitivities"]
