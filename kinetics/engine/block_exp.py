r"""The exponential of one interval for the block route (private).

:class:`Layout` holds a scheme in block order (strongly connected components of
the species reachable from the start, topologically sorted, in tiles of columns);
:class:`Interval` computes :math:`F = e^{hK}` on it as described in
:mod:`kinetics.engine.blocks` (column Taylor sum, exact diagonal blocks, panel squarings)
together with the parts of the certificate that belong to one interval: the error
per block crossing, the double-double error of the diagonal blocks per step, the
absolute (underflow, flushing) part and the truncation operator
:math:`2^j Y^{m+1}/(m+1)!`.

References
----------
J. Xue, Q. Ye, Math. Comp. 82, 1577-1596 (2013) (shift, Taylor, squaring; Theorem
3.2 for the rounding of squarings).
T. Ogita, S. M. Rump, S. Oishi, SIAM J. Sci. Comput. 26, 1955-1988 (2005)
(double-double products).
"""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse

from kinetics import _doubledouble as dd
from kinetics._doubledouble import DD_UNIT

__all__ = [
    "FLUSH",
    "TILE",
    "UNIT",
    "YMAX",
    "Interval",
    "Layout",
    "components",
    "compose",
    "dd_degree",
    "dd_scalar_exp",
    "gamma",
    "power",
    "taylor_plan",
]

#: Target width of a tile of columns (a block wider than this is a tile of its own).
TILE = 128
#: Entries of the panels below this are set to zero (no subnormal numbers in BLAS).
FLUSH = 2.0**-1060
#: Target norm of the scaled matrix Y in the Taylor phase.
YMAX = 8.0
#: Unit roundoff of double.
UNIT = 2.0**-53
_EPS_SINGLE = 2.0**-96  # double-double exponential of a scalar (conservative)


def gamma(k: float) -> float:
    """The usual bound :math:`k u / (1 - k u)` of ``k`` roundings, ``u`` the unit roundoff."""
    return k * UNIT / (1.0 - k * UNIT)


def compose(*eps: float) -> float:
    """``prod(1 + e_i) - 1``, accurate for tiny ``e_i`` and rounded up (margin 2^-40)."""
    total = math.fsum(math.log1p(e) for e in eps)
    return math.expm1(total) * (1 + 2.0**-40) if total < 700 else math.inf


def power(eps: float, k: float) -> float:
    """``(1 + eps)^k - 1``, accurate for tiny ``eps`` and rounded up."""
    total = k * math.log1p(eps)
    return math.expm1(total) * (1 + 2.0**-40) if total < 700 else math.inf


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


def components(src, dst, n: int) -> tuple[list[np.ndarray], tuple[np.ndarray, np.ndarray]]:
    """Strongly connected components in topological order and the edges between them.

    Returns the members of each component (upstream first) and the distinct edges
    ``(source rank, target rank)`` between components, sorted by source.  scipy's
    labels usually come in (reverse) topological order already; when they do not,
    the order is :func:`kinetics.network.condensation`'s.
    """
    from scipy.sparse.csgraph import connected_components

    adj = scipy.sparse.csr_array((np.ones(src.size), (src, dst)), shape=(n, n))
    count, labels = connected_components(adj, directed=True, connection="strong")
    a, b = labels[src], labels[dst]
    cross = a != b
    a, b = a[cross], b[cross]
    if np.all(a > b):
        rank = count - 1 - np.arange(count)  # label count-1 first
    elif np.all(a < b):
        rank = np.arange(count)
    else:
        from kinetics.network import condensation

        comps = condensation(src, dst, n)
        labels = comps.labels
        a, b = labels[src][cross], labels[dst][cross]
        rank = np.empty(count, dtype=np.int64)
        rank[np.array(comps.order, dtype=np.int64)] = np.arange(count)
    by_rank = np.argsort(rank[labels], kind="stable")
    sizes = np.bincount(rank[labels], minlength=count)
    members = np.split(by_rank, np.cumsum(sizes)[:-1]) if count else []
    pairs = np.unique(np.stack([rank[a], rank[b]]), axis=1) if a.size else np.zeros((2, 0), int)
    return members, (pairs[0], pairs[1])


