r"""Local refinement from a start: Newton steps, then SQP where a requirement binds.

Newton steps use the exact Hessian; sequential quadratic programming takes over where a
requirement binds.  Both work in coordinates scaled to ``[0, 1]`` per setting, on the
target divided by its size at the start (:class:`ScaledProblem`).

1. *Projected trust-region Newton.*  With the exact gradient and Hessian of the target
   (:mod:`kinetics.optimise.model`, :mod:`kinetics.optimise.curvature`) each step solves
   :math:`(H + \lambda I)\,p = -g` on the settings not held at a bound (a bound is held
   where the gradient pushes out of the box), with :math:`\lambda \ge 0` the smallest that
   keeps :math:`\|p\| \le \Delta` and :math:`H + \lambda I` positive definite; the radius
   :math:`\Delta` follows the ratio of the actual to the predicted change.  Converged when
   the gradient on the free settings is below :math:`10^{-12}` of the target, or a step
   below :math:`10^{-13}`, or the gain the quadratic model predicts below
   :math:`10^{-12}` of the target: that last step is then taken without solving the model
   there (Newton's quadratic convergence puts it within the square of the step of the
   optimum).  A search whose next step would land within :data:`SAME_HILL` of an optimum
   found from another start, at least as good, ends there without taking it.  It stops,
   unconverged, at the first step that would break a requirement: the optimum then lies
   on a requirement.
2. *SLSQP* (``scipy.optimize.minimize(method="SLSQP")``) from the best point so far, with
   the exact gradient and the exact Jacobian of the requirement margins, when Newton did
   not converge.

References
----------
J. Nocedal, S. J. Wright, "Numerical Optimization", 2nd ed., Springer (2006), ch. 4
(trust regions) and ch. 18 (sequential quadratic programming).
D. P. Bertsekas, "Projected Newton methods for optimization problems with simple
constraints", SIAM J. Control Optim. 20, 221-246 (1982).
D. Kraft, "A software package for sequential quadratic programming", DFVLR-FB 88-28,
Deutsche Forschungs- und Versuchsanstalt für Luft- und Raumfahrt (1988) (SLSQP).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from .model import Model, Point
from .search import Candidate, margin_scales, violation

__all__ = [
    "SAME_HILL",
    "TIME_FLOOR",
    "ScaledProblem",
    "newton",
    "refine",
    "scaled_problem",
    "slsqp",
    "trust_region_step",
]

#: Most iterations of one SLSQP search (each costs one point with derivatives; the line
#: searches a few more).
_MAX_ITERATIONS = 60
#: Most Newton steps (accepted or not) of one search.
_MAX_NEWTON = 30
#: Converged when the scaled gradient on the free settings is below this.
_GRADIENT_TOL = 1e-12
#: ... or when a step in scaled coordinates is below this, or the gain the quadratic model
#: predicts is below this share of the target (the last step is then taken unsolved).
_STEP_TOL = 1e-13
_GAIN_TOL = 1e-12
#: A Newton search this close (in scaled coordinates, per setting) to an optimum found from
#: another start is on the same hill: it ends there.
SAME_HILL = 5e-3
#: A last step is taken unsolved only where every margin exceeds this share of its level.
_ROOM = 1e-6


class ScaledProblem:
    r"""The target and margins of a model in coordinates ``u`` in ``[0, 1]^d``.

    For scipy and the Newton steps; each point is solved once (the target, its
    derivatives and the constraints share it).

    A setting maps linearly, :math:`x = l + u\,(h - l)`, or, for the time and for a
    quantity or an Arrhenius prefactor whose bounds span a factor of 10 or more,
    logarithmically,
    :math:`x = \exp(\ln l' + u \ln(h/l'))` with :math:`l'` the lower bound (or
    :data:`TIME_FLOOR` of the upper one for a time from 0): the target of first-order
    kinetics depends on :math:`k t` and on :math:`\ln k` linearly in the Arrhenius
    exponent, so its hills are close to quadratic in these coordinates.
    """

    def __init__(self, model: Model, scale: float, margin_scales: np.ndarray) -> None:
        self.model = model
        lo, hi = model.lower, model.upper
        self.log = np.array(
            [_logarithmic(s, a, b) for s, a, b in zip(model.settings, lo, hi, strict=True)]
        )
        floor = np.where(lo > 0, lo, TIME_FLOOR * hi)
        self.lo = np.where(self.log, np.log(np.where(self.log, floor, 1.0)), lo)
        self.span = np.where(self.log, np.log(np.where(self.log, hi / floor, 1.0)), hi - lo)
        self.bounds = (lo, hi)
        self.scale = scale
        self.margin_scales = margin_scales
        self.last: tuple[bytes, Point] | None = None

    def x_of(self, u) -> np.ndarray:
        """Settings [internal units] of scaled coordinates (clipped to the bounds)."""
        v = self.lo + np.clip(np.asarray(u, dtype=float), 0.0, 1.0) * self.span
        return np.clip(np.where(self.log, np.exp(np.where(self.log, v, 0.0)), v), *self.bounds)

    def u_of(self, x) -> np.ndarray:
        """Scaled coordinates of settings [internal units] (inverse of :meth:`x_of`)."""
        x = np.asarray(x, dtype=float)
        with np.errstate(divide="ignore"):
            v = np.where(self.log, np.log(np.maximum(x, 1e-300)), x)
        return np.clip((v - self.lo) / self.span, 0.0, 1.0)

    def slopes(self, u) -> tuple[np.ndarray, np.ndarray]:
        """dx/du and d2x/du2 of each setting at ``u``."""
        x = self.x_of(u)
        first = np.where(self.log, x * self.span, self.span)
        return first, np.where(self.log, x * self.span**2, 0.0)

    def at(self, u) -> Point:
        """The point at ``u`` with first derivatives (solved once per ``u``)."""
        key = np.asarray(u, dtype=float).tobytes()
        if self.last is None or self.last[0] != key:
            self.last = (key, self.model.point(self.x_of(u), gradient=True))
        return self.last[1]

    def fun(self, u) -> float:
        """The scaled target to minimise at ``u`` [-]."""
        return -self.model.goal.sign * self.at(u).objective / self.scale

    def jac(self, u) -> np.ndarray:
        """The gradient of :meth:`fun` in ``u`` [-]."""
        gradient = self.at(u).gradient
        assert gradient is not None  # at() asks for first derivatives
        return -self.model.goal.sign * gradient * self.slopes(u)[0] / self.scale

    def cons(self, u) -> np.ndarray:
        """The margins of the requirements at ``u``, each divided by its level [-]."""
        return self.at(u).margins / self.margin_scales

    def cons_jac(self, u) -> np.ndarray:
        """The Jacobian of :meth:`cons` in ``u``, shape (r, d) [-]."""
        dx = self.slopes(u)[0]
        jacobian = self.at(u).jacobian
        assert jacobian is not None  # at() asks for first derivatives
        return jacobian * dx[None, :] / self.margin_scales[:, None]

    def derivatives(self, u, p: Point) -> tuple[np.ndarray, np.ndarray]:
        """Gradient and Hessian of the scaled target in ``u`` from those of ``p``."""
        assert p.gradient is not None  # a point with a Hessian has a gradient too
        assert p.hessian is not None
        dx, ddx = self.slopes(u)
        sign = -self.model.goal.sign / self.scale
        g = sign * p.gradient
        return g * dx, sign * p.hessian * np.outer(dx, dx) + np.diag(g * ddx)


#: A time from 0 maps logarithmically from this share of its upper bound.
TIME_FLOOR = 1e-9


def _logarithmic(setting, lo: float, hi: float) -> bool:
    """True for a setting searched in the logarithm of its value."""
    if setting.kind == "time":
        return hi > 0
    return setting.kind in ("quantity", "prefactor") and lo > 0 and hi >= 10 * lo


def scaled_problem(model: Model, start: Candidate) -> ScaledProblem:
    """The problem of ``model`` scaled at ``start``.

    The target is divided by its size there, each margin by its level.
    """
    scale = max(abs(start.objective), float(model.scheme.initial_vector.max(initial=0.0)))
    levels = np.array([r.threshold for r in model.scheme_at(start.x).requirements])
    return ScaledProblem(model, max(scale, 1e-300), margin_scales(model, levels))


def trust_region_step(g: np.ndarray, H: np.ndarray, radius: float) -> np.ndarray:
    r"""The minimiser of :math:`g^T p + \frac12 p^T H p` with :math:`\|p\| \le` radius.

    By Moré-Sorensen for a small dense H: eigenvalues, then a bisection on lambda.
    """
    w, Q = np.linalg.eigh(0.5 * (H + H.T))
    a = Q.T @ g

    def size(lam):
        return float(np.sqrt(np.sum((a / (w + lam)) ** 2)))

    floor = max(0.0, -float(w.min())) * (1 + 1e-12) + 1e-300
    if w.min() > 0 and size(0.0) <= radius:
        return -(Q @ (a / w))
    lo, hi = floor, float(floor + np.linalg.norm(g) / radius + abs(float(w.min())))
    while size(hi) > radius:
        hi *= 2
    for _ in range(100):
        mid = 0.5 * (lo + hi)
        lo, hi = (mid, hi) if size(mid) > radius else (lo, mid)
    return -(Q @ (a / (w + hi)))


def newton(
    model: Model, start: Candidate, known: Sequence[Candidate] = ()
) -> tuple[Candidate, bool]:
    """Projected trust-region Newton steps from ``start`` (step 1 of the module).

    A search that comes within :data:`SAME_HILL` (scaled) of an optimum in ``known``
    (converged searches from other starts) ends there.

    Returns
    -------
    (Candidate, bool)
        The best feasible point reached, and True when it is a converged optimum.
    """
    problem = scaled_problem(model, start)
    u = problem.u_of(start.x)
    sign = -model.goal.sign / problem.scale
    p = model.point(problem.x_of(u), hessian=True)
    if p.hessian is None or violation(model, p) > 0:
        return start, False
    radius = 0.25
    best = Candidate(p.x, p.objective, 0.0)
    for _ in range(_MAX_NEWTON):
        g, H = problem.derivatives(u, p)
        held = ((u <= 0) & (g > 0)) | ((u >= 1) & (g < 0))
        free = ~held
        if not free.any() or np.max(np.abs(g[free])) <= _GRADIENT_TOL:
            return best, True
        trial, s, predicted = _box_step(u, g, H, free, radius)
        if np.max(np.abs(s)) <= _STEP_TOL:
            return best, True
        if predicted <= _GAIN_TOL:
            return _last_step(model, problem, p, best, trial, predicted), True
        reached = _known_near(problem, known, trial, best)
        if reached is not None:
            return reached, True
        q = model.point(problem.x_of(trial), hessian=True)
        if violation(model, q) > 0:
            return best, False  # a requirement binds: SQP takes over
        actual = sign * (p.objective - q.objective)
        rho = actual / predicted if predicted > 0 else -1.0
        accepted = rho > 0 and actual >= 0
        if accepted:
            u, p = trial, q
            best = Candidate(q.x, q.objective, 0.0)
            on_hill = _known_at(problem, known, u)
            if on_hill is not None:
                return on_hill, True
        radius = _next_radius(radius, s, rho, accepted)
    return best, False


def _box_step(
    u: np.ndarray, g: np.ndarray, H: np.ndarray, free: np.ndarray, radius: float
) -> tuple[np.ndarray, np.ndarray, float]:
    """A trust-region step on the free settings, kept inside the box ``[0, 1]^d``.

    Returns the trial point, the step to it and the gain the quadratic model predicts.
    """
    step = np.zeros_like(u)
    step[free] = trust_region_step(g[free], H[np.ix_(free, free)], radius)
    trial = np.clip(u + step, 0.0, 1.0)
    s = trial - u
    predicted = -(g @ s + 0.5 * s @ H @ s)
    if predicted <= 0:  # the box cut the step off its descent: shorten it instead
        room = np.where(step > 0, (1 - u) / step, np.where(step < 0, -u / step, np.inf))
        s = min(1.0, float(room.min())) * step
        trial = np.clip(u + s, 0.0, 1.0)
        predicted = -(g @ s + 0.5 * s @ H @ s)
    return trial, s, predicted


def _known_at(
    problem: ScaledProblem, known: Sequence[Candidate], u: np.ndarray
) -> Candidate | None:
    """A known optimum within :data:`SAME_HILL` of ``u``: the search has reached its hill."""
    for other in known:
        if np.max(np.abs(problem.u_of(other.x) - u)) <= SAME_HILL:
            return other
    return None


def _next_radius(radius: float, s: np.ndarray, rho: float, accepted: bool) -> float:
    """The trust radius after a step ``s`` with the ratio ``rho`` of actual to predicted gain.

    Doubled (at most 1) after a very good step to the edge, a quarter of the step after a
    refused one, else kept.
    """
    if not accepted:
        return float(0.25 * np.linalg.norm(s))
    if rho > 0.75 and np.linalg.norm(s) >= 0.9 * radius:
        return min(2 * radius, 1.0)
    return radius


def _last_step(model: Model, problem: ScaledProblem, p: Point, best, trial, predicted):
    """The end of a search with nothing left to gain at rounding level.

    The last Newton step places the optimum (quadratic convergence): it is taken without
    solving the model there, its target the one the quadratic model predicts (a change
    below :data:`_GAIN_TOL` of the target), where every requirement holds with room to
    spare; otherwise the search ends at ``best``.
    """
    room = p.margins / problem.margin_scales if p.margins.size else np.array([np.inf])
    if float(np.min(room)) <= _ROOM:
        return best
    gain = model.goal.sign * predicted * problem.scale
    return Candidate(problem.x_of(trial), float(best.objective + gain), 0.0)


def _known_near(
    problem: ScaledProblem, known: Sequence[Candidate], trial: np.ndarray, best: Candidate
) -> Candidate | None:
    """A known optimum at least as good as ``best`` near where a Newton step would go.

    Near means within :data:`SAME_HILL`: the search would end there.
    """
    sign = problem.model.goal.sign
    for other in known:
        near = np.max(np.abs(problem.u_of(other.x) - trial)) <= SAME_HILL
        if near and sign * (other.objective - best.objective) >= 0:
            return other
    return None


def slsqp(model: Model, start: Candidate, tol: float = 1e-12) -> Candidate:
    """SLSQP with exact derivatives from ``start`` (step 2 of the module)."""
    from scipy.optimize import minimize

    problem = scaled_problem(model, start)
    constraints = []
    if model.requirements:
        constraints = [{"type": "ineq", "fun": problem.cons, "jac": problem.cons_jac}]
    u0 = problem.u_of(start.x)
    found = minimize(
        problem.fun,
        u0,
        jac=problem.jac,
        method="SLSQP",
        bounds=[(0.0, 1.0)] * u0.size,
        constraints=constraints,
        options={"ftol": tol, "maxiter": _MAX_ITERATIONS},
    )
    x = problem.x_of(found.x)
    last = problem.last
    p = last[1] if last is not None and np.array_equal(last[1].x, x) else model.point(x)
    return Candidate(x, p.objective, violation(model, p))


def refine(model: Model, start: Candidate, known: Sequence[Candidate] = ()) -> Candidate:
    """Newton steps from ``start``, then SLSQP from the best point unless they converged.

    ``known``: optima found from other starts, see :func:`newton`.
    """
    reached, converged = newton(model, start, [k for k in known if k.violation == 0])
    if converged:
        return reached
    return slsqp(model, reached)
