r"""Exact propagation of first-order reaction schemes, accurate entry by entry.

A first-order scheme with rate matrix :math:`K` [1/s] and a constant
(zero-order) feed :math:`f` [conc/s] has the solution

.. math::

    c(t) = e^{tK} c_0 + \int_0^t e^{sK}\,\mathrm{d}s\; f
         = \begin{bmatrix} I & 0 \end{bmatrix}
           \exp\!\left(t \begin{bmatrix} K & f \\ 0 & 0 \end{bmatrix}\right)
           \begin{bmatrix} c_0 \\ 1 \end{bmatrix}.

:math:`K` is *essentially nonnegative* (off-diagonal entries :math:`\ge 0`).  The
engine uses only operations on nonnegative numbers, so no entry of the result can
be spoiled by cancellation and no result can be negative:

1. shift: :math:`B = K + \sigma I \ge 0` with :math:`\sigma = \max_i(-k_{ii})`
   (Xue & Ye 2013, sec. 2), so :math:`e^{tK} = e^{-\sigma t} e^{tB}`;
2. scale: :math:`Y = tB/2^j`; sum the Taylor series of :math:`e^{Y}` (nonnegative
   terms, Paterson-Stockmeyer evaluation) and multiply by
   :math:`e^{-\sigma t/2^j}`;
3. square :math:`j` times (products of nonnegative matrices).

The relative error of an entry can double at each squaring (Xue & Ye 2013,
Theorem 3.2), so on stiff problems (:math:`\sigma t` up to :math:`10^{12}`,
about 40 squarings) plain double precision loses digits.  The default route
therefore carries the shifted matrix, the Taylor sum and the squarings in
double-double arithmetic built from error-free transformations
(:mod:`kinetics._doubledouble`; Dekker 1971; Ogita, Rump & Oishi 2005), and
rounds to double only at the end.  Each call also yields a certified-style
componentwise bound (see :func:`propagate_certified`).

Large schemes are split into the strongly connected components of the species
graph; see :func:`propagate` for the block-triangular route.

References
----------
Q. Ye, J. Xue, "A note on the componentwise perturbation bounds of matrix
exponential", / J. Xue, Q. Ye, "Entrywise relative perturbation bounds for
exponentials of essentially non-negative matrices", Numer. Math. 110, 393-403
(2008). doi:10.1007/s00211-008-0167-4
J. Xue, Q. Ye, "Computing exponentials of essentially non-negative matrices
entrywise to high relative accuracy", Math. Comp. 82, 1577-1596 (2013).
doi:10.1090/S0025-5718-2012-02677-2
M. Shao, W. Gao, J. Xue, "Aggressively truncated Taylor series method for
accurate computation of exponentials of essentially nonnegative matrices",
SIAM J. Matrix Anal. Appl. 35, 317-338 (2014). doi:10.1137/120894294
T. J. Dekker, "A floating-point technique for extending the available
precision", Numer. Math. 18, 224-242 (1971). doi:10.1007/BF01397083
T. Ogita, S. M. Rump, S. Oishi, "Accurate sum and dot product", SIAM J. Sci.
Comput. 26, 1955-1988 (2005). doi:10.1137/030601818
A. H. Al-Mohy, N. J. Higham, "A new scaling and squaring algorithm for the
matrix exponential", SIAM J. Matrix Anal. Appl. 31, 970-989 (2009) -- the
general-purpose method of :func:`scipy.linalg.expm`, used only as a
cross-check in the tests.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Literal

import numpy as np
import scipy.sparse

from kinetics.engine import checks
from kinetics.engine.dense import augment, expm_stack, propagate_stack
from kinetics.engine.plan import DENSE_MAX, TINY, U, compose
from kinetics.errors import ConcentrationError, RateMatrixError, TimesError

__all__ = [
    "CheckedInputs",
    "Precision",
    "Propagation",
    "check_inputs",
    "expm_nonnegative",
    "expm_nonnegative_certified",
    "propagate",
    "propagate_batch",
    "propagate_certified",
]

Precision = Literal["auto", "double", "double-double"]  # checks.PRECISIONS


def expm_nonnegative(A, t: float = 1.0, *, precision: Precision = "auto") -> np.ndarray:
    r"""Matrix exponential :math:`e^{tA}` of an essentially nonnegative matrix.

    .. math::

        e^{tA} = e^{-\sigma t}\left(T_m\!\left(\tfrac{t}{2^j}(A + \sigma I)\right)
        \right)^{2^j}, \qquad \sigma = \max_i(-a_{ii}),

    with :math:`T_m` the degree-:math:`m` Taylor polynomial (Xue & Ye 2013,
    Algorithm 1; Shao, Gao & Xue 2014 for the truncation).

    Parameters
    ----------
    A : array_like or scipy.sparse, shape (n, n)
        Essentially nonnegative matrix [1/s] (off-diagonal entries >= 0).
    t : float
        Time [s], >= 0.
    precision : {"auto", "double", "double-double"}
        Arithmetic of the Taylor sum and the squarings.  ``"auto"`` uses plain
        double only when its componentwise bound is below ``2**-46``.

    Returns
    -------
    ndarray, shape (n, n)
        Nonnegative matrix; every entry above 1e-290 carries the relative error
        reported by :func:`expm_nonnegative_certified`.

    Notes
    -----
    Dense algorithm, :math:`O(n^3 \log(\sigma t))`; meant for n up to a few
    hundred.  For :func:`propagate` use on large sparse schemes.

    References
    ----------
    J. Xue, Q. Ye, Math. Comp. 82, 1577-1596 (2013); M. Shao, W. Gao, J. Xue,
    SIAM J. Matrix Anal. Appl. 35, 317-338 (2014).
    """
    return expm_nonnegative_certified(A, t, precision=precision)[0]


@checks.guard_growth
def expm_nonnegative_certified(
    A, t: float = 1.0, *, precision: Precision = "auto"
) -> tuple[np.ndarray, float]:
    """Like :func:`expm_nonnegative`, also returning the componentwise bound.

    Returns
    -------
    (ndarray, float)
        The exponential and ``eps`` such that every entry ``F_ab >= 1e-290``
        satisfies ``|computed - exact| <= eps * exact`` (exact: the exponential
        of the given double matrix).  The rounding part of ``eps`` is a rigorous
        worst-case bound; the truncation part is the first-order a posteriori
        estimate of Shao, Gao & Xue (2014).
    """
    checks.precision(precision)
    A = checks.rate_matrix(A, allow_sparse=False)
    t = float(t)
    if not (math.isfinite(t) and t >= 0):
        raise TimesError("time must be finite and >= 0")
    n = A.shape[0]
    if t == 0.0 or n == 0:
        return np.eye(n), 0.0
    A = np.ascontiguousarray(A[None])
    Fh, _, bound, _ = expm_stack(A, np.zeros_like(A), np.array([t]), precision)
    return np.maximum(Fh[0], 0.0), float(compose(bound[0], U))


@dataclass
class Propagation:
    """Concentrations with their componentwise error bound.

    Attributes
    ----------
    times : ndarray, shape (p,)
        Times [s].
    concentrations : ndarray, shape (p, n)
        Concentrations [same unit as ``c0``], all >= 0.
    error_bound : ndarray, shape (p,)
        ``error_bound[k]`` bounds the relative error of every concentration at
        ``times[k]`` that is above 1e-290, against the exact solution for the
        given (double) rate matrix, initial values and feed.  Rounding errors
        are bounded rigorously; the Taylor truncation part is the first-order
        a posteriori estimate of Shao, Gao & Xue (2014).  It does not include
        the sensitivity to errors in the rate constants themselves.
    precision : str
        Route used: ``"double"``, ``"double-double"``, ``"blocks"`` (block
        triangular, exact diagonal blocks; :mod:`kinetics.engine.blocks`) or a combination.
    """

    times: np.ndarray
    concentrations: np.ndarray
    error_bound: np.ndarray
    precision: str = field(default="double-double")


@dataclass(frozen=True, eq=False)
class CheckedInputs:
    """A problem's rate matrix, start values and feed, checked (:func:`check_inputs`).

    :func:`kinetics.solve` keeps one per scheme, so that a scheme solved again is not
    checked again.

    Attributes
    ----------
    K : ndarray or scipy.sparse CSR, shape (n, n)
        Rate matrix [1/s].
    c0 : ndarray, shape (n,)
        Start values [conc].
    feed : ndarray, shape (n,), or None
        Zero-order feed [conc/s].
    K_low : ndarray or scipy.sparse CSR, shape (n, n), or None
        Low-order parts of ``K`` (exact matrix ``K + K_low``).
    feed_low : ndarray, shape (n,), or None
        Low-order parts of ``feed``.
    stacks : tuple of ndarray, or None
        The dense engine's augmented pair ``(A, A_low)``, shape (1, N, N), and start,
        shape (1, N) (N = n + 1 with a feed), made once for a scheme of at most
        :data:`~kinetics.engine.plan.DENSE_MAX` species given dense; else None.
    """

    K: Any  # ndarray or CSR
    c0: np.ndarray
    feed: np.ndarray | None
    K_low: Any  # ndarray, CSR or None
    feed_low: np.ndarray | None
    stacks: tuple[np.ndarray, np.ndarray, np.ndarray] | None = None

    @checks.guard_growth
    def propagate(self, times: np.ndarray, precision: Precision = "auto") -> Propagation:
        """:func:`propagate_certified` of these inputs on checked ``times`` [s].

        ``times`` as returned by :func:`kinetics.engine.checks.times`.
        """
        from kinetics.engine.blocks import prefers_blocks, propagate_blocks

        K, f, n = self.K, self.feed, self.c0.size
        # route by predicted cost (calibrated model in kinetics._blocks.route_costs)
        if prefers_blocks(K, times, precision):
            conc, bound = propagate_blocks(
                K, self.c0, times, f, K_low=self.K_low, feed_low=self.feed_low, floor=TINY
            )
            return Propagation(times, conc, bound, "blocks")
        stacks = self.stacks or _dense_stacks(K, self.c0, self.K_low, f, self.feed_low)
        X, bound, label = propagate_stack(*stacks, times, precision, n)
        # rows at time 0 hold c0 exactly (propagate_stack); without a feed X[0] is the table
        conc = X[0] if f is None else X[0, :, :n].copy()
        return Propagation(times, conc, bound[0], label)


def propagate_certified(
    K,
    c0,
    times,
    feed=None,
    *,
    precision: Precision = "auto",
    K_low=None,
    feed_low=None,
) -> Propagation:
    r"""Concentrations on a time grid with a componentwise error bound.

    .. math::

        c(t_k) = e^{t_k K} c_0 + \int_0^{t_k} e^{sK}\,\mathrm{d}s\, f

    Parameters
    ----------
    K : array_like or scipy.sparse, shape (n, n)
        Rate matrix [1/s]; off-diagonal entries >= 0; column j holds the
        outflow of species j.
    c0 : array_like, shape (n,)
        Initial concentrations [conc], >= 0.
    times : array_like, shape (p,)
        Times [s]; finite, >= 0, nondecreasing.
    feed : array_like, shape (n,), optional
        Zero-order feed rates [conc/s], >= 0.
    precision : {"auto", "double", "double-double"}
        Arithmetic of the dense engine (the block route, chosen by predicted cost for
        large sparse schemes, has its own).  ``"auto"`` takes plain double only where its a priori
        bound over the whole grid is within :data:`AUTO_RTOL`.
    K_low, feed_low : array_like, optional
        Low-order parts of ``K`` and ``feed`` when the exact values are the
        double-double sums ``K + K_low`` and ``feed + feed_low`` (how
        :func:`kinetics.solve` passes a scheme, so that a diagonal
        :math:`-\sum k` is not rounded before the engine sees it).

    Returns
    -------
    Propagation
        ``concentrations`` of shape (p, n) and ``error_bound`` of shape (p,):
        every concentration above 1e-290 at ``times[k]`` is within
        ``error_bound[k]`` (relative) of the exact solution for the exact inputs
        (``K + K_low``, ``c0``, ``feed + feed_low`` and the given times).

    Notes
    -----
    A uniform grid is propagated with one exponential :math:`F = e^{K\Delta t}` and
    one product :math:`F v` per point; other grids interval by interval.  All factors
    are nonnegative, so relative errors add up instead of cancelling.  Where the grid
    reaches a time that differs from the requested one in the last bits, the bound
    includes the effect of that residual.  Time 0 returns ``c0`` exactly.

    References
    ----------
    J. Xue, Q. Ye, Math. Comp. 82, 1577-1596 (2013); M. Shao, W. Gao, J. Xue,
    SIAM J. Matrix Anal. Appl. 35, 317-338 (2014).
    """
    checks.precision(precision)
    return check_inputs(K, c0, feed, K_low=K_low, feed_low=feed_low).propagate(
        checks.times(times), precision
    )


def check_inputs(K, c0, feed=None, *, K_low=None, feed_low=None) -> CheckedInputs:
    """Check a problem's rate matrix, start values and feed once, for any number of grids.

    Parameters and errors as in :func:`propagate_certified` (without the times).

    Returns
    -------
    CheckedInputs

    Examples
    --------
    The closed form c_A = e^(-kt) (k = 1 1/s) on two grids, the inputs checked once:

    >>> inputs = check_inputs([[-1.0, 0.0], [1.0, 0.0]], [1.0, 0.0])
    >>> round(float(inputs.propagate(np.array([0.0, 1.0])).concentrations[1, 0]), 12)
    0.367879441171
    >>> round(float(inputs.propagate(np.array([2.0])).concentrations[0, 0]), 12)
    0.135335283237
    """
    K = checks.rate_matrix(K)
    n = K.shape[0]
    c0 = checks.vector(c0, n, "c0", checks.START_HINT)
    f = None if feed is None else checks.vector(feed, n, "feed", checks.FEED_HINT)
    # the low parts are checked here; the block route takes them as given (sparse kept)
    Kl = None
    if K_low is not None:
        Kl = checks.low_parts(K_low, (n, n), "K_low", RateMatrixError, keep_sparse=True)
    fl = None if f is None else checks.low_parts(feed_low, (n,), "feed_low", ConcentrationError)
    dense = n <= DENSE_MAX and not scipy.sparse.issparse(K)
    stacks = _dense_stacks(K, c0, Kl, f, fl) if dense else None
    return CheckedInputs(K, c0, f, Kl, fl, stacks)


def _dense_stacks(K, c0, K_low, feed, feed_low) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The augmented rate matrix, its low parts (1, N, N) and the start (1, N), contiguous."""
    n = K.shape[0]
    if scipy.sparse.issparse(K):
        K = K.toarray()
    if K_low is None:
        K_low = np.zeros((n, n))
    elif scipy.sparse.issparse(K_low):
        K_low = K_low.toarray()
    fl = None if feed is None else feed_low
    A = augment(K[None], None if feed is None else feed[None])
    Al = augment(K_low[None], None if fl is None else fl[None])
    x0 = c0 if feed is None else np.append(c0, 1.0)
    return np.ascontiguousarray(A), np.ascontiguousarray(Al), x0[None]


