r"""Double-double scalars for the dense engine (private).

A double-double number is an unevaluated sum ``hi + lo`` of two doubles with
``|lo| <= ulp(hi) / 2``; it carries about 106 significant bits.  The matrix
products in this format are compiled loops in :mod:`kinetics._kernels`; this
module holds what needs no compiler: the unit roundoff used in the error bounds
and the Taylor coefficients :math:`1/k!` rounded to double-double from exact
decimal values.  The arithmetic and its references are in :mod:`kinetics._kernels`.
"""

from __future__ import annotations

from decimal import Context, Decimal
from functools import lru_cache

import numpy as np

__all__ = ["DD_UNIT", "inverse_factorials"]

#: Unit roundoff of the double-double format used in the error bounds, 2**-104
#: (a conservative value: the sloppy addition and the products reach 2**-105).
DD_UNIT = 2.0**-104


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
