r"""Second derivatives of the concentrations with respect to the settings.

They serve the Newton steps of the local search.

For parameters :math:`p, q` that change the rate matrix (:math:`E_p = \partial K/\partial
x_p`, :math:`F_{pq} = \partial^2 K/\partial x_p \partial x_q`) or the start values, the
first derivatives :math:`s_p = \partial c/\partial x_p` obey :math:`s_p' = K s_p + E_p c`,
:math:`s_p(0) = \partial c_0/\partial x_p`.  The augmented system

.. math::

    \tilde c = \begin{bmatrix} c \\ s_1 \\ \vdots \\ s_m \end{bmatrix}, \qquad
    \tilde K = \begin{bmatrix} K & & \\ E_1 & K & \\ \vdots & & \ddots \end{bmatrix}

is itself a linear system, so its first derivatives (the Fréchet derivative of its
exponential, :func:`kinetics.sensitivity.block_sensitivities`) along
:math:`\partial\tilde K/\partial x_q` (blocks :math:`E_q` on the diagonal, :math:`F_{pq}`
under :math:`c`) hold every :math:`\partial^2 c/\partial x_p \partial x_q`.  The time is
exact too: :math:`\partial^2 c/\partial t^2 = K(Kc + f)`, :math:`\partial^2 c/\partial t
\partial x_p = K s_p + E_p c`.  :math:`F_{pq}` of each step rate comes from second
differences of exact evaluations of the constants (40 digits, relative step
:math:`2^{-26}`: truncation and rounding both near :math:`10^{-16}`).

References
----------
C. Van Loan, "Computing integrals involving the matrix exponential", IEEE Trans. Automat.
Control 23, 395-404 (1978) (block-triangular exponentials).
I. Najfeld, T. F. Havel, "Derivatives of the matrix exponential and their computation",
Adv. Appl. Math. 16, 321-375 (1995).
"""

from __future__ import annotations

from fractions import Fraction
from typing import TYPE_CHECKING

import numpy as np

from ..sensitivity import block_sensitivities

if TYPE_CHECKING:
    from ..scheme import Scheme
    from .model import Model

__all__ = ["BLOCK_MAX", "rate_curvatures", "second_derivatives"]

#: Largest block matrix (rows) the second derivatives are formed with; above it the
#: local search goes without Newton steps.
BLOCK_MAX = 1500
#: Relative step of the second differences of the exact constants.
_STEP = Fraction(1, 2**26)


def rate_curvatures(model: Model, x, i: int, j: int) -> np.ndarray:
    r""":math:`\partial^2 k_s/\partial x_i \partial x_j` of every step [1/s per internal unit^2].

    From second differences of exact evaluations.
    """
    ai, bi = model.steps_of(x, i, _STEP)
    if i == j:
        v = float(x[i])
        lo, mid, hi = (ai, v, bi) if ai < v else (v, bi, bi + (bi - v))
        f = [model.rates_at(x, {i: w}) for w in (lo, mid, hi)]
        a, b, c = (Fraction(w) for w in (lo, mid, hi))
        return np.array(
            [
                float(2 * ((fc - fb) / (c - b) - (fb - fa) / (b - a)) / (c - a))
                for fa, fb, fc in zip(*f, strict=True)
            ]
        )
    aj, bj = model.steps_of(x, j, _STEP)
    corners = [model.rates_at(x, {i: u, j: w}) for u in (bi, ai) for w in (bj, aj)]
    area = (Fraction(bi) - Fraction(ai)) * (Fraction(bj) - Fraction(aj))
    return np.array(
        [float((pp - pm - mp + mm) / area) for pp, pm, mp, mm in zip(*corners, strict=True)]
    )


def _augmented(model: Model, here: Scheme, slopes, starts, c0):
    """K~, c~0, the feed of the augmented system and the block of each parameter."""
    K = here.rate_matrix_pair()[0]
    n = K.shape[0]
    params = [*slopes, *starts]
    N = n * (1 + len(params))
    Kt = np.zeros((N, N))
    ct = np.zeros(N)
    ct[:n] = c0
    for b in range(1 + len(params)):
        Kt[b * n : (b + 1) * n, b * n : (b + 1) * n] = K
    E = {p: model.pattern.dense(slopes[p]) for p in slopes}
    for k, p in enumerate(params, 1):
        if p in E:
            Kt[k * n : (k + 1) * n, :n] = E[p]
        else:
            ct[k * n + here.index[model.settings[p].target]] = 1.0
    feed = None
    if here.feed:
        feed = np.zeros(N)
        feed[:n] = here.feed_vector
    return K, E, params, Kt, ct, feed


def second_derivatives(model: Model, x, here: Scheme, t: float, slopes, dc) -> np.ndarray | None:
    r""":math:`\partial^2 c(t)/\partial x_p \partial x_q` of every species, shape (d, d, n).

    Units [conc per internal units squared]; None for a system above :data:`BLOCK_MAX` rows.
    """
    starts = [j for j in model.rest if model.settings[j].kind == "start"]
    n, d = len(here.species), len(model.settings)
    m = len(slopes) + len(starts)
    if n * (1 + m) * (1 + len(slopes)) + 1 > BLOCK_MAX:
        return None
    K, E, params, Kt, ct, feed = _augmented(model, here, slopes, starts, here.initial_vector)
    rated = list(slopes)
    directions = []
    for q in rated:
        D = np.zeros_like(Kt)
        D[:n, :n] = E[q]
        for k, p in enumerate(params, 1):
            D[k * n : (k + 1) * n, k * n : (k + 1) * n] = E[q]
            if p in E:
                F = model.pattern.dense(rate_curvatures(model, x, p, q))
                D[k * n : (k + 1) * n, :n] = F
        directions.append(D)
    vectors = []
    for q in starts:
        v = np.zeros_like(ct)
        v[here.index[model.settings[q].target]] = 1.0
        vectors.append(v)
    c, S = block_sensitivities(
        Kt,
        ct,
        np.array([t]),
        np.array(directions) if directions else None,
        feed,
        np.array(vectors) if vectors else None,
    )
    H = np.zeros((d, d, n))
    for col, q in enumerate([*rated, *starts]):
        for k, p in enumerate(params, 1):
            H[p, q] = S[col, 0, k * n : (k + 1) * n]
    H = 0.5 * (H + np.swapaxes(H, 0, 1))
    T = model.time_at
    if T is not None:
        cc = c[0, :n]
        g = K @ cc + (0.0 if feed is None else feed[:n])
        H[T, T] = K @ g
        for p in params:
            extra = E[p] @ cc if p in E else 0.0
            H[T, p] = H[p, T] = K @ dc[p] + extra
    return H