class Layout:
    """Species in block order, blocks, tiles and path lengths of one scheme.

    Built from the (augmented) rate matrix ``K`` (CSR, n x n), its low parts
    ``K_low`` (or None) and the scaled start vector ``x0``.  Only species
    reachable from a nonzero start value take part; ``species[p]`` is the
    original index of position ``p``.
    """

    def __init__(self, K, K_low, x0: np.ndarray) -> None:
        n = K.shape[0]
        coo = K.tocoo()
        off = (coo.row != coo.col) & (coo.data != 0)
        keep = np.flatnonzero(_reachable(coo.col[off], coo.row[off], n, x0 > 0))
        Kr = K[keep][:, keep].tocoo()
        off = (Kr.row != Kr.col) & (Kr.data != 0)
        members, edges = components(Kr.col[off], Kr.row[off], keep.size)
        local = np.concatenate(members) if members else np.zeros(0, dtype=int)
        self.species = keep[local]
        self.size = self.species.size
        sizes = np.array([b.size for b in members], dtype=np.int64)
        self.starts = np.r_[0, np.cumsum(sizes)].astype(np.int64)
        self.block_of = np.repeat(np.arange(sizes.size), sizes)
        self.first = self.starts[self.block_of]
        self.crossings = self._crossings(edges, x0[self.species])
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
        self._shifted: tuple[scipy.sparse.csc_array, float, int] | None = None  # see shifted
        single = sizes == 1
        self.singles = self.starts[:-1][single]
        pairs = zip(self.starts[:-1].tolist(), sizes.tolist(), strict=True)
        self.groups = [(s, z) for s, z in pairs if z > 1]

    def shifted(self) -> tuple[scipy.sparse.csc_array, float, int]:
        """The shifted matrix ``B = N + diag(sigma - q)``, its 1-norm and its widest row.

        ``B`` is CSC, nonnegative, its diagonal rounded up; the widest row is the largest
        number of nonzeros in a row.  Made once and kept.
        """
        if self._shifted is None:
            dh, _ = dd.add(self.sigma, 0.0, -self.qh, -self.ql)
            diag = np.nextafter(dh, np.inf)  # >= sigma - q_i (|lo| <= ulp(hi) / 2)
            B = scipy.sparse.csc_array(self.N + scipy.sparse.diags_array(np.maximum(diag, 0.0)))
            B.sort_indices()
            beta = float(np.asarray(B.sum(axis=0)).max(initial=0.0)) * (1 + 4 * UNIT)
            rows = int(np.bincount(B.indices, minlength=1).max(initial=1))
            B.indptr = B.indptr.astype(np.int64)
            B.indices = B.indices.astype(np.int64)
            self._shifted = (B, beta, rows)
        return self._shifted

    def _crossings(self, edges, x0p: np.ndarray) -> np.ndarray:
        """Longest path, in block crossings, from a block holding a start value."""
        nb = self.starts.size - 1
        depth = np.full(nb, -1, dtype=np.int64)
        depth[self.block_of[x0p > 0]] = 0
        src, dst = edges
        for a, b in zip(src.tolist(), dst.tolist(), strict=True):  # sorted by source
            if depth[a] + 1 > depth[b]:
                depth[b] = depth[a] + 1
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
        self.qh, self.ql = dd.two_sum(dh, dl)
        # column sums of K (growth when positive) for the norm of F
        colsum = np.asarray(self.K.sum(axis=0)).ravel()
        if self.K_low is not None:
            colsum = colsum + np.asarray(self.K_low.sum(axis=0)).ravel()
        self.growth = max(0.0, float(colsum.max(initial=0.0))) * (1 + 4 * UNIT)


