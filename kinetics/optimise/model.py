r"""The model of an optimisation: the target and the requirements at a set of settings.

Both are computed exactly, with exact derivatives.

For settings :math:`x` (temperature, named quantities, start values..., and the time
:math:`t` at which the batch is stopped) the concentrations at :math:`t` are

.. math:: c(t; x) = e^{tK(x)} c_0(x) + \int_0^t e^{sK(x)}\,ds\, f

from the entrywise engine (:func:`kinetics.propagate.propagate`, the exact rate matrix
pair of :meth:`kinetics.scheme.Scheme.rate_matrix_pair`).  The target is
:math:`\phi = c_B(t)` (or the yield :math:`c_B(t)/\sum_j c_{0,j}`); each requirement
:math:`c_i \le L` or :math:`c_i \ge L` gives a margin :math:`h = \pm(c_i(t) - L) \ge 0`
where it holds (requirements are read at the time the batch is stopped: what the product
contains then).

Derivatives, none by finite differences of the solution:

* :math:`\partial c/\partial t = K c + f`;
* :math:`\partial c/\partial x_j = L(tK, tE_j)\,c_0 + \dots` for
  :math:`E_j = \partial K/\partial x_j`, the Fréchet derivative of the exponential
  (:func:`kinetics.sensitivity.sensitivities`, entrywise);
  :math:`\partial k_s/\partial x_j` of each step rate from a central difference of
  *exact* evaluations of the constants (40 digits, relative step :math:`2^{-40}`: an
  error near :math:`10^{-20}`), so every temperature law and derived constant is covered
  by the one evaluation of the constants;
* :math:`\partial c/\partial c_{0,i} = e^{tK} e_i` for a start value.

References
----------
A. H. Al-Mohy, N. J. Higham, "Computing the Fréchet derivative of the matrix exponential,
with an application to condition number estimation", SIAM J. Matrix Anal. Appl. 30,
1639-1657 (2009).
C. Van Loan, "Computing integrals involving the matrix exponential", IEEE Trans. Automat.
Control 23, 395-404 (1978).
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np

from ..errors import WorkingRangeError
from ..propagate import propagate
from ..ratematrix import DENSE_STORAGE_MAX, rate_pattern, step_rate_pairs
from ..sensitivity import sensitivities
from ..units import time_factor
from .curvature import second_derivatives
from .settings import Setting, apply

if TYPE_CHECKING:
    from ..scheme import Scheme

__all__ = ["SENSES", "Goal", "Model", "Point"]

#: Which way the target goes.
SENSES = ("maximise", "minimise")
#: Relative step of the central differences of the exact constants.
_STEP = Fraction(1, 2**40)


@dataclass(frozen=True)
class Goal:
    r"""What is optimised.

    Attributes
    ----------
    species : str
    sense : str
        ``maximise`` or ``minimise``.
    best_time : bool
        True: at the best time in ``[0, end]`` (the time is then a setting of its own);
        False: at the end time (``end``, or the ``time`` setting).
    end : float or None
        [s] the end time (``until`` of :func:`~kinetics.optimise.optimise`).
    yield_basis : bool
        True: the target is the yield :math:`c_B / \sum_j c_{0,j}` [-].
    time_unit : str
        The unit the best time is reported in.
    activity : str or None
        A unit of activity (``MBq``): the target is the activity
        :math:`A = \lambda N` of the species (:mod:`kinetics.activity`) in that unit.
    """

    species: str
    sense: str = "maximise"
    best_time: bool = False
    end: float | None = None
    yield_basis: bool = False
    time_unit: str = "s"
    activity: str | None = None

    @property
    def sign(self) -> float:
        """+1 to maximise, -1 to minimise."""
        return 1.0 if self.sense == "maximise" else -1.0


@dataclass(frozen=True)
class Point:
    r"""The target and the margins of the requirements at one set of settings.

    Attributes
    ----------
    x : ndarray
        The settings [internal units].
    time : float
        [s] the time the target is read at.
    objective : float
        The target [the scheme's concentration unit, or - for a yield].
    margins : ndarray
        Per requirement :math:`\pm(c_i(t) - L)` [conc], >= 0 where it holds.
    thresholds : ndarray
        Per requirement its level :math:`L` [conc] at these settings.
    gradient, jacobian : ndarray or None
        :math:`\partial\phi/\partial x` (d,) and :math:`\partial h/\partial x` (r, d)
        [per internal unit].
    hessian, curvatures : ndarray or None
        :math:`\partial^2\phi/\partial x^2` (d, d) and the second derivatives of the
        margins (r, d, d), when asked for.
    """

    x: np.ndarray
    time: float
    objective: float
    margins: np.ndarray
    thresholds: np.ndarray
    gradient: np.ndarray | None = None
    jacobian: np.ndarray | None = None
    hessian: np.ndarray | None = None
    curvatures: np.ndarray | None = None


class Model:
    """The target and requirements of a scheme as functions of the settings.

    Parameters
    ----------
    scheme : Scheme
    settings : sequence of Setting
        What changes, at most one ``time``; with ``goal.best_time`` a ``time`` setting from
        0 to ``goal.end`` is added last.
    goal : Goal

    Attributes
    ----------
    evaluations, gradients : int
        How many points were solved, and how many of them with derivatives.
    """

    def __init__(self, scheme: Scheme, settings, goal: Goal) -> None:
        if len(scheme.species) > DENSE_STORAGE_MAX:
            raise WorkingRangeError(
                f"an optimisation solves schemes of up to {DENSE_STORAGE_MAX} species; "
                f"this one has {len(scheme.species)}",
                "lump species or split the scheme",
            )
        settings = list(settings)
        if goal.best_time:
            end = float(goal.end or 0.0)
            shown = end / time_factor(goal.time_unit)
            settings.append(Setting("time", "time", "", goal.time_unit, 0.0, shown, 0.0, end))
        self.scheme = scheme
        self.settings = tuple(settings)
        self.goal = goal
        self.index = scheme.species_names.index(goal.species)
        self.time_at = next((j for j, s in enumerate(settings) if s.kind == "time"), None)
        self.rest = [j for j, s in enumerate(settings) if s.kind != "time"]
        self.pattern = rate_pattern(scheme)
        self.requirements = scheme.requirements
        self.watched = np.array([scheme.index[r.species] for r in self.requirements], dtype=int)
        self.senses = np.array([1.0 if r.comparison == ">=" else -1.0 for r in self.requirements])
        self.evaluations = 0
        self.gradients = 0
        #: activity per amount and decay constant [unit s per concentration unit], or None
        self.per_decay: float | None = None
        if goal.activity is not None:
            from ..activity import activity_factors_for

            self.per_decay = float(activity_factors_for(scheme, 1.0, goal.activity))

    @property
    def lower(self) -> np.ndarray:
        """Lower bounds [internal units]."""
        return np.array([s.lo_internal for s in self.settings])

    @property
    def upper(self) -> np.ndarray:
        """Upper bounds [internal units]."""
        return np.array([s.hi_internal for s in self.settings])

    # -- the scheme at a point -----------------------------------------------------------
    def scheme_at(self, x) -> Scheme:
        """The scheme with the settings other than the time at ``x`` [internal units]."""
        return apply(self.scheme, [self.settings[j] for j in self.rest], [x[j] for j in self.rest])

    def end_time(self, x) -> float:
        """[s] the time the target is read at."""
        if self.time_at is not None:
            return float(x[self.time_at])
        end = self.goal.end
        assert end is not None  # without a time setting the goal has its end (checked by optimise)
        return float(end)

    def _target(self, c: np.ndarray, here: Scheme) -> np.ndarray:
        value = c[..., self.index]
        if self.goal.yield_basis:
            return value / float(here.initial_vector.sum())
        return value * self._per_amount(here)

    def _per_amount(self, here: Scheme) -> float:
        """The target per concentration of the species: 1, or its activity per amount."""
        if self.per_decay is None:
            return 1.0
        Kh, Kl = here.rate_matrix_pair()
        i = self.index
        return self.per_decay * (0.0 - (float(Kh[i, i]) + float(Kl[i, i])))

    def values(self, x, times) -> tuple[np.ndarray, np.ndarray, Scheme]:
        """Targets (m,) and margins (m, r) at many times, and the scheme there.

        For one set of the other settings (one engine call).
        """
        self.evaluations += np.size(times)
        here = self.scheme_at(x)
        Kh, Kl = here.rate_matrix_pair()
        feed = here.feed_vector if here.feed else None
        times = np.asarray(times, dtype=float)
        order = np.argsort(times, kind="stable")
        C = np.empty((times.size, len(here.species)))
        C[order] = propagate(Kh, here.initial_vector, times[order], feed, K_low=Kl)
        thresholds = np.array([r.threshold for r in here.requirements])
        margins = self.senses * (C[:, self.watched] - thresholds)
        return self._target(C, here), margins, here

    def point(self, x, gradient: bool = False, hessian: bool = False) -> Point:
        """The target and margins at ``x`` [internal units].

        With first (and second) derivatives on request.
        """
        x = np.asarray(x, dtype=float)
        t = self.end_time(x)
        target, margins, here = self.values(x, [t])
        thresholds = np.array([r.threshold for r in here.requirements])
        if not (gradient or hessian):
            return Point(x, t, float(target[0]), margins[0], thresholds)
        self.gradients += 1
        slopes = {j: self._rate_slopes(x, j) for j in self._rated}
        dc, dthr = self._derivatives(here, t, slopes)
        c0 = here.initial_vector
        i, total = self.index, float(c0.sum())
        dtotal = np.array([1.0 if s.kind == "start" else 0.0 for s in self.settings])
        per = self._per_amount(here)
        c_i = float(target[0]) * (total if self.goal.yield_basis else 1.0 / per)
        grad = dc[:, i] * per
        if self.goal.yield_basis:
            grad = (dc[:, i] * total - c_i * dtotal) / total**2
        dlam = self._decay_slopes(slopes)  # None unless per_decay is set
        if dlam is not None and self.per_decay is not None:
            grad = grad + self.per_decay * c_i * dlam
        jac = self.senses[:, None] * (dc[:, self.watched].T - dthr)
        if not hessian:
            return Point(x, t, float(target[0]), margins[0], thresholds, grad, jac)
        H = second_derivatives(self, x, here, t, slopes, dc)
        if H is None:  # too large for the block system: first derivatives only
            return Point(x, t, float(target[0]), margins[0], thresholds, grad, jac)
        hess = H[:, :, i] * per
        if self.goal.yield_basis:
            cross = np.outer(dc[:, i], dtotal)
            hess = hess / total - (cross + cross.T) / total**2
            hess = hess + 2 * c_i * np.outer(dtotal, dtotal) / total**3
        if dlam is not None and self.per_decay is not None:
            cross = np.outer(dlam, dc[:, i])
            hess = hess + self.per_decay * (cross + cross.T + c_i * self._decay_curvatures(x))
        curv = self.senses[:, None, None] * np.moveaxis(H[:, :, self.watched], 2, 0)
        return Point(x, t, float(target[0]), margins[0], thresholds, grad, jac, hess, curv)

    def _decay_slopes(self, slopes) -> np.ndarray | None:
        r""":math:`\partial\lambda_i/\partial x_j` of the target species' decay constant.

        Units [1/s per internal unit]; for an activity target whose decay constant a setting
        moves; None otherwise.
        """
        if self.per_decay is None:
            return None
        out = np.zeros(len(self.settings))
        for j, slope in slopes.items():
            out[j] = -float(self.pattern.dense(slope)[self.index, self.index])
        return out if out.any() else None

    def _decay_curvatures(self, x) -> np.ndarray:
        r""":math:`\partial^2\lambda_i/\partial x_p \partial x_q` [1/s per internal units^2].

        From :func:`kinetics.optimise.curvature.rate_curvatures`.
        """
        from .curvature import rate_curvatures

        d = len(self.settings)
        out = np.zeros((d, d))
        rated = self._rated
        for a, p in enumerate(rated):
            for q in rated[a:]:
                F = self.pattern.dense(rate_curvatures(self, x, p, q))
                out[p, q] = out[q, p] = -float(F[self.index, self.index])
        return out

    @property
    def _rated(self) -> list[int]:
        """The settings that change step rates (all but time and start values)."""
        return [j for j in self.rest if self.settings[j].kind != "start"]

    # -- derivatives -----------------------------------------------------------------------
    def _derivatives(self, here: Scheme, t: float, slopes) -> tuple[np.ndarray, np.ndarray]:
        """dc(t)/dx_j (d, n) and d(thresholds)/dx_j (r, d)."""
        Kh, Kl = here.rate_matrix_pair()
        c0 = here.initial_vector
        feed = here.feed_vector if here.feed else None
        n, d = len(here.species), len(self.settings)
        dc = np.zeros((d, n))
        dthr = np.zeros((len(self.requirements), d))
        moved = list(slopes)
        if moved:
            E = np.stack([self.pattern.dense(slopes[j]) for j in moved])
            dc[moved] = sensitivities(Kh, c0, [t], E, feed, K_low=Kl)[:, 0, :]
        for j, s in enumerate(self.settings):
            if s.kind == "time":
                c = propagate(Kh, c0, [t], feed, K_low=Kl)[0]
                dc[j] = Kh @ c + Kl @ c + (0.0 if feed is None else feed)
            elif s.kind == "start":
                unit = np.zeros(n)
                unit[here.index[s.target]] = 1.0
                dc[j] = propagate(Kh, unit, [t], K_low=Kl)[0]
                for r, req in enumerate(self.requirements):
                    if req.share is not None and req.of == s.target:
                        dthr[r, j] = float(req.share)
        return dc, dthr

    def rates_at(self, x, changes: dict[int, float]) -> list[Fraction]:
        """The exact effective step rates [1/s] with some settings moved from ``x``.

        ``changes`` maps a setting's index to its value [internal units].
        """
        y = np.array(x, dtype=float)
        for j, v in changes.items():
            y[j] = v
        hi, lo = step_rate_pairs(self.scheme_at(y))
        return [Fraction(float(a)) + Fraction(float(b)) for a, b in zip(hi, lo, strict=True)]

    def steps_of(self, x, j: int, step: Fraction) -> tuple[float, float]:
        """Two values of setting ``j`` around ``x[j]`` a relative ``step`` apart.

        The lower one is ``x[j]`` itself where the setting cannot go below 0.
        """
        s = self.settings[j]
        v = Fraction(float(x[j]))
        h = abs(v) * step or Fraction(s.hi_internal - s.lo_internal) * step
        a, b = float(v - h), float(v + h)
        if a < 0 <= s.lo_internal:
            a = float(v)
        return a, b

    def _rate_slopes(self, x, j: int) -> np.ndarray:
        r""":math:`\partial k_s/\partial x_j` of every step [1/s per internal unit].

        A central difference of exact evaluations (one-sided at a bound at zero).
        """
        a, b = self.steps_of(x, j, _STEP)
        up, down = self.rates_at(x, {j: b}), self.rates_at(x, {j: a})
        width = Fraction(b) - Fraction(a)
        return np.array([float((u - w) / width) for u, w in zip(up, down, strict=True)])
