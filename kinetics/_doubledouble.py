r"""Double-double scalars for the dense engine (private).

A double-double number is an unevaluated sum ``hi + lo`` of two doubles with
``|lo| <= ulp(hi) / 2``; it carries about 106 significant bits.  The matrix
products in this format are compiled loops in :mod:`kinetics._kernels`; this
module holds what needs no compiler: the unit roundoff used in the error bounds,
the Taylor coefficients :math:`1/k!` rounded to double-double from exact decimal
values, exact rationals rounded to double-double, and the error-free
transformations on whole arrays that prepare the engine's inputs (the rate matrix
as a double-double pair, summed without rounding the diagonal).  numpy evaluates
each elementwise operation separately (no fused multiply-add), which TwoSum and
TwoProduct need; the compiled scalar forms used inside the kernels are in
:mod:`kinetics._kernels`, and both are tested against exact rationals.

References
----------
T. J. Dekker, "A floating-point technique for extending the available
precision", Numer. Math. 18, 224-242 (1971). doi:10.1007/BF01397083
D. E. Knuth, The Art of Computer Programming, vol. 2, 3rd ed., sec. 4.2.2,
Theorem B (TwoSum).
"""

from __future__ import annotations

import math
from decimal import Context, Decimal
from fractions import Fraction
from functools import lru_cache

import numpy as np

__all__ = [
    "DD_UNIT",
    "accumulate",
    "add",
    "decimal_exp",
    "decimal_ln",
    "decimal_log10",
    "decimal_power",
    "decimal_sqrt",
    "inverse_factorials",
    "pair",
    "product",
    "two_sum",
]

#: decimal digits of the exponentials and powers that derive rate constants
#: (about 2^-133, far below the 2^-106 of a double-double)
DIGITS = 40

_SPLITTER = 134217729.0  # 2**27 + 1, Veltkamp splitting constant (Dekker 1971, sec. 5)

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


def pair(value) -> tuple[float, float]:
    """An exact number (``Fraction``, int or float) as ``(hi, lo)``: ``hi`` the nearest double.

    ``lo`` is the double nearest to ``value - hi`` (exact rational arithmetic), so
    ``hi + lo`` is within :math:`2^{-106}` (relative) of ``value``.  Beyond the double
    range the result is ``(inf, 0.0)``.

    >>> pair(Fraction(1, 10))
    (0.1, -5.551115123125783e-18)
    """
    if isinstance(value, float):
        return value, 0.0  # a double is its own nearest double (inf and nan kept)
    if not isinstance(value, Fraction):
        value = Fraction(value)
    n, d = value.numerator, value.denominator
    try:
        hi = n / d  # int / int is correctly rounded
    except OverflowError:
        return math.inf, 0.0
    if not math.isfinite(hi):
        return math.inf, 0.0
    a, b = hi.as_integer_ratio()
    # value - hi = (n b - a d) / (d b), rounded once by the integer division (no gcd)
    return hi, (n * b - a * d) / (d * b)


def two_sum(a, b):
    """Error-free sum ``s + e == a + b`` on arrays (Knuth's TwoSum)."""
    s = a + b
    z = s - a
    return s, (a - (s - z)) + (b - z)


def _split(a):
    """Veltkamp halves ``a == hi + lo`` with 26-bit ``hi`` (scaled near the top of the range)."""
    scale = np.where(np.abs(a) > 2.0**995, 2.0**-30, 1.0)  # powers of two: exact
    c = _SPLITTER * (a * scale)
    hi = (c - (c - a * scale)) / scale
    return hi, a - hi


def product(ah, al, bh, bl):
    """Double-double product of arrays ``(ah + al)(bh + bl)`` (Dekker's TwoProduct)."""
    p = ah * bh
    a1, a2 = _split(ah)
    b1, b2 = _split(bh)
    e = ((a1 * b1 - p) + a1 * b2 + a2 * b1) + a2 * b2
    e = e + (ah * bl + al * bh)
    hi = p + e
    return hi, e - (hi - p)


def add(ah, al, bh, bl):
    """Double-double sum of arrays, either sign (the accurate variant of Bailey's addition)."""
    s, e = two_sum(ah, bh)
    t, f = two_sum(al, bl)
    e = e + t
    hi = s + e
    e = e - (hi - s)
    e = e + f
    out = hi + e
    return out, e - (out - hi)


