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
  (:func:`kinetics._block_kernels.column_taylor`); its columns fill the *panels*
  (one dense panel per tile of columns, from the tile's first row down to the last
  row with a nonzero), and the squarings are panel products in BLAS.
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
* No entry is dropped; entries below :data:`FLUSH` (:math:`2^{-1060}`) are set to
  zero so that BLAS does not run into subnormal numbers (about 300 times slower).

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
``benchmarks/calibrate_routes.py``); :mod:`kinetics.propagate` takes the cheaper.

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

__all__ = [
    "FLUSH",
    "RATES",
    "TILE",
    "block_order",
    "prefers_blocks",
    "propagate_blocks",
    "route_costs",
]

#: Target width of a tile of columns (a block wider than this is a tile of its own).
TILE = 128
#: Entries of the panels below this are set to zero (no subnormal numbers in BLAS).
FLUSH = 2.0**-1060
#: Target norm of the scaled matrix Y in the Taylor phase.
YMAX = 8.0
_U = 2.0**-53
_EPS_SINGLE = 2.0**-96  # double-double exponential of a scalar (conservative)
_TRUNC_REL = 2.0**-40  # a truncation bound above this fraction of an entry is absolute

#: Seconds per operation, one thread, measured by ``benchmarks/calibrate_routes.py``
#: on the machine kind this project is developed on (2 cores, AVX-512, OpenBLAS):
#: a double-double multiply-add of the dense engine's products (``dd``), a
#: multiply-add of a BLAS panel product (``blas``) and of a matrix-vector product
#: (``gemv``), a multiply-add of the column Taylor sum (``scatter``); ``fixed`` is
#: the block route's set-up (components, tiles, plans), ``step`` its interpreter
#: overhead per time step, ``dense`` the number of full products the dense engine
#: spends per Taylor degree ``sqrt(m)``, squaring and doubling step and ``double``
#: its cost in plain double relative to double-double (both fitted to its measured
#: times on random sparse schemes of 100-400 species).
RATES = {"dd": 1.3e-9, "blas": 3.0e-11, "gemv": 1.5e-10, "scatter": 5.0e-10,
         "fixed": 0.015, "step": 2.0e-4, "dense": 0.55, "double": 0.2}  # fmt: skip


def _gamma(k: float) -> float:
    return k * _U / (1.0 - k * _U)


def _compose(*eps: float) -> float:
    """``prod(1 + e_i) - 1``, accurate for tiny ``e_i`` and rounded up (margin 2^-40)."""
    total = math.fsum(math.log1p(e) for e in eps)
    return math.expm1(total) * (1 + 2.0**-40) if total < 700 else math.inf


def _power(eps: float, k: float) -> float:
    """``(1 + eps)^k - 1``, accurate for tiny ``eps`` and rounded up."""
    total = k * math.log1p(eps)
    return math.expm1(total) * (1 + 2.0**-40) if total < 700 else math.inf


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


def _reachable(src, dst, n: int, seeds: np.ndarray) -> np.ndarray:
    """Mask of the species reachable (along ``src -> dst``) from the ``seeds`` mask."""
    from scipy.sparse.csgraph import breadth_first_order

    start = np.flatnonzero(seeds)
    # a virtual species n that feeds every seed
    rows = np.r_[src, np.full(start.size, n)]
    cols = np.r_[dst, start]
    adj = scipy.sparse.csr_array((np.ones(rows.size), (rows, cols)), shape=(n + 1, n + 1))
    found = breadth_first_order(adj, n, directed=True, return_predecessors=False)
    mask = np.zeros(n + 1, dtype=bool)
    mask[found] = True
    return mask[:n]


