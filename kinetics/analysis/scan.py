"""The scan: a log-like grid over every time scale of K.

At each point the exact curve, its first three derivatives and their rounding noise.

Every turning point and crossing is bracketed between consecutive scan points and then
refined by :mod:`kinetics.analysis.roots`; points are added where a cubic model of the
derivative hints at two turning points hidden between scan points.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from kinetics.analysis.hermite import hermite_basis
from kinetics.analysis.problem import Problem, State

__all__ = ["Grid", "base_times", "scan"]

# Log-spaced scan: points per octave (about 27 per decade) and at most this many points
# on the log grid and on the grids of damped oscillations.
_PER_OCTAVE = 8
_MAX_LOG_POINTS = 1500
_MAX_OSC_POINTS = 4000
# Rounds of added points where turning points may hide, and the most intervals refined.
_HIDDEN_ROUNDS = 3
_HIDDEN_MAX = 400


@dataclass(frozen=True)
class Grid:
    """Scan points [s] with the curve, three derivatives and their rounding noise.

    c [conc], :math:`D = Kc + f`, :math:`D_2 = KD`, :math:`D_3 = KD_2` and the rounding
    noise ``N``, ``N2``, ``N3`` of the three derivatives; arrays of shape (points, n), times
    ``T`` of shape (points,).
    """

    T: np.ndarray
    C: np.ndarray
    D: np.ndarray
    D2: np.ndarray
    D3: np.ndarray
    N: np.ndarray
    N2: np.ndarray
    N3: np.ndarray


def _oscillation_times(problem: Problem, t_hi: float) -> list[np.ndarray]:
    """About 8 points per period of each damped oscillation (complex pairs from cycles)."""
    osc = []
    for cl in problem.struct.classes:
        for ev in cl.eigenvalues:
            a, b = -ev.real, abs(ev.imag)
            if b > 0.2 * abs(a) and b > 0:
                t_end = min(t_hi, 35.0 / a) if a > 0 else t_hi
                step = 2.0 ** math.floor(math.log2(2 * math.pi / b / 8))
                osc.append([step, t_end])
    total = sum(t_end / step for step, t_end in osc)
    while total > _MAX_OSC_POINTS:
        for o in osc:
            o[0] *= 2
        total = sum(t_end / step for step, t_end in osc)
    return [step * np.arange(1, math.ceil(t_end / step) + 1) for step, t_end in osc]


def base_times(problem: Problem) -> np.ndarray:
    """Scan times [s]: a log-like grid over every time scale.

    Octaves [2^e, 2^(e+1)) with 8 equal steps each (about 27 points per decade), plus about
    8 points per period of damped oscillations and the end of the window.

    All log-grid points are exact binary multiples of their octave's step, so the engine
    needs one exponential per octave (it reuses the exponential of a repeated step).
    """
    span = problem.struct.scan_span()
    if span is None:
        return np.array([0.0, problem.t_window or 1.0])
    t_lo, t_hi = span
    e0 = math.floor(math.log2(t_lo))
    e1 = math.ceil(math.log2(t_hi))
    per = _PER_OCTAVE
    while per > 2 and (e1 - e0) * per > _MAX_LOG_POINTS:
        per //= 2
    parts: list[np.ndarray] = [np.zeros(1)]
    for e in range(e0, e1):
        base = 2.0**e
        parts.append(base + (base / per) * np.arange(per))
    parts.append(np.array([2.0**e1]))
    parts.extend(_oscillation_times(problem, t_hi))
    if problem.t_window is not None and problem.t_window <= t_hi:
        parts.append(np.array([problem.t_window]))
    return np.unique(np.concatenate(parts))


def evaluate_grid(problem: Problem, T: np.ndarray, state: State) -> Grid:
    """The grid at times ``T`` from the state there (points with a non-finite c dropped)."""
    ok = np.all(np.isfinite(state.C), axis=1)
    T, C, D, N = T[ok], state.C[ok], state.D[ok], state.N[ok]
    D2 = problem.apply(D)
    # rounding noise of K (K c + f): the noise of each d_j carried through |K|
    N2 = problem.noise_of_product(N, D)
    D3 = problem.apply(D2)
    N3 = problem.noise_of_product(N2, D2)
    return Grid(T, C, D, D2, D3, N, N2, N3)


def hidden_turns(g: Grid) -> np.ndarray:
    """New points where two turning points may hide between the grid points.

    Inside intervals where a cubic Hermite model of the derivative (from its values and
    slopes at both ends) changes sign although the end values have the same sign.
    """
    T, D, D2, N = g.T, g.D, g.D2, g.N
    if T.size < 2:
        return np.zeros(0)
    s = np.sign(D) * (np.abs(D) > N)
    s2 = np.sign(D2) * (np.abs(D2) > g.N2)
    same = (s[:-1] == s[1:]) & (s[:-1] != 0)
    # a hidden pair of turning points needs the derivative to move towards zero at
    # the left end and away from it at the right end
    same &= (s2[:-1] == -s[:-1]) & (s2[1:] == s[:-1])
    if not same.any():
        return np.zeros(0)
    h = np.diff(T)[:, None]
    g0, g1, m0, m1 = D[:-1], D[1:], h * D2[:-1], h * D2[1:]
    tol = np.maximum(N[:-1], N[1:])
    flag = np.zeros_like(same)
    for x in np.linspace(0.0, 1.0, 17)[1:-1]:
        h00, h10, h01, h11 = hermite_basis(x)
        p = h00 * g0 + h10 * m0 + h01 * g1 + h11 * m1
        flag |= same & (np.sign(p) != s[:-1]) & (np.abs(p) > tol)
    k = np.flatnonzero(flag.any(axis=1))
    if k.size == 0:
        return np.zeros(0)
    k = k[:_HIDDEN_MAX]
    frac = np.arange(1, 8) / 8.0
    new = (T[k][:, None] + (T[k + 1] - T[k])[:, None] * frac[None, :]).ravel()
    return np.setdiff1d(new, T)


def scan(problem: Problem) -> Grid:
    """The scan grid of ``problem``.

    :func:`base_times`, then up to three rounds of points added by :func:`hidden_turns`.
    """
    T = base_times(problem)
    g = evaluate_grid(problem, T, problem.state(T))
    for _ in range(_HIDDEN_ROUNDS):
        new = hidden_turns(g)
        if new.size == 0:
            break
        added = problem.state(new)
        T = np.concatenate([g.T, new])
        order = np.argsort(T, kind="stable")
        C, D, N = (
            np.concatenate([old, x])[order]
            for old, x in ((g.C, added.C), (g.D, added.D), (g.N, added.N))
        )
        g = evaluate_grid(problem, T[order], State(C, D, N))
    return g
