"""First breaks of requirements on species that move one way, for a stack of problems
(kinetics/analysis/requirements_batch.py), against the scan of one problem at a time
(kinetics.analysis.requirements.requirement_times) and against closed forms of A -> B:
A(t) = A0 exp(-k t), B(t) = A0 (1 - exp(-k t)) (textbook first-order kinetics, e.g.
Atkins & de Paula, "Physical Chemistry", 10th ed., 2014), so t(A = x A0) = ln(1/x)/k
and t(B = y A0) = -ln(1 - y)/k."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from kinetics.analysis.requirements import first_broken_batch, requirement_times
from kinetics.analysis.requirements_batch import monotone_first_broken
from kinetics.requirements import Requirement


def _one_by_one(K, c0, requirements, names):
    out = np.full((K.shape[0], len(requirements)), np.nan)
    for m in range(K.shape[0]):
        start = dict(zip(names, c0[m], strict=True))
        own = [r.for_start(start) for r in requirements]
        for k, t in enumerate(requirement_times(K[m], c0[m], own, names).times):
            if t.first_broken is not None:
                out[m, k] = t.first_broken
    return out


def _share(text, species, comparison, share, of):
    from fractions import Fraction

    return Requirement(text, species, comparison, float(share), Fraction(share), of)


def test_the_closed_forms_of_a_to_b():
    k = np.array([0.01, 0.2, 3.0])
    K = np.stack([[[-x, 0.0], [x, 0.0]] for x in k])
    c0 = np.tile([2.0, 0.0], (3, 1))
    levels = np.array([[1.8, 0.01]] * 3)  # A >= 90 %, B <= 0.5 % of A
    t, done = monotone_first_broken(K, c0, [0, 1], [1.0, -1.0], levels, np.ones((3, 2), bool))
    assert done.all()
    np.testing.assert_allclose(t[:, 0], math.log(10 / 9) / k, rtol=1e-14)
    np.testing.assert_allclose(t[:, 1], -math.log(1 - 0.005) / k, rtol=1e-12)


def test_what_moves_away_from_its_level_holds_for_ever_and_a_broken_start_is_zero():
    K = np.array([[[-0.1, 0.0], [0.1, 0.0]]])
    c0 = np.array([[1.0, 0.5]])
    # A <= 2 (falls), B >= 0.1 (rises), A >= 2 (broken at the start), B <= 5 (limit 1.5)
    levels = np.array([[2.0, 0.1, 2.0, 5.0]])
    holds = np.array([[True, True, False, True]])
    t, done = monotone_first_broken(K, c0, [0, 1, 0, 1], [-1.0, 1.0, 1.0, -1.0], levels, holds)
    assert done.all()
    assert np.isnan(t[0, [0, 1, 3]]).all()
    assert t[0, 2] == 0.0


def test_species_that_rise_and_fall_are_left_to_the_scan():
    K = np.array([[[-0.3, 0.0, 0.0], [0.3, -0.1, 0.0], [0.0, 0.1, 0.0]]])
    c0 = np.array([[1.0, 0.0, 0.0]])
    t, done = monotone_first_broken(K, c0, [1], [-1.0], np.array([[0.2]]), np.array([[True]]))
    assert not done.any()
    assert np.isnan(t).all()


REQUIREMENTS = [
    _share("A >= 90 %", "A", ">=", 0.9, "A"),
    _share("C <= 5 % of A", "C", "<=", 0.05, "A"),
    _share("B <= 20 % of A", "B", "<=", 0.2, "A"),  # rises and falls: the scan
    _share("C <= 150 % of A", "C", "<=", 1.5, "A"),  # the limit holds: never
    _share("D <= 1 % of A", "D", "<=", 0.01, "A"),
]


@settings(max_examples=20, deadline=None)
@given(
    k1=st.floats(1e-3, 10.0),
    k2=st.floats(1e-3, 10.0),
    back=st.floats(0.0, 5.0),
    side=st.floats(0.0, 1.0),
    a0=st.floats(0.5, 2.0),
)
def test_the_stack_equals_the_scan_of_each_member(k1, k2, back, side, a0):
    # A <-> B -> C and A -> D: C and D only rise, A and B rise and fall or fall
    K = np.array(
        [
            [-(k1 + side), back, 0.0, 0.0],
            [k1, -(back + k2), 0.0, 0.0],
            [0.0, k2, 0.0, 0.0],
            [side, 0.0, 0.0, 0.0],
        ]
    )
    stack = np.stack([K, K * 0.5, K * 3.0])
    c0 = np.array([[a0, 0.0, 0.0, 0.0]] * 3)
    names = ["A", "B", "C", "D"]
    got = first_broken_batch(stack, c0, REQUIREMENTS, names)
    want = _one_by_one(stack, c0, REQUIREMENTS, names)
    np.testing.assert_array_equal(np.isnan(got), np.isnan(want))
    np.testing.assert_allclose(got, want, rtol=1e-11)


def test_a_closed_class_is_left_to_the_scan():
    # A <-> B with no way out, C made from A: the limit of C is not the transient formula
    K = np.array([[[-0.2, 0.1, 0.0], [0.1, -0.1, 0.0], [0.1, 0.0, 0.0]]])
    c0 = np.array([[1.0, 0.0, 0.0]])
    requirement = [Requirement("C <= 0.5 mol/L", "C", "<=", 0.5)]
    got = first_broken_batch(K, c0, requirement, ["A", "B", "C"])
    want = _one_by_one(K, c0, requirement, ["A", "B", "C"])
    np.testing.assert_allclose(got, want, rtol=1e-11)


@pytest.mark.parametrize("low", [0.0, 1e-20])
def test_the_exact_pair_of_the_rates_is_used(low):
    K = np.array([[[-0.1, 0.0], [0.1, 0.0]]])
    K_low = np.array([[[-low, 0.0], [low, 0.0]]])
    c0 = np.array([[1.0, 0.0]])
    levels = np.array([[0.9, 0.1]])
    t, done = monotone_first_broken(
        K, c0, [0, 1], [1.0, -1.0], levels, np.ones((1, 2), bool), K_low=K_low
    )
    assert done.all()
    k = 0.1 + low
    np.testing.assert_allclose(t[0], [math.log(10 / 9) / k, -math.log(0.9) / k], rtol=1e-13)


def test_a_requirement_on_an_unknown_species_is_our_error():
    from kinetics.errors import SpeciesError

    K = np.array([[[-0.1, 0.0], [0.1, 0.0]]])
    c0 = np.array([[1.0, 0.0]])
    requirement = [Requirement("X <= 0.5 mol/L", "X", "<=", 0.5)]
    with pytest.raises(SpeciesError) as err:
        first_broken_batch(K, c0, requirement, ["A", "B"])
    assert str(err.value) == (
        "the requirement names X, which is not a species of the problem; species are A, B"
    )


def test_members_whose_newton_walk_does_not_converge_go_to_the_scan(monkeypatch):
    """With a budget of one Newton step nothing converges: every member is answered by
    the scan, and the answers are the closed form of A -> B, t(B = y A0) = -ln(1 - y)/k
    (B is formed, so the batch would bracket and refine it)."""
    from kinetics.analysis import requirements_batch

    monkeypatch.setattr(requirements_batch, "MAX_NEWTON", 1)
    k = np.array([0.01, 0.2])
    K = np.stack([np.array([[-x, 0.0], [x, 0.0]]) for x in k])
    c0 = np.array([[1.0, 0.0], [1.0, 0.0]])
    requirement = [Requirement("B <= 0.1 mol/L", "B", "<=", 0.1)]
    calls = []
    scan = requirements_batch.monotone_first_broken

    def counted(*args, **kwargs):
        out, done = scan(*args, **kwargs)
        calls.append(done.copy())
        return out, done

    monkeypatch.setattr(
        "kinetics.analysis.requirements_batch.monotone_first_broken", counted, raising=True
    )
    got = first_broken_batch(K, c0, requirement, ["A", "B"])
    assert calls
    assert not calls[0].any()
    np.testing.assert_allclose(got[:, 0], -np.log(1 - 0.1) / k, rtol=1e-12)