class _Layout:
    """Species in block order, blocks, tiles and path lengths of one scheme.

    Built from the (augmented) rate matrix ``K`` (CSR, n x n), its low parts
    ``K_low`` (or None) and the scaled start vector ``x0``.  Only species
    reachable from a nonzero start value take part; ``species[p]`` is the
    original index of position ``p``.
    """

    def __init__(self, K, K_low, x0: np.ndarray) -> None:
        from kinetics.network import condensation

        n = K.shape[0]
        coo = K.tocoo()
        off = (coo.row != coo.col) & (coo.data != 0)
        keep = np.flatnonzero(_reachable(coo.col[off], coo.row[off], n, x0 > 0))
        Kr = K[keep][:, keep].tocoo()
        off = Kr.row != Kr.col
        comps = condensation(Kr.col[off], Kr.row[off], keep.size)
        members = [comps.members[c] for c in comps.order]
        local = np.concatenate(members) if members else np.zeros(0, dtype=int)
        self.species = keep[local]
        self.size = self.species.size
        sizes = np.array([b.size for b in members], dtype=np.int64)
        self.starts = np.r_[0, np.cumsum(sizes)].astype(np.int64)
        self.block_of = np.repeat(np.arange(sizes.size), sizes)
        self.first = self.starts[self.block_of]
        self.crossings = self._crossings(comps, x0[self.species])
        self.bounds = self._tiles(sizes)
        self.tile_of = np.searchsorted(self.bounds, np.arange(self.size), side="right") - 1
        perm = self.species
        self.K = scipy.sparse.csr_array(K[perm][:, perm])
        self.K_low = None if K_low is None else scipy.sparse.csr_array(K_low[perm][:, perm])
        self._outflows()
        N = self.K if self.K_low is None else self.K + self.K_low
        N = scipy.sparse.csr_array(N - scipy.sparse.diags_array(N.diagonal()))
        N.eliminate_zeros()
        self.N = N  # the formation rates (off-diagonal), nonnegative
        sigma = float(self.qh.max(initial=0.0))
        if np.any(self.ql[self.qh == sigma] > 0):
            sigma = float(np.nextafter(sigma, np.inf))
        self.sigma = sigma  # at least every outflow q_i (exactly)
        self._shifted = None
        single = sizes == 1
        self.singles = self.starts[:-1][single]
        pairs = zip(self.starts[:-1].tolist(), sizes.tolist(), strict=True)
        self.groups = [(s, z) for s, z in pairs if z > 1]

    def shifted(self):
        """``B = N + diag(sigma - q)`` (CSC, nonnegative, diagonal rounded up), its 1-norm
        and its largest number of nonzeros in a row."""
        if self._shifted is None:
            d = self.sigma - self.qh
            z = d - self.sigma
            err = (self.sigma - (d - z)) + (-self.qh - z) - self.ql
            diag = np.nextafter(d + err, np.inf)  # >= sigma - q_i
            B = scipy.sparse.csc_array(self.N + scipy.sparse.diags_array(np.maximum(diag, 0.0)))
            B.sort_indices()
            beta = float(np.asarray(B.sum(axis=0)).max(initial=0.0)) * (1 + 4 * _U)
            rows = int(np.bincount(B.indices, minlength=1).max(initial=1))
            B.indptr = B.indptr.astype(np.int64)
            B.indices = B.indices.astype(np.int64)
            self._shifted = (B, beta, rows)
        return self._shifted

    def _crossings(self, comps, x0p: np.ndarray) -> np.ndarray:
        """Longest path, in block crossings, from a block holding a start value."""
        nb = len(comps.order)
        rank = np.empty(nb, dtype=np.int64)
        rank[np.array(comps.order, dtype=np.int64)] = np.arange(nb)
        seeded = np.zeros(nb, dtype=bool)
        seeded[self.block_of[x0p > 0]] = True
        depth = np.full(nb, -1, dtype=np.int64)
        for c in comps.order:
            r = rank[c]
            best = 0 if seeded[r] else -1
            for pred in comps.predecessors[c]:
                best = max(best, depth[rank[pred]] + 1)
            depth[r] = best
        return depth[self.block_of]

    def _tiles(self, sizes: np.ndarray) -> np.ndarray:
        """Tile bounds along block bounds, each tile about :data:`TILE` wide."""
        bounds = [0]
        width = 0
        for z in sizes.tolist():
            if width and width + z > TILE:
                bounds.append(bounds[-1] + width)
                width = 0
            width += z
        if width:
            bounds.append(bounds[-1] + width)
        return np.array(bounds, dtype=np.int64)

    def _outflows(self) -> None:
        """Outflow q_i = -(K_ii + K_low_ii) as a double-double pair (qh, ql)."""
        dh = -self.K.diagonal()
        dl = np.zeros_like(dh) if self.K_low is None else -self.K_low.diagonal()
        hi = dh + dl
        z = hi - dh
        self.qh = hi
        self.ql = (dh - (hi - z)) + (dl - z)  # Knuth's TwoSum
        # column sums of K (growth when positive) for the norm of F
        colsum = np.asarray(self.K.sum(axis=0)).ravel()
        if self.K_low is not None:
            colsum = colsum + np.asarray(self.K_low.sum(axis=0)).ravel()
        self.growth = max(0.0, float(colsum.max(initial=0.0))) * (1 + 4 * _U)


