r"""The model of a fit: free parameters, the runs of measured data, residuals and Jacobian.

:class:`Model` evaluates the weighted residuals of every run and their exact Jacobian in
the fitted coordinates :math:`\theta` (``ln k``, ``ln A``, ``ln c0``, ``Ea/(R T_ref)``),
through the block-form Fréchet derivative of :mod:`kinetics.sensitivity` (or the
entrywise one, ``engine="entrywise"``).  Arrhenius constants come from the one law,
:func:`kinetics.scheme.arrhenius_pairs`.
"""

from __future__ import annotations

import math
import numbers
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np

from .. import activity, parameters
from ..engine import block_sensitivities
from ..errors import (
    ActivityError,
    ArgumentTypeError,
    ConditionError,
    ConstantError,
    DataError,
    ExpressionError,
    ParameterSpecError,
    SettingError,
    shown_value,
)
from ..measurements import (
    Measurements,
    measurements_from_frame,
    parse_condition,
    read_measurements,
)
from ..parameters import FIT_WORDS, Target
from ..rate_constants import arrhenius_pairs
from ..ratematrix import rate_pattern, step_rates
from ..units import GAS_CONSTANT, time_factor

if TYPE_CHECKING:
    from ..scheme import Scheme

__all__ = [
    "OUTSIDE",
    "RELATIVE_FLOOR",
    "WEIGHTS",
    "Model",
    "Parameter",
    "Run",
    "as_runs",
    "build_runs",
    "check_weights",
    "initial_values",
    "parse_free",
    "run_values",
    "scheme_with_estimates",
]

#: The weighting schemes of :func:`kinetics.fit.fit`.
WEIGHTS = ("equal", "relative", "column")
#: ``relative`` weights: the standard deviation is ``max(|y|, RELATIVE_FLOOR * max|y|)``
#: of the column, so that readings of zero do not get an infinite weight.
RELATIVE_FLOOR = 1e-3


#: The weighted residual of every point where the values leave the domain of a definition.
OUTSIDE = 1e100

#: A free parameter of a fit: what its name refers to (see :mod:`kinetics.parameters`).
Parameter = Target


def parse_free(free: str | Sequence[str], scheme: Scheme) -> list[Parameter]:
    """Resolve the names of free parameters (``--free k1,k2 --free start:A``).

    Parameters
    ----------
    free : str or sequence of str
        Names, each item may hold several separated by commas: ``k1`` (a rate
        constant), ``k3.A`` / ``k3.Ea`` (Arrhenius parameters of ``k3``),
        ``start:A`` (the start concentration of ``A``), ``t_p`` (a named quantity that
        constants are defined from; they follow it).
    scheme : Scheme

    Returns
    -------
    list of Parameter
        In the order given.

    Raises
    ------
    kinetics.errors.ParameterSpecError
        For a repeated name or none at all.
    kinetics.errors.ConstantError
        For an unknown name, or a plain name for an Arrhenius constant (see
        :func:`kinetics.parameters.resolve`).
    """
    items = [free] if isinstance(free, str) else list(free)
    names: list[str] = []
    for item in items:
        for piece in str(item).split(","):
            piece = piece.strip()
            if not piece:
                continue
            if piece in names:
                raise ParameterSpecError(
                    f"the free parameter {piece!r} is listed twice", "list it once"
                )
            names.append(piece)
    if not names:
        raise ParameterSpecError("no free parameter given", "name at least one, e.g. k1 or k1,k2")
    params = [parameters.resolve(scheme, name, FIT_WORDS) for name in names]
    for p in params:
        if p.kind == "operation":
            _check_free_quantity(scheme, p)
    return params


def _check_free_quantity(scheme: Scheme, p: Parameter) -> None:
    """Refuse to free a named quantity of an operation unless it is positive and no part.

    A part removed cannot be freed: a fit searches the logarithm of the quantity, which a
    part above 100 % would leave.
    """
    if not p.nominal > 0:
        raise ConstantError(
            f"free parameter {p.name!r} is {p.nominal:g} in the file; a fit frees positive "
            "quantities only",
            "give it a positive starting value in the file",
        )
    fractions = {
        n
        for s in scheme.timeline.statements
        for b in s.bound
        for n in b.names
        if b.field == "fraction"
    }
    if p.name in fractions:
        raise ConstantError(
            f"free parameter {p.name!r} is a part removed, which a fit cannot free",
            "vary it in a sweep instead (kinetics sweep --vary)",
        )


