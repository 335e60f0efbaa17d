"""The result types of the analysis: frozen records with units in their docstrings.

``SpeciesSummary.to_dict`` and ``SchemeSummary.to_dict`` give the JSON-ready mappings
that ``solve --json`` carries (numbers or None).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from kinetics.errors import SettingError, SpeciesError
from kinetics.jsonready import finite_or_none

__all__ = [
    "Areas",
    "FractionTime",
    "Limit",
    "Maximum",
    "RelaxationTimes",
    "SchemeSummary",
    "SpeciesSummary",
    "TimeToLimit",
    "YieldsAndSelectivity",
]


@dataclass(frozen=True)
class Maximum:
    r"""One local maximum of a concentration curve.

    Attributes
    ----------
    species : int
        Index of the species.
    time : float
        Time of the maximum [s].
    height : float
        Concentration at the maximum [conc].
    beyond_window : bool
        True when ``time`` lies after the end of the chosen time window.
    is_global : bool
        True for the highest local maximum when it is also the maximum over all
        :math:`t \ge 0` (at least the start value and the long-time limit).
    """

    species: int
    time: float
    height: float
    beyond_window: bool = False
    is_global: bool = False

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form (non-finite numbers as None)."""
        return {
            "time": finite_or_none(self.time),
            "height": finite_or_none(self.height),
            "beyond_window": bool(self.beyond_window),
            "global": bool(self.is_global),
        }


@dataclass(frozen=True)
class FractionTime:
    """Time at which a species first falls to a fraction of its start value.

    Attributes
    ----------
    species : int
    fraction : float
    time : float or None
        [s]; None when it never falls that low.
    reason : str
        Why ``time`` is None (empty otherwise).
    """

    species: int
    fraction: float
    time: float | None
    reason: str = ""


@dataclass(frozen=True)
class Limit:
    r"""The long-time limit :math:`c(\infty)` of every species.

    Attributes
    ----------
    values : ndarray
        :math:`c_i(\infty)` [conc]; ``inf`` where the species grows without bound.
    unbounded : ndarray of bool
    kind : tuple of str
        Per species: ``"not formed"`` (stays zero), ``"transient"`` (decays to zero),
        ``"end product"`` (single species without outlet), ``"equilibrium"`` (member of a
        closed reversible network), ``"inert"`` (neither formed nor consumed),
        ``"steady state"`` (finite nonzero limit kept up by a feed or an upstream
        reservoir), ``"unbounded"``.
    growth : tuple of str or None
        ``"linear"``, ``"polynomial"`` or ``"exponential"`` for unbounded species.
    growth_rate : ndarray
        Asymptotic slope :math:`dc_i/dt` [conc/s] of linearly growing species, the
        exponent [1/s] of exponentially growing ones, nan otherwise.
    notes : tuple of str
        Sentences for the reader (one per group of unbounded species).
    """

    values: np.ndarray
    unbounded: np.ndarray
    kind: tuple[str, ...]
    growth: tuple[str | None, ...]
    growth_rate: np.ndarray
    notes: tuple[str, ...] = ()

    @property
    def bounded(self) -> bool:
        """True when every species has a finite limit."""
        return not bool(np.any(self.unbounded))


@dataclass(frozen=True)
class TimeToLimit:
    """Time to come within a tolerance of the long-time limit (see module Definitions).

    Attributes
    ----------
    time : float or None
        [s] the largest of ``per_species``; None when some species has no finite limit.
    per_species : ndarray
        [s] per species; nan for unbounded species.
    tolerance : float
    reason : str
        Why ``time`` is None (empty otherwise).
    """

    time: float | None
    per_species: np.ndarray
    tolerance: float
    reason: str = ""


