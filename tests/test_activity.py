"""Activities A = lambda N (kinetics/activity.py).

Check values: N_A = 6.02214076e23 /mol and 1 Ci = 3.7e10 Bq exactly (BIPM, SI brochure,
9th edition, 2019, tables 1 and 4; NIST SP 811, 2008); lambda = ln 2 / t_half (textbook
definition); hand arithmetic otherwise.
"""

from __future__ import annotations

import math
from fractions import Fraction

import numpy as np
import pytest

from kinetics import parse
from kinetics.activity import (
    activities,
    activity_factors,
    amount_from_activity,
    amounts_from_activities,
    decay_constants,
    decay_rates,
    equilibria,
    start_amounts,
    start_amounts_for_rates,
)
from kinetics.errors import ActivityError

N_A = Fraction("6.02214076e23")
BRANCHES = """\
P -> D  half_life = 10 h, fraction = 60 %
P -> E  half_life = 10 h, fraction = 30 %
D -> F  k1 = 0.5 1/h
start P = 2 umol
"""


def test_decay_constants_add_every_branch_and_the_untracked_share():
    scheme = parse(BRANCHES)
    lam = decay_constants(scheme)
    # 60 % + 30 % + the untracked 10 %: the parent decays with its half-life, ln 2 / 10 h
    assert float(lam["P"]) == pytest.approx(math.log(2) / 36000, rel=1e-15)
    assert lam["D"] == Fraction(1, 7200)
    assert lam["E"] == 0
    assert lam["F"] == 0


def test_amount_from_activity_is_exact():
    assert amount_from_activity(Fraction(10**6), Fraction(1, 100)) == Fraction(10**8) / N_A
    with pytest.raises(ActivityError) as info:
        amount_from_activity(Fraction(1), Fraction(0))
    assert str(info.value) == (
        "a species that does not decay has no activity; give its start value as an amount"
    )


def test_activities_and_back():
    scheme = parse("P -> D  k1 = 0.001 1/s\nstart P = 1 mmol")
    a = activities(scheme, [[1.0, 0.5]], "MBq")
    # 1 mmol at 0.001 1/s: 1e-3 * N_A * 1e-3 Bq = 6.02214076e17 Bq (hand value)
    np.testing.assert_allclose(a, [[6.02214076e11, 0.0]], rtol=1e-15)
    ci = activities(scheme, [1.0, 0.0], "Ci")
    np.testing.assert_allclose(ci, [6.02214076e17 / 3.7e10, 0.0], rtol=1e-15)
    back = amounts_from_activities(scheme, a, "MBq")
    np.testing.assert_allclose(back, [[1.0, 0.0]], rtol=1e-15)


def test_activity_per_volume_for_schemes_per_volume():
    scheme = parse("P -> D  k1 = 1 1/s\nstart P = 1 umol/L")
    np.testing.assert_allclose(activity_factors(scheme, "MBq/L"), [602214076000.0, 0.0])


@pytest.mark.parametrize(
    ("unit", "message"),
    [
        (
            "mol",
            "'mol' is an amount of substance, not an activity (the scheme is kept in mmol); "
            "write e.g. MBq for a scheme in amounts, MBq/L for one per volume",
        ),
        (
            "MBq/L",
            "'MBq/L' is the dimension length^-3 time^-1, not an activity (the scheme is "
            "kept in mmol); write e.g. MBq for a scheme in amounts, MBq/L for one per volume",
        ),
        ("Bqq", "unknown unit of activity 'Bqq'; write e.g. MBq, kBq or mCi"),
    ],
)
def test_units_that_do_not_fit(unit, message):
    scheme = parse("P -> D  k1 = 0.001 1/s\nstart P = 1 mmol")
    with pytest.raises(ActivityError) as info:
        activity_factors(scheme, unit)
    assert str(info.value) == message


def test_an_activity_of_a_stable_species_is_refused():
    scheme = parse("P -> D  k1 = 0.001 1/s\nstart P = 1 mmol")
    with pytest.raises(ActivityError) as info:
        amounts_from_activities(scheme, [1.0, 2.0], "Bq")
    assert str(info.value) == (
        "an activity is given for a species that does not decay (D); a stable species has "
        "activity 0; give its amount instead"
    )
    with pytest.raises(ActivityError) as info:
        start_amounts(scheme, {"D": Fraction(1)})
    assert str(info.value) == (
        "D has a start activity but does not decay in this scheme; give its start value as "
        "an amount"
    )


def test_start_activities_follow_the_decay_constants():
    scheme = parse("t = 10 h\nP -> D  half_life = t\nstart P = 1 kBq")
    amount = start_amounts(scheme, {"P": Fraction(1000)})["P"]
    assert amount == scheme.initial["P"]
    # N = A t / ln 2 atoms (hand formula)
    assert amount == pytest.approx(1000 * 36000 / math.log(2) / 6.02214076e23, rel=1e-15)
    longer = scheme.with_values(quantities={"t": 72000})
    assert longer.initial["P"] == pytest.approx(2 * amount, rel=1e-15)
    # a start value given as an amount replaces the activity
    given = scheme.with_values(initial={"P": 1e-12})
    assert (given.initial["P"], given.start_activities) == (1e-12, {})


def test_decay_rates_and_start_amounts_for_a_stack_of_rates():
    # lambda is the sum of the consuming steps; n = A / (lambda N_A) (2019 SI, N_A exact)
    scheme = parse("P -> D  k1 = 1 1/s\nP -> E  k2 = 3 1/s\nstart P = 4 Bq")
    rates = np.array([[1.0, 3.0], [0.5, 1.5]])
    np.testing.assert_array_equal(decay_rates(scheme, rates), [[4.0, 0, 0], [2.0, 0, 0]])
    atoms = start_amounts_for_rates(scheme, rates)["P"] * float(N_A)
    np.testing.assert_allclose(atoms, [1.0, 2.0], rtol=1e-15, atol=0)  # 4 Bq / (4 or 2 1/s)
    with pytest.raises(ActivityError) as info:
        start_amounts_for_rates(scheme, [[0.0, 0.0]])
    assert str(info.value) == (
        "P has a start activity but does not decay in a set of values; keep its decay "
        "constants above 0, or give its start value as an amount"
    )


def test_equilibria_of_a_chain_follow_the_slowest_ancestor():
    # Q (500 h) -> P (50 h) -> D (5 h), invented: the long run follows Q's decay, so
    # A_P/A_Q -> lam_P/(lam_P - lam_Q) = 10/9 and A_D/A_P -> lam_D/(lam_D - lam_Q) = 100/99
    # (the textbook transient ratio with the slowest decay constant of the chain; our
    # convention calls the second secular: lam_Q is 1 % of lam_D)
    scheme = parse(
        "Q -> P  half_life = 500 h\nP -> D  half_life = 50 h\nD -> G  half_life = 5 h\n"
        "start Q = 1 mol"
    )
    pairs = {(e.parent, e.daughter): e for e in equilibria(scheme)}
    assert pairs[("Q", "P")].kind == "transient"
    assert pairs[("Q", "P")].ratio == pytest.approx(10 / 9, rel=1e-14)
    assert pairs[("P", "D")].kind == "secular"
    assert pairs[("P", "D")].ratio == pytest.approx(100 / 99, rel=1e-14)
    # cycles and feeds have no such ratios
    assert equilibria(parse("A <=> B  kf = 1 1/s, kr = 2 1/s\nstart A = 1 mol")) == []
