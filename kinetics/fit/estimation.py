r"""Estimation: the multi-start search, the linearised uncertainty, profile intervals.

:func:`fit` runs the steps in order, each a small unit that hands a frozen object to the
next: :class:`Search` (start design, loose searches, polished optima), :class:`Linearised`
(covariance at the optimum, delta method), the alternative optima, the profile intervals,
then the statistics and warnings of :mod:`kinetics.fit.diagnostics` and the
:class:`kinetics.fit.result.FitResult`.

References
----------
D. M. Bates, D. G. Watts, *Nonlinear Regression Analysis and Its Applications*,
Wiley, New York (1988), ch. 2 (linearisation) and sec. 6.1 (profile t).
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

import numpy as np

from ..errors import DataError, SettingError
from ..units import GAS_CONSTANT
from .diagnostics import CONDITION_LIMIT, FitState, fit_warnings, statistics
from .model import (
    Model,
    Parameter,
    as_runs,
    build_runs,
    check_weights,
    initial_values,
    parse_free,
)
from .result import Estimate, FitResult, engine_predictions, make_result

if TYPE_CHECKING:
    from scipy.optimize import OptimizeResult

    from ..scheme import Scheme

__all__ = [
    "SEARCH_DECADES",
    "START_DECADES",
    "START_ENERGY",
    "START_OPERATION",
    "Linearised",
    "Search",
    "fit",
]

#: Search range of a log-transformed parameter around its start value (decades).
SEARCH_DECADES = 10.0
#: Spread of the multi-start design around the start value (decades / RT_ref units).
START_DECADES = 2.0
START_ENERGY = 8.0
#: Half-width of the start design for named quantities (operation times and amounts) in
#: their logarithm: a factor of 2 either side.  An operation moved past a sample time
#: makes the residuals jump, so a fit of an operation time needs a starting value in the
#: file near the truth rather than a search over decades.
START_OPERATION = math.log(2.0)
_ENERGY_RANGE = (-100e3, 1000e3)  # J/mol, search range of an activation energy
_LINEAR_SPAN = 50.0  # search range of a named quantity not above 0, in units of its size
_EPS = np.finfo(float).eps
_MAX_POLISHED = 8  # distinct optima polished at most


# ---------------------------------------------------------------------------------------
# The search
# ---------------------------------------------------------------------------------------


def _bounds(model, theta0):
    lower, upper = [], []
    span = SEARCH_DECADES * math.log(10.0)
    for j, (p, t) in enumerate(zip(model.params, theta0, strict=True)):
        if p.kind == "energy":
            scale = GAS_CONSTANT * model.t_ref
            lower.append(min(_ENERGY_RANGE[0] / scale, t - 1.0))
            upper.append(max(_ENERGY_RANGE[1] / scale, t + 1.0))
        elif model.scale(j) is not None:  # a named quantity not above 0, in units of itself
            lower.append(t - _LINEAR_SPAN)
            upper.append(t + _LINEAR_SPAN)
        else:
            lower.append(t - span)
            upper.append(t + span)
    return np.array(lower), np.array(upper)


def _start_points(model, theta0, lower, upper, starts, seed) -> np.ndarray:
    """The scheme's values plus a scrambled Halton design within the start spread."""
    import scipy.stats  # imported on use: keeps `import kinetics` light

    p = theta0.size
    count = 4 + 2 * p if starts == "auto" else int(starts)
    points = [theta0]
    if count > 1:
        sampler = scipy.stats.qmc.Halton(d=p, scramble=True, seed=seed)
        u = sampler.random(count - 1)
        half = np.array(
            [
                START_ENERGY
                if q.kind == "energy"
                else 1.0
                if model.scale(j) is not None
                else START_OPERATION
                if q.kind == "operation"
                else START_DECADES * math.log(10.0)
                for j, q in enumerate(model.params)
            ]
        )
        for row in u:
            points.append(np.clip(theta0 + (2.0 * row - 1.0) * half, lower, upper))
    return np.array(points)


def _least_squares(model, x0, lower, upper, tol, jac, max_nfev, fixed=None):
    """One trust-region run; ``fixed`` = (index, value) fixes one coordinate (profiles)."""
    import scipy.optimize  # imported on use: keeps `import kinetics` light

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


