"""Expressions as a scheme writes them, read into the tree of :mod:`kinetics.expressions`.

An expression is made of numbers with units (``50 h``, ``4.0e10 1/s``, ``87.6 %``),
names of other quantities, ``+ - * /``, ``**`` or ``^``, parentheses, the functions
``ln``, ``exp``, ``log10`` and ``sqrt``, and the temperature laws ``arrhenius(A = ...,
Ea = ...)``, ``eyring(dH = ..., dS = ...)`` and ``q10(k_ref, T_ref, Q10)``.  Powers bind
tightest (right to left), then signs, then ``* /``, then ``+ -``.

A unit follows its number and binds to it: ``0.88 * ln(2) / 50 h`` divides by 50 hours.
It runs over unit words joined by ``/``, ``·`` or spaces (``M-1 s-1``, ``kJ/mol``,
``1/(M s)``); an operator with spaces around it (``50 h / 2``) ends it.  ``%`` after a
number divides it by 100.

Units are read by :func:`kinetics.units.parse_unit` (pint and its exact table) and scaled
to SI base units exactly; temperatures in degrees Celsius become kelvin.  A line that
cannot be read gives one located error (several for the parameters of a law).
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from typing import NoReturn

from ..errors import SchemeError
from ..expressions import (
    FUNCTIONS,
    Binary,
    Expr,
    Function,
    LawCall,
    LawSpec,
    Name,
    Number,
    Unary,
)
from ..laws import LAWS
from ..suggest import close_matches
from ..units import UnitSpec
from .grammar import NAME_RE
from .messages import quoted
from .quantities import Value, exact_kelvin, fraction, number_problem, scaled, unit_of
from .source import Line

__all__ = ["CALLABLE", "MAX_DEPTH", "MAX_TERMS", "read_expression"]

#: Most numbers, names and operators in one expression (longer ones: split them up).
MAX_TERMS = 256
#: Deepest nesting of parentheses, calls and signs in one expression.
MAX_DEPTH = 40
#: Every name that is called rather than defined.
CALLABLE = frozenset({*FUNCTIONS, *LAWS})
#: What an expression may hold (in hints).
EXPRESSION_HINT = (
    "write numbers with units, names, + - * / ** and parentheses, e.g. 0.88 * ln(2) / t_p"
)

_NUMBER = re.compile(r"(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?")
_UNIT_WORD = re.compile(r"[^\W\d]+|[°µμΩ℃][^\W\d]*")
_EXPONENT = re.compile(r"(?:\^|\*\*)?[-+]?\d+|[⁻⁺]?[⁰¹²³⁴⁵⁶⁷⁸⁹]+")
_UNIT_GROUP = re.compile(r"[\w\s/*·⋅^⁰¹²³⁴⁵⁶⁷⁸⁹⁻⁺°µμ.-]*")
_SPACES = re.compile(r"\s*")
_KEYWORD = re.compile(rf"({NAME_RE.pattern})\s*=(?!=)")
_CALL_AHEAD = re.compile(rf"{NAME_RE.pattern}\s*\(")


class _Stop(Exception):
    """The errors that end the reading of an expression."""

    def __init__(self, errors: list[SchemeError]) -> None:
        super().__init__(errors)
        self.errors = errors


def read_expression(
    line: Line, text: str, column0: int, what: str, owner: str = ""
) -> Expr | list[SchemeError]:
    """Read the expression ``text`` at 0-based ``column0`` of ``line``.

    Parameters
    ----------
    line : Line
        The line read.
    text : str
        The expression.
    column0 : int
        0-based column of ``text`` in the line.
    what : str
        What the expression defines, as a message names it (``"t_p"``).
    owner : str, optional
        The name defined (messages about law parameters name it); default ``what``.

    Returns
    -------
    Expr or list of SchemeError

    Examples
    --------
    >>> code = "lam = 0.88 * ln(2) / 50 h"
    >>> tree = read_expression(Line("t", 1, code, code), code[6:], 6, "lam")
    >>> tree.op, tree.right.text, tree.right.value
    ('/', '50 h', Fraction(180000, 1))
    >>> code = "x = 2 +"
    >>> [e.headline() for e in read_expression(Line("t", 1, code, code), code[4:], 4, "x")]
    ["t:1:7: expected a value after '+' in x; write numbers with units, names, + - * / ** \
and parentheses, e.g. 0.88 * ln(2) / t_p"]
    """
    reader = _Reader(line, text, column0, what, owner or what)
    try:
        return reader.read()
    except _Stop as stop:
        return stop.errors


class _Reader:
    """A recursive-descent reader of one expression (bounded by MAX_TERMS and MAX_DEPTH)."""

    def __init__(self, line: Line, text: str, column0: int, what: str, owner: str) -> None:
        self.line = line
        self.text = text
        self.column0 = column0
        self.what = what
        self.owner = owner
        self.pos = 0
        self.terms = 0
        self.depth = 0

    # -- helpers -------------------------------------------------------------------------
    def col(self, index: int) -> int:
        """1-based column of ``text[index]`` in the line."""
        return self.column0 + index + 1

    def fail(self, problem: str, index: int, snippet: str, hint: str = EXPRESSION_HINT) -> NoReturn:
        raise _Stop([self.line.error(problem, self.col(index), snippet or " ", hint)])

    def skip(self) -> str:
        """Move past spaces; the next character ('' at the end)."""
        self.pos = _after_spaces(self.text, self.pos)
        return self.text[self.pos : self.pos + 1]

    def span(self, start: int) -> str:
        return self.text[start : self.pos].strip()

    def count(self, index: int) -> None:
        self.terms += 1
        if self.terms > MAX_TERMS:
            self.fail(
                f"the expression of {self.what} has more than {MAX_TERMS} terms",
                index,
                self.text[index : index + 10],
                "split it into named quantities on lines of their own",
            )

    def deeper(self, index: int) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            self.fail(
                f"the expression of {self.what} is nested more than {MAX_DEPTH} levels deep",
                index,
                self.text[index : index + 1],
                "split it into named quantities on lines of their own",
            )

    # -- grammar ---------------------------------------------------------------------------
    def read(self) -> Expr:
        self.skip()
        if self.pos >= len(self.text):
            self.fail(f"{self.what} has no value", self.pos, " ", "write e.g. t_p = 50 h")
        node = self.sum()
        if self.skip():
            self.trailing()
        return node

    def trailing(self) -> None:
        rest = self.text[self.pos :]
        if rest.startswith(")"):
            self.fail(
                f"a closing parenthesis without an opening one in {self.what}",
                self.pos,
                ")",
                "remove it, or open it earlier",
            )
        word = rest.split()[0]
        before = self.text[: self.pos].strip()
        self.fail(
            f"unexpected {quoted(word)} after {quoted(before)} in {self.what}",
            self.pos,
            word,
            "join values with an operator (+ - * / **), e.g. 2 * k1",
        )

    def sum(self) -> Expr:
        start = self.pos
        node = self.product()
        while self.skip() in ("+", "-"):
            op, at = self.text[self.pos], self.pos
            self.pos += 1
            self.count(at)
            right = self.product()
            node = Binary(op, node, right, self.span(start), self.col(at))
        return node

    def product(self) -> Expr:
        start = self.pos
        node = self.unary()
        while self.skip() in ("*", "/") and not self.text.startswith("**", self.pos):
            op, at = self.text[self.pos], self.pos
            self.pos += 1
            self.count(at)
            right = self.unary()
            node = Binary(op, node, right, self.span(start), self.col(at))
        return node

    def unary(self) -> Expr:
        sign = self.skip()
        if sign in ("+", "-"):
            at = self.pos
            self.pos += 1
            self.deeper(at)
            self.count(at)
            operand = self.unary()
            self.depth -= 1
            return Unary(sign, operand, self.span(at), self.col(at))
        return self.power()

    def power(self) -> Expr:
        start = self.pos
        base = self.atom()
        self.skip()
        if self.text.startswith("**", self.pos):
            width = 2
        elif self.text.startswith("^", self.pos):
            width = 1
        else:
            return base
            return base
        at = self.pos
        self.pos += width
        self.count(at)
        self.deeper(at)
        exponent = self.unary()
        self.depth -= 1
        return Binary("**", base, exponent, self.span(start), self.col(at))

    def atom(self) -> Expr:
        c = self.skip()
        at = self.pos
        if not c:
            before = self.text[:at].rstrip()
            if not before:
                self.fail(f"{self.what} has no value", at, " ", "write e.g. t_p = 50 h")
            op = before[-1]
            self.fail(f"expected a value after {quoted(op)} in {self.what}", len(before) - 1, op)
        self.count(at)
        if _NUMBER.match(self.text, at):
            return self.number()
        if c == "(":
            self.deeper(at)
            self.pos += 1
            node = self.sum()
            if self.skip() != ")":
                self.fail(
                    f"a parenthesis is not closed in {self.what}", at, "(", "close it with ')'"
                )
            self.pos += 1
            self.depth -= 1
            return node
        match = NAME_RE.match(self.text, at)
        if match is None:
            word = self.text[at:].split()[0]
            self.fail(f"could not read {quoted(word)} in {self.what}", at, word)
        return self.name_or_call(match.group(0))

    # -- numbers and units -------------------------------------------------------------
    def number(self) -> Number:
        at = self.pos
        match = _NUMBER.match(self.text, at)
        assert match is not None  # atom() saw a number
        number = match.group(0)
        example = "0.12 1/min" if self.what.startswith("rate constant") else "50 h"
        problem = number_problem(number, self.what, example, True)
        if problem is not None:
            self.fail(problem[0], at, number, problem[1])
        self.pos = match.end()
        after = self.pos
        if self.skip() == "%":
            self.pos += 1
            return Number(fraction(number) / 100, (), self.span(at), self.col(at), unit="%")
        glued = self.pos == after
        unit = (
            None
            if glued and not _UNIT_WORD.match(self.text, after)
            else _unit_span(self.text, self.pos)
        )
        if unit is None:
            self.pos = after
            return Number(fraction(number), (), number, self.col(at))
        start, end = unit
        self.pos = end
        unit_text = self.text[start:end]
        value = Value(number, unit_text, self.col(at), self.col(start))
        spec = unit_of(self.line, value, self.what, "1/s")
        if not isinstance(spec, UnitSpec):
            raise _Stop([_unit_hint(spec)])
        if spec.offset:
            kelvin = exact_kelvin(number, unit_text)
            return Number(kelvin, spec.dimensions, self.span(at), self.col(at), True, unit_text)
        value_si = scaled(number, spec.factor)
        return Number(value_si, spec.dimensions, self.span(at), self.col(at), unit=unit_text)

    # -- names and calls -------------------------------------------------------------------
    def name_or_call(self, name: str) -> Expr:
        at = self.pos
        self.pos += len(name)
        if self.skip() != "(":
            self.pos = at + len(name)
            if name in CALLABLE or name.lower() in LAWS:
                self.fail(
                    f"{name} is a function and needs a value in parentheses",
                    at,
                    name,
                    f"write e.g. {_example(name)}",
                )
            return Name(name, name, self.col(at))
        law = LAWS.get(name.lower())
        if name not in FUNCTIONS and law is None:
            close = close_matches(name, sorted(CALLABLE))
            hint = (
                f"did you mean {close[0]}?"
                if close
                else ("the functions are ln, exp, log10, sqrt, arrhenius, eyring and q10")
            )
            self.fail(f"unknown function {quoted(name)} in {self.what}", at, name, hint)
        self.deeper(at)
        arguments = self.arguments()
        self.depth -= 1
        if law is not None:
            return _law_call(self, law, arguments, at)
        if len(arguments) != 1 or arguments[0][0] is not None:
            self.fail(
                f"{name} takes one value; found {len(arguments)}",
                at,
                self.span(at),
                f"write e.g. {_example(name)}",
            )
        return Function(name, arguments[0][1], self.span(at), self.col(at))

    def arguments(self) -> list[tuple[str | None, Expr, str, int]]:
        """``( [key =] expr, ... )`` at ``self.pos``: (key, tree, text, 0-based index)."""
        opening = self.pos
        self.pos += 1
        out: list[tuple[str | None, Expr, str, int]] = []
        if self.skip() == ")":
            self.pos += 1
            return out
        while True:
            start = self.pos
            keyword = _KEYWORD.match(self.text, start)
            key = None
            if keyword is not None:
                key = keyword.group(1)
                self.pos = keyword.end()
            tree = self.sum()
            out.append((key, tree, self.span(start), start))
            c = self.skip()
            if c == ",":
                self.pos += 1
                self.skip()
                continue
            if c == ")":
                self.pos += 1
                return out
            if not c:
                self.fail(
                    f"a parenthesis is not closed in {self.what}", opening, "(", "close it with ')'"
                )
            self.trailing()


def _law_call(
    reader: _Reader, law: LawSpec, arguments: list[tuple[str | None, Expr, str, int]], at: int
) -> LawCall:
    """The call of ``law`` with its arguments checked: keys known, each once, none missing."""
    given: dict[str, Expr] = {}
    errors: list[SchemeError] = []
    label = f"the {law.label} parameters of {reader.owner}"
    keys = law.keys
    by_position = law.positional
    for index, (key, tree, piece, start) in enumerate(arguments):
        by_position = by_position and key is None
        if by_position:
            key = keys[index] if index < len(keys) else None
        if key is None or key not in keys:
            errors.append(
                reader.line.error(
                    f"could not read {quoted(piece)} in {label}",
                    reader.col(start),
                    piece or " ",
                    f"write {law.example}",
                )
            )
            continue
        if key in given:
            errors.append(
                reader.line.error(
                    f"{label} give {key} twice",
                    reader.col(start),
                    piece,
                    f"give {_joined(keys)} once each: {law.example}",
                )
            )
            continue
        given[key] = tree
    if not errors and set(given) != set(keys):
        missing = _joined([k for k in keys if k not in given])
        errors.append(
            reader.line.error(
                f"{label} lack {missing}", reader.col(at), reader.span(at), f"write {law.example}"
            )
        )
    if errors:
        raise _Stop(errors)
    return LawCall(law, tuple((k, given[k]) for k in keys), reader.span(at), reader.col(at))


def _unit_span(t: str, p: int) -> tuple[int, int] | None:
    """The span of a unit starting at ``p``, or None when no unit starts there."""
    start = p
    q = _unit_factor(t, p + 2) if t.startswith("1/", p) else _unit_factor(t, p)
    if q is None:
        return None
    p = q
    while True:
        if t[p : p + 1] in ("/", "·", "⋅") and t[p : p + 1]:
            q = _unit_factor(t, p + 1)
            if q is not None:
                p = q
                continue
        gap = _after_spaces(t, p)
        if gap > p and t[gap : gap + 1] not in ("", "("):
            q = _unit_factor(t, gap)
            if q is not None:
                p = q
                continue
        return start, p


def _unit_factor(t: str, p: int) -> int | None:
    """The end of one unit word (with its exponent) or parenthesised group at ``p``."""
    if t[p : p + 1] == "(":
        depth, q = 0, p
        while q < len(t):
            if t[q] == "(":
                depth += 1
            elif t[q] == ")":
                depth -= 1
                if depth == 0:
                    break
            elif not _UNIT_GROUP.fullmatch(t[q]):
                return None
            q += 1
        if q >= len(t):
            return None
        end = q + 1
    else:
        word = _UNIT_WORD.match(t, p)
        if word is None or _CALL_AHEAD.match(t, p):
            return None
        end = word.end()
    exponent = _EXPONENT.match(t, end)
    return exponent.end() if exponent else end


def _after_spaces(text: str, at: int) -> int:
    """The index of the first character at or after ``at`` that is no space."""
    match = _SPACES.match(text, at)
    return at if match is None else match.end()


def _joined(items: Iterable[str]) -> str:
    words = list(items)
    return words[0] if len(words) == 1 else ", ".join(words[:-1]) + " and " + words[-1]


def _example(name: str) -> str:
    law = LAWS.get(name.lower())
    return f"{name}(2)" if law is None else str(law.example)


def _unit_hint(error: SchemeError) -> SchemeError:
    """A unit error inside an expression: a name after a number may be meant as a factor."""
    if error.hint.startswith("write a unit such as"):
        error.hint += ", or * to multiply by a named quantity (2 * k1)"
    return error
