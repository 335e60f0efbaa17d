"""Rate constants and the temperature of a scheme: units, orders and values resolved.

A constant may be defined on a line of its own or on a reaction line, and
referred to by name elsewhere; this module turns every definition into a
:class:`~kinetics.scheme.RateConstant` (value in SI units, the concentration
order its unit implies, Arrhenius parameters) and reports names used but never
defined.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field

from ..definitions import Dependencies, NamedQuantity
from ..expressions import names_in
from ..rate_constants import Arrhenius, RateConstant
from ..units import (
    UnitSpec,
    concentration_order,
    describe_dimension,
    parse_unit,
    temperature_to_kelvin,
)
from .decay import BranchCheck, Remainder, check_parents, remainders
from .messages import Diagnostics, quoted
from .named import (
    Entry,
    ExpressionResults,
    check_references,
    evaluate_entries,
    graph_of,
    plain_leaf,
    plain_value,
)
from .quantities import exact, exact_kelvin, fraction, scaled, unit_of
from .reactions import ReactionStatement
from .reader import ParsedFile
from .source import Line
from .statements import ConstantSpec, ConstantStatement, TemperatureStatement

__all__ = [
    "Resolved",
    "Temperature",
    "plain_constant",
    "rate_constant",
    "resolve_constants",
    "resolve_definitions",
    "resolve_temperature",
]

#: Dimension of a molar energy (J/mol) in SI base units.
_MOLAR_ENERGY = {"[mass]": 1, "[length]": 2, "[time]": -2, "[substance]": -1}


@dataclass(frozen=True, slots=True)
class Temperature:
    """The temperature of a scheme.

    Attributes
    ----------
    kelvin : float or None
        The temperature [K]; None when the file sets none or it cannot be used.
    failed : bool
        True when the file writes a temperature that cannot be used (already
        reported): then an Arrhenius constant does not "need a temperature".
    """

    kelvin: float | None
    failed: bool


def resolve_temperature(parsed: ParsedFile, found: Diagnostics) -> Temperature:
    """The temperature of the file, with its errors in ``found``.

    Parameters
    ----------
    parsed : ParsedFile
        The first pass of the file.
    found : Diagnostics
        Where errors go.

    Returns
    -------
    Temperature

    Notes
    -----
    Degrees Celsius are converted by :func:`kinetics.units.temperature_to_kelvin`.

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> resolve_temperature(read_statements("temperature = 25 degC", "t"), Diagnostics("t"))
    Temperature(kelvin=298.15, failed=False)
    """
    temps = [s for s in parsed.statements if isinstance(s, TemperatureStatement)]
    kelvin = _kelvin(temps, found) if temps else None
    failed = kelvin is None and (bool(temps) or TemperatureStatement in parsed.failed_kinds)
    return Temperature(kelvin, failed)


def _kelvin(temps: list[TemperatureStatement], found: Diagnostics) -> float | None:
    for extra in temps[1:]:
        found.error(
            extra.line,
            f"the temperature is set twice (first on line {temps[0].line.number})",
            extra.value.column,
            extra.value.text,
            "keep one temperature statement; sweep temperatures with 'kinetics sweep'",
        )
    value, line = temps[0].value, temps[0].line
    if not value.unit:
        found.error(
            line,
            f"the temperature {value.number} has no unit",
            value.column,
            value.number,
            f"write it in K or degC, e.g. temperature = {value.number} K",
        )
        return None
    try:
        kelvin = temperature_to_kelvin(fraction(value.number), value.unit)
    except ValueError:
        found.error(
            line,
            f"the temperature is given in {quoted(value.unit)}, which is not a temperature unit",
            value.unit_column,
            value.unit,
            "write the temperature in K or degC, e.g. temperature = 60 degC",
        )
        return None
    if not kelvin > 0:
        found.error(
            line,
            f"the temperature {value.text} is at or below absolute zero",
            value.column,
            value.text,
            "write a temperature above 0 K, e.g. temperature = 25 degC",
        )
        return None
    return kelvin


@dataclass
class Resolved:
    """Every definition of a file, resolved.

    Attributes
    ----------
    constants : dict of str to RateConstant
        The rate constants, in order of first definition.
    quantities : dict of str to NamedQuantity
        The named quantities that are not rate constants.
    graph : Dependencies
        The definitions written as expressions and what they use.
    untracked : list of Remainder
        Decaying parents whose branches leave a share untracked (a step to nothing).
    used : set of str
        Every name an expression refers to.
    """

    constants: dict[str, RateConstant]
    quantities: dict[str, NamedQuantity]
    graph: Dependencies
    untracked: list[Remainder]
    used: set[str]


def resolve_constants(
    parsed: ParsedFile, temperature: Temperature, found: Diagnostics
) -> dict[str, RateConstant]:
    r"""Every rate constant defined in the file, by name, with errors in ``found``.

    A constant defined twice with the same value is one constant; with another
    value it is an error.  A name used on a reaction line but never defined is an
    error (with a "did you mean" for the first few).  See :func:`resolve_definitions`
    for the named quantities and the graph.

    Parameters
    ----------
    parsed : ParsedFile
        The first pass of the file.
    temperature : Temperature
        The file's temperature (Arrhenius constants need one).
    found : Diagnostics
        Where errors go.

    Returns
    -------
    dict of str to RateConstant

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> parsed = read_statements("k1 = 0.12 1/min\nA -> B  k1\nB -> C  k_1", "t")
    >>> found = Diagnostics("t")
    >>> constants = resolve_constants(parsed, Temperature(None, False), found)
    >>> {name: c.value_si for name, c in constants.items()}
    {'k1': Fraction(1, 500)}
    >>> found.errors[0].headline()
    't:3:9: rate constant k_1 is used but never defined; did you mean k1?'
    """
    return resolve_definitions(parsed, temperature, found).constants


def resolve_definitions(
    parsed: ParsedFile,
    temperature: Temperature,
    found: Diagnostics,
    species: Iterable[str] = (),
) -> Resolved:
    r"""Every definition of the file: rate constants, named quantities and their graph.

    Definitions written as plain values keep their readers (:func:`plain_constant`,
    :func:`rate_constant`); expressions are checked and evaluated by
    :mod:`~kinetics.language.named`, decay steps by :mod:`~kinetics.language.decay`.

    Parameters
    ----------
    parsed : ParsedFile
        The first pass of the file.
    temperature : Temperature
        The file's temperature.
    found : Diagnostics
        Where errors and warnings go.
    species : iterable of str, optional
        The species of the file (an expression that names one is told so).

    Returns
    -------
    Resolved

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> parsed = read_statements("t_p = 50 h\nA -> B  k = ln(2) / t_p", "t")
    >>> resolved = resolve_definitions(parsed, Temperature(None, False), Diagnostics("t"))
    >>> resolved.quantities["t_p"].value_si, resolved.graph.driven_by("t_p")
    (Fraction(180000, 1), ('k',))
    """
    t = temperature.kelvin
    specs = _specs(parsed)
    names = {spec.name for spec, _, _ in specs}
    written = _written(parsed, specs, names, temperature, found)
    entries, plain = written.entries, written.plain
    untracked = remainders(parsed.reactions)
    for rest in untracked:
        entries[rest.name] = rest.entry()
    failed = check_references(entries, plain, species, parsed.failed_names, found)
    used = {ref.name for e in entries.values() for ref in names_in(e.expression)}
    values = {n: plain_value(plain[n], t) for n in used if n in plain}
    results = evaluate_entries(entries, values, failed, t, temperature.failed, found)
    check_parents(parsed.reactions, results.values, found)
    kept = [r for r in untracked if r.kept(results.values)]
    for rest in untracked:
        if rest not in kept:
            entries.pop(rest.name)
            results.constants.pop(rest.name, None)
    leaves = {n: d for n in used if n in plain and (d := plain_leaf(n, plain[n])) is not None}
    graph = graph_of(results, entries, leaves)
    constants, quantities = _by_kind(written.first, plain, results)
    for rest in kept:
        constants[rest.name] = results.constants[rest.name]
    _undefined(parsed, names, constants, found)
    return Resolved(constants, quantities, graph, kept, used)


@dataclass
class _Written:
    """The definitions as the file writes them, before any is evaluated.

    Attributes
    ----------
    entries : dict of str to Entry
        The definitions written as expressions (the first of each name).
    plain : dict of str to RateConstant or NamedQuantity
        The definitions written as plain values (the first of each name).
    first : dict of str to (str, int)
        Every name defined, in order: the text and line number of its first definition.
    """

    entries: dict[str, Entry] = field(default_factory=dict)
    plain: dict[str, RateConstant | NamedQuantity] = field(default_factory=dict)
    first: dict[str, tuple[str, int]] = field(default_factory=dict)


def _written(
    parsed: ParsedFile,
    specs: list[tuple[ConstantSpec, Line, ReactionStatement | None]],
    names: set[str],
    temperature: Temperature,
    found: Diagnostics,
) -> _Written:
    """Sort the definitions into expressions and plain values; report a name defined twice."""
    rate_names = {ref.name for r in parsed.reactions for ref in r.constants}
    written = _Written()
    first = written.first
    for spec, line, statement in specs:
        name = spec.name
        rate = statement is not None or name in rate_names
        if spec.value is not None and spec.value.unit in names:
            _unit_is_a_name(spec, line, found)
        elif spec.expression is not None:
            check = BranchCheck(statement) if statement and statement.decay else None
            if name not in first:
                written.entries[name] = Entry(spec, line, rate, check)
                first[name] = (spec.text, line.number)
            elif " ".join(spec.text.split()) != " ".join(first[name][0].split()):
                _twice(name, first[name], spec, line, name in rate_names, found)
        elif (value := _plain(spec, line, rate, temperature, found)) is None:
            continue
        elif name not in first:
            written.plain[name] = value
            first[name] = (value.text, line.number)
        elif name not in written.plain or not _same(written.plain[name], value):
            _twice(name, first[name], spec, line, isinstance(value, RateConstant), found)
    return written


def _by_kind(
    first: dict[str, tuple[str, int]],
    plain: dict[str, RateConstant | NamedQuantity],
    results: ExpressionResults,
) -> tuple[dict[str, RateConstant], dict[str, NamedQuantity]]:
    """The resolved definitions, in order of first definition: rate constants, then the rest."""
    constants: dict[str, RateConstant] = {}
    quantities: dict[str, NamedQuantity] = {}
    for name in first:
        c = results.constants.get(name) or plain.get(name) or results.quantities.get(name)
        if isinstance(c, RateConstant):
            constants[name] = c
        elif isinstance(c, NamedQuantity):
            quantities[name] = c
    return constants, quantities


def _specs(parsed: ParsedFile) -> list[tuple[ConstantSpec, Line, ReactionStatement | None]]:
    """Every definition with its line and, on a reaction line, its statement."""
    specs: list[tuple[ConstantSpec, Line, ReactionStatement | None]] = []
    for s in parsed.statements:
        if isinstance(s, ConstantStatement):
            specs.append((s.spec, s.line, None))
        elif isinstance(s, ReactionStatement):
            specs.extend((ref.spec, s.line, s) for ref in s.constants if ref.spec is not None)
    return specs


def _plain(
    spec: ConstantSpec, line: Line, rate: bool, temperature: Temperature, found: Diagnostics
) -> RateConstant | NamedQuantity | None:
    """A definition by a plain value: a rate constant or a named quantity.

    A rate constant keeps the old readers and messages; a named quantity of another
    dimension may only be defined on a line of its own.
    """
    constant = plain_constant(spec, line) if rate else None  # the common case, quickly
    if constant is not None:
        return constant
    v = spec.value
    if spec.is_arrhenius or v is None:
        return rate_constant(spec, line, temperature, found)
    what = f"rate constant {spec.name}" if rate else spec.name
    unit = unit_of(line, v, what, "1/s" if rate else "h")
    if not isinstance(unit, UnitSpec):
        found.add(unit)
        return None
    if rate or unit.rate_order is not None:
        if not v.unit:
            found.error(
                line,
                f"rate constant {spec.name} has no unit",
                v.column,
                v.number,
                f"write its unit after the number, e.g. {spec.name} = {v.number} 1/s",
            )
            return None
        if fraction(v.number) < 0:
            found.error(
                line,
                f"rate constant {spec.name} is negative ({v.number})",
                v.column,
                v.number,
                "this value cannot be negative; write e.g. 0.12 1/min",
            )
            return None
        return plain_constant(spec, line) or rate_constant(spec, line, temperature, found)
    if unit.offset:  # kept in kelvin
        kelvin = exact_kelvin(v.number, v.unit)
        return NamedQuantity(spec.name, spec.text, kelvin, "K", unit.dimensions, line.number)
    value = scaled(v.number, unit.factor)
    return NamedQuantity(spec.name, spec.text, value, v.unit, unit.dimensions, line.number)


def _unit_is_a_name(spec: ConstantSpec, line: Line, found: Diagnostics) -> None:
    """``k = 2 k1`` with ``k1`` defined: the unit reader would take k1 for a unit."""
    v = spec.value
    assert v is not None
    found.error(
        line,
        f"{v.unit} is read as a unit in {quoted(v.text)}, but it is also a named quantity "
        "of this file",
        v.column,
        v.text,
        f"write {v.number} * {v.unit} to multiply by it",
    )


def _twice(
    name: str,
    first: tuple[str, int],
    spec: ConstantSpec,
    line: Line,
    rate: bool,
    found: Diagnostics,
) -> None:
    what = f"rate constant {name}" if rate else name
    found.error(
        line,
        f"{what} is defined twice with different values "
        f"({first[0]} on line {first[1]}, {spec.text} here)",
        spec.column,
        name,
        f"give each constant one value, or refer to it by name alone: {name}",
    )


def _same(old: RateConstant | NamedQuantity, new: RateConstant | NamedQuantity) -> bool:
    """True when two definitions of one name give the same constant."""
    if isinstance(old, NamedQuantity) or isinstance(new, NamedQuantity):
        return old == new or (
            isinstance(old, NamedQuantity)
            and isinstance(new, NamedQuantity)
            and (old.value_si, old.dims) == (new.value_si, new.dims)
        )
    if (old.arrhenius is None) != (new.arrhenius is None) or old.value_si != new.value_si:
        return False
    if old.arrhenius is None or new.arrhenius is None:
        return True
    return (old.arrhenius.prefactor_si, old.arrhenius.activation_energy) == (
        new.arrhenius.prefactor_si,
        new.arrhenius.activation_energy,
    )


def _undefined(
    parsed: ParsedFile, defined: set[str], constants: dict[str, RateConstant], found: Diagnostics
) -> None:
    """Report the constants referred to by name that no line defines."""
    for r in parsed.reactions:
        for ref in r.constants:
            if ref.spec is not None or ref.name in constants:
                continue
            if ref.name in defined or ref.name in parsed.failed_names:
                continue  # its definition had an error, already reported
            hint = found.suggest(ref.name, constants) or (
                f"define it, e.g. {ref.name} = 0.1 1/s on a line of its own or on the reaction line"
            )
            found.error(
                r.line,
                f"rate constant {ref.name} is used but never defined",
                ref.column,
                ref.name,
                hint,
            )


def plain_constant(spec: ConstantSpec, line: Line) -> RateConstant | None:
    """A plain constant with a known rate unit and a value in range, else None.

    The same result as :func:`rate_constant` for such constants (which handles
    all others and words the errors), without its checks' overhead.

    Examples
    --------
    >>> from kinetics.language.quantities import Value
    >>> spec = ConstantSpec("k1", 1, Value("0.12", "1/min", 6, 11), text="0.12 1/min")
    >>> c = plain_constant(spec, Line("t", 1, "k1 = 0.12 1/min", "k1 = 0.12 1/min"))
    >>> c.value_si, c.order
    (Fraction(1, 500), 0)
    """
    v = spec.value
    if v is None:
        return None
    try:
        unit = parse_unit(v.unit)
    except ValueError:
        return None
    order = unit.rate_order
    if order is None:
        return None
    value_si = scaled(v.number, unit.factor)
    if not exact(value_si) and value_si:
        return None  # too large or too small for a double: rate_constant says so
    return RateConstant(spec.name, spec.text, value_si, v.unit, order, None, line.number)


def rate_constant(
    spec: ConstantSpec, line: Line, temperature: Temperature, found: Diagnostics
) -> RateConstant | None:
    """The constant of ``spec`` in SI units, or None with the reason in ``found``.

    Parameters
    ----------
    spec : ConstantSpec
        The definition as read.
    line : Line
        Its line.
    temperature : Temperature
        The file's temperature.
    found : Diagnostics
        Where errors go.

    Returns
    -------
    RateConstant or None

    Notes
    -----
    The unit fixes the order: :math:`k` in (concentration)^-n time^-1 multiplies
    ``n`` concentrations held in excess (a pseudo-first-order step).

    Examples
    --------
    >>> from kinetics.language.quantities import Value
    >>> code = "k1 = 2 mol/L"
    >>> spec = ConstantSpec("k1", 1, Value("2", "mol/L", 6, 8), text="2 mol/L")
    >>> found = Diagnostics("t")
    >>> rate_constant(spec, Line("t", 1, code, code), Temperature(None, False), found)
    >>> found.errors[0].problem
    'rate constant k1 = 2 mol/L is a concentration (amount/volume), not a rate constant'
    """
    if spec.is_arrhenius:
        return _arrhenius_constant(spec, line, temperature, found)
    v = spec.value
    assert v is not None  # a spec has a value or Arrhenius parameters
    unit = unit_of(line, v, f"rate constant {spec.name}", "1/s")
    if not isinstance(unit, UnitSpec):
        found.add(unit)
        return None
    order = unit.rate_order
    if order is None:
        found.error(
            line,
            f"rate constant {spec.name} = {v.text} is {describe_dimension(unit.dims)}, "
            "not a rate constant",
            v.unit_column,
            v.unit,
            "a first-order constant has the unit 1/time (e.g. 1/s, min-1); a "
            "pseudo-first-order one concentration^-1/time (e.g. M-1 s-1)",
        )
        return None
    value_si = scaled(v.number, unit.factor)
    if not exact(value_si) and value_si:
        size = "too large" if exact(value_si) is None else "too small (0 in SI units)"
        found.error(
            line,
            f"rate constant {spec.name} = {v.text} is {size}",
            v.column,
            v.text,
            "check the value and its unit",
        )
        return None
    return RateConstant(spec.name, spec.text, value_si, v.unit, order, None, line.number)


def _arrhenius_constant(
    spec: ConstantSpec, line: Line, temperature: Temperature, found: Diagnostics
) -> RateConstant | None:
    """K = A exp(-Ea / (R T)) (Arrhenius 1889): A and Ea checked and scaled to SI."""
    a, ea = spec.prefactor, spec.energy
    assert a is not None  # an Arrhenius spec has both
    assert ea is not None
    a_unit = unit_of(line, a, f"the pre-exponential factor of {spec.name}", "1/s")
    e_unit = unit_of(line, ea, f"the activation energy of {spec.name}", "kJ/mol")
    if not isinstance(a_unit, UnitSpec) or not isinstance(e_unit, UnitSpec):
        for u in (a_unit, e_unit):
            if not isinstance(u, UnitSpec):
                found.add(u)
        return None
    order = concentration_order(a_unit.dims)
    if order is None:
        found.error(
            line,
            f"the pre-exponential factor of {spec.name} is {a.text}, which is "
            f"{describe_dimension(a_unit.dims)}, not a rate constant",
            a.unit_column if a.unit else a.column,
            a.unit or a.number,
            "give A in the units of the rate constant, e.g. A = 1.0e13 1/s",
        )
        return None
    if e_unit.dims != _MOLAR_ENERGY:
        found.error(
            line,
            f"the activation energy of {spec.name} is {ea.text}, which is "
            f"{describe_dimension(e_unit.dims)}, not a molar energy",
            ea.unit_column if ea.unit else ea.column,
            ea.unit or ea.number,
            "write Ea in kJ/mol or J/mol, e.g. Ea = 95 kJ/mol",
        )
        return None
    if temperature.kelvin is None and not temperature.failed:
        found.error(
            line,
            f"{spec.name} follows the Arrhenius law but the file sets no temperature",
            spec.column,
            spec.name,
            "add a line such as temperature = 60 degC",
        )
    energy = exact(scaled(ea.number, e_unit.factor))
    prefactor = scaled(a.number, a_unit.factor)
    if energy is None or exact(prefactor) is None:
        bad = a if energy is not None else ea
        found.error(
            line,
            f"{bad.text} in the Arrhenius parameters of {spec.name} is too large",
            bad.column,
            bad.text,
            "check the value and its unit",
        )
        return None
    arrhenius = Arrhenius(prefactor, energy, a.text, ea.text)
    return RateConstant(spec.name, spec.text, None, a.unit, order, arrhenius, line.number)
