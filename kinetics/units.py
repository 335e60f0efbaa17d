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

__all__ = [
    "GAS_CONSTANT",
    "MAX_EXPONENT",
    "MAX_UNIT_LENGTH",
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
    "pint_text",
    "temperature_to_kelvin",
    "time_factor",
]

#: Molar gas constant R [J/(mol K)]: exactly N_A k = 6.02214076e23 * 1.380649e-23
#: = 8.31446261815324 in the 2019 SI (CODATA 2018; both factors are defined exactly).
GAS_CONSTANT = 8.31446261815324

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

    Created on first use (loading pint's definitions takes a fraction of a
    second), then shared.
    """
    import pint

    return pint.UnitRegistry(non_int_type=Fraction, autoconvert_offset_to_baseunit=True)


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
            raise ValueError(f"cannot read {piece!r} in a unit")
        if previous_is_word:
            out.append("*")
        out.append(piece)
        previous_is_word = True
    return "".join(out)


def _exponent(text: str) -> str:
    value = int(text)
    if abs(value) > MAX_EXPONENT:
        raise ValueError(f"the exponent {value} is too large")
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
        """Reaction order minus one implied by this unit as a rate constant (see
        :func:`concentration_order`); None if it is no rate-constant unit."""
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
    ValueError
        When pint cannot read the unit (callers turn this into a located error).
    """
    if not text.strip():
        return UnitSpec(text, Fraction(1), ())
    if len(text) > MAX_UNIT_LENGTH:
        raise ValueError(
            f"a unit has at most {MAX_UNIT_LENGTH} characters; this one has {len(text):,}"
        )
    ureg = registry()
    normal = normalise_unit(text)
    if _NUMBER.match(normal.strip()):
        raise ValueError(f"{text!r} is a number, not a unit")
    try:
        unit = ureg.parse_units(normal)
    except Exception as exc:  # pint raises several unrelated types
        raise ValueError(f"unknown unit {text!r}") from exc
    # nested powers ((min^12)^12) multiply: bound the result before exact conversion
    if any(abs(power) > 2 * MAX_EXPONENT for _, power in unit._units.items()):
        raise ValueError(f"the exponents in {text!r} are too large")
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
    >>> convert(90.0, "min", "h")
    1.5
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
    """Convert a temperature to kelvin (accepts K, degC, degF and °C).

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
    .. math:: T/\\mathrm{K} = t/{}^\\circ\\mathrm{C} + 273.15

    computed exactly (rational arithmetic) and rounded once.

    References
    ----------
    BIPM, The International System of Units (SI), 9th edition (2019), section 2.3.1.

    Examples
    --------
    >>> temperature_to_kelvin(25.0, "degC")
    298.15
    """
    spec = parse_unit(unit)
    if spec.dims != {"[temperature]": 1}:
        raise ValueError(f"{unit!r} is not a temperature unit")
    ureg = registry()
    kelvin = ureg.Quantity(Fraction(value), normalise_unit(unit)).to("kelvin").magnitude
    try:
        return float(kelvin)
    except OverflowError:
        raise ValueError(f"the temperature {value} {unit} is too large") from None


