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
from functools import lru_cache
from typing import Literal

import numpy as np
import scipy.sparse

from kinetics import _doubledouble as dd
from kinetics import checks
from kinetics.errors import UsageError

__all__ = [
    "DENSE_MAX",
    "Propagation",
    "StretchPropagator",
    "expm_nonnegative",
    "expm_nonnegative_certified",
    "propagate",
    "propagate_batch",
    "propagate_certified",
]

Precision = Literal["auto", "double", "double-double"]  # checks.PRECISIONS

#: Largest scheme of a batch (:func:`propagate_batch`, sweeps) and of the dense routes
#: the summaries rely on; single solves choose between the dense engine and the block
#: route by predicted cost (:func:`kinetics._blocks.prefers_blocks`).
DENSE_MAX = 200

_U = 2.0**-53  # unit roundoff of IEEE double
#: Entries below this are outside the relative-accuracy guarantee (underflow).
TINY = 1e-290
#: ``precision="auto"`` picks plain double when its bound is at most this.
AUTO_RTOL = 2.0**-46


# --------------------------------------------------------------------------
# input checking
# --------------------------------------------------------------------------


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
    ymax: float = 16.0  # largest scaled norm beta / 2^j left to the Taylor sum

    @property
    def degree(self) -> int:
        return self.ps * (self.pr + 1) - 1


@lru_cache(maxsize=4096)
def _ps_blocks(m: int, density: float = 1.0) -> tuple[int, int, float]:
    """Cheapest Paterson-Stockmeyer split (s, r) with s (r + 1) - 1 >= m, and its cost.

    Cost in dense products: the powers :math:`Y^2 .. Y^s` are products with ``Y`` on the
    left (its zeros skipped, relative cost ``density``); each Horner step is a product
    with :math:`Y^s` on the left, sparse only for ``s = 1`` (plain Horner).
    """
    best = None
    for s in range(1, m + 2):
        r = max(0, math.ceil((m + 1) / s) - 1)
        cost = (s - 1) * density + r * (density if s == 1 else 1.0)
        if best is None or cost < best[0]:
            best = (cost, s, r)
    return best[1], best[2], best[0]


@lru_cache(maxsize=4096)
def _plan(
    beta: float,
    n: int,
    route: str,
    target: float,
    ymax: float = 16.0,
    square_cost: float = 1.0,
    reach: int | None = None,
    density: float = 1.0,
) -> _Plan:
    r"""Choose squarings j and Taylor degree m for ``||tB||_1 <= beta``.

    The scalar remainder estimate (Shao, Gao & Xue 2014, sec. 3) is
    :math:`2^j \, y^{m+1} e^{y}/(m+1)!` with :math:`y = \beta/2^j`; the cost is the
    number of dense matrix products (:func:`_ps_blocks`) plus ``j`` squarings.
    ``reach`` is the longest shortest path of the species graph (default ``n - 1``,
    a chain): an entry reached by a path of ``p`` steps needs the terms of degree
    ``p`` and more, so the degree grows with it.  The plan is a guess checked a
    posteriori (:func:`_expm_group`).
    """
    if beta <= 0.0:
        return _Plan(route, 0, 2, 0, ymax)
    p_ = n - 1 if reach is None else max(0, min(reach, n - 1))
    jmin = max(0, math.ceil(math.log2(beta) - math.log2(ymax)))
    best = None
    log_target = math.log(target)
    for j in range(jmin, jmin + 12):
        y = beta / 2.0**j
        if y < 1e-300 and best is not None:  # tiny norm: no squaring can help
            break
        base = j * math.log(2.0) + y
        # the pattern of T_m(Y)^(2^j) holds every path of length <= m 2^j
        m = max(1, math.ceil(p_ / 2.0**j))
        while base + (m + 1) * math.log(y) - math.lgamma(m + 2) > log_target and m < 1000:
            m += 1
        # entrywise, an entry reached by a path of p steps sees the scalar tail
        # shifted by p (interleavings of the path with the diagonal); the
        # squarings damp this, so add the longest path only for few squarings
        m += p_ if j <= 3 else p_ // 2 if j <= 6 else 0
        # an entry whose shortest path has p steps: relative truncation error about
        # C(p, m + 1) / 2^(j m) (Taylor coefficients of T_m^N)
        while m + 1 <= p_ and (
            math.lgamma(p_ + 1) - math.lgamma(m + 2) - math.lgamma(p_ - m) - m * j * math.log(2.0)
            > log_target
        ):
            m += 1
        if m > _DEGREE_MAX and j < jmin + 11:
            continue  # the a posteriori check forms Y^(m+1): keep its entries in range
        s, r, cost = _ps_blocks(max(m, 2), density)
        cost += square_cost * j
        if best is None or cost < best[0]:
            best = (cost, _Plan(route, j, s, r, ymax))
    return best[1]


