"""The exact evaluator of expressions (kinetics/expressions.py).

Check values: hand arithmetic (common practice, no source) and mpmath at 50 digits for
the transcendental functions; unit factors from the SI brochure (9th edition, 2019,
table 8: 1 h = 3600 s, 1 min = 60 s).
"""

from __future__ import annotations

import pickle
from fractions import Fraction

import mpmath as mp
import pytest

from kinetics.errors import ExpressionError
from kinetics.expressions import (
    MAX_EXACT_BITS,
    Binary,
    ExactQuantity,
    Function,
    LawCall,
    Name,
    Number,
    Unary,
    dims_of,
    evaluate,
    names_in,
    nodes,
    shown,
    uses_law,
)
from kinetics.laws import LAWS

TIME = dims_of({"[time]": 1})
RATE = dims_of({"[time]": -1})
AMOUNT = dims_of({"[substance]": 1})


def num(value, dims=(), text=None, offset=False):
    value = Fraction(value)
    return Number(value, dims, text or str(value), 1, offset)


def op(symbol, left, right):
    return Binary(symbol, left, right, f"{left.text} {symbol} {right.text}", 5)


def value(expr, values=None, temperature=None):
    return evaluate(expr, values or {}, temperature, "x")


def test_rational_arithmetic_is_exact():
    # 1/3 + 1/6 = 1/2; (2/3) ** 3 = 8/27; 1 h + 30 min = 5400 s (hand arithmetic)
    assert value(op("+", num(Fraction(1, 3)), num(Fraction(1, 6)))).value == Fraction(1, 2)
    assert value(op("**", num(Fraction(2, 3)), num(3))).value == Fraction(8, 27)
    mixed = op("+", num(3600, TIME, "1 h"), num(1800, TIME, "30 min"))
    assert value(mixed) == ExactQuantity(Fraction(5400), TIME)
    assert value(op("/", num(1), mixed)) == ExactQuantity(Fraction(1, 5400), RATE)


def test_transcendental_functions_to_forty_digits():
    mp.mp.dps = 50
    for name, reference in (("ln", mp.log), ("exp", mp.exp), ("sqrt", mp.sqrt)):
        got = value(Function(name, num(Fraction(7, 3)), f"{name}(7/3)", 1)).value
        expected = reference(mp.mpf(7) / 3)
        assert abs(mp.mpf(got.numerator) / got.denominator - expected) < mp.mpf(10) ** -38
    got = value(Function("log10", num(Fraction(7, 3)), "log10(7/3)", 1)).value
    assert abs(mp.mpf(got.numerator) / got.denominator - mp.log10(mp.mpf(7) / 3)) < 1e-38


def test_exact_special_values():
    assert value(Function("ln", num(1), "ln(1)", 1)).value == 0
    assert value(Function("exp", num(0), "exp(0)", 1)).value == 1
    assert value(Function("log10", num(Fraction(1, 1000)), "log10(0.001)", 1)).value == -3
    assert value(Function("sqrt", num(Fraction(9, 4)), "sqrt(9/4)", 1)).value == Fraction(3, 2)
    area = dims_of({"[length]": 2})
    assert value(op("**", num(4, area, "4 m2"), num(Fraction(1, 2)))) == ExactQuantity(
        Fraction(2), dims_of({"[length]": 1})
    )
    assert value(Unary("-", num(2), "-2", 1)).value == -2


