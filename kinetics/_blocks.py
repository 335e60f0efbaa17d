r"""Block-triangular propagation of large sparse schemes (private).

The species graph (edge :math:`j \to i` when :math:`k_{ij} > 0`) is condensed
into its strongly connected components; in a topological order of the
condensation the rate matrix is block lower triangular, and so is its
exponential.  The permuted matrix is cut into square tiles along that order and
only tiles that carry a nonzero are stored, so a decay-like chain of thousands of
species costs a few banded tile products instead of dense ones.

The exponential of one interval, :math:`F = e^{hK}`, is computed with the same
nonnegative shift-Taylor-square algorithm as the dense engine (Xue & Ye 2013),
in plain double precision, on the tile-sparse matrix:

.. math::

    F = \left(e^{-\sigma h/2^j}\, T_m\!\left(\tfrac{h}{2^j}(K + \sigma I)\right)
        \right)^{2^j},

with the Taylor polynomial evaluated by Paterson-Stockmeyer.  Entries that
fall below ``DROP`` (1e-150) are dropped after each product; this keeps the band
of the tiles bounded, and it is why entries below about 1e-150 are not resolved
on this route (README, Limits of the method).  The time grid is then walked with sparse products
:math:`c_{k+1} = F c_k` (nonnegative, so relative errors only add up).

References
----------
J. Xue, Q. Ye, "Computing exponentials of essentially non-negative matrices
entrywise to high relative accuracy", Math. Comp. 82, 1577-1596 (2013).
doi:10.1090/S0025-5718-2012-02677-2
R. Tarjan, "Depth-first search and linear graph algorithms", SIAM J. Comput.
1, 146-160 (1972) (strongly connected components; networkx implementation).
"""

from __future__ import annotations

import math

import numpy as np
import scipy.sparse

from kinetics.network import condensation

__all__ = ["block_order", "expm_blocks", "propagate_blocks"]

TILE = 128
DROP = 1e-150
_U = 2.0**-53


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
    K = scipy.sparse.coo_array(K)
    n = K.shape[0]
    off = (K.row != K.col) & (K.data != 0)
    # species j feeds species i when k_ij > 0; components (scipy) in topological order
    comps = condensation(K.col[off], K.row[off], n)
    blocks = [comps.members[c].tolist() for c in comps.order]
    order = np.array([i for b in blocks for i in b], dtype=int)
    return order, blocks