def _taylor_plan(sigma: float, h: float, boost: int) -> tuple[int, int, float]:
    """Squarings ``j``, Taylor degree ``m`` and ``y = sigma h / 2^j``.

    ``m`` is the smallest degree with :math:`2^j y^{m+1}/(m+1)! \\le 2^{-70}` (the
    a posteriori truncation bound :math:`2^j G`, see the module docstring), times
    ``boost`` (raised when that bound asks for more).
    """
    beta = sigma * h
    j = max(0, math.ceil(math.log2(beta / YMAX))) if beta > 0 else 0
    y = math.ldexp(beta, -j)
    m = 2
    target = -(70 + j) * math.log(2.0)
    while (m + 1) * math.log(max(y, 1e-300)) - math.lgamma(m + 2) > target:
        m += 1
    return j, max(2, m * boost), y


class _Interval:
    """:math:`F = e^{hK}` of a layout, its pieces for stepping and its bounds.

    Attributes used by the grid walk: ``off`` (panels with the diagonal blocks
    zeroed), ``dh``/``dl`` (exact decay factors of single-species blocks),
    ``groups`` (double-double diagonal blocks of larger ones), ``hop`` (relative
    error per block crossing), ``eta`` (double-double error of the diagonal blocks
    per step), ``squarings``, and the truncation operator (``Y``, ``m``).
    """

    def __init__(self, lay: _Layout, h: float, boost: int = 1) -> None:
        self.lay = lay
        self.h = h
        sigma = float(lay.qh.max(initial=0.0))
        at_max = lay.qh == sigma
        if np.any(lay.ql[at_max] > 0):
            sigma = float(np.nextafter(sigma, np.inf))
        self.sigma = sigma
        self.squarings, self.m, _ = _taylor_plan(sigma, h, boost)
        self.scale = 2.0**self.squarings
        tau = math.ldexp(h, -self.squarings)
        self.Y = self._scaled(sigma, h, self.squarings)
        self.indptr = self.Y.indptr.astype(np.int64)
        self.indices = self.Y.indices.astype(np.int64)
        y1 = float(np.asarray(self.Y.sum(axis=0)).max(initial=0.0)) * (1 + 4 * _U)
        # ||G||_1 <= y1^(m+1) / (m+1)!  (G = Y^(m+1) / (m+1)!, the truncation operator)
        self.gnorm = math.exp((self.m + 1) * math.log(max(y1, 1e-300)) - math.lgamma(self.m + 2))
        eh, _ = _dd_scalar_exp(sigma, tau)
        panels, ops = self._taylor(eh)
        levels = self._diagonal_levels(h)
        self._overwrite(panels, levels[0])
        for level in levels[1:]:
            panels = _square(panels, lay.bounds)
            self._overwrite(panels, level)
        self.panels = panels
        self.off = [p.copy() for p in panels]
        self._overwrite(self.off, None)
        last = levels[-1]
        self.dh, self.dl = last["dh"], last["dl"]
        self.groups = last["groups"]
        self._bounds(levels, ops)

    def _scaled(self, sigma: float, h: float, j: int):
        """``Y = fl(h (K + K_low + sigma I)) / 2^j`` in CSC form (exact diagonal shift)."""
        lay = self.lay
        coo = lay.K.tocoo()
        vals = coo.data.copy()
        if lay.K_low is not None:
            low = lay.K_low.tocoo()
            extra = scipy.sparse.csr_array((low.data, (low.row, low.col)), shape=lay.K.shape)
            vals = vals + extra[coo.row, coo.col]
        off = coo.row != coo.col
        n = lay.size
        # sigma - q_i in double-double (TwoSum), then times h, rounded once
        s = sigma - lay.qh
        z = s - sigma
        err = (sigma - (s - z)) + (-lay.qh - z) - lay.ql
        diag = s * h + err * h
        rows = np.r_[coo.row[off], np.arange(n)]
        cols = np.r_[coo.col[off], np.arange(n)]
        data = np.r_[vals[off] * h, diag]
        Y = scipy.sparse.csc_array((np.ldexp(data, -j), (rows, cols)), shape=(n, n))
        Y.sum_duplicates()
        Y.sort_indices()
        return Y

    def _taylor(self, factor: float):
        """Panels of ``factor * T_m(Y)`` (column tiles; rows from the tile start)."""
        from kinetics import _block_kernels as bk

        lay, Y = self.lay, self.Y
        indptr, indices = self.indptr, self.indices
        reach = np.empty(lay.size, dtype=np.int64)
        bk.reach_within(indptr, indices, self.m, reach)
        panels = []
        ops = 0
        for J in range(lay.bounds.size - 1):
            b0, b1 = int(lay.bounds[J]), int(lay.bounds[J + 1])
            end = int(reach[b0:b1].max()) + 1
            if end == b1 and (b0, b1 - b0) in lay.groups:
                # one block and nothing downstream: the panel is its exact diagonal block
                panels.append(np.zeros((b1 - b0, b1 - b0)))
                continue
            out = np.empty((end - b0, b1 - b0))
            V, W = np.zeros_like(out), np.zeros_like(out)
            alive = np.empty(end - b0, dtype=np.bool_)
            bk.column_taylor(indptr, indices, Y.data, b0, self.m, factor, out, V, W, alive)
            out[out < FLUSH] = 0.0
            panels.append(_trim(out))
            ops += out.size
        return panels, ops

    def _diagonal_levels(self, h: float) -> list[dict]:
        """Exact diagonal blocks of ``exp(h 2^(i-j) K)`` for ``i = 0 .. j``."""
        from kinetics import _block_kernels as bk

        lay, j = self.lay, self.squarings
        s = lay.singles
        groups = [_group_levels(lay, start, size, h, j) for start, size in lay.groups]
        levels = []
        for i in range(j + 1):
            t = math.ldexp(h, i - j)
            dh = np.zeros(lay.size)
            dl = np.zeros(lay.size)
            oh, ol = np.empty(s.size), np.empty(s.size)
            bk.singleton_exponentials(lay.qh[s], lay.ql[s], t, oh, ol)
            dh[s], dl[s] = oh, ol
            eps = max([_EPS_SINGLE] + [g[i][2] for g in groups])
            pairs = zip(lay.groups, groups, strict=True)
            blocks = [(start, g[i][0], g[i][1]) for (start, _), g in pairs]
            levels.append({"dh": dh, "dl": dl, "groups": blocks, "eps": eps})
        return levels

    def _overwrite(self, panels: list, level: dict | None) -> None:
        """Diagonal blocks of the panels set to ``level`` (zero when None)."""
        lay = self.lay
        s = lay.singles
        tiles = lay.tile_of[s]
        for J in np.unique(tiles).tolist():
            p = s[tiles == J]
            loc = p - lay.bounds[J]
            value = 0.0 if level is None else level["dh"][p]
            if level is not None:
                value = np.where(value < FLUSH, 0.0, value)
            panels[J][loc, loc] = value
        for k, (start, size) in enumerate(lay.groups):
            J = lay.tile_of[start]
            a = start - lay.bounds[J]
            if level is None:
                panels[J][a : a + size, a : a + size] = 0.0
            else:
                blk = level["groups"][k][1]
                panels[J][a : a + size, a : a + size] = np.where(blk < FLUSH, 0.0, blk)

    def _bounds(self, levels: list[dict], taylor_ops: int) -> None:
        """Per-crossing error ``hop``, per-step ``eta`` and absolute ``absolute``."""
        lay, m = self.lay, self.m
        n = lay.size
        d = int(np.bincount(self.Y.indices, minlength=1).max(initial=1))
        width = int(np.diff(lay.bounds).max(initial=1))
        nt = lay.bounds.size - 1
        e0 = _compose(
            _power(_compose(_gamma(d), _U), m),  # terms: a sum of d products, / k
            _gamma(m + 1),  # the terms summed
            _power(3 * _U, m),  # Y rounded (relative 3u per entry)
            3 * _U,  # the factor exp(-sigma tau) and its product
        )
        gsq = _compose(_gamma(width), _gamma(nt))
        c = e0
        # absolute error (1-norm per unit column) of F: underflow and flushing
        tiny = 2.0**-1075
        absolute = n * (m * (d + 1) * tiny + FLUSH)
        for i in range(self.squarings):
            c = _compose(c, _U + levels[i]["eps"], gsq)
            g = (1 + c) * math.exp(lay.growth * self.tau_of(i))
            absolute = 2 * g * absolute + n * (n * tiny + FLUSH)
        self.hop = _compose(c, gsq, _U)
        groups_max = max([size for _, size in lay.groups], default=1)
        self.eta = _compose(levels[-1]["eps"], (groups_max**2 + groups_max + 4) * DD_UNIT,
                            4 * DD_UNIT)  # fmt: skip
        self.absolute = absolute
        # underflow of a step's products (coupling, double-double diagonal): fixed amount
        self.fixed = n * (width * nt + 16 + groups_max) * tiny
        self.norm = (1 + c) * math.exp(lay.growth * self.tau_of(self.squarings))
        self.taylor_ops = taylor_ops

    def apply_truncation(self, v: np.ndarray) -> np.ndarray:
        """Upper bound of :math:`2^j G v`, :math:`G = Y^{m+1}/(m+1)!` (nonnegative ``v``)."""
        from kinetics import _block_kernels as bk

        out, work = np.empty(v.size), np.empty(v.size)
        bk.power_apply(self.indptr, self.indices, self.Y.data, v, self.m + 1,
                       self.scale * 1.01, out, work)  # fmt: skip
        return out

    def tau_of(self, level: int) -> float:
        """The interval of level ``level`` of the squarings [s]."""
        return math.ldexp(self.h, level - self.squarings)


