"""Scheme text -> :class:`~kinetics.scheme.Scheme`, reporting every mistake at once.

The scheme language (one statement per line, ``#`` starts a comment)::

    title: Hydrolysis of an ester intermediate
    A -> B + 2 C        k1 = 0.12 1/min
    B <=> D             kf = 2.0e-3 1/s, kr = 5.0e-4 1/s
    C -> E              k1                  # shares k1 with the first step
    E + W -> F          k2 = 1.5e-4 M-1 s-1 # pseudo-first-order, W in excess
    k3 = arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)
    F -> G              k3
    temperature = 60 degC
    start A = 0.50 mol/L, B = 10 mmol/L
    excess W = 55 mol/L
    feed A = 0.01 mol/L/min
    formula A = C6H12O6
    molar_mass G = 180.2 g/mol
    balance: lumped                         # atom imbalance is a warning only

Atom balance and its opt-out
----------------------------
When every species of a reaction (excess co-reactants and products included)
has a ``formula``, the element counts of both sides must agree; an imbalance is
an **error** by default, and the message lists the counts of both sides.
Lumped schemes (a "degradation products" pseudo-species, a dimer written as
one species, an open system) opt out in one of two ways:

* the line ``balance: lumped`` in the file (``balance: strict`` restates the
  default), or
* ``parse(text, strict_balance=False)`` / ``load(path, strict_balance=False)``
  from Python (``kinetics check FILE --allow-imbalance`` on the command line).

The imbalance is then still reported by :func:`kinetics.balance.mass_balance`
(per reaction, and the mass-changing steps by name), but it no longer stops
the file from loading.

Parsing runs in two passes.  The first reads each line into a small
statement object (each statement kind has a ``from_line`` constructor that
answers "not mine" with ``None``, or returns a statement or a list of errors).
Plain reaction lines, which make up large files, first go through one compiled
pattern (``_fast_reaction``) that builds the very same statement; anything it
does not recognise, every error included, goes to the general reader
(``ReactionStatement.from_line_general``), which words the messages.  The
second pass (``_Builder``) resolves names, units and orders across the whole
file.  All errors of both passes are collected and raised together as one
:class:`~kinetics.errors.SchemeErrors`.  The work is linear in the size of the
file (``benchmarks/bench_parse.py``): lines longer than :data:`MAX_LINE_LENGTH`,
units longer than ``units.MAX_UNIT_LENGTH`` and numbers longer than
:data:`MAX_NUMBER_LENGTH` are refused before they are read, and :func:`load`
reads a file in chunks up to :data:`MAX_SCHEME_BYTES`.  Errors that follow from
a line that failed to read (its species "occur in no reaction") are not
reported; probable mistakes that do not stop the file become
``Scheme.warnings``.
"""

from __future__ import annotations

import codecs
import contextlib
import difflib
import gc
import math
import os
import re
import sys
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path
from typing import ClassVar

import numpy as np

from .amounts import Kind, amount_unit, kind_of
from .errors import SchemeError, SchemeErrors, SchemeFileError, UsageError, shorten
from .scheme import Arrhenius, RateConstant, Reaction, Scheme, Species, Step
from .units import (
    concentration_order,
    describe_dimension,
    parse_unit,
    pint_text,
    temperature_to_kelvin,
)

__all__ = [
    "ARROWS",
    "DIRECTIVES",
    "MAX_LINE_LENGTH",
    "MAX_NUMBER_LENGTH",
    "MAX_SCHEME_BYTES",
    "load",
    "parse",
]

#: Longest line read [characters]; a longer one is refused before it is parsed, so that
#: the work per statement stays bounded (README states the limit).
MAX_LINE_LENGTH = 10_000
#: Largest scheme file or text read [bytes of UTF-8; characters for text] (README).
MAX_SCHEME_BYTES = 32 * 1024 * 1024
#: Longest number read [characters]: a double has 17 significant digits.
MAX_NUMBER_LENGTH = 40
#: Characters of a refused line kept for its message.
MAX_SHOWN_LINE = 100

#: Arrows of the language: irreversible and reversible, with Unicode synonyms.
ARROWS = {"->": False, "→": False, "<=>": True, "⇌": True}
#: Directive keywords that start a line.
DIRECTIVES = ("start", "excess", "feed", "formula", "molar_mass", "temperature")
_RESERVED = {*DIRECTIVES, "title", "balance", "arrhenius"}

_NAME = r"[^\W\d_][\w']*"
_NAME_RE = re.compile(_NAME)
_NUMBER_RE = re.compile(
    r"[-+]?(?:(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?|(?:nan|inf(?:inity)?)(?![\w]))",
    re.IGNORECASE,
)
_TERM_RE = re.compile(rf"\s*(?:(?P<coef>\d+(?:\.\d*)?|\.\d+)\s*)?(?P<name>{_NAME})")
_DIRECTIVE_LIKE = re.compile(rf"\s*{_NAME}\s+{_NAME}\s*=")
_PLUS_RE = re.compile(r"\s*\+")
_REF_RE = re.compile(rf"(?P<name>{_NAME})\s*(?P<eq>=(?![=>]))?\s*")
_FIRST_WORD = re.compile(r"\s*([^\W\d]\w*)")
_ITEM_RE = re.compile(rf"(?P<name>{_NAME})\s*=\s*")
_CONSTANT_LINE = re.compile(rf"^(?P<name>{_NAME})\s*=(?![=>])")
_ARROW_RE = re.compile(r"<=>|⇌|->|→")
#: Characters an ASCII arrow is drawn with; a run of them that is not a known arrow
#: (``=>``, ``<->``, ``-->``) is reported as an unknown arrow.
_ARROW_CHARS = "<>=-~"
_BAD_ARROW_RE = re.compile(r"[<>=~-]+|[↔⇄⟶⟷←⇒⇔⇋⟵⟹⟺↦⟼⤳⇀⇁↽⇉]")
_ARRHENIUS_RE = re.compile(r"arrhenius\s*\((?P<body>.*)\)\s*$", re.IGNORECASE)


# ---------------------------------------------------------------------------
# source lines and error construction


@dataclass(slots=True)
class _Line:
    source: str
    number: int
    text: str  # the whole line as written
    code: str  # the line without its comment, right-stripped

    shown: str = ""  # the line as errors show it, made once (a line may have many errors)

    def error(self, problem: str, column: int = 0, snippet: str = "", hint: str = ""):
        if not self.shown:
            # tabs shown as one space each, so that the caret under the line stays aligned
            self.shown = self.text.replace("\t", " ")
        return SchemeError(problem, self.source, self.number, column, self.shown, snippet, hint)


def _strip_comment(text: str) -> str:
    return text.split("#", 1)[0].rstrip()


def _split_plain(text: str, offset: int) -> list[tuple[str, int]]:
    """Split at every comma; return (piece, 0-based column) pairs, stripped."""
    pieces: list[tuple[str, int]] = []
    start = 0
    for raw in text.split(","):
        lead = len(raw) - len(raw.lstrip())
        pieces.append((raw.strip(), offset + start + lead))
        start += len(raw) + 1
    return pieces


def _split_top(text: str, offset: int) -> list[tuple[str, int]]:
    """Split at commas outside parentheses; return (piece, 0-based column) pairs, stripped.

    The last piece is always returned, also when a parenthesis is left open (the
    piece then fails to parse and is reported where it stands).
    """
    if "(" not in text:  # the common case
        return _split_plain(text, offset)
    pieces: list[tuple[str, int]] = []
    depth = 0
    start = 0
    for i, ch in enumerate(text):
        if ch == "(":
            depth += 1
        elif ch == ")":
            depth = max(0, depth - 1)
        elif ch == "," and depth == 0:
            raw = text[start:i]
            lead = len(raw) - len(raw.lstrip())
            pieces.append((raw.strip(), offset + start + lead))
            start = i + 1
    raw = text[start:]
    lead = len(raw) - len(raw.lstrip())
    pieces.append((raw.strip(), offset + start + lead))
    return pieces


# ---------------------------------------------------------------------------
# values with units


@dataclass(slots=True)
class _Value:
    """A number with a unit as written, with the columns of both (1-based)."""

    number: str
    unit: str
    column: int
    unit_column: int

    @property
    def text(self) -> str:
        return f"{self.number} {self.unit}".strip()


def _read_value(
    line: _Line, text: str, column0: int, what: str, example: str, *, signed: bool = False
):
    """Read ``NUMBER [UNIT]`` starting at 0-based ``column0``; return _Value or SchemeError.

    Negative numbers are refused unless ``signed`` (temperatures in degC).
    """
    match = _NUMBER_RE.match(text)
    if not match:
        return line.error(
            f"could not read a number for {what} in {_q(text)}",
            column0 + 1,
            text or " ",
            f"write a number and a unit, e.g. {example}",
        )
    number = match.group(0)
    rest = text[match.end() :]
    unit = rest.strip()
    unit_col = column0 + match.end() + (len(rest) - len(rest.lstrip())) + 1
    if len(number) > MAX_NUMBER_LENGTH:
        return line.error(
            f"{what} is a number of {len(number):,} characters (at most {MAX_NUMBER_LENGTH})",
            column0 + 1,
            number,
            f"write it with an exponent, e.g. {example}",
        )
    value = float(number)
    if _underflows(number, value):
        return line.error(
            f"{what} is {number}, which is too small for a floating-point number (it would "
            "become 0; the smallest is about 5e-324)",
            column0 + 1,
            number,
            "check the exponent, or write 0 if you mean zero",
        )
    if math.isnan(value) or math.isinf(value):
        spelled_out = number.lstrip("+-")[:1].lower() in ("n", "i")
        return line.error(
            f"{what} is {number}, which is "
            + ("not a finite number" if spelled_out else "too large for a floating-point number"),
            column0 + 1,
            number,
            f"write a finite value, e.g. {example}",
        )
    if value < 0 and not signed:
        return line.error(
            f"{what} is negative ({number})",
            column0 + 1,
            number,
            f"this value cannot be negative; write e.g. {example}",
        )
    return _Value(number, unit, column0 + 1, unit_col)