class _Tiles:
    """Square matrix stored as a dict of dense tiles ``(I, J) -> ndarray``."""

    def __init__(self, bounds: np.ndarray, tiles: dict | None = None) -> None:
        self.bounds = bounds  # tile I covers rows bounds[I]:bounds[I+1]
        self.tiles: dict[tuple[int, int], np.ndarray] = tiles if tiles is not None else {}

    @property
    def nt(self) -> int:
        return len(self.bounds) - 1

    @classmethod
    def from_sparse(cls, S, bounds):
        coo = scipy.sparse.coo_array(S)
        out = cls(bounds)
        nt = len(bounds) - 1
        ti = np.searchsorted(bounds, coo.row, side="right") - 1
        tj = np.searchsorted(bounds, coo.col, side="right") - 1
        key = ti * nt + tj
        orderk = np.argsort(key, kind="stable")
        key, ti, tj = key[orderk], ti[orderk], tj[orderk]
        rows, cols, vals = coo.row[orderk], coo.col[orderk], coo.data[orderk]
        starts = np.flatnonzero(np.r_[True, key[1:] != key[:-1]]) if key.size else []
        ends = np.r_[starts[1:], key.size] if key.size else []
        for a, b in zip(starts, ends, strict=True):
            i, j = int(ti[a]), int(tj[a])
            blk = np.zeros((bounds[i + 1] - bounds[i], bounds[j + 1] - bounds[j]))
            np.add.at(blk, (rows[a:b] - bounds[i], cols[a:b] - bounds[j]), vals[a:b])
            if blk.any():
                out.tiles[(i, j)] = blk
        return out

    @classmethod
    def identity(cls, bounds, scale: float = 1.0):
        out = cls(bounds)
        for i in range(len(bounds) - 1):
            w = bounds[i + 1] - bounds[i]
            out.tiles[(i, i)] = np.eye(w) * scale
        return out

    def matmul(self, other: _Tiles) -> _Tiles:
        by_row: dict[int, list[tuple[int, np.ndarray]]] = {}
        for (l_, j), blk in other.tiles.items():
            by_row.setdefault(l_, []).append((j, blk))
        out: dict[tuple[int, int], np.ndarray] = {}
        for (i, l_), a in self.tiles.items():
            for j, b in by_row.get(l_, ()):
                prod = a @ b
                key = (i, j)
                if key in out:
                    out[key] += prod
                else:
                    out[key] = prod
        res = _Tiles(self.bounds, out)
        res.drop()
        return res

    def iadd(self, other: _Tiles) -> _Tiles:
        """``self += other`` in place (returns self)."""
        for k, v in other.tiles.items():
            if k in self.tiles:
                self.tiles[k] += v
            else:
                self.tiles[k] = v.copy()
        return self

    def scale(self, alpha: float) -> _Tiles:
        return _Tiles(self.bounds, {k: v * alpha for k, v in self.tiles.items()})

    def drop(self) -> None:
        for k in list(self.tiles):
            v = self.tiles[k]
            v[v < DROP] = 0.0
            if not v.any():
                del self.tiles[k]

    def to_csr(self, n: int):
        rows, cols, vals = [], [], []
        for (i, j), v in self.tiles.items():
            r, c = np.nonzero(v)
            rows.append(r + self.bounds[i])
            cols.append(c + self.bounds[j])
            vals.append(v[r, c])
        if not rows:
            return scipy.sparse.csr_array((n, n))
        return scipy.sparse.csr_array(
            (np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))), shape=(n, n)
        )

    def max_row_nnz(self) -> int:
        cnt = np.zeros(self.nt, dtype=int)
        for i, _j in self.tiles:
            cnt[i] += 1
        return int(cnt.max(initial=1)) * TILE


def _drop_csr(S):
    """Remove entries below ``DROP`` from a nonnegative CSR matrix (in place)."""
    S = scipy.sparse.csr_array(S)
    S.data[S.data < DROP] = 0.0
    S.eliminate_zeros()
    return S


def _scaled_inverse_factorials(m: int, rho: float) -> np.ndarray:
    """``rho**k / k!`` for ``k = 0..m``, correctly rounded (via :mod:`decimal`)."""
    from decimal import Context, Decimal

    ctx = Context(prec=40, Emin=-999999, Emax=999999)
    out = np.empty(m + 1)
    v = Decimal(1)
    r = Decimal(rho)
    for k in range(m + 1):
        if k:
            v = ctx.divide(ctx.multiply(v, r), Decimal(k))
        out[k] = float(v)
    return out


def _plan_double(beta: float, n: int):
    """Squarings and Paterson-Stockmeyer split for a double-precision target."""
    from kinetics.propagate import _plan

    # large y: Taylor products of narrow bands are cheap, squarings are not
    return _plan(beta, n, "double", _U / 2, ymax=64.0, square_cost=8.0)


