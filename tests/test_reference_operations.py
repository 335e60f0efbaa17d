"""Operations written in the scheme language and solved by ``kinetics.solve``, against
independent references (the public route; the solver itself is checked in
test_reference_timeline.py):

* the parent-daughter ingrowth formula after a complete elution (Bateman form; H. Bateman,
  Proc. Cambridge Philos. Soc. 15, 423-427 (1910); any radiochemistry textbook), evaluated
  with mpmath at 50 digits;
* closed forms of a single first-order step (linear ODE, textbook): a second portion, a
  temperature step between Arrhenius stretches (c = c0 exp(-k1 t1 - k2 (t - t1)), constants
  from the one Arrhenius law at 50 digits), a dosing window (c = r/k (1 - e^(-kt)), then
  decay) and three applications 14 days apart (a sum of decays);
* linearity: the solution with an addition at T is the solution without it plus the
  response to the addition started at T (superposition; exact identity);
* mpmath matrix exponentials at 50 digits stretch by stretch, with the dilution of a
  well-mixed volume :math:`c \\mapsto (V c + n)/(V + v)` at each portion (conservation of
  amount; common practice, no source).

All cases are invented scenarios.
"""

from __future__ import annotations

import math
from fractions import Fraction

import mpmath
import numpy as np
import pytest

import kinetics

HOUR, DAY = 3600.0, 86400.0

GENERATOR = """title: invented parent-daughter generator
P -> D   kP = 0.0105 1/h
D -> X   kD = 0.1155 1/h
start P = 1 mol/L
t_el = 24 h
every t_el: remove 100 % of D
"""


def mp(x):
    f = Fraction(x)
    return mpmath.mpf(f.numerator) / f.denominator


def test_generator_eluted_every_24_h_follows_the_ingrowth_formula():
    scheme = kinetics.parse(GENERATOR)
    sol = kinetics.solve(scheme, np.linspace(0.0, 7 * DAY, 29))
    eluted = [e for e in sol.events if e.action == "remove"]
    assert [e.time for e in eluted] == [k * DAY for k in range(1, 8)]
    kP, kD = Fraction(105, 10**4) / 3600, Fraction(1155, 10**4) / 3600
    with mpmath.workdps(50):
        for k, event in enumerate(eluted):
            since = mp(k * DAY)  # the previous elution left no daughter
            parent = mpmath.exp(-mp(kP) * since)
            grown = (
                parent
                * mp(kP)
                / (mp(kD) - mp(kP))
                * (mpmath.exp(-mp(kP) * mp(DAY)) - mpmath.exp(-mp(kD) * mp(DAY)))
            )
            assert abs(mp(-event.change) - grown) / grown < mpmath.mpf("1e-13")
            assert event.error_bound < 1e-13
    # just after each elution the daughter is exactly zero
    assert all(sol["D"][sol.after] == 0.0)


def test_the_generator_sweeps_its_elution_period_by_name():
    scheme = kinetics.parse(GENERATOR).with_values(quantities={"t_el": Fraction(12 * 3600)})
    sol = kinetics.solve(scheme, [0.0, DAY])
    assert [e.time for e in sol.events] == [12 * HOUR, DAY]


def test_a_second_portion_matches_the_closed_form():
    scheme = kinetics.parse(
        "A -> B  k1 = 0.02 1/min\nstart A = 0.5 mol/L\nat 30 min: add A = 0.25 mol/L\n"
    )
    t = np.array([0.0, 900.0, 1800.0, 2700.0, 3600.0])
    sol = kinetics.solve(scheme, t)
    assert sol.times.tolist() == [0.0, 900.0, 1800.0, 1800.0, 2700.0, 3600.0]
    k = Fraction(2, 100) / 60
    with mpmath.workdps(50):
        for time, after, a in zip(sol.times, sol.after, sol["A"], strict=True):
            exact = mpmath.mpf("0.5") * mpmath.exp(-mp(k) * mp(time))
            if time > 1800.0 or after:
                exact += mpmath.mpf("0.25") * mpmath.exp(-mp(k) * (mp(time) - 1800))
            assert abs(mp(a) - exact) / exact < mpmath.mpf("1e-14")


def test_superposition_through_the_language():
    text = (
        "A -> B  k1 = 1.2 1/h\nB -> C  k2 = 0.3 1/h\nB -> A  k3 = 0.05 1/h\n"
        "start A = 1 mol/L\nfrom 30 min to 2 h: feed B = 0.2 mol/L/h\n"
        "at 3 h: remove 40 % of C, B\n"
    )
    times = np.linspace(0.0, 5 * HOUR, 23)  # no output time at an operation
    total = kinetics.solve(kinetics.parse(text + "at 75 min: add A = 0.7 M, C = 0.01 M"), times)
    without = kinetics.solve(kinetics.parse(text), times)
    response = kinetics.solve(
        kinetics.parse(
            "A -> B  k1 = 1.2 1/h\nB -> C  k2 = 0.3 1/h\nB -> A  k3 = 0.05 1/h\n"
            "start A = 0 mol/L\nat 75 min: add A = 0.7 M, C = 0.01 M\n"
            "at 3 h: remove 40 % of C, B\n"
        ),
        times,
    )
    np.testing.assert_allclose(
        total.concentrations, without.concentrations + response.concentrations, rtol=1e-14
    )


