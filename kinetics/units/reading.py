"""Reading units: the one pint registry, the table of common units and :func:`parse_unit`.

Conversions are done with exact rational factors (pint with :class:`fractions.Fraction`
magnitudes).  The units chemists write most (:data:`COMMON_UNITS`) are read without pint,
exactly as pint reads them; pint decides the rest.
"""

from __future__ import annotations

import functools
import re
from dataclasses import dataclass
from fractions import Fraction

from ..errors import UnitError, UnknownUnitError
from .dimensions import (
    LENGTH,
    MASS,
    SUBSTANCE,
    TEMPERATURE,
    TIME,
    concentration_order,
    describe_dimension,
)
from .notation import MAX_EXPONENT, normalise_unit

__all__ = [
    "COMMON_UNITS",
    "MAX_UNIT_LENGTH",
    "OFFSET_TEMPERATURES",
    "UnitSpec",
    "convert",
    "is_mass_ratio",
    "parse_unit",
    "parse_unit_by_pint",
    "pint_text",
    "registry",
]

_NUMBER = re.compile(r"^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")

#: Longest unit accepted [characters].  Units chemists write are short (``L mol-1 s-1``);
#: a longer one is text run on after the unit, and pint's reading of it grows with the
#: square of its length.
MAX_UNIT_LENGTH = 60


@functools.lru_cache(maxsize=1)
def registry():
    """Return the package's one pint registry (exact rational magnitudes).

    Created on first use, then shared.  Importing pint and loading its
    definitions takes most of a second, so :func:`parse_unit` reads the units
    of :data:`COMMON_UNITS` without it (the tests check that table against
    this registry, unit by unit and in combinations).
    """
    import pint

    return pint.UnitRegistry(non_int_type=Fraction, autoconvert_offset_to_baseunit=True)


_ENERGY = {MASS: 1, LENGTH: 2, TIME: -2}
_PREFIXES: dict[str, Fraction | int] = {"": 1, "k": 1000, "d": Fraction(1, 10)}
_PREFIXES |= {"c": Fraction(1, 100)}
_PREFIXES |= {"m": Fraction(1, 10**3), "u": Fraction(1, 10**6), "n": Fraction(1, 10**9)}
_PREFIXES |= {"p": Fraction(1, 10**12)}
_PREFIXES |= {"M": 10**6, "G": 10**9, "T": 10**12}


def _common_units() -> dict[str, tuple[str, Fraction, dict[str, int]]]:
    """Symbol -> (pint's name, exact factor to SI base units, dimension exponents).

    SI definitions (BIPM, The International System of Units, 9th edition, 2019):
    1 min = 60 s, 1 h = 3600 s, 1 d = 86400 s, 1 L = 1 dm^3, 1 M = 1 mol/L; the
    thermochemical calorie is 4.184 J exactly (NIST SP 811, 2008).
    """
    # (symbol, pint's name, factor, dimensions, prefixes allowed)
    bases: list[tuple[str, str, Fraction | int, dict[str, int], str]] = [
        ("s", "second", 1, {TIME: 1}, "munp"),
        ("mol", "mole", 1, {SUBSTANCE: 1}, "kmunp"),
        ("m", "meter", 1, {LENGTH: 1}, "dcmun"),
        ("L", "liter", Fraction(1, 1000), {LENGTH: 3}, "mud"),
        ("l", "liter", Fraction(1, 1000), {LENGTH: 3}, "mud"),
        ("M", "molar", 1000, {SUBSTANCE: 1, LENGTH: -3}, "munp"),
        ("g", "gram", Fraction(1, 1000), {MASS: 1}, "kmu"),
        ("J", "joule", 1, _ENERGY, "k"),
        ("cal", "calorie", Fraction(4184, 1000), _ENERGY, "k"),
        # activities: 1 Bq = 1/s (one decay per second), 1 Ci = 3.7e10 Bq exactly
        # (BIPM, SI brochure, 9th edition, 2019, table 4; NIST SP 811, 2008, B.8)
        ("Bq", "becquerel", 1, {TIME: -1}, "kMGT"),
        ("Ci", "curie", 37 * 10**9, {TIME: -1}, "mun"),
    ]
    prefix_names = {"k": "kilo", "d": "deci", "c": "centi", "m": "milli", "u": "micro"}
    prefix_names |= {"n": "nano", "p": "pico", "M": "mega", "G": "giga", "T": "tera", "": ""}
    table: dict[str, tuple[str, Fraction | int, dict[str, int]]] = {}
    for symbol, name, factor, dims, prefixes in bases:
        for prefix in ["", *prefixes]:
            table[prefix + symbol] = (prefix_names[prefix] + name, factor * _PREFIXES[prefix], dims)
    plain: list[tuple[str, str, Fraction | int, dict[str, int]]] = [
        ("sec", "second", 1, {TIME: 1}),
        ("second", "second", 1, {TIME: 1}),
        ("min", "minute", 60, {TIME: 1}),
        ("minute", "minute", 60, {TIME: 1}),
        ("h", "hour", 3600, {TIME: 1}),
        ("hr", "hour", 3600, {TIME: 1}),
        ("hour", "hour", 3600, {TIME: 1}),
        ("d", "day", 86400, {TIME: 1}),
        ("day", "day", 86400, {TIME: 1}),
        ("mole", "mole", 1, {SUBSTANCE: 1}),
        ("liter", "liter", Fraction(1, 1000), {LENGTH: 3}),
        ("litre", "liter", Fraction(1, 1000), {LENGTH: 3}),
        ("K", "kelvin", 1, {TEMPERATURE: 1}),
        ("kelvin", "kelvin", 1, {TEMPERATURE: 1}),
        ("%", "percent", Fraction(1, 100), {}),
    ]
    table |= {symbol: (name, Fraction(f), dims) for symbol, name, f, dims in plain}
    return {k: (name, Fraction(f), dims) for k, (name, f, dims) in table.items()}


