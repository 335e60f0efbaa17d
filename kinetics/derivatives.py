r"""Exact derivatives of expressions with respect to named quantities and the temperature.

A scheme that writes ``t_p = 50 h`` and ``lam = 0.88 * ln(2) / t_p`` has rate constants
that are functions of its named quantities.  A fit that frees ``t_p`` needs
:math:`\partial\lambda/\partial t_p`, and a sensitivity :math:`\partial\ln Q/\partial\ln t_p`
needs it too.  :func:`slopes` differentiates one parsed expression (the tree of
:mod:`kinetics.expressions`) in forward mode, node by node, with the rules of calculus:

.. math::

    (u v)' = u' v + u v', \quad (u/v)' = u'/v - u v'/v^2, \quad
    (u^p)' = u^p\,(p' \ln u + p\,u'/u), \quad
    \ln' u = u'/u, \quad \exp' u = e^u u', \quad \sqrt{u}' = u' / 2\sqrt{u}

and the hand-derived partial derivatives of the temperature laws (``LawSpec.slopes`` in
:mod:`kinetics.laws`).  Rational operations stay exact; logarithms, exponentials and
non-integer powers carry the 40 significant digits of their values
(:mod:`kinetics._doubledouble`).  No finite differences.

The dependency graph applies this definition by definition
(:meth:`kinetics.definitions.Dependencies.slopes`).
"""

from __future__ import annotations

from collections.abc import Mapping
from decimal import Context, Decimal
from fractions import Fraction

from . import _doubledouble as dd
from .errors import ExpressionError
from .expressions import (
    Binary,
    ExactQuantity,
    Expr,
    Function,
    LawCall,
    Name,
    Number,
    Unary,
    evaluate,
)

__all__ = ["Slope", "slopes"]

#: Derivatives of one value with respect to named parameters [SI per SI unit of each].
Slope = dict[str, Fraction]

#: Slopes with more bits (numerator and denominator together) are rounded to 45 digits.
_MAX_BITS = 4096
_ROUNDING = Context(prec=45, Emax=10**9, Emin=-(10**9))


def _trim(x: Fraction) -> Fraction:
    """``x`` itself, or rounded to 45 significant digits when it has grown too long."""
    if x.numerator.bit_length() + x.denominator.bit_length() <= _MAX_BITS:
        return x
    return Fraction(_ROUNDING.divide(Decimal(x.numerator), Decimal(x.denominator)))


def _combine(*terms: tuple[Fraction, Slope]) -> Slope:
    r""":math:`\sum_i a_i \, s_i` of slopes ``s_i`` scaled by ``a_i``."""
    out: Slope = {}
    for factor, slope in terms:
        if not factor:
            continue
        for name, value in slope.items():
            out[name] = out.get(name, Fraction(0)) + factor * value
    return {name: _trim(value) for name, value in out.items()}


def slopes(
    expr: Expr,
    values: Mapping[str, ExactQuantity],
    known: Mapping[str, Slope],
    temperature: float | None,
    temperature_slope: Slope | None = None,
    owner: str = "",
) -> tuple[Fraction, Slope]:
    r"""The value of ``expr`` and its derivatives with respect to named parameters.

    Parameters
    ----------
    expr : Expr
        The tree (already evaluated once without error).
    values : Mapping of str to ExactQuantity
        The names it refers to [SI base units].
    known : Mapping of str to Slope
        The derivatives of those names with respect to the parameters (a name missing
        here, or with an empty mapping, does not depend on them).
    temperature : float or None
        [K] for the temperature laws.
    temperature_slope : Slope, optional
        The derivatives of the temperature itself: ``{"temperature": 1}`` when the
        temperature is a parameter; none by default.
    owner : str, optional
        The name being defined (for messages).

    Returns
    -------
    (Fraction, Slope)
        The value [SI] and :math:`\partial\,\mathrm{value}/\partial p` for every
        parameter ``p`` it depends on.

    Raises
    ------
    ExpressionError
        Where the expression is not differentiable (the square root or a fractional
        power of 0, a value that depends on an unknown temperature).

    Examples
    --------
    :math:`\lambda = 0.88 \ln 2 / t_p`: :math:`\partial\lambda/\partial t_p = -\lambda/t_p`
    (hand derivative), exactly:

    >>> from kinetics.expressions import Binary, Function, Name, Number
    >>> ln2 = Function("ln", Number(Fraction(2), (), "2", 11), "ln(2)", 8)
    >>> top = Binary("*", Number(Fraction(22, 25), (), "0.88", 1), ln2, "0.88 * ln(2)", 6)
    >>> tree = Binary("/", top, Name("t_p", "t_p", 17), "0.88 * ln(2) / t_p", 15)
    >>> hours = (("[time]", Fraction(1)),)
    >>> lam, d = slopes(tree, {"t_p": ExactQuantity(Fraction(180000), hours)},
    ...                 {"t_p": {"t_p": Fraction(1)}}, None)
    >>> d["t_p"] == -lam / 180000
    True
    """
    return _Slopes(values, known, temperature, temperature_slope or {}, owner).run(expr)


