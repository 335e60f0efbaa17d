r"""The exponential's action on one vector, for a stretch length needed once.

A timeline's output rows inside a stretch start at offsets that are all different (a
grid of 2,000 times over a thousand operations gives a thousand offsets).  A whole
exponential per offset costs about :math:`12 N^3` double-double operations; the action
:math:`e^{tA} v` on its one start vector costs about :math:`2 m N^2`.  With
:math:`B = A + \sigma I \ge 0` (:math:`\sigma` the largest outflow) and :math:`Y = tB`,

.. math:: e^{tA} v = e^{-\sigma t} \sum_{k \ge 0} \frac{Y^k v}{k!},

a sum of nonnegative terms: no cancellation, so every entry is accurate relative to
itself (the same reason the dense engine works with :math:`B`; Xue & Ye 2013).  The sum
is cut at degree :math:`m` and evaluated term by term in double-double
(:func:`kinetics.engine.action_kernels.taylor_actions`).

**Bound**, everything between the exact pair ``A + A_low`` and the double-double result
(before the final rounding to double), composed as :math:`\prod(1 + \epsilon) - 1`:

* input: forming :math:`Y` (:func:`kinetics.engine.plan.input_bound`);
* the terms :math:`w_k = (Y w_{k-1})/k`: each product of nonnegative data within
  :math:`\gamma = (N^2 + N + 4) u_{dd}` (:func:`kinetics.engine.plan.product_error`) and the
  division within :math:`6 u_{dd}`, so :math:`w_k` within :math:`(1 + \gamma + 6u_{dd})^k - 1`;
  each of the :math:`m` sums of nonnegative terms within :math:`4 u_{dd}`:
  :math:`\operatorname{expm1}(m(\gamma + 6u_{dd}) + 4(m + 1)u_{dd})`;
* the factor :math:`e^{-\sigma t}` (:func:`kinetics.engine.kernels.dd_exp`) within
  :math:`8u_{dd}(1 + \sigma t)`, and its product with the sum within :math:`4u_{dd}`;
* truncation, a posteriori: the remainder satisfies :math:`0 \le e^{Y}v - S \le G e^{Y} v`
  with :math:`G = Y^{m+1}/(m+1)!` (the tail coefficients :math:`1/(m+1+i)!` are at most
  :math:`1/((m+1)!\,i!)`, and :math:`G` commutes with :math:`e^{Y}`).  With
  :math:`r = \max_i (GS)_i / S_i`, the relative error :math:`c` of :math:`S` satisfies
  :math:`c \le r + rc`, so :math:`c \le r/(1 - r) \le 2r` for :math:`r \le 1/2` (as for the
  exponentials, :func:`kinetics.engine.dense.expm_group`).  The degree is at least
  :math:`N - 1`: an entry zero in the first :math:`N` terms is zero exactly (no path
  reaches it), so the entries the ratio leaves out are exact.

A member whose check fails (or whose :math:`\|Y\|` is above :data:`MAX_NORM`, where the
sum nears overflow) is left to the exponential route, and so are all members when the
degree exceeds ``COST_DEGREE * (N + 6)`` (a stiff stretch, where the exponential's squarings
cost less than the long sum).

References
----------
J. Xue, Q. Ye, "Computing exponentials of essentially non-negative matrices entrywise to
high relative accuracy", Math. Comp. 82, 1577-1596 (2013). doi:10.1090/S0025-5718-2012-02657-3
"""

from __future__ import annotations

import math

import numpy as np

from kinetics import _doubledouble as dd
from kinetics.engine.plan import TINY, compose, input_bound, product_error

__all__ = ["COST_DEGREE", "MAX_NORM", "TARGET", "actions", "degree"]

#: largest norm of ``tB`` taken by this route (the sum grows like e^norm)
MAX_NORM = 300.0
#: truncation target, that of the double-double exponentials (kinetics.engine.dense)
TARGET = 2.0**-64
#: the route is taken up to degree ``COST_DEGREE * (N + 6)``: about :math:`2mN^2`
#: operations against about :math:`12N^3` for an exponential (a dozen products), plus a
#: few dozen operations per entry either way (the shift, the factor, the checks)
COST_DEGREE = 4