def _trim(P: np.ndarray, keep: int | None = None) -> np.ndarray:
    """Panel without its trailing zero rows (at least ``keep`` rows, default its width)."""
    keep = P.shape[1] if keep is None else keep
    rows = np.flatnonzero(P[keep:].any(axis=1))
    end = keep + (int(rows[-1]) + 1 if rows.size else 0)
    return P if end == P.shape[0] else P[:end].copy()


def _square(panels: list, bounds: np.ndarray) -> list:
    """``F F`` for a block lower triangular ``F`` stored as column panels.

    Each panel of the result is a sum of BLAS products accumulated in place
    (``dgemm`` with ``beta = 1`` on the transposes, which are Fortran-ordered views).
    """
    from scipy.linalg.blas import dgemm

    nt = bounds.size - 1
    ends = [int(bounds[J]) + panels[J].shape[0] for J in range(nt)]
    out = []
    for J in range(nt):
        PJ = panels[J]
        b0, eJ = int(bounds[J]), ends[J]
        last = int(np.searchsorted(bounds, eJ, side="left"))  # tiles L in [J, last)
        end = max(ends[J:last])
        R = np.zeros((end - b0, PJ.shape[1]))
        for L in range(J, last):
            r0 = int(bounds[L]) - b0
            r1 = min(int(bounds[L + 1]), eJ) - b0
            PL = panels[L]
            if r1 - r0 < PL.shape[1]:
                PL = PL[:, : r1 - r0]
            part = R[r0 : r0 + PL.shape[0]]
            res = dgemm(1.0, PJ[r0:r1].T, PL.T, beta=1.0, c=part.T, overwrite_c=True)
            if not np.shares_memory(res, part):  # scipy had to copy: write back
                part[...] = res.T
        R[R < FLUSH] = 0.0
        out.append(_trim(R))
    return out