def expm_blocks(Kp, h: float) -> tuple[scipy.sparse.csr_array, float]:
    """``exp(h Kp)`` of a (permuted, block lower triangular) sparse matrix.

    Parameters
    ----------
    Kp : scipy.sparse matrix, shape (n, n)
        Essentially nonnegative rate matrix [1/s] in block order.
    h : float
        Interval [s], > 0.

    Returns
    -------
    (csr_array, float)
        The nonnegative exponential and its componentwise relative rounding
        bound (Xue & Ye 2013, Theorem 3.2, with the row length of the tiles).
    """
    from kinetics.propagate import _rounding_bound

    Kp = scipy.sparse.csr_array(Kp, dtype=float)
    n = Kp.shape[0]
    bounds = np.unique(np.r_[np.arange(0, n, TILE), n])
    diag = Kp.diagonal()
    sigma = float(-diag.min()) if n else 0.0
    B = Kp + sigma * scipy.sparse.eye_array(n, format="csr")
    beta = max(float(abs(B).sum(axis=0).max()), abs(sigma)) * h
    plan = _plan_double(beta, n)
    scale = 2.0**-plan.j
    # Taylor polynomial in Z = Y / rho with coefficients rho^k / k! (Y = rho Z);
    # rho a power of two near ||Y||_1, so neither Z^k nor the coefficients leave
    # the range of doubles for degrees of a few hundred
    y = beta * scale
    rho = 2.0 ** math.ceil(math.log2(y)) if y > 0 else 1.0
    # the Taylor phase multiplies narrow bands: sparse CSR products are cheap
    Z = scipy.sparse.csr_array(B * (h * scale / rho))
    s, r = plan.ps, plan.pr
    coef = _scaled_inverse_factorials(plan.degree, rho)
    pw = [scipy.sparse.eye_array(n, format="csr"), Z]
    for _ in range(2, s + 1):
        pw.append(_drop_csr(pw[-1] @ Z))
    ys = pw[s]

    def block(i):
        acc = float(coef[i * s]) * pw[0]
        for l_ in range(1, s):
            acc = acc + float(coef[i * s + l_]) * pw[l_]
        return acc

    Tc = block(r)
    for i in range(r - 1, -1, -1):
        Tc = _drop_csr(Tc @ ys + block(i))
    T = _Tiles.from_sparse(Tc, bounds)
    T = T.scale(math.exp(-sigma * h * scale))
    T.drop()
    for _ in range(plan.j):
        T = T.matmul(T)
    width = min(n, T.max_row_nnz())
    return T.to_csr(n), _rounding_bound(beta, width, plan, _U)


def propagate_blocks(K, c0, times, feed):
    """Grid propagation of a large scheme through :func:`expm_blocks`.

    Parameters are those of :func:`kinetics.propagate.propagate` (already
    checked).  Returns ``(concentrations (p, n), error_bound (p,))``.

    The many small tile products run with one BLAS thread: threaded BLAS on
    tiles this small spends its time synchronising (measured on the
    2,000-species chain: 4.9 s with two OpenBLAS threads, 0.9 s with one).
    """
    from threadpoolctl import threadpool_limits

    with threadpool_limits(limits=1, user_api="blas"):
        return _propagate_blocks(K, c0, times, feed)


def _propagate_blocks(K, c0, times, feed):
    K = scipy.sparse.csr_array(K, dtype=float)
    n = K.shape[0]
    if feed is not None:
        coo = K.tocoo()
        fr = np.nonzero(feed)[0]
        K = scipy.sparse.csr_array(
            (
                np.r_[coo.data, feed[fr]],
                (np.r_[coo.row, fr], np.r_[coo.col, np.full(fr.size, n)]),
            ),
            shape=(n + 1, n + 1),
        )
        x = np.append(c0, 1.0)
    else:
        x = c0.astype(float).copy()
    N = K.shape[0]
    order, _ = block_order(K)
    inv = np.empty_like(order)
    inv[order] = np.arange(N)
    Kp = K[order][:, order]
    xp = x[order]
    p = times.size
    out = np.zeros((p, n))
    bound = np.zeros(p)
    cache: dict[float, tuple] = {}
    t_prev = 0.0
    cur = 0.0
    from kinetics.propagate import _uniform_step

    first = int(np.searchsorted(times, 0.0, side="right"))
    dt = _uniform_step(times[first:]) if p - first >= 3 else None
    for k in range(p):
        hstep = times[k] - t_prev
        if dt is not None and k > first:
            hstep = dt  # uniform grid: one exponential for every step
        if hstep > 0:
            if hstep not in cache:
                cache[hstep] = expm_blocks(Kp, hstep)
            F, eps = cache[hstep]
            xp = F @ xp
            width = max(1, int(np.diff(F.indptr).max(initial=1)))
            cur += eps + width * _U / (1 - width * _U)
        full = xp[inv]
        out[k] = full[:n]
        bound[k] = cur + (_U if hstep > 0 or k else 0.0)
        t_prev = times[k]
    out[times == 0.0] = c0
    return np.maximum(out, 0.0), bound