def scheme_with_estimates(scheme, params, si, conditions) -> Scheme:
    """The scheme with fitted values ``si`` (internal units) and a run's conditions.

    The conditions are ``temperature``, ``start:S`` and constants by name; see
    :func:`kinetics.parameters.scheme_with`.
    """
    given = {k: v for k, v in conditions.items() if k in scheme.constants}
    initial = {k[6:]: v for k, v in conditions.items() if k.startswith("start:")}
    return parameters.scheme_with(
        scheme,
        params,
        si,
        temperature=conditions.get("temperature"),
        initial=initial,
        given=given,
    )


def run_values(scheme: Scheme, times: np.ndarray) -> np.ndarray:
    """Concentrations of a scheme with operations at ``times`` [s], shape (times, species).

    At a time of an operation, the value just after it (right-continuous).
    """
    from ..solution import solve

    sol = solve(scheme, times)
    return sol.concentrations[np.searchsorted(sol.times, times, side="right") - 1]


@dataclass
class Run:
    """One data set as the model sees it: residual indices, weights and conditions."""

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
    fixed: dict = field(default_factory=dict)  # constants the run's conditions set [SI]
    activities: dict = field(default_factory=dict)  # start activities: name -> matrix index


class Model:
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
        self.const_of = {
            p.target: index[p.target]
            for p in params
            if p.kind in ("constant", "prefactor", "energy")
        }
        self.quantity_of = {p.target: j for j, p in enumerate(params) if p.kind == "quantity"}
        self.evaluations = 0
        self.jacobian_evaluations = 0
        self.n_points = int(sum(r.y.size for r in runs))

    # -- coordinates ------------------------------------------------------------------
    def scale(self, j: int) -> float | None:
        """The unit of a linear coordinate θ_j [SI]; None for a logarithmic one.

        R T_ref for an activation energy, the size of the file's value for a named
        quantity not above 0 (an activation entropy); every other parameter has a
        logarithmic coordinate.
        """
        p = self.params[j]
        if p.kind == "energy":
            return GAS_CONSTANT * self.t_ref
        if p.log:
            return None
        return abs(p.nominal) if math.isfinite(p.nominal) and p.nominal != 0 else 1.0

    def theta_of(self, values_si: dict[str, float]) -> np.ndarray:
        """The coordinates θ of parameter values given in SI, by name."""
        out = []
        for j, p in enumerate(self.params):
            v, scale = values_si[p.name], self.scale(j)
            out.append(math.log(v) if scale is None else v / scale)
        return np.array(out)

    def si_of(self, j: int, t: float) -> float:
        """The SI value of coordinate ``t`` of parameter ``j``."""
        scale = self.scale(j)
        return math.exp(t) if scale is None else t * scale

    def si_values(self, theta) -> np.ndarray:
        """Parameter values in SI (start values in the concentration unit)."""
        theta = np.asarray(theta, dtype=float)
        return np.array([self.si_of(j, t) for j, t in enumerate(theta)])

    def dsi_dtheta(self, theta) -> np.ndarray:
        """The derivative of each parameter's SI value with respect to its coordinate."""
        si = self.si_values(theta)
        return np.array([v if self.scale(j) is None else self.scale(j) for j, v in enumerate(si)])

    def run_state(self, run: Run, theta, derivatives: bool):
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
            elif p.kind == "start":
                i = self.scheme.index[p.target]
                c0[i] = si[j]
                dc0[j, i] = si[j]  # d c0 / d ln c0
        for c, parts in arrhenius.items():
            self._arrhenius(run, c, parts, si, k, dk)
        self._follow(run, k, dk, si, theta, derivatives)
        rates = self.phi * k[self.step_const]
        drates = self.phi[None, :] * dk[:, self.step_const] if derivatives else None
        if run.activities:
            self._start_activities(run, rates, drates, c0, dc0)
        if not derivatives:
            return rates, c0, None, None
        return rates, c0, drates, dc0

    def _arrhenius(self, run: Run, c: int, parts: dict, si, k, dk) -> None:
        r"""Constant ``c`` from its free Arrhenius parameters ``parts`` (in place), with slopes.

        ``parts`` maps ``prefactor`` and ``energy`` to their coordinates j; the slopes are
        :math:`\partial k/\partial \ln A = k` and
        :math:`\partial k/\partial (E_a / R T_{ref}) = -k T_{ref}/T`.
        """
        law = self.scheme.constants[self.const_names[c]].arrhenius
        hi, _ = arrhenius_pairs(  # the one Arrhenius law, exact for the values given
            law,
            run.temperature,
            prefactor=si[parts["prefactor"]] if "prefactor" in parts else None,
            energy=si[parts["energy"]] if "energy" in parts else None,
        )
        k[c] = float(hi)
        if "prefactor" in parts:
            dk[parts["prefactor"], c] = k[c]
        if "energy" in parts:
            dk[parts["energy"], c] = -k[c] * self.t_ref / run.temperature

    def _start_activities(self, run: Run, rates, drates, c0, dc0) -> None:
        r"""Start values written as activities, from the rates (in place), with slopes.

        :math:`n = A / (\lambda N_A)` with :math:`\lambda` from the rates; the slopes
        only when ``drates`` is given.
        """
        amounts = activity.start_amounts_for_rates(self.scheme, rates[None])
        lam = activity.decay_rates(self.scheme, rates)
        dlam = activity.decay_rates(self.scheme, drates) if drates is not None else None
        for name, i in run.activities.items():
            c0[i] = amounts[name][0]
            if dlam is not None:
                dc0[:, i] = activity.start_amount_slopes(c0[i], lam[i], dlam[:, i])

    def _follow(self, run: Run, k, dk, si, theta, derivatives: bool) -> None:
        """Constants defined from the fitted ones follow them (in place), with derivatives.

        The followers are evaluated exactly (:meth:`kinetics.scheme.Scheme.exact_constants`)
        and differentiated exactly by the chain rule through the definitions
        (:meth:`kinetics.scheme.Scheme.constant_slopes`, no finite differences).
        """
        free = [self.const_names[c] for c in sorted(set(self.const_of.values()))]
        sources = free + list(self.quantity_of)
        followers = [
            f
            for f in dict.fromkeys(x for c in sources for x in self.scheme.driven_by(c))
            if f not in free and f not in run.fixed
        ]
        if not followers:
            return
        index = {name: i for i, name in enumerate(self.const_names)}
        at = {c: Fraction(float(k[index[c]])) for c in free}
        at.update({q: Fraction(float(si[j])) for q, j in self.quantity_of.items()})
        given = {**{c: Fraction(v) for c, v in run.fixed.items()}, **at}
        exact = self.scheme.exact_constants(run.temperature, given)
        for f in followers:
            k[index[f]] = float(exact[f])
        if not derivatives:
            return
        dsi = self.dsi_dtheta(theta)
        slopes = self.scheme.constant_slopes(sources, run.temperature, given)
        for f in followers:
            for source, slope in slopes[f].items():
                if source in self.quantity_of:
                    j = self.quantity_of[source]
                    dk[j, index[f]] += float(slope) * dsi[j]
                else:
                    dk[:, index[f]] += float(slope) * dk[:, index[source]]

    def _with_operations(self, run: Run, theta, derivatives: bool):
        """Values of a run with operations, and their derivatives by central differences.

        Each evaluation solves the run exactly (:func:`run_values`); the derivative in
        each fitted coordinate is a central difference at a step of 2^-20 (its error is
        of order 1e-12 relative, far below the data's), as an operation moved by a free
        time has no Fréchet derivative of one matrix exponential.
        """
        theta = np.asarray(theta, dtype=float)

        def values(th):
            s = scheme_with_estimates(
                self.scheme, self.params, self.si_values(th), self._conditions(run)
            )
            return run_values(s, run.times)

        c = values(theta)
        if not derivatives:
            return c, None
        h = 2.0**-20
        S = np.empty((len(self.params), *c.shape))
        for j in range(len(self.params)):
            step = np.zeros_like(theta)
            step[j] = h
            S[j] = (values(theta + step) - values(theta - step)) / (2 * h)
        return c, S

    @staticmethod
    def _conditions(run: Run) -> dict:
        return run.data.conditions

    def _solve_run(self, run: Run, theta, derivatives: bool):
        """Concentrations at the run's times and, with ``derivatives``, dc/dθ_j.

        The derivative is the part through the rate matrix (the Fréchet derivative) plus
        the part through the start values (a start value, or a start activity that follows
        a decay constant); a run with operations is solved stretch by stretch
        (:meth:`_with_operations`).
        """
        if self.scheme.timeline:
            return self._with_operations(run, theta, derivatives)
        rates, c0, drates, dc0 = self.run_state(run, theta, derivatives)
        K = self.pattern.dense(rates)
        rate_params = [j for j, p in enumerate(self.params) if p.kind != "start"]
        start_params = [j for j in range(len(self.params)) if derivatives and np.any(dc0[j])]
        if self.engine == "entrywise":
            from ..engine import propagate, sensitivities

            c = propagate(K, c0, run.times, run.feed)
            if not derivatives:
                return c, None
            S = np.zeros((len(self.params), run.times.size, K.shape[0]))
            if rate_params:
                directions = self.pattern.dense(drates[rate_params])
                S[rate_params] = sensitivities(K, c0, run.times, directions, run.feed)
            for j in start_params:
                S[j] += propagate(K, dc0[j], run.times)
            return c, S
        if not derivatives:
            c, _ = block_sensitivities(K, c0, run.times, None, run.feed)
            return c, None
        E = self.pattern.dense(drates[rate_params]) if rate_params else None
        V = dc0[start_params] if start_params else None
        c, S_part = block_sensitivities(K, c0, run.times, E, run.feed, V)
        S = np.zeros((len(self.params), run.times.size, K.shape[0]))
        S[rate_params] = S_part[: len(rate_params)]
        S[start_params] += S_part[len(rate_params) :]
        return c, S

    def predictions(self, theta) -> list[np.ndarray]:
        """Model values at the measured points, one array per run [conc]."""
        out = []
        for run in self.runs:
            c, _ = self._solve_run(run, theta, False)
            out.append(c[run.t_index, run.s_index])
        return out

    def residuals(self, theta) -> np.ndarray:
        """Weighted residuals (model − data)/σ of all runs.

        Values a definition of the scheme cannot take (a named quantity that makes a
        constant negative) give residuals of :data:`OUTSIDE` each: the search steps back.
        """
        self.evaluations += 1
        parts = []
        for run in self.runs:
            try:
                c, _ = self._solve_run(run, theta, False)
            except (ExpressionError, ActivityError):
                return np.full(self.n_points, OUTSIDE)
            parts.append((c[run.t_index, run.s_index] - run.y) / run.sigma)
        return np.concatenate(parts)

    def jacobian(self, theta) -> np.ndarray:
        """Exact Jacobian of :meth:`residuals` with respect to θ, shape (N, p).

        It is zero where the values leave the domain of a definition, as :meth:`residuals`
        is constant there.
        """
        self.jacobian_evaluations += 1
        parts = []
        for run in self.runs:
            try:
                _, S = self._solve_run(run, theta, True)
            except (ExpressionError, ActivityError):
                return np.zeros((self.n_points, len(self.params)))
            parts.append((S[:, run.t_index, run.s_index] / run.sigma).T)
        return np.concatenate(parts, axis=0)

    def feasible(self, theta) -> bool:
        """True when every definition of the scheme takes the values θ (cheap: no solve)."""
        try:
            for run in self.runs:
                self.run_state(run, theta, False)
        except (ExpressionError, ActivityError):
            return False
        return True


