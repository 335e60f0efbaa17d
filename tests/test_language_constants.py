"""Rate constants and temperature (kinetics/language/constants.py).

Unit factors: 1 min = 60 s, 1 h = 3600 s (SI brochure, 9th edition, 2019, table 8);
0 degC = 273.15 K (SI brochure, section 2.3.1).
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from kinetics.language.constants import (
    Temperature,
    plain_constant,
    rate_constant,
    resolve_constants,
    resolve_temperature,
)
from kinetics.language.messages import Diagnostics
from kinetics.language.reader import read_statements
from kinetics.language.statements import ConstantStatement

NO_TEMPERATURE = Temperature(None, False)


def constants_of(text: str, temperature=NO_TEMPERATURE):
    found = Diagnostics("t")
    return resolve_constants(read_statements(text, "t"), temperature, found), found


def test_temperature_in_celsius_and_kelvin():
    found = Diagnostics("t")
    assert resolve_temperature(read_statements("temperature = 25 degC", "t"), found) == (
        Temperature(298.15, False)
    )
    assert resolve_temperature(read_statements("temperature = 310 K", "t"), found).kelvin == 310
    assert resolve_temperature(read_statements("A -> B  k", "t"), found) == Temperature(None, False)
    assert found.errors == []


@pytest.mark.parametrize(
    ("text", "problem"),
    [
        ("temperature = 25", "the temperature 25 has no unit"),
        ("temperature = 25 m", "the temperature is given in 'm', which is not a temperature unit"),
        ("temperature = -300 degC", "the temperature -300 degC is at or below absolute zero"),
    ],
)
def test_a_temperature_that_cannot_be_used_is_failed(text, problem):
    found = Diagnostics("t")
    assert resolve_temperature(read_statements(text, "t"), found) == Temperature(None, True)
    assert [e.problem for e in found.errors] == [problem]


def test_a_temperature_line_that_failed_to_read_counts_as_failed():
    found = Diagnostics("t")
    parsed = read_statements("temperature = hot", "t")
    assert resolve_temperature(parsed, found) == Temperature(None, True)


def test_constants_in_si_units_with_their_order():
    constants, found = constants_of("k1 = 0.12 1/min\nA -> C  k2 = 1 M-1 h-1")
    assert constants["k1"].value_si == Fraction(1, 500)  # 0.12 / 60 s
    assert constants["k1"].order == 0
    # 1 (mol/L)^-1 h^-1 = 1e-3 m^3/mol / 3600 s
    assert constants["k2"].value_si == Fraction(1, 3_600_000)
    assert constants["k2"].order == 1
    assert found.errors == []


def test_the_same_constant_twice_is_one_constant():
    constants, found = constants_of("k1 = 1 1/s\nA -> B  k1 = 60 1/min")
    assert list(constants) == ["k1"]
    assert found.errors == []


def test_different_values_for_one_name():
    _, found = constants_of("k1 = 1 1/s\nA -> B  k1 = 2 1/s")
    assert found.errors[0].headline() == (
        "t:2:9: rate constant k1 is defined twice with different values (1 1/s on line 1, "
        "2 1/s here); give each constant one value, or refer to it by name alone: k1"
    )


def test_undefined_constant_unless_its_definition_failed():
    _, found = constants_of("A -> B  k1\nk2 = fast\nB -> C  k2")
    assert [e.problem for e in found.errors] == ["rate constant k1 is used but never defined"]


def test_arrhenius_needs_a_temperature_unless_the_temperature_failed():
    text = "k = arrhenius(A = 1e13 1/s, Ea = 95 kJ/mol)\nA -> B  k"
    constants, found = constants_of(text)
    assert constants["k"].arrhenius.activation_energy == 95_000.0
    assert [e.problem for e in found.errors] == [
        "k follows the Arrhenius law but the file sets no temperature"
    ]
    _, found = constants_of(text, Temperature(None, True))
    assert found.errors == []


def test_plain_constant_leaves_every_doubtful_case_to_rate_constant():
    parsed = read_statements("k1 = 2 mol/L\nk2 = 1 s^-99\nk3 = 1 sek-1\nk4 = 1e-320 1/d", "t")
    specs = [(s.spec, s.line) for s in parsed.statements if isinstance(s, ConstantStatement)]
    assert [plain_constant(spec, line) for spec, line in specs] == [None] * 4
    found = Diagnostics("t")
    for spec, line in specs:
        assert rate_constant(spec, line, Temperature(None, False), found) is None
    assert [e.problem for e in found.errors] == [
        "rate constant k1 = 2 mol/L is a concentration (amount/volume), not a rate constant",
        "unknown unit 's^-99' for rate constant k2 (the exponent -99 is too large)",
        "unknown unit 'sek-1' for rate constant k3",
        "rate constant k4 = 1e-320 1/d is too small (0 in SI units)",
    ]