_NAMED_DIMENSIONS = {
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


def concentration_order(dims: dict) -> int | None:
    """The reaction order minus one implied by rate-constant dimensions, if any.

    ``1/time`` gives 0, ``1/(concentration time)`` gives 1, and so on; ``None``
    when the dimension is not of the form ``concentration^-m / time``.  A
    dimension ``amount^-m / time`` (files in amounts) also counts.
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
    UsageError
        When ``unit`` is unknown or not a unit of time.

    Examples
    --------
    >>> time_factor("h"), time_factor("week")
    (3600.0, 604800.0)
    """
    from .errors import UsageError, shorten

    hint = f"use {TIME_UNITS}"
    try:
        spec = parse_unit(unit)
    except ValueError:
        raise UsageError(f"unknown time unit {shorten(unit)!r}", hint) from None
    if spec.offset or spec.dims != {"[time]": 1}:
        raise UsageError(f"{shorten(unit)!r} is not a unit of time", hint)
    return float(spec.factor)


def _number_and_unit(text: str):
    match = _DURATION.match(text)
    if not match:
        return None, ""
    return match["number"], match["unit"].strip()


def _finite_value(number: str, quoted: str, example: str) -> float:
    """``float(number)``, refusing nan and infinities with a message that quotes the user."""
    from .errors import UsageError

    value = float(number)
    if math.isnan(value):
        raise UsageError(f"{quoted} is not a number", example)
    if math.isinf(value):
        spelled = number.lstrip("+-")[:1].lower() == "i"
        reason = "" if spelled else " (beyond the range of double precision, about 1.8e308)"
        raise UsageError(f"{quoted} is not a finite duration{reason}", example)
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
    UsageError
        For a missing or unknown unit, a number that is not finite, zero or negative;
        the message quotes the text as written (in the user's unit).

    Examples
    --------
    >>> parse_duration("90 min")
    (5400.0, 'min')
    """
    from .errors import UsageError, shorten

    example = f"write e.g. {option} '90 min'"
    quoted = f"{option} {shorten(text)!r}"
    if len(text) > MAX_DURATION_TEXT:
        raise UsageError(f"{quoted} is too long to be a duration", example)
    number, unit = _number_and_unit(text)
    if number is None or not unit:
        raise UsageError(f"{quoted} is not a duration with a unit", example)
    value = _finite_value(number, quoted, example)
    try:
        factor = time_factor(unit)
    except UsageError as exc:
        raise UsageError(f"{quoted}: {exc.problem}", exc.hint) from None
    if not value > 0:
        raise UsageError(f"{quoted} is not a positive duration", example)
    seconds = value * factor
    if not math.isfinite(seconds):
        raise UsageError(
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
    UsageError
        For a missing or unknown unit, a piece that is not a finite number, a negative
        time or times out of order; messages quote the times as written.

    Examples
    --------
    >>> parse_time_list("0,5,10 min")
    ([0.0, 300.0, 600.0], 'min')
    """
    from .errors import UsageError, shorten

    example = f"write e.g. {option} '0,5,10,30 min'"
    quoted = f"{option} {shorten(text)!r}"
    if len(text) > MAX_DURATION_TEXT:
        raise UsageError(
            f"{quoted} is too long (at most {MAX_DURATION_TEXT:,} characters)", example
        )
    pieces = [p.strip() for p in text.split(",")]
    if not pieces[-1]:
        raise UsageError(f"{quoted} is not a list of times with one unit", example)
    number, unit = _number_and_unit(pieces[-1])
    for piece in [*pieces[:-1], number]:
        if piece == "":
            raise UsageError(f"{quoted} has an empty item (a comma too many?)", example)
        if piece is None or _number_and_unit(piece) != (piece, ""):
            bad = pieces[-1] if piece is None else piece
            raise UsageError(f"{quoted}: {shorten(bad)!r} is not a number", example)
    if not unit:
        raise UsageError(
            f"{quoted} does not end with a unit of time", example + " (unit once, at the end)"
        )
    try:
        factor = time_factor(unit)
    except UsageError as exc:
        raise UsageError(f"{quoted}: {exc.problem}", exc.hint) from None
    values = []
    for piece in [*pieces[:-1], number]:
        value = float(piece)
        if not math.isfinite(value):
            raise UsageError(f"{quoted}: {shorten(piece)} {unit} is not a finite time", example)
        if value < 0:
            raise UsageError(
                f"{quoted}: {shorten(piece)} {unit} is negative",
                "times start at 0 (the start values)",
            )
        if values and value < values[-1][0]:
            raise UsageError(
                f"{quoted}: the times are not in increasing order ({values[-1][1]} {unit} "
                f"comes before {shorten(piece)} {unit})",
                "sort the time list",
            )
        values.append((value, shorten(piece)))
    seconds = [v * factor for v, _ in values]
    if not math.isfinite(seconds[-1]):
        raise UsageError(
            f"{quoted}: {values[-1][1]} {unit} is beyond the range of double precision in "
            "seconds (about 1.8e308 s)",
            example,
        )
    return seconds, unit
