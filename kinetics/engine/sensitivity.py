r"""Derivatives of the concentrations with respect to parameters: the Fréchet derivative.

For :math:`K(\theta)` the sensitivity :math:`s = \partial c/\partial\theta` obeys
:math:`s' = K s + (\partial K/\partial\theta) c` with :math:`s(0) = \partial c_0/\partial\theta`:
it is the Fréchet derivative of the matrix exponential, and the block-triangular
exponential of Van Loan (1978) gives it exactly, with no finite differences.  Two
routes, one home:

* :func:`sensitivities`, entrywise and certified piece by piece: the direction is split
  into its nonnegative parts and a nonnegative system of size :math:`3n` goes through
  the entrywise engine of :mod:`kinetics.engine.propagate`;
* :func:`block_sensitivities`, every direction at once in one block matrix and a
  scaling-and-squaring exponential of a matrix with entries of both signs: the fast
  route of the fit's Jacobian.

References
----------
C. Van Loan, "Computing integrals involving the matrix exponential", IEEE Trans.
Automat. Control 23, 395-404 (1978). doi:10.1109/TAC.1978.1101743
A. H. Al-Mohy, N. J. Higham, "Computing the Fréchet derivative of the matrix
exponential, with an application to condition number estimation", SIAM J. Matrix
Anal. Appl. 30, 1639-1657 (2009). doi:10.1137/080716426
C. Moler, C. Van Loan, "Nineteen dubious ways to compute the exponential of a matrix,
twenty-five years later", SIAM Review 45, 3-49 (2003). doi:10.1137/S00361445024180
"""

from __future__ import annotations

import numpy as np

from kinetics.engine import checks
from kinetics.engine.propagate import propagate_batch
from kinetics.errors import ConcentrationError, RateMatrixError

__all__ = ["block_sensitivities", "point_sensitivities", "sensitivities"]

#: Most values of the stack of block exponentials :func:`point_sensitivities` forms at once.
_STACK_VALUES = 4_000_000


@checks.guard_growth
def sensitivities(
    K,
    c0,
    times,
    directions,
    feed=None,
    *,
    precision: str = "auto",
    K_low=None,
    feed_low=None,
) -> np.ndarray:
    r"""Directional derivatives :math:`\partial c(t)/\partial\theta` along ``dK``.

    For :math:`K(\theta) = K + \theta E` the sensitivity
    :math:`s = \partial c/\partial\theta` obeys :math:`s' = K s + E c`,
    :math:`s(0) = 0`, i.e. it is the Frechet derivative of the exponential,

    .. math::

        s(t) = L(tK, tE)\, c_0 + \dots, \qquad
        \exp\begin{bmatrix} tK & tE \\ 0 & tK \end{bmatrix}
        = \begin{bmatrix} e^{tK} & L(tK, tE) \\ 0 & e^{tK} \end{bmatrix}.

    ``E`` has both signs (a rate constant appears with ``-1`` on the diagonal),
    so it is split as :math:`E = E^+ - E^-` with :math:`E^\pm \ge 0` and the
    nonnegative system of size :math:`3n`

    .. math::

        \frac{d}{dt}\begin{bmatrix} s^+ \\ s^- \\ c \end{bmatrix} =
        \begin{bmatrix} K & 0 & E^+ \\ 0 & K & E^- \\ 0 & 0 & K \end{bmatrix}
        \begin{bmatrix} s^+ \\ s^- \\ c \end{bmatrix} +
        \begin{bmatrix} 0 \\ 0 \\ f \end{bmatrix}

    is propagated with the entrywise engine; :math:`s = s^+ - s^-`.

    Parameters
    ----------
    K : array_like, shape (n, n)
        Rate matrix [1/s].
    c0 : array_like, shape (n,)
        Initial concentrations [conc].
    times : array_like, shape (p,)
        Times [s].
    directions : array_like, shape (d, n, n)
        Direction matrices :math:`E = \partial K/\partial\theta` [1/s per unit of
        θ], e.g. the derivative of K with respect to one rate constant.
    feed : array_like, shape (n,), optional
        Zero-order feed [conc/s].
    precision : {"auto", "double", "double-double"}
        As in :func:`kinetics.propagate.propagate`.
    K_low, feed_low : array_like, optional
        Low-order parts of double-double inputs (see
        :func:`kinetics.propagate.propagate_certified`).

    Returns
    -------
    ndarray, shape (d, p, n)
        :math:`\partial c/\partial\theta` [conc per unit of θ].

    Notes
    -----
    :math:`s^+` and :math:`s^-` are each accurate entry by entry; their
    difference carries an absolute error of about the rounding unit times
    :math:`s^+ + s^-`.  Dense route (the 3n system must stay below a few
    hundred species).

    References
    ----------
    A. H. Al-Mohy, N. J. Higham, "Computing the Frechet derivative of the matrix
    exponential, with an application to condition number estimation", SIAM J.
    Matrix Anal. Appl. 30, 1639-1657 (2009) (block form; scipy's
    ``expm_frechet``, used as a cross-check).
    C. Van Loan, "Computing integrals involving the matrix exponential", IEEE
    Trans. Automat. Control 23, 395-404 (1978).
    """
    K = checks.rate_matrix(K, allow_sparse=False)
    n = K.shape[0]
    c0 = checks.vector(c0, n, "c0", checks.START_HINT)
    times = checks.times(times)
    f = None if feed is None else checks.vector(feed, n, "feed", checks.FEED_HINT)
    try:
        E = np.array(directions, dtype=float)
    except (TypeError, ValueError) as exc:
        raise RateMatrixError("directions are not numeric") from exc
    if E.ndim == 2:
        E = E[None]
    if E.ndim != 3 or E.shape[1:] != (n, n):
        raise RateMatrixError(f"directions must have shape (d, {n}, {n}), got {E.shape}")
    if not np.all(np.isfinite(E)):
        raise RateMatrixError("directions have a non-finite entry")
    d = E.shape[0]
    if d == 0:
        return np.zeros((0, times.size, n))
    Ep = np.maximum(E, 0.0)
    Em = np.maximum(-E, 0.0)
    Kl = checks.low_parts(K_low, (n, n), "K_low", RateMatrixError)
    big = np.zeros((d, 3 * n, 3 * n))
    big_low = np.zeros((d, 3 * n, 3 * n))
    for i in range(3):
        big[:, i * n : (i + 1) * n, i * n : (i + 1) * n] = K
        big_low[:, i * n : (i + 1) * n, i * n : (i + 1) * n] = Kl
    big[:, :n, 2 * n :] = Ep
    big[:, n : 2 * n, 2 * n :] = Em
    x0 = np.zeros((d, 3 * n))
    x0[:, 2 * n :] = c0
    fb = fb_low = None
    if f is not None:
        fb = np.zeros((d, 3 * n))
        fb[:, 2 * n :] = f
        fb_low = np.zeros((d, 3 * n))
        fb_low[:, 2 * n :] = checks.low_parts(feed_low, (n,), "feed_low", ConcentrationError)
    X = propagate_batch(big, x0, times, fb, precision=precision, K_low=big_low, feed_low=fb_low)
    return X[:, :, :n] - X[:, :, n : 2 * n]


