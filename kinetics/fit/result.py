"""The outcome of a fit: estimates, covariance, residuals and the fitted scheme."""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np

from ..jsonready import finite_or_none
from ..measurements import Measurements
from .model import Parameter, run_values, scheme_with_estimates

if TYPE_CHECKING:
    import pandas as pd

    from ..scheme import Scheme
    from ..solution import Solution

__all__ = [
    "Estimate",
    "FitResult",
    "engine_predictions",
    "make_result",
    "scheme_with_estimates",
]


#: Kinds of free parameters that other constants can be defined from.
_SOURCES = ("quantity", "constant")


@dataclass(frozen=True)
class Estimate:
    """One fitted parameter, in the unit the scheme file uses for it.

    Attributes
    ----------
    name, unit : str
    value : float
    std_error : float
        Standard error (delta method from the fitted coordinate); NaN when unknown.
    ci95 : tuple of float
        95 % interval from the linearised covariance, ``value ± t·std_error``
        (t distribution with N − p degrees of freedom).
    ci95_profile : tuple of (float or None)
        95 % interval from the profile of the sum of squares; ``None`` for a side
        the data do not bound.
    t_value, p_value : float
        One-sided t-test of H0: value = 0 (``value / std_error``).
    initial : float
        The start value of the search (from the scheme).
    """

    name: str
    value: float
    unit: str
    std_error: float
    ci95: tuple[float, float]
    ci95_profile: tuple[float | None, float | None]
    t_value: float
    p_value: float
    initial: float

    @property
    def relative_std_error(self) -> float:
        """std_error / |value|."""
        return self.std_error / abs(self.value) if self.value else math.nan