def _unit_of(line: _Line, value: _Value, what: str, example: str):
    """Parse the unit of ``value``; return UnitSpec or SchemeError."""
    try:
        return parse_unit(value.unit)
    except ValueError as exc:
        if "=" in value.unit:
            hint = "separate the items of a list with commas, e.g. start A = 0.5 M, B = 0.1 M"
        else:
            hint = f"write a unit such as {example}"
        reason = str(exc)
        detail = "" if reason.startswith("unknown unit") else f" ({reason})"
        return line.error(
            f"unknown unit {_q(value.unit)} for {what}{detail}",
            value.unit_column,
            value.unit,
            hint,
        )


def _q(text: str) -> str:
    """A user's text quoted in a message, cut when it is long."""
    return repr(shorten(text))


def _fraction(number: str) -> Fraction:
    """The decimal ``number`` as the readers matched it, exactly (see :func:`_scaled`)."""
    return _scaled(number, Fraction(1))


def _scaled(number: str, factor: Fraction) -> Fraction:
    """The decimal ``number`` (as the readers matched it) times ``factor``, exactly.

    One rational construction instead of two (``Fraction(number) * factor``):
    this runs once per rate constant of a file.
    """
    text = number.lower()
    sign = -1 if text.startswith("-") else 1
    mantissa, _, exp_text = text.lstrip("+-").partition("e")
    whole, _, frac = mantissa.partition(".")
    digits = whole + frac
    if not digits.isdigit() or not (exp_text.lstrip("+-").isdigit() or not exp_text):
        return Fraction(number) * factor  # not a plain decimal: the general way
    if not digits.strip("0"):
        return Fraction(0)  # also 0e999999999, whose power of ten is never built
    exponent = (int(exp_text) if exp_text else 0) - len(frac)
    if abs(exponent) > 2 * MAX_NUMBER_LENGTH + 400:
        # the readers refuse numbers beyond the double range before they get here
        raise ValueError(f"{shorten(number)} is far beyond the range of a double")
    if exponent >= 0:
        return Fraction(sign * int(digits) * 10**exponent * factor.numerator, factor.denominator)
    return Fraction(sign * int(digits) * factor.numerator, 10**-exponent * factor.denominator)


def _plain_number(number: str) -> bool:
    """True for a number the readers accept as it stands: short, finite, and not a
    nonzero value that a double would round to 0."""
    if len(number) > MAX_NUMBER_LENGTH:
        return False
    value = float(number)
    return math.isfinite(value) and not _underflows(number, value)


def _underflows(number: str, value: float) -> bool:
    """True when a nonzero decimal ``number`` became the double ``value`` 0."""
    return value == 0 and any(d in "123456789" for d in number.lower().partition("e")[0])


def _exact(value: Fraction) -> float | None:
    """``float(value)``, or None when it overflows a double."""
    try:
        result = value.numerator / value.denominator  # correctly rounded, as float(value)
    except OverflowError:
        return None
    return result if math.isfinite(result) else None


# ---------------------------------------------------------------------------
# statements of the first pass


@dataclass(slots=True)
class TitleStatement:
    """``title: free text``."""

    text: str
    line: _Line

    @classmethod
    def from_line(cls, line: _Line):
        code = line.code.lstrip()
        if not re.match(r"title\s*:", code, re.IGNORECASE):
            return None
        return cls(code.split(":", 1)[1].strip(), line)  # '#' starts a comment here too


@dataclass(slots=True)
class BalanceStatement:
    """``balance: lumped`` (atom imbalance only warned about) or ``balance: strict``."""

    mode: str
    line: _Line

    @classmethod
    def from_line(cls, line: _Line):
        code = line.code.lstrip()
        if not re.match(r"balance\s*:", code, re.IGNORECASE):
            return None
        after = line.code[line.code.index(":") + 1 :]
        mode = after.strip().lower()
        if mode not in ("lumped", "strict"):
            column = line.code.index(":") + 2 + len(after) - len(after.lstrip())
            return [
                line.error(
                    f"unknown balance mode {_q(mode)}",
                    column,
                    mode or " ",
                    "write 'balance: lumped' to allow atom imbalance, or 'balance: strict'",
                )
            ]
        return cls(mode, line)


@dataclass(slots=True)
class _Item:
    name: str
    name_column: int
    value: _Value | None  # None for formulas
    formula: str = ""


@dataclass(slots=True)
class ListStatement:
    """``start``/``excess``/``feed``/``formula``/``molar_mass`` NAME = VALUE, ..."""

    kind: str
    items: tuple[_Item, ...]
    line: _Line
    declared: tuple[str, ...] = ()  # every name listed, also those with a bad value

    _EXAMPLES: ClassVar[dict[str, str]] = {
        "start": "start A = 0.5 mol/L",
        "excess": "excess W = 55 mol/L",
        "feed": "feed A = 0.01 mol/L/min",
        "formula": "formula A = C6H12O6",
        "molar_mass": "molar_mass A = 180.2 g/mol",
    }

    @classmethod
    def from_line(cls, line: _Line):
        code = line.code
        match = re.match(r"\s*(start|excess|feed|formula|molar_mass)(?=\s|$)", code)
        if not match:
            return None
        kind = match.group(1)
        example = cls._EXAMPLES[kind]
        article = "an" if kind == "excess" else "a"
        body = code[match.end() :]
        if _ARROW_RE.search(body):  # "start -> B  k1 = ...": a reaction with a keyword
            return [_keyword_error(line, kind, match.start(1), "a species")]
        if body.lstrip().startswith("="):  # "start = 0.1 1/s": a constant named so
            return [_keyword_error(line, kind, match.start(1), "a constant")]
        errors: list[SchemeError] = []
        items: list[_Item] = []
        declared: list[str] = []
        if not body.strip():
            return [
                line.error(
                    f"'{kind}' lists nothing",
                    match.start(1) + 1,
                    kind,
                    f"write e.g. {example}",
                )
            ]
        for piece, col0 in _split_plain(body, match.end()):
            m = _ITEM_RE.match(piece)
            if not piece:
                errors.append(
                    line.error(
                        f"an empty item in {article} '{kind}' statement (a comma too many?)",
                        col0 + 1,
                        " ",
                        f"write NAME = VALUE items separated by commas, e.g. {example}",
                    )
                )
                continue
            if not m:
                errors.append(
                    line.error(
                        f"could not read {_q(piece)} in {article} '{kind}' statement",
                        col0 + 1,
                        piece or " ",
                        f"write NAME = VALUE, e.g. {example}",
                    )
                )
                lead = _NAME_RE.match(piece)
                if lead:  # "excess W 55 M": W is still meant to be in excess
                    declared.append(lead.group(0))
                continue
            name = m.group("name")
            declared.append(name)
            rest = piece[m.end() :]
            rest_col0 = col0 + m.end()
            if kind == "formula":
                if not rest.strip():
                    errors.append(
                        line.error(
                            f"formula of {name} is empty",
                            rest_col0 + 1,
                            " ",
                            f"write e.g. {example}",
                        )
                    )
                    continue
                items.append(_Item(name, col0 + 1, None, rest.strip()))
                continue
            what = {
                "start": f"the start value of {name}",
                "excess": f"the excess concentration of {name}",
                "feed": f"the feed rate of {name}",
                "molar_mass": f"the molar mass of {name}",
            }[kind]
            value = _read_value(line, rest, rest_col0, what, example.split("= ", 1)[1])
            if isinstance(value, SchemeError):
                errors.append(value)
                continue
            items.append(_Item(name, col0 + 1, value))
        if not errors:
            return cls(kind, tuple(items), line, tuple(declared))
        # keep the names: an excess species with a bad value is still in excess
        return cls(kind, (), line, tuple(declared)), errors


@dataclass(slots=True)
class TemperatureStatement:
    """``temperature = 60 degC`` (kelvin or degrees Celsius)."""

    value: _Value
    line: _Line

    @classmethod
    def from_line(cls, line: _Line):
        match = re.match(r"\s*temperature\s*=\s*", line.code)
        if not match:
            return None
        value = _read_value(
            line, line.code[match.end() :], match.end(), "the temperature", "60 degC", signed=True
        )
        if isinstance(value, SchemeError):
            return [value]
        return cls(value, line)


@dataclass(slots=True)
class _ConstantSpec:
    """A rate-constant definition: a plain value or Arrhenius parameters."""

    name: str
    column: int
    value: _Value | None = None
    prefactor: _Value | None = None
    energy: _Value | None = None
    text: str = ""

    @property
    def is_arrhenius(self) -> bool:
        return self.prefactor is not None


