"""The concentration unit of a file (kinetics/language/concentrations.py).

Mass to amount twins: 1 mg/L of a species of M g/mol is 1/M mmol/L (definition of the
mole, SI brochure, 9th edition, 2019, section 2.3.1).
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from kinetics.amounts import kind_of
from kinetics.language.concentrations import (
    DEFAULT_UNIT,
    choose_unit,
    concentration_part,
    family_error,
)
from kinetics.language.reader import read_statements
from kinetics.units import parse_unit


def unit_of_text(text: str):
    return choose_unit(read_statements(text, "t").lists)


def test_start_decides_before_excess_and_feed():
    chosen = unit_of_text("feed A = 1 mol/L/min\nexcess W = 55 M\nstart B = 2 mmol/L")
    assert (chosen.unit, chosen.factor, chosen.written) == ("mmol/L", Fraction(1), "mmol/L")
    assert chosen.origin == "start B = 2 mmol/L on line 3"


def test_excess_then_feed():
    assert unit_of_text("feed A = 1 mol/L/min\nexcess W = 55 M").unit == "M"
    chosen = unit_of_text("feed A = 2 umol/L/h")
    assert (chosen.unit, chosen.factor) == ("umol/L", Fraction(1, 1000))


def test_a_feed_unit_without_a_separable_concentration():
    assert unit_of_text("feed A = 1 mol/(L*min)").unit == "mol/L"


def test_mass_units_keep_amounts():
    chosen = unit_of_text("start A = 5 mg/L")
    assert (chosen.unit, chosen.written, chosen.family.substance) == ("mmol/L", "mg/L", "mass")


def test_no_values_give_the_default():
    assert unit_of_text("A -> B  k1 = 1 1/s") == DEFAULT_UNIT
    assert DEFAULT_UNIT.unit == "mol/L"


def test_unreadable_units_are_skipped():
    assert unit_of_text("start A = 1 sek, B = 2 mM").unit == "mM"


@pytest.mark.parametrize(
    ("unit", "part"),
    [("mol/L/min", "mol/L"), ("mg/L/d", "mg/L"), ("M s-1", "M"), ("mol/(L*min)", ""), ("M", "")],
)
def test_concentration_part(unit, part):
    assert concentration_part(unit) == part


@pytest.mark.parametrize(
    ("text", "problem", "hint"),
    [
        (
            "start A = 1 mol, B = 2 mol/L",
            "start B = 2 mol/L is a concentration, but this file gives amounts "
            "(start A = 1 mol on line 1)",
            "amounts (mol) and concentrations (mol/L) may not be mixed in one file; write every "
            "value as an amount",
        ),
        (
            "start A = 1 mol/L, B = 2 s",
            "start B = 2 s is a time, not a concentration",
            "write a concentration such as 0.5 mol/L (or an amount in mol)",
        ),
        (
            "start A = 1 mol/L, B = 2",
            "start B = 2 has no unit, but this file gives concentrations "
            "(start A = 1 mol/L on line 1)",
            "write every value in one kind of unit, e.g. 0.5 mol/L",
        ),
    ],
)
def test_family_error_wording(text, problem, hint):
    s = read_statements(text, "t").lists[0]
    item = s.items[1]
    kind = kind_of(item.value.unit)
    error = family_error(s, item, parse_unit(item.value.unit), kind, choose_unit([s]))
    assert (error.problem, error.hint) == (problem, hint)