def propagate(
    K, c0, times, feed=None, *, precision: Precision = "auto", K_low=None, feed_low=None
) -> np.ndarray:
    r"""Concentrations of a first-order scheme at the given times.

    .. math::

        c(t) = e^{tK} c_0 + \int_0^t e^{sK}\,\mathrm{d}s\, f
             = \begin{bmatrix} I & 0 \end{bmatrix}
               \exp\!\left(t \begin{bmatrix} K & f \\ 0 & 0 \end{bmatrix}\right)
               \begin{bmatrix} c_0 \\ 1 \end{bmatrix}

    Parameters
    ----------
    K : array_like or scipy.sparse, shape (n, n)
        Rate matrix [1/s], essentially nonnegative (off-diagonals >= 0).
    c0 : array_like, shape (n,)
        Initial concentrations [conc], >= 0.
    times : array_like, shape (p,)
        Times [s]; finite, >= 0 and nondecreasing.
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s], >= 0.
    precision : {"auto", "double", "double-double"}
        See :func:`propagate_certified`.
    K_low, feed_low : array_like, optional
        Low-order parts of double-double inputs (see :func:`propagate_certified`).

    Returns
    -------
    ndarray, shape (p, n)
        Concentrations [conc], all >= 0; row k is for ``times[k]``.

    Raises
    ------
    kinetics.errors.RateMatrixError
        Negative off-diagonal rates, inf or nan, not square.
    kinetics.errors.ConcentrationError
        Negative or non-finite concentrations or feed, a wrong number of them.
    kinetics.errors.TimesError
        Negative or non-finite times, times out of order.

    Notes
    -----
    Small and dense schemes use the dense entrywise engine (see the module
    docstring); large sparse ones, where it is predicted to be cheaper, are split into
    the strongly connected components of the species graph and propagated through a
    block-triangular exponential with exact diagonal blocks (:mod:`kinetics.engine.blocks`).
    Either way every entry above 1e-290 is accurate entry by entry, and
    :func:`propagate_certified` returns the bound.

    References
    ----------
    J. Xue, Q. Ye, "Computing exponentials of essentially non-negative matrices
    entrywise to high relative accuracy", Math. Comp. 82, 1577-1596 (2013).
    M. Shao, W. Gao, J. Xue, SIAM J. Matrix Anal. Appl. 35, 317-338 (2014).
    T. J. Dekker, Numer. Math. 18, 224-242 (1971).
    T. Ogita, S. M. Rump, S. Oishi, SIAM J. Sci. Comput. 26, 1955-1988 (2005).
    """
    return propagate_certified(
        K, c0, times, feed, precision=precision, K_low=K_low, feed_low=feed_low
    ).concentrations