def _gamma(n: int, route_dd: bool) -> float:
    """Relative error of one entry of a nonnegative product with inner dimension ``n``."""
    return (n * n + n + 4) * dd.DD_UNIT if route_dd else n * _U / (1 - n * _U)


#: relative perturbation of the entries of tB/2^j as formed (per route), and the
#: absolute error of the shifted diagonal relative to sigma (double-double route only:
#: on the double route that rounding is part of the first)
_INPUT_RELATIVE = {False: 2 * _U, True: 8 * dd.DD_UNIT}
_DIAGONAL_ABSOLUTE = {False: 0.0, True: 8 * dd.DD_UNIT}


@lru_cache(maxsize=4096)
def _arithmetic_bound(n: int, plan: _Plan) -> float:
    """Rounding bound of the Taylor sum, the shift factor and the squarings of one plan.

    The plan was chosen so that :math:`y = \\beta/2^j \\le` ``plan.ymax`` (:func:`_plan`),
    which bounds the error of the factor :math:`e^{-\\sigma t/2^j}` (its argument is at
    most :math:`y`) independently of the member.
    """
    from kinetics import _kernels

    route_dd = plan.route == "double-double"
    unit = dd.DD_UNIT if route_dd else _U
    gamma = _gamma(n, route_dd)
    m = plan.degree
    factor = (8 if route_dd else 4) * unit * (1 + plan.ymax)
    eps = (m + 4) * gamma + (m + 8) * unit + factor
    for _ in range(plan.j):
        eps = _kernels.squared_bound.py_func(eps, gamma)  # scalars: not compiled
    return float(eps)


def _rounding_bound(beta, n: int, plan: _Plan, unit: float | None = None):
    r"""Componentwise relative bound of one exponential, truncation excluded.

    Everything between the matrix :math:`A` (exact, as the pair ``A + A_low``) and the
    computed :math:`T_m(Y)^{2^j} e^{-\sigma t}` before the final rounding to double:

    * input: the entries of :math:`Y = tB/2^j` as formed carry a relative error
      :math:`\delta` (two roundings in double; a few units of :math:`2^{-104}` in
      double-double, where the diagonal :math:`\sigma - q_i` is formed exactly up to
      :math:`\eta\sigma`); first order in an entrywise relative perturbation of a
      nonnegative matrix (Xue & Ye 2008) the exponential moves by at most
      :math:`2\delta(\beta + n) + \eta\beta`, taken through ``expm1``;
    * Taylor sum of nonnegative terms and the factor :math:`e^{-\sigma t/2^j}`:
      :math:`\epsilon_0 = (m + 4)\gamma + (m + 8)u + c\,u (1 + y)` with :math:`y \le` ``plan.ymax``
      the largest argument of the factor;
    * each squaring :math:`\epsilon_{i+1} = 2\epsilon_i + \epsilon_i^2 + \gamma (1 +
      \epsilon_i)^2` (Xue & Ye 2013, Theorem 3.2), with :math:`\gamma = nu/(1 - nu)`
      for a nonnegative product in double and :math:`(n^2 + n + 4) u_{dd}` in
      double-double (:func:`_arithmetic_bound`);

    composed as :math:`(1 + \epsilon_{in})(1 + \epsilon_j) - 1`.
    """
    route_dd = plan.route == "double-double"
    delta = _INPUT_RELATIVE[route_dd]
    eps_in = np.expm1(2 * delta * (np.asarray(beta) + n) + _DIAGONAL_ABSOLUTE[route_dd] * beta)
    return _compose(eps_in, _arithmetic_bound(n, plan))


