"""Numbers with units as a scheme writes them: reading, exact scaling and range checks.

A value is kept as the decimal text the user wrote, so that it can be scaled to
SI units exactly (rational arithmetic) and rounded to a double once.
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import NamedTuple

from ..errors import SchemeError, UnknownUnitError, shorten
from ..units import OFFSET_TEMPERATURES, UnitSpec, normalise_unit, parse_unit, temperature_to_kelvin
from .grammar import NUMBER_RE
from .messages import quoted
from .source import Line

__all__ = [
    "MAX_NUMBER_LENGTH",
    "Value",
    "exact",
    "exact_kelvin",
    "fraction",
    "number_problem",
    "plain_number",
    "read_value",
    "scaled",
    "underflows",
    "unit_of",
]

#: Longest number read [characters]: a double has 17 significant digits.
MAX_NUMBER_LENGTH = 40


class Value(NamedTuple):
    """A number with a unit as written, with the columns of both (1-based).

    An immutable record (a named tuple: a file has one per value, and they are made
    three times faster than frozen dataclasses).

    Examples
    --------
    >>> Value("0.12", "1/min", 10, 15).text
    '0.12 1/min'
    """

    number: str
    unit: str
    column: int
    unit_column: int

    @property
    def text(self) -> str:
        """The value as written: number and unit."""
        return f"{self.number} {self.unit}".strip()


def read_value(
    line: Line, text: str, column0: int, what: str, example: str, *, signed: bool = False
) -> Value | SchemeError:
    """Read ``NUMBER [UNIT]`` starting at 0-based ``column0`` of ``line``.

    Parameters
    ----------
    line : Line
        The line read.
    text : str
        The text from the number to the end of the value.
    column0 : int
        0-based column of ``text`` in the line.
    what : str
        The value as a message names it (``"rate constant k1"``).
    example : str
        A value to propose in hints (``"0.12 1/min"``).
    signed : bool, optional
        When False, negative numbers are refused (True for temperatures in degC).

    Returns
    -------
    Value or SchemeError
        The error tells a number that is missing, too long, beyond the range of a
        double, not finite, or negative.

    Examples
    --------
    >>> line = Line("t", 1, "k1 = 0.12 1/min", "k1 = 0.12 1/min")
    >>> read_value(line, "0.12 1/min", 5, "rate constant k1", "0.12 1/min")
    Value(number='0.12', unit='1/min', column=6, unit_column=11)
    >>> read_value(line, "-1 1/s", 5, "rate constant k1", "0.12 1/min").problem
    'rate constant k1 is negative (-1)'
    """
    match = NUMBER_RE.match(text)
    if not match:
        return line.error(
            f"could not read a number for {what} in {quoted(text)}",
            column0 + 1,
            text or " ",
            f"write a number and a unit, e.g. {example}",
        )
    number = match.group(0)
    rest = text[match.end() :]
    unit_col = column0 + match.end() + (len(rest) - len(rest.lstrip())) + 1
    problem = number_problem(number, what, example, signed)
    if problem is not None:
        return line.error(problem[0], column0 + 1, number, problem[1])
    return Value(number, rest.strip(), column0 + 1, unit_col)


def number_problem(number: str, what: str, example: str, signed: bool) -> tuple[str, str] | None:
    """(problem, hint) for a number the readers refuse, or None.

    Examples
    --------
    >>> number_problem("1e-400", "t_p", "50 h", False)[0]
    't_p is 1e-400, which is too small for a floating-point number (it would become 0; \
the smallest is about 5e-324)'
    """
    if len(number) > MAX_NUMBER_LENGTH:
        return (
            f"{what} is a number of {len(number):,} characters (at most {MAX_NUMBER_LENGTH})",
            f"write it with an exponent, e.g. {example}",
        )
    value = float(number)
    if underflows(number, value):
        return (
            f"{what} is {number}, which is too small for a floating-point number (it would "
            "become 0; the smallest is about 5e-324)",
            "check the exponent, or write 0 if you mean zero",
        )
    if math.isnan(value) or math.isinf(value):
        spelled_out = number.lstrip("+-")[:1].lower() in ("n", "i")
        size = "not a finite number" if spelled_out else "too large for a floating-point number"
        return f"{what} is {number}, which is {size}", f"write a finite value, e.g. {example}"
    if value < 0 and not signed:
        return (
            f"{what} is negative ({number})",
            f"this value cannot be negative; write e.g. {example}",
        )
    return None


def unit_of(line: Line, value: Value, what: str, example: str) -> UnitSpec | SchemeError:
    """The parsed unit of ``value``, or the located error that says why it cannot be read.

    Parameters
    ----------
    line : Line
        The line of the value.
    value : Value
        The value read.
    what : str
        The value as a message names it.
    example : str
        A unit to propose (``"1/s"``).

    Returns
    -------
    UnitSpec or SchemeError

    Examples
    --------
    >>> line = Line("t", 1, "k1 = 0.1 sek-1", "k1 = 0.1 sek-1")
    >>> unit_of(line, Value("0.1", "sek-1", 6, 10), "rate constant k1", "1/s").headline()
    "t:1:10: unknown unit 'sek-1' for rate constant k1; write a unit such as 1/s"
    >>> unit_of(line, Value("0.1", "s-99", 6, 10), "rate constant k1", "1/s").problem
    "unknown unit 's-99' for rate constant k1 (the exponent -99 is too large)"
    >>> unit_of(line, Value("0.1", "1/min", 6, 10), "rate constant k1", "1/s").rate_order
    0
    """
    try:
        return parse_unit(value.unit)
    except ValueError as exc:
        if "=" in value.unit:
            hint = "separate the items of a list with commas, e.g. start A = 0.5 M, B = 0.1 M"
        else:
            hint = f"write a unit such as {example}"
        # an unknown name says it all; any other unit error says what is wrong with it
        detail = "" if isinstance(exc, UnknownUnitError) else f" ({exc})"
        return line.error(
            f"unknown unit {quoted(value.unit)} for {what}{detail}",
            value.unit_column,
            value.unit,
            hint,
        )


def fraction(number: str) -> Fraction:
    """The decimal ``number`` as the readers matched it, exactly (see :func:`scaled`).

    Examples
    --------
    >>> fraction("0.1")
    Fraction(1, 10)
    """
    return scaled(number, Fraction(1))


def scaled(number: str, factor: Fraction) -> Fraction:
    """The decimal ``number`` (as the readers matched it) times ``factor``, exactly.

    One rational construction instead of two (``Fraction(number) * factor``):
    this runs once per rate constant of a file.

    Parameters
    ----------
    number : str
        A decimal as :data:`~kinetics.language.grammar.NUMBER_RE` matches it.
    factor : Fraction
        The exact factor of its unit to SI.

    Returns
    -------
    Fraction

    Raises
    ------
    ValueError
        For an exponent far beyond the range of a double (the readers refuse such
        numbers before they get here).

    Examples
    --------
    >>> scaled("0.12", Fraction(1, 60))  # 0.12 1/min in 1/s
    Fraction(1, 500)
    >>> scaled("-2.5e-3", Fraction(1000))
    Fraction(-5, 2)
    """
    text = number.lower()
    sign = -1 if text.startswith("-") else 1
    mantissa, _, exp_text = text.lstrip("+-").partition("e")
    whole, _, frac = mantissa.partition(".")
    digits = whole + frac
    if not digits.isdigit() or not (exp_text.lstrip("+-").isdigit() or not exp_text):
        return Fraction(number) * factor  # not a plain decimal: the general way
    if not digits.strip("0"):
        return Fraction(0)  # also 0e999999999, whose power of ten is never built
    exponent = (int(exp_text) if exp_text else 0) - len(frac)
    if abs(exponent) > 2 * MAX_NUMBER_LENGTH + 400:
        raise ValueError(f"{shorten(number)} is far beyond the range of a double")
    if exponent >= 0:
        return Fraction(sign * int(digits) * 10**exponent * factor.numerator, factor.denominator)
    return Fraction(sign * int(digits) * factor.numerator, 10**-exponent * factor.denominator)


def plain_number(number: str) -> bool:
    """True for a number the readers accept as it stands: short, finite, and not underflowing.

    A nonzero value that a double would round to 0 is not plain.

    Examples
    --------
    >>> plain_number("2"), plain_number("1e-400"), plain_number("1e400")
    (True, False, False)
    """
    if len(number) > MAX_NUMBER_LENGTH:
        return False
    value = float(number)
    return math.isfinite(value) and not underflows(number, value)


def underflows(number: str, value: float) -> bool:
    """True when a nonzero decimal ``number`` became the double ``value`` 0.

    Examples
    --------
    >>> underflows("1e-400", 0.0), underflows("0e-400", 0.0)
    (True, False)
    """
    return value == 0 and any(d in "123456789" for d in number.lower().partition("e")[0])


def exact(value: Fraction) -> float | None:
    """``float(value)``, correctly rounded, or None when it overflows a double.

    Examples
    --------
    >>> exact(Fraction(1, 500)), exact(Fraction(10**400))
    (0.002, None)
    """
    try:
        result = value.numerator / value.denominator  # correctly rounded, as float(value)
    except OverflowError:
        return None
    return result if math.isfinite(result) else None


def exact_kelvin(number: str, unit: str) -> Fraction:
    """A temperature written as ``number unit`` in kelvin, exactly for K, degC and degF.

    Examples
    --------
    >>> exact_kelvin("25", "degC"), exact_kelvin("300", "K")
    (Fraction(5963, 20), Fraction(300, 1))
    """
    scale_offset = OFFSET_TEMPERATURES.get(normalise_unit(unit))
    if scale_offset is not None:
        scale, offset = scale_offset
        return (fraction(number) + offset) * scale
    spec = parse_unit(unit)
    if not spec.offset:
        return scaled(number, spec.factor)
    return Fraction(temperature_to_kelvin(fraction(number), unit))