@dataclass(frozen=True, eq=False)
class FitResult:
    """The outcome of :func:`fit`.

    Attributes
    ----------
    scheme : Scheme
        The scheme as given (start values of the search).
    parameters : list of Parameter
    estimates : dict of str to Estimate
    covariance : numpy.ndarray
        (p, p) in display units (linearised, delta method).
    correlation : numpy.ndarray
        (p, p).
    residuals : list of numpy.ndarray
        Per run, data − model [concentration_unit], shaped like the run's
        ``values`` (NaN where no value was measured).
    weighted_residuals : numpy.ndarray
        (model − data)/σ of every measured value, in fitting order.
    statistics : dict
        Points, degrees of freedom, sum of squares, residual SD, chi-square error
        levels, R² per species, evaluation counts, convergence.
    warnings : list of str
        Plain sentences.
    alternatives : list of dict
        Other optima that fit as well (name -> value, plus ``"sum_of_squares"``).
    data : list of Measurements
    weights : str
    """

    scheme: Scheme
    parameters: list[Parameter]
    estimates: dict[str, Estimate]
    covariance: np.ndarray
    correlation: np.ndarray
    residuals: list[np.ndarray]
    weighted_residuals: np.ndarray
    statistics: dict
    warnings: list[str]
    alternatives: list[dict]
    data: list[Measurements]
    weights: str
    _theta: np.ndarray | None = field(repr=False, default=None)
    _si: np.ndarray | None = field(repr=False, default=None)

    @property
    def names(self) -> list[str]:
        """Names of the free parameters, in order."""
        return [p.name for p in self.parameters]

    @property
    def diagnostics(self) -> dict:
        """Search diagnostics: convergence, condition number, counts, starts, alternatives.

        The condition number is that of the scaled Jacobian; the evaluation counts are of
        the model and of exact Jacobians.
        """
        keys = (
            "converged",
            "message",
            "optimality",
            "condition_number",
            "model_evaluations",
            "model_evaluations_search",
            "jacobian_evaluations",
            "starts",
            "distinct_optima",
            "engine_difference",
        )
        out = {k: self.statistics[k] for k in keys}
        out["alternatives"] = list(self.alternatives)
        return out

    def value(self, name: str) -> float:
        """The estimate of ``name`` in its display unit."""
        return self.estimates[name].value

    def fitted_scheme(self, run: int = 0) -> Scheme:
        """The scheme with the fitted values and the conditions of data set ``run``."""
        return scheme_with_estimates(
            self.scheme, self.parameters, self._fitted_si(), self.data[run].conditions
        )

    def _fitted_si(self) -> np.ndarray:
        """The fitted values in SI, in the order of the parameters (set by make_result)."""
        assert self._si is not None  # every FitResult comes from make_result
        return self._si

    def followed(self) -> dict[str, dict]:
        r"""The rate constants that follow the fitted values, with the 95 % interval they inherit.

        They are defined from a free named quantity or constant; the interval is linearised.

        .. math:: \sigma_k^2 = g^T C g, \qquad g_j = \partial k / \partial p_j

        with :math:`C` the covariance of the estimates (delta method) and :math:`g` the
        exact derivatives of the definitions (:meth:`kinetics.scheme.Scheme.constant_slopes`).

        Returns
        -------
        dict of str to dict
            Constant -> ``value``, ``unit`` (as the file writes the constant),
            ``std_error``, ``ci95``; empty when no constant follows a free value.
        """
        import scipy.stats

        from ..units import parse_unit

        free = {p.target: j for j, p in enumerate(self.parameters) if p.kind in _SOURCES}
        names = [
            f
            for f in dict.fromkeys(x for c in free for x in self.scheme.driven_by(c))
            if f not in free
        ]
        if not names:
            return {}
        si = self._fitted_si()
        given: dict[str, float | Fraction] = {c: Fraction(float(si[j])) for c, j in free.items()}
        temperature = self.data[0].conditions.get("temperature")
        values = self.scheme.exact_constants(temperature, given)
        slopes = self.scheme.constant_slopes(list(free), temperature, given)
        dof = self.statistics.get("degrees_of_freedom", 0)
        t_crit = float(scipy.stats.t.ppf(0.975, dof)) if dof > 0 else math.nan
        out = {}
        for name in names:
            unit = self.scheme.constants[name].unit
            factor = float(parse_unit(unit).factor)
            g = np.zeros(len(self.parameters))
            for c, j in free.items():
                g[j] = float(slopes[name].get(c, 0)) * self.parameters[j].si_per_unit / factor
            value = float(values[name]) / factor
            se = math.sqrt(max(float(g @ self.covariance @ g), 0.0))
            out[name] = {
                "value": value,
                "unit": unit,
                "std_error": se,
                "ci95": (value - t_crit * se, value + t_crit * se),
            }
        return out

    def predict(self, times, run: int = 0) -> Solution:
        """Fitted curves of data set ``run`` at ``times`` [s] (entrywise engine)."""
        from ..solution import solve

        return solve(self.fitted_scheme(run), times)

    def to_frame(self) -> pd.DataFrame:
        """One row per parameter: value, unit, standard error, both intervals, t-test."""
        import pandas as pd

        rows = []
        for e in self.estimates.values():
            rows.append(
                {
                    "parameter": e.name,
                    "value": e.value,
                    "unit": e.unit,
                    "std_error": e.std_error,
                    "relative_std_error": e.relative_std_error,
                    "ci95_low": e.ci95[0],
                    "ci95_high": e.ci95[1],
                    "profile_low": np.nan if e.ci95_profile[0] is None else e.ci95_profile[0],
                    "profile_high": np.nan if e.ci95_profile[1] is None else e.ci95_profile[1],
                    "t_value": e.t_value,
                    "p_value": e.p_value,
                }
            )
        return pd.DataFrame(rows)

    def to_dict(self) -> dict:
        """A JSON-ready dictionary (NaN and infinity become ``None``); the fit.json contract.

        Keys: ``estimates`` (name -> ``value``, ``unit``, ``std_error``, ``ci95``,
        ``ci95_profile``, ``relative_std_error``, ``t_value``, ``p_value``,
        ``initial``), ``followed`` (the constants defined from free values, see
        :meth:`followed`: name -> ``value``, ``unit``, ``std_error``, ``ci95``),
        ``correlation`` (``names``, ``matrix``), ``covariance``,
        ``statistics``, ``warnings``, ``alternatives``, ``data``, ``weights``,
        ``concentration_unit``.
        """
        estimates = {}
        for e in self.estimates.values():
            estimates[e.name] = {
                "value": finite_or_none(e.value),
                "unit": e.unit,
                "std_error": finite_or_none(e.std_error),
                "relative_std_error": finite_or_none(e.relative_std_error),
                "ci95": [finite_or_none(e.ci95[0]), finite_or_none(e.ci95[1])],
                "ci95_profile": [
                    finite_or_none(e.ci95_profile[0]),
                    finite_or_none(e.ci95_profile[1]),
                ],
                "t_value": finite_or_none(e.t_value),
                "p_value": finite_or_none(e.p_value),
                "initial": finite_or_none(e.initial),
            }
        followed = {
            name: {
                "value": finite_or_none(f["value"]),
                "unit": f["unit"],
                "std_error": finite_or_none(f["std_error"]),
                "ci95": [finite_or_none(f["ci95"][0]), finite_or_none(f["ci95"][1])],
            }
            for name, f in self.followed().items()
        }
        return {
            "estimates": estimates,
            "followed": followed,
            "warnings": list(self.warnings),
            "statistics": _json_ready(self.statistics),
            "correlation": {
                "names": self.names,
                "matrix": [[finite_or_none(x) for x in row] for row in self.correlation],
            },
            "covariance": {
                "names": self.names,
                "units": [p.unit for p in self.parameters],
                "matrix": [[finite_or_none(x) for x in row] for row in self.covariance],
            },
            "alternatives": _json_ready(self.alternatives),
            "weights": self.weights,
            "concentration_unit": self.scheme.concentration_unit,
            "data": [
                {
                    "source": d.source,
                    "species": list(d.species),
                    "points": d.points,
                    "conditions": _json_ready(_conditions_text(d.conditions)),
                }
                for d in self.data
            ],
        }