def _dd_scalar_exp(sigma: float, t: float) -> tuple[float, float]:
    """``exp(-sigma t)`` as a double-double pair."""
    from kinetics import _block_kernels as bk

    oh, ol = np.empty(1), np.empty(1)
    bk.singleton_exponentials(np.array([sigma]), np.zeros(1), t, oh, ol)
    return float(oh[0]), float(ol[0])


def _dd_block(lay: _Layout, start: int, size: int, h: float, j: int):
    """Shift, ``Y = h 2^-j (K_bb + sigma_b I)`` in double-double, and ``y = ||Y||_1``."""
    from kinetics import _block_kernels as bk

    sl = slice(start, start + size)
    Ah = lay.K[sl, sl].toarray()
    Al = np.zeros_like(Ah) if lay.K_low is None else lay.K_low[sl, sl].toarray()
    qh, ql = lay.qh[sl], lay.ql[sl]
    sigma = float(qh.max())
    if np.any(ql[qh == sigma] > 0):
        sigma = float(np.nextafter(sigma, np.inf))
    # off-diagonal pairs normalised (TwoSum), diagonal sigma - q in double-double
    s = Ah + Al
    z = s - Ah
    Bh, Bl = s, (Ah - (s - z)) + (Al - z)
    d = sigma - qh
    z = d - sigma
    e = (sigma - (d - z)) + (-qh - z) - ql
    idx = np.arange(size)
    Bh[idx, idx] = d + e
    Bl[idx, idx] = e - ((d + e) - d)
    bk.dd_scale(Bh, Bl, h, 0.0)
    Yh, Yl = np.ldexp(Bh, -j), np.ldexp(Bl, -j)
    return sigma, Yh, Yl, float(np.abs(Yh).sum(axis=0).max()) * (1 + 4 * _U)


