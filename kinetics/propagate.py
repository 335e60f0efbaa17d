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

import functools
import math
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Literal

import numpy as np
import scipy.sparse

from kinetics import _doubledouble as dd
from kinetics.errors import GrowthError, UsageError

__all__ = [
    "DENSE_DOUBLE_MAX",
    "DENSE_MAX",
    "Propagation",
    "expm_nonnegative",
    "expm_nonnegative_certified",
    "propagate",
    "propagate_batch",
    "propagate_certified",
    "sensitivities",
]

Precision = Literal["auto", "double", "double-double"]

#: Largest scheme for which ``precision="auto"`` may choose double-double (where the
#: plain-double bound is not small enough): with the compiled kernels this costs about
#: 8 ms for 100 species and 60 ms for 200 on a 201-point grid.
DENSE_MAX = 200
#: Largest scheme handled as one dense matrix at all (faster there than the block route,
#: and it keeps trace entries); larger ones go block by block.
DENSE_DOUBLE_MAX = 200

_U = 2.0**-53  # unit roundoff of IEEE double
#: Entries below this are outside the relative-accuracy guarantee (underflow).
TINY = 1e-290
#: ``precision="auto"`` picks plain double when its bound is at most this.
AUTO_RTOL = 2.0**-46


# --------------------------------------------------------------------------
# input checking
# --------------------------------------------------------------------------


def _rate_matrix(K, allow_sparse: bool = True):
    if scipy.sparse.issparse(K):
        if not allow_sparse:
            K = K.toarray()
        else:
            K = scipy.sparse.csr_array(K, dtype=float)
            if K.ndim != 2 or K.shape[0] != K.shape[1]:
                raise UsageError(f"rate matrix must be square, got shape {K.shape}")
            if not np.all(np.isfinite(K.data)):
                raise UsageError("rate matrix has a non-finite entry")
            coo = K.tocoo()
            off = coo.row != coo.col
            if np.any(coo.data[off] < 0):
                raise UsageError(
                    "rate matrix has a negative off-diagonal entry",
                    "off-diagonal entries are rates of formation and must be >= 0",
                )
            return K
    try:
        K = np.array(K, dtype=float)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"rate matrix is not numeric: {exc}") from None
    if K.ndim != 2 or K.shape[0] != K.shape[1]:
        raise UsageError(f"rate matrix must be square, got shape {K.shape}")
    _check_offdiag(K[None])
    return K


def _check_offdiag(K):
    from kinetics import _kernels

    if not np.isfinite(K).all():
        raise UsageError("rate matrix has a non-finite entry")
    if _kernels.negative_offdiagonal(np.ascontiguousarray(K)):
        raise UsageError(
            "rate matrix has a negative off-diagonal entry",
            "off-diagonal entries are rates of formation and must be >= 0",
        )


def _vector(v, n: int, what: str, lead: tuple = ()) -> np.ndarray:
    try:
        v = np.array(v, dtype=float)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"{what} is not numeric: {exc}") from None
    if v.shape == (n,) and lead:
        v = np.broadcast_to(v, (*lead, n)).copy()
    if v.shape != (*lead, n):
        raise UsageError(f"{what} must have shape {(*lead, n)}, got {v.shape}")
    if not np.isfinite(v).all():
        raise UsageError(f"{what} has a non-finite entry")
    if (v < 0).any():
        raise UsageError(
            f"{what} has a negative entry",
            "concentrations and feed rates must be >= 0",
        )
    return v


def _times(times) -> np.ndarray:
    try:
        t = np.array(times, dtype=float)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"times are not numeric: {exc}") from None
    if t.ndim == 0:
        t = t.reshape(1)
    if t.ndim != 1:
        raise UsageError(f"times must be a 1-D list, got shape {t.shape}")
    if not np.isfinite(t).all():
        raise UsageError("times must be finite")
    if (t < 0).any():
        raise UsageError("times must be >= 0", "time 0 is the start of the reaction")
    if (t[1:] < t[:-1]).any():
        raise UsageError("times must be in nondecreasing order", "sort the time list")
    return t