def accumulate(positions, hi, lo, size: int):
    """Double-double sums of the values ``hi + lo`` that share a position.

    Parameters
    ----------
    positions : ndarray of int, shape (E,)
        Target position of each value (``0 <= position < size``).
    hi, lo : ndarray, shape (..., E)
        The values as double-double pairs (a leading batch dimension is allowed).
    size : int
        Number of positions.

    Returns
    -------
    (ndarray, ndarray), shape (..., size)
        The sums; positions without a value hold zero.  Each sum of values of one
        sign carries a relative error of a few units of :math:`2^{-106}`.

    >>> h, l = accumulate(np.array([0, 0, 1]), np.array([0.1, 0.2, 1.0]), np.zeros(3), 2)
    >>> float(h[0]), float(h[1])
    (0.30000000000000004, 1.0)
    """
    positions = np.asarray(positions)
    order = np.argsort(positions, kind="stable")
    ordered = positions[order]
    new_group = np.ones(ordered.size, dtype=bool)
    new_group[1:] = ordered[1:] != ordered[:-1]
    group_start = np.maximum.accumulate(np.where(new_group, np.arange(ordered.size), 0))
    rank = np.arange(ordered.size) - group_start
    out_h = np.zeros((*hi.shape[:-1], size))
    out_l = np.zeros_like(out_h)
    for r in range(int(rank.max()) + 1 if rank.size else 0):
        take = order[rank == r]  # at most one value per position
        where = positions[take]
        out_h[..., where], out_l[..., where] = add(
            out_h[..., where], out_l[..., where], hi[..., take], lo[..., take]
        )
    return out_h, out_l


def _decimal(x) -> Decimal:
    x = Fraction(x)
    ctx = Context(prec=DIGITS + 10)
    return ctx.divide(Decimal(x.numerator), Decimal(x.denominator))


def decimal_exp(x) -> Fraction:
    """:math:`e^x` of an exact number to :data:`DIGITS` significant digits, as a ``Fraction``.

    Python's ``decimal`` module rounds ``exp`` correctly in its context precision.

    >>> float(decimal_exp(1))
    2.718281828459045
    """
    ctx = Context(prec=DIGITS, Emax=10**9, Emin=-(10**9))
    return Fraction(ctx.exp(_decimal(x)))


def decimal_power(w, nu) -> Fraction:
    r""":math:`w^\nu` for exact ``w > 0`` and a non-integer exponent, to :data:`DIGITS` digits.

    >>> round(float(decimal_power(Fraction(55), Fraction(1, 2))), 12)
    7.416198487096
    """
    w = Fraction(w)
    if w == 0:
        return Fraction(0)
    ctx = Context(prec=DIGITS + 10, Emax=10**9, Emin=-(10**9))
    return decimal_exp(Fraction(ctx.multiply(ctx.ln(_decimal(w)), _decimal(nu))))


def decimal_ln(x) -> Fraction:
    r""":math:`\ln x` of an exact ``x > 0`` to :data:`DIGITS` significant digits, as a ``Fraction``.

    Python's ``decimal`` module rounds ``ln`` correctly in its context precision.

    >>> float(decimal_ln(2))
    0.6931471805599453
    """
    ctx = Context(prec=DIGITS, Emax=10**9, Emin=-(10**9))
    return Fraction(ctx.ln(_decimal(x)))


def decimal_log10(x) -> Fraction:
    r""":math:`\log_{10} x` of an exact ``x > 0`` to :data:`DIGITS` significant digits.

    >>> float(decimal_log10(2))
    0.3010299956639812
    """
    ctx = Context(prec=DIGITS, Emax=10**9, Emin=-(10**9))
    return Fraction(ctx.log10(_decimal(x)))


def decimal_sqrt(x) -> Fraction:
    r""":math:`\sqrt{x}` of an exact ``x >= 0`` to :data:`DIGITS` significant digits.

    >>> float(decimal_sqrt(2))
    1.4142135623730951
    """
    ctx = Context(prec=DIGITS, Emax=10**9, Emin=-(10**9))
    return Fraction(ctx.sqrt(_decimal(x)))
