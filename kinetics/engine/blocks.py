r"""Block-triangular propagation of large sparse schemes (private).

The species graph (edge :math:`j \to i` when :math:`k_{ij} > 0`) is restricted to the
species reachable from those present at the start (or fed), then condensed into its
strongly connected components (blocks); in a topological order of the blocks the rate
matrix is block lower triangular, and so is its exponential.

**One interval.**  :math:`F = e^{hK}` comes from the nonnegative shift-Taylor-square
algorithm (Xue & Ye 2013), with :math:`\sigma \ge \max_i q_i` (:math:`q_i` the
outflow of species i) and :math:`Y = \tfrac{h}{2^j}(K + \sigma I) \ge 0`:

.. math::

    F = \left(e^{-\sigma h/2^j}\, T_m(Y)\right)^{2^j}, \qquad
    T_m(Y) = \sum_{k=0}^{m} Y^k / k!.

* The Taylor polynomial is summed column by column over the sparse pattern
  (:func:`kinetics._block_kernels.column_taylor`, in :mod:`kinetics._block_exp`); its
  columns fill the *panels* (one dense panel per tile of columns, from the tile's
  first row down to the last row with a nonzero), and the squarings are panel
  products in BLAS.
* The diagonal blocks of :math:`F` are exact: a species that forms a block of its
  own has :math:`F_{ii} = e^{-q_i t}` (a double-double exponential), a larger
  block's :math:`e^{tK_{bb}}` is summed (Horner, the sparse :math:`Y` on the left)
  and squared in double-double with its own shift.  They replace the diagonal
  blocks of the panels at every squaring.  This is what makes the route accurate
  over long times: rounding the shifted diagonal :math:`\sigma - q_i` to double acts
  like a leak of about :math:`u\sigma` per second (:math:`2\cdot 10^{-11}` on the
  2,000-species decay network below when the whole exponential was squared in
  double); with exact diagonal blocks the errors of the off-diagonal part add along
  a path instead of doubling with every squaring.  Chains need nothing else (no
  divided differences): their blocks are single species.
* The diagonal :math:`\sigma - q_i` and the exact outflow :math:`q_i` come from
  ``K + K_low`` in double-double, so the result is that of the constants, not of a
  rounded diagonal.
* No entry is dropped; entries below :data:`kinetics._block_exp.FLUSH`
  (:math:`2^{-1060}`) are set to zero so that BLAS does not run into subnormal
  numbers (about 300 times slower).

**The grid.**  The state is carried in double-double: the diagonal blocks act in
double-double, the coupling between blocks is one BLAS product per tile.  A grid
uniform from 0 is walked with one step :math:`\Delta t'` of few significant bits
(:math:`k\Delta t'` exact, :math:`\Delta t' \le t_k/k`), so one exponential serves
every interval; each output is then moved on by the exact remainder
:math:`t_k - k\Delta t'` (a few ulp) with a short nonnegative Taylor step
:math:`e^{-\sigma\delta}T_m(\delta B)`.  Other grids step from one time to the next
(one exponential per distinct interval) and correct the walk itself.  The state is
scaled by a power of two so that its largest start value is about one.

**Route.**  :func:`route_costs` predicts the seconds of this route and of the dense
engine from operation counts and measured rates (:data:`RATES`,
``benchmarks/calibrate_routes.py``); :mod:`kinetics.engine.propagate` takes the cheaper.

**Certificate** (per time point, relative, for every concentration whose exact
value is above ``floor``; relative errors composed as :math:`\prod(1+\epsilon_i) - 1`):

* *rounding*: an entry whose longest path from a species present at the start
  crosses :math:`\Lambda` blocks is off by at most :math:`(1 + c)^{\Lambda}
  (1+\eta) - 1`, where :math:`c` is the per-crossing error (Taylor sum,
  :math:`\gamma` of the tile products and of the coupling product in each step, the
  diagonal blocks rounded to double) and :math:`\eta` the double-double error of the
  diagonal blocks accumulated over the steps.  (Each factor of a product that
  stays inside one block is exact to double-double, so only the factors that cross
  from one block to another carry a double rounding, and a path crosses at most
  :math:`\Lambda` of them however many steps and squarings it spans.)
* *truncation*, a posteriori and rigorous: for nonnegative commuting factors
  :math:`e^{Y} - T_m(Y) \le G e^{Y}` with :math:`G = Y^{m+1}/(m+1)!` (Lagrange
  remainder), hence :math:`F - F_{\rm computed} \le 2^j G F` entrywise; applied to
  each computed state through :math:`(I - 2^j G)^{-1}` (a Neumann series
  summed until it falls below the floor), entries where it is not small relative
  to the state go to the absolute part.  The same for the correction steps.  When
  truncation is a visible share of a bound, the walk is redone with more terms;
* *absolute* (1-norm, counted at the floor): flushed entries, underflow,
  truncation mass on entries where it is not relatively small;
* the final rounding to double.

The bound is a worst case: on the schemes below it is 1e-11 to 1e-10 while the
measured errors are 1e-15 to 5e-15.

**Measured** (one thread; ``benchmarks/bench_propagate.py``, ``tests/test_blocks.py``):
the 2,000-species chain on 101 points to 1,000 s in 0.3-0.4 s, every member above
1e-300 within 5.1e-15 of Bateman's closed form; the 2,000-species decay network
(each species to 1-3 of the next 50) in 0.6-0.7 s, within 4.7e-15 of the dense
double-double engine; two networks of 300 and 420 species against ball arithmetic
(python-flint), trace species down to 1e-300 at 1 ms included, within 2e-15.

References
----------
J. Xue, Q. Ye, "Computing exponentials of essentially non-negative matrices
entrywise to high relative accuracy", Math. Comp. 82, 1577-1596 (2013).
doi:10.1090/S0025-5718-2012-02677-2
M. Shao, W. Gao, J. Xue, "Aggressively truncated Taylor series method for accurate
computation of exponentials of essentially nonnegative matrices", SIAM J. Matrix
Anal. Appl. 35, 317-338 (2014) (a posteriori truncation with the Lagrange form).
T. Ogita, S. M. Rump, S. Oishi, "Accurate sum and dot product", SIAM J. Sci.
Comput. 26, 1955-1988 (2005) (double-double products of the diagonal blocks).
R. Tarjan, "Depth-first search and linear graph algorithms", SIAM J. Comput. 1,
146-160 (1972) (strongly connected components; scipy implementation).
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import scipy.sparse

from kinetics._doubledouble import DD_UNIT
from kinetics.engine.block_exp import (
    UNIT,
    Interval,
    Layout,
    compose,
    dd_degree,
    dd_scalar_exp,
    gamma,
    power,
    taylor_plan,
)
from kinetics.engine.plan import remembered

__all__ = [
    "RATES",
    "block_order",
    "block_sizes",
    "prefers_blocks",
    "propagate_blocks",
    "route_costs",
]

_TRUNC_REL = 2.0**-40  # a truncation bound above this fraction of an entry is absolute

#: Seconds per operation, one thread, measured by ``benchmarks/calibrate_routes.py``
#: on the machine kind this project is developed on (2 cores, AVX-512, OpenBLAS):
#: a double-double multiply-add of the dense engine's products (``dd``), a
#: multiply-add of a BLAS panel product (``blas``) and of a matrix-vector product
#: (``gemv``), a multiply-add of the column Taylor sum (``scatter``); ``fixed`` is
#: the block route's set-up (components, tiles, plans), ``step`` its interpreter
#: overhead per time step, ``dense`` the number of full products the dense engine
#: spends per Taylor degree ``sqrt(m)``, squaring and doubling step and ``double``
#: its cost in plain double relative to double-double (both fitted to the measured
#: times of the engine merged from main on 2 December, on the eight schemes of
#: ``benchmarks/calibrate_routes.py``).
RATES = {"dd": 1.3e-9, "blas": 3.0e-11, "gemv": 1.5e-10, "scatter": 5.0e-10,
         "fixed": 0.008, "step": 2.0e-4, "dense": 0.21, "double": 0.5}  # fmt: skip


def block_order(K) -> tuple[np.ndarray, list[list[int]]]:
    """Species order in which ``K`` is block lower triangular.

    Parameters
    ----------
    K : scipy.sparse matrix, shape (n, n)
        Rate matrix [1/s].

    Returns
    -------
    order : ndarray of int
        Permutation: position p holds species ``order[p]``.
    blocks : list of list of int
        The strongly connected components, upstream first.
    """
    from kinetics.network import condensation

    K = scipy.sparse.coo_array(K)
    n = K.shape[0]
    off = (K.row != K.col) & (K.data != 0)
    # species j feeds species i when k_ij > 0; components (scipy) in topological order
    comps = condensation(K.col[off], K.row[off], n)
    blocks = [comps.members[c].tolist() for c in comps.order]
    order = np.array([i for b in blocks for i in b], dtype=int)
    return order, blocks


def _round_down(x: Fraction) -> float:
    """The largest double not above ``x`` (``x >= 0``)."""
    f = float(x)
    return float(np.nextafter(f, 0.0)) if Fraction(f) > x else f


def _grid(times: np.ndarray):
    """Steps to the grid: ``(h, delta, residual, in_place)``.

    ``h[k]`` is the step taken before output ``k`` (0 for none), ``delta[k] >= 0`` a
    double that a short correction step (:meth:`_Walk.correct`) adds to reach
    ``times[k]``, ``residual[k] >= 0`` what is still missing after that (zero
    except in rare cases, below ``u delta``).  A grid uniform from 0 (within
    ``4 u t_max``) is walked with one step ``dt'`` of few significant bits, so that
    the positions ``k dt'`` and the remainders ``t_k - k dt'`` are exact and one
    exponential serves every interval; then the corrections apply to the outputs
    only (``in_place`` False).  Other grids step from each time to the next and
    correct the walk itself.
    """
    from kinetics.engine import kernels

    p = times.size
    h, delta, residual = np.zeros(p), np.zeros(p), np.zeros(p)
    first = int(np.searchsorted(times, 0.0, side="right"))
    rest = times[first:]
    dt = -1.0
    if rest.size >= 3:
        tol = 4 * UNIT * float(rest[-1])
        dt = kernels.uniform_step(np.ascontiguousarray(rest), tol)
        if dt > 0 and abs(float(rest[0]) - dt) > tol:
            dt = -1.0  # uniform, but not from 0
    if dt > 0:
        steps = np.arange(1, rest.size + 1)
        q = min(Fraction(float(t)) / int(k) for t, k in zip(rest, steps, strict=True))
        bits = 53 - math.ceil(math.log2(rest.size + 2))
        mant, expo = math.frexp(_round_down(q))
        step = math.ldexp(math.floor(math.ldexp(mant, bits)), expo - bits)
        h[first:] = step
        delta[first:] = rest - steps * step  # exact: k dt' is a double, t_k within 2x
        return h, delta, residual, False
    pos = Fraction(0)
    for k in range(first, p):
        gap = Fraction(float(times[k])) - pos
        if gap == 0:
            continue
        h[k] = _round_down(gap)
        rem = gap - Fraction(float(h[k]))
        delta[k] = _round_down(rem)
        pos += Fraction(float(h[k])) + Fraction(float(delta[k]))
        residual[k] = float(Fraction(float(times[k])) - pos) * (1 + 2.0**-50)
    return h, delta, residual, True


class _Walk:
    """The grid walk of one layout: states (double-double) and their bounds."""

    def __init__(self, lay: Layout, x0: np.ndarray, floor: float, boost: int) -> None:
        self.lay = lay
        self.floor = floor
        self.boost = boost
        self.cache: dict[float, Interval] = {}
        self.xh = x0[lay.species].astype(float)
        self.xl = np.zeros(lay.size)
        self.trunc = 0.0  # relative truncation, composed over the steps
        self.absolute = 0.0  # 1-norm absolute error bound: underflow, flushing
        self.cut = 0.0  # 1-norm absolute error bound: truncation where not relative
        self.worst_cut = 0.0  # largest truncation share of a bound (for a retry)
        self.eta = 0.0  # double-double error of the diagonal blocks, composed
        self.hop = 0.0  # largest per-crossing error of the intervals used
        self.sigma = 0.0
        self.failed = False

    def step(self, h: float) -> None:
        """Advance the state by ``h`` (> 0)."""
        from kinetics.engine import block_kernels as bk

        if h not in self.cache:
            self.cache[h] = Interval(self.lay, h, self.boost)
        iv = self.cache[h]
        lay = self.lay
        xh, xl = self.xh, self.xl
        norm1 = float(np.abs(xh).sum())
        coupling = np.zeros(lay.size)
        for J, P in enumerate(iv.off):
            b0, b1 = int(lay.bounds[J]), int(lay.bounds[J + 1])
            coupling[b0 : b0 + P.shape[0]] += P @ xh[b0:b1]
        nh, nl = np.empty_like(xh), np.empty_like(xl)
        bk.scale_diagonal(iv.dh, iv.dl, xh, xl, coupling, lay.singles, nh, nl)
        for (start, size), (_, Fh, Fl) in zip(lay.groups, iv.groups, strict=True):
            self._group_step(start, size, Fh, Fl, coupling, nh, nl)
        self.xh, self.xl = nh, nl
        self.absolute = iv.norm * self.absolute + iv.absolute * 2 * norm1 + iv.fixed
        self.eta = compose(self.eta, iv.eta)
        self.hop = max(self.hop, iv.hop)
        self.sigma = max(self.sigma, iv.sigma)
        self._truncation(iv)

    def _group_step(self, start, size, Fh, Fl, coupling, nh, nl) -> None:
        from kinetics.engine import block_kernels as bk
        from kinetics.engine import kernels

        sl = slice(start, start + size)
        oh, ol = np.empty((size, 1)), np.empty((size, 1))
        kernels.product(Fh, Fl, self.xh[sl, None].copy(), self.xl[sl, None].copy(), oh, ol,
                         np.bool_(True))  # fmt: skip
        one = np.ones(size)
        idx = np.arange(size)
        bk.scale_diagonal(one, np.zeros(size), oh[:, 0].copy(), ol[:, 0].copy(),
                          coupling[sl].copy(), idx, nh[sl], nl[sl])  # fmt: skip

    def _truncation(self, iv: Interval) -> None:
        """Compose the a posteriori truncation bound of the step just taken (:func:`_neumann`)."""
        lam = int(self.lay.crossings.max(initial=0))
        mu = (1 + compose(power(self.hop, lam), self.eta)) * (1 + 4 * UNIT)
        qn = iv.scale * 1.01 * iv.gnorm
        rel, absolute = _neumann(iv.apply_truncation, self.xh, mu, self.floor, qn)
        self.trunc = compose(self.trunc, rel)
        self.cut += absolute

    def correct(self, d: float, in_place: bool):
        r"""The state moved on by ``d`` [s] (small, >= 0): :math:`e^{-\sigma d} T_m(dB) x`.

        Returns ``(state, relative, absolute)``: the moved state (hi parts) and the
        bounds it adds (zero when ``in_place``: then they are composed into the walk,
        which continues from the moved state).  Truncation as for a step
        (:func:`_neumann` with :math:`G = (dB)^{m+1}/(m+1)!`); rounding: the Taylor
        terms carry at most ``eps`` relative, and they are at most ``ratio`` of the
        state they are added to.
        """
        from kinetics.engine import block_kernels as bk

        lay = self.lay
        B, beta, rows = lay.shifted()
        m = 1
        while (m + 1) * math.log(max(d * beta, 1e-300)) - math.lgamma(m + 2) > -80 * math.log(2.0):
            m += 1
        delta = np.empty(lay.size)
        bk.taylor_apply(B.indptr, B.indices, B.data, self.xh, m, d, delta)
        ch, cl = dd_scalar_exp(lay.sigma, d)
        one = np.ones(lay.size)
        yh, yl = np.empty(lay.size), np.empty(lay.size)
        bk.scale_diagonal(one * ch, one * cl, self.xh, self.xl, delta * ch,
                          np.arange(lay.size), yh, yl)  # fmt: skip
        pos = yh > 0
        ratio = float((delta[pos] / yh[pos]).max(initial=0.0))
        # per term: a sum of `rows` products, B rounded (u), the factor d and / k (2u)
        eps = compose(power(compose(gamma(rows), 4 * UNIT), m), gamma(m), UNIT)
        rounding = compose(eps * ratio * (1 + 4 * UNIT), 8 * DD_UNIT)
        scale = d ** (m + 1) * 1.01
        qn = scale * math.exp((m + 1) * math.log(max(beta, 1e-300)) - math.lgamma(m + 2))

        def apply(v):
            out, work = np.empty(v.size), np.empty(v.size)
            bk.power_apply(B.indptr, B.indices, B.data, v, m + 1, scale, out, work)
            return out

        mu = 1 + 2 * rounding + 4 * UNIT
        trunc, absolute = _neumann(apply, yh, mu, self.floor, qn)
        if not in_place:
            return yh, compose(rounding, trunc), absolute
        self.xh, self.xl = yh, yl
        self.eta = compose(self.eta, rounding)
        self.trunc = compose(self.trunc, trunc)
        self.cut += absolute
        return yh, 0.0, 0.0

    def bound(self, z: np.ndarray, rel: float, absolute: float, residual: float) -> float:
        """Relative bound of every entry above the floor of the state at a grid time.

        An entry counts when its exact value is above the floor.

        ``z`` is the computed state; ``rel``, ``absolute``: what a correction step to
        this time added; ``residual`` [s]: what the grid time still exceeds the
        state's time by (rare, below ``u`` times the correction), counted to first
        order.  Absolute parts count at the floor (an entry whose exact value is just
        above the floor may be computed below it).
        """
        floor = max(self.floor, 2.0**-1074)
        claimed = z >= floor
        # an entry exactly above the floor is computed above half of it (else the
        # bound exceeds 1/2 anyway): its crossings count
        lam = int(self.lay.crossings[z >= floor / 2].max(initial=0))
        rho = compose(power(self.hop, lam), self.eta)
        cut = (self.cut + absolute) / floor
        self.worst_cut = max(self.worst_cut, compose(self.trunc, rel, cut))
        drift = 0.0
        if residual > 0 and claimed.any():
            B, _, _ = self.lay.shifted()
            Bz = B @ z
            drift = 2 * residual * float((Bz[claimed] / z[claimed]).max())
        return compose(rho, self.trunc, rel, cut, self.absolute / floor, drift, UNIT)


def _neumann(apply, z: np.ndarray, mu: float, floor: float, qn: float) -> tuple[float, float]:
    r"""Relative and absolute parts of :math:`S = \sum_{r \ge 1} A^r (\mu z)`.

    ``apply(v)`` returns an upper bound of :math:`A v` for a nonnegative operator
    ``A`` of 1-norm at most ``qn``.  If :math:`A \mu z \le \delta z + e` (``e`` on
    the entries where the ratio exceeds :data:`_TRUNC_REL`), then
    :math:`S \le (\delta z + \sum_{r \ge 0} A^r e)/(1 - \delta)`; the relative part
    is :math:`\mu\delta/(1-\delta)` (the exact state is at least :math:`z/\mu`), the
    absolute part the 1-norm of the rest, summed until it falls below
    :math:`2^{-80}` ``floor`` and closed with the geometric remainder.
    """
    w = apply(z * mu)
    ratio = np.full(z.size, np.inf)
    pos = z > 0
    ratio[pos] = w[pos] / z[pos]
    rel = ratio <= _TRUNC_REL
    delta = float(ratio[rel].max(initial=0.0))
    cur = np.where(rel, 0.0, w)
    total = float(cur.sum())
    for _ in range(64):
        if cur.sum() <= 2.0**-80 * floor:
            break
        cur = apply(cur)
        total += float(cur.sum())
    rest = float(cur.sum()) * qn / (1 - qn) if qn < 1 else math.inf
    return delta / (1 - delta) * mu, (total + rest) / (1 - delta)


def _run(lay: Layout, x0: np.ndarray, times: np.ndarray, floor: float, boost: int):
    """States (p, size) and bounds (p,) of the grid walk; the walk itself."""
    walk = _Walk(lay, x0, floor, boost)
    h, delta, residual, in_place = _grid(times)
    p = times.size
    X = np.empty((p, lay.size))
    bound = np.zeros(p)
    for k in range(p):
        if h[k] > 0:
            walk.step(float(h[k]))
        z, rel, absolute = walk.xh, 0.0, 0.0
        if delta[k] > 0:
            z, rel, absolute = walk.correct(float(delta[k]), in_place)
        X[k] = z
        if times[k] > 0:
            bound[k] = walk.bound(z, rel, absolute, float(residual[k]))
    return X, bound, walk


def propagate_blocks(K, c0, times, feed, *, K_low=None, feed_low=None, floor=None):
    """Grid propagation of a large scheme, block by block (see the module docstring).

    Parameters
    ----------
    K : scipy.sparse matrix or ndarray, shape (n, n)
        Rate matrix [1/s] (already checked by :mod:`kinetics.engine.propagate`).
    c0 : ndarray, shape (n,)
        Initial concentrations [conc], >= 0.
    times : ndarray, shape (p,)
        Times [s], >= 0, nondecreasing.
    feed : ndarray, shape (n,), or None
        Zero-order feed [conc/s].
    K_low : scipy.sparse matrix or ndarray, shape (n, n), optional
        Low-order parts: the exact rate matrix is ``K + K_low`` (in particular the
        diagonal, minus the sum of the outflow constants, to double-double).
    feed_low : ndarray, shape (n,), optional
        Low-order parts of the feed (exact feed ``feed + feed_low``).
    floor : float, optional
        Concentrations [conc] above which the bound holds (default
        :data:`kinetics.propagate.TINY`).

    Returns
    -------
    (ndarray (p, n), ndarray (p,))
        Concentrations (all >= 0) and, per time, a bound on the relative error of
        every concentration above ``floor`` against the exact solution for
        ``K + K_low``, ``c0`` and ``feed``.

    The many small tile products run with one BLAS thread: threaded BLAS on
    tiles this small spends its time synchronising (measured on the 2,000-species
    chain: 4.9 s with two OpenBLAS threads, 0.9 s with one).
    """
    from kinetics.engine.threads import one_blas_thread

    if floor is None:
        from kinetics.engine.plan import TINY as floor
    with one_blas_thread():
        K_low, feed_low = _low_parts(K_low, feed_low, K.shape[0], feed is not None)
        return _propagate(K, c0, times, feed, K_low, feed_low, float(floor))


def _low_parts(K_low, feed_low, n: int, fed: bool):
    """Checked low parts of the rate matrix and the feed.

    A sparse ``K_low`` is kept sparse (shape, finite); the others are checked by
    :func:`kinetics.checks.low_parts`.
    """
    from kinetics.engine import checks
    from kinetics.errors import ConcentrationError, RateMatrixError

    if K_low is not None:
        K_low = checks.low_parts(K_low, (n, n), "K_low", RateMatrixError, keep_sparse=True)
    if feed_low is not None and fed:
        feed_low = checks.low_parts(feed_low, (n,), "feed_low", ConcentrationError)
    return K_low, feed_low if fed else None


def _augmented(K, K_low, c0, feed, feed_low):
    """Rate matrix (CSR), low parts and start vector with the feed as a species of value 1."""
    K = scipy.sparse.csr_array(K, dtype=float)
    low = None if K_low is None else scipy.sparse.csr_array(K_low, dtype=float)
    x = np.asarray(c0, dtype=float).copy()
    if feed is None or not np.any(feed):
        return K, low, x
    n = K.shape[0]
    fr = np.flatnonzero(feed)
    coo = K.tocoo()
    K = scipy.sparse.csr_array(
        (np.r_[coo.data, feed[fr]], (np.r_[coo.row, fr], np.r_[coo.col, np.full(fr.size, n)])),
        shape=(n + 1, n + 1),
    )
    if low is not None or feed_low is not None:
        lc = scipy.sparse.coo_array((n, n)) if low is None else low.tocoo()
        fl = np.zeros(n) if feed_low is None else np.asarray(feed_low, dtype=float)
        lr = np.flatnonzero(fl)
        low = scipy.sparse.csr_array(
            (np.r_[lc.data, fl[lr]], (np.r_[lc.row, lr], np.r_[lc.col, np.full(lr.size, n)])),
            shape=(n + 1, n + 1),
        )
    return K, low, np.append(x, 1.0)


def _propagate(K, c0, times, feed, K_low, feed_low, floor):
    n = K.shape[0]
    K, K_low, x = _augmented(K, K_low, c0, feed, feed_low)
    top = float(x[:n].max(initial=0.0))
    if x.size > n and times.size:
        top = max(top, float(np.max(feed)) * float(times[-1]), 1e-300)
    scale = math.ldexp(1.0, -math.frexp(top)[1]) if top > 0 else 1.0
    xs = x * scale
    p = times.size
    out = np.zeros((p, n))
    bound = np.zeros(p)
    lay = Layout(K, K_low, xs)
    if lay.size and p:
        for boost in (1, 2, 4, 8, 16):
            # more Taylor terms while truncation (a posteriori) is a visible share
            X, bound, walk = _run(lay, xs, times, floor * scale, boost)
            if walk.worst_cut <= 2.0**-50:
                break
        keep = lay.species < n
        out[:, lay.species[keep]] = np.maximum(X[:, keep], 0.0) / scale
    out[times == 0.0] = c0
    bound[times == 0.0] = 0.0
    return out, bound


def route_costs(K, times, precision: str = "auto") -> dict[str, float]:
    r"""Predicted seconds of the dense engine and of the block route.

    Parameters
    ----------
    K : scipy.sparse matrix or ndarray, shape (n, n)
        Rate matrix [1/s].
    times : ndarray
        The grid [s] (its last value and its length).
    precision : str
        The dense engine's arithmetic: ``"double"`` costs it :data:`RATES`
        ``["double"]`` of the double-double figure; otherwise double-double.

    Returns
    -------
    dict
        ``{"dense": seconds, "blocks": seconds}`` from operation counts times
        :data:`RATES`:

        * dense: :math:`n^3 (2\\sqrt{m} + j + \\log_2 p)` double-double multiply-adds
          (Paterson-Stockmeyer Taylor sum, squarings, doubling over the grid);
        * blocks, for every block of :math:`b \\ge 2` species with :math:`z` nonzeros:
          Horner :math:`m (b^2 + z b)`, its truncation check :math:`(m+1) z b`,
          squarings :math:`(j+1) b^3` and per step :math:`2b^2` double-double
          multiply-adds; for the whole scheme :math:`j\\,n^3/6` BLAS multiply-adds of
          squarings (a full lower triangle: an upper bound, a chain fills a band),
          :math:`m\\,\\mathrm{nnz}\\,n/2` for the column Taylor sum, and per step
          :math:`n^2/2` for the coupling, :math:`(m+1)(\\mathrm{nnz}+n)` for the
          truncation bound and the interpreter's overhead; plus the set-up.
    """
    n = K.shape[0]
    most = _dense_most(n, len(times))
    if most < RATES["fixed"]:
        return {"dense": most, "blocks": math.inf}
    t = np.asarray(times, dtype=float)
    positive = t[t > 0]
    if positive.size == 0:
        return {"dense": 0.0, "blocks": math.inf}
    p = positive.size
    h = float(positive.max()) / p
    sigma = float(max(-K.diagonal().min(initial=0.0), 0.0))
    j, m, y = taylor_plan(sigma, h, 1)
    dense = RATES["dd"] * RATES["dense"] * n**3 * (2 * math.sqrt(m) + j + math.log2(p + 1))
    if precision == "double":
        dense *= RATES["double"]
    b, z, nnz = block_sizes(K)
    mb = dd_degree(y) + 10
    dd = RATES["dd"] * float(np.sum(mb * (b**2 + z * b) + (j + 1) * b**3 + 2 * p * b**2))
    dd += RATES["blas"] * float(np.sum((mb + 1) * z * b))
    step = RATES["step"] + RATES["gemv"] * n**2 / 2 + RATES["scatter"] * (m + 1) * (nnz + n)
    blocks = (RATES["fixed"] + dd + RATES["blas"] * j * n**3 / 6
              + RATES["scatter"] * m * nnz * n / 2 + p * step)  # fmt: skip
    return {"dense": dense, "blocks": blocks}


def block_sizes(K) -> tuple[np.ndarray, np.ndarray, float]:
    """Sizes of the strongly connected blocks of ``K``, and its number of nonzeros.

    ``b`` is the number of species and ``z`` the inner nonzeros of each block of two or
    more species; the count of nonzeros is of ``K`` itself (dense or sparse).

    They depend on the pattern only and are remembered for :data:`PATTERN_CACHE`
    patterns: finding the blocks costs more than a small scheme's whole solve.

    Examples
    --------
    >>> import numpy as np
    >>> K = np.array([[-1.0, 2.0, 0.0], [1.0, -2.0, 0.0], [0.0, 0.0, -3.0]])
    >>> b, z, nnz = block_sizes(K)
    >>> b.tolist(), z.tolist(), nnz
    ([2.0], [4.0], 5.0)
    """
    if scipy.sparse.issparse(K):
        K = scipy.sparse.csr_array(K, copy=True)
        K.sum_duplicates()
        index = np.int64  # one index type, so that equal patterns give equal keys
        key = (
            b"s"
            + K.shape[0].to_bytes(4, "little")
            + K.indptr.astype(index).tobytes()
            + K.indices.astype(index).tobytes()
        )
    else:
        K = np.asarray(K)
        key = b"d" + K.shape[0].to_bytes(4, "little") + np.packbits(K != 0).tobytes()
    return remembered(_BLOCK_SIZES, key, lambda: _block_sizes(K))


def _block_sizes(K) -> tuple[np.ndarray, np.ndarray, float]:
    from scipy.sparse.csgraph import connected_components

    K = scipy.sparse.csr_array(K)
    count, labels = connected_components(K, directed=True, connection="strong")
    b = np.bincount(labels, minlength=count).astype(float)
    coo = K.tocoo()
    inside = labels[coo.row] == labels[coo.col]
    z = np.bincount(labels[coo.row[inside]], minlength=count).astype(float)
    big = b > 1
    b, z = b[big], z[big]
    b.flags.writeable = z.flags.writeable = False  # shared by every caller
    return b, z, float(coo.nnz)


_BLOCK_SIZES: dict[bytes, tuple[np.ndarray, np.ndarray, float]] = {}


def _dense_most(n: int, points: int) -> float:
    """Most the dense engine can cost [s]: 64 squarings and degree 400 (no look at K)."""
    return RATES["dd"] * RATES["dense"] * n**3 * (2 * 20 + 64 + math.log2(points + 1))


def prefers_blocks(K, times, precision: str = "auto") -> bool:
    """Whether the block route is predicted cheaper than the dense engine (:func:`route_costs`).

    A scheme so small that the dense engine costs less than the block route's set-up
    whatever its constants is decided from its size alone (a few microseconds).
    """
    if _dense_most(K.shape[0], len(times)) < RATES["fixed"]:
        return False
    cost = route_costs(K, times, precision)
    return cost["blocks"] < cost["dense"]
