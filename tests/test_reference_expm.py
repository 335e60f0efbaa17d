"""Entrywise accuracy of the exponential engine against mpmath at high precision.

Every reference value here comes from mpmath.expm (a general-purpose
arbitrary-precision reference library, Taylor series with scaling and squaring) at
50 significant digits: computed on the fly for the named cases, and stored for the
300 random networks by ``tests/data/make_references.py``.  The error of each entry
is measured in mpmath, so the reference itself is not rounded to double.
"""

from __future__ import annotations

import gzip
import json
from pathlib import Path

import mpmath
import numpy as np
import pytest

from kinetics.propagate import expm_nonnegative_certified, propagate

from conftest import chain_matrix

REF_DPS = 50
FLOOR = mpmath.mpf("1e-300")  # entries below this are outside the accuracy target


def mp_expm(A: np.ndarray, t: float):
    # reference: mpmath.expm at 50 digits (general-purpose reference library)
    with mpmath.workdps(REF_DPS):
        return mpmath.expm(mpmath.matrix(A.tolist()) * mpmath.mpf(t))


def worst_relative_error(F: np.ndarray, E) -> float:
    """Largest |F - E| / E over entries E > 1e-300, evaluated in mpmath."""
    worst = mpmath.mpf(0)
    with mpmath.workdps(REF_DPS):
        for i in range(F.shape[0]):
            for j in range(F.shape[1]):
                e = E[i, j]
                if e > FLOOR:
                    worst = max(worst, abs(mpmath.mpf(float(F[i, j])) - e) / e)
    return float(worst)


NAMED = {
    # four steps with equal constants: defective (one Jordan block of size 5)
    "equal-constants chain": (chain_matrix([1.0, 1.0, 1.0, 1.0]), 2.5, 1e-13),
    # near-defective: Bateman's formula divides by 1e-9 here
    "nearly equal constants": (chain_matrix([1.0, 1.0 + 1e-9, 1.0 - 1e-9]), 3.0, 1e-13),
    # A -> B -> C -> A with a leak from C (complex eigenvalues)
    "irreversible cycle with leak": (
        np.array([[-1.0, 0.0, 2.0], [1.0, -3.0, 0.0], [0.0, 3.0, -2.5]]),
        1.7,
        1e-13,
    ),
    # A <-> B <-> C, B -> D <-> E
    "reversible network": (
        np.array(
            [
                [-2.0, 0.5, 0.0, 0.0, 0.0],
                [2.0, -3.5, 4.0, 0.0, 0.0],
                [0.0, 1.0, -4.0, 0.0, 0.0],
                [0.0, 2.0, 0.0, -0.3, 0.7],
                [0.0, 0.0, 0.0, 0.3, -0.7],
            ]
        ),
        4.0,
        1e-13,
    ),
    # 20-step chain at an early time: the last species is about 1e-79
    "trace species of a 20-step chain": (chain_matrix([1.0] * 20), 1e-3, 1e-13),
    "20-step chain, trace species at 0.5 s": (
        chain_matrix(list(np.linspace(0.5, 3.0, 20))),
        0.5,
        1e-13,
    ),
}


@pytest.mark.parametrize("name", list(NAMED))
def test_named_cases_entrywise(name):
    K, t, mark = NAMED[name]
    F, bound = expm_nonnegative_certified(K, t)
    E = mp_expm(K, t)
    err = worst_relative_error(F, E)
    assert np.all(F >= 0)
    assert err <= mark
    assert err <= bound  # the certified bound holds


def test_trace_species_really_is_trace():
    K, t, _ = NAMED["trace species of a 20-step chain"]
    F = expm_nonnegative_certified(K, t)[0]
    # reference: A0 (kt)^n e^{-kt} / n! for the n-th decaying member of an
    # equal-constant chain, here n = 19 (textbook result)
    expected = 1e-3**19 / 121645100408832000 * np.exp(-1e-3)
    assert F[19, 0] < 1e-50
    assert 0 < F[20, 0] < 1e-50
    np.testing.assert_allclose(F[19, 0], expected, rtol=1e-14, atol=0)


@pytest.mark.parametrize("t", [1e-3, 1.0, 1e3])
def test_stiff_30_species_chain(t):
    # constants log-spaced 1e-6 .. 1e6 1/s (12 orders of magnitude)
    K = chain_matrix(list(np.logspace(-6, 6, 29)))
    F, bound = expm_nonnegative_certified(K, t)
    err = worst_relative_error(F, mp_expm(K, t))
    assert np.all(F >= 0)
    assert err <= 1e-12
    assert err <= bound


def test_propagate_vector_matches_reference():
    K, t, _ = NAMED["reversible network"]
    c0 = np.array([1.0, 0.0, 0.25, 0.0, 0.0])
    c = propagate(K, c0, [0.0, t])
    E = mp_expm(K, t)
    with mpmath.workdps(REF_DPS):
        ref = E * mpmath.matrix(c0.tolist())
        err = max(float(abs(mpmath.mpf(float(c[1, i])) - ref[i]) / ref[i]) for i in range(5))
    assert err <= 1e-13
    np.testing.assert_array_equal(c[0], c0)


# "a few hundred", as the engine issue asks; more: benchmarks/bench_propagate.py --accuracy
STORED = Path(__file__).parent / "data" / "stiff_expm_300.json.gz"


def test_random_stiff_networks():
    # references stored by tests/data/make_references.py (mpmath.expm, 50 digits)
    with gzip.open(STORED, "rt", encoding="utf-8") as f:
        cases = json.load(f)
    assert len(cases) == 300
    errs = []
    for case in cases:
        K = np.array([[float.fromhex(x) for x in row] for row in case["K"]])
        t = float.fromhex(case["t"])
        F, bound = expm_nonnegative_certified(K, t)
        assert np.all(F >= 0)
        with mpmath.workdps(REF_DPS):
            E = mpmath.matrix([[mpmath.mpf(x) for x in row] for row in case["exp"]])
        err = worst_relative_error(F, E)
        assert err <= bound
        errs.append(err)
    assert max(errs) <= 1e-11
    assert np.median(errs) <= 1e-13
