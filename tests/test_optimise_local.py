"""Local refinement (kinetics/optimise/local.py): Newton steps with the exact Hessian, the
trust-region step, the logarithmic time coordinate and SLSQP where a requirement binds.
Reference: the maximum of B in A -> B -> C at t = ln(k1/k2)/(k1 - k2) (Atkins & de Paula,
"Physical Chemistry", 10th ed., 2014)."""

from __future__ import annotations

import math

import numpy as np
import pytest

import kinetics
from kinetics.optimise import Goal, Model, parse_over
from kinetics.optimise.local import (
    TIME_FLOOR,
    newton,
    refine,
    scaled_problem,
    trust_region_step,
)
from kinetics.optimise.search import Candidate

K1, K2 = 0.3, 0.1
CHAIN = kinetics.parse(f"A -> B  k1 = {K1} 1/s\nB -> C  k2 = {K2} 1/s\nstart A = 1 mol/L")
T_MAX = math.log(K1 / K2) / (K1 - K2)


def _model(scheme=CHAIN, over=("time=0:30:s",)):
    return Model(scheme, [parse_over(scheme, s) for s in over], Goal("B"))


def test_newton_converges_to_the_textbook_maximum_in_few_steps():
    model = _model()
    start = Candidate(np.array([12.0]), model.point([12.0]).objective, 0.0)
    found, converged = newton(model, start)
    assert converged
    assert found.x[0] == pytest.approx(T_MAX, rel=1e-12)
    assert model.gradients <= 8


def test_a_search_that_reaches_a_known_optimum_ends_there():
    model = _model()
    known = Candidate(np.array([T_MAX]), model.point([T_MAX]).objective, 0.0)
    start = Candidate(np.array([12.0]), model.point([12.0]).objective, 0.0)
    found, converged = newton(model, start, [known])
    assert converged
    assert found is known


def test_the_time_is_searched_in_its_logarithm():
    problem = scaled_problem(_model(), Candidate(np.array([5.0]), 0.5, 0.0))
    assert problem.log.tolist() == [True]
    np.testing.assert_allclose(problem.x_of([0.0, 1.0][:1]), [30.0 * TIME_FLOOR])
    u = problem.u_of([T_MAX])
    assert problem.x_of(u)[0] == pytest.approx(T_MAX, rel=1e-14)
    dx, ddx = problem.slopes(u)
    assert ddx[0] == pytest.approx(dx[0] * math.log(1 / TIME_FLOOR), rel=1e-12)
    assert dx[0] == pytest.approx(T_MAX * math.log(1 / TIME_FLOOR), rel=1e-12)


def test_the_trust_region_step_stays_within_its_radius():
    g, H = np.array([1.0, -2.0]), np.array([[-1.0, 0.0], [0.0, 2.0]])  # indefinite
    p = trust_region_step(g, H, 0.5)
    assert np.linalg.norm(p) == pytest.approx(0.5, rel=1e-9)
    assert g @ p + 0.5 * p @ H @ p < 0
    q = trust_region_step(np.array([1.0]), np.array([[4.0]]), 1.0)  # the Newton step fits
    assert q[0] == pytest.approx(-0.25)


def test_an_active_requirement_hands_over_to_sqp():
    scheme = kinetics.parse(
        f"A -> B  k1 = {K1} 1/s\nB -> C  k2 = {K2} 1/s\nstart A = 1 mol/L\nrequire C <= 10 % of A"
    )
    model = _model(scheme)
    start = Candidate(np.array([1.0]), model.point([1.0]).objective, 0.0)
    found = refine(model, start)
    p = model.point(found.x)
    assert p.margins[0] == pytest.approx(0.0, abs=1e-12)  # C at its limit before B's top
    assert found.x[0] < T_MAX


def test_the_last_step_taken_unsolved_keeps_the_exact_target_and_place():
    # the step whose predicted gain is at rounding level is taken without solving the
    # model there: its target is the predicted one, equal to the exact value
    model = _model()
    start = Candidate(np.array([12.0]), model.point([12.0]).objective, 0.0)
    found, converged = newton(model, start)
    assert converged
    exact = model.point(found.x).objective
    assert found.objective == pytest.approx(exact, rel=1e-14)
    assert found.x[0] == pytest.approx(T_MAX, rel=1e-12)


def test_a_search_about_to_step_onto_a_known_optimum_stops_before_solving_it():
    model = _model()
    known = Candidate(np.array([T_MAX]), model.point([T_MAX]).objective, 0.0)
    near = T_MAX * 1.02
    start = Candidate(np.array([near]), model.point([near]).objective, 0.0)
    model.evaluations = 0
    found, converged = newton(model, start, [known])
    assert converged
    assert found is known
    assert model.evaluations == 1  # the start only: its Newton step lands on the known one


def test_a_linear_setting_with_large_values_maps_without_overflow():
    # an activation energy [J/mol] is searched linearly: its scaled coordinate never goes
    # through exp (filterwarnings = error turns an overflow warning into a failure)
    scheme = kinetics.parse(
        "A -> B  k1 = arrhenius(A = 1e10 1/s, Ea = 80 kJ/mol)\nB -> C  k2 = 1e-3 1/s\n"
        "temperature = 50 degC\nstart A = 1 mol/L"
    )
    model = Model(scheme, [parse_over(scheme, "k1.Ea=75:85:kJ/mol")], Goal("B", end=600.0))
    problem = scaled_problem(model, Candidate(np.array([80e3]), 0.1, 0.0))
    assert problem.log.tolist() == [False]
    np.testing.assert_allclose(problem.x_of([0.0, 0.5, 1.0][:1]), [75e3])
    assert problem.x_of([0.5])[0] == pytest.approx(80e3, rel=1e-15)