@dataclass(frozen=True)
class Search:
    """What the multi-start search found.

    Attributes
    ----------
    initial : dict of str to float
        Start values of the parameters [internal units].
    lower, upper : numpy.ndarray
        Search range of the fitted coordinates.
    candidates : list
        Every start's loose result (``scipy.optimize.OptimizeResult``), best first.
    polished : list of (result, loose result)
        The distinct optima after polishing, best first.
    """

    initial: dict
    lower: np.ndarray
    upper: np.ndarray
    candidates: list
    polished: list

    @property
    def best(self):
        """The best optimum (``scipy.optimize.OptimizeResult``)."""
        return self.polished[0][0]


def _relevant_cost(model, candidates, n_points: int, p: int) -> float:
    """Twice the cost beyond which an optimum cannot matter.

    Such an optimum lies outside the joint 95 % region of the best point (F-based, Bates &
    Watts 1988, eq. 2.44).
    """
    import scipy.stats

    relevant = 2.0 * candidates[0].cost
    if n_points > p:
        relevant *= 1.0 + 2.0 * p / (n_points - p) * scipy.stats.f.ppf(0.95, p, n_points - p)
    return relevant + 1e-20 * float(sum(np.sum((r.y / r.sigma) ** 2) for r in model.runs))


def _search(model, params, starts, seed, tol, jacobian, max_evaluations) -> Search:
    """A loose search from every start point, then the distinct optima polished."""
    initial = initial_values(model.scheme, params, model.runs)
    theta0 = model.theta_of(initial)
    lower, upper = _bounds(model, theta0)
    max_nfev = max_evaluations or 200 * (len(params) + 1)
    points = _start_points(model, theta0, lower, upper, starts, seed)
    # starts where a definition of the scheme cannot take the values (f above 1 in
    # k = (1 - f) ln 2 / t) are left out; the scheme's own values always stay
    points = np.array([x for i, x in enumerate(points) if i == 0 or model.feasible(x)])
    loose = 1e-6 if len(points) > 1 else tol  # a single start goes straight to the optimum
    candidates = [
        _least_squares(model, x0, lower, upper, loose, jacobian, max_nfev) for x0 in points
    ]
    candidates.sort(key=lambda r: r.cost)
    relevant = _relevant_cost(model, candidates, model.n_points, len(params))
    polished: list[tuple[OptimizeResult, OptimizeResult]] = []  # (result, loose result)
    for res in candidates:
        if polished and 2.0 * res.cost > relevant:
            break
        if any(np.max(np.abs(res.x - q.x)) < 1e-3 for q, _ in polished):
            continue
        if loose == tol:
            polished.append((res, res))
            continue
        better = _least_squares(model, res.x, lower, upper, tol, jacobian, max_nfev)
        polished.append((res if better.cost > res.cost else better, res))
        if len(polished) >= _MAX_POLISHED:
            break
    polished.sort(key=lambda pair: pair[0].cost)
    distinct: list = []
    for pair in polished:  # polishing can bring two loose optima together
        if not any(np.max(np.abs(pair[0].x - q[0].x)) < 1e-3 for q in distinct):
            distinct.append(pair)
    return Search(initial, lower, upper, candidates, distinct)


# ---------------------------------------------------------------------------------------
# Uncertainty at the optimum
# ---------------------------------------------------------------------------------------


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


@dataclass(frozen=True)
class Linearised:
    r"""The optimum and its linearised uncertainty (Bates & Watts 1988, ch. 2).

    .. math:: \mathrm{Cov}(\hat\theta) = s^2 (J^\top J)^{-1}, \qquad
              s^2 = S(\hat\theta)/(N - p), \qquad
              \mathrm{Cov}(\hat k) = D\,\mathrm{Cov}(\hat\theta)\,D

    with :math:`D = \mathrm{diag}(\partial k/\partial\theta)` (delta method).  Values and
    covariance are in the display units of the parameters; ``*_theta`` in the fitted
    coordinates.
    """

    theta: np.ndarray
    si: np.ndarray
    values: np.ndarray
    ssr: float
    dof: int
    s2: float
    cov: np.ndarray
    cov_theta: np.ndarray
    corr: np.ndarray
    se: np.ndarray
    se_theta: np.ndarray
    cond: float
    weak: np.ndarray
    zero_cols: list
    t_crit: float
    exact: bool
    scale_y: float


