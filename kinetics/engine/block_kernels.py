r"""Compiled loops of the block-triangular route (private; numba).

:mod:`kinetics.engine.blocks` keeps the plans, the tiles and the error bounds; the loops
that touch every nonzero of a large sparse scheme live here:

* :func:`column_taylor` -- the Taylor polynomial
  :math:`\sum_{k \le m} Y^k e_b / k!` of a nonnegative sparse matrix, one column
  at a time (a scatter of the sparse column structure; no fill-in beyond the
  reachable rows);
* :func:`power_apply` -- :math:`c\,Y^{p} v / p!` for the a posteriori truncation
  bound;
* :func:`reach_within` -- the last row reachable in at most ``m`` steps;
* :func:`singleton_exponentials`, :func:`scale_diagonal` -- exact (double-double)
  decay factors :math:`e^{-q_i t}` of species that form a block of their own and the
  product of a double-double state with them;
* :func:`dd_divide`, :func:`dd_add_identity` -- the two elementwise double-double
  steps of a Horner evaluation on a small dense block;
* :func:`taylor_apply` -- :math:`\sum_{k=1}^m (sY)^k v/k!` for a short correction step.

The double-double primitives (TwoProduct, TwoSum, the exponential) are those of
:mod:`kinetics.engine.kernels`; the rules of that module hold here too (strict IEEE, no
``fastmath``, ``cache=True``, ``nogil=True``, no slice assignments in kernels).

All operands are nonnegative, so a sum of ``d`` products carries a relative
rounding error of at most :math:`\gamma_d = d u / (1 - d u)` in any order.
"""

from __future__ import annotations

import numpy as np
from numba import njit

from kinetics.engine.kernels import KERNEL, dd_exp, two_prod, two_sum


@njit(**KERNEL)
def reach_within(indptr, indices, steps, reach):
    """``reach[b]``: the largest row reachable from column ``b`` in at most ``steps``.

    ``indptr``/``indices``: the CSC pattern of an (n, n) matrix.  ``reach`` is
    written (n,); each step costs one pass over the pattern.
    """
    n = reach.shape[0]
    cur = np.empty(n, dtype=np.int64)
    for b in range(n):
        reach[b] = b
    for _ in range(steps):
        changed = False
        for b in range(n):
            cur[b] = reach[b]
        for b in range(n):
            r = cur[b]
            for p in range(indptr[b], indptr[b + 1]):
                c = cur[indices[p]]
                if c > r:
                    r = c
            if r > reach[b]:
                reach[b] = r
                changed = True
        if not changed:
            break


@njit(**KERNEL)
def column_taylor(indptr, indices, data, col0, m, factor, out, V, W, alive):
    r"""``out[:, c] = factor * sum_{k<=m} Y^k e_b / k!`` for ``b = col0 + c``.

    ``Y`` (n, n) nonnegative in CSC form (``indptr``, ``indices``, ``data``), block
    lower triangular with the blocks aligned to the tile of columns
    ``col0 .. col0 + cols``, so that no row above ``col0`` is ever reached.
    ``out`` (rows, cols) holds rows ``col0 ..`` of the result; it must cover every
    row reachable in ``m`` steps.  ``V``, ``W`` (rows, cols) and ``alive`` (rows,)
    are scratch, ``V`` and ``W`` zero on entry and on return.

    All columns of the tile advance together (the innermost loop runs over the
    columns, contiguous in memory).  Term ``k`` is ``fl(fl(Y v_{k-1}) / k)``: an
    entry whose row has ``d`` nonzeros carries a relative error of at most
    :math:`\gamma_d + u` per term; the terms are summed in increasing ``k``.
    Returns the number of terms used (the loop stops when a term vanishes).
    """
    rows, cols = out.shape
    for i in range(rows):
        alive[i] = False
        for c in range(cols):
            out[i, c] = 0.0
    for c in range(cols):
        V[c, c] = 1.0
        out[c, c] = 1.0
        alive[c] = True
    hi = cols - 1
    used = 0
    for k in range(1, m + 1):
        nhi = hi
        for lrow in range(hi + 1):
            if not alive[lrow]:
                continue
            g = lrow + col0
            for p in range(indptr[g], indptr[g + 1]):
                r = indices[p] - col0
                d = data[p]
                for c in range(cols):
                    W[r, c] += d * V[lrow, c]
                if r > nhi:
                    nhi = r
        any_alive = False
        for i in range(nhi + 1):
            row_alive = False
            for c in range(cols):
                x = W[i, c] / k
                W[i, c] = 0.0
                V[i, c] = x
                if x != 0.0:
                    out[i, c] += x
                    row_alive = True
            alive[i] = row_alive
            any_alive = any_alive or row_alive
        hi = nhi
        used = k
        if not any_alive:
            break
    for i in range(hi + 1):
        for c in range(cols):
            V[i, c] = 0.0
    for i in range(rows):
        for c in range(cols):
            out[i, c] *= factor
    return used