def degree(beta: float, N: int, target: float = TARGET) -> int:
    r"""Taylor degree for ``||tB||_1 <= beta``: the Poisson tail, plus ``N - 1``.

    The relative remainder of the scalar series :math:`e^{\beta}` after degree :math:`m` is
    :math:`P(X > m)` for :math:`X` Poisson with mean :math:`\beta`, at most
    :math:`e^{-\beta}\beta^{m+1}/(m+1)! \cdot (m+2)/(m+2-\beta)`; an entry reached by a path
    of :math:`p` steps sees the tail shifted by :math:`p`, hence the ``N - 1``.  A guess,
    checked a posteriori (module docstring).

    Examples
    --------
    For :math:`\beta = 1` the tail after degree :math:`m` is about :math:`1/(m+1)!` (closed
    form of the Poisson tail at mean 1): :math:`1/21! = 2.0 \times 10^{-20}` is the first
    below :data:`TARGET` (:math:`5.4 \times 10^{-20}`), so the degree is 20; a 5-species
    scheme adds its longest path, 4:

    >>> degree(0.0, 1), degree(1.0, 1), degree(1.0, 5)
    (0, 20, 24)
    """
    if beta <= 0.0:
        return max(0, N - 1)
    log_target = math.log(target)
    m = max(0, math.ceil(beta) - 1)
    while m < 2000:
        tail = -beta + (m + 1) * math.log(beta) - math.lgamma(m + 2)
        if m + 2 > beta and tail - math.log1p(-beta / (m + 2)) <= log_target:
            break
        m += 1
    return m + N - 1


def actions(A, A_low, t, V):
    r"""``exp(t_q (A + A_low)) V_q`` for each member, where this route certifies it.

    Parameters
    ----------
    A, A_low : numpy.ndarray, shape (N, N)
        Essentially nonnegative matrix [1/s] as a double-double pair.
    t : numpy.ndarray, shape (b,)
        Lengths [s], > 0.
    V : numpy.ndarray, shape (b, N)
        Start vectors, >= 0.

    Returns
    -------
    Oh, Ol : numpy.ndarray, shape (b, N)
        The results as double-double pairs.
    bound : numpy.ndarray, shape (b,)
        Relative bound of every entry above 1e-290 (module docstring), ``inf`` where the
        route does not certify the target (take the exponential route there).

    Examples
    --------
    Decay at k = 1/s over 1 s (closed form :math:`e^{-1}`):

    >>> Oh, Ol, bound = actions(np.array([[-1.0]]), np.zeros((1, 1)), np.array([1.0]),
    ...                         np.array([[1.0]]))
    >>> round(float(Oh[0, 0]), 15), bool(bound[0] < 1e-28)
    (0.367879441171442, True)
    """
    from kinetics.engine import kernels

    b, N = V.shape
    sigma, sigma_lo, beta = np.empty(1), np.empty(1), np.empty(1)
    kernels.shift_and_norm(A[None], A_low[None], np.ones(1), sigma, sigma_lo, beta)
    Oh, Ol = np.zeros((b, N)), np.zeros((b, N))
    bound = np.full(b, np.inf)
    norms = beta[0] * t
    fits = norms <= MAX_NORM
    if not fits.any():
        return Oh, Ol, bound
    m = degree(float(norms[fits].max()), N)
    if m > COST_DEGREE * (N + 6):  # an exponential per member costs less
        return Oh, Ol, bound
    shift = (float(sigma[0]), float(sigma_lo[0]))
    # first without the path shift (enough once every species is present), then with it
    for degree_now in sorted({max(m - (N - 1), N - 1), m}):
        sel = np.flatnonzero(fits & ~np.isfinite(bound))
        if not sel.size:
            break
        Oh[sel], Ol[sel], bound[sel] = _attempt(
            A, A_low, shift, t[sel], V[sel], norms[sel], degree_now
        )
    return Oh, Ol, bound


def _attempt(A, A_low, shift, t, V, norms, m: int):
    """One run of the kernel at degree ``m``: results and bounds (``inf`` where it fails)."""
    from kinetics.engine.action_kernels import taylor_actions

    b, N = V.shape
    h, lo, r = np.empty((b, N)), np.empty((b, N)), np.empty(b)
    taylor_actions(
        A, A_low, shift[0], shift[1], np.ascontiguousarray(t), np.ascontiguousarray(V), m, TINY,
        h, lo, r,
    )  # fmt: skip
    u = dd.DD_UNIT
    gamma = product_error(N, True)
    taylor = math.expm1(m * (gamma + 6 * u) + 4 * (m + 1) * u)
    factor = 8 * u * (1 + shift[0] * t) + 4 * u
    trunc = 2.0 * r
    certified = compose(compose(input_bound(norms, N, True), taylor), compose(factor, trunc))
    return h, lo, np.where(trunc <= TARGET, certified, np.inf)