def _dd_degree(y: float) -> int:
    """Smallest ``m >= 2`` with :math:`y^{m+1}/(m+1)! \\le 2^{-110}`."""
    m = 2
    while (m + 1) * math.log(max(y, 1e-300)) - math.lgamma(m + 2) > -110 * math.log(2.0):
        m += 1
    return m


def _group_levels(lay: _Layout, start: int, size: int, h: float, j: int) -> list:
    """``exp(h 2^(i-j) K_bb)`` (hi, lo, relative bound) for ``i = 0..j``, double-double.

    Horner's rule for the Taylor polynomial with the block's own shift, then
    squarings.  Truncation: :math:`e^Y - T_m \\le G e^Y` with :math:`G = Y^{m+1}/(m+1)!`;
    with :math:`\\kappa_T = \\max (G T)_{ab}/T_{ab}` (in double, on the computed
    polynomial) the relative truncation is at most :math:`2\\kappa_T` for
    :math:`\\kappa_T \\le 1/8`, and :math:`2^i` times that after ``i`` squarings.
    Rounding: Xue & Ye (2013), Theorem 3.2, with the double-double product bound.
    """
    from scipy.sparse.csgraph import shortest_path

    from kinetics import _block_kernels as bk
    from kinetics import _kernels

    sigma, Yh, Yl, y = _dd_block(lay, start, size, h, j)
    flag = np.bool_(True)
    gdd = (size * size + size + 4) * DD_UNIT
    # every entry of exp(Y) is positive (one block): the degree reaches every entry
    hops = shortest_path(scipy.sparse.csr_array(Yh != 0), unweighted=True)
    # degree: the scalar remainder below 2^-110, plus the longest shortest path (an
    # entry reached in p steps sees the remainder of degree m - p)
    m = int(hops.max()) + _dd_degree(y)
    for _attempt in range(6):
        Th, Tl = np.zeros((size, size)), np.zeros((size, size))
        bk.dd_add_identity(Th, Tl)
        Ph, Pl = np.empty_like(Th), np.empty_like(Th)
        for k in range(m, 0, -1):
            _kernels.product(Yh, Yl, Th, Tl, Ph, Pl, flag)
            bk.dd_divide(Ph, Pl, k)
            bk.dd_add_identity(Ph, Pl)
            Th, Tl, Ph, Pl = Ph, Pl, Th, Tl
        kappa = _kappa(Yh, Th, m)
        if kappa <= 2.0**-100:
            break
        m *= 2
    eh, el = _dd_scalar_exp(sigma, math.ldexp(h, -j))
    bk.dd_scale(Th, Tl, eh, el)
    eps = _compose(m * (gdd + 4 * DD_UNIT), _power(3 * DD_UNIT, m), 4 * DD_UNIT)
    trunc = 2 * kappa if kappa <= 0.125 else 1.0
    out = [(Th, Tl, _compose(eps, trunc))]
    for i in range(1, j + 1):
        Fh, Fl = np.empty_like(Th), np.empty_like(Th)
        _kernels.product(Th, Tl, Th, Tl, Fh, Fl, flag)
        eps = 2 * eps + eps * eps + gdd * (1 + eps) ** 2
        out.append((Fh, Fl, _compose(eps, min(1.0, 2.0**i * trunc))))
        Th, Tl = Fh, Fl
    return out


