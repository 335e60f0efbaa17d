"""Sensitivities of the optimum (kinetics/optimise/sensitivity.py) against central
differences of re-optimised problems (each parameter scaled by 1 +- 1e-5, the optimum
found again; the difference of the logarithms over that of the parameter), and the
closed form of the best quench of A -> B -> C, t = ln(k1/k2)/(k1 - k2) (Atkins & de
Paula, "Physical Chemistry", 10th ed., 2014)."""

from __future__ import annotations

import doctest
import math
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest

import kinetics
from kinetics import parameters
from kinetics.optimise import optimise
from kinetics.optimise import sensitivity as module
from kinetics.optimise.sensitivity import optimum_sensitivities, parameter_settings

NETWORKS = Path(__file__).resolve().parent.parent / "networks"
STEP = 1e-5
CHAIN = (
    "Ea2 = 105 kJ/mol\n"
    "A -> B  k1 = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\n"
    "B -> C  k2 = arrhenius(A = 1e13 1/s, Ea = Ea2)\n"
    "temperature = 50 degC\nstart A = 1 mol/L\n"
)


def test_doctests_run():
    failed, _ = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert failed == 0


def _scaled(scheme, extra, factor):
    value = extra.lo_internal * factor
    if extra.kind == "prefactor":
        target = parameters.Target(f"{extra.name}.A", "prefactor", extra.target, "")
        return parameters.scheme_with(scheme, [target], [value])
    if extra.kind == "temperature":
        return scheme.with_values(temperature=value)
    return scheme.with_values(quantities={extra.name: Fraction(value)})


def _central(scheme, extra, run):
    up, down = run(_scaled(scheme, extra, 1 + STEP)), run(_scaled(scheme, extra, 1 - STEP))
    width = math.log1p(STEP) - math.log1p(-STEP)
    out = {"objective": (math.log(up.objective) - math.log(down.objective)) / width}
    for j, s in enumerate(up.settings):
        out[s.name] = (math.log(up.x[j]) - math.log(down.x[j])) / width
    return out


@pytest.mark.parametrize(
    ("text", "over", "until", "active"),
    [
        (CHAIN, ["temperature=20:100:degC"], 3600.0, []),
        (CHAIN, ["time=0:10:h"], None, []),
        (
            CHAIN + "A -> I  k3 = arrhenius(A = 1e14 1/s, Ea = 125 kJ/mol)\n"
            "require I <= 0.02 % of A\n",
            ["temperature=20:100:degC", "time=0:3:h"],
            None,
            ["I <= 0.02 % of A"],
        ),
    ],
)
def test_they_match_central_differences_of_re_optimised_problems(text, over, until, active):
    scheme = kinetics.parse(text)

    def run(s):
        return optimise(s, "B", over, until=until)

    best = optimise(scheme, "B", over, until=until, sensitivity=True)
    assert best.active_requirements == active
    found = best.sensitivity
    extras = parameter_settings(scheme, best.settings)
    names = ["Ea2", "k1", "k2", *(["k3"] if active else [])]
    if not any(s.name == "temperature" for s in best.settings):
        names.append("temperature")
    assert [e.name for e in extras] == names
    for extra in extras:
        want = _central(scheme, extra, run)
        assert found["objective"][extra.name] == pytest.approx(want["objective"], abs=1e-5)
        for s in best.settings:
            assert found["best"][s.name][extra.name] == pytest.approx(want[s.name], abs=1e-5)


def test_the_best_quench_of_a_to_b_to_c_follows_the_closed_form():
    # t* = ln(k1/k2)/(k1 - k2), B* = (k1/k2)^(k2/(k2 - k1)); derivatives by mpmath
    import mpmath

    k1, k2 = 0.3, 0.1
    scheme = kinetics.parse(f"A -> B  k1 = {k1} 1/s\nB -> C  k2 = {k2} 1/s\nstart A = 1 mol/L")
    found = optimum_sensitivities(optimise(scheme, "B", "time=0:30:s"), scheme)

    def t_star(a, b):
        return mpmath.log(a / b) / (a - b)

    def b_star(a, b):
        return (a / b) ** (b / (b - a))

    for name, wrt in (("k1", (1, 0)), ("k2", (0, 1))):
        for key, f, value in (("time", t_star, found["best"]["time"]), (None, b_star, None)):
            with mpmath.workdps(30):
                p = k1 if name == "k1" else k2
                slope = mpmath.diff(f, (mpmath.mpf(k1), mpmath.mpf(k2)), wrt)
                want = float(slope * p / f(mpmath.mpf(k1), mpmath.mpf(k2)))
            got = value[name] if key else found["objective"][name]
            assert got == pytest.approx(want, rel=1e-9)


def test_settings_and_what_follows_from_them_are_not_parameters():
    scheme = kinetics.parse(
        "t_p = 5 h\nA -> B  k1 = ln(2) / t_p\n"
        "B -> C  k2 = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\n"
        "temperature = 50 degC\nstart A = 1 mol/L"
    )
    best = optimise(scheme, "B", ["t_p=1:10:h", "temperature=20:80:degC"], until=3600.0)
    # t_p and k1 (defined from it) are settings; the temperature too; k2 by its prefactor
    assert [(e.name, e.kind) for e in parameter_settings(scheme, best.settings)] == [
        ("k2", "prefactor")
    ]


def test_the_best_time_of_a_daughter_activity_follows_its_half_life():
    # t* = ln(lambda_D/lambda_P)/(lambda_D - lambda_P) (Bateman 1910; textbook maximum of
    # the daughter's activity), differentiated by mpmath; invented half-lives
    import mpmath

    scheme = kinetics.parse(
        "t_d = 6 h\nP -> D  half_life = 66 h\nD -> X  lam = ln(2) / t_d\nstart P = 10 GBq"
    )
    best = optimise(scheme, "D", [], best_time=True, until=400 * 3600.0, activity="GBq",
                    sensitivity=True)  # fmt: skip
    lam_p = mpmath.log(2) / (66 * 3600)

    def t_star(t_d):
        lam_d = mpmath.log(2) / t_d
        return mpmath.log(lam_d / lam_p) / (lam_d - lam_p)

    with mpmath.workdps(30):
        t_d = mpmath.mpf(6 * 3600)
        want = float(mpmath.diff(t_star, t_d) * t_d / t_star(t_d))
    assert best.sensitivity["best"]["time"]["t_d"] == pytest.approx(want, rel=1e-9)


def test_a_point_that_is_not_stationary_for_its_active_set_gets_no_sensitivities():
    """Moved off the optimum (1 % in both settings) while the impurity limit is still
    listed as active, the multiplier cannot cancel the gradient: no derivative is given
    (None), rather than the derivative of an optimum that is not there."""
    import dataclasses

    from kinetics.optimise.sensitivity import optimum_sensitivities

    scheme = kinetics.parse(
        CHAIN + "A -> I  k3 = arrhenius(A = 1e14 1/s, Ea = 125 kJ/mol)\nrequire I <= 0.02 % of A\n"
    )
    best = optimise(scheme, "B", ["temperature=20:100:degC", "time=0:3:h"])
    assert best.active_requirements == ["I <= 0.02 % of A"]
    assert all(v is not None for v in optimum_sensitivities(best, scheme)["objective"].values())
    moved = dataclasses.replace(best, x=np.asarray(best.x) * np.array([1.01, 0.99]))
    found = optimum_sensitivities(moved, scheme)
    assert all(v is None for v in found["objective"].values())