def _expm_signed(A: np.ndarray) -> np.ndarray:
    r"""Exp of a stack of small dense matrices: scaling, Taylor degree 16, squaring.

    Scaled to a 1-norm of at most 1/2, the truncation error is below
    :math:`0.5^{17}/17! \approx 2\cdot10^{-20}` (Moler & Van Loan 2003, method 3).
    """
    N = A.shape[1]
    nu = np.abs(A).sum(axis=1).max(axis=1)
    with np.errstate(divide="ignore"):
        s = np.ceil(np.log2(np.maximum(nu, 1e-300) / 0.5))
    s = np.maximum(s, 0).astype(int)
    Y = A / np.ldexp(1.0, s)[:, None, None]
    eye = np.eye(N)
    X = eye + Y / 16.0
    for k in range(15, 0, -1):  # Horner form of sum_k Y^k / k!
        X = eye + (Y @ X) / k
    for r in range(int(s.max(initial=0))):
        mask = s > r
        if mask.all():
            X = X @ X
        else:
            X[mask] = X[mask] @ X[mask]
    return X


def _group_steps(steps: np.ndarray, rtol: float = 1e-13) -> tuple[np.ndarray, np.ndarray]:
    """Distinct time steps, merging those equal up to a few units of rounding.

    A grid such as ``numpy.linspace`` has steps that differ in their last bits;
    one exponential then serves them all (the time error is below ``rtol`` of a
    step).
    """
    order = np.argsort(steps, kind="stable")
    sorted_steps = steps[order]
    new_group = np.ones(steps.size, dtype=bool)
    if steps.size > 1:
        new_group[1:] = np.diff(sorted_steps) > rtol * np.abs(sorted_steps[1:])
    group = np.cumsum(new_group) - 1
    starts = np.flatnonzero(new_group)
    which = np.empty(steps.size, dtype=int)
    which[order] = group
    return sorted_steps[starts], which