def _kappa(Yh: np.ndarray, Th: np.ndarray, m: int) -> float:
    """``max (Y^{m+1} T / (m+1)!)_{ab} / T_{ab}`` over entries above ``2^-1000``.

    Infinite when an entry below that has ``(G T)_{ab} > 2^{-1040}`` (not negligible).
    """
    Ys = scipy.sparse.csr_array(Yh)
    G = Th.copy()
    for k in range(1, m + 2):
        G = (Ys @ G) / k
    G *= 1.0 + 8 * (m + 2) * Yh.shape[0] * _U  # rounding of this estimate
    big = Th > 2.0**-1000
    if np.any(G[~big] > 2.0**-1040):
        return math.inf
    return float((G[big] / Th[big]).max(initial=0.0))


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
    from kinetics import _kernels

    p = times.size
    h, delta, residual = np.zeros(p), np.zeros(p), np.zeros(p)
    first = int(np.searchsorted(times, 0.0, side="right"))
    rest = times[first:]
    dt = -1.0
    if rest.size >= 3:
        tol = 4 * _U * float(rest[-1])
        dt = _kernels.uniform_step(np.ascontiguousarray(rest), tol)
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

    def __init__(self, lay: _Layout, x0: np.ndarray, floor: float, boost: int) -> None:
        self.lay = lay
        self.floor = floor
        self.boost = boost
        self.cache: dict[float, _Interval] = {}
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
        from kinetics import _block_kernels as bk

        if h not in self.cache:
            self.cache[h] = _Interval(self.lay, h, self.boost)
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
        self.eta = _compose(self.eta, iv.eta)
        self.hop = max(self.hop, iv.hop)
        self.sigma = max(self.sigma, iv.sigma)
        self._truncation(iv)

    def _group_step(self, start, size, Fh, Fl, coupling, nh, nl) -> None:
        from kinetics import _block_kernels as bk
        from kinetics import _kernels

        sl = slice(start, start + size)
        oh, ol = np.empty((size, 1)), np.empty((size, 1))
        _kernels.product(Fh, Fl, self.xh[sl, None].copy(), self.xl[sl, None].copy(), oh, ol,
                         np.bool_(True))  # fmt: skip
        one = np.ones(size)
        idx = np.arange(size)
        bk.scale_diagonal(one, np.zeros(size), oh[:, 0].copy(), ol[:, 0].copy(),
                          coupling[sl].copy(), idx, nh[sl], nl[sl])  # fmt: skip

    def _truncation(self, iv: _Interval) -> None:
        """Compose the a posteriori truncation bound of the step just taken (:func:`_neumann`)."""
        lam = int(self.lay.crossings.max(initial=0))
        mu = (1 + _compose(_power(self.hop, lam), self.eta)) * (1 + 4 * _U)
        qn = iv.scale * 1.01 * iv.gnorm
        rel, absolute = _neumann(iv.apply_truncation, self.xh, mu, self.floor, qn)
        self.trunc = _compose(self.trunc, rel)
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
        from kinetics import _block_kernels as bk

        lay = self.lay
        B, beta, rows = lay.shifted()
        m = 1
        while (m + 1) * math.log(max(d * beta, 1e-300)) - math.lgamma(m + 2) > -80 * math.log(2.0):
            m += 1
        delta = np.empty(lay.size)
        bk.taylor_apply(B.indptr, B.indices, B.data, self.xh, m, d, delta)
        ch, cl = _dd_scalar_exp(lay.sigma, d)
        one = np.ones(lay.size)
        yh, yl = np.empty(lay.size), np.empty(lay.size)
        bk.scale_diagonal(one * ch, one * cl, self.xh, self.xl, delta * ch,
                          np.arange(lay.size), yh, yl)  # fmt: skip
        pos = yh > 0
        ratio = float((delta[pos] / yh[pos]).max(initial=0.0))
        # per term: a sum of `rows` products, B rounded (u), the factor d and / k (2u)
        eps = _compose(_power(_compose(_gamma(rows), 4 * _U), m), _gamma(m), _U)
        rounding = _compose(eps * ratio * (1 + 4 * _U), 8 * DD_UNIT)
        scale = d ** (m + 1) * 1.01
        qn = scale * math.exp((m + 1) * math.log(max(beta, 1e-300)) - math.lgamma(m + 2))

        def apply(v):
            out, work = np.empty(v.size), np.empty(v.size)
            bk.power_apply(B.indptr, B.indices, B.data, v, m + 1, scale, out, work)
            return out

        mu = 1 + 2 * rounding + 4 * _U
        trunc, absolute = _neumann(apply, yh, mu, self.floor, qn)
        if not in_place:
            return yh, _compose(rounding, trunc), absolute
        self.xh, self.xl = yh, yl
        self.eta = _compose(self.eta, rounding)
        self.trunc = _compose(self.trunc, trunc)
        self.cut += absolute
        return yh, 0.0, 0.0

    def bound(self, z: np.ndarray, rel: float, absolute: float, residual: float) -> float:
        """Relative bound of every entry of the state at a grid time whose exact value is
        above the floor.

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
        rho = _compose(_power(self.hop, lam), self.eta)
        cut = (self.cut + absolute) / floor
        self.worst_cut = max(self.worst_cut, _compose(self.trunc, rel, cut))
        drift = 0.0
        if residual > 0 and claimed.any():
            B, _, _ = self.lay.shifted()
            Bz = B @ z
            drift = 2 * residual * float((Bz[claimed] / z[claimed]).max())
        return _compose(rho, self.trunc, rel, cut, self.absolute / floor, drift, _U)


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


def _run(lay: _Layout, x0: np.ndarray, times: np.ndarray, floor: float, boost: int):
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


def propagate_blocks(K, c0, times, feed, *, K_low=None, floor=None):
    """Grid propagation of a large scheme, block by block (see the module docstring).

    Parameters
    ----------
    K : scipy.sparse matrix or ndarray, shape (n, n)
        Rate matrix [1/s] (already checked by :mod:`kinetics.propagate`).
    c0 : ndarray, shape (n,)
        Initial concentrations [conc], >= 0.
    times : ndarray, shape (p,)
        Times [s], >= 0, nondecreasing.
    feed : ndarray, shape (n,), or None
        Zero-order feed [conc/s].
    K_low : scipy.sparse matrix or ndarray, shape (n, n), optional
        Low-order parts: the exact rate matrix is ``K + K_low`` (in particular the
        diagonal, minus the sum of the outflow constants, to double-double).
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
    from threadpoolctl import threadpool_limits

    if floor is None:
        from kinetics.propagate import TINY as floor
    with threadpool_limits(limits=1, user_api="blas"):
        return _propagate(K, c0, times, feed, K_low, float(floor))