def _mp_semi_batch(scheme, stops, portions):
    """The semi-batch run at 50 digits: stretch by stretch with mpmath.expm, diluting at
    each portion ``(time, volume added [L], {species: mol added})`` (start volume 1 L)."""
    Kh, Kl = scheme.rate_matrix_pair()
    n = Kh.shape[0]
    with mpmath.workdps(50):
        K = mpmath.matrix(n, n)
        for i in range(n):
            for j in range(n):
                K[i, j] = mp(Kh[i, j]) + mp(Kl[i, j])
        x = mpmath.matrix([mp(v) for v in scheme.initial_vector])
        V, now, rows = mpmath.mpf(1), mpmath.mpf(0), []
        for stop in stops:
            x = mpmath.expm(K * (mp(stop) - now)) * x
            now = mp(stop)
            rows.append([x[i] for i in range(n)])
            for time, volume, moles in portions:
                if time == stop:
                    x = x * V / (V + mp(volume))
                    for name, amount in moles.items():
                        x[scheme.index[name]] += mp(amount) / (V + mp(volume))
                    V += mp(volume)
                    rows.append([x[i] for i in range(n)])
        return rows


def test_a_semi_batch_run_with_portions_matches_the_reference():
    scheme = kinetics.parse(
        "A -> B  k1 = 0.03 1/min\nB -> C  k2 = 0.004 1/min\nstart A = 0.4 mol/L\n"
        "volume = 1.0 L\nat 30 min: add 250 mL with A = 0.8 mol/L\n"
        "at 60 min: add B = 0.02 mol\nat 90 min: add 100 mL\n"
    )
    stops = [0.0, 1800.0, 3600.0, 5400.0, 7200.0]
    sol = kinetics.solve(scheme, stops)
    rows = _mp_semi_batch(
        scheme,
        stops,
        [(1800.0, "0.25", {"A": Fraction(2, 10)}), (3600.0, 0, {"B": "0.02"}), (5400.0, "0.1", {})],
    )
    assert len(rows) == sol.times.size
    with mpmath.workdps(50):
        for got, exact, bound in zip(sol.concentrations, rows, sol.error_bound, strict=True):
            for g, e in zip(got.tolist(), exact, strict=True):
                if e > 0:
                    err = float(abs(mp(g) - e) / e)
                    assert err <= max(bound, 1e-15)
                    assert err < 1e-13
    assert [e.volume for e in sol.events] == pytest.approx([1.25e-3, 1.25e-3, 1.35e-3], rel=1e-15)


def test_a_temperature_step_between_arrhenius_stretches():
    # A = exp(-k(25 degC) t1 - k(60 degC) (t - t1)) for a single step (closed form)
    scheme = kinetics.parse(
        "A -> B  k = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\ntemperature = 25 degC\n"
        "start A = 1 M\nat 2 h: temperature = 60 degC\n"
    )
    sol = kinetics.solve(scheme, [0.0, 2 * HOUR, 3 * HOUR])
    law = scheme.constants["k"].arrhenius
    with mpmath.workdps(50):
        exponent = mp(law.exact(298.15)) * 7200 + mp(law.exact(333.15)) * 3600
        assert abs(mp(sol["A"][-1]) / mpmath.exp(-exponent) - 1) < mpmath.mpf("1e-14")


def test_a_dosing_window():
    # A -> B, k; feed r on [1 h, 3 h]: A = r/k (1 - e^(-k(t - 1 h))) inside, then decays
    scheme = kinetics.parse(
        "A -> B  k = 0.5 1/h\nstart B = 0 mol/L\nfrom 1 h to 3 h: feed A = 0.2 mol/L/h\n"
    )
    sol = kinetics.solve(scheme, [0.0, 2 * HOUR, 3 * HOUR, 5 * HOUR])
    k, r = 0.5, 0.2
    inside = r / k * (1 - math.exp(-k * 1))
    at_end = r / k * (1 - math.exp(-k * 2))
    later = at_end * math.exp(-k * 2)
    assert sol["A"].tolist()[0] == 0.0
    assert sol["A"][1] == pytest.approx(inside, rel=1e-14)
    assert sol["A"][2] == pytest.approx(at_end, rel=1e-14)
    assert sol["A"][3] == pytest.approx(later, rel=1e-14)
    assert [e.action for e in sol.events] == ["feed on", "feed off"]


def test_three_applications_14_days_apart():
    # P(t) = a sum over applications of e^(-k (t - t_i)) (superposition of first-order decays)
    scheme = kinetics.parse(
        "P -> M  k = 0.0693 1/d\nstart P = 0 mmol/kg\nevery 14 d from 0 d until 28 d: "
        "add P = 1.5 mmol/kg\n"
    )
    sol = kinetics.solve(scheme, np.linspace(0.0, 42 * DAY, 7))
    k = 0.0693
    for t, after, p in zip(sol.times / DAY, sol.after, sol["P"], strict=True):
        doses = [d for d in (0, 14, 28) if d < t or (d == t and after)]
        exact = sum(1.5 * math.exp(-k * (t - d)) for d in doses)
        assert p == pytest.approx(exact, rel=1e-13, abs=0)