def _expm_group(A, Al, t, sigma, sigma_lo, plan: _Plan):
    r"""Exponentials ``exp(t_i (A_i + Al_i))`` for members sharing one plan.

    Returns ``(Fh, Fl, trunc)`` (``Fl`` is zero on the double route).  The Taylor
    sum, the factor :math:`e^{-\sigma t/2^j}` and the squarings run in the compiled
    kernels of :mod:`kinetics._kernels`.

    ``trunc`` bounds the Taylor truncation entrywise, a posteriori: with
    :math:`G = Y^{m+1}/(m+1)!` the remainder of nonnegative terms satisfies
    :math:`0 \le e^{Y} - T_m(Y) \le G e^{Y}`, and since everything commutes,
    :math:`0 \le e^{2^j Y} - T_m(Y)^{2^j} \le 2^j G e^{2^j Y}`.  With
    :math:`r = \max (2^j G F)_{ab} / F_{ab}` for the computed :math:`F \approx
    T_m(Y)^{2^j}`, the error :math:`E \le cF` satisfies :math:`c \le r + rc`, so
    :math:`c \le r/(1 - r) \le 2r` for :math:`r \le 1/2` (Shao, Gao & Xue 2014, sec. 4,
    for the estimate; the factor 2 also covers the rounding of :math:`G F`).
    """
    from kinetics import _kernels

    use_dd = plan.route == "double-double"
    ih, il = dd.inverse_factorials(plan.degree)
    if not use_dd:
        # zero low parts, read-only like the cached ones (one compiled signature for both)
        il = np.zeros_like(ih)
        il.flags.writeable = False
    Fh = np.empty_like(A)
    Fl = np.empty_like(A)
    n = A.shape[-1]
    Y = _kernels.scratch("scaled", A.shape)  # internal to this function
    mats = _kernels.scratch("mats", (6, n, n))  # work matrices of the kernel
    m = plan.degree
    ratio = np.empty(A.shape[0])
    _kernels.exponentials(
        A, Al, np.ascontiguousarray(t, dtype=float), np.ascontiguousarray(sigma, dtype=float),
        np.ascontiguousarray(sigma_lo, dtype=float), plan.j, plan.ps, plan.pr, ih, il,
        np.bool_(use_dd), Fh, Fl, Y, _kernels.scratch("powers", (2, plan.ps + 1, n, n)), mats,
        m + 1, math.exp(-math.lgamma(m + 2)), TINY, ratio,
    )  # fmt: skip
    r = 2.0**plan.j * ratio
    return Fh, Fl, np.where(r <= 0.5, 2.0 * r, np.inf)


#: largest Taylor degree a plan prefers (powers of Y beyond it reach the subnormal
#: range on stiff matrices, where products are slow)
_DEGREE_MAX = 40
#: below this size the plan assumes the longest path (n - 1) and a dense matrix
_PATTERN_FROM = 33


def _pattern(A) -> tuple[int | None, float]:
    """Longest shortest path and density of the union of the patterns of a stack.

    Both only steer the plan (:func:`_plan`); a union of patterns has shorter paths
    than each member, and the a posteriori truncation check covers a plan that is
    too optimistic.
    """
    N = A.shape[-1]
    if N < _PATTERN_FROM:
        return None, 1.0
    from scipy.sparse.csgraph import shortest_path

    links = (A != 0).any(axis=0)
    np.fill_diagonal(links, False)
    distances = shortest_path(scipy.sparse.csr_array(links), unweighted=True)
    reach = int(distances[np.isfinite(distances)].max(initial=0))
    density = math.ceil(16 * (links.sum() + N) / N**2) / 16  # rounded up: few plans
    return reach, density


