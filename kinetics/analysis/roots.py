r"""Many bracketed roots at once, by a safeguarded Newton iteration on the exact curve.

Each problem ``k`` solves :math:`g_k(t) = 0` on :math:`[a_k, b_k]` with
:math:`\operatorname{sign} g(a) \ne \operatorname{sign} g(b)`, where
:math:`g_k = (Kc + f)_i` (a turning point of :math:`c_i`) or :math:`g_k = c_i - \ell_k`
(a level crossing), :math:`i` the species of problem ``k``.  The slope :math:`g'` is exact
too: :math:`(K(Kc + f))_i` or :math:`(Kc + f)_i`.  One engine call per round serves all
problems.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from kinetics.analysis.hermite import hermite_root
from kinetics.analysis.problem import Problem
from kinetics.analysis.tolerances import REL_NOISE_C, XTOL

__all__ = ["Brackets", "find_roots"]

#: Most Newton rounds (each round halves a stalling bracket at worst).
_MAX_ROUNDS = 200


@dataclass(frozen=True)
class Brackets:
    """Root-finding problems, one entry per problem in every array.

    Attributes
    ----------
    a, b : array_like
        Ends of the brackets [s].
    ga, gb : array_like
        g at the ends.
    gpa, gpb : array_like
        g' at the ends.
    gppa, gppb : array_like
        g'' at the ends, nan where it is only rounding noise.
    species : array_like of int
        The species of each problem.
    level : array_like
        The level of a crossing [conc] (ignored for turning points).
    deriv : array_like of bool
        True for a turning point (g = d_i), False for a level crossing (g = c_i - level).
    na, nb : array_like
        Rounding noise of g at the ends.
    """

    a: np.ndarray
    b: np.ndarray
    ga: np.ndarray
    gb: np.ndarray
    gpa: np.ndarray
    gpb: np.ndarray
    gppa: np.ndarray
    gppb: np.ndarray
    species: np.ndarray
    level: np.ndarray
    deriv: np.ndarray
    na: np.ndarray
    nb: np.ndarray


class _Search:
    """The brackets as they narrow (working copies, changed in place by each round)."""

    def __init__(self, br: Brackets) -> None:
        self.a = np.array(br.a, dtype=float)
        self.b = np.array(br.b, dtype=float)
        self.ga = np.array(br.ga, dtype=float)
        self.gb = np.array(br.gb, dtype=float)
        self.na = np.array(br.na, dtype=float)
        self.nb = np.array(br.nb, dtype=float)
        self.species = np.asarray(br.species, dtype=int)
        self.level = np.asarray(br.level, dtype=float)
        self.deriv = np.asarray(br.deriv, dtype=bool)
        self.x, self.curv = hermite_root(
            self.a,
            self.b,
            self.ga,
            self.gb,
            np.asarray(br.gpa, float),
            np.asarray(br.gpb, float),
            np.asarray(br.gppa, float),
            np.asarray(br.gppb, float),
        )
        m = self.a.size
        self.root = np.full(m, np.nan)
        self.value = np.full(m, np.nan)
        self.wref = self.b - self.a
        self.active = np.ones(m, dtype=bool)
        # an end already at rounding-noise level is the root (as good as any nearby)
        qa, qb = np.abs(self.ga) <= self.na, np.abs(self.gb) <= self.nb
        for q, t in ((qa, self.a), (qb & ~qa, self.b)):
            self.root[q] = t[q]
            self.active[q] = False


@dataclass(frozen=True)
class _Evaluation:
    """g, g', a bound on |g''| and the noise of g at the current points; c_i, d_i, d2_i."""

    g: np.ndarray
    gp: np.ndarray
    gpp: np.ndarray
    noise: np.ndarray
    ci: np.ndarray
    di: np.ndarray
    d2i: np.ndarray


def _evaluate(problem: Problem, s: _Search, k: np.ndarray) -> _Evaluation:
    state = problem.state(s.x[k])
    C, D, N1 = state.C, state.D, state.N
    rows = np.arange(k.size)
    sp = s.species[k]
    ci, di = C[rows, sp], D[rows, sp]
    D2 = problem.apply(D)
    d2i = D2[rows, sp]
    d3i = problem.apply(D2)[rows, sp]
    N2 = problem.noise_of_product(N1, D)
    N3 = problem.noise_of_product(N2, D2)
    dk = s.deriv[k]
    g = np.where(dk, di, ci - s.level[k])
    gp = np.where(dk, d2i, di)
    # bound on |g''| (value plus its rounding noise) for the Newton error estimate
    exact = np.where(dk, np.abs(d3i), np.abs(d2i))
    known = exact > np.where(dk, N3[rows, sp], N2[rows, sp])
    # exact |g''| where it stands above its rounding noise, else 4x the model's
    gpp = np.where(known, exact, 4 * s.curv[k])
    noise = np.where(dk, N1[rows, sp], REL_NOISE_C * np.maximum(ci, s.level[k]))
    return _Evaluation(g, gp, gpp, noise, ci, di, d2i)


