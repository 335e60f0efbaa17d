"""Double-double helpers on arrays, checked in exact rational arithmetic."""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from kinetics import _doubledouble as dd

finite = st.floats(min_value=1e-200, max_value=1e200, allow_nan=False, allow_infinity=False)
moderate = st.floats(min_value=1e-100, max_value=1e100)
signed = st.one_of(finite, finite.map(lambda x: -x))


def exact(h, lo=0.0) -> Fraction:
    return Fraction(float(h)) + Fraction(float(lo))


@given(signed, signed)
def test_two_sum_is_error_free(a, b):
    # Knuth, TAOCP vol. 2, 4.2.2 Theorem B: s + e == a + b exactly
    s, e = dd.two_sum(np.float64(a), np.float64(b))
    assert exact(s, e) == Fraction(a) + Fraction(b)


@settings(max_examples=300)
@given(moderate, moderate, moderate)
def test_product_and_sum_are_double_double_accurate(a, b, c):
    # hi + lo within a few units of 2^-104 of the exact result (Dekker 1971, sec. 5-6)
    ah, al = dd.pair(Fraction(a) / 3)
    bh, bl = dd.pair(Fraction(b) / 7)
    ph, pl = dd.product(np.float64(ah), np.float64(al), np.float64(bh), np.float64(bl))
    want = exact(ah, al) * exact(bh, bl)
    assert abs(exact(ph, pl) - want) <= 4 * dd.DD_UNIT * abs(want)
    ch, cl = dd.pair(Fraction(c) / 11)
    sh, sl = dd.add(np.float64(ah), np.float64(al), np.float64(ch), np.float64(cl))
    want = exact(ah, al) + exact(ch, cl)
    assert abs(exact(sh, sl) - want) <= 4 * dd.DD_UNIT * abs(want)


@given(st.lists(st.tuples(st.integers(0, 4), finite), min_size=1, max_size=30))
def test_accumulate_sums_each_position_exactly_enough(items):
    positions = np.array([p for p, _ in items])
    values = np.array([v for _, v in items])
    h, lo = dd.accumulate(positions, values, np.zeros_like(values), 5)
    for p in range(5):
        want = sum((Fraction(v) for q, v in items if q == p), Fraction(0))
        # same-sign sums: relative error a few units of 2^-106 per term
        assert abs(exact(h[p], lo[p]) - want) <= len(items) * 2 * dd.DD_UNIT * want


def test_pair_of_a_decimal_constant():
    # 0.1 is not a double: hi is the nearest double and hi + lo is 1/10 to 2^-106
    hi, lo = dd.pair(Fraction(1, 10))
    assert hi == 0.1
    assert abs(exact(hi, lo) - Fraction(1, 10)) < Fraction(1, 10) * Fraction(1, 2**106)
    assert dd.pair(math.inf) == (math.inf, 0.0)
    assert dd.pair(Fraction(10) ** 400) == (math.inf, 0.0)


def test_decimal_exp_and_power_against_mpmath():
    # mpmath at 60 digits (reference library)
    with mpmath.workdps(60):
        for x in (Fraction(-95000, 8314), Fraction(1, 3), Fraction(-700), Fraction(50)):
            got = dd.decimal_exp(x)
            want = mpmath.exp(mpmath.mpf(x.numerator) / x.denominator)
            assert abs(mpmath.mpf(got.numerator) / got.denominator / want - 1) < 1e-38
        got = dd.decimal_power(Fraction("55.5"), Fraction(3, 2))
        want = mpmath.mpf("55.5") ** mpmath.mpf(1.5)
        assert abs(mpmath.mpf(got.numerator) / got.denominator / want - 1) < 1e-38
    assert dd.decimal_power(0, Fraction(1, 2)) == 0


def test_product_near_the_top_of_the_range():
    # the Veltkamp split is scaled there: no overflow, still exact (Dekker 1971, sec. 5)
    h, lo = dd.product(np.float64(1e300), np.float64(0.0), np.float64(1.5), np.float64(0.0))
    assert exact(h, lo) == Fraction(1e300) * Fraction(3, 2)


@given(
    st.integers(1, 10**30),
    st.integers(1, 10**25),
    st.integers(-300, 280),
)
def test_pair_low_part_is_the_rounded_exact_remainder(n, d, e):
    """``lo`` is the double nearest to ``value - hi``, computed in exact rationals
    (Python's Fraction arithmetic is the reference)."""
    value = Fraction(n, d) * Fraction(10) ** e
    hi, lo = dd.pair(value)
    if math.isfinite(hi):
        rest = value - Fraction(hi)
        assert lo == rest.numerator / rest.denominator