def _linearised(model, params, search: Search) -> Linearised:
    """The exact Jacobian at the optimum and the covariance it gives.

    The Jacobian is exact also for finite-difference searches.
    """
    import scipy.stats

    theta = search.best.x
    ssr = 2.0 * search.best.cost
    dof = model.n_points - len(params)
    J = model.jacobian(theta)
    si = model.si_values(theta)
    scale = np.array([q.si_per_unit for q in params])
    dvalues = model.dsi_dtheta(theta) / scale
    s2 = ssr / dof if dof > 0 else math.nan
    cov_theta, cond, weak, zero_cols = _covariance(J, s2)
    cov = cov_theta * np.outer(dvalues, dvalues)  # delta method
    se_theta = np.sqrt(np.abs(np.diag(cov_theta)))
    with np.errstate(invalid="ignore", divide="ignore"):
        corr = cov_theta / np.outer(se_theta, se_theta)
    scale_y = float(sum(np.sum((r.y / r.sigma) ** 2) for r in model.runs))
    return Linearised(
        theta=theta,
        si=si,
        values=si / scale,
        ssr=ssr,
        dof=dof,
        s2=s2,
        cov=cov,
        cov_theta=cov_theta,
        corr=corr,
        se=np.sqrt(np.abs(np.diag(cov))),
        se_theta=se_theta,
        cond=cond,
        weak=weak,
        zero_cols=zero_cols,
        t_crit=float(scipy.stats.t.ppf(0.975, dof)) if dof > 0 else math.nan,
        exact=ssr <= 1e-24 * scale_y,  # residuals at the rounding level: noise-free data
        scale_y=scale_y,
    )


def _alternatives(model, params, search: Search, lin: Linearised) -> list[dict]:
    """Other optima inside the joint 95 % region that are separate basins.

    A second minimum counts when the sum of squares rises between the two points (along
    a flat valley it does not; a near-singular Jacobian is reported as such instead).
    """
    import scipy.stats

    p, dof, ssr = len(params), lin.dof, lin.ssr
    threshold = ssr * (1.0 + p / dof * scipy.stats.f.ppf(0.95, p, dof)) if dof > 0 else ssr
    threshold += 1e-20 * lin.scale_y
    found: list[np.ndarray] = []
    out = []
    scale = np.array([q.si_per_unit for q in params])
    for res, _ in search.polished[1:]:
        if not lin.cond <= CONDITION_LIMIT or 2.0 * res.cost > threshold:
            continue
        if np.max(np.abs(res.x - lin.theta)) <= 1e-3:
            continue
        if any(np.max(np.abs(res.x - x)) < 1e-3 for x in found):
            continue
        r_mid = model.residuals(0.5 * (res.x + lin.theta))
        barrier = float(r_mid @ r_mid) - 2.0 * max(res.cost, search.best.cost)
        if not barrier > 1e-9 * ssr + 1e-20 * lin.scale_y:
            continue
        values = model.si_values(res.x) / scale
        alt: dict[str, float] = {q.name: float(v) for q, v in zip(params, values, strict=True)}
        alt["sum_of_squares"] = 2.0 * float(res.cost)
        out.append(alt)
        found.append(res.x)
    return out


# ---------------------------------------------------------------------------------------
# Profile intervals
# ---------------------------------------------------------------------------------------


def _display(model, j, t):
    """Fitted coordinate ``t`` of parameter ``j`` in its display unit (None stays None)."""
    if t is None:
        return None
    return model.si_of(j, t) / model.params[j].si_per_unit