def block_sensitivities(
    K: np.ndarray,
    c0: np.ndarray,
    times: np.ndarray,
    directions: np.ndarray | None = None,
    feed: np.ndarray | None = None,
    start_vectors: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    r"""Concentrations and their exact derivatives on a time grid.

    .. math::

        \frac{d}{dt}\begin{bmatrix} c \\ s_1 \\ \vdots \\ s_q \end{bmatrix} =
        \begin{bmatrix} K & & & \\ E_1 & K & & \\ \vdots & & \ddots & \\
        E_q & & & K \end{bmatrix}
        \begin{bmatrix} c \\ s_1 \\ \vdots \\ s_q \end{bmatrix}
        + \begin{bmatrix} f \\ 0 \\ \vdots \\ 0 \end{bmatrix}

    propagated interval by interval with the exponential of the block matrix
    (Van Loan 1978), which gives :math:`s_j(t) = \partial c(t)/\partial\theta_j`
    for :math:`\partial K/\partial\theta_j = E_j` exactly (the Fréchet derivative
    of the matrix exponential, no finite differences).

    Parameters
    ----------
    K : numpy.ndarray, shape (n, n)
        Rate matrix [1/s].
    c0 : numpy.ndarray, shape (n,)
        Start concentrations [conc].
    times : numpy.ndarray, shape (m,)
        Times [s], >= 0, nondecreasing.
    directions : numpy.ndarray, shape (q, n, n), optional
        :math:`E_j = \partial K/\partial\theta_j` [1/s per unit of θ].
    feed : numpy.ndarray, shape (n,), optional
        Zero-order feed [conc/s].
    start_vectors : numpy.ndarray, shape (r, n), optional
        Derivatives of the start vector :math:`\partial c_0/\partial\phi_i` for
        parameters that enter only the start values [conc per unit of φ].

    Returns
    -------
    c : numpy.ndarray, shape (m, n)
        Concentrations [conc].
    S : numpy.ndarray, shape (q + r, m, n)
        Derivatives: first along each direction, then along each start vector.

    Notes
    -----
    Accuracy is that of a scaling-and-squaring exponential of a matrix with entries
    of both signs (about 1e-13 relative to the largest entry), ample for a Jacobian
    and 6-10 times faster than :func:`sensitivities` on the small schemes a fit
    solves many times; the concentrations a fit reports are recomputed with the
    entrywise engine (:func:`kinetics.propagate.propagate`).

    References
    ----------
    C. Van Loan, IEEE Trans. Automat. Control 23, 395-404 (1978).
    C. Moler, C. Van Loan, "Nineteen dubious ways to compute the exponential of a
    matrix, twenty-five years later", SIAM Review 45, 3-49 (2003).
    """
    K = np.asarray(K, dtype=float)
    n = K.shape[0]
    E = np.zeros((0, n, n)) if directions is None else np.asarray(directions, dtype=float)
    q = E.shape[0]
    V = np.zeros((0, n)) if start_vectors is None else np.asarray(start_vectors, dtype=float)
    r = V.shape[0]
    has_feed = feed is not None and np.any(np.asarray(feed) != 0)
    N = n * (q + 1) + (1 if has_feed else 0)
    B = np.zeros((N, N))
    for j in range(q + 1):
        B[j * n : (j + 1) * n, j * n : (j + 1) * n] = K
    for j in range(q):
        B[(j + 1) * n : (j + 2) * n, :n] = E[j]  # s_j' = K s_j + E_j c
    X = np.zeros((N, 1 + r))
    X[:n, 0] = c0
    if has_feed:
        B[:n, -1] = feed
        X[-1, 0] = 1.0
    for i in range(r):
        X[:n, 1 + i] = V[i]
    times = np.asarray(times, dtype=float)
    steps = np.diff(np.concatenate([[0.0], times]))
    unique, which = _group_steps(steps)
    positive = unique > 0
    F = np.empty((unique.size, N, N))
    if np.any(positive):
        with np.errstate(over="ignore", invalid="ignore"):
            F[positive] = _expm_signed(unique[positive, None, None] * B[None])
    out = np.empty((times.size, N, 1 + r))
    for i in range(times.size):
        if steps[i] > 0:
            X = F[which[i]] @ X
        out[i] = X
    c = out[:, :n, 0]
    S = np.empty((q + r, times.size, n))
    for j in range(q):
        S[j] = out[:, (j + 1) * n : (j + 2) * n, 0]
    for i in range(r):
        S[q + i] = out[:, :n, 1 + i]
    return c, S


def point_sensitivities(
    K: np.ndarray,
    c0: np.ndarray,
    times,
    directions: np.ndarray | None = None,
    feed: np.ndarray | None = None,
    start_vectors: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    r"""Concentrations and their exact derivatives at a few scattered times, each from 0.

    For every direction :math:`E_j = \partial K/\partial\theta_j` and every time
    :math:`t` one block exponential of size :math:`2n` (:math:`2n + 1` with a feed),

    .. math::

        \exp\left(t\begin{bmatrix} K & 0 & f \\ E_j & K & 0 \\ 0 & 0 & 0
        \end{bmatrix}\right)
        \begin{bmatrix} c_0 \\ 0 \\ 1 \end{bmatrix}
        = \begin{bmatrix} c(t) \\ \partial c(t)/\partial\theta_j \\ 1 \end{bmatrix},

    (Van Loan 1978: the Fréchet derivative of the exponential, no finite differences),
    and :math:`e^{tK} v_i` for each start vector.  Unlike :func:`block_sensitivities`,
    which steps along a grid with one exponential of size :math:`n(q+1)`, every time is
    reached from 0 and every direction has its own small block: the cheap route for the
    handful of event times of a summary (half-lives, maxima).

    Parameters
    ----------
    K : numpy.ndarray, shape (n, n)
        Rate matrix [1/s].
    c0 : numpy.ndarray, shape (n,)
        Start concentrations [conc].
    times : array_like, shape (m,)
        Times [s], >= 0, in any order.
    directions : numpy.ndarray, shape (q, n, n), optional
        :math:`E_j` [1/s per unit of θ].
    feed : numpy.ndarray, shape (n,), optional
        Zero-order feed [conc/s].
    start_vectors : numpy.ndarray, shape (r, n), optional
        :math:`\partial c_0/\partial\phi_i` [conc per unit of φ].

    Returns
    -------
    c : numpy.ndarray, shape (m, n)
    S : numpy.ndarray, shape (q + r, m, n)
        Along each direction, then along each start vector.

    Notes
    -----
    The accuracy of a scaling-and-squaring exponential of a matrix with entries of both
    signs: about 1e-13 relative to the largest entry of the block (see
    :func:`block_sensitivities`).

    Examples
    --------
    :math:`c = e^{-kt}`: :math:`\partial c/\partial k = -t e^{-kt}` (hand derivative):

    >>> c, S = point_sensitivities(np.array([[-0.5]]), np.array([1.0]), [2.0],
    ...                            np.array([[[-1.0]]]))
    >>> round(float(S[0, 0, 0]), 12) == round(-2 * float(np.exp(-1.0)), 12)
    True
    """
    K = np.asarray(K, dtype=float)
    n = K.shape[0]
    times = np.asarray(times, dtype=float).reshape(-1)
    E = np.zeros((0, n, n)) if directions is None else np.asarray(directions, dtype=float)
    V = np.zeros((0, n)) if start_vectors is None else np.asarray(start_vectors, dtype=float)
    has_feed = feed is not None and np.any(np.asarray(feed) != 0)
    q = max(E.shape[0], 1)  # without a direction, one block for c alone
    N = 2 * n + (1 if has_feed else 0)
    B = np.zeros((q, N, N))
    B[:, :n, :n] = K
    B[:, n : 2 * n, n : 2 * n] = K
    # each direction scaled to the size of K (the derivative is linear in it): a direction
    # far larger than K would set the number of squarings and cost digits of c itself
    scale = np.ones(E.shape[0])
    if E.shape[0]:
        size = np.abs(E).sum(axis=1).max(axis=1)
        scale = np.where(size > 0, np.abs(K).sum(axis=0).max() / np.where(size > 0, size, 1), 1)
        scale = np.where(scale > 0, scale, 1.0)
        B[:, n : 2 * n, :n] = E * scale[:, None, None]
    if has_feed:
        B[:, :n, -1] = feed
    x0 = np.zeros(N)
    x0[:n] = c0
    if has_feed:
        x0[-1] = 1.0
    m = times.size
    c = np.empty((m, n))
    S = np.empty((E.shape[0] + V.shape[0], m, n))
    per_block = max(1, _STACK_VALUES // (N * N * q))
    for lo in range(0, m, per_block):
        t = times[lo : lo + per_block]
        with np.errstate(over="ignore", invalid="ignore"):
            F = _expm_signed((t[:, None, None, None] * B[None]).reshape(-1, N, N))
        F = F.reshape(t.size, q, N, N)
        X = F @ x0  # (t, q, N)
        c[lo : lo + t.size] = X[:, 0, :n]
        if E.shape[0]:
            S[: E.shape[0], lo : lo + t.size] = (
                np.swapaxes(X[:, :, n : 2 * n], 0, 1) / scale[:, None, None]
            )
        if V.shape[0]:
            S[E.shape[0] :, lo : lo + t.size] = np.einsum("tij,rj->rti", F[:, 0, :n, :n], V)
    return c, S
