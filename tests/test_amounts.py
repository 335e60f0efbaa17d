"""Kinds of concentration units and conversions through molar masses (issue 12).

Unit factors are those of the SI brochure (9th ed., 2019): 1 L = 1e-3 m^3, prefixes m,
u, n = 1e-3, 1e-6, 1e-9 (common practice, no source for the pairing of mass and amount
units, which is n = m / M).
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest

from kinetics import parse
from kinetics.amounts import (
    PERCENT_OF_APPLIED,
    amount_unit,
    is_percent_of_applied,
    kind_of,
    output_factors,
    reachable,
)


@pytest.mark.parametrize(
    ("unit", "name", "factor"),
    [
        ("mol/L", "concentration", Fraction(1000)),
        ("M", "concentration", Fraction(1000)),
        ("mg/L", "mass concentration", Fraction(1, 1000)),
        ("mol", "amount", Fraction(1)),
        ("mg", "mass", Fraction(1, 10**6)),
        ("mmol/kg", "amount per mass of soil", Fraction(1, 1000)),
        ("mg/kg", "mass per mass of soil", Fraction(1, 10**6)),
        ("ug/g", "mass per mass of soil", Fraction(1, 10**6)),
        ("%", "pure number", Fraction(1, 100)),
    ],
)
def test_kind_of(unit, name, factor):
    kind = kind_of(unit)
    assert (kind.name, kind.factor) == (name, factor)


def test_kind_of_a_feed_and_of_what_is_no_concentration():
    assert kind_of("mg/L/min", per_time=True).name == "mass concentration"
    assert kind_of("mg/kg/d", per_time=True).name == "mass per mass of soil"
    assert kind_of("1/s") is None
    assert kind_of("degC") is None
    with pytest.raises(ValueError, match="unknown unit"):
        kind_of("bananas")


@pytest.mark.parametrize(
    ("mass", "amount"),
    [
        ("mg/L", ("mmol/L", Fraction(1))),
        ("ug/L", ("umol/L", Fraction(1, 1000))),
        ("g/L", ("mol/L", Fraction(1000))),
        ("mg/kg", ("mmol/kg", Fraction(1, 1000))),
        ("g", ("mol", Fraction(1))),
        ("lb/gal", ("mol/L", Fraction(1000))),  # no twin: the default of the basis
    ],
)
def test_amount_twin_of_a_mass_unit(mass, amount):
    assert amount_unit(kind_of(mass)) == amount


@pytest.mark.parametrize("text", ["% of applied", "%applied", "percent of applied", "% Applied"])
def test_percent_of_applied_spellings(text):
    assert is_percent_of_applied(text)
    assert PERCENT_OF_APPLIED == "% of applied"


def test_reachable_species_follow_the_steps_from_what_is_started():
    scheme = parse("A -> B  k1 = 1 1/s\nB -> C  k2 = 1 1/s\nD -> E  k3 = 1 1/s\nstart A = 1 M")
    assert reachable(scheme) == {"A", "B", "C"}


def test_output_factors_in_mass_and_percent():
    scheme = parse(
        "A -> 2 B  k1 = 1 1/s\nstart A = 0.5 mmol/L\nformula A = C2H4, B = CH2\nbalance: lumped"
    )
    masses = np.array([s.molar_mass for s in scheme.species])
    # mmol/L times g/mol is mg/L
    np.testing.assert_allclose(output_factors(scheme, "mg/L"), masses, rtol=1e-15)
    np.testing.assert_allclose(output_factors(scheme, "ug/L"), 1000 * masses, rtol=1e-15)
    np.testing.assert_allclose(output_factors(scheme, "umol/L"), [1000.0, 1000.0], rtol=1e-15)
    np.testing.assert_allclose(output_factors(scheme, "%applied"), [200.0, 200.0], rtol=1e-15)
    assert output_factors(scheme, "mmol/L").tolist() == [1.0, 1.0]
