"""The exponential's action on one vector (kinetics.engine.action).

References: mpmath.expm at 60 digits (general-purpose arbitrary-precision library) on the
exact double-double pair, and the closed form of a single decay, :math:`e^{-kt}`.
"""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from kinetics.engine.action import COST_DEGREE, MAX_NORM, TARGET, actions, degree
from kinetics.propagate import StretchPropagator


def random_scheme(rng, n, links=0.4, spread=(-3.0, 1.0)):
    """A random rate matrix of ``n`` species (invented), constants 10^U(spread) 1/s."""
    K = np.zeros((n, n))
    for i in range(n):
        for j in range(n):
            if i != j and rng.random() < links:
                k = 10.0 ** rng.uniform(*spread)
                K[j, i] += k
                K[i, i] -= k
    return K


def reference(K, t, v, dps=60):
    """exp(t K) v in mpmath at ``dps`` digits (K exact as given in doubles)."""
    with mpmath.workdps(dps):
        A = mpmath.matrix(K.tolist()) * mpmath.mpf(float(t))
        return mpmath.expm(A) * mpmath.matrix([mpmath.mpf(float(x)) for x in v])


def worst_relative(Oh, Ol, exact):
    with mpmath.workdps(60):
        errors = [
            abs(mpmath.mpf(float(h)) + mpmath.mpf(float(lo)) - e) / e
            for h, lo, e in zip(Oh, Ol, exact, strict=True)
            if e > 1e-290
        ]
        return float(max(errors, default=0.0))


def test_single_decay_against_the_closed_form():
    # e^{-kt} for k = 0.7 1/s, t = 3 s (closed form)
    Oh, Ol, bound = actions(np.array([[-0.7]]), np.zeros((1, 1)), np.array([3.0]), np.ones((1, 1)))
    with mpmath.workdps(60):
        exact = mpmath.exp(-mpmath.mpf(0.7) * 3)
    assert worst_relative(Oh[0], Ol[0], [exact]) <= bound[0] < 1e-27


@settings(max_examples=40, deadline=None)
@given(st.integers(2, 8), st.integers(0, 2**32 - 1), st.floats(1e-3, 20.0))
def test_every_entry_within_its_bound(n, seed, t):
    rng = np.random.default_rng(seed)
    K = random_scheme(rng, n)
    v = rng.uniform(0.0, 1.0, n) * (rng.random(n) < 0.6)
    Oh, Ol, bound = actions(K, np.zeros_like(K), np.array([t]), v[None])
    if not np.isfinite(bound[0]):  # left to the exponential route: nothing claimed
        return
    exact = reference(K, t, v)
    assert worst_relative(Oh[0], Ol[0], exact) <= bound[0]
    assert bound[0] < 1e-18


def test_trace_species_at_the_end_of_a_chain_are_accurate():
    # a 6-species chain started at its head: the last member is ~t^5 k^5/5! at short times
    n = 6
    K = np.zeros((n, n))
    for i in range(n - 1):
        K[i + 1, i], K[i, i] = 2.0, -2.0
    v = np.zeros(n)
    v[0] = 1.0
    Oh, Ol, bound = actions(K, np.zeros_like(K), np.array([1e-4]), v[None])
    exact = reference(K, 1e-4, v)
    assert float(exact[n - 1]) < 1e-20
    assert worst_relative(Oh[0], Ol[0], exact) <= bound[0] <= 2 * TARGET


def test_low_parts_of_the_matrix_are_used():
    # K = -(1 + 2^-60) 1/s as a double-double pair: e^{-(1 + 2^-60)} differs from e^{-1}
    # by 8.7e-19 relative, far above the route's bound
    Kh, Kl = np.array([[-1.0]]), np.array([[-(2.0**-60)]])
    Oh, Ol, bound = actions(Kh, Kl, np.array([1.0]), np.ones((1, 1)))
    with mpmath.workdps(60):
        exact = mpmath.exp(-(1 + mpmath.mpf(2) ** -60))
    assert worst_relative(Oh[0], Ol[0], [exact]) <= bound[0] < 1e-27


def test_large_norms_and_high_degrees_are_left_to_the_exponentials():
    K = np.array([[-1.0, 0.0], [1.0, 0.0]])
    _, _, bound = actions(K, np.zeros_like(K), np.array([2 * MAX_NORM]), np.ones((1, 2)))
    assert bound[0] == math.inf
    # a norm whose degree exceeds COST_DEGREE * (N + 6)
    t = 20.0
    assert degree(t * 2.0, 2) > COST_DEGREE * (2 + 6)
    _, _, bound = actions(K, np.zeros_like(K), np.array([t]), np.ones((1, 2)))
    assert bound[0] == math.inf


def test_degree_covers_the_scalar_tail_and_the_longest_path():
    # the Poisson tail of e^1 after degree m is about 1/(m + 1)!: 1/20! = 4.1e-19 > 2^-64
    # (5.4e-20) and 1/21! = 2.0e-20 < 2^-64 (values from memory, checked by math.factorial)
    assert 1 / math.factorial(20) > TARGET > 1 / math.factorial(22)
    assert degree(1.0, 1) in (20, 21)
    assert degree(1.0, 5) == degree(1.0, 1) + 4
    assert degree(0.0, 5) == 4


@pytest.mark.parametrize("seed", range(5))
def test_rows_of_one_off_lengths_agree_with_the_kept_exponentials(seed):
    rng = np.random.default_rng(seed)
    K = random_scheme(rng, 5, spread=(-4.0, -1.0))
    feed = np.array([1e-3, 0, 0, 0, 0])
    starts = rng.uniform(0.0, 1.0, (4, 5))
    lengths = rng.uniform(1.0, 30.0, 4)
    one_off = StretchPropagator(K, feed).advance(starts, lengths, remember=False)
    kept = StretchPropagator(K, feed).advance(starts, lengths, remember=True)
    scale = np.maximum(one_off.error_bound, kept.error_bound)[:, None]
    assert np.all(np.abs(one_off.concentrations - kept.concentrations)
                  <= 2 * scale * kept.concentrations + 1e-300)  # fmt: skip