def _check_precision(precision) -> None:
    if precision not in ("auto", "double", "double-double"):
        raise UsageError(
            f"unknown precision {precision!r}", "use 'auto', 'double' or 'double-double'"
        )


def _augment(K, feed):
    """Rate matrix of the fed system, Eq. (1) of the module docstring."""
    if feed is None:
        return K
    *lead, n, _ = K.shape
    A = np.zeros((*lead, n + 1, n + 1))
    A[..., :n, :n] = K
    A[..., :n, n] = feed
    return A


# --------------------------------------------------------------------------
# dense engine on stacks
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class _Plan:
    route: str  # "double" or "double-double"
    j: int  # number of squarings
    ps: int  # Paterson-Stockmeyer block size s
    pr: int  # number of Horner steps r; Taylor degree m = s (r + 1) - 1

    @property
    def degree(self) -> int:
        return self.ps * (self.pr + 1) - 1


@lru_cache(maxsize=4096)
def _ps_blocks(m: int) -> tuple[int, int]:
    """Cheapest Paterson-Stockmeyer split (s, r) with s (r + 1) - 1 >= m."""
    best = None
    for s in range(1, m + 2):
        r = max(0, math.ceil((m + 1) / s) - 1)
        cost = (s - 1) + r
        if best is None or cost < best[0]:
            best = (cost, s, r)
    return best[1], best[2]


@lru_cache(maxsize=4096)
def _plan(
    beta: float, n: int, route: str, target: float, ymax: float = 16.0, square_cost: float = 1.0
) -> _Plan:
    r"""Choose squarings j and Taylor degree m for ``||tB||_1 <= beta``.

    The scalar remainder estimate (Shao, Gao & Xue 2014, sec. 3) is
    :math:`2^j \, y^{m+1} e^{y}/(m+1)!` with :math:`y = \beta/2^j`; the cost is the
    number of matrix products, :math:`(s-1) + r + j`.
    """
    if beta <= 0.0:
        return _Plan(route, 0, 2, 0)
    jmin = max(0, math.ceil(math.log2(beta) - math.log2(ymax)))
    best = None
    log_target = math.log(target)
    for j in range(jmin, jmin + 12):
        y = beta / 2.0**j
        if y < 1e-300 and best is not None:  # tiny norm: no squaring can help
            break
        base = j * math.log(2.0) + y
        # the pattern of T_m(Y)^(2^j) holds every path of length <= m 2^j
        m = max(1, math.ceil((n - 1) / 2.0**j))
        while base + (m + 1) * math.log(y) - math.lgamma(m + 2) > log_target and m < 1000:
            m += 1
        # entrywise, an entry reached by a path of p steps sees the scalar tail
        # shifted by p (interleavings of the path with the diagonal); the
        # squarings damp this, so add the longest path only for few squarings
        m += (n - 1) if j <= 3 else (n - 1) // 2 if j <= 6 else 0
        # an entry whose shortest path has p = n - 1 steps: relative truncation
        # error about C(p, m + 1) / 2^(j m) (Taylor coefficients of T_m^N)
        p_ = n - 1
        while m + 1 <= p_ and (
            math.lgamma(p_ + 1) - math.lgamma(m + 2) - math.lgamma(p_ - m) - m * j * math.log(2.0)
            > log_target
        ):
            m += 1
        s, r = _ps_blocks(max(m, 2))
        cost = (s - 1) + r + square_cost * j
        if best is None or cost < best[0]:
            best = (cost, _Plan(route, j, s, r))
    return best[1]