#: Units read without pint (see :func:`parse_unit`): symbol -> (pint's name for it,
#: exact factor to SI base units, dimension exponents).  Every entry, and products
#: and powers of them, must read exactly as pint reads them (tests/test_units.py).
COMMON_UNITS = _common_units()
#: Temperatures with an offset, read without pint: pint syntax -> (scale, offset) with
#: T/K = (value + offset) * scale.  T/K = t/degC + 273.15 (BIPM, SI brochure, 9th
#: edition, 2019, 2.3.1); T/K = (t/degF + 459.67) * 5/9 (NIST SP 811, 2008, B.8).
OFFSET_TEMPERATURES = {
    "degC": (Fraction(1), Fraction(27315, 100)),
    "degF": (Fraction(5, 9), Fraction(45967, 100)),
}
_TOKEN = re.compile(r"\*\*|[*/()]|[-+]?\d+|[^\W\d]+|%|.")
_INTEGER = re.compile(r"^[-+]?\d+$")


def _quick_unit(normal: str) -> tuple[Fraction, tuple[tuple[str, Fraction], ...]] | None:
    """Factor and dimensions of a pint-syntax unit made only of :data:`COMMON_UNITS`.

    ``None`` for anything else (another unit, a number other than 1, an
    exponent beyond the limit that pint's path reports): pint then decides.
    Operators as pint reads them: ``**`` first, then ``*`` and ``/`` from left
    to right.
    """
    tokens = _TOKEN.findall(normal)
    parsed = _quick_product(tokens, 0)
    if parsed is None or parsed[0] != len(tokens):
        return None
    _, factor, dims, names = parsed
    if any(abs(p) > 2 * MAX_EXPONENT for p in names.values()):
        return None
    return factor, tuple(sorted((k, Fraction(v)) for k, v in dims.items() if v))


#: A partial reading: (next token, factor, dimension exponents, exponent per pint name).
_Reading = tuple[int, Fraction, dict[str, int], dict[str, int]]


def _quick_product(tokens: list[str], at: int) -> _Reading | None:
    """Read ``power (('*' | '/') power)*`` from ``tokens[at:]``."""
    result = _quick_power(tokens, at)
    while result is not None and result[0] < len(tokens) and tokens[result[0]] in ("*", "/"):
        sign = 1 if tokens[result[0]] == "*" else -1
        right = _quick_power(tokens, result[0] + 1)
        if right is None:
            return None
        _, factor, dims, names = result
        factor = factor * right[1] if sign == 1 else factor / right[1]
        for mine, theirs in ((dims, right[2]), (names, right[3])):
            for k, v in theirs.items():
                mine[k] = mine.get(k, 0) + sign * v
        result = (right[0], factor, dims, names)
    return result