@pytest.mark.parametrize(
    ("expr", "message"),
    [
        (
            op("+", num(3600, TIME, "1 h"), num(2, AMOUNT, "2 mol")),
            "cannot add a time (1 h) and an amount of substance (2 mol); both sides of + must "
            "have the same dimension; check the units",
        ),
        (
            op("-", num(3600, TIME, "1 h"), num(2, AMOUNT, "2 mol")),
            "cannot subtract an amount of substance (2 mol) from a time (1 h); both sides of - "
            "must have the same dimension; check the units",
        ),
        (op("/", num(1), num(0)), "division by zero; check the value"),
        (
            op("/", num(1), Name("t", "t", 5)),
            "division by zero: t is 0; check the value",
        ),
        (
            Function("ln", num(3600, TIME, "1 h"), "ln(1 h)", 1),
            "ln needs a pure number, but 1 h is a time; divide by a value in the same unit, "
            "e.g. ln(t / (1 h))",
        ),
        (
            Function("ln", num(-2), "ln(-2)", 1),
            "ln of -2 is undefined: it is -2, not above 0; check the value and its sign",
        ),
        (
            Function("sqrt", num(-4), "sqrt(-4)", 1),
            "sqrt of -4 is undefined: it is negative (-4); check the value and its sign",
        ),
        (
            Function("sqrt", num(1, TIME, "1 s"), "sqrt(1 s)", 1),
            "sqrt of 1 s has no unit: it is a time, whose square root is no whole power of "
            "units; take the square root of a pure number or of a squared unit",
        ),
        (
            Function("exp", num(10**5), "exp(100000)", 1),
            "exp of 100000 (100000) is beyond 1e±3900; check the value and its units",
        ),
        (
            op("**", num(2), num(1, TIME, "1 s")),
            "the exponent 1 s is a time, not a pure number; an exponent has no unit",
        ),
        (
            op("**", num(3600, TIME, "1 h"), num(Fraction(1, 2))),
            "1 h ** 1/2 gives a fractional power of units (1 h is a time); raise values with "
            "units to powers that leave whole powers of units",
        ),
        (
            op("**", num(-8), num(Fraction(1, 3))),
            "-8 is negative (-8); a negative number has no real power 1/3; check the sign",
        ),
        (
            op("**", num(0), num(-1)),
            "division by zero: 0 is 0 and the exponent is negative; check the value",
        ),
        (
            op("**", num(10), num(10**5)),
            "10 ** 100000 is beyond 1e±4000; check the values and their units",
        ),
        (
            op(
                "+",
                num(Fraction(59663, 200), dims_of({"[temperature]": 1}), "25 degC", True),
                num(1, dims_of({"[temperature]": 1}), "1 K"),
            ),
            "25 degC is a temperature on a scale with an offset, which cannot take part in "
            "arithmetic; write it alone (T_ref = 25 degC) or in kelvin (298.15 K)",
        ),
        (Name("t_p", "t_p", 1), "t_p has no value; define it"),
    ],
)
def test_messages(expr, message):
    with pytest.raises(ExpressionError) as info:
        value(expr, {"t": ExactQuantity(Fraction(0), ())})
    assert str(info.value) == message


def test_errors_carry_their_place_and_pickle():
    with pytest.raises(ExpressionError) as info:
        value(Function("ln", Number(Fraction(-1), (), "-1", 9), "ln(-1)", 6))
    error = info.value
    assert (error.column, error.snippet) == (9, "-1")
    again = pickle.loads(pickle.dumps(error))
    assert (str(again), again.column, again.snippet) == (str(error), 9, "-1")


def test_large_numbers_are_rounded_to_sixty_digits_and_stay_close():
    x = Fraction(3**4000 + 1, 3**4000)  # about 1 with 12,700 bits
    assert x.numerator.bit_length() + x.denominator.bit_length() > MAX_EXACT_BITS
    got = value(op("*", num(x), num(1))).value
    assert got.numerator.bit_length() < 300
    assert abs(got - x) < Fraction(1, 10**58)


def test_temperature_laws_need_a_temperature_to_have_a_value():
    a = num(10**13, RATE, "1e13 1/s")
    ea = num(95000, dims_of({"[mass]": 1, "[length]": 2, "[time]": -2, "[substance]": -1}))
    call = LawCall(LAWS["arrhenius"], (("A", a), ("Ea", ea)), "arrhenius(...)", 1)
    assert uses_law(call)
    assert value(call) == ExactQuantity(None, RATE)  # no temperature: value unknown
    assert value(op("*", num(2), call)).value is None
    assert value(call, temperature=300.0).value > 0


def test_law_parameters_are_checked_by_dimension():
    a = num(10**13, RATE, "1e13 1/s")
    ea = num(95, dims_of({"[temperature]": 1}), "95 K")
    call = LawCall(LAWS["arrhenius"], (("A", a), ("Ea", ea)), "arrhenius(...)", 1)
    with pytest.raises(ExpressionError) as info:
        evaluate(call, {}, 300.0, "k1")
    assert str(info.value) == (
        "the activation energy of k1 is 95 K, which is a temperature, not a molar energy; "
        "write Ea in kJ/mol or J/mol, e.g. Ea = 95 kJ/mol"
    )


def test_tree_walks():
    tree = op("/", Name("k1", "k1", 1), Unary("-", Name("t", "t", 8), "-t", 7))
    assert [n.name for n in names_in(tree)] == ["k1", "t"]
    assert len(nodes(tree)) == 4
    assert not uses_law(tree)
    assert shown(Fraction(1, 3)) == "0.333333"
    assert shown(None) == "unknown"
    assert shown(Fraction(10**400)) == "beyond 1e308"