@dataclass(frozen=True)
class RelaxationTimes:
    r"""Characteristic times from the eigenvalues of ``K``.

    Attributes
    ----------
    eigenvalues : ndarray of complex
        Nonzero eigenvalues [1/s] with :math:`\operatorname{Im} \ge 0` (one per complex
        pair), slowest first.
    times : ndarray
        :math:`1/|\operatorname{Re}\lambda|` [s] of the decaying ones, longest first.
    periods : ndarray
        :math:`2\pi/\operatorname{Im}\lambda` [s] of the complex pairs.
    growth_times : ndarray
        :math:`1/\operatorname{Re}\lambda` [s] of growing modes (e-folding times).
    zero_modes : int
        Number of zero eigenvalues (one per closed class: conserved quantities).
    defective, nearly_defective : bool
    note : str
        What a (nearly) repeated rate means for the curve shape; empty otherwise.
    """

    eigenvalues: np.ndarray
    times: np.ndarray
    periods: np.ndarray
    growth_times: np.ndarray
    zero_modes: int
    defective: bool
    nearly_defective: bool
    note: str = ""


@dataclass(frozen=True)
class Areas:
    r"""Areas under the curves.

    Attributes
    ----------
    times_end : ndarray
        [s] the upper limits T.
    to_end : ndarray
        :math:`\int_0^T c_i\,dt` [conc*s], shape ``(len(times_end), n)``.
    to_infinity : ndarray
        :math:`\int_0^\infty c_i\,dt` [conc*s], inf where the limit is nonzero.
    """

    times_end: np.ndarray
    to_end: np.ndarray
    to_infinity: np.ndarray


@dataclass(frozen=True)
class YieldsAndSelectivity:
    r"""Yields of intermediates at their maxima and selectivity between end products.

    Attributes
    ----------
    basis : float
        Start amount the yields refer to [conc].
    yield_at_max : ndarray
        :math:`c_{i,\max}/\text{basis}` for intermediates, nan for other species.
    end_products : tuple of int
    formed_at_window_end, formed_in_limit : ndarray or None
        :math:`\Delta c_P` of each end product [conc] at the end of the window and for
        :math:`t\to\infty` (None without window / without finite limit).
    selectivity_at_window_end, selectivity_in_limit : ndarray or None
        Fractional selectivity :math:`\Delta c_P / \sum_Q \Delta c_Q`.
    """

    basis: float
    yield_at_max: np.ndarray
    end_products: tuple[int, ...]
    formed_at_window_end: np.ndarray | None
    formed_in_limit: np.ndarray | None
    selectivity_at_window_end: np.ndarray | None
    selectivity_in_limit: np.ndarray | None

    def ratio(self, p: int, q: int, where: str = "limit") -> float:
        r"""Selectivity :math:`S_{P/Q} = \Delta c_P / \Delta c_Q` between two end products.

        Parameters
        ----------
        p, q : int
            Species indices (both end products).
        where : {"limit", "window_end"}
        """
        if p not in self.end_products or q not in self.end_products:
            raise SpeciesError(
                f"species {p} and {q} must both be end products",
                f"end products here: {list(self.end_products)}",
            )
        formed = self.formed_in_limit if where == "limit" else self.formed_at_window_end
        if where not in ("limit", "window_end"):
            raise SettingError(f"where={where!r} is not known", "use 'limit' or 'window_end'")
        if formed is None:
            raise SettingError(f"no amounts formed are available at {where!r}", "give t_window")
        a = formed[self.end_products.index(p)]
        b = formed[self.end_products.index(q)]
        return float(a / b) if b != 0 else math.inf


