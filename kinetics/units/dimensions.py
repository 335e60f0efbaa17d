"""Dimensions of units in words and in SI base units, and the order they imply.

Dimension exponents are dicts (or sorted tuples) of pint's base dimensions such as
``{"[time]": -1}``, as :func:`kinetics.units.parse_unit` gives them.
"""

from __future__ import annotations

import functools
from fractions import Fraction

from ..errors import UnitError

__all__ = [
    "LENGTH",
    "MASS",
    "SUBSTANCE",
    "TEMPERATURE",
    "TIME",
    "concentration_order",
    "describe_dimension",
    "si_unit",
]

#: pint's names of the base dimensions the package meets.
TIME, LENGTH, SUBSTANCE, MASS, TEMPERATURE = (
    "[time]",
    "[length]",
    "[substance]",
    "[mass]",
    "[temperature]",
)


_NAMED_DIMENSIONS: dict[tuple[tuple[str, Fraction | int], ...], str] = {
    (("[time]", -1),): "a frequency (1/time)",
    (("[time]", 1),): "a time",
    (("[length]", -3), ("[substance]", 1)): "a concentration (amount/volume)",
    (("[substance]", 1),): "an amount of substance",
    (("[length]", -3), ("[mass]", 1)): "a mass concentration (mass/volume)",
    (("[mass]", 1),): "a mass",
    (("[mass]", 1), ("[substance]", -1)): "a molar mass",
    (("[length]", 2), ("[mass]", 1), ("[substance]", -1), ("[time]", -2)): "a molar energy",
    (("[temperature]", 1),): "a temperature",
    (("[length]", 1),): "a length",
    (("[length]", 3),): "a volume",
    (): "a pure number",
}


def describe_dimension(dims: dict) -> str:
    """Name a dimension the way a chemist says it (``'a frequency (1/time)'``).

    Parameters
    ----------
    dims : dict
        Dimension exponents as produced by :func:`parse_unit`.

    Returns
    -------
    str
        A short phrase.
    """
    key = tuple(sorted((k, Fraction(v)) for k, v in dims.items() if v))
    if key in _NAMED_DIMENSIONS:
        return _NAMED_DIMENSIONS[key]
    order = concentration_order(dims)
    if order is not None:
        return f"a rate constant of order {order + 1} (concentration^-{order}/time)"
    text = " ".join(f"{k.strip('[]')}^{v}" for k, v in key)
    return f"the dimension {text}"


#: SI base unit of each dimension pint names (for :func:`si_unit`).
_BASE_SYMBOLS = {
    MASS: "kg",
    LENGTH: "m",
    SUBSTANCE: "mol",
    TIME: "s",
    TEMPERATURE: "K",
    "[current]": "A",
    "[luminosity]": "cd",
}


def si_unit(dims: dict) -> str:
    """The SI base unit of a dimension, written so that :func:`parse_unit` reads it back.

    Parameters
    ----------
    dims : dict
        Dimension exponents (integers) as produced by :func:`parse_unit`.

    Returns
    -------
    str
        ``"1"`` for a pure number, else base units with their powers, the negative
        powers after one ``/``.

    Raises
    ------
    UnitError
        For a dimension without an SI base unit or a non-integer exponent.

    Examples
    --------
    >>> si_unit({"[time]": -1}), si_unit({"[length]": 3, "[substance]": -1, "[time]": -1})
    ('1/s', 'm3/(mol s)')
    >>> from kinetics.units import parse_unit
    >>> parse_unit(si_unit({"[mass]": 1, "[length]": 2, "[time]": -2})).factor
    Fraction(1, 1)
    """
    up: list[str] = []
    down: list[str] = []
    order = list(_BASE_SYMBOLS)
    for dim in sorted(dims, key=lambda d: order.index(d) if d in order else len(order)):
        power = Fraction(dims[dim])
        if not power:
            continue
        if dim not in _BASE_SYMBOLS or power.denominator != 1:
            raise UnitError(f"no SI base unit for {dim} to the power {power}")
        symbol = _BASE_SYMBOLS[dim]
        size = abs(int(power))
        (up if power > 0 else down).append(symbol if size == 1 else f"{symbol}{size}")
    numerator = " ".join(up) or "1"
    if not down:
        return numerator
    denominator = down[0] if len(down) == 1 else "(" + " ".join(down) + ")"
    return f"{numerator}/{denominator}"


def concentration_order(dims: dict) -> int | None:
    """The reaction order minus one implied by rate-constant dimensions, if any.

    ``1/time`` gives 0, ``1/(concentration time)`` gives 1, and so on; ``None``
    when the dimension is not of the form ``concentration^-m / time``.  A
    dimension ``amount^-m / time`` (files in amounts) also counts.

    Parameters
    ----------
    dims : dict
        Dimension exponents as produced by :func:`parse_unit`.

    Returns
    -------
    int or None
        m, the order of the step minus one.

    Examples
    --------
    Closed form: the rate ``k c^n`` [concentration/time] needs k in
    concentration^(1-n)/time, so M⁻² s⁻¹ belongs to a third-order step:

    >>> from kinetics.units import parse_unit
    >>> [concentration_order(parse_unit(u).dims) for u in ("1/s", "M-2 s-1", "mol/L")]
    [0, 2, None]
    """
    return _order_of(tuple(sorted((k, Fraction(v)) for k, v in dims.items() if v)))


@functools.lru_cache(maxsize=256)
def _order_of(key: tuple[tuple[str, Fraction], ...]) -> int | None:
    d = dict(key)
    if d.get("[time]") != -1:
        return None
    rest = {k: v for k, v in d.items() if k != "[time]"}
    if not rest:
        return 0
    m = -rest.get("[substance]", Fraction(0))
    if m <= 0 or m.denominator != 1:
        return None
    if rest == {"[substance]": -m, "[length]": 3 * m} or rest == {"[substance]": -m}:
        return int(m)
    return None
