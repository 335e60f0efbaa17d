r"""Expressions of named quantities: the parsed tree and its exact evaluation with dimensions.

A scheme may define named quantities of any dimension and derive rate constants from
them (``t_p = 50 h``, ``lam = 0.88 * ln(2) / t_p``).  The scheme reader
(:mod:`kinetics.language`) parses such a definition into a small immutable tree of the
node classes below; this module evaluates a tree, nothing else (no Python ``eval``).

Evaluation is exact where it can be: numbers are the exact rationals the file wrote
(their units already scaled to SI base units), ``+ - * /`` and integer powers are
rational arithmetic, and ``ln``, ``exp``, ``log10``, ``sqrt``, non-integer powers and the
temperature laws (:mod:`kinetics.laws`) are evaluated to 40 significant digits
(:mod:`kinetics._doubledouble`), far below the :math:`2^{-106}` of the engine's
double-double rate matrix.  A number that would need more than :data:`MAX_EXACT_BITS`
bits is rounded to 60 significant digits; magnitudes beyond :math:`10^{\pm 4000}` are an
error.  Dimensions are carried along as exponents of pint's base dimensions and checked
at every operation.

The dependency graph of a scheme's definitions lives in :mod:`kinetics.definitions`.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from decimal import Context, Decimal
from fractions import Fraction
from math import isqrt
from typing import NamedTuple, Union

from . import _doubledouble as dd
from .errors import ExpressionError
from .units import concentration_order, describe_dimension

__all__ = [
    "FUNCTIONS",
    "MAX_EXACT_BITS",
    "Binary",
    "Dims",
    "ExactQuantity",
    "Expr",
    "Function",
    "LawCall",
    "LawSpec",
    "Name",
    "Number",
    "Parameter",
    "Unary",
    "dims_of",
    "evaluate",
    "names_in",
    "nodes",
    "shown",
    "uses_law",
]

#: Dimension exponents, sorted by name (as :attr:`kinetics.units.UnitSpec.dimensions`).
Dims = tuple[tuple[str, Fraction], ...]
#: The functions of one argument an expression may call.
FUNCTIONS = ("ln", "exp", "log10", "sqrt")
#: Numbers with more bits (numerator and denominator together) are rounded to 60 digits.
MAX_EXACT_BITS = 8192
#: Largest binary exponent of an intermediate value (about 10**4000).
_MAX_BINARY_EXPONENT = 13_300
_ROUNDING = Context(prec=60, Emax=10**9, Emin=-(10**9))


def dims_of(mapping: Mapping[str, int | Fraction]) -> Dims:
    """Dimension exponents as the sorted tuple every node and quantity carries.

    Examples
    --------
    >>> dims_of({"[time]": -1, "[length]": 0})
    (('[time]', Fraction(-1, 1)),)
    """
    return tuple(sorted((k, Fraction(v)) for k, v in mapping.items() if v))


def _product(a: Dims, b: Dims, sign: int) -> Dims:
    total = dict(a)
    for k, v in b:
        total[k] = total.get(k, Fraction(0)) + sign * v
    return dims_of(total)


def _describe(dims: Dims) -> str:
    return describe_dimension(dict(dims))


def shown(value: Fraction | None) -> str:
    """An exact value as a message shows it (six significant digits).

    Examples
    --------
    >>> shown(Fraction(1, 3)), shown(Fraction(-2))
    ('0.333333', '-2')
    """
    if value is None:
        return "unknown"
    try:
        return f"{float(value):.6g}"
    except OverflowError:
        return "beyond 1e308" if value > 0 else "below -1e308"


class ExactQuantity(NamedTuple):
    """An exact value in SI base units with its dimension.

    Attributes
    ----------
    value : Fraction or None
        [SI base units]; None while it depends on a temperature not yet known.
    dims : Dims
        Dimension exponents.
    """

    value: Fraction | None
    dims: Dims


# -- the tree ----------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class Number:
    """A number with its unit as written, scaled exactly to SI base units.

    ``offset`` marks a temperature on a scale with an offset (``25 degC``, already in
    kelvin): it may only stand alone or as the whole argument of a law.  ``unit`` is the
    unit as written (``""`` for a pure number).
    """

    value: Fraction
    dims: Dims
    text: str
    column: int
    offset: bool = False
    unit: str = ""


@dataclass(frozen=True, slots=True)
class Name:
    """A reference to another named quantity."""

    name: str
    text: str
    column: int


@dataclass(frozen=True, slots=True)
class Unary:
    """``-x`` or ``+x``."""

    op: str
    operand: Expr
    text: str
    column: int


@dataclass(frozen=True, slots=True)
class Binary:
    """``x + y``, ``x - y``, ``x * y``, ``x / y`` or ``x ** y`` (``op`` one of ``+-*/`` or
    ``**``; ``column`` is the operator's)."""

    op: str
    left: Expr
    right: Expr
    text: str
    column: int


@dataclass(frozen=True, slots=True)
class Function:
    """``ln(x)``, ``exp(x)``, ``log10(x)`` or ``sqrt(x)``."""

    name: str
    argument: Expr
    text: str
    column: int


@dataclass(frozen=True)
class Parameter:
    """One parameter of a temperature law.

    Attributes
    ----------
    key : str
        As written in a call (``Ea``).
    what : str
        As a message names it (``"the activation energy"``).
    example : str
        A value for hints (``"95 kJ/mol"``).
    dims : Dims or None
        The dimension it must have; None for a rate constant of any order.
    kind : str
        What that dimension is called (``"a molar energy"``).
    hint : str
        What to write instead of a value of another dimension.
    """

    key: str
    what: str
    example: str
    dims: Dims | None
    kind: str
    hint: str


@dataclass(frozen=True)
class LawSpec:
    """A temperature law an expression may call (``arrhenius``, ``eyring``, ``q10``).

    Attributes
    ----------
    name : str
        As written in a call.
    title : str
        As a message names it (``"the Arrhenius law"``).
    label : str
        As a message names its parameters (``"Arrhenius"``: "the Arrhenius parameters").
    parameters : tuple of Parameter
    example : str
        A whole call for hints.
    positional : bool
        True when arguments may be given without keys, in the order of ``parameters``.
    result_of : str or None
        The parameter whose dimension the result has; None for 1/time.
    exact : callable
        ``exact(values, temperature)``: the law at ``temperature`` [K] from the SI
        values of the parameters (a mapping key -> Fraction), to 40 digits.
    slopes : callable or None
        ``slopes(values, temperature, k)``: the partial derivatives
        :math:`\\partial k / \\partial x` of the law (whose value is ``k``) with respect
        to each parameter (by key) and to the temperature (key ``"temperature"``) [SI],
        to 40 digits (:mod:`kinetics.derivatives` differentiates expressions with them).
    """

    name: str
    title: str
    label: str
    parameters: tuple[Parameter, ...]
    example: str
    positional: bool
    result_of: str | None
    exact: Callable[[Mapping[str, Fraction], float], Fraction]
    slopes: Callable[[Mapping[str, Fraction], float, Fraction], Mapping[str, Fraction]] | None = (
        None
    )

    @property
    def keys(self) -> tuple[str, ...]:
        """The parameter keys in order."""
        return tuple(p.key for p in self.parameters)


@dataclass(frozen=True, slots=True)
class LawCall:
    """A call of a temperature law, its arguments by key (in the law's order)."""

    law: LawSpec
    arguments: tuple[tuple[str, Expr], ...]
    text: str
    column: int


Expr = Union[Number, Name, Unary, Binary, Function, LawCall]  # noqa: UP007 - a runtime alias


def _children(node: Expr) -> tuple[Expr, ...]:
    if isinstance(node, Unary):
        return (node.operand,)
    if isinstance(node, Binary):
        return (node.left, node.right)
    if isinstance(node, Function):
        return (node.argument,)
    if isinstance(node, LawCall):
        return tuple(e for _, e in node.arguments)
    return ()


def nodes(node: Expr) -> list[Expr]:
    """Every node of a tree, parents before children, left to right (without recursion).

    Examples
    --------
    >>> tree = Unary("-", Name("x", "x", 2), "-x", 1)
    >>> [type(n).__name__ for n in nodes(tree)]
    ['Unary', 'Name']
    """
    out: list[Expr] = []
    stack = [node]
    while stack:
        current = stack.pop()
        out.append(current)
        stack.extend(reversed(_children(current)))
    return out


def names_in(expr: Expr) -> list[Name]:
    """The references to named quantities in ``expr``, left to right.

    Examples
    --------
    >>> tree = Binary("/", Name("k1", "k1", 1), Number(Fraction(3), (), "3", 6), "k1 / 3", 4)
    >>> [n.name for n in names_in(tree)]
    ['k1']
    """
    return [n for n in nodes(expr) if isinstance(n, Name)]


def uses_law(expr: Expr) -> bool:
    """True when ``expr`` calls a temperature law (its value depends on the temperature)."""
    return any(isinstance(n, LawCall) for n in nodes(expr))


# -- evaluation ----------------------------------------------------------------------------


def evaluate(
    expr: Expr,
    values: Mapping[str, ExactQuantity],
    temperature: float | None,
    owner: str = "",
) -> ExactQuantity:
    r"""The exact value and dimension of ``expr``.

    Parameters
    ----------
    expr : Expr
        The tree.
    values : Mapping of str to ExactQuantity
        The named quantities it refers to.
    temperature : float or None
        [K] for the temperature laws; None gives a value of None wherever a law enters.
    owner : str, optional
        The name being defined (messages about law parameters name it).

    Returns
    -------
    ExactQuantity

    Raises
    ------
    ExpressionError
        For dimensions that do not fit, functions outside their domain, division by
        zero, values beyond :math:`10^{\pm 4000}` and names without a value; the error
        carries the column and text of the offending part.

    Examples
    --------
    :math:`0.88 \ln 2 / 50\,\mathrm{h}` (a branch of a 50 h half-life), hand value
    :math:`3.3887 \times 10^{-6}` 1/s:

    >>> hours = (("[time]", Fraction(1)),)
    >>> ln2 = Function("ln", Number(Fraction(2), (), "2", 11), "ln(2)", 8)
    >>> top = Binary("*", Number(Fraction(88, 100), (), "0.88", 1), ln2, "0.88 * ln(2)", 6)
    >>> tree = Binary("/", top, Number(Fraction(180000), hours, "50 h", 17), "...", 15)
    >>> result = evaluate(tree, {}, None)
    >>> import math
    >>> float(result.value) == 0.88 * math.log(2) / 180000, result.dims
    (True, (('[time]', Fraction(-1, 1)),))
    """
    return _Evaluation(values, temperature, owner).run(expr, top=True)


class _Evaluation:
    """One evaluation: the values of names, the temperature and the name being defined."""

    def __init__(
        self, values: Mapping[str, ExactQuantity], temperature: float | None, owner: str
    ) -> None:
        self.values = values
        self.temperature = temperature
        self.owner = owner

    def run(self, node: Expr, top: bool = False) -> ExactQuantity:
        if isinstance(node, Number):
            if node.offset and not top:
                raise ExpressionError(
                    f"{node.text} is a temperature on a scale with an offset, which cannot "
                    "take part in arithmetic",
                    "write it alone (T_ref = 25 degC) or in kelvin (298.15 K)",
                    node.column,
                    node.text,
                )
            return ExactQuantity(node.value, node.dims)
        if isinstance(node, Name):
            if node.name not in self.values:
                raise ExpressionError(
                    f"{node.name} has no value", "define it", node.column, node.text
                )
            return self.values[node.name]
        if isinstance(node, Unary):
            inner = self.run(node.operand)
            value = inner.value if inner.value is None or node.op == "+" else -inner.value
            return ExactQuantity(value, inner.dims)
        if isinstance(node, Binary):
            return self._binary(node)
        if isinstance(node, Function):
            return self._function(node)
        return self._law(node)

    # -- arithmetic ------------------------------------------------------------------------
    def _binary(self, node: Binary) -> ExactQuantity:
        left, right = self.run(node.left), self.run(node.right)
        if node.op == "**":
            return _power(node, left, right)
        if node.op in "+-":
            if left.dims != right.dims:
                verb = (
                    f"add {_describe(left.dims)} ({node.left.text}) and "
                    f"{_describe(right.dims)} ({node.right.text})"
                    if node.op == "+"
                    else f"subtract {_describe(right.dims)} ({node.right.text}) from "
                    f"{_describe(left.dims)} ({node.left.text})"
                )
                raise ExpressionError(
                    f"cannot {verb}",
                    f"both sides of {node.op} must have the same dimension; check the units",
                    node.column,
                    node.op,
                )
            if left.value is None or right.value is None:
                return ExactQuantity(None, left.dims)
            value = left.value + right.value if node.op == "+" else left.value - right.value
            return ExactQuantity(_bounded(value, node), left.dims)
        sign = 1 if node.op == "*" else -1
        dims = _product(left.dims, right.dims, sign)
        if right.value == 0 and node.op == "/":
            raise ExpressionError(
                "division by zero"
                + ("" if isinstance(node.right, Number) else f": {node.right.text} is 0"),
                "check the value",
                node.right.column,
                node.right.text,
            )
        if left.value is None or right.value is None:
            return ExactQuantity(None, dims)
        value = left.value * right.value if sign == 1 else left.value / right.value
        return ExactQuantity(_bounded(value, node), dims)

    # -- ln, exp, log10, sqrt ------------------------------------------------------------
    def _function(self, node: Function) -> ExactQuantity:
        arg = self.run(node.argument)
        if node.name == "sqrt":
            return _sqrt(node, arg)
        if arg.dims:
            raise ExpressionError(
                f"{node.name} needs a pure number, but {node.argument.text} is "
                f"{_describe(arg.dims)}",
                f"divide by a value in the same unit, e.g. {node.name}(t / (1 h))",
                node.argument.column,
                node.argument.text,
            )
        x = arg.value
        if x is None:
            return ExactQuantity(None, ())
        if node.name == "exp":
            if abs(x) > 9000:
                raise ExpressionError(
                    f"exp of {node.argument.text} ({shown(x)}) is beyond 1e±3900",
                    "check the value and its units",
                    node.column,
                    node.text,
                )
            return ExactQuantity(Fraction(1) if x == 0 else dd.decimal_exp(x), ())
        if not x > 0:
            raise ExpressionError(
                f"{node.name} of {node.argument.text} is undefined: it is {shown(x)}, not above 0",
                "check the value and its sign",
                node.argument.column,
                node.argument.text,
            )
        if node.name == "ln":
            return ExactQuantity(Fraction(0) if x == 1 else dd.decimal_ln(x), ())
        return ExactQuantity(_log10(x), ())

    # -- temperature laws ----------------------------------------------------------------
    def _law(self, node: LawCall) -> ExactQuantity:
        law = node.law
        given = {key: self.run(expr, top=True) for key, expr in node.arguments}
        by_key = dict(node.arguments)
        for p in law.parameters:
            q = given[p.key]
            fits = (
                concentration_order(dict(q.dims)) is not None
                if p.dims is None
                else (q.dims == p.dims)
            )
            if not fits:
                arg = by_key[p.key]
                raise ExpressionError(
                    f"{p.what} of {self.owner or law.name} is {arg.text}, which is "
                    f"{_describe(q.dims)}, not {p.kind}",
                    p.hint,
                    arg.column,
                    arg.text,
                )
        dims = given[law.result_of].dims if law.result_of else (("[time]", Fraction(-1)),)
        if self.temperature is None or any(q.value is None for q in given.values()):
            return ExactQuantity(None, dims)
        exact = {key: q.value for key, q in given.items()}
        try:
            value = law.exact(exact, self.temperature)  # type: ignore[arg-type]
        except ExpressionError as exc:
            raise ExpressionError(exc.problem, exc.hint, node.column, node.text) from None
        return ExactQuantity(_bounded(value, node), dims)


def _bounded(value: Fraction, node: Expr) -> Fraction:
    """``value`` itself; rounded to 60 digits when it needs more than MAX_EXACT_BITS; an
    error beyond 10**±4000."""
    if not value:
        return value
    num, den = value.numerator, value.denominator
    if abs(num.bit_length() - den.bit_length()) > _MAX_BINARY_EXPONENT:
        size = "too large" if abs(value) > 1 else "too small"
        raise ExpressionError(
            f"{node.text} is {size} (beyond 1e±4000)",
            "check the values and their units",
            node.column,
            node.text,
        )
    if num.bit_length() + den.bit_length() > MAX_EXACT_BITS:
        return Fraction(_ROUNDING.divide(Decimal(num), Decimal(den)))
    return value


def _log10(x: Fraction) -> Fraction:
    """log10 of x > 0: exact for powers of ten."""
    for whole, sign in ((x, 1), (1 / x, -1)):
        if whole.denominator == 1:
            n = whole.numerator
            digits = len(str(n)) - 1
            if n == 10**digits:
                return Fraction(sign * digits)
    return dd.decimal_log10(x)


def _root(x: Fraction, q: int) -> Fraction | None:
    """The exact ``q``-th root of ``x >= 0`` when it is rational, else None."""
    out = []
    for n in (x.numerator, x.denominator):
        r = isqrt(n) if q == 2 else round(n ** (1 / q)) if n.bit_length() < 900 else None
        if r is None:
            return None
        for candidate in (r - 1, r, r + 1):
            if candidate >= 0 and candidate**q == n:
                out.append(candidate)
                break
        else:
            return None
    return Fraction(out[0], out[1])


def _sqrt(node: Function, arg: ExactQuantity) -> ExactQuantity:
    half = {k: v / 2 for k, v in arg.dims}
    if any(v.denominator != 1 for v in half.values()):
        raise ExpressionError(
            f"sqrt of {node.argument.text} has no unit: it is {_describe(arg.dims)}, whose "
            "square root is no whole power of units",
            "take the square root of a pure number or of a squared unit",
            node.argument.column,
            node.argument.text,
        )
    x = arg.value
    if x is None:
        return ExactQuantity(None, dims_of(half))
    if x < 0:
        raise ExpressionError(
            f"sqrt of {node.argument.text} is undefined: it is negative ({shown(x)})",
            "check the value and its sign",
            node.argument.column,
            node.argument.text,
        )
    exact = _root(x, 2)
    return ExactQuantity(exact if exact is not None else dd.decimal_sqrt(x), dims_of(half))


def _power(node: Binary, base: ExactQuantity, exponent: ExactQuantity) -> ExactQuantity:
    """``base ** exponent``: rational for integer exponents, else to 40 digits."""
    if exponent.dims:
        raise ExpressionError(
            f"the exponent {node.right.text} is {_describe(exponent.dims)}, not a pure number",
            "an exponent has no unit",
            node.right.column,
            node.right.text,
        )
    p = exponent.value
    if p is None:
        if base.dims:
            raise ExpressionError(
                f"the exponent {node.right.text} of a value with a unit depends on the temperature",
                "raise values with units to fixed powers",
                node.right.column,
                node.right.text,
            )
        return ExactQuantity(None, ())
    dims = dims_of({k: v * p for k, v in base.dims})
    if any(v.denominator != 1 for _, v in dims):
        raise ExpressionError(
            f"{node.text} gives a fractional power of units ({node.left.text} is "
            f"{_describe(base.dims)})",
            "raise values with units to powers that leave whole powers of units",
            node.column,
            node.text,
        )
    x = base.value
    if x is None:
        return ExactQuantity(None, dims)
    return ExactQuantity(_power_value(node, x, p), dims)


def _power_value(node: Binary, x: Fraction, p: Fraction) -> Fraction:
    if x == 0:
        if p < 0:
            raise ExpressionError(
                f"division by zero: {node.left.text} is 0 and the exponent is negative",
                "check the value",
                node.column,
                node.text,
            )
        return Fraction(1) if p == 0 else Fraction(0)
    if p.denominator != 1 and x < 0:
        raise ExpressionError(
            f"{node.left.text} is negative ({shown(x)}); a negative number has no real "
            f"power {node.right.text}",
            "check the sign",
            node.column,
            node.text,
        )
    size = abs(x.numerator.bit_length() - x.denominator.bit_length()) + 1
    if size * abs(p) > _MAX_BINARY_EXPONENT:
        raise ExpressionError(
            f"{node.text} is beyond 1e±4000",
            "check the values and their units",
            node.column,
            node.text,
        )
    if p.denominator == 1:
        bits = max(x.numerator.bit_length(), x.denominator.bit_length())
        if bits * abs(p) <= MAX_EXACT_BITS:
            return x ** int(p)
        return Fraction(_ROUNDING.power(_ROUNDING.divide(x.numerator, x.denominator), int(p)))
    root = _root(abs(x), p.denominator) if p.denominator <= 12 else None
    if (
        root is not None
        and abs(p.numerator) * max(root.numerator.bit_length(), root.denominator.bit_length())
        <= MAX_EXACT_BITS
    ):
        return root**p.numerator
    return dd.decimal_power(x, p)