def _quick_power(tokens: list[str], at: int) -> _Reading | None:
    """Read ``('(' product ')' | '1' | unit) ('**' integer)?`` from ``tokens[at:]``."""
    if at >= len(tokens):
        return None
    token = tokens[at]
    if token == "(":
        inner = _quick_product(tokens, at + 1)
        if inner is None or inner[0] >= len(tokens) or tokens[inner[0]] != ")":
            return None
        reading = (inner[0] + 1, *inner[1:])
    elif token == "1":
        reading = (at + 1, Fraction(1), {}, {})
    elif token in COMMON_UNITS:
        name, factor, dims = COMMON_UNITS[token]
        reading = (at + 1, factor, dict(dims), {name: 1})
    else:
        return None
    at = reading[0]
    if at < len(tokens) and tokens[at] == "**":
        if at + 1 >= len(tokens) or not _INTEGER.match(tokens[at + 1]):
            return None
        e = int(tokens[at + 1])
        if e == 0:
            return None  # pint refuses a power 0 (s**0): let it say so
        reading = (
            at + 2,
            reading[1] ** e,
            {k: v * e for k, v in reading[2].items()},
            {k: v * e for k, v in reading[3].items()},
        )
    return reading


@dataclass(frozen=True)
class UnitSpec:
    """A parsed unit: the text as written, its exact factor to SI and its dimension.

    Attributes
    ----------
    text : str
        The unit as the user wrote it (kept for display).
    factor : Fraction
        Exact factor to SI base units (``1 text = factor * SI``).
    dimensions : tuple of (str, Fraction)
        Sorted dimension exponents, e.g. ``(("[time]", -1),)`` for 1/s.
    offset : bool
        True for units with an offset (degC, degF): use :func:`temperature_to_kelvin`.
    """

    text: str
    factor: Fraction
    dimensions: tuple[tuple[str, Fraction], ...]
    offset: bool = False

    @property
    def dims(self) -> dict[str, Fraction]:
        """Dimension exponents as a dict."""
        return dict(self.dimensions)

    @functools.cached_property
    def rate_order(self) -> int | None:
        """Reaction order minus one implied by this unit as a rate constant.

        See :func:`concentration_order`; None if it is no rate-constant unit.

        Examples
        --------
        A rate ``k c^2`` in M/s needs k in M⁻¹ s⁻¹ (closed form: the unit of k is
        concentration^(1-n) / time for a step of order n):

        >>> parse_unit("M-1 s-1").rate_order, parse_unit("1/min").rate_order
        (1, 0)
        """
        return concentration_order(self.dims)


@functools.lru_cache(maxsize=4096)
def parse_unit(text: str) -> UnitSpec:
    """Parse a unit written in chemists' notation.

    Parameters
    ----------
    text : str
        The unit, e.g. ``"1/min"``, ``"M-1 s-1"``, ``"mmol/L"``; empty for a pure number.

    Returns
    -------
    UnitSpec

    Raises
    ------
    UnknownUnitError
        When the pieces read well but name no known unit (a ``ValueError``).
    UnitError
        For any other unit that cannot be read (a ``ValueError``); callers turn
        both into a located error.

    Examples
    --------
    1 M⁻¹ s⁻¹ is 10⁻³ m³ mol⁻¹ s⁻¹ (closed form: 1 M = 1 mol/L and 1 L = 10⁻³ m³, SI
    brochure, 9th edition, 2019, table 8):

    >>> spec = parse_unit("M-1 s-1")
    >>> spec.factor, {name: int(power) for name, power in spec.dims.items()}
    (Fraction(1, 1000), {'[length]': 3, '[substance]': -1, '[time]': -1})
    """
    if not text.strip():
        return UnitSpec(text, Fraction(1), ())
    if len(text) > MAX_UNIT_LENGTH:
        raise UnitError(
            f"a unit has at most {MAX_UNIT_LENGTH} characters; this one has {len(text):,}"
        )
    normal = normalise_unit(text)
    if _NUMBER.match(normal.strip()):
        raise UnitError(f"{text!r} is a number, not a unit")
    if normal in OFFSET_TEMPERATURES:
        return UnitSpec(text, Fraction(1), (("[temperature]", Fraction(1)),), True)
    quick = _quick_unit(normal)
    if quick is not None:
        return UnitSpec(text, quick[0], quick[1], False)
    return _pint_unit(text, normal)


def parse_unit_by_pint(text: str) -> UnitSpec:
    """:func:`parse_unit` without the table of common units: pint reads every unit.

    The reference that :data:`COMMON_UNITS` is checked against; slower (it
    builds the registry on first use).

    Examples
    --------
    1 L mol⁻¹ min⁻¹ is 10⁻³ m³ / (mol 60 s) (closed form; 1 L = 10⁻³ m³ and 1 min = 60 s,
    SI brochure, 9th edition, 2019, table 8):

    >>> parse_unit_by_pint("L mol-1 min-1").factor
    Fraction(1, 60000)
    """
    normal = normalise_unit(text)
    if not text.strip() or _NUMBER.match(normal.strip()):
        return parse_unit(text)
    return _pint_unit(text, normal)


