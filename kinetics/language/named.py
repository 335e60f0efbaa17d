"""Named quantities written as expressions: references, cycles, evaluation and the graph.

The second pass gives every definition written as an expression (``lam = 0.88 * ln(2) /
t_p``, ``k2 = k1 / 3``, a decay step's ``half_life = ...``) its value and dimension:

1. every name an expression refers to must be defined (by a value or an expression);
2. definitions must not refer to each other in a cycle (``a = b``, ``b = a``);
3. each is evaluated exactly (:func:`kinetics.expressions.evaluate`) once the names it
   uses are known, and its dimension is checked where it is used as a rate constant;
4. the definitions and the plain values they use become the scheme's graph
   (:class:`kinetics.definitions.Dependencies`).

Errors carry the line and column of the offending part; a definition whose inputs failed
is not reported again.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field
from fractions import Fraction

from ..definitions import Definition, Dependencies, NamedQuantity
from ..errors import ExpressionError
from ..expressions import (
    Dims,
    ExactQuantity,
    Expr,
    LawCall,
    Name,
    Number,
    dims_of,
    evaluate,
    names_in,
    nodes,
    shown,
)
from ..laws import LAWS
from ..rate_constants import Arrhenius, RateConstant
from ..units import concentration_order, describe_dimension, parse_unit, si_unit
from .messages import Diagnostics, quoted
from .quantities import exact
from .source import Line
from .statements import ConstantSpec

__all__ = [
    "Entry",
    "ExpressionResults",
    "check_references",
    "evaluate_entries",
    "graph_of",
    "plain_leaf",
    "plain_value",
]

_RATE_HINT = (
    "a first-order constant has the unit 1/time (e.g. 1/s, min-1); a "
    "pseudo-first-order one concentration^-1/time (e.g. M-1 s-1)"
)


@dataclass(frozen=True, slots=True)
class Entry:
    """One definition written as an expression.

    Attributes
    ----------
    spec : ConstantSpec
        The definition as read (``spec.expression`` is set).
    line : Line
    rate : bool
        True when it must be a rate constant (used by a reaction or generated for one).
    check : callable or None
        Extra checks before it is evaluated (a decay step's half-life and fraction):
        ``check(values, found) -> bool``, False when it reported an error.
    """

    spec: ConstantSpec
    line: Line
    rate: bool
    check: Callable[[Mapping[str, ExactQuantity], Diagnostics], bool] | None = None

    @property
    def name(self) -> str:
        """The name the expression defines."""
        return self.spec.name

    @property
    def expression(self) -> Expr:
        """The expression as written, parsed."""
        assert self.spec.expression is not None  # an entry is an expression
        return self.spec.expression


@dataclass
class ExpressionResults:
    """The evaluated expressions of a file.

    Attributes
    ----------
    values : dict of str to ExactQuantity
        Every name known: plain values and evaluated expressions.
    constants : dict of str to RateConstant
        The expressions that are rate constants (``derived`` set by :func:`graph_of`).
    quantities : dict of str to NamedQuantity
        The other expressions.
    failed : set of str
        Names whose definition (or an input of it) had an error.
    """

    values: dict[str, ExactQuantity] = field(default_factory=dict)
    constants: dict[str, RateConstant] = field(default_factory=dict)
    quantities: dict[str, NamedQuantity] = field(default_factory=dict)
    failed: set[str] = field(default_factory=set)


def check_references(
    entries: Mapping[str, Entry],
    known: Iterable[str],
    species: Iterable[str],
    skip: Iterable[str],
    found: Diagnostics,
) -> set[str]:
    r"""Report names that no line defines, numbers whose unit is a defined name, and cycles.

    Parameters
    ----------
    entries : Mapping of str to Entry
        The expression definitions, by name (file order).
    known : iterable of str
        Names defined by plain values.
    species : iterable of str
        The species of the file (a species is no named quantity).
    skip : iterable of str
        Names on lines that failed to read (no follow-on errors).
    found : Diagnostics
        Where errors go.

    Returns
    -------
    set of str
        The entries that cannot be evaluated (an error in them or in what they use).

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> parsed = read_statements("a = 2 * b\nb = a / 2\nc = 3 * d", "t")
    >>> entries = {s.spec.name: Entry(s.spec, s.line, False) for s in parsed.statements}
    >>> found = Diagnostics("t")
    >>> sorted(check_references(entries, (), (), (), found))
    ['a', 'b', 'c']
    >>> [e.headline() for e in found.errors]  # doctest: +NORMALIZE_WHITESPACE
    ['t:3:9: d is used in the definition of c but is never defined; define it on a line
    of its own, e.g. d = 50 h', 't:2:5: a depends on itself: a -> b -> a; define one of
    them by a value']
    """
    defined = set(known) | set(entries)
    species, skip = set(species), set(skip)
    bad: set[str] = set()
    for name, entry in entries.items():
        for ref in names_in(entry.expression):
            if ref.name in defined:
                continue
            bad.add(name)
            if ref.name not in skip:
                _undefined(entry, ref, defined, species, found)
        for number in _numbers(entry.expression):
            if number.unit in defined:
                bad.add(name)
                value = number.text[: len(number.text) - len(number.unit)].strip()
                found.error(
                    entry.line,
                    f"{number.unit} is read as a unit in {quoted(number.text)}, but it is "
                    "also a named quantity of this file",
                    number.column,
                    number.text,
                    f"write {value} * {number.unit} to multiply by it",
                )
    bad |= _cycles(entries, found)
    return _followers(entries, bad)


def _numbers(expr: Expr) -> list[Number]:
    return [n for n in nodes(expr) if isinstance(n, Number)]


def _undefined(
    entry: Entry, ref: Name, defined: set[str], species: set[str], found: Diagnostics
) -> None:
    if ref.name == "temperature":
        hint = "the temperature enters an expression through arrhenius(), eyring() or q10()"
    elif ref.name in species:
        hint = "expressions use named quantities; a species enters through its start value"
    else:
        hint = found.suggest(ref.name, defined) or (
            f"define it on a line of its own, e.g. {ref.name} = 50 h"
        )
    what = "a species, not a named quantity" if ref.name in species else "never defined"
    found.error(
        entry.line,
        f"{ref.name} is used in the definition of {entry.name} but is {what}",
        ref.column,
        ref.name,
        hint,
    )


def _cycles(entries: Mapping[str, Entry], found: Diagnostics) -> set[str]:
    """Report each cycle of definitions once, at the reference that closes it."""
    uses = {
        name: [r for r in names_in(e.expression) if r.name in entries]
        for name, e in entries.items()
    }
    state: dict[str, int] = {}  # 1 on the path, 2 done
    in_cycle: set[str] = set()
    for start in entries:
        if start in state:
            continue
        path = [start]
        refs = [iter(uses[start])]
        state[start] = 1
        while path:
            ref = next(refs[-1], None)
            if ref is None:
                state[path.pop()] = 2
                refs.pop()
                continue
            if state.get(ref.name) == 1:
                loop = path[path.index(ref.name) :]
                in_cycle.update(loop)
                owner = entries[path[-1]]
                chain = " -> ".join([*loop, ref.name])
                found.error(
                    owner.line,
                    f"{loop[0]} depends on itself: {chain}",
                    ref.column,
                    ref.name,
                    "define one of them by a value",
                )
            elif ref.name not in state:
                state[ref.name] = 1
                path.append(ref.name)
                refs.append(iter(uses[ref.name]))
    return in_cycle


def _followers(entries: Mapping[str, Entry], bad: set[str]) -> set[str]:
    """``bad`` and every entry that uses one of them, directly or not."""
    out = set(bad)
    changed = True
    while changed:
        changed = False
        for name, e in entries.items():
            if name not in out and any(r.name in out for r in names_in(e.expression)):
                out.add(name)
                changed = True
    return out


def evaluate_entries(
    entries: Mapping[str, Entry],
    plain: Mapping[str, ExactQuantity],
    failed: set[str],
    temperature: float | None,
    temperature_failed: bool,
    found: Diagnostics,
) -> ExpressionResults:
    """Evaluate every entry once the names it uses are known, and check what it must be.

    Parameters
    ----------
    entries : Mapping of str to Entry
        The expression definitions.
    plain : Mapping of str to ExactQuantity
        The values of the names defined by plain values (None while a temperature law
        lacks its temperature).
    failed : set of str
        Entries not to evaluate (:func:`check_references`).
    temperature : float or None
        [K].
    temperature_failed : bool
        True when the file's temperature had an error (no "sets no temperature").
    found : Diagnostics
        Where errors go.

    Returns
    -------
    ExpressionResults

    Examples
    --------
    >>> from kinetics.language.reader import read_statements
    >>> parsed = read_statements("k2 = k1 / 3", "t")
    >>> entries = {"k2": Entry(parsed.statements[0].spec, parsed.statements[0].line, True)}
    >>> k1 = ExactQuantity(Fraction(1, 10), (("[time]", Fraction(-1)),))
    >>> results = evaluate_entries(entries, {"k1": k1}, set(), None, False, Diagnostics("t"))
    >>> results.constants["k2"].value_si
    Fraction(1, 30)
    """
    out = ExpressionResults(values=dict(plain), failed=set(failed))
    for name in _order(entries, failed):
        entry = entries[name]
        if any(r.name in out.failed for r in names_in(entry.expression)):
            out.failed.add(name)  # an input failed, and said so
            continue
        if entry.check is not None and not entry.check(out.values, found):
            out.failed.add(name)
            continue
        try:
            result = evaluate(entry.expression, out.values, temperature, name)
        except ExpressionError as exc:
            found.error(entry.line, exc.problem, exc.column, exc.snippet, exc.hint)
            out.failed.add(name)
            continue
        _needs_temperature(entry, temperature, temperature_failed, found)
        if entry.rate or concentration_order(dict(result.dims)) is not None:
            if not _rate_checks(entry, result, found):
                out.failed.add(name)
                continue
        out.values[name] = result
    for name in [n for n in entries if n in out.values]:
        entry = entries[name]
        result = out.values[name]
        if entry.rate or concentration_order(dict(result.dims)) is not None:
            out.constants[name] = _constant(entry, result, out.values)
        else:
            unit = si_unit(dict(result.dims)) if result.dims else ""
            value = None if _on_temperature(entry, out.values, entries) else result.value
            out.quantities[name] = NamedQuantity(
                name, entry.spec.text, value, unit, result.dims, entry.line.number
            )
    return out


def _order(entries: Mapping[str, Entry], failed: set[str]) -> list[str]:
    """The entries not failed, each after the entries it uses (no cycles remain)."""
    order: list[str] = []
    placed: set[str] = set()
    for start in entries:
        stack = [start]
        while stack:
            name = stack[-1]
            if name in placed or name in failed:
                stack.pop()
                continue
            waiting = [
                r.name
                for r in names_in(entries[name].expression)
                if r.name in entries and r.name not in placed and r.name not in failed
            ]
            if waiting:
                stack.append(waiting[0])
                continue
            stack.pop()
            placed.add(name)
            order.append(name)
    return order


def _needs_temperature(
    entry: Entry, temperature: float | None, temperature_failed: bool, found: Diagnostics
) -> None:
    if temperature is not None or temperature_failed:
        return
    calls = _calls(entry.expression)
    if calls:
        found.error(
            entry.line,
            f"{entry.name} follows {calls[0].law.title} but the file sets no temperature",
            entry.spec.column,
            entry.name,
            "add a line such as temperature = 60 degC",
        )


def _calls(expr: Expr) -> list[LawCall]:
    return [n for n in nodes(expr) if isinstance(n, LawCall)]


def _rate_checks(entry: Entry, result: ExactQuantity, found: Diagnostics) -> bool:
    """A rate constant: a rate dimension, not negative, within the range of a double."""
    expr = entry.expression
    text = entry.spec.text
    name = entry.name
    if concentration_order(dict(result.dims)) is None:
        found.error(
            entry.line,
            f"rate constant {name} = {text} is {describe_dimension(dict(result.dims))}, "
            "not a rate constant",
            expr.column,
            text,
            _RATE_HINT,
        )
        return False
    value = result.value
    if value is None:
        return True
    if value < 0:
        found.error(
            entry.line,
            f"rate constant {name} = {text} is negative ({shown(value)} in SI units)",
            expr.column,
            text,
            "a rate constant cannot be negative; check the signs in the expression",
        )
        return False
    if value and not exact(value):
        size = "too large" if exact(value) is None else "too small (0 in SI units)"
        found.error(
            entry.line,
            f"rate constant {name} = {text} is {size}",
            expr.column,
            text,
            "check the values and their units",
        )
        return False
    return True


def _on_temperature(
    entry: Entry, values: Mapping[str, ExactQuantity], entries: Mapping[str, Entry]
) -> bool:
    """True when the entry's value depends on the temperature (a law, directly or not)."""
    seen: set[str] = set()
    stack = [entry]
    while stack:
        e = stack.pop()
        if _calls(e.expression):
            return True
        for ref in names_in(e.expression):
            if ref.name in seen:
                continue
            seen.add(ref.name)
            if ref.name in entries:
                stack.append(entries[ref.name])
            elif values.get(ref.name, ExactQuantity(Fraction(0), ())).value is None:
                return True  # an Arrhenius constant of plain values
    return False


def _constant(
    entry: Entry, result: ExactQuantity, values: Mapping[str, ExactQuantity]
) -> RateConstant:
    """The rate constant of an evaluated entry (``derived`` is set by :func:`graph_of`)."""
    order = concentration_order(dict(result.dims))
    assert order is not None  # checked by _rate_checks
    expr = entry.expression
    arrhenius = None
    if isinstance(expr, LawCall) and expr.law is LAWS["arrhenius"]:
        args = {k: evaluate(e, values, None, entry.name).value for k, e in expr.arguments}
        if args["A"] is not None and args["Ea"] is not None:
            texts = {k: e.text for k, e in expr.arguments}
            arrhenius = Arrhenius(args["A"], float(args["Ea"]), texts["A"], texts["Ea"])
    return RateConstant(
        entry.name,
        entry.spec.text,
        result.value,
        si_unit(dict(result.dims)),
        order,
        arrhenius,
        entry.line.number,
    )


def graph_of(
    results: ExpressionResults,
    entries: Mapping[str, Entry],
    leaves: Mapping[str, Definition],
) -> Dependencies:
    r"""The scheme's graph: the evaluated entries and the plain definitions they use.

    ``results.constants`` get the graph as their ``derived`` field (and lose the value
    when it depends on the temperature).

    Examples
    --------
    >>> from kinetics import parse
    >>> graph = parse("t_p = 50 h\nA -> B  k = ln(2) / t_p\nstart A = 1 M").dependencies
    >>> [d.name for d in graph.definitions]
    ['t_p', 'k']
    """
    definitions: dict[str, Definition] = {}
    for name, entry in entries.items():
        if name not in results.values or name in results.failed:
            continue
        definitions[name] = Definition(
            name, entry.expression, entry.spec.text, entry.line.number, results.values[name].dims
        )
        for ref in names_in(entry.expression):
            if ref.name not in entries and ref.name in leaves:
                definitions.setdefault(ref.name, leaves[ref.name])
    if not definitions:
        return Dependencies()
    graph = Dependencies.ordered(sorted(definitions.values(), key=lambda d: d.line))
    for name, c in list(results.constants.items()):
        value = None if name in graph.on_temperature else c.value_si
        results.constants[name] = RateConstant(
            c.name, c.text, value, c.unit, c.order, c.arrhenius, c.line, graph
        )
    return graph


def plain_leaf(name: str, c: RateConstant | NamedQuantity) -> Definition | None:
    """A plain constant or quantity as a definition of the graph (None when unusable).

    Examples
    --------
    >>> c = RateConstant("k1", "0.12 1/min", Fraction(1, 500), "1/min", 0)
    >>> plain_leaf("k1", c).expression.value
    Fraction(1, 500)
    """
    if isinstance(c, NamedQuantity):
        if c.value_si is None:
            return None
        number = Number(c.value_si, c.dims, c.text, 0, unit=c.unit)
        return Definition(name, number, c.text, c.line, c.dims)
    dims: Dims = parse_unit(c.unit).dimensions if c.unit else ()
    if c.arrhenius is not None:
        a = Number(c.arrhenius.prefactor_si, dims, c.arrhenius.prefactor_text, 0)
        energy_dims = dims_of({"[mass]": 1, "[length]": 2, "[time]": -2, "[substance]": -1})
        ea = Number(
            Fraction(c.arrhenius.activation_energy), energy_dims, c.arrhenius.energy_text, 0
        )
        node: Expr = LawCall(LAWS["arrhenius"], (("A", a), ("Ea", ea)), c.text, 0)
        return Definition(name, node, c.text, c.line, dims)
    if c.value_si is None:
        return None
    return Definition(name, Number(c.value_si, dims, c.text, 0, unit=c.unit), c.text, c.line, dims)


def plain_value(c: RateConstant | NamedQuantity, temperature: float | None) -> ExactQuantity:
    """The exact value of a plain constant or quantity for expressions that use it.

    Examples
    --------
    >>> c = RateConstant("k1", "0.12 1/min", Fraction(1, 500), "1/min", 0)
    >>> plain_value(c, None)
    ExactQuantity(value=Fraction(1, 500), dims=(('[time]', Fraction(-1, 1)),))
    """
    if isinstance(c, NamedQuantity):
        return ExactQuantity(c.value_si, c.dims)
    dims: Dims = parse_unit(c.unit).dimensions if c.unit else ()
    if c.arrhenius is not None:
        value = None if temperature is None else c.arrhenius.exact(temperature)
        return ExactQuantity(value, dims)
    return ExactQuantity(c.value_si, dims)
