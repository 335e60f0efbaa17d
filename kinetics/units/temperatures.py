"""Temperatures: a value in kelvin, degrees Celsius or Fahrenheit converted to kelvin."""

from __future__ import annotations

import math
from fractions import Fraction

from ..errors import TemperatureError, shown_value
from .notation import normalise_unit
from .reading import OFFSET_TEMPERATURES, parse_unit, registry

__all__ = ["checked_kelvin", "temperature_to_kelvin"]


def checked_kelvin(temperature) -> float:
    """A thermodynamic temperature [K] given as a number, checked: finite and above 0 K.

    The one check of a temperature that reaches the core in kelvin (new conditions of a
    scheme, the rate matrix at another temperature, an Arrhenius constant).

    Raises
    ------
    kinetics.errors.TemperatureError

    Examples
    --------
    Absolute zero is 0 K by the definition of the kelvin (SI brochure, 9th edition, 2019,
    section 2.3.1), so no temperature at or below it is accepted:

    >>> checked_kelvin(298.15)
    298.15
    >>> checked_kelvin(0)
    Traceback (most recent call last):
    ...
    kinetics.errors.TemperatureError: temperature 0 K must be finite and above 0 K
    """
    try:
        kelvin = float(temperature)
    except (TypeError, ValueError):
        kelvin = math.nan
    if not (math.isfinite(kelvin) and kelvin > 0):
        raise TemperatureError(
            f"temperature {shown_value(temperature)} K must be finite and above 0 K"
        )
    return kelvin


def temperature_to_kelvin(value: float | Fraction, unit: str) -> float:
    r"""Convert a temperature to kelvin (accepts K, degC, degF and °C).

    Parameters
    ----------
    value : float or Fraction
        The temperature in ``unit`` (a Fraction is converted without round-off).
    unit : str
        ``K``, ``degC``, ``°C`` or ``degF``.

    Returns
    -------
    float
        The thermodynamic temperature [K].

    Raises
    ------
    ValueError
        When ``unit`` is not a temperature unit.

    Notes
    -----
    .. math:: T/\mathrm{K} = t/{}^\circ\mathrm{C} + 273.15

    computed exactly (rational arithmetic) and rounded once.

    References
    ----------
    BIPM, The International System of Units (SI), 9th edition (2019), section 2.3.1.

    Examples
    --------
    Closed forms of the scales: :math:`T/\mathrm{K} = t/{}^\circ\mathrm{C} + 273.15`
    and :math:`T/\mathrm{K} = (t/{}^\circ\mathrm{F} + 459.67) \cdot 5/9`, so water boils
    (at 1 atm) near 100 degC = 212 degF = 373.15 K:

    >>> temperature_to_kelvin(25.0, "degC"), temperature_to_kelvin(212, "degF")
    (298.15, 373.15)
    """
    spec = parse_unit(unit)
    if spec.dims != {"[temperature]": 1}:
        raise ValueError(f"{unit!r} is not a temperature unit")
    if not spec.offset:  # kelvin: T = value * factor, exact
        return _float_kelvin(Fraction(value) * spec.factor, value, unit)
    scale_offset = OFFSET_TEMPERATURES.get(normalise_unit(unit))
    if scale_offset is not None:
        scale, offset = scale_offset
        return _float_kelvin((Fraction(value) + offset) * scale, value, unit)
    ureg = registry()
    kelvin = ureg.Quantity(Fraction(value), normalise_unit(unit)).to("kelvin").magnitude
    return _float_kelvin(kelvin, value, unit)


def _float_kelvin(kelvin, value, unit: str) -> float:
    try:
        return float(kelvin)
    except OverflowError:
        raise ValueError(f"the temperature {value} {unit} is too large") from None
