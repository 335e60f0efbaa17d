r"""How the optimum moves with the parameters of the scheme: exact normalised sensitivities.

For a parameter :math:`p` of the scheme that is not itself a setting (a named quantity
that a rate constant is defined from, a rate constant, the temperature; the list of
:func:`kinetics.analysis.summary_sensitivity.sensitivity_parameters`) the optimum
:math:`x^*(p)` and the target there :math:`\phi^*(p)` follow by implicit differentiation
of the optimality conditions, with the exact first and second derivatives of
:mod:`kinetics.optimise.model` and :mod:`kinetics.optimise.curvature` (the parameter taken
as one more setting, held at its value).  With :math:`s = \pm 1` (maximise or minimise),
the settings :math:`F` not held at a bound and the active requirements :math:`A`
(margins :math:`h_a = 0`), the multipliers solve :math:`J_{AF}^T \mu = -s\,\nabla_F\phi`
and

.. math::

    \begin{bmatrix} W_{FF} & J_{AF}^T \\ J_{AF} & 0 \end{bmatrix}
    \begin{bmatrix} \partial x_F^*/\partial p \\ \partial\mu/\partial p \end{bmatrix}
    = -\begin{bmatrix} W_{Fp} \\ J_{Ap} \end{bmatrix}, \qquad
    W = s\,\nabla^2\phi + \sum_a \mu_a \nabla^2 h_a,

    \frac{d\phi^*}{dp} = \frac{\partial\phi}{\partial p}
        + s \sum_a \mu_a \frac{\partial h_a}{\partial p}
    \quad\text{(envelope theorem)}.

Reported normalised, :math:`\partial\ln x_j^*/\partial\ln p` and
:math:`\partial\ln\phi^*/\partial\ln p`.  A rate constant that follows the Arrhenius law
is scaled through its prefactor (``k1.A``), so that it follows the temperature still:
:math:`\partial/\partial\ln k_1 = \partial/\partial\ln A_1`.  A constant defined from a
setting, and the temperature when it is a setting, are left out.

References
----------
A. V. Fiacco, "Sensitivity analysis for nonlinear programming using penalty methods",
Math. Programming 10, 287-311 (1976).
J. Nocedal, S. J. Wright, "Numerical Optimization", 2nd ed., Springer (2006), ch. 12
(the KKT conditions).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from ..analysis.summary_sensitivity import sensitivity_parameters
from .model import Model
from .settings import Setting

if TYPE_CHECKING:
    from ..scheme import Scheme
    from .result import Optimum

__all__ = ["optimum_sensitivities", "parameter_settings"]

#: A setting within this share of its range from a bound counts as held there.
_AT_BOUND = 1e-9
#: The multipliers of the active requirements must cancel the gradient of the free
#: settings to this share of its size (a KKT point); otherwise the optimum found is not
#: stationary for its active set and its sensitivities are not given (None).
STATIONARITY = 1e-6


def parameter_settings(scheme: Scheme, settings) -> list[Setting]:
    """The parameters of ``scheme`` as settings held at their values [internal units].

    Those that are settings already, constants defined from a setting, and the
    temperature when it is a setting are left out.
    """
    taken = {s.target or s.name for s in settings}
    moved = {s.kind for s in settings}
    for s in settings:
        if s.kind == "quantity" and s.target in scheme.quantities:
            taken.update(scheme.driven_by(s.target))
    out = []
    for name, value in sensitivity_parameters(scheme).items():
        if name in taken or value == 0 or (name == "temperature" and "temperature" in moved):
            continue
        if name == "temperature":
            out.append(Setting(name, "temperature", "", "K", value, value, value, value))
            continue
        law = scheme.constants[name].arrhenius if name in scheme.constants else None
        follows = name in scheme.temperature_constants
        if law is None and follows and "temperature" in moved:
            continue  # setting it aside would cut it from the temperature setting
        if law is None:
            out.append(Setting(name, "quantity", name, "", value, value, value, value))
        elif not follows or law.prefactor_si is None:
            continue
        else:
            a = float(law.prefactor_si)
            out.append(Setting(name, "prefactor", name, "", a, a, a, a))
    return out


def _held(model: Model, x: np.ndarray) -> np.ndarray:
    lo, hi = model.lower, model.upper
    room = _AT_BOUND * np.maximum(hi - lo, 1e-300)
    return (x - lo <= room) | (hi - x <= room)


def _derivatives(optimum: Optimum, scheme: Scheme, extra: Setting):
    """The derivatives dx*/dp (d,) and dphi*/dp for one parameter.

    None where the KKT system is singular or the second derivatives are out of reach.
    """
    own = [
        s for s in optimum.settings if not (optimum.goal.best_time and s is optimum.settings[-1])
    ]
    model = Model(scheme, [*own, extra], optimum.goal)
    at = len(own)
    x = np.insert(np.asarray(optimum.x, dtype=float), at, extra.lo_internal)
    point = model.point(x, hessian=True)
    g, H, jac, curv = point.gradient, point.hessian, point.jacobian, point.curvatures
    if g is None or H is None or jac is None or curv is None:
        return None
    d = x.size
    rest = [j for j in range(d) if j != at]
    held = _held(model, x)
    free = [j for j in rest if not held[j]]
    active = [k for k, row in enumerate(optimum.requirements) if row["active"]]
    s = model.goal.sign
    J = jac[active] if active else np.zeros((0, d))
    mu = np.zeros(len(active))
    if active:
        mu = np.linalg.lstsq(J[:, free].T, -s * g[free], rcond=None)[0]
        residual = np.linalg.norm(s * g[free] + J[:, free].T @ mu)
        if residual > STATIONARITY * np.linalg.norm(g[free]):
            return None  # not a stationary point of the active set: no derivative to take
    W = s * H
    for a, k in enumerate(active):
        W = W + mu[a] * curv[k]
    m = len(free) + len(active)
    M = np.zeros((m, m))
    M[: len(free), : len(free)] = W[np.ix_(free, free)]
    M[: len(free), len(free) :] = J[:, free].T
    M[len(free) :, : len(free)] = J[:, free]
    rhs = -np.concatenate([W[free, at], J[:, at]])
    dx = np.zeros(d)
    if m:
        if np.linalg.matrix_rank(M) < m:
            return None
        dx[free] = np.linalg.solve(M, rhs)[: len(free)]
    dphi = float(g[at] + s * (mu @ J[:, at] if active else 0.0))
    return dx[rest], dphi


def optimum_sensitivities(optimum: Optimum, scheme: Scheme) -> dict:
    r"""Normalised sensitivities of the optimum to the parameters of the scheme.

    Returns
    -------
    dict
        ``objective`` (parameter -> :math:`\partial\ln\phi^*/\partial\ln p`) and ``best``
        (setting -> parameter -> :math:`\partial\ln x^*/\partial\ln p`); None where a
        value is 0 or the system is singular (module docstring).

    Examples
    --------
    For A -> B -> C the best quench t = ln(k1/k2)/(k1 - k2) (Atkins & de Paula) has
    d ln t/d ln k1 = (k1/t)(1/k1 - t)/(k1 - k2):

    >>> import math, kinetics
    >>> from kinetics.optimise import optimise
    >>> s = kinetics.parse("A -> B  k1 = 0.3 1/s\nB -> C  k2 = 0.1 1/s\nstart A = 1 mol/L")
    >>> out = optimum_sensitivities(optimise(s, "B", "time=0:30:s"), s)
    >>> t = math.log(3) / 0.2
    >>> round(out["best"]["time"]["k1"] / (0.3 / t * (1 / 0.3 - t) / 0.2), 8)
    1.0
    """
    objective: dict[str, float | None] = {}
    best: dict[str, dict[str, float | None]] = {s.name: {} for s in optimum.settings}
    own = [
        s for s in optimum.settings if not (optimum.goal.best_time and s is optimum.settings[-1])
    ]
    for extra in parameter_settings(scheme, own):
        found = _derivatives(optimum, scheme, extra)
        p = extra.lo_internal
        if found is None:
            objective[extra.name] = None
            for s in optimum.settings:
                best[s.name][extra.name] = None
            continue
        dx, dphi = found
        objective[extra.name] = _ratio(p * dphi, optimum.objective)
        for j, s in enumerate(optimum.settings):
            best[s.name][extra.name] = _ratio(p * dx[j], float(optimum.x[j]))
    return {"objective": objective, "best": best}


def _ratio(a: float, b: float) -> float | None:
    value = a / b if b != 0 else math.nan
    return float(value) if math.isfinite(value) else None
