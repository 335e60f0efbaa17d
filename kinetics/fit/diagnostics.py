"""Diagnostics of a fit: statistics of the residuals and warnings in plain words.

The warnings read one frozen :class:`FitState` (the optimum, its uncertainty, the search
and the data); each kind of warning is one small function.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

if TYPE_CHECKING:
    from ..measurements import Measurements
    from .model import Model, Parameter
    from .result import Estimate

__all__ = [
    "CONDITION_LIMIT",
    "RATIO_LIMIT",
    "FitState",
    "chi2_error_level",
    "fit_warnings",
    "statistics",
]

#: Scaled-Jacobian condition number above which the data are said not to separate
#: the parameters.
CONDITION_LIMIT = 1e4
#: Ratio between constants beyond which an optimum is called implausible.
RATIO_LIMIT = 1e6


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


def _species_params(scheme, params) -> dict[str, int]:
    """How many free parameters describe each species (its own loss, its start value)."""
    counts: dict[str, int] = {}
    for q in params:
        owners = set()
        if q.kind == "start":
            owners.add(q.target)
        else:
            driven = {q.target, *scheme.driven_by(q.target)} if q.kind == "quantity" else {q.target}
            owners.update(st.reactant for st in scheme.steps if st.constant in driven)
        for o in owners:
            counts[o] = counts.get(o, 0) + 1
    return counts


def statistics(model, runs, params, preds, lin, best, candidates, polished) -> dict[str, Any]:
    """The statistics of a fit: per species, then the condition number and convergence.

    Per species: points, degrees of freedom, sums of squares, R² and chi-square error
    levels.

    ``preds`` are the model values at the data points (one array per run); ``lin`` the
    optimum's :class:`kinetics.fit.estimation.Linearised`; ``best``, ``candidates`` and
    ``polished`` the search results (``scipy.optimize.OptimizeResult``).
    """
    import scipy.stats  # imported on use: keeps `import kinetics` light

    ssr, dof, s2, cond = lin.ssr, lin.dof, lin.s2, lin.cond
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


@dataclass(frozen=True)
class FitState:
    """Everything the warnings of a fit read: the model, the optimum and the search.

    Attributes
    ----------
    model : Model
        The scheme, runs and free parameters.
    theta, lower, upper : numpy.ndarray
        The optimum and the search range in the fitted coordinates.
    estimates : dict of str to Estimate
    alternatives : list of dict
        Other optima that fit as well.
    cond : float
        Condition number of the scaled Jacobian.
    weak : numpy.ndarray
        Its weakest direction (a right singular vector).
    zero_cols : list of int
        Parameters the data do not depend on.
    dof : int
        Degrees of freedom.
    best : scipy.optimize.OptimizeResult
    profile_notes : list of str
    datasets : list of Measurements
    exact : bool
        The residuals are at the rounding level (noise-free data).
    profiled : bool
        Profile intervals were asked for.
    """

    model: Model
    theta: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    estimates: dict[str, Estimate]
    alternatives: list[dict]
    cond: float
    weak: np.ndarray
    zero_cols: list[int]
    dof: int
    best: Any
    profile_notes: list[str]
    datasets: list[Measurements]
    exact: bool
    profiled: bool

    @property
    def params(self) -> list[Parameter]:
        """The free parameters, in the order of the coordinates θ."""
        return self.model.params

    @property
    def measured(self) -> list[str]:
        """The measured species of all data sets, sorted."""
        return sorted({name for d in self.datasets for name in d.species})


def fit_warnings(state: FitState) -> list[str]:
    """Plain sentences about what the data cannot tell, in a fixed order."""
    out = _search_warnings(state) + _identifiability_warnings(state)
    for j in range(len(state.params)):
        out += _parameter_warnings(state, j)
    out += state.profile_notes
    model = state.model
    out += _plausibility(model.scheme, model, model.runs, state.params, state.theta)
    temps = {d.conditions.get("temperature") for d in state.datasets} - {None}
    if temps and not model.scheme.temperature_constants:
        out.append(
            "A temperature is set for a data set, but no constant of the scheme depends on "
            "the temperature (none is defined with arrhenius)."
        )
    return out


def _search_warnings(state: FitState) -> list[str]:
    """The search did not converge; other optima fit as well."""
    out: list[str] = []
    best, params = state.best, state.params
    if best.status <= 0:
        out.append(
            "The search stopped before converging "
            f"({best.message}); the estimates may not be the optimum."
        )
    if not state.alternatives:
        return out
    best_text = ", ".join(
        f"{q.name} = {_fmt(state.estimates[q.name].value)} {q.unit}" for q in params
    )
    alt_texts = [
        ", ".join(f"{q.name} = {_fmt(a[q.name])} {q.unit}" for q in params)
        for a in state.alternatives
    ]
    unmeasured = _unmeasured_intermediates(state.model.scheme, state.measured)
    advice = (
        f"Measure the intermediate{'s' if len(unmeasured) > 1 else ''} "
        f"{', '.join(unmeasured)} as well to decide which is which."
        if unmeasured
        else "Measure more species, more times or more conditions to decide."
    )
    out.append(
        f"The data fit equally well with {best_text} and with {' and with '.join(alt_texts)}: "
        f"the measured species ({', '.join(state.measured)}) cannot tell these values apart. "
        + advice
    )
    return out


def _identifiability_warnings(state: FitState) -> list[str]:
    """Parameters the data ignore, a nearly singular Jacobian, exact or saturated fits."""
    out: list[str] = []
    names = [q.name for q in state.params]
    for j in state.zero_cols:
        out.append(
            f"The data do not depend on {names[j]} at all: it cannot be estimated from "
            "these measurements; fix it or measure the species it affects."
        )
    if not state.zero_cols and state.cond > CONDITION_LIMIT:
        involved = [names[j] for j in range(len(names)) if abs(state.weak[j]) > 0.2]
        cond_text = "infinite" if not math.isfinite(state.cond) else f"{state.cond:.2g}"
        unmeasured = _unmeasured_intermediates(state.model.scheme, state.measured)
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
    if state.exact and state.dof > 0:
        out.append(
            "The model reproduces the data to rounding level (noise-free data?): the "
            "standard errors and intervals reflect rounding only."
        )
    if state.dof == 0:
        out.append(
            "There are as many free parameters as measured values: the fit passes through "
            "every point and no uncertainty can be estimated."
        )
    return out


def _parameter_warnings(state: FitState, j: int) -> list[str]:
    """The warnings about parameter ``j`` alone, in a fixed order.

    At the end of the search range, not significant, an open or a markedly non-linear
    profile interval.
    """
    out: list[str] = []
    q = state.params[j]
    e = state.estimates[q.name]
    at_low = state.theta[j] <= state.lower[j] + 1e-2
    at_high = state.theta[j] >= state.upper[j] - 1e-2
    if at_low or at_high:
        out.append(
            f"{q.name} ran into the {'lower' if at_low else 'upper'} end of the search "
            f"range ({_fmt(e.value)} {q.unit}): the data do not bound it."
        )
    if (
        q.kind != "energy"
        and state.dof > 0
        and math.isfinite(e.p_value)
        and e.p_value > 0.05
        and j not in state.zero_cols
    ):
        out.append(
            f"{q.name} is poorly determined: its standard error "
            f"({_fmt(e.std_error)} {q.unit}) is so large that the t-test cannot reject "
            f"{q.name} = 0 at the 5 % level (p = {e.p_value:.2g})."
        )
    if state.exact or not state.profiled:
        return out
    lo, hi = e.ci95_profile
    if state.dof > 0 and e.std_error > 0 and (lo is None or hi is None):
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
    out: list[str] = []
    t_last = max(float(r.times[-1]) for r in runs)
    positive = [float(r.times[r.times > 0][0]) for r in runs if np.any(r.times > 0)]
    t_first = min(positive) if positive else 0.0
    rates = np.max(np.array([model.run_state(run, theta, False)[0] for run in runs]), axis=0)
    fast = _instantaneous(scheme, params, rates)
    seen = set()
    for q in params:
        if q.kind == "start" or q.target in seen:
            continue
        seen.add(q.target)
        own = _steps_of(scheme, q.target)
        if not np.any(own):
            continue
        k = float(np.max(rates[own]))
        out += _ratio_notes(scheme, q.target, k, rates, own, fast)
        out += _window_notes(q.target, k, t_first, t_last)
    return out


def _steps_of(scheme, constant: str) -> np.ndarray:
    """Mask of the steps whose rate constant is ``constant``."""
    return np.array([st.constant == constant for st in scheme.steps])


def _other_rates(rates: np.ndarray, own: np.ndarray) -> np.ndarray:
    """The rates [1/s] above 0 of the steps outside the mask ``own``."""
    other = rates[~own]
    return other[other > 0]


def _instantaneous(scheme, params, rates: np.ndarray) -> set[str]:
    """The free constants more than :data:`RATIO_LIMIT` times faster than every other step."""
    fast = set()
    for q in params:
        own = _steps_of(scheme, q.target)
        other = _other_rates(rates, own)
        if q.kind != "start" and np.any(own) and other.size:
            if float(np.max(rates[own])) > RATIO_LIMIT * float(np.max(other)):
                fast.add(q.target)
    return fast


def _ratio_notes(scheme, label: str, k: float, rates, own, fast: set[str]) -> list[str]:
    """A constant ``k`` [1/s] a million times above or below every other one."""
    other = _other_rates(rates, own)
    if other.size and k > RATIO_LIMIT * float(np.max(other)):
        return [
            f"{label} came out more than a million times larger than every other constant "
            f"({k:.3g} 1/s): the step is effectively instantaneous for these data, which "
            "fix only a lower bound for it."
        ]
    if (
        other.size
        and k < float(np.min(other)) / RATIO_LIMIT
        and not any(st.constant in fast for st, o in zip(scheme.steps, own, strict=True) if not o)
    ):
        return [
            f"{label} came out more than a million times smaller than every other constant "
            f"({k:.3g} 1/s): the step is effectively absent from these data, which fix "
            "only an upper bound for it."
        ]
    return []


def _window_notes(label: str, k: float, t_first: float, t_last: float) -> list[str]:
    """A constant ``k`` [1/s] too slow for the measured window, or over before it starts."""
    out = []
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