def as_runs(data, scheme) -> list[Measurements]:
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
            raise ArgumentTypeError(
                f"cannot use {type(item).__name__} as measured data",
                "give a Measurements object, a DataFrame or a CSV path",
            )
        if conditions:
            m = m.with_conditions(_parse_conditions(conditions, scheme))
        out.append(m)
    if not out:
        raise DataError("no measured data given", hint="give at least one data table")
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
            k, v = parse_condition(f"{key}={value}", scheme, api=True)
        elif isinstance(value, numbers.Real) and not isinstance(value, bool):
            k, v = parse_condition(f"{key}=1", scheme, api=True)[0], float(value)
        else:
            raise ConditionError(
                f"conditions entry {key!r}: {shown_value(value)} is not a number or a text "
                "with a unit",
                "write e.g. conditions={'temperature': '40degC'}",
            )
        out[k] = v
    return out


def _relative_sd(y: np.ndarray, cols: np.ndarray) -> np.ndarray:
    """Standard deviations proportional to the values, floored per column.

    The floor is :data:`RELATIVE_FLOOR` times the column's largest value (1 for a column
    of zeros).
    """
    sd = np.abs(y)
    for j in np.unique(cols):
        sel = cols == j
        floor = RELATIVE_FLOOR * np.max(np.abs(y[sel]))
        sd[sel] = np.maximum(sd[sel], floor if floor > 0 else 1.0)
    return sd


