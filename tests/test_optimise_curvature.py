"""Second derivatives for the Newton steps (kinetics/optimise/curvature.py) against mpmath
derivatives (40 digits) of the closed form of A -> B -> C (Bateman 1910) with an Arrhenius
first step (Arrhenius 1889)."""

from __future__ import annotations

import mpmath
import numpy as np
import pytest

import kinetics
from kinetics.optimise import Goal, Model, parse_over
from kinetics.optimise.curvature import rate_curvatures
from kinetics.units import GAS_CONSTANT_EXACT

SCHEME = kinetics.parse(
    "t_p = 2 h\n"
    "A -> B  k1 = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\n"
    "B -> C  k2 = ln(2) / t_p\n"
    "temperature = 50 degC\nstart A = 1.5 mol/L\n"
    "require C <= 20 % of A"
)
R = mpmath.mpf(GAS_CONSTANT_EXACT.numerator) / GAS_CONSTANT_EXACT.denominator


def _k1(T):
    return mpmath.mpf(1e10) * mpmath.exp(-80000 / (R * T))


def _b(T, t, t_p, a0):
    k1, k2 = _k1(T), mpmath.log(2) / t_p
    return a0 * k1 / (k2 - k1) * (mpmath.exp(-k1 * t) - mpmath.exp(-k2 * t))


def _c(T, t, t_p, a0):
    return a0 * (1 - mpmath.exp(-_k1(T) * t)) - _b(T, t, t_p, a0)


def _hessian(f, x):
    out = np.zeros((4, 4))
    for i in range(4):
        for j in range(4):
            order = [0] * 4
            order[i] += 1
            order[j] += 1
            out[i, j] = float(mpmath.diff(f, tuple(x), tuple(order)))
    return out


def test_the_hessian_of_target_and_margins_matches_the_closed_form():
    mpmath.mp.dps = 40
    over = ["temperature=20:80:degC", "time=0:5:h", "t_p=1:4:h", "start:A=1:2"]
    model = Model(SCHEME, [parse_over(SCHEME, s) for s in over], Goal("B"))
    x = np.array([330.0, 5400.0, 9000.0, 1.5])
    p = model.point(x, hessian=True)
    exact = _hessian(_b, x)
    np.testing.assert_allclose(p.hessian, exact, rtol=0, atol=1e-12 * np.abs(exact).max())
    margin = _hessian(_c, x)  # the margin is 0.2 A0 - C: linear in A0
    np.testing.assert_allclose(p.curvatures[0], -margin, rtol=0, atol=1e-12 * np.abs(margin).max())


def test_second_differences_of_the_exact_constants():
    # d2k1/dT2 = k1 (Ea/R)/T^3 (Ea/(R T) - 2) (Arrhenius law differentiated twice)
    mpmath.mp.dps = 40
    model = Model(SCHEME, [parse_over(SCHEME, "temperature=20:80:degC")], Goal("B", end=60.0))
    T = 330.0
    curv = rate_curvatures(model, np.array([T]), 0, 0)
    exact = mpmath.diff(_k1, T, 2)
    assert curv[0] == pytest.approx(float(exact), rel=1e-12)
    assert curv[1] == 0.0  # k2 does not follow the temperature
