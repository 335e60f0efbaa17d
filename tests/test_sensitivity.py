"""Derivatives of the concentrations: the entrywise and the block route of the Fréchet derivative.

References: scipy.linalg.expm_frechet (Al-Mohy & Higham 2009), a general-purpose
library implementation; mpmath.expm at 60 digits for central differences.
"""

from __future__ import annotations

import mpmath
import numpy as np
import pytest
import scipy.linalg

from kinetics.engine.sensitivity import block_sensitivities, sensitivities
from kinetics.errors import RateMatrixError
from kinetics.propagate import propagate

from conftest import chain_matrix


def test_sensitivities_against_mpmath_finite_difference():
    # A -> B (k1), B -> A (k2), B -> C (k3)
    def K_of(k1, k2, k3):
        return np.array([[-k1, k2, 0.0], [k1, -k2 - k3, 0.0], [0.0, k3, 0.0]])

    ks = (0.7, 0.2, 0.4)
    K = K_of(*ks)
    dirs = np.stack([K_of(*np.eye(3)[r]) for r in range(3)])
    c0 = np.array([1.0, 0.1, 0.0])
    t = np.array([0.0, 0.5, 3.0])
    S = sensitivities(K, c0, t, dirs)
    assert S.shape == (3, 3, 3)
    h = mpmath.mpf("1e-20")
    with mpmath.workdps(60):
        for r in range(3):
            for j, tj in enumerate(t):
                # reference: central difference of mpmath.expm at 60 digits, step 1e-20
                Kp = mpmath.matrix(K.tolist()) + h * mpmath.matrix(dirs[r].tolist())
                Km = mpmath.matrix(K.tolist()) - h * mpmath.matrix(dirs[r].tolist())
                v = mpmath.matrix(c0.tolist())
                d = (mpmath.expm(Kp * tj) * v - mpmath.expm(Km * tj) * v) / (2 * h)
                ref = np.array([float(d[i]) for i in range(3)])
                np.testing.assert_allclose(S[r, j], ref, rtol=1e-12, atol=1e-15)


def test_sensitivities_against_expm_frechet():
    K = chain_matrix([1.0, 0.25, 0.05])
    E = np.zeros((4, 4))
    E[1, 1], E[2, 1] = -1.0, 1.0  # d/dk2
    c0 = np.array([1.0, 0.0, 0.0, 0.0])
    S = sensitivities(K, c0, [2.0], E)[0, 0]
    # reference: scipy.linalg.expm_frechet (Al-Mohy & Higham 2009), normwise accurate
    L = scipy.linalg.expm_frechet(2.0 * K, 2.0 * E, compute_expm=False)
    np.testing.assert_allclose(S, L @ c0, rtol=1e-10, atol=1e-14)


def test_block_route_matches_expm_frechet():
    """Reference: scipy.linalg.expm_frechet, L(tK, tE) c0 at each time."""
    K = np.array([[-0.3, 0.0, 0.1], [0.3, -0.2, 0.0], [0.0, 0.2, -0.1]])
    E = np.array([[0.0, 0.0, 0.0], [0.0, -0.2, 0.0], [0.0, 0.2, 0.0]])  # dK/d ln k2
    c0 = np.array([1.0, 0.2, 0.0])
    times = np.array([0.0, 0.5, 2.0, 7.5, 30.0])
    c, S = block_sensitivities(K, c0, times, E[None])
    for i, t in enumerate(times):
        expm, frechet = scipy.linalg.expm_frechet(t * K, t * E)
        np.testing.assert_allclose(c[i], expm @ c0, rtol=1e-13, atol=1e-15)
        np.testing.assert_allclose(S[0, i], frechet @ c0, rtol=1e-11, atol=1e-14)


def test_both_routes_agree_with_start_vectors_and_a_feed():
    # the derivative along a start vector is the propagated start vector (linearity)
    K = chain_matrix([0.8, 0.3])
    E = np.zeros((1, 3, 3))
    E[0, 0, 0], E[0, 1, 0] = -1.0, 1.0  # d/dk1
    c0 = np.array([1.0, 0.0, 0.0])
    feed = np.array([0.05, 0.0, 0.0])
    V = np.array([[0.0, 1.0, 0.0]])
    times = np.linspace(0.0, 6.0, 7)
    c, S = block_sensitivities(K, c0, times, E, feed, V)
    np.testing.assert_allclose(
        S[0], sensitivities(K, c0, times, E, feed)[0], rtol=1e-11, atol=1e-14
    )

    np.testing.assert_allclose(c, propagate(K, c0, times, feed), rtol=1e-12, atol=1e-15)
    np.testing.assert_allclose(S[1], propagate(K, V[0], times), rtol=1e-12, atol=1e-15)


def test_bad_directions_are_refused():
    with pytest.raises(RateMatrixError) as info:
        sensitivities(chain_matrix([1.0]), [1, 0], [1.0], np.zeros((1, 3, 3)))
    assert str(info.value) == "directions must have shape (d, 2, 2), got (1, 3, 3)"
    with pytest.raises(RateMatrixError) as info:
        sensitivities(chain_matrix([1.0]), [1, 0], [1.0], [[["x"]]])
    assert str(info.value) == "directions are not numeric"
    with pytest.raises(RateMatrixError) as info:
        sensitivities(chain_matrix([1.0]), [1, 0], [1.0], np.full((1, 2, 2), np.nan))
    assert str(info.value) == "directions have a non-finite entry"
