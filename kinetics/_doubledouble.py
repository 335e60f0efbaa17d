"""Vectorised double-double arithmetic for nonnegative matrices (private).

A double-double number is an unevaluated sum ``hi + lo`` of two doubles with
``|lo| <= ulp(hi) / 2``; it carries about 106 significant bits.  Every array
function here takes and returns pairs of numpy arrays of equal shape.  All
operations are built from error-free transformations:

* ``two_sum``: :math:`a + b = s + e` exactly (Knuth; Dekker 1971),
* ``two_prod``: :math:`a b = p + e` exactly, with Veltkamp's splitting
  (Dekker 1971; Python 3.11 has no ``math.fma``),
* ``_exact_row_sum``: the high part of a sum of many terms by error-free
  extraction against a common power of two (Rump, Ogita & Oishi, "Accurate
  floating-point summation part I", SIAM J. Sci. Comput. 31, 2008), the low
  part in plain double as in Ogita, Rump & Oishi's ``Dot2``.

The matrix product is meant for *nonnegative* operands: there is no
cancellation, so the componentwise relative error of each entry of the result is
about :math:`k^2 2^{-106}` for inner dimension ``k`` (Ogita, Rump & Oishi 2005,
Proposition 5.5, applied to nonnegative data).

References
----------
T. J. Dekker, "A floating-point technique for extending the available
precision", Numer. Math. 18, 224-242 (1971). doi:10.1007/BF01397083
T. Ogita, S. M. Rump, S. Oishi, "Accurate sum and dot product", SIAM J. Sci.
Comput. 26, 1955-1988 (2005). doi:10.1137/030601818
"""

from __future__ import annotations

from decimal import Context, Decimal
from functools import lru_cache

import numpy as np

__all__ = [
    "DD_UNIT",
    "dd_add",
    "dd_div_int",
    "dd_exp_scalars",
    "dd_matmul",
    "dd_mul",
    "dd_scale",
    "fast_two_sum",
    "inverse_factorials",
    "two_prod",
    "two_sum",
]

#: Unit roundoff of the double-double format used in the error bounds, 2**-104
#: (a conservative value: the sloppy addition and the products reach 2**-105).
DD_UNIT = 2.0**-104

_SPLITTER = 134217729.0  # 2**27 + 1, Veltkamp splitting constant (Dekker 1971, sec. 5)


def two_sum(a, b):
    """Error-free sum: ``s + e == a + b`` exactly (Knuth's TwoSum, 6 flops)."""
    s = a + b
    z = s - a
    e = (a - (s - z)) + (b - z)
    return s, e


def fast_two_sum(a, b):
    """Error-free sum assuming ``|a| >= |b|`` (Dekker's Fast2Sum, 3 flops)."""
    s = a + b
    e = b - (s - a)
    return s, e


def _split(a):
    """Veltkamp splitting ``a = hi + lo`` with 26-bit halves (Dekker 1971)."""
    c = _SPLITTER * a
    hi = c - (c - a)
    return hi, a - hi


def two_prod(a, b):
    """Error-free product: ``p + e == a * b`` exactly (Dekker's TwoProduct)."""
    p = a * b
    a1, a2 = _split(a)
    b1, b2 = _split(b)
    e = ((a1 * b1 - p) + a1 * b2 + a2 * b1) + a2 * b2
    return p, e


def dd_add(ah, al, bh, bl):
    """Sum of two double-doubles of the same sign (no cancellation)."""
    s, e = two_sum(ah, bh)
    e += al + bl
    return fast_two_sum(s, e)


def dd_mul(ah, al, bh, bl):
    """Elementwise product of two double-doubles (broadcasting)."""
    p, e = two_prod(ah, bh)
    e += ah * bl + al * bh
    return fast_two_sum(p, e)


def dd_scale(ah, al, b):
    """Elementwise product of a double-double by a double ``b`` (broadcasting)."""
    p, e = two_prod(ah, b)
    e += al * b
    return fast_two_sum(p, e)


def dd_div_int(ah, al, k):
    """Double-double divided by a small positive integer ``k``."""
    k = float(k)
    q1 = ah / k
    p, pe = two_prod(q1, k)
    r = ((ah - p) - pe) + al
    return fast_two_sum(q1, r / k)


def _exact_row_sum(p, m_bits):
    """Split the sum over the last axis of nonnegative ``p`` into ``hi + lo``.

    ``hi`` is the exact sum of the leading parts of all terms (extracted against
    ``sigma = 2**(ceil(log2 max p) + m_bits)`` with ``2**m_bits >= k + 2``, so the
    extracted parts add up without any rounding; Rump, Ogita & Oishi 2008,
    Lemma 3.3); ``lo`` is the plain sum of the remainders, each below
    ``2**-53 sigma``.
    """
    pmax = p.max(axis=-1, keepdims=True)
    _, ex = np.frexp(pmax)
    sigma = np.ldexp(1.0, ex + m_bits)
    q = (sigma + p) - sigma
    r = p - q
    return q.sum(axis=-1), r.sum(axis=-1)