def _distinct(x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct values of ``x`` and the index of each entry among them (no sort for one)."""
    if x.size == 1:  # a single solve
        return x, np.zeros(1, dtype=np.intp)
    values, inverse = np.unique(x, return_inverse=True)
    return values, inverse.reshape(-1)


def _grid_growth(eps: float, gamma: float, columns: int) -> float:
    """Bound of the last of ``columns`` states ``F^k x``, ``F`` with bound ``eps``."""
    growth = (columns - 1) * math.log1p(_compose(eps, gamma)) if columns > 1 else 0.0
    return math.expm1(growth) if growth < 700.0 else math.inf  # guard: no overflow, no nan


def _expm_stack(A, Al, t, precision: str, target: float | None = None, columns: int = 1):
    """``exp(t_i (A_i + Al_i))`` for a stack, with per-member route and error bound.

    Returns ``(Fh, Fl, bound, is_dd)``; ``bound[i]`` is the componentwise relative
    bound of ``Fh + Fl`` against the exponential of the exact pair ``A + Al`` (before
    any rounding to double), ``is_dd[i]`` tells whether member ``i`` took the
    double-double route.  Under ``precision="auto"`` plain double is taken only where
    its a priori bound, grown over a grid of ``columns`` states, stays within
    :data:`AUTO_RTOL`.
    """
    from kinetics import _kernels

    b, n, _ = A.shape
    t = np.full(b, t, dtype=float) if np.ndim(t) == 0 else np.array(t, dtype=float)
    sigma = np.empty(b)
    sigma_lo = np.empty(b)
    beta = np.empty(b)
    _kernels.shift_and_norm(A, Al, t, sigma, sigma_lo, beta)
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
    reach, density = _pattern(A)
    if precision == "auto":
        # plain double where its a priori bound (over the whole grid) is small enough
        predicted = np.array(
            [_predicted_double(v, n, columns, reach, density) for v in values.tolist()]
        )
        route_dd = ~(predicted[which] <= AUTO_RTOL)  # guard: a nan bound is not small
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
        p = _plan(float(values[v]), n, route, tgt, reach=reach, density=density)
        key = (p.route, p.j, p.ps, p.pr)
        groups[key] = np.concatenate([groups[key], sel]) if key in groups else sel
        plans[key] = p
    for key, members in groups.items():
        plan = plans[key]
        # one group holding the whole stack (the usual case) needs no gathering
        idx = slice(None) if members.size == b else np.sort(members)
        tgt = _U / 2 if plan.route == "double" else 2.0**-64
        for _attempt in range(4):
            h, lo, trunc = _expm_group(A[idx], Al[idx], t[idx], sigma[idx], sigma_lo[idx], plan)
            if (trunc <= tgt).all() or plan.pr > 80:
                break
            plan = _Plan(plan.route, plan.j, plan.ps, plan.pr + 2, plan.ymax)
        Fh[idx], Fl[idx] = h, lo
        is_dd[idx] = plan.route == "double-double"
        rounding = _rounding_bound(beta[idx], n, plan)
        bound[idx] = rounding + trunc + rounding * trunc
    return Fh, Fl, bound, is_dd


@lru_cache(maxsize=4096)
def _predicted_double(
    beta: float, n: int, columns: int, reach: int | None = None, density: float = 1.0
) -> float:
    """A priori bound of the double route for norm ``beta`` over a grid of ``columns``."""
    plan = _plan(beta, n, "double", _U / 2, reach=reach, density=density)
    eps = _compose(float(_rounding_bound(beta, n, plan)), _U)
    return _compose(_grid_growth(eps, _gamma(n, False), columns), eps)


# --------------------------------------------------------------------------
# public dense exponentials
# --------------------------------------------------------------------------


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
        raise UsageError("time must be finite and >= 0")
    n = A.shape[0]
    if t == 0.0 or n == 0:
        return np.eye(n), 0.0
    A = np.ascontiguousarray(A[None])
    Fh, _, bound, _ = _expm_stack(A, np.zeros_like(A), np.array([t]), precision)
    return np.maximum(Fh[0], 0.0), float(_compose(bound[0], _U))


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
        triangular, exact diagonal blocks; :mod:`kinetics._blocks`) or a combination.
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
    if vh.shape[0] <= 4:
        # a few members: the product kernel itself, member by member (it is compiled with
        # the exponentials; the loop over a stack is compiled only when a batch needs it)
        for q in range(vh.shape[0]):
            _kernels.product(Fh[q], Fl[q], vh[q], vl[q], oh[q], ol[q], np.bool_(is_dd[q]))
    else:
        _kernels.apply(Fh, Fl, vh, vl, np.asarray(is_dd, dtype=bool), oh, ol)
    return oh, ol


def _gamma_stack(N: int, is_dd):
    return np.where(is_dd, _gamma(N, True), _gamma(N, False))


def _compose(a, b):
    """Relative bound of a product of two factors with bounds ``a`` and ``b``."""
    return a + b + a * b


def _propagate_dense_stack(A, Al, x0, times, precision: str, species: int):
    """Core grid propagation for a stack of (augmented) matrices ``A + Al``.

    A, Al: (b, N, N), x0: (b, N).  Returns (X (b, p, N), bound (b, p), route label);
    ``bound`` covers everything between the exact pair, the given start values and
    times, and the returned doubles (the final rounding included); the first
    ``species`` rows are concentrations (the others a constant feed row).
    """
    from kinetics import _kernels

    if A.shape[-1] ** 3 < _kernels.BLAS_FROM:
        return _propagate_dense_stack_run(A, Al, x0, times, precision, species)
    from threadpoolctl import threadpool_limits

    # the kernels call BLAS for plain-double products of this size; threaded BLAS on
    # these matrices was 5-40 times slower on two cores (threads wait for each other)
    with threadpool_limits(limits=1, user_api="blas"):
        return _propagate_dense_stack_run(A, Al, x0, times, precision, species)


def _propagate_dense_stack_run(A, Al, x0, times, precision: str, species: int):
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

    def exp_of(h, columns=1):
        Fh, Fl, eps, is_dd = _expm_stack(A, Al, np.full(b, h), precision, columns=columns)
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
    residual = np.zeros(p)  # times[k] minus the exact time the route reaches
    dt = _uniform_step(times[start:]) if p - start >= 3 else None
    if dt is not None:
        t_first = times[start]
        # a grid dt, 2 dt, ... (the usual linspace from 0) needs one exponential
        skip = 1 if abs(t_first - dt) <= 4 * _U * times[-1] else 0
        M = p - start - 1 + skip
        if not skip:
            Fh, Fl, eps, is_dd = exp_of(t_first)
            vh, vl = _mv(Fh, Fl, vh, vl, is_dd)
            cur_bound = _compose(eps, _gamma_stack(N, is_dd))
        Fh, Fl, eps, is_dd = exp_of(dt, columns=M + 1)
        # states F^k v for k = 0..M (one product each), their bounds and time residuals
        _kernels.grid(
            Fh, Fl, vh[..., 0].copy(), vl[..., 0].copy(), M + 1, skip, np.asarray(is_dd), X,
            start, eps, _gamma_stack(N, is_dd), cur_bound, bound, times, t_first, dt, residual,
        )  # fmt: skip
    else:
        cache: dict[float, tuple] = {}
        reached = (0.0, 0.0)  # exact time reached so far, double-double
        t_prev = 0.0
        for k in range(start, p):
            h = times[k] - t_prev
            if h > 0:
                if h not in cache:
                    cache[h] = exp_of(h, columns=p - start + 1)  # states ahead: all of them
                Fh, Fl, eps, is_dd = cache[h]
                vh, vl = _mv(Fh, Fl, vh, vl, is_dd)
                cur_bound = _compose(cur_bound, _compose(eps, _gamma_stack(N, is_dd)))
                hi, lo = _kernels.two_sum(reached[0], h)
                lo += reached[1]
                reached = (hi + lo, lo - ((hi + lo) - hi))
            np.maximum((vh + vl)[:, :, 0], 0.0, out=X[:, k])
            bound[:, k] = cur_bound
            residual[k] = (times[k] - reached[0]) - reached[1]
            t_prev = times[k]
    if residual.any():
        gamma = (N + 2) * _U
        _kernels.residual_corrections(A, X, residual, species, gamma, TINY, bound)
    # the final rounding of hi + lo to double
    bound[:, start:] = _compose(bound[:, start:], _U)
    label = "+".join(sorted(labels)) if labels else precision
    # the grid kernel and the interval loop above clip at zero as they write (a sum
    # hi + lo of nonnegative products can round to -0.0 or a tiny negative lo)
    return X, bound, label


@checks.guard_growth
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
    K = checks.rate_matrix(K)
    n = K.shape[0]
    c0 = checks.vector(c0, n, "initial concentrations")
    times = checks.times(times)
    f = None if feed is None else checks.vector(feed, n, "feed")
    from kinetics._blocks import prefers_blocks, propagate_blocks

    # route by predicted cost (calibrated model in kinetics._blocks.route_costs)
    if prefers_blocks(K, times, precision):
        conc, bound = propagate_blocks(K, c0, times, f, K_low=K_low, feed_low=feed_low, floor=TINY)
        return Propagation(times, conc, bound, "blocks")
    if scipy.sparse.issparse(K):
        K = K.toarray()
    Kl = checks.low_parts(K_low, (n, n), "K_low")
    fl = None if f is None else checks.low_parts(feed_low, (n,), "feed_low")
    A = _augment(K[None], None if f is None else f[None])
    Al = _augment(Kl[None], None if f is None else fl[None])
    x0 = c0 if f is None else np.append(c0, 1.0)
    X, bound, label = _propagate_dense_stack(
        np.ascontiguousarray(A), np.ascontiguousarray(Al), x0[None], times, precision, n
    )
    conc = X[0, :, :n].copy()
    conc[times == 0.0] = c0
    return Propagation(times, conc, bound[0], label)


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
    kinetics.errors.UsageError
        Negative off-diagonal rates, negative or non-finite concentrations,
        feed or times, times out of order, wrong shapes.

    Notes
    -----
    Small and dense schemes use the dense entrywise engine (see the module
    docstring); large sparse ones, where it is predicted to be cheaper, are split into
    the strongly connected components of the species graph and propagated through a
    block-triangular exponential with exact diagonal blocks (:mod:`kinetics._blocks`).
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
        raise UsageError(f"rate matrices are not numeric: {exc}") from None
    if K.ndim != 3 or K.shape[1] != K.shape[2]:
        raise UsageError(f"a batch of rate matrices must have shape (b, n, n), got {K.shape}")
    b, n, _ = K.shape
    checks.offdiagonal_nonnegative(K)
    c0 = checks.vector(c0, n, "initial concentrations", (b,))
    times = checks.times(times)
    f = None if feed is None else checks.vector(feed, n, "feed", (b,))
    Kl = checks.low_parts(K_low, (b, n, n), "K_low")
    fl = None if f is None else checks.low_parts(feed_low, (b, n), "feed_low")
    A = np.ascontiguousarray(_augment(K, f))
    Al = np.ascontiguousarray(_augment(Kl, fl))
    x0 = c0 if f is None else np.concatenate([c0, np.ones((b, 1))], axis=1)
    if b == 0:
        out = np.zeros((0, times.size, n))
        return (out, np.zeros((0, times.size))) if return_bound else out
    X, bound, _ = _propagate_dense_stack(A, Al, x0, times, precision, n)
    conc = X if f is None else X[:, :, :n].copy()
    conc[:, times == 0.0] = c0[:, None, :]
    return (conc, bound) if return_bound else conc


class StretchPropagator:
    r"""Exact propagation over stretches of one constant rate matrix and feed.

    For start vectors :math:`s_i` and stretch lengths :math:`h_i`

    .. math::

        c_i = e^{h_i K} s_i + \int_0^{h_i} e^{uK}\,\mathrm{d}u\, f,

    each exponential computed once per distinct length and kept for later calls (a
    timeline of operations applies the same stretch many times, each start known only
    after the previous stretch).  Same engine and bounds as :func:`propagate_certified`.

    Parameters
    ----------
    K : array_like or scipy.sparse, shape (n, n)
        Rate matrix [1/s]; off-diagonal entries >= 0.
    feed : array_like, shape (n,), optional
        Zero-order feed rates [conc/s], >= 0.
    precision : {"auto", "double", "double-double"}
        As in :func:`propagate_certified`.
    K_low, feed_low : array_like, optional
        Low-order parts of double-double inputs (see :func:`propagate_certified`).

    Examples
    --------
    One decay step, k = 1/s, applied to two starts over 1 s (closed form :math:`e^{-1}`):

    >>> p = StretchPropagator([[-1.0]])
    >>> r = p.advance([[1.0], [2.0]], [1.0, 1.0])
    >>> r.concentrations[:, 0].round(12).tolist()
    [0.367879441171, 0.735758882343]
    """

    #: most distinct lengths whose exponentials are kept
    KEEP = 256

    def __init__(self, K, feed=None, *, precision: Precision = "auto", K_low=None, feed_low=None):
        checks.precision(precision)
        K = checks.rate_matrix(K)
        n = K.shape[0]
        f = None if feed is None else checks.vector(feed, n, "feed")
        self.species = n
        self.precision = precision
        self._kept: dict[float, tuple] = {}
        self._ready: dict[float, tuple] = {}  # kept exponentials arranged for step()
        self._large = n > DENSE_MAX  # the dense stack holds up to DENSE_MAX species
        if scipy.sparse.issparse(K) and not self._large:
            K = K.toarray()
        self._inputs = (K, f, K_low, None if f is None else feed_low)
        self._A = self._Al = None
        if not self._large:
            self._A, self._Al = self._augmented()

    def _augmented(self):
        """The augmented pair (1, N, N) of Eq. (1) of the module docstring."""
        K, f, K_low, feed_low = self._inputs
        n = self.species
        Kd = K.toarray() if scipy.sparse.issparse(K) else K
        Kl = checks.low_parts(K_low, (n, n), "K_low")
        fl = None if f is None else checks.low_parts(feed_low, (n,), "feed_low")
        A = np.ascontiguousarray(_augment(Kd[None], None if f is None else f[None]))
        return A, np.ascontiguousarray(_augment(Kl[None], None if f is None else fl[None]))

    def _exponentials(self, lengths: np.ndarray, remember: bool):
        """``(Fh, Fl, eps, is_dd)`` stacked for ``lengths``, computing only new lengths."""
        N = self._A.shape[-1]
        values, which = _distinct(lengths)
        listed = values.tolist()
        new = [i for i, v in enumerate(listed) if v > 0.0 and v not in self._kept]
        Fh, Fl = np.empty((len(listed), N, N)), np.zeros((len(listed), N, N))
        eps, is_dd = np.zeros(len(listed)), np.zeros(len(listed), dtype=bool)
        if new:
            A = np.ascontiguousarray(np.broadcast_to(self._A, (len(new), N, N)))
            Al = np.ascontiguousarray(np.broadcast_to(self._Al, (len(new), N, N)))
            Fh[new], Fl[new], eps[new], is_dd[new] = _expm_stack(A, Al, values[new], self.precision)
        for i, v in enumerate(listed):
            if v in self._kept:
                Fh[i], Fl[i], eps[i], is_dd[i] = self._kept[v]
            elif v == 0.0:
                Fh[i] = np.eye(N)  # exact
            elif remember and len(self._kept) < self.KEEP:
                self._kept[v] = (Fh[i].copy(), Fl[i].copy(), float(eps[i]), bool(is_dd[i]))
        return Fh[which], Fl[which], eps[which], is_dd[which]

    @checks.guard_growth
    def advance(self, starts, lengths, lengths_low=None, *, remember: bool = True) -> Propagation:
        r"""Concentrations after each stretch, with a componentwise error bound.

        Parameters
        ----------
        starts : array_like, shape (m, n)
            Start concentrations [conc], >= 0, one row per stretch.
        lengths : array_like, shape (m,)
            Stretch lengths [s], finite and >= 0, in any order.
        lengths_low : array_like, shape (m,), optional
            Low-order parts: the exact lengths are ``lengths + lengths_low`` (a
            difference of two times is rarely a double); the bound includes the
            effect of the part not propagated.
        remember : bool
            Keep the new exponentials for later calls (up to :attr:`KEEP` lengths).

        Returns
        -------
        Propagation
            ``times`` are the lengths, ``concentrations`` has shape (m, n) and
            ``error_bound[i]`` bounds the relative error of every entry of row ``i``
            above 1e-290 against the exact stretch from the given start.
        """
        from kinetics import _kernels

        n = self.species
        try:
            h = np.array(lengths, dtype=float).reshape(-1)
        except (TypeError, ValueError) as exc:
            raise UsageError(f"stretch lengths are not numeric: {exc}") from None
        if not (np.isfinite(h).all() and (h >= 0).all()):
            raise UsageError("stretch lengths must be finite and >= 0")
        m = h.size
        starts = checks.vector(starts, n, "start concentrations", (m,))
        low = checks.low_parts(lengths_low, (m,), "lengths_low")
        fed = self._inputs[1] is not None
        if self._large:
            rows, bound = self._advance_large(starts, h)
            X = np.ascontiguousarray((np.hstack([rows, np.ones((m, 1))]) if fed else rows)[None])
        else:
            Fh, Fl, eps, is_dd = self._exponentials(h, remember)
            x0 = np.ones((m, n + 1, 1)) if fed else np.empty((m, n, 1))
            x0[:, :n, 0] = starts
            oh, ol = _mv(Fh, Fl, x0, np.zeros_like(x0), is_dd)
            X = np.ascontiguousarray(np.maximum((oh + ol)[None, :, :, 0], 0.0))
            bound = np.where(h > 0, _compose(eps, _gamma_stack(X.shape[-1], is_dd)), 0.0)
        bound = bound[None].copy()
        if low.any():  # carry each state to its exact length (first order) and bound it
            A = self._A if self._A is not None else self._augmented()[0]
            gamma = (A.shape[-1] + 2) * _U
            _kernels.residual_corrections(A, X, low, n, gamma, TINY, bound)
        bound = np.where(h > 0, _compose(bound[0], _U), bound[0])
        conc = np.where((h == 0.0)[:, None], starts, X[0, :, :n])
        return Propagation(h, conc, bound, self.precision)

    def step(self, start, length: float, length_low: float = 0.0) -> tuple[np.ndarray, float]:
        """One stretch from one start: the cheap form of :meth:`advance` for chains.

        Returns the concentrations (shape (n,)) and their relative bound, as one row of
        :meth:`advance` (which this calls for a new length or an unusual start).
        """
        start = np.asarray(start, dtype=float)
        ready = self._ready.get(length)
        usual = start.shape == (self.species,) and start.min() >= 0.0 and start.max() < np.inf
        if ready is None and usual and length in self._kept:
            Fh, Fl, eps, is_dd = self._kept[length]
            N = Fh.shape[-1]
            ready = (Fh[None], Fl[None], np.array([is_dd]), _compose(eps, _gamma(N, is_dd)))
            self._ready[length] = ready
        if ready is None or not usual:
            r = self.advance(start[None], [length], [length_low])
            return r.concentrations[0], float(r.error_bound[0])
        from kinetics import _kernels

        Fh, Fl, is_dd, eps = ready
        n, N = self.species, Fh.shape[-1]
        v = np.ones((1, N, 1))
        v[0, :n, 0] = start
        oh, ol = _mv(Fh, Fl, v, np.zeros((1, N, 1)), is_dd)
        if not np.isfinite(oh).all():  # growth: let the checked route say so
            r = self.advance(start[None], [length], [length_low])
            return r.concentrations[0], float(r.error_bound[0])
        X = np.maximum(oh + ol, 0.0).reshape(1, 1, N)
        if not length_low:
            return X[0, 0, :n].copy(), eps + _U + eps * _U
        bound = np.array([[eps]])
        gamma = (N + 2) * _U
        _kernels.residual_corrections(self._A, X, np.array([length_low]), n, gamma, TINY, bound)
        return X[0, 0, :n].copy(), float(_compose(bound[0, 0], _U))

    def _advance_large(self, starts, h):
        """:func:`propagate_certified` (its own route choice), one stretch at a time."""
        K, f, K_low, feed_low = self._inputs
        conc = np.empty_like(starts)
        bound = np.zeros(h.size)
        for i, (s, t) in enumerate(zip(starts, h.tolist(), strict=True)):
            r = propagate_certified(
                K, s, [t], f, precision=self.precision, K_low=K_low, feed_low=feed_low
            )
            conc[i], bound[i] = r.concentrations[0], r.error_bound[0]
        return conc, bound