def _sigma(m: Measurements, weights, rows, cols, y) -> np.ndarray:
    """The standard deviation of each measured value, by the weighting asked."""
    if isinstance(weights, Mapping):
        sd = np.empty(y.size)
        for k, j in enumerate(cols):
            name = m.species[j]
            if name not in weights:
                raise SettingError(
                    f"no standard deviation given for {name}",
                    "give one for every measured species",
                )
            sd[k] = float(weights[name])
        if np.any(~(sd > 0)):
            raise SettingError("standard deviations must be positive")
        return sd
    if weights == "equal":
        return np.ones(y.size)
    if weights == "relative":
        return _relative_sd(y, cols)
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
    check_weights(weights)
    raise AssertionError(f"weights {weights!r} passed the check")  # pragma: no cover


def check_weights(weights) -> None:
    """Refuse weights that are not one of :data:`WEIGHTS` or a mapping of SDs.

    Raises
    ------
    kinetics.errors.SettingError

    Examples
    --------
    >>> check_weights("relative")
    """
    if not isinstance(weights, Mapping) and weights not in WEIGHTS:
        raise SettingError(
            f"unknown weighting {weights!r}", "use equal, relative, column or a dict of SDs"
        )


def build_runs(scheme, datasets, params, weights) -> list[Run]:
    """The runs of a fit: each data set with its residual indices, weights and conditions."""
    free_consts = {p.target for p in params if p.kind != "start"}
    free_starts = {p.target for p in params if p.kind == "start"}
    names = list(scheme.constants)
    runs = []
    for m in datasets:
        temperature = m.conditions.get("temperature", scheme.temperature)
        given = {}
        for name in names:
            if name in m.conditions:
                if name in free_consts:
                    raise ConditionError(
                        f"{name} is free but {m.source} also sets it", "free it or set it, not both"
                    )
                given[name] = m.conditions[name]
        # the run's constants, exactly; constants defined from the given ones follow
        exact = scheme.exact_constants(temperature, given)
        k_base = np.array([float(exact[name]) for name in names])
        initial = dict(scheme.initial)
        for key, value in m.conditions.items():
            if key.startswith("start:"):
                if key[6:] in free_starts:
                    raise ConditionError(
                        f"{key} is free but {m.source} also sets it", "free it or set it, not both"
                    )
                initial[key[6:]] = value
        c0 = np.zeros(len(scheme.species))
        for name, value in initial.items():
            c0[scheme.index[name]] = value
        # start values written as activities follow the decay constants (unless set)
        activities = {
            name: scheme.index[name]
            for name in scheme.start_activities
            if name not in free_starts and f"start:{name}" not in m.conditions
        }
        times = np.unique(m.times)
        mask = ~np.isnan(m.values)
        rows, cols = np.nonzero(mask)
        order = np.lexsort((rows, cols))  # column by column, then time
        rows, cols = rows[order], cols[order]
        y = m.values[rows, cols]
        s_index = np.array([scheme.index[m.species[j]] for j in cols], dtype=int)
        t_index = np.searchsorted(times, m.times[rows])
        runs.append(
            Run(
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
                fixed=given,
                activities=activities,
            )
        )
    return runs


def initial_values(scheme, params, runs) -> dict[str, float]:
    """Where the search starts: each free parameter's value in SI, from the file or the data."""
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
        elif p.kind in ("operation", "quantity"):
            out[p.name] = p.nominal
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
