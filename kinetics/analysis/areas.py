r"""Areas under the concentration curves and mean residence times, exact.

:math:`\int_0^T c\,dt` comes from the exponential of the augmented matrix
:math:`\begin{pmatrix} K & 0 \\ I & 0 \end{pmatrix}` (Van Loan 1978), no quadrature; the
area to infinity from the class structure (:mod:`kinetics.analysis.limits`).

References
----------
Van Loan, C. F. "Computing integrals involving the matrix exponential." IEEE Trans.
Automat. Control 23, 395-404 (1978).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse

from kinetics.analysis import inputs
from kinetics.analysis.limits import LimitParts, limit_parts
from kinetics.analysis.problem import Problem
from kinetics.analysis.results import Areas
from kinetics.engine import propagate

__all__ = ["areas", "areas_to", "mean_residence_time", "residence_times"]


def areas_to(problem: Problem, times_end: np.ndarray) -> np.ndarray:
    r"""Exact :math:`\int_0^T c\,dt` [conc*s] for each T of ``times_end``, shape (len, n),
    via the augmented system d(area)/dt = c (Van Loan 1978)."""
    n = problem.n
    Kal = None
    if problem.Kd is not None:
        Ka = np.zeros((2 * n, 2 * n))
        Ka[:n, :n] = problem.Kd
        Ka[n:, :n] = np.eye(n)
        if problem.K_low is not None:
            Kal = np.zeros((2 * n, 2 * n))
            Kal[:n, :n] = problem.K_low
    else:
        eye = scipy.sparse.identity(n, format="csr")
        Ka = scipy.sparse.bmat([[problem.Ks, None], [eye, None]], format="csr")
        Ka = scipy.sparse.csr_array(Ka)
    c0a = np.concatenate([problem.c0, np.zeros(n)])
    fa = None if problem.feed is None else np.concatenate([problem.f, np.zeros(n)])
    order = np.argsort(times_end, kind="stable")
    out = np.empty((times_end.size, n))
    out[order] = propagate(Ka, c0a, times_end[order], fa, K_low=Kal)[:, n:]
    return out


def residence_times(problem: Problem, limits: LimitParts) -> np.ndarray:
    """Area to infinity over the start value [s]; nan where either makes it undefined."""
    X = limits.areas
    ok = (problem.c0 > 0) & np.isfinite(X)
    return np.where(ok, X / np.where(ok, problem.c0, 1.0), np.nan)


def areas(K, c0, times_end, feed=None) -> Areas:
    r"""Exact areas under the concentration curves, to each ``T`` and to infinity.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    times_end : float or array_like
        Upper limits T [s], >= 0.
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].

    Returns
    -------
    Areas
        ``to_end`` [conc*s] of shape ``(len(times_end), n)`` and ``to_infinity`` [conc*s].

    .. math::

        \frac{d}{dt}\begin{pmatrix} c \\ a \end{pmatrix} =
        \begin{pmatrix} K & 0 \\ I & 0 \end{pmatrix}
        \begin{pmatrix} c \\ a \end{pmatrix} + \begin{pmatrix} f \\ 0 \end{pmatrix},
        \qquad a(T) = \int_0^T c\,dt, \qquad
        a(\infty)_T = -K_{TT}^{-1} c_{0,T}

    Notes
    -----
    The augmented matrix is still essentially nonnegative, so the same exact engine
    computes the areas (Van Loan 1978); no quadrature.  The area to infinity is finite
    exactly for species whose limit is zero (transient or never formed).

    References
    ----------
    Van Loan, C. F. IEEE Trans. Automat. Control 23, 395-404 (1978).
    Gibaldi, M.; Perrier, D. "Pharmacokinetics", 2nd ed., Marcel Dekker (1982): AUC.
    """
    problem = Problem(K, c0, feed)
    T = inputs.times_end(times_end)
    to_end = areas_to(problem, T) if T.size else np.zeros((0, problem.n))
    return Areas(T, to_end, limit_parts(problem).areas.copy())


def mean_residence_time(K, c0, feed=None) -> np.ndarray:
    r"""Mean residence time :math:`\int_0^\infty c_i\,dt / c_{0,i}` [s] per species.

    Parameters
    ----------
    K : array_like or sparse, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Start concentrations [conc].
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].

    Returns
    -------
    ndarray
        [s]; nan for species that start at zero or whose area is infinite.

    .. math::

        MRT_i = \frac{\int_0^\infty c_i(t)\,dt}{c_{0,i}} = \frac{1}{k}
        \text{ for a single first-order decay}

    Notes
    -----
    Material of ``i`` formed from other starting materials is counted in the area too.

    References
    ----------
    Yamaoka, K.; Nakagawa, T.; Uno, T. J. Pharmacokinet. Biopharm. 6, 547-558 (1978).
    """
    problem = Problem(K, c0, feed)
    return residence_times(problem, limit_parts(problem))
