r"""Fitting rate constants (and start values) to measured concentrations.

Weighted nonlinear least squares on the exact solution of the scheme,

.. math::

    \min_\theta\; S(\theta) = \sum_{r}\sum_{i,s} \left(
        \frac{y_{ris} - c_s(t_{ri};\, \theta, \mathrm{run}\ r)}{\sigma_{ris}} \right)^2 ,

solved with :func:`scipy.optimize.least_squares` (trust-region reflective) in
transformed parameters :math:`\theta` that keep every constant positive:
:math:`\theta = \ln k` for rate constants, Arrhenius prefactors and start values,
:math:`\theta = E_a / (R T_\mathrm{ref})` for activation energies.

The Jacobian is exact, not a finite difference.  For a parameter that enters the
rate matrix, :math:`\partial K/\partial\theta_j = E_j` is a fixed sparse matrix
per step times :math:`\partial k/\partial\theta_j`, and the sensitivity
:math:`s_j = \partial c/\partial\theta_j` obeys :math:`s_j' = K s_j + E_j c`,
:math:`s_j(0) = 0`: it is the Fréchet derivative of the matrix exponential in the
direction :math:`t E_j` (Van Loan 1978; Al-Mohy & Higham 2009),

.. math::

    \exp\begin{bmatrix} tK & tE_j \\ 0 & tK \end{bmatrix}
    = \begin{bmatrix} e^{tK} & L(tK, tE_j) \\ 0 & e^{tK} \end{bmatrix} .

All parameters are propagated together through one block matrix (concentration
block, one sensitivity block per parameter, feed column), interval by interval,
with a stacked scaling-and-squaring Taylor exponential (one exponential per
distinct time step).  A start value enters linearly:
:math:`\partial c/\partial \ln c_{0,A} = e^{tK} c_{0,A} e_A`.

Uncertainty follows the usual linearisation (Bates & Watts 1988, ch. 2):
:math:`\mathrm{Cov}(\hat\theta) = s^2 (J^\top J)^{-1}`, :math:`s^2 = S(\hat\theta)/(N-p)`,
carried to the constants by the delta method; profile intervals use the
F-based threshold :math:`S \le S(\hat\theta)\,(1 + F_{0.95}(1, N-p)/(N-p))`
(Bates & Watts 1988, ch. 6).

References
----------
D. M. Bates, D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
Wiley, New York (1988).
C. Van Loan, "Computing integrals involving the matrix exponential", IEEE Trans.
Automat. Control 23, 395-404 (1978).
A. H. Al-Mohy, N. J. Higham, "Computing the Fréchet derivative of the matrix
exponential, with an application to condition number estimation", SIAM J.
Matrix Anal. Appl. 30, 1639-1657 (2009).
"""

from __future__ import annotations

import difflib
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from fractions import Fraction
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from .errors import DataError, UsageError
from .measurements import Measurements, measurements_from_frame, parse_condition, read_measurements
from .ratematrix import rate_pattern, step_rates
from .sensitivity import block_sensitivities
from .units import GAS_CONSTANT, parse_unit, time_factor

if TYPE_CHECKING:
    import pandas as pd

    from .scheme import Scheme
    from .solution import Solution

__all__ = [
    "WEIGHTS",
    "Estimate",
    "FitResult",
    "Parameter",
    "chi2_error_level",
    "fit",
    "parse_free",
]

#: The weighting schemes of :func:`fit`.
WEIGHTS = ("equal", "relative", "column")
#: ``relative`` weights: the standard deviation is ``max(|y|, RELATIVE_FLOOR * max|y|)``
#: of the column, so that readings of zero do not get an infinite weight.
RELATIVE_FLOOR = 1e-3
#: Search range of a log-transformed parameter around its start value (decades).
SEARCH_DECADES = 10.0
#: Spread of the multi-start design around the start value (decades / RT_ref units).
START_DECADES = 2.0
START_ENERGY = 8.0
#: Scaled-Jacobian condition number above which the data are said not to separate
#: the parameters.
CONDITION_LIMIT = 1e4
#: Ratio between constants beyond which an optimum is called implausible.
RATIO_LIMIT = 1e6
_ENERGY_RANGE = (-100e3, 1000e3)  # J/mol, search range of an activation energy
_EPS = np.finfo(float).eps


# ---------------------------------------------------------------------------------------
# Free parameters
# ---------------------------------------------------------------------------------------


@dataclass(frozen=True)
class Parameter:
    """A free parameter of a fit.

    Attributes
    ----------
    name : str
        As the user writes it: ``k1`` (a rate constant), ``k3.A`` and ``k3.Ea``
        (Arrhenius prefactor and activation energy of ``k3``), ``start:A`` (start
        concentration of ``A``).
    kind : str
        ``"constant"``, ``"prefactor"``, ``"energy"`` or ``"start"``.
    target : str
        The constant or species it belongs to.
    unit : str
        Display unit (the unit the scheme file uses for it).
    si_per_unit : float
        SI value of one display unit (1 for start values, which the core keeps in
        the scheme's concentration unit).
    """

    name: str
    kind: str
    target: str
    unit: str
    si_per_unit: float

    @property
    def log(self) -> bool:
        """True when the fitted coordinate is the logarithm of the value."""
        return self.kind != "energy"


_ENERGY_TEXT = re.compile(r"^\s*[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?\s*(?P<unit>.*?)\s*$")


def parse_free(free: str | Sequence[str], scheme: Scheme) -> list[Parameter]:
    """Resolve the names of free parameters (``--free k1,k2 --free start:A``).

    Parameters
    ----------
    free : str or sequence of str
        Names, each item may hold several separated by commas: ``k1`` (a rate
        constant), ``k3.A`` / ``k3.Ea`` (Arrhenius parameters of ``k3``),
        ``start:A`` (the start concentration of ``A``).
    scheme : Scheme

    Returns
    -------
    list of Parameter
        In the order given.

    Raises
    ------
    UsageError
        For an unknown or repeated name, or a plain name for an Arrhenius constant.
    """
    items = [free] if isinstance(free, str) else list(free)
    names: list[str] = []
    for item in items:
        for piece in str(item).split(","):
            piece = piece.strip()
            if not piece:
                continue
            if piece in names:
                raise UsageError(f"the free parameter {piece!r} is listed twice", "list it once")
            names.append(piece)
    if not names:
        raise UsageError("no free parameter given", "name at least one, e.g. k1 or k1,k2")
    return [_parameter(name, scheme) for name in names]