def _read_constant(line: _Line, name: str, name_col0: int, text: str, text_col0: int):
    """Read the right-hand side of ``name = ...``; return _ConstantSpec or list of errors."""
    arr = _ARRHENIUS_RE.match(text)
    if arr:
        body = arr.group("body")
        body_col0 = text_col0 + arr.start("body")
        parts = {}
        errors = []
        for piece, col0 in _split_top(body, body_col0):
            m = re.match(r"(?P<key>\w+)\s*=\s*", piece)
            key = m.group("key") if m else ""
            if key not in ("A", "Ea"):
                errors.append(
                    line.error(
                        f"could not read {_q(piece)} in the Arrhenius parameters of {name}",
                        col0 + 1,
                        piece or " ",
                        "write arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)",
                    )
                )
                continue
            what = (
                f"the pre-exponential factor A of {name}"
                if key == "A"
                else f"the activation energy Ea of {name}"
            )
            example = "1.0e13 1/s" if key == "A" else "95 kJ/mol"
            if key in parts:
                errors.append(
                    line.error(
                        f"the Arrhenius parameters of {name} give {key} twice",
                        col0 + 1,
                        piece,
                        "give A and Ea once each: arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)",
                    )
                )
                continue
            value = _read_value(line, piece[m.end() :], col0 + m.end(), what, example)
            if isinstance(value, SchemeError):
                errors.append(value)
            else:
                parts[key] = value
        if not errors and set(parts) != {"A", "Ea"}:
            missing = " and ".join(sorted({"A", "Ea"} - set(parts)))
            errors.append(
                line.error(
                    f"the Arrhenius parameters of {name} lack {missing}",
                    text_col0 + 1,
                    text,
                    "write arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)",
                )
            )
        if errors:
            return errors
        return _ConstantSpec(
            name, name_col0 + 1, prefactor=parts["A"], energy=parts["Ea"], text=text.strip()
        )
    value = _read_value(line, text, text_col0, f"rate constant {name}", "0.12 1/min")
    if isinstance(value, SchemeError):
        return [value]
    if not value.unit:
        return [
            line.error(
                f"rate constant {name} has no unit",
                value.column,
                value.number,
                f"write its unit after the number, e.g. {name} = {value.number} 1/s",
            )
        ]
    return _ConstantSpec(name, name_col0 + 1, value=value, text=text.strip())


@dataclass(slots=True)
class ConstantStatement:
    """``k1 = 0.12 1/min`` or ``k3 = arrhenius(A = ..., Ea = ...)`` on a line of its own."""

    spec: _ConstantSpec
    line: _Line

    @classmethod
    def from_line(cls, line: _Line):
        match = _CONSTANT_LINE.match(line.code.lstrip())
        if not match or _ARROW_RE.search(line.code):
            return None
        lead = len(line.code) - len(line.code.lstrip())
        name = match.group("name")
        rest = line.code.lstrip()[match.end() :]
        rest_col0 = lead + match.end() + (len(rest) - len(rest.lstrip()))
        if "=" in rest and _TERM_RE.match(rest) and not _NUMBER_RE.match(rest.lstrip()):
            # "A = B + C  k1 = ...": a reaction written with '=' for its arrow
            if not _ARRHENIUS_RE.match(rest.strip()):
                return [_unknown_arrow(line, "=", line.code.index("=", lead))]
        spec = _read_constant(line, name, lead, rest.strip(), rest_col0)
        if isinstance(spec, list):
            return spec
        if name in _RESERVED:
            return [_keyword_error(line, name, lead, "a constant")]
        return cls(spec, line)


@dataclass(slots=True)
class _Term:
    coefficient: float
    name: str
    column: int


@dataclass(slots=True)
class _ConstantRef:
    name: str
    column: int
    spec: _ConstantSpec | None  # None when referred to by name alone


@dataclass(slots=True)
class ReactionStatement:
    """``A -> B + 2 C  k1 = ...`` or ``B <=> D  kf = ..., kr = ...``."""

    left: tuple[_Term, ...]
    right: tuple[_Term, ...]
    reversible: bool
    arrow_column: int
    constants: tuple[_ConstantRef, ...]
    line: _Line

    @classmethod
    def from_line(cls, line: _Line):
        fast = _fast_reaction(line)
        if fast is not None:
            return fast
        return cls.from_line_general(line)

    @classmethod
    def from_line_general(cls, line: _Line):
        """The reference reader of a reaction line (also every error message)."""
        code = line.code
        arrows = list(_ARROW_RE.finditer(code))
        if not arrows:
            return None
        if len(arrows) > 1:
            second = arrows[1]
            return [
                line.error(
                    "a reaction line has one arrow; this one has several",
                    second.start() + 1,
                    second.group(0),
                    "write each step on a line of its own",
                )
            ]
        for found in arrows:
            start, end = found.span()
            while start > 0 and code[start - 1] in _ARROW_CHARS:
                start -= 1
            while end < len(code) and code[end] in _ARROW_CHARS:
                end += 1
            if (start, end) != found.span():
                return [_unknown_arrow(line, code[start:end], start)]
        arrow = arrows[0]
        reversible = ARROWS[arrow.group(0)]
        errors: list[SchemeError] = []
        left = _read_terms(line, code[: arrow.start()], 0, "left")
        if isinstance(left, SchemeError):
            errors.append(left)
        else:
            left, rest = left
            if rest.strip():
                col = arrow.start() - len(rest) + (len(rest) - len(rest.lstrip())) + 1
                errors.append(
                    line.error(
                        f"could not read {_q(rest.strip())} on the left of the arrow",
                        col,
                        rest.strip(),
                        "write species joined by '+', e.g. A + W -> B",
                    )
                )
        right_text = code[arrow.end() :]
        right = _read_terms(line, right_text, arrow.end(), "right")
        if isinstance(right, SchemeError):
            errors.append(right)
            return errors
        right, rest = right
        rest_col0 = len(code) - len(rest)
        constants = _read_constant_refs(line, rest, rest_col0, reversible, arrow)
        if isinstance(constants, list) and constants and isinstance(constants[0], SchemeError):
            errors.extend(constants)
        if errors:
            return errors
        return cls(tuple(left), tuple(right), reversible, arrow.start() + 1, constants, line)


# A fast reader for the plain reaction lines that make up large files.  It accepts
# a subset of what the general reader accepts and returns the very same
# statement (tests compare the two on generated lines); anything else (errors
# included) goes to the general reader.
_COEF = r"(?:\d+(?:\.\d*)?|\.\d+)"
_SIDE = rf"(?:{_COEF}\s*)?{_NAME}(?:\s*\+\s*(?:{_COEF}\s*)?{_NAME})*"
_PLAIN_NUMBER = r"(?>(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)"  # atomic, as the general reader
_PLAIN_UNIT = r"[^\s,=()<>→⇌][^,=()<>→⇌]*?"


def _ref_pattern(tag: str) -> str:
    return (
        rf"(?P<{tag}>{_NAME})(?:\s*=\s*(?P<{tag}n>{_PLAIN_NUMBER})\s*"
        rf"(?P<{tag}u>{_PLAIN_UNIT}))?"
    )


_FAST_REACTION = re.compile(
    rf"\s*(?P<left>{_SIDE})\s*(?P<arrow>->|→|<=>|⇌)\s*(?P<right>{_SIDE})"
    rf"\s+{_ref_pattern('a')}(?:\s*,\s*{_ref_pattern('b')})?\s*$"
)


def _fast_terms(code: str, start: int, end: int):
    terms = []
    for m in _TERM_RE.finditer(code, start, end):
        coef, name = m.group(1, 2)
        if name in _RESERVED:
            return None
        if coef is None:
            terms.append(_Term(1.0, name, m.start(2) + 1))
            continue
        coefficient = float(coef)
        if not (coefficient > 0 and _plain_number(coef)):
            return None  # the general reader words the message
        terms.append(_Term(coefficient, name, m.start(2) + 1))
    return tuple(terms)


def _fast_ref(code: str, m, name_group: int):
    """The constant reference in groups ``name_group`` (name), +1 (number), +2 (unit)."""
    name, number, unit = m.group(name_group, name_group + 1, name_group + 2)
    if name in _RESERVED:
        return None
    column = m.start(name_group) + 1
    if number is None:
        return _ConstantRef(name, column, None)
    if not _plain_number(number):
        return None  # the general reader words the message
    number_at, unit_at = m.start(name_group + 1), m.start(name_group + 2)
    value = _Value(number, unit, number_at + 1, unit_at + 1)
    spec = _ConstantSpec(name, column, value, None, None, code[number_at : m.end(name_group + 2)])
    return _ConstantRef(name, column, spec)


_LEFT, _ARROW, _RIGHT = (_FAST_REACTION.groupindex[g] for g in ("left", "arrow", "right"))
_REF_A, _REF_B = _FAST_REACTION.groupindex["a"], _FAST_REACTION.groupindex["b"]


def _fast_reaction(line: _Line):
    """The statement of a plain reaction line, or None to use the general reader."""
    code = line.code
    m = _FAST_REACTION.match(code)
    if m is None:
        return None
    reversible = ARROWS[m.group(_ARROW)]
    if reversible != (m.group(_REF_B) is not None):
        return None
    left = _fast_terms(code, m.start(_LEFT), m.end(_LEFT))
    right = _fast_terms(code, m.start(_RIGHT), m.end(_RIGHT))
    if left is None or right is None:
        return None
    first = _fast_ref(code, m, _REF_A)
    if first is None:
        return None
    if reversible:
        second = _fast_ref(code, m, _REF_B)
        if second is None:
            return None
        refs = (first, second)
    else:
        refs = (first,)
    return ReactionStatement(left, right, reversible, m.start(_ARROW) + 1, refs, line)


def _read_terms(line: _Line, text: str, offset: int, side: str):
    """Read ``[coef] NAME (+ [coef] NAME)*``; return (terms, rest) or SchemeError."""
    terms: list[_Term] = []
    pos = 0
    while True:
        match = _TERM_RE.match(text, pos)
        if not match:
            snippet = text[pos:].strip() or " "
            column = offset + pos + (len(text[pos:]) - len(text[pos:].lstrip())) + 1
            if side == "left":
                hint = "write one species (plus co-reactants in excess), e.g. A -> B"
            else:
                hint = "write products joined by '+', e.g. A -> B + 2 C"
            if not text[pos:].strip():
                where = "after '+'" if terms else "here"
                problem = f"expected a species name {where} on the {side} of the arrow"
            else:
                problem = f"expected a species name on the {side} of the arrow, found {_q(snippet)}"
            return line.error(problem, column, snippet, hint)
        coef_text = match.group("coef")
        coefficient = float(coef_text) if coef_text else 1.0
        name = match.group("name")
        column = offset + match.start("name") + 1
        if coef_text is not None and coefficient <= 0:
            return line.error(
                f"stoichiometric coefficient of {name} is {coef_text}",
                offset + match.start("coef") + 1,
                coef_text,
                "coefficients are positive numbers; leave out a species that does not take part",
            )
        if coef_text is not None and not _plain_number(coef_text):
            return line.error(
                f"stoichiometric coefficient of {name} is {_q(coef_text)}, which is too large "
                "to count molecules",
                offset + match.start("coef") + 1,
                coef_text,
                "write a coefficient such as 2 or 0.5",
            )
        if name in _RESERVED:
            return _keyword_error(line, name, column - 1, "a species")
        terms.append(_Term(coefficient, name, column))
        pos = match.end()
        plus = _PLUS_RE.match(text, pos)
        if plus:
            pos = plus.end()
            continue
        return terms, text[pos:]


