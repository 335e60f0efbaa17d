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
"""

from __future__ import annotations

import functools
import math
import re
from dataclasses import dataclass
from fractions import Fraction

from .errors import ArgumentTypeError, TimesError, UnitError, UnknownUnitError, shorten, type_name

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

#: Molar gas constant R [J/(mol K)]: exactly N_A k = 6.02214076e23 * 1.380649e-23
#: = 8.31446261815324 in the 2019 SI (CODATA 2018; both factors are defined exactly).
GAS_CONSTANT_EXACT = Fraction("8.31446261815324")
GAS_CONSTANT = float(GAS_CONSTANT_EXACT)
#: Boltzmann constant k_B [J/K], exact in the 2019 SI (BIPM, SI brochure, 9th edition,
#: 2019, table 1; CODATA 2018).
BOLTZMANN_EXACT = Fraction("1.380649e-23")
#: Planck constant h [J s], exact in the 2019 SI (same source).
PLANCK_EXACT = Fraction("6.62607015e-34")
#: Avogadro constant N_A [1/mol], exact in the 2019 SI (same source).
AVOGADRO_EXACT = Fraction("6.02214076e23")

_SUPERSCRIPTS = str.maketrans("⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁺", "0123456789-+")
_PIECE = re.compile(r"\(|\)|/|\*|[^\s*/·⋅()]+")
_POWER = re.compile(r"^(?P<name>[^\W\d]+?)\^?(?P<exp>[-+]?\d+)$")
_BARE_POWER = re.compile(r"^\^?(?P<exp>[-+]?\d+)$")
_WORD = re.compile(r"^(?:[^\W\d]+|%|\d+)$")
_GLUED = re.compile(r"(?<=[^\W\d_])(\^?[-+]?\d+)(?=[^\W\d_])")
_NUMBER = re.compile(r"^[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?$")

#: Longest unit accepted [characters].  Units chemists write are short (``L mol-1 s-1``);
#: a longer one is text run on after the unit, and pint's reading of it grows with the
#: square of its length.
MAX_UNIT_LENGTH = 60

#: Largest exponent accepted in a unit (``s-1``, ``m3``, ``M-2`` ...).  Larger ones
#: are certainly typing mistakes, and exact rational powers of them cost time.
MAX_EXPONENT = 12


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


_TIME, _LENGTH, _SUBSTANCE, _MASS, _TEMPERATURE = (
    "[time]",
    "[length]",
    "[substance]",
    "[mass]",
    "[temperature]",
)
_ENERGY = {_MASS: 1, _LENGTH: 2, _TIME: -2}
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
        ("s", "second", 1, {_TIME: 1}, "munp"),
        ("mol", "mole", 1, {_SUBSTANCE: 1}, "kmunp"),
        ("m", "meter", 1, {_LENGTH: 1}, "dcmun"),
        ("L", "liter", Fraction(1, 1000), {_LENGTH: 3}, "mud"),
        ("l", "liter", Fraction(1, 1000), {_LENGTH: 3}, "mud"),
        ("M", "molar", 1000, {_SUBSTANCE: 1, _LENGTH: -3}, "munp"),
        ("g", "gram", Fraction(1, 1000), {_MASS: 1}, "kmu"),
        ("J", "joule", 1, _ENERGY, "k"),
        ("cal", "calorie", Fraction(4184, 1000), _ENERGY, "k"),
        # activities: 1 Bq = 1/s (one decay per second), 1 Ci = 3.7e10 Bq exactly
        # (BIPM, SI brochure, 9th edition, 2019, table 4; NIST SP 811, 2008, B.8)
        ("Bq", "becquerel", 1, {_TIME: -1}, "kMGT"),
        ("Ci", "curie", 37 * 10**9, {_TIME: -1}, "mun"),
    ]
    prefix_names = {"k": "kilo", "d": "deci", "c": "centi", "m": "milli", "u": "micro"}
    prefix_names |= {"n": "nano", "p": "pico", "M": "mega", "G": "giga", "T": "tera", "": ""}
    table: dict[str, tuple[str, Fraction | int, dict[str, int]]] = {}
    for symbol, name, factor, dims, prefixes in bases:
        for prefix in ["", *prefixes]:
            table[prefix + symbol] = (prefix_names[prefix] + name, factor * _PREFIXES[prefix], dims)
    plain: list[tuple[str, str, Fraction | int, dict[str, int]]] = [
        ("sec", "second", 1, {_TIME: 1}),
        ("second", "second", 1, {_TIME: 1}),
        ("min", "minute", 60, {_TIME: 1}),
        ("minute", "minute", 60, {_TIME: 1}),
        ("h", "hour", 3600, {_TIME: 1}),
        ("hr", "hour", 3600, {_TIME: 1}),
        ("hour", "hour", 3600, {_TIME: 1}),
        ("d", "day", 86400, {_TIME: 1}),
        ("day", "day", 86400, {_TIME: 1}),
        ("mole", "mole", 1, {_SUBSTANCE: 1}),
        ("liter", "liter", Fraction(1, 1000), {_LENGTH: 3}),
        ("litre", "liter", Fraction(1, 1000), {_LENGTH: 3}),
        ("K", "kelvin", 1, {_TEMPERATURE: 1}),
        ("kelvin", "kelvin", 1, {_TEMPERATURE: 1}),
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


def normalise_unit(text: str) -> str:
    """Rewrite chemists' unit notation into a string pint parses.

    Parameters
    ----------
    text : str
        A unit as written in a scheme, e.g. ``"L mol-1 s-1"`` or ``"s⁻¹"``.

    Returns
    -------
    str
        The same unit in pint syntax, e.g. ``"L*mol**-1*s**-1"``.

    Raises
    ------
    ValueError
        For a piece that is neither a unit name (with an optional integer
        exponent), an integer, an operator nor a parenthesis, and for exponents
        beyond :data:`MAX_EXPONENT`.

    Examples
    --------
    >>> normalise_unit("M-1 s-1")
    'M**-1*s**-1'
    >>> normalise_unit("mol/L/min")
    'mol/L/min'
    >>> normalise_unit("s**-1")
    's**-1'
    """
    text = text.strip().translate(_SUPERSCRIPTS).replace("−", "-")
    text = text.replace("°C", "degC").replace("°F", "degF").replace("℃", "degC")
    text = text.replace("µ", "u").replace("μ", "u")
    text = re.sub(r"\s*(?:\*\*|\^)\s*", "^", text)
    text = _GLUED.sub(r"\1 ", text)  # M-1s-1 -> M-1 s-1
    out: list[str] = []
    previous_is_word = False
    for piece in _PIECE.findall(text):
        if piece in ("(", ")", "/", "*"):
            if piece == "(" and previous_is_word:
                out.append("*")
            out.append(piece)
            previous_is_word = piece == ")"
            continue
        bare = _BARE_POWER.match(piece)
        if bare and out and out[-1] == ")":
            out.append("**" + _exponent(bare["exp"]))
            previous_is_word = True
            continue
        match = _POWER.match(piece)
        if match:
            piece = f"{match['name']}**{_exponent(match['exp'])}"
        elif not _WORD.match(piece):
            raise UnitError(f"cannot read {piece!r} in a unit")
        if previous_is_word:
            out.append("*")
        out.append(piece)
        previous_is_word = True
    return "".join(out)


def _exponent(text: str) -> str:
    value = int(text)
    if abs(value) > MAX_EXPONENT:
        raise UnitError(f"the exponent {value} is too large")
    return str(value)


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
        return _order_of(self.dimensions)


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
    _MASS: "kg",
    _LENGTH: "m",
    _SUBSTANCE: "mol",
    _TIME: "s",
    _TEMPERATURE: "K",
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


# ---------------------------------------------------------------------------
# durations and time units (the one home of the readers of --until, --times and
# --time-unit, and of the seconds per unit of time)

#: The units of time offered in messages; pint also reads plurals and prefixed seconds.
TIME_UNITS = (
    "s, min, h, d, week, month (1/12 year), year (365.25 d; also yr or a), or prefixed "
    "seconds such as ms and us"
)

_DURATION = re.compile(
    r"^\s*(?P<number>[-+]?(?:(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
    r"|(?:nan|inf(?:inity)?)(?![\w])))\s*(?P<unit>.*)$",
    re.IGNORECASE | re.DOTALL,
)
#: Longest text read as a duration or a time list [characters] (a list of 10,000 times).
MAX_DURATION_TEXT = 200_000


def time_factor(unit: str) -> float:
    """Seconds per ``unit`` (``"min"`` -> 60.0).

    Parameters
    ----------
    unit : str
        A unit of time in chemists' notation (``s``, ``min``, ``h``, ``d``, ``week``,
        ``year``...).

    Returns
    -------
    float
        The exact factor to seconds, rounded once [s per unit].

    Raises
    ------
    TimesError
        When ``unit`` is unknown or not a unit of time.

    Examples
    --------
    1 h = 3600 s and 1 d = 86 400 s (SI brochure, 9th edition, 2019, table 8); a week is
    7 d and a year the Julian year of 365.25 d (closed forms):

    >>> time_factor("h"), time_factor("week"), time_factor("year")
    (3600.0, 604800.0, 31557600.0)
    """
    hint = f"use {TIME_UNITS}"
    if not isinstance(unit, str):
        raise ArgumentTypeError(
            f"the time unit must be text such as 'min', not {type_name(unit)}", hint
        )
    try:
        spec = parse_unit(unit)
    except ValueError:
        raise TimesError(f"unknown time unit {shorten(unit)!r}", hint) from None
    if spec.offset or spec.dims != {"[time]": 1}:
        raise TimesError(f"{shorten(unit)!r} is not a unit of time", hint)
    return float(spec.factor)


def _number_and_unit(text: str):
    match = _DURATION.match(text)
    if not match:
        return None, ""
    return match["number"], match["unit"].strip()


def _finite_value(number: str, quoted: str, example: str) -> float:
    """``float(number)``, refusing nan and infinities with a message that quotes the user."""
    value = float(number)
    if math.isnan(value):
        raise TimesError(f"{quoted} is not a number", example)
    if math.isinf(value):
        spelled = number.lstrip("+-")[:1].lower() == "i"
        reason = "" if spelled else " (beyond the range of double precision, about 1.8e308)"
        raise TimesError(f"{quoted} is not a finite duration{reason}", example)
    return value


def parse_duration(text: str, option: str = "--until") -> tuple[float, str]:
    """Read a duration with its unit: ``"90 min"`` -> ``(5400.0, "min")``.

    Parameters
    ----------
    text : str
        A positive, finite number and a unit of time, as typed on the command line.
    option : str, optional
        The option the text came from, for messages.

    Returns
    -------
    tuple of (float, str)
        The duration [s] and the unit as written.

    Raises
    ------
    TimesError
        For a missing or unknown unit, a number that is not finite, zero or negative;
        the message quotes the text as written (in the user's unit).

    Examples
    --------
    1 min = 60 s and 1 d = 86 400 s (SI brochure, 9th edition, 2019, table 8):

    >>> parse_duration("90 min"), parse_duration("1.5 d")
    ((5400.0, 'min'), (129600.0, 'd'))
    """
    example = f"write e.g. {option} '90 min'"
    quoted = f"{option} {shorten(text)!r}"
    if len(text) > MAX_DURATION_TEXT:
        raise TimesError(f"{quoted} is too long to be a duration", example)
    number, unit = _number_and_unit(text)
    if number is None or not unit:
        raise TimesError(f"{quoted} is not a duration with a unit", example)
    value = _finite_value(number, quoted, example)
    try:
        factor = time_factor(unit)
    except TimesError as exc:
        raise TimesError(f"{quoted}: {exc.problem}", exc.hint) from None
    if not value > 0:
        raise TimesError(f"{quoted} is not a positive duration", example)
    seconds = value * factor
    if not math.isfinite(seconds):
        raise TimesError(
            f"{quoted} is beyond the range of double precision in seconds (about 1.8e308 s)",
            example,
        )
    return seconds, unit


def parse_time_list(text: str, option: str = "--times") -> tuple[list[float], str]:
    """Read a list of times with one unit at the end: ``"0,5,10 min"`` -> seconds and unit.

    Parameters
    ----------
    text : str
        Comma-separated numbers, the unit written once after the last one.
    option : str, optional
        The option the text came from, for messages.

    Returns
    -------
    tuple of (list of float, str)
        The times [s], in the order given, and the unit as written.

    Raises
    ------
    TimesError
        For a missing or unknown unit, a piece that is not a finite number, a negative
        time or times out of order; messages quote the times as written.

    Examples
    --------
    1 min = 60 s (SI brochure, 9th edition, 2019, table 8):

    >>> parse_time_list("0,5,10 min")
    ([0.0, 300.0, 600.0], 'min')
    """
    example = f"write e.g. {option} '0,5,10,30 min'"
    quoted = f"{option} {shorten(text)!r}"
    if len(text) > MAX_DURATION_TEXT:
        raise TimesError(
            f"{quoted} is too long (at most {MAX_DURATION_TEXT:,} characters)", example
        )
    numbers, unit = _numbers_and_unit(text, quoted, example)
    try:
        factor = time_factor(unit)
    except TimesError as exc:
        raise TimesError(f"{quoted}: {exc.problem}", exc.hint) from None
    values = _ordered_times(numbers, unit, quoted, example)
    seconds = [v * factor for v, _ in values]
    if not math.isfinite(seconds[-1]):
        raise TimesError(
            f"{quoted}: {values[-1][1]} {unit} is beyond the range of double precision in "
            "seconds (about 1.8e308 s)",
            example,
        )
    return seconds, unit


def _numbers_and_unit(text: str, quoted: str, example: str) -> tuple[list[str], str]:
    """The numbers of a time list as written and its unit (written once, at the end)."""
    pieces = [p.strip() for p in text.split(",")]
    if not pieces[-1]:
        raise TimesError(f"{quoted} is not a list of times with one unit", example)
    number, unit = _number_and_unit(pieces[-1])
    for piece in [*pieces[:-1], number]:
        if piece == "":
            raise TimesError(f"{quoted} has an empty item (a comma too many?)", example)
        if piece is None or _number_and_unit(piece) != (piece, ""):
            bad = pieces[-1] if piece is None else piece
            raise TimesError(f"{quoted}: {shorten(bad)!r} is not a number", example)
    if not unit:
        raise TimesError(
            f"{quoted} does not end with a unit of time", example + " (unit once, at the end)"
        )
    return [*pieces[:-1], number], unit


def _ordered_times(
    numbers: list[str], unit: str, quoted: str, example: str
) -> list[tuple[float, str]]:
    """The times in the list's unit with their text: finite, >= 0 and in increasing order."""
    values: list[tuple[float, str]] = []
    for piece in numbers:
        value = float(piece)
        if not math.isfinite(value):
            raise TimesError(f"{quoted}: {shorten(piece)} {unit} is not a finite time", example)
        if value < 0:
            raise TimesError(
                f"{quoted}: {shorten(piece)} {unit} is negative",
                "times start at 0 (the start values)",
            )
        if values and value < values[-1][0]:
            raise TimesError(
                f"{quoted}: the times are not in increasing order ({values[-1][1]} {unit} "
                f"comes before {shorten(piece)} {unit})",
                "sort the time list",
            )
        values.append((value, shorten(piece)))
    return values
