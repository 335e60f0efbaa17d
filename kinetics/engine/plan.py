"""Plans and error bounds of the dense engine: squarings, Taylor degree, rounding.

A plan says how many squarings and which Taylor degree; its bound, what a plan's
arithmetic can lose.

The plan is a guess (Shao, Gao & Xue 2014, sec. 3) checked a posteriori; the bounds
compose every rounding between the exact input and the returned doubles (Xue & Ye 2013,
Theorem 3.2 for the squarings; Xue & Ye 2008 for the input's representation).

References
----------
J. Xue, Q. Ye, "Computing exponentials of essentially non-negative matrices entrywise to
high relative accuracy", Math. Comp. 82, 1577-1596 (2013). doi:10.1090/S0025-5718-2012-02677-2
M. Shao, W. Gao, J. Xue, SIAM J. Matrix Anal. Appl. 35, 317-338 (2014). doi:10.1137/120894294
M. S. Paterson, L. J. Stockmeyer, SIAM J. Comput. 2, 60-66 (1973). doi:10.1137/0202007
"""

from __future__ import annotations

import math
from collections.abc import Hashable
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import scipy.sparse

from kinetics import _doubledouble as dd

__all__ = [
    "AUTO_RTOL",
    "DENSE_MAX",
    "TINY",
    "Plan",
    "U",
    "arithmetic_bound",
    "choose_plan",
    "compose",
    "grid_growth",
    "pattern_stats",
    "predicted_double",
    "product_error",
    "remembered",
    "rounding_bound",
]

#: Largest scheme of a batch (:func:`kinetics.engine.propagate_batch`, sweeps) and of the
#: dense routes the summaries rely on; single solves choose between the dense engine and
#: the block route by predicted cost (:func:`kinetics.engine.blocks.prefers_blocks`).
DENSE_MAX = 200
U = 2.0**-53  # unit roundoff of IEEE double
#: Entries below this are outside the relative-accuracy guarantee (underflow).
TINY = 1e-290
#: ``precision="auto"`` picks plain double when its bound is at most this.
AUTO_RTOL = 2.0**-46


def compose(a, b):
    """Relative bound of a product of two factors with bounds ``a`` and ``b``."""
    return a + b + a * b


@dataclass(frozen=True)
class Plan:
    """How one exponential is computed: route, squarings and Taylor sum (Paterson-Stockmeyer)."""

    route: str  # "double" or "double-double"
    j: int  # number of squarings
    ps: int  # Paterson-Stockmeyer block size s
    pr: int  # number of Horner steps r; Taylor degree m = s (r + 1) - 1
    ymax: float = 16.0  # largest scaled norm beta / 2^j left to the Taylor sum

    @property
    def degree(self) -> int:
        """The Taylor degree :math:`m = s (r + 1) - 1`."""
        return self.ps * (self.pr + 1) - 1


@lru_cache(maxsize=4096)
def ps_blocks(m: int, density: float = 1.0) -> tuple[int, int, float]:
    """Cheapest Paterson-Stockmeyer split (s, r) with s (r + 1) - 1 >= m, and its cost.

    Cost in dense products: the powers :math:`Y^2 .. Y^s` are products with ``Y`` on the
    left (its zeros skipped, relative cost ``density``); each Horner step is a product
    with :math:`Y^s` on the left, sparse only for ``s = 1`` (plain Horner).
    """
    best: tuple[float, int, int] | None = None
    for s in range(1, m + 2):
        r = max(0, math.ceil((m + 1) / s) - 1)
        cost = (s - 1) * density + r * (density if s == 1 else 1.0)
        if best is None or cost < best[0]:
            best = (cost, s, r)
    assert best is not None  # s = 1 is always tried
    return best[1], best[2], best[0]


@lru_cache(maxsize=4096)
def choose_plan(
    beta: float,
    n: int,
    route: str,
    target: float,
    ymax: float = 16.0,
    square_cost: float = 1.0,
    reach: int | None = None,
    density: float = 1.0,
) -> Plan:
    r"""Choose squarings j and Taylor degree m for ``||tB||_1 <= beta``.

    The scalar remainder estimate (Shao, Gao & Xue 2014, sec. 3) is
    :math:`2^j \, y^{m+1} e^{y}/(m+1)!` with :math:`y = \beta/2^j`; the cost is the
    number of dense matrix products (:func:`ps_blocks`) plus ``j`` squarings.
    ``reach`` is the longest shortest path of the species graph (default ``n - 1``,
    a chain): an entry reached by a path of ``p`` steps needs the terms of degree
    ``p`` and more, so the degree grows with it.  The plan is a guess checked a
    posteriori (:func:`expm_group`).
    """
    if beta <= 0.0:
        return Plan(route, 0, 2, 0, ymax)
    p_ = n - 1 if reach is None else max(0, min(reach, n - 1))
    jmin = max(0, math.ceil(math.log2(beta) - math.log2(ymax)))
    best: tuple[float, Plan] | None = None
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
        if m > DEGREE_MAX and j < jmin + 11:
            continue  # the a posteriori check forms Y^(m+1): keep its entries in range
        s, r, cost = ps_blocks(max(m, 2), density)
        cost += square_cost * j
        if best is None or cost < best[0]:
            best = (cost, Plan(route, j, s, r, ymax))
    assert best is not None  # the last number of squarings is always costed
    return best[1]


def product_error(n: int, route_dd: bool) -> float:
    """Relative error of one entry of a nonnegative product with inner dimension ``n``."""
    return (n * n + n + 4) * dd.DD_UNIT if route_dd else n * U / (1 - n * U)