def _read_constant_refs(line: _Line, text: str, offset: int, reversible: bool, arrow):
    """Read the constants after the products: ``k1``, ``k1 = ...``, ``kf = ..., kr = ...``."""
    needed = 2 if reversible else 1
    example = "kf = 2.0e-3 1/s, kr = 5.0e-4 1/s" if reversible else "k1 = 0.12 1/min"
    if not text.strip():
        return [
            line.error(
                "this reaction has no rate constant"
                + (" (a reversible step needs two)" if reversible else ""),
                len(line.code) + 1,
                " ",
                f"write it after the products, e.g. {example}",
            )
        ]
    pieces = _split_top(text, offset)
    errors: list[SchemeError] = []
    refs: list[_ConstantRef] = []
    for piece, col0 in pieces:
        m = _REF_RE.match(piece)
        if not m or (not m.group("eq") and m.end() != len(piece)):
            bad = re.match(r"\S+", piece)
            snippet = bad.group(0) if bad else piece or " "
            hint = f"name the constant and give its value, e.g. {example}"
            problem = f"could not read the rate constant {_q(piece)}"
            if m and not m.group("eq"):
                problem = f"unexpected text after {_q(m.group('name'))}: {_q(piece[m.end() :])}"
                hint = (
                    "join products with '+' (A -> B + C) and write the constant as NAME or "
                    "NAME = VALUE UNIT"
                )
                snippet = piece[m.end() :].split()[0]
                col0 = col0 + m.end()
            errors.append(line.error(problem, col0 + 1, snippet, hint))
            continue
        name = m.group("name")
        if name in _RESERVED:
            errors.append(_keyword_error(line, name, col0, "a constant"))
            continue
        if m.group("eq"):
            rest = piece[m.end() :]
            spec = _read_constant(line, name, col0, rest, col0 + m.end())
            if isinstance(spec, list):
                errors.extend(spec)
                continue
            refs.append(_ConstantRef(name, col0 + 1, spec))
        else:
            refs.append(_ConstantRef(name, col0 + 1, None))
    if errors:
        return errors
    if len(refs) != needed:
        if reversible:
            problem = (
                f"a reversible step needs two rate constants (forward, then reverse); "
                f"found {len(refs)}"
            )
        else:
            problem = f"an irreversible step has one rate constant; found {len(refs)}"
            if arrow is not None and len(refs) == 2:
                problem += " (did you mean the reversible arrow <=>?)"
        return [line.error(problem, refs[0].column, text.strip(), f"write e.g. {example}")]
    return tuple(refs)


_STATEMENTS = (
    TitleStatement,
    BalanceStatement,
    TemperatureStatement,
    ListStatement,
    ReactionStatement,
    ConstantStatement,
)


#: A line whose first word is no keyword can only be a reaction or a constant
#: (the other statements start with their keyword): a speed-up for large files.
_KEYWORD_STARTS = {"title", "balance", "temperature", *ListStatement._EXAMPLES}
_NAME_STARTS = (ReactionStatement, ConstantStatement)


def _keyword_error(line: _Line, name: str, column0: int, what: str) -> SchemeError:
    """The one message for a keyword used as the name of a species or a constant."""
    return line.error(
        f"'{name}' is a keyword of the scheme language and cannot name {what}",
        column0 + 1,
        name,
        "choose another name, e.g. k1" if what == "a constant" else "choose another name",
    )


def _unknown_arrow(line: _Line, arrow: str, column0: int) -> SchemeError:
    return line.error(
        f"unknown arrow {_q(arrow)}",
        column0 + 1,
        arrow,
        "write -> (or →) for an irreversible step and <=> (or ⇌) for a reversible one",
    )


_WHAT_LISTED = {
    "start": "a start value",
    "excess": "an excess concentration",
    "feed": "a feed",
    "formula": "a formula",
    "molar_mass": "a molar mass",
}
#: An example of each statement that starts with a keyword (used in hints).
_EXAMPLES = {
    "title": "title: Hydrolysis of an ester",
    "balance": "balance: lumped",
    "start": "start A = 0.5 mol/L",
    "excess": "excess W = 55 mol/L",
    "feed": "feed A = 0.01 mol/L/min",
    "formula": "formula A = C6H12O6",
    "molar_mass": "molar_mass A = 180.2 g/mol",
    "temperature": "temperature = 60 degC",
}


def _unknown_statement(line: _Line) -> SchemeError:
    code = line.code
    lead = len(code) - len(code.lstrip())
    # Something that looks like a reaction with a wrong arrow?
    terms = _read_terms(line, code, 0, "left")
    if not isinstance(terms, SchemeError):
        _, rest = terms
        bad = _BAD_ARROW_RE.match(rest.lstrip())
        column0 = len(code) - len(rest) + (len(rest) - len(rest.lstrip()))
        if bad:
            return _unknown_arrow(line, bad.group(0), column0)
        if rest.strip() and not _DIRECTIVE_LIKE.match(code):
            word = re.match(r"\S+", rest.lstrip()).group(0)
            return line.error(
                f"could not read this line: expected an arrow before {_q(word)}",
                column0 + 1,
                word,
                "a reaction reads A -> B + 2 C  k1 = 0.1 1/s (or <=> for a reversible step)",
            )
    word = re.match(r"[^\s:=]+|\S+", code[lead:])
    snippet = word.group(0) if word else code.strip()
    hint = (
        "a line is a reaction (A -> B  k1 = 0.1 1/s), a constant (k1 = 0.1 1/s) or one of "
        "title:, start, excess, feed, formula, molar_mass, temperature =, balance:"
    )
    if snippet in _EXAMPLES:
        return line.error(
            f"could not read this '{snippet}' statement",
            lead + 1,
            snippet,
            f"write e.g. {_EXAMPLES[snippet]}",
        )
    close = difflib.get_close_matches(snippet.lower(), list(_EXAMPLES), n=1, cutoff=0.7)
    if close:
        hint = f"did you mean '{close[0]}'? ({_EXAMPLES[close[0]]})"
    return line.error(
        f"could not read this line (unknown statement {_q(snippet)})", lead + 1, snippet, hint
    )


#: Control characters that never occur in a text file (tab, form feed, vertical tab and
#: line ends aside, which count as white space).
_CONTROL_RE = re.compile(r"[\x00-\x08\x0e-\x1f\x7f]")


def _unreadable_line(source: str, number: int, raw: str) -> SchemeError:
    """The error for a line refused before it is parsed: too long, or not text."""
    if len(raw) > MAX_LINE_LENGTH:
        return SchemeError(
            f"this line has {len(raw):,} characters; a line may have at most {MAX_LINE_LENGTH:,}",
            source,
            number,
            1,
            raw[:MAX_SHOWN_LINE] + "…",
            raw[:1],
            "write one statement per line (is this a scheme file?)",
        )
    bad = _CONTROL_RE.search(raw)
    return SchemeError(
        f"this line contains the control character U+{ord(bad.group(0)):04X}, which a "
        "scheme file never holds",
        source,
        number,
        bad.start() + 1,
        _CONTROL_RE.sub(" ", raw),
        " ",
        "save the scheme as plain UTF-8 text (is this a scheme file?)",
    )


@dataclass(slots=True)
class _Failures:
    """What the lines that failed to read would have said: the words on them and the
    kinds of statement they were.  The second pass reports no follow-on errors about
    these (a species of a broken reaction line "occurs in no reaction"; an Arrhenius
    constant "needs a temperature" when the temperature line is broken)."""

    names: set[str]
    kinds: set[type]

    def note(self, kind: type | None, code: str) -> None:
        self.names.update(_NAME_RE.findall(code[:MAX_LINE_LENGTH]))
        if kind is not None:
            self.kinds.add(kind)


def _read_statements(text: str, source: str, failures: _Failures):
    statements = []
    errors: list[SchemeError] = []
    if text.startswith("\ufeff"):  # a byte-order mark left by some editors
        text = text[1:]
    if "\r" in text:  # lines end at "\n", "\r\n" or a lone "\r", as editors count them
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    for number, raw in enumerate(text.split("\n"), start=1):
        if len(raw) > MAX_LINE_LENGTH or _CONTROL_RE.search(raw):
            errors.append(_unreadable_line(source, number, raw))
            failures.note(None, raw)
            continue
        code = raw.split("#", 1)[0].rstrip() if "#" in raw else raw.rstrip()
        if not code or code.isspace():
            continue
        line = _Line(source, number, raw, code)
        first = _FIRST_WORD.match(code)
        if first is None or first.group(1).lower() in _KEYWORD_STARTS:
            kinds = _STATEMENTS
        else:
            fast = _fast_reaction(line)  # most lines of a large file
            if fast is not None:
                statements.append(fast)
                continue
            kinds = _NAME_STARTS
        for kind in kinds:
            result = kind.from_line(line)
            if result is None:
                continue
            if isinstance(result, list):
                errors.extend(result)
                failures.note(kind, code)
            elif isinstance(result, tuple):  # a statement kept despite some errors
                statements.append(result[0])
                errors.extend(result[1])
            else:
                statements.append(result)
            break
        else:
            errors.append(_unknown_statement(line))
            failures.note(None, code)
    return statements, errors


# ---------------------------------------------------------------------------
# second pass