def _pint_unit(text: str, normal: str) -> UnitSpec:
    ureg = registry()
    try:
        unit = ureg.parse_units(normal)
    except Exception as exc:  # pint raises several unrelated types
        raise UnknownUnitError(f"unknown unit {text!r}") from exc
    # nested powers ((min^12)^12) multiply: bound the result before exact conversion
    if any(abs(power) > 2 * MAX_EXPONENT for _, power in unit._units.items()):
        raise UnitError(f"the exponents in {text!r} are too large")
    quantity = ureg.Quantity(Fraction(1), unit)
    if not quantity._is_multiplicative:
        return UnitSpec(text, Fraction(1), _dims_tuple(quantity.dimensionality), True)
    base = ureg.Quantity(Fraction(1), unit).to_base_units()
    return UnitSpec(text, Fraction(base.magnitude), _dims_tuple(base.dimensionality), False)


@functools.lru_cache(maxsize=256)
def is_mass_ratio(text: str) -> bool:
    """True for a mass divided by a mass (``mg/kg``, ``ug/g``, ``mg kg-1``).

    pint reduces such a unit to a pure number; a soil scientist means a mass of
    substance per mass of soil.  False for units that do not parse.

    Examples
    --------
    >>> is_mass_ratio("mg/kg"), is_mass_ratio("%"), is_mass_ratio("mg/L")
    (True, False, False)
    """
    try:
        if parse_unit(text).dimensions:
            return False
        unit = registry().parse_units(normalise_unit(text))
    except Exception:  # pint raises several unrelated types
        return False
    ureg = registry()
    up: dict = {}
    down: dict = {}
    for name, power in unit._units.items():  # pint's unit container: name -> exponent
        side = up if power > 0 else down
        for dim, exp in ureg.get_dimensionality(name).items():
            side[dim] = side.get(dim, 0) + exp * abs(power)
    return up == {"[mass]": 1} and down == {"[mass]": 1}


def pint_text(text: str) -> str:
    """``text`` itself when pint reads it as we do, else its pint form (``mmol*L**-1``).

    Parameters
    ----------
    text : str
        A unit in chemists' notation that :func:`parse_unit` accepts.

    Returns
    -------
    str
        A string that plain pint parses to the same unit: outputs promise that.

    Examples
    --------
    >>> pint_text("mmol/L"), pint_text("mmol L-1")
    ('mmol/L', 'mmol*L**-1')
    """
    spec = parse_unit(text)
    if normalise_unit(text) == text.strip():
        return text.strip()  # exactly the string parse_unit gave pint (or its table)
    try:
        unit = registry().parse_units(text.strip())
        base = registry().Quantity(Fraction(1), unit).to_base_units()
        if Fraction(base.magnitude) == spec.factor and (
            _dims_tuple(base.dimensionality) == spec.dimensions
        ):
            return text.strip()
    except Exception:  # pint raises several unrelated types
        pass
    return normalise_unit(text)


def _dims_tuple(dimensionality) -> tuple[tuple[str, Fraction], ...]:
    return tuple(sorted((str(k), Fraction(v)) for k, v in dict(dimensionality).items() if v))


def convert(value: float, from_unit: str, to_unit: str) -> float:
    """Convert a number between two units of the same dimension, rounding once.

    Parameters
    ----------
    value : float
        The number in ``from_unit``.
    from_unit, to_unit : str
        Units in chemists' notation.

    Returns
    -------
    float
        ``value`` expressed in ``to_unit``.

    Raises
    ------
    ValueError
        When the units are unknown or of different dimensions.

    Examples
    --------
    1 h = 60 min and 1 L = 1 dm³ = 10⁻³ m³ (SI brochure, 9th edition, 2019, table 8), so
    90 min is 1.5 h and 2.5 mmol/L is 2.5 mol/m³:

    >>> convert(90.0, "min", "h"), convert(2.5, "mmol/L", "mol/m3")
    (1.5, 2.5)
    """
    a, b = parse_unit(from_unit), parse_unit(to_unit)
    if a.offset or b.offset:
        raise ValueError("use temperature_to_kelvin for temperatures")
    if a.dimensions != b.dimensions:
        raise ValueError(
            f"cannot convert {from_unit!r} ({describe_dimension(a.dims)}) to {to_unit!r} "
            f"({describe_dimension(b.dims)})"
        )
    return float(Fraction(value) * a.factor / b.factor)