def _rounding_bound(beta: float, n: int, plan: _Plan, unit: float) -> float:
    r"""Componentwise relative rounding-error bound of one exponential.

    * representation of :math:`tB/2^j` (the shifted diagonal is rounded once):
      :math:`\epsilon_{in} \approx 2u(\beta + n)`, first order in the entrywise
      relative perturbation (Xue & Ye 2008);
    * Taylor sum of nonnegative terms: :math:`\epsilon_0 = (m + n + 4)\gamma`;
    * each squaring :math:`\epsilon_{i+1} = 2\epsilon_i + \epsilon_i^2 +
      \gamma_n (1 + \epsilon_i)^2` (Xue & Ye 2013, Theorem 3.2), with
      :math:`\gamma_n = n u / (1 - n u)` for a nonnegative product in double and
      :math:`(n^2 + n) u_{dd}` in double-double.
    """
    # representation error of t B / 2^j: a perturbation of the data, not amplified
    return _arithmetic_bound(n, plan, unit) + 2 * unit * (beta + n)


@lru_cache(maxsize=4096)
def _arithmetic_bound(n: int, plan: _Plan, unit: float) -> float:
    """The part of :func:`_rounding_bound` that depends on the plan only."""
    m = plan.degree
    if unit == _U:
        gamma = n * unit / (1 - n * unit)
    else:
        gamma = (n * n + n + 4) * unit
    # Taylor sum (term k costs k products) and the factor exp(-sigma t / 2^j)
    eps = (m + 4) * gamma + (m + 8) * unit
    for _ in range(plan.j):
        eps = 2 * eps + eps * eps + gamma * (1 + eps) ** 2
    return eps


def _expm_group(A, t, sigma, plan: _Plan):
    r"""Exponentials ``exp(t_i A_i)`` for members sharing one plan.

    Returns ``(Fh, Fl, trunc)`` (``Fl`` is zero on the double route).  The Taylor
    sum, the factor :math:`e^{-\sigma t/2^j}` and the squarings run in the compiled
    kernels of :mod:`kinetics._kernels`.

    ``trunc`` is the a posteriori componentwise estimate of the Taylor truncation
    error: with :math:`G = Y^{m+1}/(m+1)!` the remainder satisfies
    :math:`0 \le e^{Y} - T_m(Y) \le G e^{Y}` entrywise, hence, to first order,
    :math:`e^{2^j Y} - T_m(Y)^{2^j} \lesssim 2^j G\, T_m(Y)^{2^j}` (in the spirit of
    Shao, Gao & Xue 2014, sec. 4); the largest ratio of that estimate to the
    computed entry, per member.
    """
    from kinetics import _kernels

    use_dd = plan.route == "double-double"
    ih, il = dd.inverse_factorials(plan.degree)
    if not use_dd:
        # zero low parts, read-only like the cached ones (one compiled signature for both)
        il = np.zeros_like(ih)
        il.flags.writeable = False
    A = np.ascontiguousarray(A, dtype=float)
    Fh = np.empty_like(A)
    Fl = np.empty_like(A)
    n = A.shape[-1]
    Y = _kernels.scratch("scaled", A.shape)  # internal to this function
    mats = _kernels.scratch("mats", (6, n, n))  # work matrices of both kernels below
    _kernels.exponentials(
        A, np.ascontiguousarray(t, dtype=float), np.ascontiguousarray(sigma, dtype=float),
        plan.j, plan.ps, plan.pr, ih, il, np.bool_(use_dd), Fh, Fl, Y,
        _kernels.scratch("powers", (2, plan.ps + 1, n, n)), mats,
    )  # fmt: skip
    m = plan.degree
    ratio = _kernels.truncation_ratios(Y, Fh, m + 1, math.exp(-math.lgamma(m + 2)), TINY, mats)
    return Fh, Fl, 2.0 * 2.0**plan.j * ratio


