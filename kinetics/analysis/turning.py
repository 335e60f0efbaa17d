r"""Turning points of the curves: every local maximum and minimum of :math:`c_i(t)`.

A turning point lies where the exact derivative :math:`(Kc + f)_i` changes sign between
two scan points whose signs stand above the rounding noise; it is refined by
:func:`kinetics.analysis.roots.find_roots` on the exact derivative.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from kinetics.analysis import inputs
from kinetics.analysis.limits import limit_parts
from kinetics.analysis.problem import Problem
from kinetics.analysis.results import Limit, Maximum
from kinetics.analysis.roots import Brackets, find_roots
from kinetics.analysis.scan import Grid, scan
from kinetics.analysis.tolerances import GLOBAL_TOL

__all__ = ["Turns", "intermediate_maxima", "maxima", "samples", "turning_points"]


@dataclass(frozen=True)
class Turns:
    """The turning points of one species in time order.

    Times [s], heights [conc] and types (+1 maximum, -1 minimum).
    """

    t: np.ndarray
    c: np.ndarray
    type: np.ndarray


_NONE = Turns(np.zeros(0), np.zeros(0), np.zeros(0, dtype=int))


def _sign_changes(grid: Grid, n: int) -> tuple[list[tuple], list[int]]:
    """One (species, left point, right point) per sign change of a known derivative.

    With the type of the turning point it brackets.
    """
    s = np.sign(grid.D) * (np.abs(grid.D) > grid.N)
    found, types = [], []
    for i in range(n):
        sig = np.flatnonzero(s[:, i])
        if sig.size < 2:
            continue
        ss = s[sig, i]
        for k in np.flatnonzero(ss[:-1] != ss[1:]):
            found.append((i, sig[k], sig[k + 1]))
            types.append(1 if ss[k] > 0 else -1)
    return found, types


def _brackets(grid: Grid, found: list[tuple]) -> Brackets:
    T, D, D2, D3, N, N3 = grid.T, grid.D, grid.D2, grid.D3, grid.N, grid.N3
    sp = np.array([i for i, _, _ in found])
    ia = np.array([a for _, a, _ in found])
    ib = np.array([b for _, _, b in found])
    # the third derivative where it stands above its rounding noise, else unknown
    qa = np.where(np.abs(D3[ia, sp]) > N3[ia, sp], D3[ia, sp], np.nan)
    qb = np.where(np.abs(D3[ib, sp]) > N3[ib, sp], D3[ib, sp], np.nan)
    return Brackets(
        a=T[ia],
        b=T[ib],
        ga=D[ia, sp],
        gb=D[ib, sp],
        gpa=D2[ia, sp],
        gpb=D2[ib, sp],
        gppa=qa,
        gppb=qb,
        species=sp,
        level=np.zeros(sp.size),
        deriv=np.ones(sp.size, dtype=bool),
        na=N[ia, sp],
        nb=N[ib, sp],
    )


def turning_points(problem: Problem, grid: Grid) -> tuple[Turns, ...]:
    """Per species: times, heights and types (+1 max, -1 min) of its turning points."""
    found, types = _sign_changes(grid, problem.n)
    stat = [_NONE] * problem.n
    if not found:
        return tuple(stat)
    SP = np.array([i for i, _, _ in found])
    TY = np.array(types)
    t, h = find_roots(problem, _brackets(grid, found))
    for i in np.unique(SP):
        sel = SP == i
        o = np.argsort(t[sel])
        stat[i] = Turns(t[sel][o], h[sel][o], TY[sel][o])
    return tuple(stat)


def samples(grid: Grid, turns: Turns, i: int) -> tuple[np.ndarray, ...]:
    """Times, values, slopes and curvatures of c_i on the grid plus its turning points.

    nan where unknown.

    Between consecutive samples c_i is monotone (every turning point is a sample).
    """
    t = np.concatenate([grid.T, turns.t])
    v = np.concatenate([grid.C[:, i], turns.c])
    d = np.concatenate([grid.D[:, i], np.zeros(turns.t.size)])
    sig = np.abs(grid.D2[:, i]) > grid.N2[:, i]
    d2 = np.concatenate([np.where(sig, grid.D2[:, i], np.nan), np.full(turns.t.size, np.nan)])
    o = np.argsort(t, kind="stable")
    return t[o], v[o], d[o], d2[o]


def maxima(problem: Problem, turns: Turns, limit: Limit, i: int) -> list[Maximum]:
    """The local maxima of species ``i``.

    The highest is global when it reaches the larger of the start value and the limit.
    """
    sel = turns.type == 1
    times, heights = turns.t[sel], turns.c[sel]
    if times.size == 0:
        return []
    top = int(np.argmax(heights))
    ceiling = max(problem.c0[i], limit.values[i])
    is_global = heights[top] >= ceiling * (1 - GLOBAL_TOL)
    w = problem.t_window
    return [
        Maximum(
            i,
            float(times[k]),
            float(heights[k]),
            beyond_window=bool(w is not None and times[k] > w),
            is_global=bool(is_global and k == top),
        )
        for k in range(times.size)
    ]


def intermediate_maxima(K, c0, i: int, feed=None, t_window: float | None = None) -> list[Maximum]:
    r"""Every local maximum of :math:`c_i(t)` over :math:`t > 0`.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    i : int
        Species index.
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].
    t_window : float, optional
        End of the chosen time window [s]; later maxima are flagged ``beyond_window``.

    Returns
    -------
    list of Maximum
        In time order; the global one (if any) has ``is_global=True``.

    .. math::

        \frac{dc_i}{dt} = (K c(t) + f)_i = 0, \qquad
        t_{max} = \frac{\ln(k_1/k_2)}{k_1 - k_2}, \;
        c_{B,max} = A_0 \left(\frac{k_1}{k_2}\right)^{k_2/(k_2-k_1)}
        \text{ for } A \to B \to C

    Notes
    -----
    The derivative is evaluated exactly from the solution on a log-spaced scan from
    1e-3 of the fastest to 50 of the slowest time constant of ``K`` (8 points per octave,
    about 27 per decade, plus about 8 points per period for damped oscillations), refined
    where a cubic model of the derivative suggests two hidden turning points.  Each + to -
    sign change is refined by a safeguarded Newton iteration on the exact derivative (its
    slope :math:`(K(Kc+f))_i` is exact too), started from the quintic Hermite model of the
    bracket and never leaving the bracket, to about 1e-13 relative in time.  Signs of derivatives
    smaller than 1e-12 of the flux magnitudes are treated as unknown (rounding noise).

    References
    ----------
    Bateman, H. Proc. Cambridge Philos. Soc. 15, 423-427 (1910).
    Atkins, P.; de Paula, J. "Atkins' Physical Chemistry", 10th ed., Oxford University
    Press (2014), consecutive reactions.

    Examples
    --------
    A -> B -> C with k1 = 0.1 and k2 = 0.05 1/s: closed forms (Bateman 1910)
    t_max = ln(k2/k1) / (k2 - k1) and c_max = c_A(0) (k1/k2)^(k2/(k2 - k1)) = 0.5:

    >>> import math
    >>> (peak,) = intermediate_maxima([[-0.1, 0, 0], [0.1, -0.05, 0], [0, 0.05, 0]], [1.0, 0, 0], 1)
    >>> math.isclose(peak.time, math.log(0.5) / -0.05, rel_tol=1e-13), round(peak.height, 13)
    (True, 0.5)
    """
    problem = Problem(K, c0, feed, t_window=t_window)
    i = inputs.species_index(i, problem.n)
    grid = scan(problem)
    turns = turning_points(problem, grid)
    return maxima(problem, turns[i], limit_parts(problem).limit, i)
