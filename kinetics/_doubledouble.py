r"""Double-double scalars for the dense engine (private).

A double-double number is an unevaluated sum ``hi + lo`` of two doubles with
``|lo| <= ulp(hi) / 2``; it carries about 106 significant bits.  The matrix
products in this format are compiled loops in :mod:`kinetics._kernels`; this
module supplies what they consume:

* ``two_prod``: :math:`a b = p + e` exactly, elementwise on arrays, with
  Veltkamp's splitting (Dekker 1971; Python 3.11 has no ``math.fma``);
* ``inverse_factorials``: the Taylor coefficients :math:`1/k!` rounded to
  double-double from exact decimal values;
* ``dd_exp_scalars``: the factor :math:`e^{-\sigma t / 2^j}` of the shifted
  exponential, evaluated in decimal arithmetic.

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

__all__ = ["DD_UNIT", "dd_exp_scalars", "inverse_factorials", "two_prod"]

#: Unit roundoff of the double-double format used in the error bounds, 2**-104
#: (a conservative value: the sloppy addition and the products reach 2**-105).
DD_UNIT = 2.0**-104

_SPLITTER = 134217729.0  # 2**27 + 1, Veltkamp splitting constant (Dekker 1971, sec. 5)


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