def _distinct(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct values of ``x`` and the index of each entry among them (no sort for one)."""
    if x.size == 1:  # a single solve
        return x, np.zeros(1, dtype=np.intp)
    values, inverse = np.unique(x, return_inverse=True)
    return values, inverse.reshape(-1)


def _expm_stack(A, t, precision: str, target: float | None = None):
    """``exp(t_i A_i)`` for a stack, with per-member route and error bound.

    Returns ``(Fh, Fl, bound, is_dd)``; ``bound[i]`` is the componentwise
    relative bound of ``Fh + Fl`` (before any rounding to double), ``is_dd[i]``
    tells whether member ``i`` took the double-double route.
    """
    from kinetics import _kernels

    A = np.ascontiguousarray(A, dtype=float)
    b, n, _ = A.shape
    t = np.full(b, t, dtype=float) if np.ndim(t) == 0 else np.array(t, dtype=float)
    sigma = np.empty(b)
    beta = np.empty(b)
    _kernels.shift_and_norm(A, t, sigma, beta)
    Fh = np.empty_like(A)
    Fl = np.empty_like(A)
    bound = np.empty(b)
    is_dd = np.zeros(b, dtype=bool)
    # plans are chosen for beta rounded up to a quarter power of two: a plan valid for a
    # larger norm is valid (conservative), and the members of a sweep share a few plans
    with np.errstate(divide="ignore"):
        bq = np.where(beta > 0, np.exp2(np.ceil(4.0 * np.log2(beta)) / 4.0), 0.0)
    bq = np.maximum(bq, beta)
    values, which = _distinct(bq)
    if precision == "auto":
        # plain double where its a priori bound is small enough, else double-double
        arith = np.array(
            [_arithmetic_bound(n, _plan(v, n, "double", _U / 2), _U) for v in values.tolist()]
        )
        route_dd = arith[which] + 2 * _U * (beta + n) > AUTO_RTOL
    else:
        route_dd = np.full(b, precision == "double-double")
    kinds, inverse = _distinct(2 * which + route_dd)
    members_of = [np.flatnonzero(inverse == u) for u in range(kinds.size)]
    groups: dict[tuple, np.ndarray] = {}
    plans: dict[tuple, _Plan] = {}
    for code, sel in zip(kinds.tolist(), members_of, strict=True):
        v, use_dd = divmod(code, 2)
        route = "double-double" if use_dd else "double"
        tgt = target if target is not None else (2.0**-64 if use_dd else _U / 2)
        p = _plan(float(values[v]), n, route, tgt)
        key = (p.route, p.j, p.ps, p.pr)
        groups[key] = np.concatenate([groups[key], sel]) if key in groups else sel
        plans[key] = p
    for key, members in groups.items():
        plan = plans[key]
        # one group holding the whole stack (the usual case) needs no gathering
        idx = slice(None) if members.size == b else np.sort(members)
        unit = _U if plan.route == "double" else dd.DD_UNIT
        tgt = _U / 2 if plan.route == "double" else 2.0**-64
        for _attempt in range(4):
            h, lo, trunc = _expm_group(A[idx], t[idx], sigma[idx], plan)
            if (trunc <= tgt).all() or plan.pr > 80:
                break
            plan = _Plan(plan.route, plan.j, plan.ps, plan.pr + 2)
        Fh[idx], Fl[idx] = h, lo
        is_dd[idx] = plan.route == "double-double"
        bound[idx] = _rounding_bound(beta[idx], n, plan, unit) + trunc
    return Fh, Fl, bound, is_dd


def _gamma_mv(n: int, route_dd: bool) -> float:
    return (n * n + n + 4) * dd.DD_UNIT if route_dd else n * _U / (1 - n * _U)


# --------------------------------------------------------------------------
# public dense exponentials
# --------------------------------------------------------------------------


def _guard_growth(func):
    """Run ``func`` with overflow silenced, then refuse non-finite results with a clear error.

    A result can only overflow when the scheme grows (a positive eigenvalue of K,
    e.g. ``A -> 2 A``) for long enough to exceed about 1e308.
    """

    @functools.wraps(func)
    def wrapper(*args, **kwargs):
        with np.errstate(over="ignore", invalid="ignore", under="ignore"):
            result = func(*args, **kwargs)
        parts = result if isinstance(result, tuple) else (result,)
        for part in parts:
            values = getattr(part, "concentrations", part)
            if isinstance(values, np.ndarray) and not np.all(np.isfinite(values)):
                raise GrowthError(
                    "the concentrations grow beyond the range of double precision (about 1e308)",
                    "the scheme makes more of a species than it consumes (e.g. A -> 2 A) or "
                    "feeds it for a very long time; shorten the time window or check the "
                    "stoichiometry",
                )
        return result

    return wrapper


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


@_guard_growth
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
    _check_precision(precision)
    A = _rate_matrix(A, allow_sparse=False)
    t = float(t)
    if not (math.isfinite(t) and t >= 0):
        raise UsageError("time must be finite and >= 0")
    n = A.shape[0]
    if t == 0.0 or n == 0:
        return np.eye(n), 0.0
    Fh, _, bound, _ = _expm_stack(A[None], np.array([t]), precision)
    return np.maximum(Fh[0], 0.0), float(bound[0] + _U)


# --------------------------------------------------------------------------
# time grids
# --------------------------------------------------------------------------


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
        triangular, plain double) or a combination.
    """

    times: np.ndarray
    concentrations: np.ndarray
    error_bound: np.ndarray
    precision: str = field(default="double-double")


def _uniform_step(t: np.ndarray) -> float | None:
    """Step ``dt`` if ``t[1:]`` is a uniform grid from ``t[0]`` (else None)."""
    if t.size < 3:
        return None
    from kinetics import _kernels

    dt = _kernels.uniform_step(np.ascontiguousarray(t, dtype=float), 4 * _U * float(t[-1]))
    return dt if dt > 0 else None


def _mv(Fh, Fl, vh, vl, is_dd):
    """Stacked nonnegative products ``F v``, double-double for members with ``is_dd``."""
    from kinetics import _kernels

    oh = np.empty(vh.shape)
    ol = np.empty(vh.shape)
    _kernels.apply(Fh, Fl, vh, vl, np.asarray(is_dd, dtype=bool), oh, ol)
    return oh, ol


def _gamma_stack(N: int, is_dd):
    return np.where(is_dd, _gamma_mv(N, True), _gamma_mv(N, False))


def _propagate_dense_stack(A, x0, times, precision: str):
    """Core grid propagation for a stack of (augmented) matrices.

    A: (b, N, N), x0: (b, N).  Returns (X (b, p, N), bound (b, p), route label).
    """
    from kinetics import _kernels

    b, N, _ = A.shape
    p = times.size
    X = np.empty((b, p, N))  # every row is written below (fresh pages are costly to zero)
    bound = np.zeros((b, p))
    if p == 0:
        return X, bound, precision
    # state as double-double column blocks (b, N, 1)
    vh = x0[:, :, None].copy()
    vl = np.zeros_like(vh)
    cur_bound = np.zeros(b)
    labels = set()

    def exp_of(h):
        Fh, Fl, eps, is_dd = _expm_stack(A, np.full(b, h), precision)
        if np.any(is_dd):
            labels.add("double-double")
        if not np.all(is_dd):
            labels.add("double")
        return Fh, Fl, eps, is_dd

    start = 0
    # leading zeros: exactly c0
    while start < p and times[start] == 0.0:
        X[:, start] = x0
        start += 1
    if start == p:
        return X, bound, precision
    # first nonzero time
    t_prev = 0.0
    dt = _uniform_step(times[start:]) if p - start >= 3 else None
    if dt is not None:
        t_first = times[start]
        # a grid dt, 2 dt, ... (the usual linspace from 0) needs one exponential
        skip = 1 if abs(t_first - dt) <= 4 * _U * times[-1] else 0
        if not skip:
            Fh, Fl, eps, is_dd = exp_of(t_first)
            vh, vl = _mv(Fh, Fl, vh, vl, is_dd)
            cur_bound = cur_bound + eps + _gamma_stack(N, is_dd)
        Fh, Fl, eps, is_dd = exp_of(dt)
        M = p - start - 1 + skip
        # states F^k v for k = 0..M by doubling: V <- [V, F^(2^i) V] (compiled)
        _kernels.grid_powers(
            Fh, Fl, vh[..., 0].copy(), vl[..., 0].copy(), M + 1, skip, np.asarray(is_dd), X, start
        )
        _kernels.grid_bounds(eps, _gamma_stack(N, is_dd), M + 1, skip, cur_bound, bound, start)
    else:
        cache: dict[float, tuple] = {}
        for k in range(start, p):
            h = times[k] - t_prev
            if h > 0:
                if h not in cache:
                    cache[h] = exp_of(h)
                Fh, Fl, eps, is_dd = cache[h]
                vh, vl = _mv(Fh, Fl, vh, vl, is_dd)
                cur_bound = cur_bound + eps + _gamma_stack(N, is_dd)
            np.maximum((vh + vl)[:, :, 0], 0.0, out=X[:, k])
            bound[:, k] = cur_bound
            t_prev = times[k]
    bound[:, start:] += _U
    label = "+".join(sorted(labels)) if labels else precision
    # the grid kernel and the interval loop above clip at zero as they write (a sum
    # hi + lo of nonnegative products can round to -0.0 or a tiny negative lo)
    return X, bound, label


@_guard_growth
def propagate_certified(K, c0, times, feed=None, *, precision: Precision = "auto") -> Propagation:
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
        Arithmetic of the dense engine (the block route for large schemes is
        plain double).

    Returns
    -------
    Propagation
        ``concentrations`` of shape (p, n) and ``error_bound`` of shape (p,).

    Notes
    -----
    A uniform grid is propagated with powers of :math:`e^{K\Delta t}`
    (:math:`F^{k}v` from :math:`F^{2^i}` by doubling); other grids interval by
    interval.  All factors are nonnegative, so relative errors add up instead of
    cancelling.  Time 0 returns ``c0`` exactly.

    References
    ----------
    J. Xue, Q. Ye, Math. Comp. 82, 1577-1596 (2013); M. Shao, W. Gao, J. Xue,
    SIAM J. Matrix Anal. Appl. 35, 317-338 (2014).
    """
    _check_precision(precision)
    K = _rate_matrix(K)
    n = K.shape[0]
    c0 = _vector(c0, n, "initial concentrations")
    times = _times(times)
    f = None if feed is None else _vector(feed, n, "feed")
    from kinetics._blocks import prefers_blocks, propagate_blocks

    # route by predicted cost (calibrated model in kinetics._blocks.route_costs)
    if prefers_blocks(K, times, precision):
        conc, bound = propagate_blocks(K, c0, times, f, floor=TINY)
        return Propagation(times, conc, bound, "blocks")
    if scipy.sparse.issparse(K):
        K = K.toarray()
    if n > DENSE_MAX and precision == "auto":
        precision = "double"  # double-double costs too much at this size
    A = _augment(K[None], None if f is None else f[None])
    x0 = c0 if f is None else np.append(c0, 1.0)
    X, bound, label = _propagate_dense_stack(A, x0[None], times, precision)
    conc = X[0, :, :n].copy()
    conc[times == 0.0] = c0
    return Propagation(times, conc, bound[0], label)


def propagate(K, c0, times, feed=None, *, precision: Precision = "auto") -> np.ndarray:
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
        See :func:`expm_nonnegative`.

    Returns
    -------
    ndarray, shape (p, n)
        Concentrations [conc], all >= 0; row k is for ``times[k]``.

    Raises
    ------
    kinetics.errors.UsageError
        Negative off-diagonal rates, negative or non-finite concentrations,
        feed or times, times out of order, wrong shapes.

    Notes
    -----
    Schemes with at most :data:`DENSE_MAX` species (with the feed) use the dense
    entrywise engine (see the module docstring): every entry above 1e-290 is
    accurate to a few units of rounding (the bound is in
    :func:`propagate_certified`).  Larger schemes are split into the
    strongly connected components of the species graph and propagated in
    topological order through a block-triangular, block-sparse matrix
    exponential in plain double precision (:mod:`kinetics._blocks`).

    References
    ----------
    J. Xue, Q. Ye, "Computing exponentials of essentially non-negative matrices
    entrywise to high relative accuracy", Math. Comp. 82, 1577-1596 (2013).
    M. Shao, W. Gao, J. Xue, SIAM J. Matrix Anal. Appl. 35, 317-338 (2014).
    T. J. Dekker, Numer. Math. 18, 224-242 (1971).
    T. Ogita, S. M. Rump, S. Oishi, SIAM J. Sci. Comput. 26, 1955-1988 (2005).
    """
    return propagate_certified(K, c0, times, feed, precision=precision).concentrations


@_guard_growth
def propagate_batch(
    K, c0, times, feed=None, *, precision: Precision = "auto", return_bound: bool = False
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
        Also return the componentwise bounds, shape (b, p).

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
    _check_precision(precision)
    try:
        K = np.array(K, dtype=float)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"rate matrices are not numeric: {exc}") from None
    if K.ndim != 3 or K.shape[1] != K.shape[2]:
        raise UsageError(f"a batch of rate matrices must have shape (b, n, n), got {K.shape}")
    b, n, _ = K.shape
    _check_offdiag(K)
    c0 = _vector(c0, n, "initial concentrations", (b,))
    times = _times(times)
    f = None if feed is None else _vector(feed, n, "feed", (b,))
    A = _augment(K, f)
    x0 = c0 if f is None else np.concatenate([c0, np.ones((b, 1))], axis=1)
    if b == 0:
        out = np.zeros((0, times.size, n))
        return (out, np.zeros((0, times.size))) if return_bound else out
    X, bound, _ = _propagate_dense_stack(A, x0, times, precision)
    conc = X if f is None else X[:, :, :n].copy()
    conc[:, times == 0.0] = c0[:, None, :]
    return (conc, bound) if return_bound else conc


# --------------------------------------------------------------------------
# sensitivities
# --------------------------------------------------------------------------


@_guard_growth
def sensitivities(
    K, c0, times, directions, feed=None, *, precision: Precision = "auto"
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
        As in :func:`propagate`.

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
    K = _rate_matrix(K, allow_sparse=False)
    n = K.shape[0]
    c0 = _vector(c0, n, "initial concentrations")
    times = _times(times)
    f = None if feed is None else _vector(feed, n, "feed")
    try:
        E = np.array(directions, dtype=float)
    except (TypeError, ValueError) as exc:
        raise UsageError(f"directions are not numeric: {exc}") from None
    if E.ndim == 2:
        E = E[None]
    if E.ndim != 3 or E.shape[1:] != (n, n):
        raise UsageError(f"directions must have shape (d, {n}, {n}), got {E.shape}")
    if not np.all(np.isfinite(E)):
        raise UsageError("directions have a non-finite entry")
    d = E.shape[0]
    if d == 0:
        return np.zeros((0, times.size, n))
    Ep = np.maximum(E, 0.0)
    Em = np.maximum(-E, 0.0)
    big = np.zeros((d, 3 * n, 3 * n))
    big[:, :n, :n] = K
    big[:, n : 2 * n, n : 2 * n] = K
    big[:, 2 * n :, 2 * n :] = K
    big[:, :n, 2 * n :] = Ep
    big[:, n : 2 * n, 2 * n :] = Em
    x0 = np.zeros((d, 3 * n))
    x0[:, 2 * n :] = c0
    fb = None
    if f is not None:
        fb = np.zeros((d, 3 * n))
        fb[:, 2 * n :] = f
    X = propagate_batch(big, x0, times, fb, precision=precision)
    return X[:, :, :n] - X[:, :, n : 2 * n]