def _profile(model, search: Search, lin: Linearised, j: int):
    r"""Both ends of the 95 % profile interval of coordinate ``j`` (None: unbounded).

    The profile :math:`\tau(\theta_j) = \mathrm{sign}(\theta_j - \hat\theta_j)
    \sqrt{(S_j(\theta_j) - S(\hat\theta))/s^2}` (Bates & Watts 1988, sec. 6.1) is
    solved for :math:`|\tau| = t_{0.975}(N - p)`, which is the F-based threshold
    :math:`S = S(\hat\theta)(1 + F_{0.95}(1, N-p)/(N-p))`.
    """
    theta, ssr, s2 = lin.theta, lin.ssr, lin.s2
    lower, upper = search.lower, search.upper
    p = theta.size
    others = np.delete(theta, j)
    note = None
    # conditional-mean direction of the other coordinates (linearised), for warm starts
    with np.errstate(invalid="ignore", divide="ignore"):
        slope = np.delete(lin.cov_theta[:, j], j) / lin.cov_theta[j, j]
    if not np.all(np.isfinite(slope)):
        slope = np.zeros(p - 1)

    def tau(value):
        nonlocal note
        if p == 1:
            r = model.residuals(np.array([value]))
            s = float(r @ r)
        else:
            guess = others + slope * (value - theta[j])
            fixed = (j, value)
            res = _least_squares(model, guess, lower, upper, 1e-10, "exact", 100 * p, fixed)
            s = 2.0 * float(res.cost)
        if s < ssr * (1.0 - 1e-6) - 1e-300:
            note = (
                f"While profiling {model.params[j].name} the search found a better fit than "
                "the reported optimum; the optimum is only a local one, try more starts."
            )
        return math.sqrt(max(s - ssr, 0.0) / s2)

    limit = SEARCH_DECADES * math.log(10.0) if model.params[j].log else 50.0
    ends = [
        _profile_end(tau, theta[j], sign, min(limit, abs(bound - theta[j])), lin, j)
        for sign, bound in ((-1.0, lower[j]), (1.0, upper[j]))
    ]
    return ends[0], ends[1], note


def _profile_end(tau, centre: float, sign: float, reach: float, lin: Linearised, j: int):
    """The end of the interval on one side: |tau| = t_crit, bracketed, then Illinois."""
    goal = lin.t_crit
    se_theta = lin.se_theta[j]
    # distances d from the optimum; tau grows about linearly with d (exactly so for a
    # linear model), so extrapolate from the linearised interval to bracket the end
    a, fa = 0.0, -goal
    d = min(goal * se_theta if se_theta > 0 else 0.1, reach)
    while True:
        fd = tau(centre + sign * d) - goal
        if fd >= 0 or d >= reach:
            break
        a, fa = d, fd
        grow = 1.05 * goal / (fd + goal) if fd + goal > 0 else 4.0
        d = min(reach, d * min(max(grow, 1.2), 4.0))
    if fd < 0:
        return None  # the data set no limit on this side within the search range
    b, fb = d, fd
    side = 0
    for _ in range(60):  # Illinois false position on [a, b]
        if fb <= 1e-7 * goal or b - a <= 1e-10 * max(1.0, abs(centre)):
            break
        c = (a * fb - b * fa) / (fb - fa)
        fc = tau(centre + sign * c) - goal
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
    return centre + sign * b


def _profiles(model, search: Search, lin: Linearised, profile: bool):
    """Profile intervals of every parameter in display units, and notes on better optima."""
    intervals: list[tuple[float | None, float | None]] = []
    notes: list[str] = []
    for j in range(lin.theta.size):
        if lin.exact or lin.s2 == 0:
            intervals.append((float(lin.values[j]), float(lin.values[j])))
            continue
        if not profile or not (lin.dof > 0 and math.isfinite(lin.se_theta[j])):
            intervals.append((None, None))
            continue
        lo, hi, better_found = _profile(model, search, lin, j)
        if better_found is not None:
            notes.append(better_found)
        intervals.append((_display(model, j, lo), _display(model, j, hi)))
    return intervals, notes


# ---------------------------------------------------------------------------------------
# The fit
# ---------------------------------------------------------------------------------------


def _estimates(params, search: Search, lin: Linearised, profiles) -> dict[str, Estimate]:
    """One :class:`Estimate` per parameter: value, intervals and the t-test of value = 0."""
    import scipy.stats

    out = {}
    for j, q in enumerate(params):
        value, se = lin.values[j], lin.se[j]
        ci = (value - lin.t_crit * se, value + lin.t_crit * se)
        tval = value / se if se > 0 else (math.inf if se == 0 else math.nan)
        dof = lin.dof
        pval = float(scipy.stats.t.sf(tval, dof)) if dof > 0 and not math.isnan(tval) else math.nan
        out[q.name] = Estimate(
            name=q.name,
            value=float(value),
            unit=q.unit,
            std_error=float(se),
            ci95=(float(ci[0]), float(ci[1])),
            ci95_profile=profiles[j],
            t_value=float(tval),
            p_value=pval,
            initial=float(search.initial[q.name] / q.si_per_unit),
        )
    return out


def _check_options(jacobian: str, engine: str, weights) -> None:
    if jacobian not in ("exact", "2-point", "3-point"):
        raise SettingError(f"unknown jacobian {jacobian!r}", "use exact, 2-point or 3-point")
    if engine not in ("block", "entrywise"):
        raise SettingError(f"unknown engine {engine!r}", "use block or entrywise")
    check_weights(weights)