def _round(problem: Problem, s: _Search, k: np.ndarray, it: int) -> None:
    """One Newton round for the active problems ``k``.

    Narrow each bracket around the new point, accept converged roots, and choose the next
    points.
    """
    e = _evaluate(problem, s, k)
    a, b, ga, gb = s.a, s.b, s.ga, s.gb
    left = np.sign(e.g) == np.sign(ga[k])
    a[k[left]], ga[k[left]] = s.x[k[left]], e.g[left]
    b[k[~left]], gb[k[~left]] = s.x[k[~left]], e.g[~left]
    s.na[k[left]], s.nb[k[~left]] = e.noise[left], e.noise[~left]
    xk = s.x[k]
    with np.errstate(divide="ignore", invalid="ignore"):
        xn = xk - e.g / e.gp
    inside = np.isfinite(xn) & (xn > a[k]) & (xn < b[k])
    # Newton error after the step: |g''/(2 g')| dt^2 (Taylor), wanted below 1e-13 t
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        est = e.gpp / (2 * np.abs(e.gp)) * (xn - xk) ** 2
    small = (np.abs(xn - xk) <= 1e-9 * np.abs(xk)) | (est <= 1e-13 * np.abs(xk))
    quiet = np.abs(e.g) <= e.noise
    tight = (b[k] - a[k]) <= XTOL * np.abs(b[k])
    stop = (e.g == 0) | quiet
    done = stop | (inside & small) | tight
    near = np.clip(np.where(np.isfinite(xn), xn, xk), a[k], b[k])
    r = np.where(stop, near, np.where(inside, xn, 0.5 * (a[k] + b[k])))
    dt = r - xk
    # value at the root from the last exact evaluation (Taylor, |dt| tiny)
    v = e.ci + e.di * dt + 0.5 * e.d2i * dt * dt
    s.root[k[done]] = r[done]
    s.value[k[done]] = v[done]
    s.active[k[done]] = False
    nd = ~done
    if it % 3 == 2:
        slow = (b[k] - a[k]) > 0.5 * s.wref[k]
        s.wref[k] = b[k] - a[k]
    else:
        slow = np.zeros(k.size, dtype=bool)
    mid = 0.5 * (a[k] + b[k])
    with np.errstate(divide="ignore", invalid="ignore"):
        sec = b[k] - gb[k] * (b[k] - a[k]) / (gb[k] - ga[k])
    ok_sec = np.isfinite(sec) & (sec > a[k]) & (sec < b[k]) & ~slow
    fall = np.where(ok_sec, sec, mid)
    s.x[k[nd]] = np.where((~inside | slow)[nd], fall[nd], xn[nd])


def find_roots(problem: Problem, brackets: Brackets) -> tuple[np.ndarray, np.ndarray]:
    """Safeguarded Newton iteration for many bracketed roots at once.

    Start: root of the Hermite model from the bracket ends (:func:`hermite_root`);
    then Newton steps on the exact solution, one engine call per round for all
    problems, keeping the bracket; a step leaving the bracket or a stalling bracket
    falls back to the secant point or bisection.  Converged when the Newton step is
    below 1e-9 of t (error then ~1e-18 t), when the Newton error estimate is below
    1e-13 t, when |g| is at rounding-noise level, or when the bracket is below 1e-13
    relative.

    Parameters
    ----------
    problem : Problem
    brackets : Brackets

    Returns
    -------
    roots : ndarray
        [s], one per problem.
    values : ndarray
        :math:`c_i` at the roots [conc].
    """
    s = _Search(brackets)
    for it in range(_MAX_ROUNDS):
        k = np.flatnonzero(s.active)
        if k.size == 0:
            break
        _round(problem, s, k, it)
    left = np.isnan(s.root)
    s.root[left] = 0.5 * (s.a + s.b)[left]
    left |= np.isnan(s.value)
    if left.any():
        C = problem.propagate(s.root[left])
        s.value[left] = C[np.arange(C.shape[0]), s.species[left]]
    return s.root, s.value
