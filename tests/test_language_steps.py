"""Reactions into first-order steps (kinetics/language/steps.py).

A pseudo-first-order step A + n W -> ... with W held in excess needs k in
concentration^-n time^-1, so that k [W]^n is a first-order constant (common practice,
no source).
"""

from __future__ import annotations

from fractions import Fraction

from kinetics.language.messages import Diagnostics
from kinetics.language.reader import read_statements
from kinetics.language.steps import StepBuilder
from kinetics.scheme import RateConstant

MOLAR = {"[length]": -3, "[substance]": 1}
K1 = RateConstant("k1", "1 1/s", Fraction(1), "1/s", 0, None, 1)
KW = RateConstant("kw", "1 M-1 s-1", Fraction(1, 1000), "M-1 s-1", 1, None, 1)


def build(text: str, excess=frozenset(), dims=None, si=None):
    found = Diagnostics("t")
    builder = StepBuilder(found, frozenset(excess), dims or {}, si or {}, {"k1": K1, "kw": KW})
    reactions, steps = builder.build(read_statements(text, "t").reactions)
    return reactions, steps, found


def test_a_reversible_line_gives_two_steps():
    reactions, steps, found = build("A <=> B  k1, k1\nB <=> C + W  k1, kw", {"W"})
    assert found.errors == []
    assert [r.reversible for r in reactions] == [True, True]
    assert [(s.reactant, s.products, s.co_reactants, s.direction) for s in steps] == [
        ("A", ((1.0, "B"),), (), "forward"),
        ("B", ((1.0, "A"),), (), "reverse"),
        ("B", ((1.0, "C"), (1.0, "W")), (), "forward"),
        ("C", ((1.0, "B"),), ((1.0, "W"),), "reverse"),
    ]


def test_pseudo_first_order_with_an_excess_partner():
    _, steps, found = build("A + W -> B  kw", {"W"}, {"W": MOLAR}, {"W": Fraction(55000)})
    assert found.errors == []
    assert steps[0].co_reactants == ((1.0, "W"),)


def test_order_mismatch_messages():
    _, _, found = build("A -> B  kw\nA + W -> C  k1", {"W"}, {"W": MOLAR}, {"W": Fraction(1)})
    assert [e.problem for e in found.errors] == [
        "the units of kw (M-1 s-1) imply a second-order step, but A reacts alone here (a "
        "first-order step needs 1/time)",
        "the units of k1 (1/s) imply a first-order step, but A reacts here with W held in "
        "excess (a pseudo-first-order step needs concentration^-1/time)",
    ]


def test_amount_excess_with_a_concentration_constant():
    amount = {"[substance]": 1}
    _, _, found = build("A + W -> B  kw", {"W"}, {"W": amount}, {"W": Fraction(1)})
    [error] = found.errors
    # (L/mol)/s times mol is L/s: a volume per time, not a frequency
    assert error.problem == (
        "kw (M-1 s-1) times the excess concentration of W does not give 1/time but the "
        "dimension length^3 time^-1"
    )


def test_not_first_order():
    _, _, found = build("A + B -> C  k1\nW -> C  k1\n2 A -> C  k1\nA -> A  k1", {"W"})
    assert [e.problem for e in found.errors] == [
        "A and B react together on the left of this step: that is a second- or higher-order "
        "step, and this tool solves first-order schemes",
        "every species on the left of this step is held in excess, so nothing is consumed",
        "A has the coefficient 2 on the left of a first-order step",
        "this step turns A into A: it changes nothing",
    ]


def test_one_species_written_twice_counts_its_coefficients():
    _, _, found = build("A + A -> C  k1")
    assert found.errors[0].problem == "A has the coefficient 2 on the left of a first-order step"


def test_unknown_constants_give_no_step_and_no_error():
    _, steps, found = build("A -> B  k9")
    assert steps == []
    assert found.errors == []