def _matmul_chunk(ah, al, bht, blt):
    """Core of :func:`dd_matmul` on one chunk; ``bht``/``blt`` are transposed."""
    ah4 = ah[..., :, None, :]
    al4 = al[..., :, None, :]
    bh4 = bht[..., None, :, :]
    bl4 = blt[..., None, :, :]
    a1, a2 = _split(ah4)
    b1, b2 = _split(bh4)
    p = ah4 * bh4
    # Dekker's TwoProduct error, then the two cross terms of the dd product
    e = ((a1 * b1 - p) + a1 * b2 + a2 * b1) + a2 * b2
    e += ah4 * bl4
    e += al4 * bh4
    k = p.shape[-1]
    m_bits = int(np.ceil(np.log2(k + 2)))
    hi, lo = _exact_row_sum(p, m_bits)
    lo += e.sum(axis=-1)
    return fast_two_sum(hi, lo)


def dd_matmul(ah, al, bh, bl, max_elems: int = 1 << 21):
    """Product of stacks of nonnegative double-double matrices.

    Parameters
    ----------
    ah, al : ndarray, shape (..., n, k)
        High and low parts of the left factor.
    bh, bl : ndarray, shape (..., k, m)
        High and low parts of the right factor (same leading shape).
    max_elems : int
        Size of the largest temporary ``(..., n, m, k)`` tensor; larger products
        are cut into chunks along the leading axes and the columns.

    Returns
    -------
    (ndarray, ndarray)
        High and low parts, shape (..., n, m).

    Notes
    -----
    For nonnegative operands every entry has a relative error of about
    :math:`k^2 2^{-106}` with respect to the exact product of the double-double
    inputs.  The result does not depend on how the work is chunked, so a
    stacked product equals the products of its members bit for bit.
    """
    bht = np.swapaxes(bh, -1, -2)
    blt = np.swapaxes(bl, -1, -2)
    lead = np.broadcast_shapes(ah.shape[:-2], bh.shape[:-2])
    n, k = ah.shape[-2:]
    m = bh.shape[-1]
    ah = np.broadcast_to(ah, (*lead, n, k))
    al = np.broadcast_to(al, (*lead, n, k))
    bht = np.broadcast_to(bht, (*lead, m, k))
    blt = np.broadcast_to(blt, (*lead, m, k))
    nb = int(np.prod(lead)) if lead else 1
    per_member = n * m * max(k, 1)
    if nb * per_member <= max_elems:
        return _matmul_chunk(ah, al, bht, blt)
    ah = ah.reshape(nb, n, k)
    al = al.reshape(nb, n, k)
    bht = bht.reshape(nb, m, k)
    blt = blt.reshape(nb, m, k)
    outh = np.empty((nb, n, m))
    outl = np.empty((nb, n, m))
    if per_member <= max_elems:
        step = max(1, max_elems // per_member)
        for s in range(0, nb, step):
            sl = slice(s, s + step)
            outh[sl], outl[sl] = _matmul_chunk(ah[sl], al[sl], bht[sl], blt[sl])
    else:
        cstep = max(1, max_elems // (n * max(k, 1)))
        for b in range(nb):
            for c in range(0, m, cstep):
                cs = slice(c, c + cstep)
                outh[b, :, cs], outl[b, :, cs] = _matmul_chunk(ah[b], al[b], bht[b, cs], blt[b, cs])
    return outh.reshape(*lead, n, m), outl.reshape(*lead, n, m)


_CTX = Context(prec=40)


def dd_exp_scalars(xh, xl):
    """``exp(xh + xl)`` as double-doubles, one value per entry (any shape).

    Evaluated with Python's :mod:`decimal` at 40 significant digits from the
    exact decimal value of the double-double argument, then rounded to a
    double-double (relative error below :math:`10^{-31}`).
    """
    xh = np.asarray(xh, dtype=float)
    xl = np.asarray(xl, dtype=float)
    hi = np.empty(xh.shape)
    lo = np.empty(xh.shape)
    for idx in np.ndindex(xh.shape):
        d = _CTX.exp(_CTX.add(Decimal(float(xh[idx])), Decimal(float(xl[idx]))))
        h = float(d)
        hi[idx] = h
        lo[idx] = float(_CTX.subtract(d, Decimal(h)))
    return hi, lo


@lru_cache(maxsize=64)
def inverse_factorials(m: int):
    """``1/k!`` for ``k = 0..m`` as double-double arrays (exact rational rounding)."""
    hi = np.empty(m + 1)
    lo = np.empty(m + 1)
    ctx = Context(prec=60)
    f = Decimal(1)
    for k in range(m + 1):
        if k:
            f = ctx.multiply(f, Decimal(k))
        v = ctx.divide(Decimal(1), f)
        h = float(v)
        hi[k] = h
        lo[k] = float(ctx.subtract(v, Decimal(h)))
    hi.flags.writeable = False
    lo.flags.writeable = False
    return hi, lo