def taylor_plan(sigma: float, h: float, boost: int) -> tuple[int, int, float]:
    r"""Squarings ``j``, Taylor degree ``m`` and ``y = sigma h / 2^j``.

    ``m`` is the smallest degree with :math:`2^j y^{m+1}/(m+1)! \le 2^{-70}` (the
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


class Interval:
    """:math:`F = e^{hK}` of a layout, its pieces for stepping and its bounds.

    Attributes used by the grid walk: ``off`` (panels with the diagonal blocks
    zeroed), ``dh``/``dl`` (exact decay factors of single-species blocks),
    ``groups`` (double-double diagonal blocks of larger ones), ``hop`` (relative
    error per block crossing), ``eta`` (double-double error of the diagonal blocks
    per step), ``squarings``, and the truncation operator (``Y``, ``m``).
    """

    def __init__(self, lay: Layout, h: float, boost: int = 1) -> None:
        self.lay = lay
        self.h = h
        sigma = float(lay.qh.max(initial=0.0))
        at_max = lay.qh == sigma
        if np.any(lay.ql[at_max] > 0):
            sigma = float(np.nextafter(sigma, np.inf))
        self.sigma = sigma
        self.squarings, self.m, _ = taylor_plan(sigma, h, boost)
        self.scale = 2.0**self.squarings
        tau = math.ldexp(h, -self.squarings)
        self.Y = self._scaled(sigma, h, self.squarings)
        self.indptr = self.Y.indptr.astype(np.int64)
        self.indices = self.Y.indices.astype(np.int64)
        y1 = float(np.asarray(self.Y.sum(axis=0)).max(initial=0.0)) * (1 + 4 * UNIT)
        # ||G||_1 <= y1^(m+1) / (m+1)!  (G = Y^(m+1) / (m+1)!, the truncation operator)
        self.gnorm = math.exp((self.m + 1) * math.log(max(y1, 1e-300)) - math.lgamma(self.m + 2))
        eh, _ = dd_scalar_exp(sigma, tau)
        panels, ops = self._taylor(eh)
        levels = self._diagonal_levels(h)
        self._overwrite(panels, levels[0])
        for level in levels[1:]:
            panels = square(panels, lay.bounds)
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
        # sigma - q_i in double-double, then times h (rounded once or twice)
        sh, sl = dd.add(sigma, 0.0, -lay.qh, -lay.ql)
        diag = sh * h + sl * h
        rows = np.r_[coo.row[off], np.arange(n)]
        cols = np.r_[coo.col[off], np.arange(n)]
        data = np.r_[vals[off] * h, diag]
        Y = scipy.sparse.csc_array((np.ldexp(data, -j), (rows, cols)), shape=(n, n))
        Y.sum_duplicates()
        Y.sort_indices()
        return Y

    def _taylor(self, factor: float):
        """Panels of ``factor * T_m(Y)`` (column tiles; rows from the tile start)."""
        from kinetics.engine import block_kernels as bk

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
        from kinetics.engine import block_kernels as bk

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
        e0 = compose(
            power(compose(gamma(d), UNIT), m),  # terms: a sum of d products, / k
            gamma(m + 1),  # the terms summed
            power(3 * UNIT, m),  # Y rounded (relative 3u per entry)
            3 * UNIT,  # the factor exp(-sigma tau) and its product
        )
        gsq = compose(gamma(width), gamma(nt))
        c = e0
        # absolute error (1-norm per unit column) of F: underflow and flushing
        tiny = 2.0**-1075
        absolute = n * (m * (d + 1) * tiny + FLUSH)
        for i in range(self.squarings):
            c = compose(c, UNIT + levels[i]["eps"], gsq)
            g = (1 + c) * math.exp(lay.growth * self.tau_of(i))
            absolute = 2 * g * absolute + n * (n * tiny + FLUSH)
        self.hop = compose(c, gsq, UNIT)
        groups_max = max([size for _, size in lay.groups], default=1)
        self.eta = compose(levels[-1]["eps"], (groups_max**2 + groups_max + 4) * DD_UNIT,
                            4 * DD_UNIT)  # fmt: skip
        self.absolute = absolute
        # underflow of a step's products (coupling, double-double diagonal): fixed amount
        self.fixed = n * (width * nt + 16 + groups_max) * tiny
        self.norm = (1 + c) * math.exp(lay.growth * self.tau_of(self.squarings))
        self.taylor_ops = taylor_ops

    def apply_truncation(self, v: np.ndarray) -> np.ndarray:
        """Upper bound of :math:`2^j G v`, :math:`G = Y^{m+1}/(m+1)!` (nonnegative ``v``)."""
        from kinetics.engine import block_kernels as bk

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


def square(panels: list, bounds: np.ndarray) -> list:
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


def dd_scalar_exp(sigma: float, t: float) -> tuple[float, float]:
    """``exp(-sigma t)`` as a double-double pair."""
    from kinetics.engine import block_kernels as bk

    oh, ol = np.empty(1), np.empty(1)
    bk.singleton_exponentials(np.array([sigma]), np.zeros(1), t, oh, ol)
    return float(oh[0]), float(ol[0])


def _dd_block(lay: Layout, start: int, size: int, h: float, j: int):
    """Shift, ``Y = h 2^-j (K_bb + sigma_b I)`` in double-double, and ``y = ||Y||_1``."""
    sl = slice(start, start + size)
    Ah = lay.K[sl, sl].toarray()
    Al = np.zeros_like(Ah) if lay.K_low is None else lay.K_low[sl, sl].toarray()
    qh, ql = lay.qh[sl], lay.ql[sl]
    sigma = float(qh.max())
    if np.any(ql[qh == sigma] > 0):
        sigma = float(np.nextafter(sigma, np.inf))
    # off-diagonal pairs normalised, diagonal sigma - q in double-double, times h
    Bh, Bl = dd.two_sum(Ah, Al)
    idx = np.arange(size)
    Bh[idx, idx], Bl[idx, idx] = dd.add(sigma, 0.0, -qh, -ql)
    Bh, Bl = dd.product(Bh, Bl, h, 0.0)
    Yh, Yl = np.ldexp(Bh, -j), np.ldexp(Bl, -j)
    return sigma, Yh, Yl, float(np.abs(Yh).sum(axis=0).max()) * (1 + 4 * UNIT)


def dd_degree(y: float) -> int:
    r"""Smallest ``m >= 2`` with :math:`y^{m+1}/(m+1)! \le 2^{-110}`."""
    m = 2
    while (m + 1) * math.log(max(y, 1e-300)) - math.lgamma(m + 2) > -110 * math.log(2.0):
        m += 1
    return m


def _group_levels(lay: Layout, start: int, size: int, h: float, j: int) -> list:
    r"""``exp(h 2^(i-j) K_bb)`` (hi, lo, relative bound) for ``i = 0..j``, double-double.

    Horner's rule for the Taylor polynomial with the block's own shift, then
    squarings.  Truncation: :math:`e^Y - T_m \le G e^Y` with :math:`G = Y^{m+1}/(m+1)!`;
    with :math:`\kappa_T = \max (G T)_{ab}/T_{ab}` (in double, on the computed
    polynomial) the relative truncation is at most :math:`2\kappa_T` for
    :math:`\kappa_T \le 1/8`, and :math:`2^i` times that after ``i`` squarings.
    Rounding: Xue & Ye (2013), Theorem 3.2, with the double-double product bound.
    """
    from scipy.sparse.csgraph import shortest_path

    from kinetics.engine import block_kernels as bk
    from kinetics.engine import kernels

    sigma, Yh, Yl, y = _dd_block(lay, start, size, h, j)
    flag = np.bool_(True)
    gdd = (size * size + size + 4) * DD_UNIT
    # every entry of exp(Y) is positive (one block): the degree reaches every entry
    hops = shortest_path(scipy.sparse.csr_array(Yh != 0), unweighted=True)
    # degree: the scalar remainder below 2^-110, plus the longest shortest path (an
    # entry reached in p steps sees the remainder of degree m - p)
    m = int(hops.max()) + dd_degree(y)
    for _attempt in range(6):
        Th, Tl = np.zeros((size, size)), np.zeros((size, size))
        bk.dd_add_identity(Th, Tl)
        Ph, Pl = np.empty_like(Th), np.empty_like(Th)
        for k in range(m, 0, -1):
            kernels.product(Yh, Yl, Th, Tl, Ph, Pl, flag)
            bk.dd_divide(Ph, Pl, k)
            bk.dd_add_identity(Ph, Pl)
            Th, Tl, Ph, Pl = Ph, Pl, Th, Tl
        kappa = _kappa(Yh, Th, m)
        if kappa <= 2.0**-100:
            break
        m *= 2
    eh, el = dd_scalar_exp(sigma, math.ldexp(h, -j))
    Th, Tl = dd.product(Th, Tl, eh, el)
    eps = compose(m * (gdd + 4 * DD_UNIT), power(3 * DD_UNIT, m), 4 * DD_UNIT)
    trunc = 2 * kappa if kappa <= 0.125 else 1.0
    out = [(Th, Tl, compose(eps, trunc))]
    for i in range(1, j + 1):
        Fh, Fl = np.empty_like(Th), np.empty_like(Th)
        kernels.product(Th, Tl, Th, Tl, Fh, Fl, flag)
        eps = 2 * eps + eps * eps + gdd * (1 + eps) ** 2
        out.append((Fh, Fl, compose(eps, min(1.0, 2.0**i * trunc))))
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
    G *= 1.0 + 8 * (m + 2) * Yh.shape[0] * UNIT  # rounding of this estimate
    big = Th > 2.0**-1000
    if np.any(G[~big] > 2.0**-1040):
        return math.inf
    return float((G[big] / Th[big]).max(initial=0.0))