@checks.guard_growth
def propagate_batch(
    K,
    c0,
    times,
    feed=None,
    *,
    precision: Precision = "auto",
    return_bound: bool = False,
    K_low=None,
    feed_low=None,
):
    r"""Concentrations for a stack of parameter sets on one time grid.

    .. math::

        c^{(i)}(t) = e^{tK^{(i)}} c_0^{(i)}
                   + \int_0^t e^{sK^{(i)}}\,\mathrm{d}s\, f^{(i)}

    Parameters
    ----------
    K : array_like, shape (b, n, n)
        Stack of dense rate matrices [1/s].
    c0 : array_like, shape (b, n) or (n,)
        Initial concentrations [conc], >= 0.
    times : array_like, shape (p,)
        Times [s], finite, >= 0, nondecreasing.
    feed : array_like, shape (b, n) or (n,), optional
        Zero-order feeds [conc/s], >= 0.
    precision : {"auto", "double", "double-double"}
        As in :func:`propagate`; for large sweeps ``"double"`` is several
        times faster (error bound then a few 1e-13 or worse on stiff sets).
    return_bound : bool
        Also return the componentwise bounds, shape (b, p) (as in
        :func:`propagate_certified`).
    K_low, feed_low : array_like, optional
        Low-order parts of double-double inputs, shapes as ``K`` and ``feed``.

    Returns
    -------
    ndarray, shape (b, p, n)
        Concentrations, all >= 0.

    Notes
    -----
    Members are grouped by their scaling plan and each group is evaluated with
    stacked products; every operation acts on each member independently, so
    member ``i`` equals ``propagate(K[i], c0[i], times, feed[i])`` bit for bit
    (tested) when ``n <= DENSE_MAX``.

    References
    ----------
    J. Xue, Q. Ye, Math. Comp. 82, 1577-1596 (2013).
    """
    checks.precision(precision)
    try:
        K = np.array(K, dtype=float)
    except (TypeError, ValueError) as exc:
        raise RateMatrixError("the rate matrix K is not a numeric array", checks.K_HINT) from exc
    if K.ndim != 3 or K.shape[1] != K.shape[2]:
        raise RateMatrixError(
            f"a batch of rate matrices must have shape (b, n, n), got {K.shape}", checks.K_HINT
        )
    b, n, _ = K.shape
    checks.offdiagonal_nonnegative(K)
    c0 = checks.vector(c0, n, "c0", checks.START_HINT, (b,))
    times = checks.times(times)
    f = None if feed is None else checks.vector(feed, n, "feed", checks.FEED_HINT, (b,))
    Kl = checks.low_parts(K_low, (b, n, n), "K_low", RateMatrixError)
    fl = None if f is None else checks.low_parts(feed_low, (b, n), "feed_low", ConcentrationError)
    A = np.ascontiguousarray(augment(K, f))
    Al = np.ascontiguousarray(augment(Kl, fl))
    x0 = c0 if f is None else np.concatenate([c0, np.ones((b, 1))], axis=1)
    if b == 0:
        out = np.zeros((0, times.size, n))
        return (out, np.zeros((0, times.size))) if return_bound else out
    X, bound, _ = propagate_stack(A, Al, x0, times, precision, n)
    conc = X if f is None else X[:, :, :n].copy()
    conc[:, times == 0.0] = c0[:, None, :]
    return (conc, bound) if return_bound else conc