def _parameter(name: str, scheme: Scheme) -> Parameter:
    constants = scheme.constants
    if name.startswith("start:"):
        species = name[len("start:") :].strip()
        if species not in scheme.species_names:
            raise UsageError(
                f"free parameter {name!r}: {species!r} is not a species of the scheme",
                _suggest(species, scheme.species_names, "the species are"),
            )
        return Parameter(f"start:{species}", "start", species, scheme.concentration_unit, 1.0)
    base, dot, part = name.partition(".")
    if dot:
        if base not in constants:
            raise UsageError(
                f"free parameter {name!r}: there is no rate constant {base!r}",
                _suggest(base, list(constants), "the constants are"),
            )
        arr = constants[base].arrhenius
        if arr is None:
            raise UsageError(
                f"free parameter {name!r}: {base} is not an Arrhenius constant",
                f"free {base} itself, or define it as {base} = arrhenius(A = ..., Ea = ...)",
            )
        if part == "A":
            unit = constants[base].unit
            return Parameter(name, "prefactor", base, unit, float(parse_unit(unit).factor))
        if part == "Ea":
            match = _ENERGY_TEXT.match(arr.energy_text or "")
            unit = (match["unit"] if match else "") or "J/mol"
            return Parameter(name, "energy", base, unit, float(parse_unit(unit).factor))
        raise UsageError(
            f"free parameter {name!r}: {part!r} is not an Arrhenius parameter",
            f"write {base}.A or {base}.Ea",
        )
    if name not in constants:
        raise UsageError(
            f"free parameter {name!r} is not a rate constant of the scheme",
            _suggest(name, list(constants), "the constants are")
            + "; start values are written start:SPECIES",
        )
    if constants[name].arrhenius is not None:
        raise UsageError(
            f"free parameter {name!r} follows the Arrhenius law",
            f"free its parameters instead: {name}.A and {name}.Ea",
        )
    unit = constants[name].unit
    return Parameter(name, "constant", name, unit, float(parse_unit(unit).factor))


def _suggest(name: str, candidates, listing: str) -> str:
    folded = [c for c in candidates if c.lower() == name.lower()]
    close = folded or difflib.get_close_matches(name, list(candidates), n=1)
    text = f"{listing} " + ", ".join(candidates)
    return f"did you mean {close[0]!r}? ({text})" if close else text


# ---------------------------------------------------------------------------------------
# The model: residuals and Jacobian over all runs
# ---------------------------------------------------------------------------------------


@dataclass
class _Run:
    data: Measurements
    times: np.ndarray  # unique model times [s]
    t_index: np.ndarray  # per residual: index into times
    s_index: np.ndarray  # per residual: species matrix index
    column: np.ndarray  # per residual: column of data.values
    row: np.ndarray  # per residual: row of data.values
    y: np.ndarray
    sigma: np.ndarray
    temperature: float | None
    k_base: np.ndarray  # per constant [SI] at this run's conditions
    c0: np.ndarray
    feed: np.ndarray | None
    fixed: dict = field(default_factory=dict)


class _Model:
    """Weighted residuals and their exact Jacobian in the fitted coordinates θ."""

    def __init__(self, scheme, runs, params, engine="block"):
        self.scheme = scheme
        self.runs = runs
        self.params = params
        self.engine = engine
        self.pattern = rate_pattern(scheme)
        self.const_names = list(scheme.constants)
        index = {c: i for i, c in enumerate(self.const_names)}
        self.step_const = np.array([index[s.constant] for s in scheme.steps], dtype=int)
        # excess factors of each step (the constant set to 1 in SI)
        self.phi = step_rates(scheme, constants={c: 1.0 for c in self.const_names})
        temps = [r.temperature for r in runs if r.temperature is not None]
        self.t_ref = float(np.mean(temps)) if temps else 298.15
        self.const_of = {p.target: index[p.target] for p in params if p.kind != "start"}
        self.evaluations = 0
        self.jacobian_evaluations = 0
        self.n_points = int(sum(r.y.size for r in runs))

    # -- coordinates ------------------------------------------------------------------
    def theta_of(self, values_si: dict[str, float]) -> np.ndarray:
        out = []
        for p in self.params:
            v = values_si[p.name]
            out.append(v / (GAS_CONSTANT * self.t_ref) if p.kind == "energy" else math.log(v))
        return np.array(out)

    def si_values(self, theta) -> np.ndarray:
        """Parameter values in SI (start values in the concentration unit)."""
        theta = np.asarray(theta, dtype=float)
        return np.array(
            [
                t * GAS_CONSTANT * self.t_ref if p.kind == "energy" else math.exp(t)
                for p, t in zip(self.params, theta, strict=True)
            ]
        )

    def dsi_dtheta(self, theta) -> np.ndarray:
        si = self.si_values(theta)
        return np.array(
            [
                GAS_CONSTANT * self.t_ref if p.kind == "energy" else v
                for p, v in zip(self.params, si, strict=True)
            ]
        )

    def _run_state(self, run: _Run, theta, derivatives: bool):
        """Step rates, start vector, and d(rates)/dθ_j, d(c0)/dθ_j for one run."""
        si = self.si_values(theta)
        k = run.k_base.copy()
        dk = np.zeros((len(self.params), k.size))
        c0 = run.c0.copy()
        dc0 = np.zeros((len(self.params), c0.size))
        arrhenius: dict[int, dict] = {}
        for j, p in enumerate(self.params):
            if p.kind == "constant":
                c = self.const_of[p.target]
                k[c] = si[j]
                dk[j, c] = si[j]  # d k / d ln k
            elif p.kind in ("prefactor", "energy"):
                arrhenius.setdefault(self.const_of[p.target], {})[p.kind] = j
            else:
                i = self.scheme.index[p.target]
                c0[i] = si[j]
                dc0[j, i] = si[j]  # d c0 / d ln c0
        for c, parts in arrhenius.items():
            arr = self.scheme.constants[self.const_names[c]].arrhenius
            a = si[parts["prefactor"]] if "prefactor" in parts else float(arr.prefactor_si)
            ea = si[parts["energy"]] if "energy" in parts else arr.activation_energy
            k[c] = a * math.exp(-ea / (GAS_CONSTANT * run.temperature))  # Arrhenius equation
            if "prefactor" in parts:
                dk[parts["prefactor"], c] = k[c]
            if "energy" in parts:
                dk[parts["energy"], c] = -k[c] * self.t_ref / run.temperature
        rates = self.phi * k[self.step_const]
        if not derivatives:
            return rates, c0, None, None
        drates = self.phi[None, :] * dk[:, self.step_const]
        return rates, c0, drates, dc0

    def _solve_run(self, run: _Run, theta, derivatives: bool):
        rates, c0, drates, dc0 = self._run_state(run, theta, derivatives)
        K = self.pattern.dense(rates)
        if self.engine == "entrywise":
            from .propagate import propagate
            from .sensitivity import sensitivities

            c = propagate(K, c0, run.times, run.feed)
            if not derivatives:
                return c, None
            rate_params = [j for j, p in enumerate(self.params) if p.kind != "start"]
            S = np.zeros((len(self.params), run.times.size, K.shape[0]))
            if rate_params:
                E = self.pattern.dense(drates[rate_params])
                S[rate_params] = sensitivities(K, c0, run.times, E, run.feed)
            for j, p in enumerate(self.params):
                if p.kind == "start":
                    S[j] = propagate(K, dc0[j], run.times)
            return c, S
        if not derivatives:
            c, _ = block_sensitivities(K, c0, run.times, None, run.feed)
            return c, None
        rate_params = [j for j, p in enumerate(self.params) if p.kind != "start"]
        start_params = [j for j, p in enumerate(self.params) if p.kind == "start"]
        E = self.pattern.dense(drates[rate_params]) if rate_params else None
        V = dc0[start_params] if start_params else None
        c, S_part = block_sensitivities(K, c0, run.times, E, run.feed, V)
        S = np.empty((len(self.params), run.times.size, K.shape[0]))
        S[rate_params + start_params] = S_part
        return c, S

    def predictions(self, theta) -> list[np.ndarray]:
        """Model values at the measured points, one array per run [conc]."""
        out = []
        for run in self.runs:
            c, _ = self._solve_run(run, theta, False)
            out.append(c[run.t_index, run.s_index])
        return out

    def residuals(self, theta) -> np.ndarray:
        """Weighted residuals (model − data)/σ of all runs."""
        self.evaluations += 1
        parts = []
        for run in self.runs:
            c, _ = self._solve_run(run, theta, False)
            parts.append((c[run.t_index, run.s_index] - run.y) / run.sigma)
        return np.concatenate(parts)

    def jacobian(self, theta) -> np.ndarray:
        """Exact Jacobian of :meth:`residuals` with respect to θ, shape (N, p)."""
        self.jacobian_evaluations += 1
        parts = []
        for run in self.runs:
            _, S = self._solve_run(run, theta, True)
            parts.append((S[:, run.t_index, run.s_index] / run.sigma).T)
        return np.concatenate(parts, axis=0)