@njit(**KERNEL)
def power_apply(indptr, indices, data, v, p, scale, out, work):
    r"""``out = scale * Y^p v / p!`` for nonnegative CSC ``Y`` and ``v`` (p >= 1)."""
    n = v.shape[0]
    for i in range(n):
        work[i] = v[i]
    for k in range(1, p + 1):
        for i in range(n):
            out[i] = 0.0
        for col in range(n):
            a = work[col]
            if a == 0.0:
                continue
            for q in range(indptr[col], indptr[col + 1]):
                out[indices[q]] += data[q] * a
        for i in range(n):
            work[i] = out[i] / k
    for i in range(n):
        out[i] = work[i] * scale


@njit(**KERNEL)
def singleton_exponentials(qh, ql, t, out_h, out_l):
    """``exp(-(qh + ql) t)`` as double-double pairs (0 where it underflows)."""
    for i in range(qh.shape[0]):
        p, e = two_prod(qh[i], t)
        e += ql[i] * t
        xh = -(p + e)
        xl = -(e - ((p + e) - p))
        if xh < -745.0:
            out_h[i] = 0.0
            out_l[i] = 0.0
        else:
            h, lo = dd_exp(xh, xl)
            out_h[i] = h
            out_l[i] = lo


@njit(**KERNEL)
def scale_diagonal(dh, dl, xh, xl, add, idx, out_h, out_l):
    """``out[i] = d[i] x[i] + add[i]`` in double-double for the indices ``idx``.

    ``d``, ``x`` double-double, ``add`` double, all nonnegative.
    """
    for q in range(idx.shape[0]):
        i = idx[q]
        p, e = two_prod(dh[i], xh[i])
        e += dh[i] * xl[i] + dl[i] * xh[i]
        s, f = two_sum(p, add[i])
        f += e
        hi = s + f
        out_l[i] = f - (hi - s)
        out_h[i] = hi


@njit(**KERNEL)
def dd_divide(Ah, Al, k):
    """``A /= k`` elementwise for a double-double matrix and a positive integer ``k``."""
    n, m = Ah.shape
    for i in range(n):
        for j in range(m):
            q1 = Ah[i, j] / k
            p, e = two_prod(q1, float(k))
            q2 = (((Ah[i, j] - p) - e) + Al[i, j]) / k
            hi = q1 + q2
            Al[i, j] = q2 - (hi - q1)
            Ah[i, j] = hi


@njit(**KERNEL)
def dd_add_identity(Ah, Al):
    """``A += I`` for a square double-double matrix."""
    for i in range(Ah.shape[0]):
        s, f = two_sum(Ah[i, i], 1.0)
        f += Al[i, i]
        hi = s + f
        Al[i, i] = f - (hi - s)
        Ah[i, i] = hi


@njit(**KERNEL)
def taylor_apply(indptr, indices, data, v, m, scale, out):
    r"""``out = sum_{k=1}^{m} (scale Y)^k v / k!`` for nonnegative CSC ``Y`` and ``v``.

    Term ``k`` is ``fl(fl(fl(Y t_{k-1}) scale) / k)``; the terms are summed in
    increasing ``k``.
    """
    n = v.shape[0]
    cur = np.empty(n)
    nxt = np.empty(n)
    for i in range(n):
        cur[i] = v[i]
        out[i] = 0.0
    for k in range(1, m + 1):
        for i in range(n):
            nxt[i] = 0.0
        for col in range(n):
            a = cur[col]
            if a == 0.0:
                continue
            for q in range(indptr[col], indptr[col + 1]):
                nxt[indices[q]] += data[q] * a
        for i in range(n):
            cur[i] = nxt[i] * scale / k
            out[i] += cur[i]
