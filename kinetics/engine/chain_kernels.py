r"""Compiled loop of a chain of stretches with operations between them (private; numba).

A timeline of operations (:mod:`kinetics.timeline_solve`) is a chain: propagate over a
stretch by a kept exponential, apply the operations at its end, propagate over the next.
With a thousand stretches the Python around each step cost more than the step itself, so
the whole chain runs here, in one call.

Operations are given as *actions*, in the order they are applied; every action is a
nonnegative map of the state :math:`x` (the first ``n`` entries; an augmented state
carries a constant 1 after them) or a rounding added to the bound :math:`e`:

========  ==============================================================  =============
kind      map                                                             record
========  ==============================================================  =============
SCALE     :math:`x_i \leftarrow \kappa x_i` for every species              none
ADD       :math:`x_s \leftarrow x_s + a`                                    none
REMOVE    :math:`r = p\,x_s`, :math:`x_s \leftarrow (1 - p)\,x_s`           :math:`-r`, bound
ROUND     :math:`e \leftarrow (1 + e)(1 + u)^c - 1`, ``c`` = ``species``    none
========  ==============================================================  =============

For a removal, ``first`` is :math:`p` and ``second`` is :math:`1 - p` (each the double
nearest to the exact fraction); its record's bound is :math:`e` when ``flag`` is set
(a complete removal: both products are exact) and :math:`(1 + e)(1 + u)^2 - 1` otherwise
(the fraction as a double, and the product).
The caller adds the ROUND actions where the maps round (see :mod:`kinetics.timeline_solve`).
"""

from __future__ import annotations

import numpy as np
from numba import njit

from kinetics.engine.kernels import KERNEL, product, residual_corrections
from kinetics.engine.plan import TINY as _TINY
from kinetics.engine.plan import U as _U

SCALE, ADD, REMOVE, ROUND = 0, 1, 2, 3


@njit(**KERNEL)
def operate(x, n, e, begin, stop, kind, species, first, second, flag, record, moved, bound):
    """Apply the actions ``begin .. stop - 1`` to ``x`` (a column, shape (N, 1)) in place.

    Returns the new bound.

    ``moved[record[k]]`` and ``bound[record[k]]`` receive the signed amount and the
    bound of each removal.
    """
    for k in range(begin, stop):
        c = kind[k]
        if c == SCALE:
            f = first[k]
            for i in range(n):
                x[i, 0] = f * x[i, 0]
        elif c == ADD:
            s = species[k]
            x[s, 0] = x[s, 0] + first[k]
        elif c == REMOVE:
            s = species[k]
            taken = first[k] * x[s, 0]
            x[s, 0] = second[k] * x[s, 0]
            moved[record[k]] = -taken
            if flag[k]:
                bound[record[k]] = e
            else:  # the fraction's rounding and the product's
                r = e + _U + e * _U
                bound[record[k]] = r + _U + r * _U
        else:
            for _ in range(species[k]):
                e = e + _U + e * _U
    return e


@njit(**KERNEL)
def chain(
    Fh, Fl, is_dd, eps, A, gamma, which, low, x0, n, at, actions, start, end, final, moved, bound
):
    r"""Propagate ``x0`` over every stretch, applying the actions at the boundaries.

    ``Fh + Fl`` (F, N, N) are the kept exponentials (augmented and padded to one size),
    ``is_dd`` their route, ``eps`` the relative bound of one product with each (its
    exponential's and the product's rounding), ``A`` and ``gamma`` the augmented rate
    matrices and their rounding factors for the residual correction
    (:func:`kinetics.engine.kernels.residual_corrections`).  Stretch ``j`` uses
    exponential ``which[j]``; its exact length exceeds the propagated one by ``low[j]``.
    ``at`` (P + 2,) delimits the actions of each boundary: those of boundary ``j`` (the
    start of stretch ``j``; boundary P is the end of the window) are
    ``at[j] .. at[j + 1] - 1``; ``actions`` is the tuple of the action arrays of
    :func:`operate`.  ``start``/``end`` (P, n + 1) receive the states and, in the last
    column, their bounds; ``final`` (n + 1) the state after the last boundary.

    Returns the first stretch whose product overflowed (-1 if none).
    """
    # One body on purpose: the loop is the whole point (the Python around each step
    # costs more than the step); numba compiles it flat.
    kind, species, first, second, flag, record = actions
    P = which.size
    N = Fh.shape[1]
    x = np.zeros((N, 1))
    zero = np.zeros((N, 1))
    oh = np.empty((N, 1))
    ol = np.empty((N, 1))
    X = np.empty((1, 1, N))
    held = np.empty((1, 1))
    delta = np.empty(1)
    for i in range(n):  # explicit loops: a slice assignment costs seconds of compilation
        x[i, 0] = x0[i]
    x[N - 1, 0] = 1.0  # the feed's constant entry (a padded, unfed exponential keeps it)
    e = 0.0
    for j in range(P + 1):
        e = operate(
            x,
            n,
            e,
            at[j],
            at[j + 1],
            kind,
            species,
            first,
            second,
            flag,
            record,
            moved,
            bound,
        )
        if j == P:
            break
        for i in range(n):
            start[j, i] = x[i, 0]
        start[j, n] = e
        f = which[j]
        product(Fh[f], Fl[f], x, zero, oh, ol, is_dd[f])
        for i in range(N):
            if not np.isfinite(oh[i, 0]):
                return j
            s = oh[i, 0] + ol[i, 0]
            X[0, 0, i] = s if s > 0.0 else 0.0
        if low[j] != 0.0:
            held[0, 0] = eps[f]
            delta[0] = low[j]
            residual_corrections(A[f : f + 1], X, delta, n, gamma[f], _TINY, held)
            step = held[0, 0] + _U + held[0, 0] * _U
        else:
            step = eps[f] + _U + eps[f] * _U
        e = e + step + e * step
        for i in range(N):
            x[i, 0] = X[0, 0, i]
        for i in range(n):
            end[j, i] = x[i, 0]
        end[j, n] = e
    for i in range(n):
        final[i] = x[i, 0]
    final[n] = e
    return -1