def _did_you_mean(name: str, candidates) -> str:
    close = difflib.get_close_matches(name, list(candidates), n=1, cutoff=0.6)
    return f"did you mean {close[0]}?" if close else ""


#: Unit of each kind when a feed is written in a form whose concentration part
#: cannot be cut out (``mol/(L*min)``), with its exact factor to SI.
_FAMILY_UNITS = {
    ("amount", "volume"): ("mol/L", Fraction(1000)),
    ("amount", "absolute"): ("mol", Fraction(1)),
    ("amount", "soil"): ("mol/kg", Fraction(1)),
    ("mass", "volume"): ("g/L", Fraction(1)),
    ("mass", "absolute"): ("g", Fraction(1, 1000)),
    ("mass", "soil"): ("g/kg", Fraction(1, 1000)),
    ("number", "ratio"): ("1", Fraction(1)),
}
_DEFAULT_KIND = Kind("amount", "volume", Fraction(1000))


class _Builder:
    """Second pass: resolve names, units, orders and balance across the file."""

    def __init__(self, statements, errors, source, text, strict_balance, failures=None):
        self.statements = statements
        self.failures = failures or _Failures(set(), set())
        self.errors: list[SchemeError] = errors
        self.source = source
        self.text = text
        self.strict_balance = strict_balance
        self._orders_ok: set = set()  # (order, unit, co-reactants) found consistent
        self._suggestions_left = 50  # "did you mean" costs a scan of all names
        self.warnings: list[str] = []

    def error(self, line: _Line, problem, column=0, snippet="", hint=""):
        self.errors.append(line.error(problem, column, snippet, hint))

    def warn(self, line: _Line | None, sentence: str) -> None:
        """A probable mistake that does not stop the file (``Scheme.warnings``)."""
        where = f"{self.source}:{line.number}" if line is not None else self.source
        self.warnings.append(f"{where}: {sentence}")

    # -- whole-file checks -------------------------------------------------------
    def _repeated_steps(self, steps, reactions) -> None:
        """A step written twice with one constant is an error; with two, a warning.

        Steps are compared by what they do (:attr:`Step.key`), so ``A -> B + C`` and
        ``A -> C + B`` are the same step; the rates of parallel steps add up.
        """
        first: dict[tuple, Step] = {}
        told: set[tuple[int, int]] = set()
        for step in steps:
            seen = first.setdefault(step.key, step)
            if seen is step:
                continue
            pair = (seen.reaction, step.reaction)
            if pair in told:
                continue  # the reverse step of a reversible line repeated
            told.add(pair)
            earlier, r = reactions[seen.reaction].line.number, reactions[step.reaction]
            if seen.constant == step.constant:
                self.error(
                    r.line,
                    f"the step {step.equation} with {step.constant} is written twice "
                    f"(lines {earlier} and {r.line.number}); its rate would count twice",
                    r.arrow_column,
                    "<=>" if r.reversible else "->",
                    "remove one of the two lines",
                )
            else:
                self.warn(
                    r.line,
                    f"the step {step.equation} also occurs on line {earlier}: parallel "
                    f"steps, their constants add up ({seen.constant} + {step.constant})",
                )

    def _unused_constants(self, st, constants, reactions) -> None:
        used = {ref.name for r in reactions for ref in r.constants}
        for s in st:
            if isinstance(s, ConstantStatement) and s.spec.name not in used:
                self.warn(
                    s.line,
                    f"rate constant {s.spec.name} is defined but no reaction uses it "
                    "(a misspelt name?)",
                )

    def _nothing_to_start(self, values, lists, reactions) -> None:
        """Say so when every concentration stays 0 (no start value above 0, no feed)."""
        start, feed = values["start"][0], values["feed"][0]
        if any(v > 0 for v in start.values()) or any(v > 0 for v in feed.values()):
            return
        starts = [s for s in lists if s.kind == "start"]
        if starts:
            self.warn(
                starts[0].line,
                "every start value is 0 and nothing is fed: all concentrations stay 0",
            )
        else:
            self.warn(
                None,
                "the file has no start line, so every species starts at 0 and all "
                "concentrations stay 0; add e.g. start "
                f"{reactions[0].left[0].name} = 1 mol/L",
            )

    def _did_you_mean(self, name: str, candidates) -> str:
        """A suggestion for the first few misspelt names only (each costs a scan)."""
        if self._suggestions_left <= 0:
            return ""
        self._suggestions_left -= 1
        return _did_you_mean(name, candidates)

    def build(self) -> Scheme:
        st = self.statements
        reactions = [s for s in st if isinstance(s, ReactionStatement)]
        lists = [s for s in st if isinstance(s, ListStatement)]
        title = self._single(st, TitleStatement, "title", "text", "")
        balance_mode = self._single(st, BalanceStatement, "balance mode", "mode", "strict")
        allow_imbalance = balance_mode == "lumped" or not self.strict_balance

        if not reactions and not self.errors:
            if not self.text.strip() or not st:
                problem = "the scheme is empty"
            else:
                problem = "the scheme has no reactions"
            self.errors.append(
                SchemeError(
                    problem,
                    self.source,
                    0,
                    0,
                    "",
                    "",
                    "write at least one reaction, e.g. A -> B    k1 = 0.1 1/min",
                )
            )
            raise SchemeErrors(self.errors)

        excess_items = {}
        excess_names = set()
        for s in lists:
            if s.kind == "excess":
                excess_names.update(s.declared)
                for item in s.items:
                    excess_items.setdefault(item.name, (item, s.line))
        self.excess_dims = {}  # of the amount each excess value stands for
        for name, (item, _) in excess_items.items():
            try:
                kind = kind_of(item.value.unit)
                self.excess_dims[name] = (
                    kind.amount_dims if kind else parse_unit(item.value.unit).dims
                )
            except ValueError:
                pass  # reported with the excess statement

        # species in order of first appearance
        order: dict[str, _Line] = {}
        for r in reactions:
            for term in r.left:
                if term.name not in order:
                    order[term.name] = r.line
            for term in r.right:
                if term.name not in order:
                    order[term.name] = r.line
        all_species = list(order)

        temperature = self._temperature(st)
        self._temperature_failed = temperature is None and (
            TemperatureStatement in self.failures.kinds
            or any(isinstance(s, TemperatureStatement) for s in st)
        )
        conc_unit, unit_factor, family, family_origin, written = self._concentration_unit(lists)
        self.conc_unit, self.family = conc_unit, family
        values = self._lists(lists, order, excess_names, family, unit_factor, family_origin)
        excess_values, excess_si = values["excess"]

        constants = self._constants(st, reactions, temperature)
        reaction_objs, steps = self._reactions(reactions, excess_names, constants, excess_si)

        species_objs, excess_objs = self._species(all_species, excess_names, order, values)
        self._convert_masses(values, species_objs + excess_objs, unit_factor)
        self._balance(reaction_objs, species_objs + excess_objs, allow_imbalance, reactions)
        self._repeated_steps(steps, reactions)
        if self.errors:
            raise SchemeErrors(self.errors)
        self._unused_constants(st, constants, reactions)
        self._nothing_to_start(values, lists, reactions)
        scheme = Scheme(
            species=tuple(species_objs),
            excess_species=tuple(excess_objs),
            reactions=tuple(reaction_objs),
            steps=tuple(steps),
            constants=constants,
            initial=values["start"][0],
            excess=excess_values,
            feed=values["feed"][0],
            temperature=temperature,
            concentration_unit=conc_unit,
            written_unit=written,
            title=title,
            source=self.source,
            text=self.text,
            allow_imbalance=allow_imbalance,
            warnings=tuple(self.warnings),
            _excess_si=excess_si,
            _unit_factor=unit_factor,
        )
        self._check_rates(scheme, reactions)
        if self.errors:
            raise SchemeErrors(self.errors)
        return scheme

    def _single(self, st, kind, what, attribute, default):
        """The value of a statement that may occur once (title, balance mode)."""
        found = [s for s in st if isinstance(s, kind)]
        for extra in found[1:]:
            self.error(
                extra.line,
                f"the {what} is given twice (first on line {found[0].line.number})",
                len(extra.line.code) - len(extra.line.code.lstrip()) + 1,
                extra.line.code.strip(),
                f"keep one {what} line",
            )
        return getattr(found[0], attribute) if found else default

    def _check_rates(self, scheme: Scheme, reactions) -> None:
        """Every effective rate constant must be a finite double, and not a nonzero
        product that rounds to 0 (underflow)."""
        rates = scheme.rates
        bad = np.flatnonzero(~np.isfinite(rates) | (rates == 0))
        reported = set()
        for index in bad:
            step = scheme.steps[index]
            statement = reactions[step.reaction]
            if step.reaction in reported:
                continue
            if rates[index] == 0:
                constant = scheme.constants[step.constant]
                nominal = (
                    constant.value_si != 0
                    if constant.arrhenius is None
                    else constant.arrhenius.prefactor_si != 0
                )
                if not nominal or any(scheme.excess[n] == 0 for _, n in step.co_reactants):
                    continue  # a constant or an excess concentration written as 0
                what = "underflows to 0 (it is below 5e-324 1/s)"
            else:
                what = f"overflows (it is beyond {sys.float_info.max:.3g} 1/s)"
            reported.add(step.reaction)
            ref = statement.constants[0 if step.direction == "forward" else 1]
            self.error(
                statement.line,
                f"the effective rate constant of {step.equation} {what}",
                ref.column,
                ref.name,
                "check the value and unit of the constant and of the excess concentrations",
            )

    # -- temperature ---------------------------------------------------------
    def _temperature(self, st):
        temps = [s for s in st if isinstance(s, TemperatureStatement)]
        if not temps:
            return None
        for extra in temps[1:]:
            self.error(
                extra.line,
                f"the temperature is set twice (first on line {temps[0].line.number})",
                extra.value.column,
                extra.value.text,
                "keep one temperature statement; sweep temperatures with 'kinetics sweep'",
            )
        value = temps[0].value
        line = temps[0].line
        if not value.unit:
            self.error(
                line,
                f"the temperature {value.number} has no unit",
                value.column,
                value.number,
                f"write it in K or degC, e.g. temperature = {value.number} K",
            )
            return None
        try:
            kelvin = temperature_to_kelvin(_fraction(value.number), value.unit)
        except ValueError:
            self.error(
                line,
                f"the temperature is given in {_q(value.unit)}, which is not a temperature unit",
                value.unit_column,
                value.unit,
                "write the temperature in K or degC, e.g. temperature = 60 degC",
            )
            return None
        if not kelvin > 0:
            self.error(
                line,
                f"the temperature {value.text} is at or below absolute zero",
                value.column,
                value.text,
                "write a temperature above 0 K, e.g. temperature = 25 degC",
            )
            return None
        return kelvin

    # -- concentrations --------------------------------------------------------
    def _concentration_unit(self, lists):
        """Pick the scheme's concentration unit: the unit of the first start value.

        Without start values, the first excess concentration, then the first feed
        (its concentration part) decides; without any, ``mol/L``.  Values in mass
        units are kept as amounts: the scheme's unit is then the amount twin of the
        mass unit (``mg/L`` -> ``mmol/L``, :func:`kinetics.amounts.amount_unit`).
        Returns the unit, its exact factor to SI, the :class:`~kinetics.amounts.Kind`
        of the first value, where it came from (for the message when another value
        does not fit) and the unit as written (the default unit of outputs).
        """
        for kind in ("start", "excess", "feed"):
            for s in lists:
                if s.kind != kind:
                    continue
                for item in s.items:
                    try:
                        found = kind_of(item.value.unit, per_time=kind == "feed")
                    except ValueError:
                        continue  # reported when the item itself is checked
                    if found is None:
                        continue
                    origin = f"{kind} {item.name} = {item.value.text} on line {s.line.number}"
                    unit, factor = self._written_unit(item.value.unit, kind, found)
                    if found.substance == "mass":
                        return (*amount_unit(kind_of(unit)), found, origin, unit)
                    return unit, factor, found, origin, unit
        return "mol/L", Fraction(1000), _DEFAULT_KIND, "", "mol/L"

    @staticmethod
    def _written_unit(text: str, kind: str, found: Kind) -> tuple[str, Fraction]:
        """The concentration unit a value was written in, and its SI factor (a feed
        in ``mol/L/min`` was written in ``mol/L``)."""
        if kind != "feed":
            unit = pint_text(text) if text else "1"
            return unit, (found.factor if text else Fraction(1))
        unit = _concentration_part(text)
        try:
            part = kind_of(unit) if unit else None
        except ValueError:
            part = None
        if part is None or (part.substance, part.basis) != (found.substance, found.basis):
            return _FAMILY_UNITS[(found.substance, found.basis)]
        return pint_text(unit), part.factor

    def _lists(self, lists, order, excess_names, family, unit_factor, family_origin):
        out = {kind: ({}, {}) for kind in ("start", "excess", "feed", "formula", "molar_mass")}
        self._masses_to_convert: list = []
        seen: dict[tuple[str, str], int] = {}
        for s in lists:
            for item in s.items:
                if item.name not in order:
                    if item.name in self.failures.names:
                        continue  # on a line that failed to read: that error is the cause
                    hint = self._did_you_mean(item.name, order) or (
                        "a species must take part in a reaction before it can be given "
                        + _WHAT_LISTED[s.kind]
                    )
                    self.error(
                        s.line,
                        f"{item.name} occurs in no reaction",
                        item.name_column,
                        item.name,
                        hint,
                    )
                    continue
                if s.kind in ("start", "feed") and item.name in excess_names:
                    self.error(
                        s.line,
                        f"{item.name} is held in excess (constant), so it has no "
                        f"{'start value' if s.kind == 'start' else 'feed'}",
                        item.name_column,
                        item.name,
                        f"give its constant concentration once: excess {item.name} = "
                        f"{item.value.text}",
                    )
                    continue
                key = (s.kind, item.name)
                if key in seen:
                    self.error(
                        s.line,
                        f"{s.kind.replace('_', ' ')} of {item.name} is given twice "
                        f"(first on line {seen[key]})",
                        item.name_column,
                        item.name,
                        "give each value once",
                    )
                    continue
                seen[key] = s.line.number
                if s.kind == "formula":
                    out["formula"][0][item.name] = item.formula
                    out["formula"][1][item.name] = (item, s.line)
                    continue
                v = item.value
                if s.kind == "molar_mass":
                    spec = _unit_of(s.line, v, f"the molar mass of {item.name}", "g/mol")
                    if isinstance(spec, SchemeError):
                        self.errors.append(spec)
                        continue
                    if spec.dims != {"[mass]": 1, "[substance]": -1}:
                        self.error(
                            s.line,
                            f"the molar mass of {item.name} is {v.text}, "
                            f"which is {describe_dimension(spec.dims)}, not a molar mass",
                            v.unit_column if v.unit else v.column,
                            v.unit or v.number,
                            "write a molar mass such as 180.2 g/mol",
                        )
                        continue
                    grams = _exact(_scaled(v.number, spec.factor * 1000))
                    if grams is None or grams == 0:
                        self.error(
                            s.line,
                            f"the molar mass of {item.name} is {v.text}, which is "
                            + ("zero" if grams == 0 else "too large"),
                            v.column,
                            v.text,
                            "write a molar mass such as 180.2 g/mol",
                        )
                        continue
                    out["molar_mass"][0][item.name] = grams
                    continue
                example = "mol/L" if s.kind != "feed" else "mol/L/min"
                spec = _unit_of(s.line, v, f"{s.kind} {item.name}", example)
                if isinstance(spec, SchemeError):
                    self.errors.append(spec)
                    continue
                kind = kind_of(v.unit, per_time=s.kind == "feed")
                if kind is None or kind.basis != family.basis:
                    self.errors.append(self._family_error(s, item, spec, kind, family_origin))
                    continue
                si = _scaled(v.number, spec.factor)
                if kind.substance == "mass":  # an amount once the molar masses are known
                    self._masses_to_convert.append((s, item, si))
                    out[s.kind][1][item.name] = None
                    continue
                value = _exact(si / unit_factor)
                if not value and si:
                    size = "too large" if value is None else "too small"
                    self.error(
                        s.line,
                        f"{s.kind} {item.name} = {v.text} is {size} in {self.conc_unit}"
                        + ("" if value is None else " (it would become 0)"),
                        v.column,
                        v.text,
                        "check the value and its unit",
                    )
                    continue
                out[s.kind][0][item.name] = value
                out[s.kind][1][item.name] = si
        return out

    def _convert_masses(self, values, species, unit_factor) -> None:
        """Turn the values written as masses into amounts: n = m / M (M in g/mol)."""
        masses = {sp.name: sp.molar_mass for sp in species}
        for s, item, si in self._masses_to_convert:
            v = item.value
            grams = masses.get(item.name)
            if grams is None:
                what = {"start": "start value", "excess": "excess value", "feed": "feed"}
                self.error(
                    s.line,
                    f"the {what[s.kind]} of {item.name} is a mass ({v.text}); the scheme "
                    f"counts molecules, and {item.name} has no molar mass to convert it",
                    item.name_column,
                    item.name,
                    f"give its formula (formula {item.name} = ...) or its molar mass "
                    f"(molar_mass {item.name} = ... g/mol), or write the value as an amount "
                    f"({self.conc_unit})",
                )
                continue
            amount = si * 1000 / Fraction(grams)  # kg / (kg/mol) -> mol, per basis
            value = _exact(amount / unit_factor)
            if not value and amount:
                self.error(
                    s.line,
                    f"{s.kind} {item.name} = {v.text} is too "
                    + ("large" if value is None else "small")
                    + f" in {self.conc_unit}"
                    + ("" if value is None else " (it would become 0)"),
                    v.column,
                    v.text,
                    "check the value and its unit",
                )
                continue
            values[s.kind][0][item.name] = value
            values[s.kind][1][item.name] = amount

    def _family_error(self, s, item, spec, kind, family_origin):
        v = item.value
        family = self.family
        what = describe_dimension(spec.dims)
        col = v.unit_column if v.unit else v.column
        snippet = v.unit or v.number
        example = {"start": "0.5 mol/L", "excess": "55 mol/L", "feed": "0.01 mol/L/min"}[s.kind]
        if kind is not None:
            origin = f" ({family_origin})" if family_origin else ""
            if s.kind == "feed":
                problem = (
                    f"the feed of {item.name} is {v.text}, a feed of {kind.plural}, but "
                    f"this file gives {family.plural}{origin}"
                )
            elif not v.unit:
                problem = (
                    f"{s.kind} {item.name} = {v.number} has no unit, but this file gives "
                    f"{family.plural}{origin}"
                )
            else:
                problem = (
                    f"{s.kind} {item.name} = {v.text} is {kind.article} {kind.name}, but this "
                    f"file gives {family.plural}{origin}"
                )
            if {kind.name, family.name} == {"amount", "concentration"}:
                hint = (
                    "amounts (mol) and concentrations (mol/L) may not be mixed in one file; "
                    f"write every value as {family.article} {family.name}"
                )
            elif "number" not in (kind.substance, family.substance):
                hint = (
                    "values per volume, per mass of soil and absolute amounts may not be "
                    f"mixed in one file; write every value as {family.article} {family.name}"
                    + (" (amounts and masses of one kind may be mixed)")
                )
            else:
                hint = f"write every value in one kind of unit, e.g. {example}"
            return s.line.error(problem, col, snippet, hint)
        if s.kind == "feed":
            return s.line.error(
                f"the feed of {item.name} is {v.text}, which is {what}, not a rate of input "
                "(concentration per time)",
                col,
                snippet,
                f"write e.g. feed {item.name} = {example}",
            )
        return s.line.error(
            f"{s.kind} {item.name} = {v.text} is {what}, not a concentration",
            col,
            snippet,
            f"write a concentration such as {example} (or an amount in mol)",
        )

    # -- rate constants ------------------------------------------------------
    def _constants(self, st, reactions, temperature):
        specs: list[tuple[_ConstantSpec, _Line]] = []
        for s in st:
            if isinstance(s, ConstantStatement):
                specs.append((s.spec, s.line))
            elif isinstance(s, ReactionStatement):
                for ref in s.constants:
                    if ref.spec is not None:
                        specs.append((ref.spec, s.line))
        constants: dict[str, RateConstant] = {}
        first_line: dict[str, int] = {}
        for spec, line in specs:
            constant = _plain_constant(spec, line)  # the common case, quickly
            if constant is None:
                constant = self._constant(spec, line, temperature)  # and every message
            if constant is None:
                continue
            if spec.name in constants:
                old = constants[spec.name]
                same = (old.value_si, old.arrhenius and old.arrhenius.prefactor_si) == (
                    constant.value_si,
                    constant.arrhenius and constant.arrhenius.prefactor_si,
                ) and (
                    (old.arrhenius is None) == (constant.arrhenius is None)
                    and (
                        old.arrhenius is None
                        or old.arrhenius.activation_energy == constant.arrhenius.activation_energy
                    )
                )
                if not same:
                    self.error(
                        line,
                        f"rate constant {spec.name} is defined twice with different values "
                        f"({old.text} on line {first_line[spec.name]}, {constant.text} here)",
                        spec.column,
                        spec.name,
                        f"give each constant one value, or refer to it by name alone: {spec.name}",
                    )
                continue
            constants[spec.name] = constant
            first_line[spec.name] = line.number
        # references to undefined constants
        defined = {spec.name for spec, _ in specs}
        for r in reactions:
            for ref in r.constants:
                if ref.spec is None and ref.name not in constants:
                    if ref.name in defined or ref.name in self.failures.names:
                        continue  # its definition had an error, already reported
                    hint = self._did_you_mean(ref.name, constants)
                    hint = hint or (
                        f"define it, e.g. {ref.name} = 0.1 1/s on a line of its own or on the "
                        "reaction line"
                    )
                    self.error(
                        r.line,
                        f"rate constant {ref.name} is used but never defined",
                        ref.column,
                        ref.name,
                        hint,
                    )
        return constants

    def _constant(self, spec: _ConstantSpec, line: _Line, temperature):
        if spec.is_arrhenius:
            a, ea = spec.prefactor, spec.energy
            a_unit = _unit_of(line, a, f"the pre-exponential factor of {spec.name}", "1/s")
            e_unit = _unit_of(line, ea, f"the activation energy of {spec.name}", "kJ/mol")
            ok = True
            for u in (a_unit, e_unit):
                if isinstance(u, SchemeError):
                    self.errors.append(u)
                    ok = False
            if not ok:
                return None
            order = concentration_order(a_unit.dims)
            if order is None:
                self.error(
                    line,
                    f"the pre-exponential factor of {spec.name} is {a.text}, which is "
                    f"{describe_dimension(a_unit.dims)}, not a rate constant",
                    a.unit_column if a.unit else a.column,
                    a.unit or a.number,
                    "give A in the units of the rate constant, e.g. A = 1.0e13 1/s",
                )
                return None
            if e_unit.dims != {
                "[mass]": 1,
                "[length]": 2,
                "[time]": -2,
                "[substance]": -1,
            }:
                self.error(
                    line,
                    f"the activation energy of {spec.name} is {ea.text}, which is "
                    f"{describe_dimension(e_unit.dims)}, not a molar energy",
                    ea.unit_column if ea.unit else ea.column,
                    ea.unit or ea.number,
                    "write Ea in kJ/mol or J/mol, e.g. Ea = 95 kJ/mol",
                )
                return None
            if temperature is None and not self._temperature_failed:
                self.error(
                    line,
                    f"{spec.name} follows the Arrhenius law but the file sets no temperature",
                    spec.column,
                    spec.name,
                    "add a line such as temperature = 60 degC",
                )
            energy = _exact(_scaled(ea.number, e_unit.factor))
            prefactor = _scaled(a.number, a_unit.factor)
            if energy is None or _exact(prefactor) is None:
                bad = a if energy is not None else ea
                self.error(
                    line,
                    f"{bad.text} in the Arrhenius parameters of {spec.name} is too large",
                    bad.column,
                    bad.text,
                    "check the value and its unit",
                )
                return None
            arrhenius = Arrhenius(prefactor, energy, a.text, ea.text)
            return RateConstant(spec.name, spec.text, None, a.unit, order, arrhenius, line.number)
        v = spec.value
        try:
            unit = parse_unit(v.unit)
        except ValueError:  # reported by _unit_of, which words the message
            self.errors.append(_unit_of(line, v, f"rate constant {spec.name}", "1/s"))
            return None
        order = unit.rate_order
        if order is None:
            self.error(
                line,
                f"rate constant {spec.name} = {v.text} is {describe_dimension(unit.dims)}, "
                "not a rate constant",
                v.unit_column,
                v.unit,
                "a first-order constant has the unit 1/time (e.g. 1/s, min-1); a "
                "pseudo-first-order one concentration^-1/time (e.g. M-1 s-1)",
            )
            return None
        value_si = _scaled(v.number, unit.factor)
        if not _exact(value_si) and value_si:
            size = "too large" if _exact(value_si) is None else "too small (0 in SI units)"
            self.error(
                line,
                f"rate constant {spec.name} = {v.text} is {size}",
                v.column,
                v.text,
                "check the value and its unit",
            )
            return None
        return RateConstant(spec.name, spec.text, value_si, v.unit, order, None, line.number)

    # -- reactions -------------------------------------------------------------
    def _reactions(self, reactions, excess_names, constants, excess_si):
        reaction_objs: list[Reaction] = []
        steps: list[Step] = []
        for index, r in enumerate(reactions):
            left_pairs = tuple([(t.coefficient, t.name) for t in r.left])
            right_pairs = tuple([(t.coefficient, t.name) for t in r.right])
            names = tuple([ref.name for ref in r.constants])
            reaction_objs.append(
                Reaction(left_pairs, right_pairs, r.reversible, names, r.line.number, r.line.text)
            )
            forward = self._reacting(r, "left", r.left, excess_names)
            reverse = self._reacting(r, "right", r.right, excess_names) if r.reversible else None
            if forward is None or (r.reversible and reverse is None):
                continue
            directions = [("forward", forward, right_pairs, r.constants[0])]
            if r.reversible:
                directions.append(("reverse", reverse, left_pairs, r.constants[1]))
            for direction, (mover, partners), products, ref in directions:
                constant = constants.get(ref.name)
                if constant is None:
                    continue
                self._check_order(r, ref, constant, mover, partners, excess_si)
                if not partners and len(products) == 1 and products[0] == (1.0, mover.name):
                    self.error(
                        r.line,
                        f"this step turns {mover.name} into {mover.name}: it changes nothing",
                        mover.column,
                        mover.name,
                        "remove the line, or write the product the step forms",
                    )
                    continue
                co_reactants = tuple([(t.coefficient, t.name) for t in partners])
                steps.append(Step(mover.name, products, ref.name, co_reactants, index, direction))
        return reaction_objs, steps

    def _reacting(self, r: ReactionStatement, side: str, terms, excess_names):
        """The one reacting species of a side and its excess partners, or None (reported)."""
        if len(terms) == 1 and terms[0].name not in excess_names:
            mover = terms[0]  # the common case: one species, no co-reactant
            partners = []
        else:
            movers = [t for t in terms if t.name not in excess_names]
            partners = [t for t in terms if t.name in excess_names]
            if len(movers) > 1 and len({t.name for t in movers}) == 1:
                # A + A -> ...: one species written twice
                total = sum(t.coefficient for t in movers)
                movers = [_Term(total, movers[0].name, movers[0].column)]
            if len(movers) != 1:
                self._order_error(r, side, movers, partners)
                return None
            mover = movers[0]
        if mover.coefficient != 1:
            self.error(
                r.line,
                f"{mover.name} has the coefficient {mover.coefficient:g} on the "
                f"{side} of a first-order step",
                mover.column,
                mover.name,
                "a first-order step consumes one molecule of its reactant; scale the "
                "products instead",
            )
            return None
        return mover, partners

    def _order_error(self, r: ReactionStatement, side, movers, partners):
        line = r.line
        if not movers:
            terms = r.left if side == "left" else r.right
            self.error(
                line,
                f"every species on the {side} of this step is held in excess, so nothing is "
                "consumed",
                terms[0].column,
                terms[0].name,
                "a first-order step needs one reacting species that is not declared 'excess'",
            )
            return
        names = " and ".join(t.name for t in movers)
        second = movers[1]
        self.error(
            line,
            f"{names} react together on the {side} of this step: that is a second- or "
            "higher-order step, and this tool solves first-order schemes",
            second.column,
            second.name,
            f"if {second.name} is present in large excess, declare it: "
            f"excess {second.name} = 1.0 mol/L (pseudo-first-order)",
        )

    def _check_order(self, r, ref, constant: RateConstant, mover, partners, excess_si):
        if not partners and constant.order == 0:
            return  # the common case: a first-order constant on a first-order step
        key = (constant.order, constant.unit, tuple([(t.coefficient, t.name) for t in partners]))
        if key in self._orders_ok:
            return  # the same constant order, unit and co-reactants were fine before
        needed = sum(Fraction(t.coefficient) for t in partners)
        line = r.line
        if constant.order == needed:
            self._orders_ok.add(key)
            if partners and all(t.name in excess_si for t in partners):
                # dimensions must cancel to 1/time (amounts vs concentrations)
                k_dims = parse_unit(constant.unit).dims
                total = dict(k_dims)
                for t in partners:
                    dims = self.excess_dims.get(t.name)
                    if dims is None:
                        continue
                    for k, v in dims.items():
                        total[k] = total.get(k, 0) + v * Fraction(t.coefficient)
                total = {k: v for k, v in total.items() if v}
                if total != {"[time]": -1}:
                    self._orders_ok.discard(key)
                    self.error(
                        line,
                        f"{constant.name} ({constant.unit}) times the excess concentration of "
                        + " and ".join(t.name for t in partners)
                        + f" does not give 1/time but {describe_dimension(total)}",
                        ref.column,
                        ref.name,
                        "use concentration units for both (e.g. M-1 s-1 with mol/L)",
                    )
            return
        ordinal = {0: "first", 1: "second", 2: "third", 3: "fourth"}
        implied = ordinal.get(constant.order, f"order-{constant.order + 1}")
        name = constant.name
        if needed == 0:
            problem = (
                f"the units of {name} ({constant.unit}) imply a {implied}-order step, but "
                f"{mover.name} reacts alone here (a first-order step needs 1/time)"
            )
            hint = (
                f"if a co-reactant is present in large excess, write it on the left "
                f"({mover.name} + W -> ...) and declare it: excess W = 55 mol/L; otherwise "
                f"give {name} in 1/s"
            )
        else:
            partner_names = " and ".join(t.name for t in partners)
            power = f"{int(needed)}" if needed.denominator == 1 else f"{float(needed):g}"
            problem = (
                f"the units of {name} ({constant.unit}) imply a {implied}-order step, but "
                f"{mover.name} reacts here with {partner_names} held in excess (a "
                f"pseudo-first-order step needs concentration^-{power}/time)"
            )
            example = "M-1 s-1" if power == "1" else f"M-{power} s-1"
            hint = f"give {name} in {example}: multiplied by the excess concentration it gives 1/s"
        self.error(line, problem, ref.column, ref.name, hint)

    # -- species and balance ---------------------------------------------------
    def _species(self, all_species, excess_names, order, values):
        from .balance import formula_mass, parse_formula

        formulas = values["formula"][0]
        masses = dict(values["molar_mass"][0])
        for name, (item, line) in values["formula"][1].items():
            try:
                parse_formula(item.formula)
            except ValueError as exc:
                col = line.code.find(item.formula, item.name_column - 1) + 1
                self.error(
                    line,
                    f"the formula {_q(item.formula)} of {name} does not parse ({exc})",
                    col,
                    item.formula,
                    "write element symbols with counts, e.g. C6H12O6 or Ca(OH)2",
                )
                formulas.pop(name, None)
                continue
            if name in masses:
                self.error(
                    line,
                    f"{name} has both a formula and a molar mass",
                    item.name_column,
                    name,
                    "give one of them; the molar mass follows from the formula",
                )
                continue
            masses[name] = formula_mass(item.formula)
        species_objs, excess_objs = [], []
        for name in all_species:
            excess = name in excess_names
            sp = Species(name, formulas.get(name), masses.get(name), excess, order[name].number)
            (excess_objs if excess else species_objs).append(sp)
        return species_objs, excess_objs

    def _balance(self, reaction_objs, species, allow_imbalance, statements):
        from .balance import atom_balance

        formulas = {s.name: s.formula for s in species}
        if not any(formulas.values()):
            return  # no formulas, nothing to balance
        for reaction, statement in zip(reaction_objs, statements, strict=True):
            result = atom_balance(reaction, formulas)
            if result is None or result.ok or allow_imbalance:
                continue
            self.error(
                statement.line,
                f"atoms do not balance in {reaction.equation}: left {result.left_text}, "
                f"right {result.right_text}",
                statement.arrow_column,
                "<=>" if reaction.reversible else "->",
                "correct the formulas or coefficients, or write 'balance: lumped' for a "
                "lumped scheme",
            )