#: relative perturbation of the entries of tB/2^j as formed (per route), and the
#: absolute error of the shifted diagonal relative to sigma (double-double route only:
#: on the double route that rounding is part of the first)
INPUT_RELATIVE = {False: 2 * U, True: 8 * dd.DD_UNIT}
DIAGONAL_ABSOLUTE = {False: 0.0, True: 8 * dd.DD_UNIT}


@lru_cache(maxsize=4096)
def arithmetic_bound(n: int, plan: Plan) -> float:
    r"""Rounding bound of the Taylor sum, the shift factor and the squarings of one plan.

    The plan was chosen so that :math:`y = \beta/2^j \le` ``plan.ymax`` (:func:`choose_plan`),
    which bounds the error of the factor :math:`e^{-\sigma t/2^j}` (its argument is at
    most :math:`y`) independently of the member.
    """
    from kinetics.engine import kernels

    route_dd = plan.route == "double-double"
    unit = dd.DD_UNIT if route_dd else U
    gamma = product_error(n, route_dd)
    m = plan.degree
    factor = (8 if route_dd else 4) * unit * (1 + plan.ymax)
    eps = (m + 4) * gamma + (m + 8) * unit + factor
    for _ in range(plan.j):
        eps = kernels.squared_bound.py_func(eps, gamma)  # scalars: not compiled
    return float(eps)


def rounding_bound(beta, n: int, plan: Plan, unit: float | None = None):
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
      double-double (:func:`arithmetic_bound`);

    composed as :math:`(1 + \epsilon_{in})(1 + \epsilon_j) - 1`.
    """
    return compose(input_bound(beta, n, plan.route == "double-double"), arithmetic_bound(n, plan))


def input_bound(beta, n: int, route_dd: bool):
    r"""Relative effect on :math:`e^{Y}` of forming :math:`Y = tB` (see :func:`rounding_bound`).

    :math:`\operatorname{expm1}(2\delta(\beta + n) + \eta\beta)`: first order in an entrywise
    relative perturbation :math:`\delta` of a nonnegative matrix (Xue & Ye 2008), with the
    diagonal's absolute error :math:`\eta\sigma` on the double-double route.

    Examples
    --------
    >>> bool(input_bound(1.0, 2, False) < 1e-14)
    True
    """
    delta = INPUT_RELATIVE[route_dd]
    return np.expm1(2 * delta * (np.asarray(beta) + n) + DIAGONAL_ABSOLUTE[route_dd] * beta)


#: largest Taylor degree a plan prefers (powers of Y beyond it reach the subnormal
#: range on stiff matrices, where products are slow)
DEGREE_MAX = 40
#: below this size the plan assumes the longest path (n - 1) and a dense matrix
PATTERN_FROM = 33


def pattern_stats(A) -> tuple[int | None, float]:
    """Longest shortest path and density of the union of the patterns of a stack.

    Both only steer the plan (:func:`choose_plan`); a union of patterns has shorter paths
    than each member, and the a posteriori truncation check covers a plan that is
    too optimistic.
    """
    N = A.shape[-1]
    if N < PATTERN_FROM:
        return None, 1.0
    links = (A != 0).any(axis=0)
    np.fill_diagonal(links, False)
    key = N.to_bytes(4, "little") + np.packbits(links).tobytes()
    return remembered(_PATTERN_STATS, key, lambda: _reach_and_density(links))


def _reach_and_density(links: np.ndarray) -> tuple[int, float]:
    from scipy.sparse.csgraph import shortest_path

    N = links.shape[0]
    distances = shortest_path(scipy.sparse.csr_array(links), unweighted=True)
    reach = int(distances[np.isfinite(distances)].max(initial=0))
    density = math.ceil(16 * (links.sum() + N) / N**2) / 16  # rounded up: few plans
    return reach, density


#: patterns remembered by each of :func:`pattern_stats` and
#: :func:`kinetics.engine.blocks.block_sizes` (all-pairs shortest paths cost about 1 ms
#: at 100 species, more than the double route's whole solve; a scheme solved again, as in
#: a sweep or a fit, keeps its pattern)
PATTERN_CACHE = 256
_PATTERN_STATS: dict[bytes, tuple[int, float]] = {}


def remembered(store: dict, key: Hashable, compute):
    """``store[key]``, computed by ``compute()`` the first time.

    The one policy of the engine's pattern caches: a value depends on its key only, and a
    store that holds :data:`PATTERN_CACHE` entries starts afresh.

    Examples
    --------
    >>> store = {}
    >>> remembered(store, b"p", lambda: 3), remembered(store, b"p", lambda: 4)
    (3, 3)
    """
    found = store.get(key)
    if found is None:
        if len(store) >= PATTERN_CACHE:
            store.clear()
        found = store[key] = compute()
    return found


def grid_growth(eps: float, gamma: float, columns: int) -> float:
    """Bound of the last of ``columns`` states ``F^k x``, ``F`` with bound ``eps``."""
    growth = (columns - 1) * math.log1p(compose(eps, gamma)) if columns > 1 else 0.0
    return math.expm1(growth) if growth < 700.0 else math.inf  # guard: no overflow, no nan


@lru_cache(maxsize=4096)
def predicted_double(
    beta: float, n: int, columns: int, reach: int | None = None, density: float = 1.0
) -> float:
    """A priori bound of the double route for norm ``beta`` over a grid of ``columns``."""
    plan = choose_plan(beta, n, "double", U / 2, reach=reach, density=density)
    eps = compose(float(rounding_bound(beta, n, plan)), U)
    return compose(grid_growth(eps, product_error(n, False), columns), eps)
