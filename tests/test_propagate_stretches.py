"""StretchPropagator: exponentials kept per stretch length, applied to many starts.

References: mpmath.expm at 50 digits (general-purpose arbitrary-precision library), and
the existing certified route :func:`kinetics.propagate.propagate_certified`.
"""

from __future__ import annotations

from fractions import Fraction

import mpmath
import numpy as np
import pytest

from kinetics.errors import ConcentrationError, GrowthError, TimesError
from kinetics.propagate import StretchPropagator, propagate_certified


def branched():
    """An invented 4-species scheme: A -> B, A -> C, B <=> D (constants in 1/s)."""
    K = np.zeros((4, 4))
    for src, dst, k in [(0, 1, 0.3), (0, 2, 0.05), (1, 3, 2.0), (3, 1, 0.01)]:
        K[dst, src] += k
        K[src, src] -= k
    return K


def mp_stretch(K, feed, start, h: Fraction):
    """Reference: exp(h [[K, f], [0, 0]]) [start; 1] at 50 digits (mpmath)."""
    n = K.shape[0]
    with mpmath.workdps(50):
        A = mpmath.zeros(n + 1, n + 1)
        for i in range(n):
            for j in range(n):
                A[i, j] = mpmath.mpf(K[i, j])
            A[i, n] = mpmath.mpf(feed[i])
        h_mp = mpmath.mpf(h.numerator) / h.denominator
        x = mpmath.expm(A * h_mp) * mpmath.matrix([*map(mpmath.mpf, start), 1])
        return [x[i] for i in range(n)]


def relative_error(got, exact):
    with mpmath.workdps(50):
        pairs = zip(got, exact, strict=True)
        return max(float(abs(mpmath.mpf(g) - e) / e) for g, e in pairs if e > 1e-290)


def test_rows_match_the_certified_route_bit_for_bit():
    K = branched()
    feed = np.array([1e-3, 0.0, 0.0, 0.0])
    p = StretchPropagator(K, feed)
    starts = np.array([[1.0, 0.0, 0.0, 0.0], [0.5, 0.2, 0.0, 0.1], [0.0, 0.0, 0.0, 0.0]])
    lengths = np.array([2.5, 2.5, 40.0])
    r = p.advance(starts, lengths)
    for s, h, got, bound in zip(starts, lengths, r.concentrations, r.error_bound, strict=True):
        single = propagate_certified(K, s, [h], feed)
        np.testing.assert_array_equal(got, single.concentrations[0])
        assert bound == single.error_bound[0]


def test_bound_covers_the_exact_stretch_including_the_low_part_of_the_length():
    K = branched()
    feed = np.array([0.0, 1e-4, 0.0, 0.0])
    p = StretchPropagator(K, feed)
    start = np.array([0.3, 0.0, 0.7, 1e-9])
    # the exact length 0.7 - 0.1 is not a double: pass its rounding and its rest
    a, b = 0.1, 0.7
    h = b - a
    low = float(Fraction(b) - Fraction(a) - Fraction(h))
    assert low != 0.0
    got, bound = p.step(start, h, low)
    exact = mp_stretch(K, feed, start, Fraction(b) - Fraction(a))
    err = relative_error(got, exact)
    assert err <= bound < 1e-14


def test_step_keeps_the_exponential_and_agrees_with_advance():
    p = StretchPropagator(branched())
    x = np.array([1.0, 0.0, 0.0, 0.0])
    first, b1 = p.step(x, 10.0)
    again, b2 = p.step(x, 10.0)  # from the kept exponential
    batch = p.advance(x[None], [10.0])
    np.testing.assert_array_equal(first, again)
    np.testing.assert_array_equal(first, batch.concentrations[0])
    assert b1 == b2 == batch.error_bound[0]


def test_zero_length_returns_the_start_exactly():
    p = StretchPropagator(branched(), [1.0, 0.0, 0.0, 0.0])
    start = np.array([0.1, 0.2, 0.3, 0.4])
    r = p.advance(start[None], [0.0])
    np.testing.assert_array_equal(r.concentrations[0], start)
    assert r.error_bound[0] == 0.0


def test_kept_exponentials_are_bounded_in_number():
    p = StretchPropagator([[-1.0]])
    p.advance(np.ones((300, 1)), np.linspace(0.01, 3.0, 300))
    one = p.advance(np.ones((1, 1)), [0.5])
    assert one.concentrations[0, 0] == pytest.approx(np.exp(-0.5), rel=1e-15)


def test_growth_is_refused_with_the_engine_message():
    p = StretchPropagator([[1.0]])
    with pytest.raises(GrowthError, match="grow beyond the range of double precision"):
        p.step(np.array([1.0]), 1000.0)


@pytest.mark.parametrize(
    ("starts", "lengths", "error", "message"),
    [
        ([[1.0]], [-1.0], TimesError, "stretch lengths must be finite and >= 0"),
        ([[1.0]], [np.inf], TimesError, "stretch lengths must be finite and >= 0"),
        ([[1.0]], ["x"], TimesError, "stretch lengths are not numeric"),
        ([[-1.0]], [1.0], ConcentrationError, "start concentrations[0, 0] = -1 is negative"),
        (
            [[1.0, 2.0]],
            [1.0],
            ConcentrationError,
            "start concentrations has shape (1, 2); it must have shape (1, 1)",
        ),
    ],
)
def test_bad_input_is_refused(starts, lengths, error, message):
    p = StretchPropagator([[-1.0]])
    with pytest.raises(error) as info:
        p.advance(starts, lengths)
    assert info.value.problem == message


def test_a_bad_start_in_a_step_takes_the_checked_route():
    p = StretchPropagator([[-1.0]])
    p.step(np.array([1.0]), 1.0)
    with pytest.raises(ConcentrationError) as info:
        p.step(np.array([np.nan]), 1.0)
    assert str(info.value) == (
        "start concentrations contains inf or nan; start concentrations, one per species, >= 0"
    )


def test_large_schemes_take_the_block_route_one_stretch_at_a_time():
    # a chain of 201 species: above DENSE_DOUBLE_MAX, each stretch as propagate_certified
    n = 201
    K = np.zeros((n, n))
    for i in range(n - 1):
        K[i, i] = -(1.0 + 0.01 * i)
        K[i + 1, i] = 1.0 + 0.01 * i
    p = StretchPropagator(K, np.r_[1e-3, np.zeros(n - 1)])
    start = np.r_[1.0, np.zeros(n - 1)]
    feed = np.r_[1e-3, np.zeros(n - 1)]
    r = p.advance(np.array([start, 2 * start]), [0.5, 0.25], [1e-17, 0.0])
    single = propagate_certified(K, start, [0.5], feed)
    other = propagate_certified(K, 2 * start, [0.25], feed)
    np.testing.assert_array_equal(r.concentrations[1], other.concentrations[0])
    # the low part of the length: the state carried to 0.5 + 1e-17 s, and counted
    np.testing.assert_allclose(r.concentrations[0], single.concentrations[0], rtol=1e-14)
    assert r.error_bound[0] > single.error_bound[0]
    y, bound = p.step(start, 0.5)
    assert bound >= single.error_bound[0]
    np.testing.assert_array_equal(y, single.concentrations[0])


def test_example_in_the_docstring():
    import doctest

    from kinetics import propagate

    finder = doctest.DocTestFinder()
    runner = doctest.DocTestRunner()
    for test in finder.find(StretchPropagator, "StretchPropagator", globs=vars(propagate)):
        runner.run(test)
    assert runner.failures == 0
    assert runner.tries >= 3
