"""Units: the one pint registry of the package and the notation chemists write.

Units live only at the boundary.  The core computes in canonical floats:
seconds, 1/s, and the scheme's own concentration unit.  Conversions are done
with exact rational factors (pint with :class:`fractions.Fraction` magnitudes),
so that ``0.12 1/min`` becomes the double nearest to 0.002 1/s and not a value
that carries the round-off of a floating-point conversion chain.

Notation accepted on top of everything pint parses:

* exponents written after the unit, with or without a sign: ``s-1``, ``min-1``,
  ``M-1 s-1``, ``L mol-1 s-1``, ``m3``; caret or double star forms ``s^-1``;
* superscripts: ``s⁻¹``, ``M⁻¹ s⁻¹``;
* juxtaposition as multiplication: ``L mol-1 s-1``;
* ``M`` for mol/L (pint's ``molar``), ``µ``/``μ`` prefixes, ``°C`` for degC.

================  ======================================================================
module            owns
================  ======================================================================
``constants``     exact constants of the 2019 SI: R, k_B, h, N_A
``notation``      chemists' notation rewritten for pint (:func:`normalise_unit`)
``dimensions``    dimensions in words, their SI base units, the order of a rate constant
``reading``       the registry, the table of common units read without pint,
                  :func:`parse_unit`, :class:`UnitSpec`, :func:`convert`, :func:`pint_text`
``temperatures``  :func:`temperature_to_kelvin`
``durations``     seconds per unit of time and the readers of durations and time lists
================  ======================================================================

Layers inside: ``constants``, ``notation`` and ``dimensions`` at the bottom, ``reading``
above them, ``temperatures`` and ``durations`` on top.  The rest of the package imports
from ``kinetics.units``.
"""

from .constants import (
    AVOGADRO_EXACT,
    BOLTZMANN_EXACT,
    GAS_CONSTANT,
    GAS_CONSTANT_EXACT,
    PLANCK_EXACT,
)
from .dimensions import concentration_order, describe_dimension, si_unit
from .durations import MAX_DURATION_TEXT as MAX_DURATION_TEXT
from .durations import TIME_UNITS, parse_duration, parse_time_list, time_factor
from .notation import MAX_EXPONENT, normalise_unit
from .reading import (
    COMMON_UNITS,
    MAX_UNIT_LENGTH,
    OFFSET_TEMPERATURES,
    UnitSpec,
    convert,
    is_mass_ratio,
    parse_unit,
    parse_unit_by_pint,
    pint_text,
)
from .reading import registry as registry
from .temperatures import checked_kelvin, temperature_to_kelvin

__all__ = [
    "AVOGADRO_EXACT",
    "BOLTZMANN_EXACT",
    "COMMON_UNITS",
    "GAS_CONSTANT",
    "GAS_CONSTANT_EXACT",
    "MAX_EXPONENT",
    "MAX_UNIT_LENGTH",
    "OFFSET_TEMPERATURES",
    "PLANCK_EXACT",
    "TIME_UNITS",
    "UnitSpec",
    "checked_kelvin",
    "concentration_order",
    "convert",
    "describe_dimension",
    "is_mass_ratio",
    "normalise_unit",
    "parse_duration",
    "parse_time_list",
    "parse_unit",
    "parse_unit_by_pint",
    "pint_text",
    "si_unit",
    "temperature_to_kelvin",
    "time_factor",
]
