"""The result of an optimisation.

The best settings, the target there, which requirements bind, and how flat the optimum is.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..jsonready import finite_or_none
from .model import Goal
from .settings import Setting

__all__ = ["FLAT_SHARE", "Optimum"]

#: How far from the best the flat range of a setting reaches: within 1 % of the target.
FLAT_SHARE = 0.01


@dataclass(frozen=True)
class Optimum:
    """The best settings found.

    Attributes
    ----------
    settings : tuple of Setting
        What was changed (with ``best_time`` the time last).
    goal : Goal
    x : ndarray
        The best settings [internal units].
    objective : float
        The target there [the scheme's concentration unit; - for a yield].
    unit : str
        The unit of :attr:`objective`.
    feasible : bool
        True when every requirement holds at :attr:`x`.
    requirements : tuple of dict
        Per requirement: ``text``, ``value`` (the concentration it is about) and
        ``threshold`` [the scheme's concentration unit], ``margin`` (>= 0 where it holds)
        and ``active`` (at its limit: the optimum would move without it).
    flat : tuple of (float, float)
        Per setting the range [internal units] around the optimum, the others held, in which
        the target stays within :data:`FLAT_SHARE` of the best and every requirement holds.
    counts : dict
        Model evaluations: ``grid``, ``local`` (of which ``with_gradient``), ``flatness``,
        and the number of ``starts``.
    notes : tuple of str
    sensitivity : dict or None
        When asked for: ``objective`` (parameter -> normalised sensitivity of the target
        at the optimum) and ``best`` (setting -> parameter -> that of the best value), see
        :func:`kinetics.optimise.sensitivity.optimum_sensitivities`.
    """

    settings: tuple[Setting, ...]
    goal: Goal
    x: np.ndarray
    objective: float
    unit: str
    feasible: bool
    requirements: tuple[dict, ...]
    flat: tuple[tuple[float, float], ...]
    counts: dict = field(default_factory=dict)
    notes: tuple[str, ...] = ()
    sensitivity: dict | None = None

    @property
    def active_requirements(self) -> list[str]:
        """The texts of the requirements at their limit."""
        return [r["text"] for r in self.requirements if r["active"]]

    @property
    def best(self) -> dict[str, float]:
        """Setting name -> best value in the setting's unit."""
        return {s.name: s.shown(v) for s, v in zip(self.settings, self.x, strict=True)}

    def to_dict(self) -> dict[str, Any]:
        """The optimum as a JSON-ready dict.

        Keys: ``best`` (name -> ``value`` with ``unit``), ``objective``,
        ``objective_unit``, ``active_requirements``, ``feasible``, ``requirements``,
        ``flat_within_1_percent`` (name -> ``low``, ``high``, ``unit``), ``bounds``,
        ``target``, ``evaluations`` and ``notes``; ``sensitivity`` when it was computed.
        """
        g = self.goal
        flat = {}
        for s, (a, b) in zip(self.settings, self.flat, strict=True):
            flat[s.name] = {"low": s.shown(a), "high": s.shown(b), "unit": s.unit}
        out = {
            "target": {
                "species": g.species,
                "sense": g.sense,
                "at": "best time" if g.best_time else "end",
                "quantity": "yield"
                if g.yield_basis
                else "activity"
                if g.activity
                else "concentration",
            },
            "best": {
                s.name: {"value": finite_or_none(s.shown(v)), "unit": s.unit}
                for s, v in zip(self.settings, self.x, strict=True)
            },
            "objective": finite_or_none(self.objective),
            "objective_unit": self.unit,
            "feasible": bool(self.feasible),
            "active_requirements": self.active_requirements,
            "requirements": [dict(r) for r in self.requirements],
            "flat_within_1_percent": flat,
            "bounds": {
                s.name: {"low": s.low, "high": s.high, "unit": s.unit} for s in self.settings
            },
            "evaluations": dict(self.counts),
            "notes": list(self.notes),
        }
        if self.sensitivity is not None:
            out["sensitivity"] = self.sensitivity
        return out
