"""Numbers with units (kinetics/language/quantities.py).

Exact scaling is checked against Python's :class:`fractions.Fraction` reading of the
same decimal (the standard library is the reference); rounding against
``float(Fraction)``, which is correctly rounded (Python documentation,
``fractions.Fraction.__float__``).  Messages are ours and pinned verbatim.
"""

from __future__ import annotations

from fractions import Fraction

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from kinetics.errors import SchemeError
from kinetics.language.quantities import (
    MAX_NUMBER_LENGTH,
    Value,
    exact,
    fraction,
    plain_number,
    read_value,
    scaled,
    underflows,
    unit_of,
)
from kinetics.language.source import Line

decimals = st.builds(
    lambda sign, whole, frac, exp: f"{sign}{whole}{'.' + frac if frac else ''}{exp}",
    st.sampled_from(["", "-", "+"]),
    st.integers(0, 10**12).map(str),
    st.text("0123456789", max_size=6),
    st.one_of(st.just(""), st.integers(-330, 330).map(lambda e: f"e{e}")),
)
factors = st.fractions(min_value=Fraction(1, 10**4), max_value=10**6, max_denominator=10**4)


@settings(max_examples=300, deadline=None)
@given(decimals, factors)
def test_scaled_is_exact(number, factor):
    assert scaled(number, factor) == Fraction(number) * factor


@settings(max_examples=300, deadline=None)
@given(decimals)
def test_exact_rounds_as_float_of_fraction(number):
    value = Fraction(number)
    try:
        expected = float(value)
    except OverflowError:
        expected = None
    assert exact(value) == expected


def test_fraction_reads_the_decimal_exactly():
    assert fraction("0.1") == Fraction(1, 10)
    assert fraction("0e999999999") == 0  # never builds the power of ten


def test_a_far_exponent_is_refused_by_scaled():
    with pytest.raises(ValueError, match="far beyond the range of a double"):
        scaled("1e999999", Fraction(1))


def test_plain_number_and_underflow():
    assert plain_number("2.5")
    assert not plain_number("1" * (MAX_NUMBER_LENGTH + 1))
    assert not plain_number("1e-400")  # below the smallest subnormal, about 4.9e-324
    assert underflows("1e-400", 0.0)
    assert not underflows("0.000e-400", 0.0)


LINE = Line("t", 1, "k1 = ...", "k1 = ...")


@pytest.mark.parametrize(
    ("text", "problem", "hint"),
    [
        (
            "fast",
            "could not read a number for rate constant k1 in 'fast'",
            "write a number and a unit, e.g. 0.12 1/min",
        ),
        (
            "-1 1/s",
            "rate constant k1 is negative (-1)",
            "this value cannot be negative; write e.g. 0.12 1/min",
        ),
        (
            "nan 1/s",
            "rate constant k1 is nan, which is not a finite number",
            "write a finite value, e.g. 0.12 1/min",
        ),
        (
            "1e999 1/s",
            "rate constant k1 is 1e999, which is too large for a floating-point number",
            "write a finite value, e.g. 0.12 1/min",
        ),
        (
            "1e-999 1/s",
            "rate constant k1 is 1e-999, which is too small for a floating-point number (it "
            "would become 0; the smallest is about 5e-324)",
            "check the exponent, or write 0 if you mean zero",
        ),
    ],
)
def test_read_value_refusals(text, problem, hint):
    error = read_value(LINE, text, 5, "rate constant k1", "0.12 1/min")
    assert isinstance(error, SchemeError)
    assert (error.problem, error.hint, error.column) == (problem, hint, 6)


def test_read_value_of_a_long_number():
    number = "1" * (MAX_NUMBER_LENGTH + 1)
    error = read_value(LINE, number + " 1/s", 5, "rate constant k1", "0.12 1/min")
    assert error.problem == "rate constant k1 is a number of 41 characters (at most 40)"
    assert error.hint == "write it with an exponent, e.g. 0.12 1/min"


def test_read_value_signed_and_columns():
    value = read_value(LINE, "-5   degC", 14, "the temperature", "60 degC", signed=True)
    assert value == Value("-5", "degC", 15, 20)
    assert value.text == "-5 degC"


def test_value_is_immutable():
    with pytest.raises(AttributeError):
        Value("1", "1/s", 1, 3).unit = "1/min"  # type: ignore[misc]


def test_unknown_unit_has_no_detail_other_unit_errors_have_theirs():
    # branching on the error's type (UnknownUnitError), never on its text
    unknown = unit_of(LINE, Value("1", "sek-1", 6, 8), "rate constant k1", "1/s")
    assert unknown.problem == "unknown unit 'sek-1' for rate constant k1"
    bad = unit_of(LINE, Value("1", "s^-99", 6, 8), "rate constant k1", "1/s")
    assert bad.problem == (
        "unknown unit 's^-99' for rate constant k1 (the exponent -99 is too large)"
    )
    assert bad.hint == "write a unit such as 1/s"


def test_unit_with_an_equals_sign_suggests_commas():
    error = unit_of(LINE, Value("1", "M B = 2 M", 6, 8), "start A", "mol/L")
    assert error.hint == "separate the items of a list with commas, e.g. start A = 0.5 M, B = 0.1 M"
