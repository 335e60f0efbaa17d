"""The model of an optimisation (kinetics/optimise/model.py): values and exact derivatives
against the closed form of A -> B -> C (Bateman 1910) with Arrhenius constants (Arrhenius
1889), differentiated by mpmath at 40 digits."""

from __future__ import annotations

import math

import mpmath
import numpy as np
import pytest

import kinetics
from kinetics.errors import WorkingRangeError
from kinetics.optimise import Goal, Model, parse_over
from kinetics.units import GAS_CONSTANT_EXACT

SCHEME = kinetics.parse(
    "t_p = 2 h\n"
    "A -> B  k1 = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\n"
    "B -> C  k2 = ln(2) / t_p\n"
    "temperature = 50 degC\nstart A = 1.5 mol/L\n"
    "require C <= 20 % of A\nrequire B >= 0.1 mol/L"
)


def _b(T, t, t_p, a0):
    # B(t) of A -> B -> C from pure A (Bateman 1910), k1 by the Arrhenius law
    R = mpmath.mpf(GAS_CONSTANT_EXACT.numerator) / GAS_CONSTANT_EXACT.denominator
    k1 = mpmath.mpf(1e10) * mpmath.exp(-80000 / (R * T))
    k2 = mpmath.log(2) / t_p
    return a0 * k1 / (k2 - k1) * (mpmath.exp(-k1 * t) - mpmath.exp(-k2 * t))


def _c(T, t, t_p, a0):
    R = mpmath.mpf(GAS_CONSTANT_EXACT.numerator) / GAS_CONSTANT_EXACT.denominator
    k1 = mpmath.mpf(1e10) * mpmath.exp(-80000 / (R * T))
    return a0 * (1 - mpmath.exp(-k1 * t)) - _b(T, t, t_p, a0)


@pytest.fixture(scope="module")
def model():
    over = ["temperature=20:80:degC", "time=0:5:h", "t_p=1:4:h", "start:A=1:2"]
    return Model(SCHEME, [parse_over(SCHEME, s) for s in over], Goal("B"))


def test_value_and_exact_gradient_match_the_closed_form(model):
    mpmath.mp.dps = 40
    x = np.array([330.0, 5400.0, 9000.0, 1.5])
    p = model.point(x, gradient=True)
    assert p.objective == pytest.approx(float(_b(*x)), rel=1e-14)
    for j in range(4):
        exact = mpmath.diff(lambda v, j=j: _b(*[v if k == j else x[k] for k in range(4)]), x[j])
        assert p.gradient[j] == pytest.approx(float(exact), rel=1e-9, abs=1e-18)
    # the margins: 0.2 A0 - C and B - 0.1, with d(0.2 A0)/d A0 = 0.2
    c = float(_c(*x))
    np.testing.assert_allclose(p.margins, [0.2 * 1.5 - c, p.objective - 0.1], rtol=1e-13)
    dc = [
        float(mpmath.diff(lambda v, j=j: _c(*[v if k == j else x[k] for k in range(4)]), x[j]))
        for j in range(4)
    ]
    expected = np.array([[-d for d in dc], list(p.gradient)])
    expected[0, 3] += 0.2
    np.testing.assert_allclose(p.jacobian, expected, rtol=1e-8, atol=1e-16)
    assert model.gradients == 1


def test_the_yield_divides_by_the_start_and_follows_it():
    mpmath.mp.dps = 40
    over = [parse_over(SCHEME, s) for s in ("time=0:5:h", "start:A=1:2")]
    m = Model(SCHEME, over, Goal("B", yield_basis=True))
    x = np.array([5400.0, 1.2])
    p = m.point(x, gradient=True)
    T, t_p = 323.15, 7200.0
    assert p.objective == pytest.approx(float(_b(T, x[0], t_p, 1.2)) / 1.2, rel=1e-14)
    # the yield of a first-order scheme does not depend on the start value
    assert abs(p.gradient[1]) < 1e-14
    slope = mpmath.diff(lambda v: _b(T, v, t_p, 1), x[0])
    assert p.gradient[0] == pytest.approx(float(slope), rel=1e-12)


def test_many_times_in_one_call_agree_with_single_points(model):
    x = np.array([330.0, 0.0, 9000.0, 1.5])
    times = np.array([7200.0, 60.0, 3600.0])
    values, margins, _ = model.values(x, times)
    for k, t in enumerate(times):
        y = x.copy()
        y[1] = t
        p = model.point(y)
        assert values[k] == p.objective
        np.testing.assert_array_equal(margins[k], p.margins)


def test_the_best_time_adds_a_time_setting_in_the_unit_asked():
    m = Model(SCHEME, [], Goal("B", best_time=True, end=7200.0, time_unit="h"))
    (time,) = m.settings
    assert (time.name, time.unit, time.high, time.hi_internal) == ("time", "h", 2.0, 7200.0)
    assert m.end_time([3600.0]) == 3600.0
    assert math.isclose(time.shown(5400.0), 1.5)


def test_a_scheme_too_large_is_refused():
    lines = [f"S{i} -> S{i + 1}  k{i} = 1 1/s" for i in range(201)]
    big = kinetics.parse("\n".join([*lines, "start S0 = 1 mol/L"]))
    with pytest.raises(WorkingRangeError) as err:
        Model(big, [], Goal("S1", end=1.0))
    assert str(err.value) == (
        "an optimisation solves schemes of up to 200 species; this one has 202; "
        "lump species or split the scheme"
    )