def _augmented(K, K_low, c0, feed):
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
    if low is not None:
        low = scipy.sparse.csr_array(scipy.sparse.block_diag([low, np.zeros((1, 1))]))
    return K, low, np.append(x, 1.0)


def _propagate(K, c0, times, feed, K_low, floor):
    n = K.shape[0]
    K, K_low, x = _augmented(K, K_low, c0, feed)
    top = float(x[:n].max(initial=0.0))
    if x.size > n and times.size:
        top = max(top, float(np.max(feed)) * float(times[-1]), 1e-300)
    scale = math.ldexp(1.0, -math.frexp(top)[1]) if top > 0 else 1.0
    xs = x * scale
    p = times.size
    out = np.zeros((p, n))
    bound = np.zeros(p)
    lay = _Layout(K, K_low, xs)
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
    from scipy.sparse.csgraph import connected_components

    n = K.shape[0]
    most = _dense_most(n, len(times))
    if most < RATES["fixed"]:
        return {"dense": most, "blocks": math.inf}
    t = np.asarray(times, dtype=float)
    positive = t[t > 0]
    if positive.size == 0:
        return {"dense": 0.0, "blocks": math.inf}
    K = scipy.sparse.csr_array(K)
    p = positive.size
    h = float(positive.max()) / p
    sigma = float(max(-K.diagonal().min(initial=0.0), 0.0))
    jd, md, _ = _taylor_plan(sigma, h, 1)
    dense = RATES["dd"] * RATES["dense"] * n**3 * (2 * math.sqrt(md) + jd + math.log2(p + 1))
    if precision == "double":
        dense *= RATES["double"]
    count, labels = connected_components(K, directed=True, connection="strong")
    b = np.bincount(labels, minlength=count).astype(float)
    coo = K.tocoo()
    inside = labels[coo.row] == labels[coo.col]
    z = np.bincount(labels[coo.row[inside]], minlength=count).astype(float)
    j, m, y = _taylor_plan(sigma, h, 1)
    big = b > 1
    b, z = b[big], z[big]
    mb = _dd_degree(y) + 10
    dd = RATES["dd"] * float(np.sum(mb * (b**2 + z * b) + (j + 1) * b**3 + 2 * p * b**2))
    dd += RATES["blas"] * float(np.sum((mb + 1) * z * b))
    nnz = float(K.nnz)
    step = RATES["step"] + RATES["gemv"] * n**2 / 2 + RATES["scatter"] * (m + 1) * (nnz + n)
    blocks = (RATES["fixed"] + dd + RATES["blas"] * j * n**3 / 6
              + RATES["scatter"] * m * nnz * n / 2 + p * step)  # fmt: skip
    return {"dense": dense, "blocks": blocks}


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