def _json_ready(obj):
    if isinstance(obj, Mapping):
        return {str(k): _json_ready(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_json_ready(v) for v in obj]
    if isinstance(obj, (bool, np.bool_)):
        return bool(obj)
    if isinstance(obj, (int, np.integer)):
        return int(obj)
    if isinstance(obj, (float, np.floating)):
        return finite_or_none(obj)
    return obj


def _conditions_text(conditions: dict) -> dict:
    out = {}
    for key, value in conditions.items():
        if key == "temperature":
            out["temperature [K]"] = value
        elif key.startswith("start:"):
            out[key] = value
        else:
            out[f"{key} [SI]"] = value
    return out


def engine_predictions(scheme, params, si, runs):
    """Model values at the data points with the entrywise engine, and data − model tables."""
    from ..engine import propagate

    preds, tables = [], []
    for run in runs:
        s = scheme_with_estimates(scheme, params, si, run.data.conditions)
        if s.timeline:  # a run with operations: solved stretch by stretch
            c = run_values(s, run.times)
        else:
            K, K_low = s.rate_matrix_pair()  # the exact constants, diagonal unrounded
            c0 = s.initial_vector
            c = propagate(K, c0, run.times, s.feed_vector if s.feed else None, K_low=K_low)
        pred = c[run.t_index, run.s_index]
        preds.append(pred)
        table = np.full(run.data.values.shape, np.nan)
        table[run.row, run.column] = run.y - pred
        tables.append(table)
    return preds, tables


def make_result(*, theta: np.ndarray, si: np.ndarray, **fields) -> FitResult:
    """A :class:`FitResult` that keeps the fitted coordinates and SI values.

    :meth:`FitResult.fitted_scheme` uses them; ``fields`` are its public attributes.
    """
    return FitResult(**fields, _theta=theta, _si=si)