# ---------------------------------------------------------------------------------------
# Results
# ---------------------------------------------------------------------------------------


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
    _theta: np.ndarray = field(repr=False, default=None)
    _si: np.ndarray = field(repr=False, default=None)

    @property
    def names(self) -> list[str]:
        """Names of the free parameters, in order."""
        return [p.name for p in self.parameters]

    @property
    def diagnostics(self) -> dict:
        """Search diagnostics: convergence, scaled-Jacobian condition number, evaluation
        counts (model evaluations and exact Jacobians), starts, alternative optima."""
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
        return _fitted_scheme(self.scheme, self.parameters, self._si, self.data[run].conditions)

    def predict(self, times, run: int = 0) -> Solution:
        """Fitted curves of data set ``run`` at ``times`` [s] (entrywise engine)."""
        from .solution import solve

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
        ``initial``), ``correlation`` (``names``, ``matrix``), ``covariance``,
        ``statistics``, ``warnings``, ``alternatives``, ``data``, ``weights``,
        ``concentration_unit``.
        """
        estimates = {}
        for e in self.estimates.values():
            estimates[e.name] = {
                "value": _num(e.value),
                "unit": e.unit,
                "std_error": _num(e.std_error),
                "relative_std_error": _num(e.relative_std_error),
                "ci95": [_num(e.ci95[0]), _num(e.ci95[1])],
                "ci95_profile": [_num(e.ci95_profile[0]), _num(e.ci95_profile[1])],
                "t_value": _num(e.t_value),
                "p_value": _num(e.p_value),
                "initial": _num(e.initial),
            }
        return {
            "estimates": estimates,
            "warnings": list(self.warnings),
            "statistics": _json_ready(self.statistics),
            "correlation": {
                "names": self.names,
                "matrix": [[_num(x) for x in row] for row in self.correlation],
            },
            "covariance": {
                "names": self.names,
                "units": [p.unit for p in self.parameters],
                "matrix": [[_num(x) for x in row] for row in self.covariance],
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


def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


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
        return _num(obj)
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


def _fitted_scheme(scheme, params, si, conditions) -> Scheme:
    plain = {p.target: float(v) for p, v in zip(params, si, strict=True) if p.kind == "constant"}
    for key, value in conditions.items():
        if key in scheme.constants:
            plain[key] = value
    initial = {p.target: float(v) for p, v in zip(params, si, strict=True) if p.kind == "start"}
    initial.update({k[6:]: v for k, v in conditions.items() if k.startswith("start:")})
    new = scheme.with_values(
        constants=plain, temperature=conditions.get("temperature"), initial=initial
    )
    arr_parts: dict[str, dict] = {}
    for p, v in zip(params, si, strict=True):
        if p.kind in ("prefactor", "energy"):
            arr_parts.setdefault(p.target, {})[p.kind] = float(v)
    if arr_parts:
        constants = dict(new.constants)
        for name, parts in arr_parts.items():
            if name in plain:
                continue
            old = constants[name]
            arr = old.arrhenius
            arr = replace(
                arr,
                prefactor_si=Fraction(parts["prefactor"])
                if "prefactor" in parts
                else arr.prefactor_si,
                activation_energy=parts.get("energy", arr.activation_energy),
            )
            constants[name] = replace(old, arrhenius=arr, text=f"{old.text} (fitted)")
        new = replace(new, constants=constants)
    return new


# ---------------------------------------------------------------------------------------
# Statistics
# ---------------------------------------------------------------------------------------


def chi2_error_level(observed, predicted, n_parameters: int, level: float = 0.05) -> float | None:
    r"""Chi-square error level: the smallest relative error at which the fit passes.

    .. math::

        \chi^2 = \sum_i \frac{(C_i - O_i)^2}{(\mathrm{err}/100 \cdot \bar O)^2},
        \qquad
        \mathrm{err}_{\min} = \frac{100}{\bar O}
        \sqrt{\frac{\sum_i (C_i - O_i)^2}{\chi^2_{1-\alpha}(N - p)}}

    with :math:`C_i` the fitted and :math:`O_i` the observed values, :math:`\bar O`
    the mean observed value, :math:`N` the number of values and :math:`p` the
    number of fitted parameters; :math:`\chi^2_{1-\alpha}` is the upper
    :math:`\alpha = 5\,\%` point of the chi-square distribution.

    Parameters
    ----------
    observed, predicted : array_like
        [conc], the same shape.
    n_parameters : int
    level : float, optional
        Significance level α.

    Returns
    -------
    float or None
        err_min [%]; ``None`` without degrees of freedom or when the mean
        observed value is not positive.

    Notes
    -----
    This is the error model of the guidance for environmental-fate kinetics: the
    measurement error is taken as a constant percentage of the mean observed
    value.  Here the individual values are used (that guidance averages
    replicates first).

    References
    ----------
    FOCUS (2006), "Guidance document on estimating persistence and degradation
    kinetics from environmental fate studies on pesticides in EU registration",
    report of the FOCUS Work Group on Degradation Kinetics.
    """
    import scipy.optimize  # imported on use: keeps `import kinetics` light
    import scipy.stats

    o = np.asarray(observed, dtype=float)
    c = np.asarray(predicted, dtype=float)
    df = o.size - n_parameters
    mean = float(np.mean(o)) if o.size else 0.0
    if df < 1 or not mean > 0:
        return None
    tab = scipy.stats.chi2.ppf(1.0 - level, df)
    return float(100.0 / mean * math.sqrt(float(np.sum((c - o) ** 2)) / tab))


# ---------------------------------------------------------------------------------------
# The fit
# ---------------------------------------------------------------------------------------


def _as_runs(data, scheme) -> list[Measurements]:
    """Normalise the ``data`` argument of :func:`fit` into a list of Measurements."""
    import pandas as pd

    items = data if isinstance(data, (list, tuple)) and not _is_pair(data) else [data]
    out = []
    for item in items:
        conditions: Mapping = {}
        if _is_pair(item):
            item, conditions = item
        if isinstance(item, Measurements):
            m = item
        elif isinstance(item, pd.DataFrame):
            m = measurements_from_frame(item, scheme)
        elif isinstance(item, (str, Path)):
            m = read_measurements(item, scheme)
        else:
            raise UsageError(
                f"cannot use {type(item).__name__} as measured data",
                "give a Measurements object, a DataFrame or a CSV path",
            )
        if conditions:
            m = m.with_conditions(_parse_conditions(conditions, scheme))
        out.append(m)
    if not out:
        raise UsageError("no measured data given", "give at least one data table")
    return out


def _is_pair(obj) -> bool:
    return (
        isinstance(obj, tuple)
        and len(obj) == 2
        and isinstance(obj[1], Mapping)
        and not isinstance(obj[0], Mapping)
    )


def _parse_conditions(conditions: Mapping, scheme) -> dict:
    out = {}
    for key, value in conditions.items():
        if isinstance(value, str):
            k, v = parse_condition(f"{key}={value}", scheme)
        else:
            k, v = parse_condition(f"{key}=1", scheme)[0], float(value)
            if key == "temperature":
                k = "temperature"
        out[k] = v
    return out


def _sigma(m: Measurements, weights, rows, cols, y) -> np.ndarray:
    if isinstance(weights, Mapping):
        sd = np.empty(y.size)
        for k, j in enumerate(cols):
            name = m.species[j]
            if name not in weights:
                raise UsageError(
                    f"no standard deviation given for {name}",
                    "give one for every measured species",
                )
            sd[k] = float(weights[name])
        if np.any(~(sd > 0)):
            raise UsageError("standard deviations must be positive")
        return sd
    if weights == "equal":
        return np.ones(y.size)
    if weights == "relative":
        sd = np.abs(y)
        for j in np.unique(cols):
            sel = cols == j
            floor = RELATIVE_FLOOR * np.max(np.abs(y[sel]))
            sd[sel] = np.maximum(sd[sel], floor if floor > 0 else 1.0)
        return sd
    if weights == "column":
        if m.sd is None:
            raise DataError(
                "weights 'column' need standard deviations, but the table has no sd columns",
                m.source,
                "add columns such as 'B sd [mol/L]', or use the weights 'equal' or 'relative'",
            )
        sd = m.sd[rows, cols]
        missing = np.isnan(sd)
        if np.any(missing):
            k = int(np.argmax(missing))
            when = m.times[rows[k]] / time_factor(m.time_unit)  # in the table's own unit
            raise DataError(
                f"the value of {m.species[cols[k]]} at time {when:g} {m.time_unit} has no "
                "standard deviation",
                m.source,
                f"fill the column '{m.species[cols[k]]} sd' wherever a value is given",
            )
        return sd
    raise UsageError(
        f"unknown weighting {weights!r}", "use equal, relative, column or a dict of SDs"
    )


def _build_runs(scheme, datasets, params, weights) -> list[_Run]:
    free_consts = {p.target for p in params if p.kind != "start"}
    free_starts = {p.target for p in params if p.kind == "start"}
    names = list(scheme.constants)
    runs = []
    for m in datasets:
        temperature = m.conditions.get("temperature", scheme.temperature)
        k_base = np.empty(len(names))
        for i, name in enumerate(names):
            if name in m.conditions:
                if name in free_consts:
                    raise UsageError(
                        f"{name} is free but {m.source} also sets it", "free it or set it, not both"
                    )
                k_base[i] = m.conditions[name]
            else:
                k_base[i] = scheme.constants[name].si_value(temperature)
        initial = dict(scheme.initial)
        for key, value in m.conditions.items():
            if key.startswith("start:"):
                if key[6:] in free_starts:
                    raise UsageError(
                        f"{key} is free but {m.source} also sets it", "free it or set it, not both"
                    )
                initial[key[6:]] = value
        c0 = np.zeros(len(scheme.species))
        for name, value in initial.items():
            c0[scheme.index[name]] = value
        times = np.unique(m.times)
        mask = ~np.isnan(m.values)
        rows, cols = np.nonzero(mask)
        order = np.lexsort((rows, cols))  # column by column, then time
        rows, cols = rows[order], cols[order]
        y = m.values[rows, cols]
        s_index = np.array([scheme.index[m.species[j]] for j in cols], dtype=int)
        t_index = np.searchsorted(times, m.times[rows])
        runs.append(
            _Run(
                data=m,
                times=times,
                t_index=t_index,
                s_index=s_index,
                column=cols,
                row=rows,
                y=y,
                sigma=_sigma(m, weights, rows, cols, y),
                temperature=temperature,
                k_base=k_base,
                c0=c0,
                feed=scheme.feed_vector if scheme.feed else None,
            )
        )
    return runs


def _initial_values(scheme, params, runs) -> dict[str, float]:
    out = {}
    positive = np.concatenate([r.times[r.times > 0] for r in runs])
    rate_guess = 1.0 / float(np.median(positive)) if positive.size else 1.0
    for p in params:
        if p.kind == "constant":
            value = scheme.constants[p.target].si_value(scheme.temperature)
            # a constant written as 0 cannot start a search in ln k: start at 1/(typical time)
            if not value > 0:
                value = rate_guess / _excess_factor(scheme, p.target)
            out[p.name] = value
        elif p.kind == "prefactor":
            out[p.name] = float(scheme.constants[p.target].arrhenius.prefactor_si)
        elif p.kind == "energy":
            out[p.name] = scheme.constants[p.target].arrhenius.activation_energy
        else:
            value = scheme.initial.get(p.target, 0.0)
            if not value > 0:
                value = _start_guess(p.target, runs)
            out[p.name] = value
    return out


def _excess_factor(scheme, constant: str) -> float:
    """Excess-concentration factor [SI] of the first step that uses ``constant``."""
    rates = step_rates(scheme, constants={c: 1.0 for c in scheme.constants})
    for rate, st in zip(rates, scheme.steps, strict=True):
        if st.constant == constant and rate > 0:
            return float(rate)
    return 1.0


def _start_guess(species, runs) -> float:
    best_t, best = math.inf, 0.0
    largest = 0.0
    for run in runs:
        m = run.data
        if species in m.species:
            col = m.values[:, m.species.index(species)]
            ok = ~np.isnan(col) & (col > 0)
            if np.any(ok):
                i = int(np.argmax(ok))
                if m.times[i] < best_t:
                    best_t, best = m.times[i], float(col[i])
        vals = m.values[~np.isnan(m.values)]
        if vals.size:
            largest = max(largest, float(np.max(vals)))
    if best > 0:
        return best
    return largest if largest > 0 else 1.0


def _bounds(model, theta0):
    lower, upper = [], []
    span = SEARCH_DECADES * math.log(10.0)
    for p, t in zip(model.params, theta0, strict=True):
        if p.kind == "energy":
            scale = GAS_CONSTANT * model.t_ref
            lower.append(min(_ENERGY_RANGE[0] / scale, t - 1.0))
            upper.append(max(_ENERGY_RANGE[1] / scale, t + 1.0))
        else:
            lower.append(t - span)
            upper.append(t + span)
    return np.array(lower), np.array(upper)


def _start_points(model, theta0, lower, upper, starts, seed) -> np.ndarray:
    import scipy.optimize  # imported on use: keeps `import kinetics` light
    import scipy.stats

    p = theta0.size
    if starts == "auto":
        count = 4 + 2 * p
    else:
        count = int(starts)
    points = [theta0]
    if count > 1:
        sampler = scipy.stats.qmc.Halton(d=p, scramble=True, seed=seed)
        u = sampler.random(count - 1)
        half = np.array(
            [
                START_ENERGY if q.kind == "energy" else START_DECADES * math.log(10.0)
                for q in model.params
            ]
        )
        for row in u:
            points.append(np.clip(theta0 + (2.0 * row - 1.0) * half, lower, upper))
    return np.array(points)


def _least_squares(model, x0, lower, upper, tol, jac, max_nfev, fixed=None):
    """One trust-region run; ``fixed`` = (index, value) fixes one coordinate (profiles)."""
    import scipy.optimize  # imported on use: keeps `import kinetics` light
    import scipy.stats

    if fixed is None:
        fun, jacobian = model.residuals, model.jacobian
        lo, hi = lower, upper
    else:
        j, value = fixed
        keep = np.array([i for i in range(x0.size + 1) if i != j])

        def full(x):
            return np.insert(x, j, value)

        def fun(x):
            return model.residuals(full(x))

        def jacobian(x):
            return model.jacobian(full(x))[:, keep]

        lo, hi = lower[keep], upper[keep]
    x0 = np.clip(x0, lo, hi)
    with np.errstate(over="ignore", invalid="ignore", under="ignore"):
        return scipy.optimize.least_squares(
            fun,
            x0,
            jac=jacobian if jac == "exact" else jac,
            bounds=(lo, hi),
            method="trf",
            x_scale="jac",
            ftol=tol,
            xtol=tol,
            gtol=tol,
            max_nfev=max_nfev,
        )


def fit(
    scheme: Scheme,
    data,
    free: str | Sequence[str],
    *,
    weights: str | Mapping[str, float] = "equal",
    starts: int | str = "auto",
    profile: bool = True,
    seed: int = 0,
    jacobian: str = "exact",
    engine: str = "block",
    tol: float = 1e-13,
    max_evaluations: int | None = None,
) -> FitResult:
    r"""Fit free rate constants, Arrhenius parameters or start values to measured data.

    .. math::

        \hat\theta = \arg\min_\theta \sum_{r,i,s}
        \left(\frac{y_{ris} - c_s(t_{ri}; \theta)}{\sigma_{ris}}\right)^2,
        \qquad \mathrm{Cov}(\hat k) = D\, s^2 (J^\top J)^{-1} D,\quad
        s^2 = \frac{S(\hat\theta)}{N - p}

    with :math:`D = \mathrm{diag}(\partial k/\partial\theta)` (delta method).

    Parameters
    ----------
    scheme : Scheme
        The scheme; its values are the start of the search and hold every
        parameter that is not free.
    data : Measurements, DataFrame, path, or a list of them
        One or several runs, fitted together with shared parameters.  An item may
        be a pair ``(table, conditions)`` with conditions such as
        ``{"temperature": "40degC", "start:A": "0.2 mol/L"}``.
    free : str or sequence of str
        Free parameters (see :func:`parse_free`): ``"k1,k2"``, ``["k3.A", "k3.Ea"]``,
        ``"start:A"``.
    weights : {"equal", "relative", "column"} or dict, optional
        ``equal``: σ = 1 [concentration unit]; ``relative``: σ = max(|y|, 1e-3·max|y|
        of the column), a constant coefficient of variation; ``column``: σ from the
        table's ``NAME sd [unit]`` columns; a dict gives one σ per species
        [concentration unit].
    starts : int or "auto", optional
        Number of starting points (the scheme's values plus a scrambled Halton
        design within ±2 decades); ``"auto"`` is 4 + 2p.
    profile : bool, optional
        Compute the profile-likelihood intervals.
    seed : int, optional
        Seed of the start design.
    jacobian : {"exact", "2-point", "3-point"}, optional
        ``exact`` (Fréchet derivative); the finite-difference choices exist for
        comparison (benchmarks).
    engine : {"block", "entrywise"}, optional
        Propagation during the search: the block-form exponential of this module
        or the entrywise engine of :mod:`kinetics.propagate`.
    tol : float, optional
        ``ftol``, ``xtol`` and ``gtol`` of the final polish.
    max_evaluations : int, optional
        Cap on residual evaluations per search (default 200·(p + 1)).

    Returns
    -------
    FitResult

    Raises
    ------
    DataError
        Bad data, or fewer measured values than free parameters.
    UsageError
        Unknown free parameters, conflicting conditions, bad options.

    Notes
    -----
    Valid for first-order (or pseudo-first-order) schemes as the engine is.  The
    linearised intervals are exact for a model linear in θ; the profile intervals
    are the honest ones when the sum of squares is far from quadratic.  The
    statistics assume independent errors with the chosen relative weights; s² is
    estimated from the residuals in every weighting (also ``column``).

    References
    ----------
    D. M. Bates, D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
    Wiley (1988).
    """
    import scipy.optimize  # imported on use: keeps `import kinetics` light
    import scipy.stats

    if jacobian not in ("exact", "2-point", "3-point"):
        raise UsageError(f"unknown jacobian {jacobian!r}", "use exact, 2-point or 3-point")
    if engine not in ("block", "entrywise"):
        raise UsageError(f"unknown engine {engine!r}", "use block or entrywise")
    if not isinstance(weights, Mapping) and weights not in WEIGHTS:
        raise UsageError(
            f"unknown weighting {weights!r}", "use equal, relative, column or a dict of SDs"
        )
    params = parse_free(free, scheme)
    datasets = _as_runs(data, scheme)
    runs = _build_runs(scheme, datasets, params, weights)
    model = _Model(scheme, runs, params, engine)
    n_points, p = model.n_points, len(params)
    if n_points < p:
        raise DataError(
            f"{n_points} measured value{'s' if n_points != 1 else ''} cannot determine "
            f"{p} free parameters",
            ", ".join(d.source for d in datasets),
            "measure more points or free fewer parameters",
        )
    initial = _initial_values(scheme, params, runs)
    theta0 = model.theta_of(initial)
    lower, upper = _bounds(model, theta0)
    max_nfev = max_evaluations or 200 * (p + 1)

    # multi-start: a loose search from every start point, then polish the distinct optima
    candidates = []
    points = _start_points(model, theta0, lower, upper, starts, seed)
    loose = 1e-6 if len(points) > 1 else tol  # a single start goes straight to the optimum
    for x0 in points:
        res = _least_squares(model, x0, lower, upper, loose, jacobian, max_nfev)
        candidates.append(res)
    candidates.sort(key=lambda r: r.cost)
    polished = []
    relevant = 2.0 * candidates[0].cost
    if n_points > p:  # beyond the joint 95 % region of the best point nothing can matter
        relevant *= 1.0 + 2.0 * p / (n_points - p) * scipy.stats.f.ppf(0.95, p, n_points - p)
    relevant += 1e-20 * float(sum(np.sum((r.y / r.sigma) ** 2) for r in runs))
    for res in candidates:
        if polished and 2.0 * res.cost > relevant:
            break
        if any(np.max(np.abs(res.x - q.x)) < 1e-3 for q, _ in polished):
            continue
        if loose == tol:
            polished.append((res, res))
            continue
        better = _least_squares(model, res.x, lower, upper, tol, jacobian, max_nfev)
        if better.cost > res.cost:
            better = res
        polished.append((better, res))
        if len(polished) >= 8:
            break
    polished.sort(key=lambda pair: pair[0].cost)
    distinct: list = []
    for pair in polished:  # polishing can bring two loose optima together
        if not any(np.max(np.abs(pair[0].x - q[0].x)) < 1e-3 for q in distinct):
            distinct.append(pair)
    polished = distinct
    best = polished[0][0]
    theta = best.x
    ssr = 2.0 * best.cost
    dof = n_points - p

    # exact Jacobian at the optimum (also for finite-difference searches)
    J = model.jacobian(theta)
    si = model.si_values(theta)
    dsi = model.dsi_dtheta(theta)
    scale = np.array([q.si_per_unit for q in params])
    values = si / scale
    dvalues = dsi / scale
    s2 = ssr / dof if dof > 0 else math.nan
    cov_theta, cond, weak, zero_cols = _covariance(J, s2)
    cov = cov_theta * np.outer(dvalues, dvalues)  # delta method
    se = np.sqrt(np.abs(np.diag(cov)))
    se_theta = np.sqrt(np.abs(np.diag(cov_theta)))
    with np.errstate(invalid="ignore", divide="ignore"):
        corr = cov_theta / np.outer(se_theta, se_theta)
    t_crit = float(scipy.stats.t.ppf(0.975, dof)) if dof > 0 else math.nan
    scale_y = float(sum(np.sum((r.y / r.sigma) ** 2) for r in runs))
    exact = ssr <= 1e-24 * scale_y  # residuals at the rounding level: noise-free data

    # alternatives: other optima inside the joint 95 % region
    threshold = ssr
    if dof > 0:
        threshold = ssr * (1.0 + p / dof * scipy.stats.f.ppf(0.95, p, dof))
    threshold += 1e-20 * scale_y
    alternatives = []
    for res, _ in polished[1:]:
        # a second minimum counts when it is a separate basin: the sum of squares rises
        # between the two points (along a flat valley it does not; a near-singular
        # Jacobian is reported as such instead)
        if not cond <= CONDITION_LIMIT or 2.0 * res.cost > threshold:
            continue
        if np.max(np.abs(res.x - theta)) <= 1e-3:
            continue
        if any(np.max(np.abs(res.x - model.theta_of(a["_si"]))) < 1e-3 for a in alternatives):
            continue
        r_mid = model.residuals(0.5 * (res.x + theta))
        barrier = float(r_mid @ r_mid) - 2.0 * max(res.cost, best.cost)
        if not barrier > 1e-9 * ssr + 1e-20 * scale_y:
            continue
        vals = model.si_values(res.x) / scale
        alt = {q.name: float(v) for q, v in zip(params, vals, strict=True)}
        alt["sum_of_squares"] = 2.0 * float(res.cost)
        alt["_si"] = dict(zip([q.name for q in params], model.si_values(res.x), strict=True))
        alternatives.append(alt)
    for alt in alternatives:
        del alt["_si"]

    # profile intervals
    profiles: list[tuple[float | None, float | None]] = []
    profile_notes: list[str] = []
    evaluations_search = model.evaluations
    for j in range(p):
        if exact or s2 == 0:
            profiles.append((float(values[j]), float(values[j])))
            continue
        if not profile or not (dof > 0 and math.isfinite(se_theta[j])):
            profiles.append((None, None))
            continue
        lo, hi, better_found = _profile(
            model, j, theta, ssr, s2, t_crit, se_theta[j], lower, upper, cov_theta
        )
        if better_found is not None:
            profile_notes.append(better_found)
        profiles.append((_display(model, j, lo), _display(model, j, hi)))

    # statistics at the optimum: residuals recomputed with the entrywise engine
    fitted = _fitted_scheme(scheme, params, si, {})
    engine_pred, residual_tables = _engine_predictions(scheme, params, si, runs, fitted)
    block_pred = model.predictions(theta)
    engine_gap = max(
        (float(np.max(np.abs(a - b))) for a, b in zip(engine_pred, block_pred, strict=True)),
        default=0.0,
    )
    wres = np.concatenate([(pr - r.y) / r.sigma for pr, r in zip(engine_pred, runs, strict=True)])
    statistics = _statistics(
        model, runs, params, engine_pred, ssr, dof, s2, cond, best, candidates, polished
    )
    statistics["model_evaluations"] = model.evaluations
    statistics["model_evaluations_search"] = evaluations_search
    statistics["jacobian_evaluations"] = model.jacobian_evaluations
    statistics["engine_difference"] = engine_gap
    statistics["reference_temperature"] = model.t_ref

    estimates = {}
    for j, q in enumerate(params):
        ci = (values[j] - t_crit * se[j], values[j] + t_crit * se[j])
        tval = values[j] / se[j] if se[j] > 0 else (math.inf if se[j] == 0 else math.nan)
        pval = float(scipy.stats.t.sf(tval, dof)) if dof > 0 and not math.isnan(tval) else math.nan
        estimates[q.name] = Estimate(
            name=q.name,
            value=float(values[j]),
            unit=q.unit,
            std_error=float(se[j]),
            ci95=(float(ci[0]), float(ci[1])),
            ci95_profile=profiles[j],
            t_value=float(tval),
            p_value=pval,
            initial=float(initial[q.name] / q.si_per_unit),
        )
    warnings = _warnings(
        scheme,
        model,
        runs,
        params,
        theta,
        lower,
        upper,
        estimates,
        alternatives,
        cond,
        weak,
        zero_cols,
        dof,
        best,
        profile_notes,
        datasets,
        exact,
        profile,
    )
    return FitResult(
        scheme=scheme,
        parameters=params,
        estimates=estimates,
        covariance=cov,
        correlation=corr,
        residuals=residual_tables,
        weighted_residuals=wres,
        statistics=statistics,
        warnings=warnings,
        alternatives=alternatives,
        data=datasets,
        weights=weights if isinstance(weights, str) else "given",
        _theta=theta,
        _si=si,
    )


def _display(model, j, t):
    """Fitted coordinate ``t`` of parameter ``j`` in its display unit (None stays None)."""
    if t is None:
        return None
    q = model.params[j]
    si = t * GAS_CONSTANT * model.t_ref if q.kind == "energy" else math.exp(t)
    return si / q.si_per_unit


def _covariance(J, s2):
    """s²(JᵀJ)⁻¹ by SVD, the scaled condition number and the weakest direction."""
    p = J.shape[1]
    norms = np.linalg.norm(J, axis=0)
    zero_cols = [j for j in range(p) if not norms[j] > 0]
    safe = np.where(norms > 0, norms, 1.0)
    Jn = J / safe
    _, sv, Vt = np.linalg.svd(Jn, full_matrices=False)
    cond = math.inf if sv[-1] <= sv[0] * _EPS or zero_cols else float(sv[0] / sv[-1])
    weak = Vt[-1]
    if math.isfinite(cond):
        inv = (Vt.T / sv**2) @ Vt  # (JnᵀJn)⁻¹
        cov = s2 * inv / np.outer(safe, safe)
    else:
        cov = np.full((p, p), math.nan)
    return cov, cond, weak, zero_cols


def _profile(model, j, theta, ssr, s2, t_crit, se_theta, lower, upper, cov_theta):
    r"""Both ends of the 95 % profile interval of coordinate ``j`` (None: unbounded).

    The profile :math:`\tau(\theta_j) = \mathrm{sign}(\theta_j - \hat\theta_j)
    \sqrt{(S_j(\theta_j) - S(\hat\theta))/s^2}` (Bates & Watts 1988, sec. 6.1) is
    solved for :math:`|\tau| = t_{0.975}(N - p)`, which is the F-based threshold
    :math:`S = S(\hat\theta)(1 + F_{0.95}(1, N-p)/(N-p))`.
    """
    p = theta.size
    others = np.delete(theta, j)
    note = None
    # conditional-mean direction of the other coordinates (linearised), for warm starts
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = np.delete(cov_theta[:, j], j) / cov_theta[j, j]
    if not np.all(np.isfinite(slope)):
        slope = np.zeros(p - 1)

    def ssr_at(value):
        if p == 1:
            r = model.residuals(np.array([value]))
            return float(r @ r)
        guess = others + slope * (value - theta[j])
        res = _least_squares(model, guess, lower, upper, 1e-10, "exact", 100 * p, fixed=(j, value))
        return 2.0 * float(res.cost)

    def tau(value):
        nonlocal note
        s = ssr_at(value)
        if s < ssr * (1.0 - 1e-6) - 1e-300:
            note = (
                f"While profiling {model.params[j].name} the search found a better fit than "
                "the reported optimum; the optimum is only a local one, try more starts."
            )
        return math.sqrt(max(s - ssr, 0.0) / s2)

    ends: list[float | None] = []
    limit = SEARCH_DECADES * math.log(10.0) if model.params[j].log else 50.0
    goal = t_crit
    for sign in (-1.0, 1.0):
        bound = lower[j] if sign < 0 else upper[j]
        reach = min(limit, abs(bound - theta[j]))
        # distances d from the optimum; tau grows about linearly with d (exactly so for a
        # linear model), so extrapolate from the linearised interval to bracket the end
        a, fa = 0.0, -goal
        d = min(t_crit * se_theta if se_theta > 0 else 0.1, reach)
        fd = math.nan
        while True:
            fd = tau(theta[j] + sign * d) - goal
            if fd >= 0 or d >= reach:
                break
            a, fa = d, fd
            grow = 1.05 * goal / (fd + goal) if fd + goal > 0 else 4.0
            d = min(reach, d * min(max(grow, 1.2), 4.0))
        if fd < 0:
            ends.append(None)  # the data set no limit on this side within the search range
            continue
        b, fb = d, fd
        side = 0
        for _ in range(60):  # Illinois false position on [a, b]
            if fb <= 1e-7 * goal or b - a <= 1e-10 * max(1.0, abs(theta[j])):
                break
            c = (a * fb - b * fa) / (fb - fa)
            fc = tau(theta[j] + sign * c) - goal
            if abs(fc) <= 1e-7 * goal:
                b, fb = c, fc
                break
            if fc > 0:
                b, fb = c, fc
                if side == 1:
                    fa /= 2.0
                side = 1
            else:
                a, fa = c, fc
                if side == -1:
                    fb /= 2.0
                side = -1
        ends.append(theta[j] + sign * b)
    return ends[0], ends[1], note


def _engine_predictions(scheme, params, si, runs, fitted):
    """Model values at the data points with the entrywise engine, and data − model tables."""
    from .propagate import propagate

    preds, tables = [], []
    for run in runs:
        s = _fitted_scheme(scheme, params, si, run.data.conditions)
        K = s.rate_matrix()
        c0 = s.initial_vector
        c = propagate(K, c0, run.times, s.feed_vector if s.feed else None)
        pred = c[run.t_index, run.s_index]
        preds.append(pred)
        table = np.full(run.data.values.shape, np.nan)
        table[run.row, run.column] = run.y - pred
        tables.append(table)
    return preds, tables


def _species_params(scheme, params) -> dict[str, int]:
    """How many free parameters describe each species (its own loss, its start value)."""
    counts: dict[str, int] = {}
    for q in params:
        owners = set()
        if q.kind == "start":
            owners.add(q.target)
        else:
            owners.update(st.reactant for st in scheme.steps if st.constant == q.target)
        for o in owners:
            counts[o] = counts.get(o, 0) + 1
    return counts


def _statistics(model, runs, params, preds, ssr, dof, s2, cond, best, candidates, polished):
    import scipy.optimize  # imported on use: keeps `import kinetics` light
    import scipy.stats

    p = len(params)
    per_species: dict[str, dict] = {}
    observed: dict[str, list] = {}
    fitted: dict[str, list] = {}
    for run, pred in zip(runs, preds, strict=True):
        for name_index, o, c in zip(run.s_index, run.y, pred, strict=True):
            name = model.scheme.species[name_index].name
            observed.setdefault(name, []).append(o)
            fitted.setdefault(name, []).append(c)
    counts = _species_params(model.scheme, params)
    overall_terms = 0.0
    for name in observed:
        o = np.array(observed[name])
        c = np.array(fitted[name])
        ss_res = float(np.sum((o - c) ** 2))
        ss_tot = float(np.sum((o - o.mean()) ** 2))
        per_species[name] = {
            "points": int(o.size),
            "r_squared": 1.0 - ss_res / ss_tot if ss_tot > 0 else None,
            "rmse": math.sqrt(ss_res / o.size),
            "chi2_error_level_percent": chi2_error_level(o, c, counts.get(name, 0)),
        }
        if o.mean() > 0:
            overall_terms += ss_res / o.mean() ** 2
    overall = None
    if dof > 0:
        overall = 100.0 * math.sqrt(overall_terms / scipy.stats.chi2.ppf(0.95, dof))
    return {
        "points": model.n_points,
        "parameters": p,
        "degrees_of_freedom": dof,
        "sum_of_squares": ssr,
        "residual_variance": s2,
        "residual_sd": math.sqrt(s2) if s2 == s2 else None,
        "chi2_error_level_percent": overall,
        "species": per_species,
        "condition_number": cond,
        "converged": bool(best.status > 0),
        "message": str(best.message),
        "optimality": float(best.optimality),
        "starts": len(candidates),
        "distinct_optima": len(polished),
    }


def _fmt(x: float) -> str:
    return f"{x:.4g}"


def _warnings(
    scheme,
    model,
    runs,
    params,
    theta,
    lower,
    upper,
    estimates,
    alternatives,
    cond,
    weak,
    zero_cols,
    dof,
    best,
    profile_notes,
    datasets,
    exact=False,
    profiled=True,
) -> list[str]:
    out: list[str] = []
    names = [q.name for q in params]
    measured = sorted({name for d in datasets for name in d.species})
    if best.status <= 0:
        out.append(
            "The search stopped before converging "
            f"({best.message}); the estimates may not be the optimum."
        )
    if alternatives:
        best_text = ", ".join(
            f"{q.name} = {_fmt(estimates[q.name].value)} {q.unit}" for q in params
        )
        alt_texts = [
            ", ".join(f"{q.name} = {_fmt(a[q.name])} {q.unit}" for q in params)
            for a in alternatives
        ]
        unmeasured = _unmeasured_intermediates(scheme, measured)
        advice = (
            f"Measure the intermediate{'s' if len(unmeasured) > 1 else ''} "
            f"{', '.join(unmeasured)} as well to decide which is which."
            if unmeasured
            else "Measure more species, more times or more conditions to decide."
        )
        out.append(
            f"The data fit equally well with {best_text} and with {' and with '.join(alt_texts)}: "
            f"the measured species ({', '.join(measured)}) cannot tell these values apart. "
            + advice
        )
    for j in zero_cols:
        out.append(
            f"The data do not depend on {names[j]} at all: it cannot be estimated from "
            "these measurements; fix it or measure the species it affects."
        )
    if not zero_cols and cond > CONDITION_LIMIT:
        involved = [names[j] for j in range(len(names)) if abs(weak[j]) > 0.2]
        cond_text = "infinite" if not math.isfinite(cond) else f"{cond:.2g}"
        unmeasured = _unmeasured_intermediates(scheme, measured)
        advice = "fix one of them, or measure more species or a wider time range."
        if unmeasured:
            plural = "s" if len(unmeasured) > 1 else ""
            advice = (
                f"measure the intermediate{plural} {_join(unmeasured)} as well, or fix one of them."
            )
        out.append(
            f"The Jacobian is nearly singular (condition number {cond_text} after scaling): "
            f"the data determine only a combination of {_join(involved)}, not each one; " + advice
        )
    if exact and dof > 0:
        out.append(
            "The model reproduces the data to rounding level (noise-free data?): the "
            "standard errors and intervals reflect rounding only."
        )
    if dof == 0:
        out.append(
            "There are as many free parameters as measured values: the fit passes through "
            "every point and no uncertainty can be estimated."
        )
    for j, q in enumerate(params):
        e = estimates[q.name]
        at_low = theta[j] <= lower[j] + 1e-2
        at_high = theta[j] >= upper[j] - 1e-2
        if at_low or at_high:
            out.append(
                f"{q.name} ran into the {'lower' if at_low else 'upper'} end of the search "
                f"range ({_fmt(e.value)} {q.unit}): the data do not bound it."
            )
        if (
            q.kind != "energy"
            and dof > 0
            and math.isfinite(e.p_value)
            and e.p_value > 0.05
            and q.name not in [names[k] for k in zero_cols]
        ):
            out.append(
                f"{q.name} is poorly determined: its standard error "
                f"({_fmt(e.std_error)} {q.unit}) is so large that the t-test cannot reject "
                f"{q.name} = 0 at the 5 % level (p = {e.p_value:.2g})."
            )
        lo, hi = e.ci95_profile
        if exact or not profiled:
            continue
        if dof > 0 and e.std_error > 0 and (lo is None or hi is None):
            side = "upper" if hi is None else "lower"
            if lo is None and hi is None:
                side = "upper or lower"
            out.append(
                f"The data set no {side} limit on {q.name} within the search range: "
                "its 95 % profile interval is open."
            )
        elif lo is not None and hi is not None and e.std_error > 0 and lo != hi:
            lin = e.ci95[1] - e.ci95[0]
            if lin > 0 and abs((hi - lo) - lin) > 0.25 * lin:
                out.append(
                    f"The profile interval of {q.name} ({_fmt(lo)} to {_fmt(hi)} {q.unit}) "
                    f"differs markedly from the linearised one ({_fmt(e.ci95[0])} to "
                    f"{_fmt(e.ci95[1])}): the sum of squares is far from quadratic, trust the "
                    "profile interval."
                )
    out.extend(profile_notes)
    out.extend(_plausibility(scheme, model, runs, params, theta))
    temps = {d.conditions.get("temperature") for d in datasets} - {None}
    if temps and not any(c.arrhenius for c in scheme.constants.values()):
        out.append(
            "A temperature is set for a data set, but no constant of the scheme depends on "
            "the temperature (none is defined with arrhenius)."
        )
    return out


def _join(items) -> str:
    items = list(items)
    if len(items) <= 1:
        return "".join(items) or "the parameters"
    return ", ".join(items[:-1]) + " and " + items[-1]


def _unmeasured_intermediates(scheme, measured) -> list[str]:
    consumed = {st.reactant for st in scheme.steps}
    formed = {name for st in scheme.steps for _, name in st.products}
    return [
        s.name
        for s in scheme.species
        if s.name in consumed and s.name in formed and s.name not in measured
    ]


def _plausibility(scheme, model, runs, params, theta) -> list[str]:
    """Optima at the edge of physical plausibility (extreme ratios, invisible time scales)."""
    out = []
    t_last = max(float(r.times[-1]) for r in runs)
    positive = [float(r.times[r.times > 0][0]) for r in runs if np.any(r.times > 0)]
    t_first = min(positive) if positive else 0.0
    all_rates = []
    for run in runs:
        rates, *_ = model._run_state(run, theta, False)
        all_rates.append(rates)
    rates = np.max(np.array(all_rates), axis=0)
    seen = set()
    fast = set()
    for q in params:
        own = np.array([st.constant == q.target for st in scheme.steps])
        other = rates[~own]
        other = other[other > 0]
        if q.kind != "start" and np.any(own) and other.size:
            if float(np.max(rates[own])) > RATIO_LIMIT * float(np.max(other)):
                fast.add(q.target)
    for q in params:
        if q.kind == "start" or q.target in seen:
            continue
        seen.add(q.target)
        own = np.array([st.constant == q.target for st in scheme.steps])
        if not np.any(own):
            continue
        k = float(np.max(rates[own]))
        other = rates[~own]
        other = other[other > 0]
        label = q.target
        if other.size and k > RATIO_LIMIT * float(np.max(other)):
            out.append(
                f"{label} came out more than a million times larger than every other constant "
                f"({k:.3g} 1/s): the step is effectively instantaneous for these data, which "
                "fix only a lower bound for it."
            )
        elif (
            other.size
            and k < float(np.min(other)) / RATIO_LIMIT
            and not any(
                st.constant in fast for st, o in zip(scheme.steps, own, strict=True) if not o
            )
        ):
            out.append(
                f"{label} came out more than a million times smaller than every other constant "
                f"({k:.3g} 1/s): the step is effectively absent from these data, which fix "
                "only an upper bound for it."
            )
        if k * t_last < 1e-3:
            out.append(
                f"{label} is too slow to be seen in the measured window "
                f"({label} × last time = {k * t_last:.2g}): less than 0.1 % of conversion "
                "by this step; the data give only an upper bound."
            )
        if t_first > 0 and k * t_first > 50.0:
            out.append(
                f"{label} is so fast that its step is complete before the first measurement "
                f"({label} × first time = {k * t_first:.2g}): the data give only a lower bound."
            )
    return out