@dataclass(frozen=True)
class SpeciesSummary:
    """Derived quantities of one species (units: seconds and the caller's concentration).

    ``to_dict`` gives a JSON-ready mapping (numbers or None).
    """

    name: str
    start: float
    lifetime: float
    first_order_half_life: float
    half_life: float | None
    half_life_note: str
    time_to_90_percent_remaining: float | None
    time_to_10_percent_remaining: float | None
    t_max: float | None
    c_max: float | None
    t_max_beyond_window: bool
    yield_at_max: float | None
    maxima: tuple[Maximum, ...]
    limit: float | None
    limit_kind: str
    unbounded: bool
    time_to_limit: float | None
    area_to_window_end: float | None
    area_to_infinity: float | None
    mean_residence_time: float | None
    notes: tuple[str, ...] = field(default=())

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form (non-finite numbers as None)."""
        return {
            "start": finite_or_none(self.start),
            "half_life": finite_or_none(self.half_life),
            "half_life_note": self.half_life_note or None,
            "time_to_90_percent_remaining": finite_or_none(self.time_to_90_percent_remaining),
            "time_to_10_percent_remaining": finite_or_none(self.time_to_10_percent_remaining),
            "lifetime": finite_or_none(self.lifetime),
            "first_order_half_life": finite_or_none(self.first_order_half_life),
            "t_max": finite_or_none(self.t_max),
            "c_max": finite_or_none(self.c_max),
            "t_max_beyond_window": bool(self.t_max_beyond_window),
            "yield_at_max": finite_or_none(self.yield_at_max),
            "maxima": [m.to_dict() for m in self.maxima],
            "limit": finite_or_none(self.limit),
            "limit_kind": self.limit_kind,
            "unbounded": bool(self.unbounded),
            "time_to_limit": finite_or_none(self.time_to_limit),
            "area_to_window_end": finite_or_none(self.area_to_window_end),
            "area_to_infinity": finite_or_none(self.area_to_infinity),
            "mean_residence_time": finite_or_none(self.mean_residence_time),
            "notes": list(self.notes),
        }


@dataclass(frozen=True)
class SchemeSummary:
    """Scheme-wide derived quantities (seconds, caller's concentration unit).

    Attributes
    ----------
    relaxation_times, oscillation_periods, growth_times : tuple of float
        [s], see :class:`RelaxationTimes`.
    defective, nearly_defective : bool
    relaxation_note : str
    time_to_limit : float or None
        [s] every species within ``tolerance`` of its limit (module Definitions).
    time_to_limit_note : str
    tolerance : float
    end_products : tuple of str
    selectivity_at_window_end, selectivity_in_limit : dict of str to float, or None
        Fractional selectivity of each end product.
    yield_basis : float
        [conc] total start concentration the yields refer to.
    limit_notes : tuple of str
    formed_at_window_end, formed_in_limit : dict of str to float, or None
        [conc] amount of each end product formed, Delta c_P.
    """

    relaxation_times: tuple[float, ...]
    oscillation_periods: tuple[float, ...]
    growth_times: tuple[float, ...]
    defective: bool
    nearly_defective: bool
    relaxation_note: str
    time_to_limit: float | None
    time_to_limit_note: str
    tolerance: float
    end_products: tuple[str, ...]
    selectivity_at_window_end: dict[str, float] | None
    selectivity_in_limit: dict[str, float] | None
    yield_basis: float
    limit_notes: tuple[str, ...] = ()
    formed_at_window_end: dict[str, float] | None = None
    formed_in_limit: dict[str, float] | None = None

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready form (non-finite numbers as None)."""

        def sel(d):
            return None if d is None else {k: finite_or_none(v) for k, v in d.items()}

        def ratios(d):
            # S_P/Q = dc_P / dc_Q for each pair of end products, in their order
            if d is None:
                return None
            names = list(d)
            return {
                f"{p}/{q}": finite_or_none(d[p] / d[q]) if d[q] != 0 else None
                for k, p in enumerate(names)
                for q in names[k + 1 :]
            }

        return {
            "relaxation_times": [finite_or_none(x) for x in self.relaxation_times],
            "oscillation_periods": [finite_or_none(x) for x in self.oscillation_periods],
            "growth_times": [finite_or_none(x) for x in self.growth_times],
            "defective": bool(self.defective),
            "nearly_defective": bool(self.nearly_defective),
            "relaxation_note": self.relaxation_note or None,
            "time_to_limit": finite_or_none(self.time_to_limit),
            "time_to_limit_note": self.time_to_limit_note or None,
            "tolerance": float(self.tolerance),
            "end_products": list(self.end_products),
            "selectivity_at_window_end": sel(self.selectivity_at_window_end),
            "selectivity_in_limit": sel(self.selectivity_in_limit),
            "yield_basis": finite_or_none(self.yield_basis),
            "limit_notes": list(self.limit_notes),
            "amount_formed_at_window_end": sel(self.formed_at_window_end),
            "amount_formed_in_limit": sel(self.formed_in_limit),
            "selectivity_ratios_at_window_end": ratios(self.formed_at_window_end),
            "selectivity_ratios_in_limit": ratios(self.formed_in_limit),
        }
