"""The dependency graph of a scheme's named quantities: which definition drives which.

A scheme that writes ``t_p = 50 h`` and ``lam = 0.88 * ln(2) / t_p`` keeps both
definitions here, in an order in which every name comes after the names it uses.  A
sweep or a fit that varies ``t_p`` evaluates the graph again with the new value
(:meth:`Dependencies.evaluate`), exactly, and every constant that follows from ``t_p``
follows (:meth:`kinetics.scheme.Scheme.with_values`,
:meth:`kinetics.scheme.Scheme.exact_constants`).  Definitions that depend on the
temperature through a temperature law are evaluated at the temperature asked for.

Constants written as plain values that no expression refers to are not part of the
graph (a large file of plain constants costs nothing here).
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass, replace
from fractions import Fraction
from functools import cached_property
from typing import TYPE_CHECKING

from .derivatives import Slope, slopes
from .errors import ExpressionError, TemperatureError
from .expressions import (
    Dims,
    ExactQuantity,
    Expr,
    LawCall,
    Number,
    evaluate,
    names_in,
    shown,
    uses_law,
)
from .units import describe_dimension

if TYPE_CHECKING:
    from .rate_constants import RateConstant

__all__ = [
    "Definition",
    "Dependencies",
    "NamedQuantity",
    "constant_slopes",
    "constant_values",
    "follow",
    "needs_temperature",
]


@dataclass(frozen=True, slots=True)
class NamedQuantity:
    """A named quantity of a scheme that is not a rate constant (``t_p = 50 h``).

    Attributes
    ----------
    name : str
    text : str
        The definition as written (right-hand side).
    value_si : Fraction or None
        Exact value in SI base units (kelvin for temperatures); None when it depends on
        the temperature (through a temperature law).
    unit : str
        The unit written after a single number (``h``), else the SI unit of its
        dimension (:func:`kinetics.units.si_unit`); ``""`` for a pure number.
    dims : Dims
        Its dimension.
    line : int
    """

    name: str
    text: str
    value_si: Fraction | None
    unit: str
    dims: Dims
    line: int = 0


@dataclass(frozen=True, slots=True)
class Definition:
    """One named quantity defined by an expression.

    Attributes
    ----------
    name : str
    expression : Expr
        The parsed right-hand side.
    text : str
        The right-hand side as written.
    line : int
        The line of the definition (0 for generated ones).
    dims : Dims
        The dimension of its value (fixed when the file is read).
    """

    name: str
    expression: Expr
    text: str
    line: int
    dims: Dims

    @property
    def uses(self) -> tuple[str, ...]:
        """The names the expression refers to, each once, left to right."""
        return tuple(dict.fromkeys(n.name for n in names_in(self.expression)))


@dataclass(frozen=True)
class Dependencies:
    """The definitions of a scheme, each after every definition it uses.

    Parameters
    ----------
    definitions : tuple of Definition
        In evaluation order; every name used must be defined earlier.

    Examples
    --------
    >>> from kinetics.expressions import Binary, Name
    >>> hours = (("[time]", Fraction(1)),)
    >>> t_p = Definition("t_p", Number(Fraction(180000), hours, "50 h", 7), "50 h", 1, hours)
    >>> rate = Binary("/", Number(Fraction(1), (), "1", 7), Name("t_p", "t_p", 11), "1 / t_p", 9)
    >>> graph = Dependencies((t_p, Definition("k", rate, "1 / t_p", 2, ((("[time]", -1),)))))
    >>> graph.driven_by("t_p")
    ('k',)
    >>> graph.evaluate(None, {"t_p": Fraction(3600)})["k"].value
    Fraction(1, 3600)
    """

    definitions: tuple[Definition, ...] = ()

    def __post_init__(self) -> None:
        seen: set[str] = set()
        for d in self.definitions:
            missing = [n for n in d.uses if n not in seen]
            if missing:
                raise ExpressionError(
                    f"{d.name} uses {missing[0]}, which is not defined before it",
                    "order the definitions so that every name comes after those it uses",
                )
            seen.add(d.name)

    def __bool__(self) -> bool:
        return bool(self.definitions)

    @cached_property
    def by_name(self) -> dict[str, Definition]:
        """Each definition by its name."""
        return {d.name: d for d in self.definitions}

    @cached_property
    def on_temperature(self) -> frozenset[str]:
        """The names whose value depends on the temperature (a law, directly or not)."""
        out: set[str] = set()
        for d in self.definitions:
            if uses_law(d.expression) or any(n in out for n in d.uses):
                out.add(d.name)
        return frozenset(out)

    def driven_by(self, name: str) -> tuple[str, ...]:
        """Every definition whose value follows from ``name``, in evaluation order.

        Parameters
        ----------
        name : str
            A named quantity or constant of the graph.

        Returns
        -------
        tuple of str
            Not including ``name`` itself; empty for a name nothing uses.
        """
        affected = {name}
        out = []
        for d in self.definitions:
            if d.name != name and any(n in affected for n in d.uses):
                affected.add(d.name)
                out.append(d.name)
        return tuple(out)

    def inputs_of(self, names: Iterable[str]) -> list[Definition]:
        """The definitions ``names`` need (themselves included), in evaluation order."""
        wanted = {n for n in names if n in self.by_name}
        for d in reversed(self.definitions):
            if d.name in wanted:
                wanted.update(d.uses)
        return [d for d in self.definitions if d.name in wanted]

    def evaluate(
        self,
        temperature: float | None,
        values: Mapping[str, Fraction] | None = None,
        names: Iterable[str] | None = None,
    ) -> dict[str, ExactQuantity]:
        """The exact value of every definition (or of ``names`` and what they need).

        Parameters
        ----------
        temperature : float or None
            [K] for the temperature laws; without it, the values that depend on the
            temperature are None.
        values : Mapping of str to Fraction, optional
            New values of some named quantities [SI base units; K for temperatures]:
            they replace the definitions of those names, and everything that follows
            from them follows.
        names : iterable of str, optional
            Evaluate only these (and what they need).

        Returns
        -------
        dict of str to ExactQuantity

        Raises
        ------
        ExpressionError
            When a definition cannot be evaluated with the new values (``ln`` of a
            negative number, a dimension that changes); the message names it.
        """
        values = values or {}
        chosen = self.definitions if names is None else self.inputs_of(names)
        out: dict[str, ExactQuantity] = {}
        for d in chosen:
            if d.name in values:
                out[d.name] = ExactQuantity(Fraction(values[d.name]), d.dims)
                continue
            try:
                result = evaluate(d.expression, out, temperature, d.name)
            except ExpressionError as exc:
                raise ExpressionError(
                    f"{d.name} = {d.text}: {exc.problem}", exc.hint, exc.column, exc.snippet
                ) from None
            if result.dims != d.dims:
                raise ExpressionError(
                    f"{d.name} = {d.text} is now {describe_dimension(dict(result.dims))}, "
                    f"not {describe_dimension(dict(d.dims))} as the file defines it",
                    "give values that keep the dimension of every definition",
                )
            out[d.name] = result
        return out

    def value(self, name: str, temperature: float | None) -> Fraction:
        r"""The exact value of one definition [SI base units].

        Raises
        ------
        ExpressionError
            When it depends on the temperature and none is given.

        Examples
        --------
        Closed form :math:`\lambda = \ln 2 / t_{1/2}` for a half-life of 50 h:

        >>> import math
        >>> from kinetics import parse
        >>> s = parse("t_p = 50 h\nP -> D  lam = ln(2) / t_p\nstart P = 1 mol")
        >>> math.isclose(s.dependencies.value("lam", None), math.log(2) / 180000, rel_tol=1e-15)
        True
        """
        cache = self._values
        key = (name, temperature)
        if key not in cache:
            result = self.evaluate(temperature, names=(name,))[name].value
            if result is None:
                raise ExpressionError(
                    f"{name} depends on the temperature (through a temperature law)",
                    "give the temperature in kelvin",
                )
            if len(cache) > 4096:
                cache.clear()
            cache[key] = result
        return cache[key]

    @cached_property
    def _values(self) -> dict[tuple[str, float | None], Fraction]:
        return {}

    def slopes(
        self,
        temperature: float | None,
        wrt: Iterable[str],
        values: Mapping[str, Fraction] | None = None,
    ) -> dict[str, Slope]:
        r"""The derivatives of every definition with respect to the names ``wrt``, exactly.

        A name of ``wrt`` is a parameter (its definition is set aside, as
        :meth:`evaluate` does with ``values``); everything that follows from it carries
        its total derivative, by the chain rule through the graph
        (:func:`kinetics.derivatives.slopes`, no finite differences).

        Parameters
        ----------
        temperature : float or None
            [K]; needed where a temperature law enters.
        wrt : iterable of str
            Names of the graph, and ``"temperature"`` for the temperature itself.
        values : Mapping of str to Fraction, optional
            New values of some names [SI base units], as for :meth:`evaluate`.

        Returns
        -------
        dict of str to Slope
            For every definition, :math:`\partial\,\mathrm{value}/\partial p` by
            parameter ``p`` [SI per SI unit of p]; an empty mapping for one that does not
            depend on any.

        Raises
        ------
        ExpressionError
            Where a definition cannot be evaluated or differentiated.
        """
        values = dict(values or {})
        wrt = set(wrt)
        env = self.evaluate(temperature, values)
        moving = {"temperature": Fraction(1)} if "temperature" in wrt else {}
        out: dict[str, Slope] = {}
        for d in self.definitions:
            if d.name in wrt:
                out[d.name] = {d.name: Fraction(1)}
            elif d.name in values or not (
                any(out.get(n) for n in d.uses) or (moving and d.name in self.on_temperature)
            ):
                out[d.name] = {}
            else:
                out[d.name] = slopes(d.expression, env, out, temperature, moving, d.name)[1]
        return out

    def fixed(self, values: Mapping[str, Fraction]) -> Dependencies:
        """A copy in which the definitions of ``values`` become those numbers [SI units].

        Names that are not in the graph are ignored.
        """
        out = []
        for d in self.definitions:
            if d.name in values:
                v = Fraction(values[d.name])
                number = Number(v, d.dims, f"{shown(v)} (SI)", 0)
                d = replace(d, expression=number, text=number.text, line=0)
            out.append(d)
        return Dependencies(tuple(out))

    @staticmethod
    def ordered(definitions: Iterable[Definition]) -> Dependencies:
        """The graph of ``definitions`` given in any order.

        Each is placed after the names it uses, otherwise in the order given.

        Raises
        ------
        ExpressionError
            When definitions refer to each other in a cycle.
        """
        given = {d.name: d for d in definitions}
        done: set[str] = set()
        out: list[Definition] = []
        for start in given:
            if start in done:
                continue
            stack = [(start, iter(given[start].uses))]
            on_path = {start}
            while stack:
                name, uses = stack[-1]
                step = next((n for n in uses if n in given and n not in done), None)
                if step is None:
                    stack.pop()
                    on_path.discard(name)
                    done.add(name)
                    out.append(given[name])
                elif step in on_path:
                    raise ExpressionError(
                        f"the definitions of {step} and {name} refer to each other in a cycle",
                        "define one of them by a value",
                    )
                else:
                    on_path.add(step)
                    stack.append((step, iter(given[step].uses)))
        return Dependencies(tuple(out))


def constant_values(
    constants: Mapping[str, RateConstant],
    graph: Dependencies,
    temperature: float | None,
    values: Mapping[str, Fraction] | None = None,
) -> dict[str, Fraction]:
    r"""The exact value of every rate constant [SI base units], following the graph.

    Parameters
    ----------
    constants : Mapping of str to RateConstant
        The scheme's constants.
    graph : Dependencies
        The scheme's definitions.
    temperature : float or None
        [K].
    values : Mapping of str to Fraction, optional
        New values of named quantities or constants [SI base units]; the constants that
        follow from them follow.

    Returns
    -------
    dict of str to Fraction

    Raises
    ------
    TemperatureError
        When a constant depends on the temperature and none is given.
    ExpressionError
        When a definition cannot be evaluated, or a constant becomes negative.

    Examples
    --------
    A branch of 88 % of a decay with a half-life of 50 h, closed form
    :math:`\lambda = 0.88 \ln 2 / t_{1/2}`, and with the half-life set to 10 h:

    >>> import math
    >>> from kinetics import parse
    >>> s = parse("t_p = 50 h\nP -> D  lam = 0.88 * ln(2) / t_p\nstart P = 1 mol")
    >>> lam = constant_values(s.constants, s.dependencies, None)["lam"]
    >>> math.isclose(lam, 0.88 * math.log(2) / 180000, rel_tol=1e-15)
    True
    >>> new = constant_values(s.constants, s.dependencies, None, {"t_p": Fraction(36000)})
    >>> math.isclose(new["lam"], 0.88 * math.log(2) / 36000, rel_tol=1e-15)
    True
    """
    values = values or {}
    derived = graph.evaluate(temperature, values) if graph else {}
    out: dict[str, Fraction] = {}
    for name, c in constants.items():
        value = c.value_si  # the common case: a plain value as written (never negative)
        if name in values:
            value = Fraction(values[name])
        elif name in derived:
            value = derived[name].value
            if value is not None and value < 0:
                raise ExpressionError(
                    f"rate constant {name} = {c.text} becomes negative ({shown(value)})",
                    "give values that keep every rate constant at or above 0",
                )
        elif c.arrhenius is not None and temperature is not None:
            value = c.arrhenius.exact(temperature)
        if value is None:
            raise needs_temperature(name, c.arrhenius is not None)
        out[name] = value
    return out


def constant_slopes(
    constants: Mapping[str, RateConstant],
    graph: Dependencies,
    temperature: float | None,
    wrt: Iterable[str],
    values: Mapping[str, Fraction] | None = None,
) -> dict[str, Slope]:
    r"""The derivatives of every rate constant with respect to the names ``wrt``, exactly.

    Parameters
    ----------
    constants : Mapping of str to RateConstant
        The scheme's constants.
    graph : Dependencies
        The scheme's definitions.
    temperature : float or None
        [K].
    wrt : iterable of str
        Named quantities, constants and ``"temperature"``.
    values : Mapping of str to Fraction, optional
        New values of named quantities or constants [SI base units].

    Returns
    -------
    dict of str to Slope
        Per constant, :math:`\partial k/\partial p` [SI per SI unit of p]: 1 for a
        constant with respect to itself, through the graph for derived ones
        (:meth:`Dependencies.slopes`), through the Arrhenius law for the temperature
        (:meth:`kinetics.scheme.Arrhenius.slopes`).
    """
    wrt = set(wrt)
    values = values or {}
    derived = graph.slopes(temperature, wrt, values) if graph else {}
    out: dict[str, Slope] = {}
    for name, c in constants.items():
        if name in wrt:
            out[name] = {name: Fraction(1)}
        elif name in derived:
            out[name] = derived[name]
        elif c.arrhenius is not None and "temperature" in wrt and name not in values:
            if temperature is None:
                raise needs_temperature(name, True)
            out[name] = {"temperature": c.arrhenius.slopes(temperature)["temperature"]}
        else:
            out[name] = {}
    return out


def needs_temperature(name: str, arrhenius: bool) -> TemperatureError:
    """The one error of a constant that depends on a temperature when none is given.

    Examples
    --------
    >>> str(needs_temperature("k2", False))
    'rate constant k2 depends on the temperature (through a temperature law) and none is \
given; give the temperature in kelvin'
    """
    if arrhenius:
        problem = f"rate constant {name} follows the Arrhenius law and needs a temperature"
    else:
        problem = (
            f"rate constant {name} depends on the temperature (through a temperature law) "
            "and none is given"
        )
    return TemperatureError(problem, "give the temperature in kelvin")


def follow(
    constants: Mapping[str, RateConstant],
    quantities: Mapping[str, NamedQuantity],
    graph: Dependencies,
    values: Mapping[str, Fraction],
    texts: Mapping[str, str],
) -> tuple[dict[str, RateConstant], dict[str, NamedQuantity], Dependencies]:
    """Constants, quantities and graph with new ``values`` [SI base units].

    Every definition that follows from them is evaluated again (exactly).

    A name given a value becomes that number (a constant becomes a plain one, without
    its Arrhenius law or expression); the definitions that use it follow.

    Parameters
    ----------
    constants, quantities : Mapping
        The scheme's rate constants and named quantities.
    graph : Dependencies
        The scheme's definitions.
    values : Mapping of str to Fraction
        The new values.
    texts : Mapping of str to str
        How each new value is shown (the ``text`` of its constant or quantity).

    Returns
    -------
    (dict, dict, Dependencies)

    Raises
    ------
    ExpressionError
        When a definition cannot be evaluated with the new values, or a constant becomes
        negative.
    """
    new_graph = graph.fixed(values) if any(n in graph.by_name for n in values) else graph
    evaluated = new_graph.evaluate(None) if new_graph else {}
    new_constants = dict(constants)
    for name, c in constants.items():
        if name in values:
            new_constants[name] = replace(
                c, value_si=Fraction(values[name]), arrhenius=None, derived=None, text=texts[name]
            )
        elif c.derived is not None:
            value = evaluated[name].value
            if value is not None and value < 0:
                raise ExpressionError(
                    f"rate constant {name} = {c.text} becomes negative ({shown(value)})",
                    "give values that keep every rate constant at or above 0",
                )
            arrhenius = _arrhenius_record(c, new_graph.by_name[name].expression, evaluated)
            new_constants[name] = replace(c, value_si=value, derived=new_graph, arrhenius=arrhenius)
    new_quantities = dict(quantities)
    for name, q in quantities.items():
        if name in values:
            new_quantities[name] = replace(q, value_si=Fraction(values[name]), text=texts[name])
        elif name in evaluated:
            new_quantities[name] = replace(q, value_si=evaluated[name].value)
    return new_constants, new_quantities, new_graph


def _arrhenius_record(c: RateConstant, expr: Expr, env: Mapping[str, ExactQuantity]):
    """The Arrhenius record of ``c`` with A and Ea evaluated again.

    A constant written as ``arrhenius(A = ..., Ea = Ea_f)`` keeps A and Ea for the code that
    reads them.
    """
    if c.arrhenius is None or not isinstance(expr, LawCall) or expr.law.name != "arrhenius":
        return c.arrhenius
    args = {key: evaluate(e, env, None, c.name).value for key, e in expr.arguments}
    if args["A"] is None or args["Ea"] is None:
        return c.arrhenius
    return replace(c.arrhenius, prefactor_si=args["A"], activation_energy=float(args["Ea"]))