def _plain_constant(spec: _ConstantSpec, line: _Line) -> RateConstant | None:
    """A plain constant with a known rate unit and a value in range, else None.

    The same result as ``_Builder._constant`` for such constants (which handles
    all others and words the errors), without its checks' overhead.
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
    value_si = _scaled(v.number, unit.factor)
    if not _exact(value_si) and value_si:
        return None  # too large or too small for a double: _Builder._constant says so
    return RateConstant(spec.name, spec.text, value_si, v.unit, order, None, line.number)


def _concentration_part(feed_unit: str) -> str:
    """``mol/L/min`` -> ``mol/L``: drop a trailing time division from a feed unit."""
    text = feed_unit.strip()
    m = re.match(
        r"^(?P<conc>.+?)\s*(?:/\s*(?:s|sec|min|h|hr|hour|d|day)|\s+(?:s|min|h|d)-1)$", text
    )
    return m.group("conc") if m else ""


# ---------------------------------------------------------------------------
# public entry points


def parse(text: str, source: str = "<text>", *, strict_balance: bool = True) -> Scheme:
    """Parse scheme text into a checked :class:`~kinetics.scheme.Scheme`.

    Parameters
    ----------
    text : str
        The scheme, in the language described in the module docstring.
    source : str, optional
        Name used in error messages (a file name).
    strict_balance : bool, optional
        When False, an atom imbalance is not an error (as with ``balance: lumped``).

    Returns
    -------
    Scheme

    Raises
    ------
    SchemeErrors
        With every mistake found in the text, each with line, column and a hint.

    Examples
    --------
    >>> s = parse("A -> B  k1 = 0.12 1/min\\nstart A = 1 mol/L")
    >>> s.species_names, float(s.rates[0])
    (['A', 'B'], 0.002)
    """
    if not isinstance(text, str):
        raise UsageError(
            f"parse() reads scheme text (str), not {type(text).__name__}",
            "decode bytes first, or use kinetics.load(path) for a file",
        )
    if len(text) > MAX_SCHEME_BYTES:
        limit = f"{MAX_SCHEME_BYTES:,}"
        raise SchemeErrors(
            [
                SchemeError(
                    f"the scheme text has {len(text):,} characters; the limit is {limit}",
                    source,
                    hint=_TOO_LARGE,
                )
            ]
        )
    with _collector_paused():
        failures = _Failures(set(), set())
        statements, errors = _read_statements(text, source, failures)
        return _Builder(statements, errors, source, text, strict_balance, failures).build()


@contextlib.contextmanager
def _collector_paused():
    """Pause Python's cyclic garbage collector while a scheme is read.

    A large file creates hundreds of thousands of small objects that all stay
    alive; each collector pass would walk them again (a third of the time for a
    20,000-reaction file).  They hold no reference cycles, so nothing is lost by
    collecting after the parse.  The previous state is restored.
    """
    enabled = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if enabled:
            gc.enable()


def _read_text(path: Path, name: str) -> str:
    """The UTF-8 text of a file, read in chunks up to :data:`MAX_SCHEME_BYTES`.

    Reading stops at the first chunk that shows the file is not a scheme: too
    large, binary (a NUL byte) or not UTF-8, so that ``/dev/zero`` or a large
    binary file is refused at once and never held in memory.
    """
    decoder = codecs.getincrementaldecoder("utf-8-sig")()
    parts: list[str] = []
    size = lines = 0
    limit = f"{MAX_SCHEME_BYTES // (1024 * 1024)} MiB"
    try:
        with path.open("rb") as handle:
            if os.fstat(handle.fileno()).st_size > MAX_SCHEME_BYTES:
                raise SchemeFileError(
                    f"the file is larger than {limit}, the limit for a scheme", name, _TOO_LARGE
                )
            while chunk := handle.read(_CHUNK):
                size += len(chunk)
                if size > MAX_SCHEME_BYTES:
                    raise SchemeFileError(
                        f"the file is larger than {limit}, the limit for a scheme",
                        name,
                        _TOO_LARGE,
                    )
                if b"\0" in chunk:
                    line = lines + chunk[: chunk.index(b"\0")].count(b"\n") + 1
                    raise SchemeFileError(
                        f"the file is not text (it holds a NUL byte, first on line {line})",
                        name,
                        "a scheme is plain UTF-8 text; is this the right file?",
                    )
                parts.append(_decoded(decoder, chunk, lines, name))
                lines += chunk.count(b"\n")
            parts.append(_decoded(decoder, b"", lines, name))
    except OSError as exc:
        if isinstance(exc, SchemeFileError):
            raise
        raise SchemeFileError(f"cannot read the file ({exc.strerror or exc})", name) from exc
    return "".join(parts)


def _decoded(decoder, chunk: bytes, lines: int, name: str) -> str:
    """One chunk decoded (an empty chunk ends the text); ``lines`` lines came before it."""
    try:
        return decoder.decode(chunk, final=not chunk)
    except UnicodeDecodeError as exc:
        line = lines + exc.object[: exc.start].count(b"\n") + 1
        raise SchemeFileError(
            f"the file is not UTF-8 text (undecodable byte at line {line})",
            name,
            "save it as UTF-8 (plain text)",
        ) from None


_CHUNK = 1 << 20
_TOO_LARGE = (
    "a scheme of 500,000 reactions takes about 25 MB; is this the right file? (split a "
    "larger scheme into independent parts)"
)


def load(path, *, strict_balance: bool = True) -> Scheme:
    """Read and check a scheme file.

    Parameters
    ----------
    path : str or os.PathLike
        The scheme file (UTF-8 text).
    strict_balance : bool, optional
        See :func:`parse`.

    Returns
    -------
    Scheme

    Raises
    ------
    SchemeFileError
        When the file is missing, a folder, unreadable or not UTF-8.
    SchemeErrors
        When the text has mistakes.
    """
    p = Path(path)
    if not p.exists():
        raise SchemeFileError("no such file", str(path), "check the path (and the current folder)")
    if p.is_dir():
        raise SchemeFileError("this is a folder, not a scheme file", str(path), "name a file")
    text = _read_text(p, str(path))
    return parse(text, str(path), strict_balance=strict_balance)
