"""The reader of expressions (kinetics/language/arithmetic.py).

Unit factors: SI brochure, 9th edition (2019), table 8 (1 h = 3600 s, 1 min = 60 s,
1 L = 1e-3 m^3); 0 degC = 273.15 K (section 2.3.1).  Messages of the reader are pinned
with their places in tests/test_parsing.py (NOTATION_ERRORS).
"""

from __future__ import annotations

from fractions import Fraction

import pytest

from kinetics.expressions import Binary, Function, LawCall, Name, Number, Unary, evaluate
from kinetics.language.arithmetic import MAX_DEPTH, MAX_TERMS, read_expression
from kinetics.language.source import Line


def read(text):
    code = "x = " + text
    return read_expression(Line("t", 1, code, code), text, 4, "x")


def value(text, temperature=None):
    return evaluate(read(text), {}, temperature, "x")


@pytest.mark.parametrize(
    ("text", "si", "dims"),
    [
        ("50 h", Fraction(180000), {"[time]": 1}),
        ("50h", Fraction(180000), {"[time]": 1}),
        ("0.12 1/min", Fraction(1, 500), {"[time]": -1}),
        ("1.5e-4 M-1 s-1", Fraction(15, 10**8), {"[length]": 3, "[substance]": -1, "[time]": -1}),
        ("1 1/(M s)", Fraction(1, 1000), {"[length]": 3, "[substance]": -1, "[time]": -1}),
        (
            "95 kJ/mol",
            Fraction(95000),
            {"[mass]": 1, "[length]": 2, "[time]": -2, "[substance]": -1},
        ),
        ("87.6 %", Fraction(876, 1000), {}),
        ("25 degC", Fraction(29815, 100), {"[temperature]": 1}),
        ("25 °C", Fraction(29815, 100), {"[temperature]": 1}),
        ("10 GBq", Fraction(10**10), {"[time]": -1}),
        ("1 µCi", Fraction(37000), {"[time]": -1}),
        ("2 s^-1", Fraction(2), {"[time]": -1}),
    ],
)
def test_numbers_with_units(text, si, dims):
    tree = read(text)
    assert isinstance(tree, Number)
    assert tree.value == si
    assert dict(tree.dims) == dims


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("2 + 3 * 4", 14),
        ("(2 + 3) * 4", 20),
        ("2 ** 3 ** 2", 512),  # right to left
        ("2 ^ 3", 8),
        ("-2 ** 2", -4),  # the sign after the power
        ("2 ** -1", Fraction(1, 2)),
        ("8 / 4 / 2", 1),  # left to right
        ("10 - 4 - 3", 3),
        ("sqrt(16) + log10(100)", 6),
    ],
)
def test_precedence_as_in_arithmetic(text, expected):
    assert value(text).value == expected


def test_a_unit_binds_to_its_number():
    # 0.88 * ln(2) / 50 h divides by 50 hours; "50 h / 2" halves 50 hours
    tree = read("0.88 * ln(2) / 50 h")
    assert isinstance(tree, Binary)
    assert (tree.op, tree.right.text) == ("/", "50 h")
    assert value("50 h / 2").value == 90000
    assert value("1 h + 30 min").value == 5400


def test_names_calls_and_columns():
    tree = read("k1 / 3")
    assert isinstance(tree.left, Name)
    assert (tree.left.column, tree.column, tree.text) == (5, 8, "k1 / 3")
    call = read("arrhenius(A = 1 1/s, Ea = Ea_f)")
    assert isinstance(call, LawCall)
    assert [key for key, _ in call.arguments] == ["A", "Ea"]
    q10 = read("q10(0.05 1/d, T_ref, 2)")
    assert [key for key, _ in q10.arguments] == ["k_ref", "T_ref", "Q10"]
    assert isinstance(read("Arrhenius(Ea = 1 J/mol, A = 1 1/s)"), LawCall)  # any case, any order
    assert isinstance(read("exp(-1)"), Function)
    assert isinstance(read("-x"), Unary)


def test_limits():
    assert MAX_TERMS == 256
    assert MAX_DEPTH == 40
    errors = read("(" * (MAX_DEPTH + 1) + "1" + ")" * (MAX_DEPTH + 1))
    assert errors[0].problem == "the expression of x is nested more than 40 levels deep"