def _model(scheme, data, free, weights, engine) -> tuple[Model, list[Parameter], list]:
    """The free parameters, the data sets and the model over all runs (checked)."""
    params = parse_free(free, scheme)
    datasets = as_runs(data, scheme)
    runs = build_runs(scheme, datasets, params, weights)
    model = Model(scheme, runs, params, engine)
    n_points, p = model.n_points, len(params)
    if n_points < p:
        raise DataError(
            f"{n_points} measured value{'s' if n_points != 1 else ''} cannot determine "
            f"{p} free parameters",
            ", ".join(d.source for d in datasets),
            "measure more points or free fewer parameters",
        )
    return model, params, datasets


def _statistics(model, params, search: Search, lin: Linearised, evaluations_search: int):
    """Statistics at the optimum, the data − model tables and the weighted residuals.

    The residuals are recomputed with the entrywise engine on the fitted scheme's exact
    constants.
    """
    runs = model.runs
    engine_pred, residual_tables = engine_predictions(model.scheme, params, lin.si, runs)
    block_pred = model.predictions(lin.theta)
    engine_gap = max(
        (float(np.max(np.abs(a - b))) for a, b in zip(engine_pred, block_pred, strict=True)),
        default=0.0,
    )
    wres = np.concatenate([(pr - r.y) / r.sigma for pr, r in zip(engine_pred, runs, strict=True)])
    stats: dict[str, Any] = statistics(
        model, runs, params, engine_pred, lin, search.best, search.candidates, search.polished
    )
    stats["model_evaluations"] = model.evaluations
    stats["model_evaluations_search"] = evaluations_search
    stats["jacobian_evaluations"] = model.jacobian_evaluations
    stats["engine_difference"] = engine_gap
    stats["reference_temperature"] = model.t_ref
    return stats, residual_tables, wres


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
        Free parameters (see :func:`kinetics.fit.parse_free`): ``"k1,k2"``,
        ``["k3.A", "k3.Ea"]``, ``"start:A"``.
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
        Propagation during the search: the block-form Fréchet derivative
        (:func:`kinetics.sensitivity.block_sensitivities`) or the entrywise engine of
        :mod:`kinetics.propagate`.
    tol : float, optional
        ``ftol``, ``xtol`` and ``gtol`` of the final polish.
    max_evaluations : int, optional
        Cap on residual evaluations per search (default 200·(p + 1)).

    Returns
    -------
    FitResult
        Residuals and statistics are computed with the entrywise engine on the fitted
        scheme's exact constants (its rate matrix pair, diagonal unrounded).

    Raises
    ------
    DataError
        Bad data, or fewer measured values than free parameters.
    kinetics.errors.ArgumentValueError
        Unknown free parameters (:class:`~kinetics.errors.ConstantError`), conflicting
        conditions (:class:`~kinetics.errors.ConditionError`), bad options
        (:class:`~kinetics.errors.SettingError`).

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
    _check_options(jacobian, engine, weights)
    model, params, datasets = _model(scheme, data, free, weights, engine)
    search = _search(model, params, starts, seed, tol, jacobian, max_evaluations)
    lin = _linearised(model, params, search)
    alternatives = _alternatives(model, params, search, lin)
    evaluations_search = model.evaluations
    profiles, notes = _profiles(model, search, lin, profile)
    stats, residual_tables, wres = _statistics(model, params, search, lin, evaluations_search)
    estimates = _estimates(params, search, lin, profiles)
    state = FitState(
        model=model,
        theta=lin.theta,
        lower=search.lower,
        upper=search.upper,
        estimates=estimates,
        alternatives=alternatives,
        cond=lin.cond,
        weak=lin.weak,
        zero_cols=lin.zero_cols,
        dof=lin.dof,
        best=search.best,
        profile_notes=notes,
        datasets=datasets,
        exact=lin.exact,
        profiled=profile,
    )
    return make_result(
        scheme=scheme,
        parameters=params,
        estimates=estimates,
        covariance=lin.cov,
        correlation=lin.corr,
        residuals=residual_tables,
        weighted_residuals=wres,
        statistics=stats,
        warnings=fit_warnings(state),
        alternatives=alternatives,
        data=datasets,
        weights=weights if isinstance(weights, str) else "given",
        theta=lin.theta,
        si=lin.si,
    )