class _Slopes:
    """One differentiation: the values and slopes of names, and the temperature."""

    def __init__(self, values, known, temperature, temperature_slope, owner) -> None:
        self.values = values
        self.known = known
        self.temperature = temperature
        self.temperature_slope = temperature_slope
        self.owner = owner

    def value(self, node: Expr) -> Fraction:
        result = evaluate(node, self.values, self.temperature, self.owner).value
        if result is None:
            raise ExpressionError(
                f"{self.owner or node.text} depends on the temperature and none is given",
                "give the temperature in kelvin",
            )
        return result

    def run(self, node: Expr) -> tuple[Fraction, Slope]:
        if isinstance(node, Number):
            return node.value, {}
        if isinstance(node, Name):
            return self.value(node), dict(self.known.get(node.name) or {})
        if isinstance(node, Unary):
            x, dx = self.run(node.operand)
            return (x, dx) if node.op == "+" else (-x, _combine((Fraction(-1), dx)))
        if isinstance(node, Binary):
            return self._binary(node)
        if isinstance(node, Function):
            return self._function(node)
        return self._law(node)

    def _binary(self, node: Binary) -> tuple[Fraction, Slope]:
        u, du = self.run(node.left)
        v, dv = self.run(node.right)
        value = self.value(node)
        if node.op == "+":
            return value, _combine((Fraction(1), du), (Fraction(1), dv))
        if node.op == "-":
            return value, _combine((Fraction(1), du), (Fraction(-1), dv))
        if node.op == "*":
            return value, _combine((v, du), (u, dv))
        if node.op == "/":
            return value, _combine((1 / v, du), (-value / v, dv))
        return value, self._power(node, u, du, v, dv, value)

    def _power(self, node: Binary, u, du: Slope, p, dp: Slope, value) -> Slope:
        r"""The slope of a power, :math:`(u^p)' = u^p (p' \ln u + p u'/u)`.

        At :math:`u = 0` only a constant exponent of at least 1 has one.
        """
        if not du and not dp:
            return {}
        if u == 0:
            if dp or p < 1:
                raise self._not_differentiable(node)
            return du if p == 1 else {}
        terms = [(value * p / u, du)]
        if dp:
            if u < 0:
                raise self._not_differentiable(node)
            terms.append((value * dd.decimal_ln(u), dp))
        return _combine(*terms)

    def _function(self, node: Function) -> tuple[Fraction, Slope]:
        x, dx = self.run(node.argument)
        value = self.value(node)
        if not dx:
            return value, {}
        if node.name == "exp":
            return value, _combine((value, dx))
        if node.name == "ln":
            return value, _combine((1 / x, dx))
        if node.name == "log10":
            return value, _combine((1 / (x * dd.decimal_ln(10)), dx))
        if value == 0:  # sqrt
            raise self._not_differentiable(node)
        return value, _combine((1 / (2 * value), dx))

    def _law(self, node: LawCall) -> tuple[Fraction, Slope]:
        args = {key: self.run(expr) for key, expr in node.arguments}
        value = self.value(node)
        moving = [key for key, (_, d) in args.items() if d]
        if not moving and not self.temperature_slope:
            return value, {}
        if node.law.slopes is None:  # pragma: no cover - every law of LAWS has them
            raise self._not_differentiable(node)
        assert self.temperature is not None  # value() refused a law without one
        partial = node.law.slopes({k: v for k, (v, _) in args.items()}, self.temperature, value)
        terms = [(partial[key], args[key][1]) for key in moving]
        terms.append((partial["temperature"], self.temperature_slope))
        return value, _combine(*terms)

    def _not_differentiable(self, node: Expr) -> ExpressionError:
        return ExpressionError(
            f"{node.text} has no derivative here ({self.owner or 'the definition'})",
            "give values away from 0 and negative bases",
            node.column,
            node.text,
        )
