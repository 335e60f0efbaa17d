"""The statements of a scheme that are not reactions: one small frozen class per kind.

Each class has a ``from_line`` constructor that answers "not mine" with None,
or returns the statement, or a list of the line's errors (a :class:`ListStatement`
may also return the statement kept despite some errors, with those errors).
Rate constants are read here too, for both places they are written: a line of
their own (:class:`ConstantStatement`) and the end of a reaction line.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from fractions import Fraction
from typing import ClassVar, NamedTuple

from ..errors import SchemeError
from ..expressions import Expr
from ..units import parse_unit
from .arithmetic import CALLABLE, read_expression
from .grammar import (
    ARRHENIUS_RE,
    ARROW_RE,
    CONSTANT_LINE,
    DECAY_KEYS,
    ITEM_RE,
    NAME_RE,
    NUMBER_RE,
    RESERVED,
    TERM_RE,
    split_plain,
    split_top,
    top_level_equals,
)
from .messages import keyword_error, quoted, unknown_arrow
from .quantities import Value, fraction, number_problem, read_value
from .source import Line

__all__ = [
    "BalanceStatement",
    "ConstantSpec",
    "ConstantStatement",
    "Item",
    "KeptList",
    "ListStatement",
    "RequireStatement",
    "TemperatureStatement",
    "TitleStatement",
    "read_constant",
]

_ARRHENIUS_EXAMPLE = "write arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)"


@dataclass(frozen=True, slots=True)
class TitleStatement:
    """``title: free text``.

    Examples
    --------
    >>> TitleStatement.from_line(Line("t", 1, "title: Ester", "title: Ester")).text
    'Ester'
    """

    text: str
    line: Line

    @classmethod
    def from_line(cls, line: Line) -> TitleStatement | None:
        """The statement of ``line``, or None when the line is no title."""
        code = line.code.lstrip()
        if not re.match(r"title\s*:", code, re.IGNORECASE):
            return None
        return cls(code.split(":", 1)[1].strip(), line)  # '#' starts a comment here too


@dataclass(frozen=True, slots=True)
class BalanceStatement:
    """``balance: lumped`` (atom imbalance only warned about) or ``balance: strict``.

    Examples
    --------
    >>> BalanceStatement.from_line(Line("t", 1, "balance: lumped", "balance: lumped")).mode
    'lumped'
    """

    mode: str
    line: Line

    @classmethod
    def from_line(cls, line: Line) -> BalanceStatement | list[SchemeError] | None:
        """The statement of ``line``, its errors, or None when it is no balance line."""
        code = line.code.lstrip()
        if not re.match(r"balance\s*:", code, re.IGNORECASE):
            return None
        after = line.code[line.code.index(":") + 1 :]
        mode = after.strip().lower()
        if mode not in ("lumped", "strict"):
            column = line.code.index(":") + 2 + len(after) - len(after.lstrip())
            return [
                line.error(
                    f"unknown balance mode {quoted(mode)}",
                    column,
                    mode or " ",
                    "write 'balance: lumped' to allow atom imbalance, or 'balance: strict'",
                )
            ]
        return cls(mode, line)


@dataclass(frozen=True, slots=True)
class TemperatureStatement:
    """``temperature = 60 degC`` (kelvin or degrees Celsius).

    Examples
    --------
    >>> code = "temperature = 60 degC"
    >>> TemperatureStatement.from_line(Line("t", 1, code, code)).value.text
    '60 degC'
    """

    value: Value
    line: Line

    @classmethod
    def from_line(cls, line: Line) -> TemperatureStatement | list[SchemeError] | None:
        """The statement of ``line``, its errors, or None when it sets no temperature."""
        match = re.match(r"\s*temperature\s*=\s*", line.code)
        if not match:
            return None
        value = read_value(
            line, line.code[match.end() :], match.end(), "the temperature", "60 degC", signed=True
        )
        if isinstance(value, SchemeError):
            return [value]
        return cls(value, line)


@dataclass(frozen=True, slots=True)
class Item:
    """One ``NAME = VALUE`` of a list statement (``value`` is None for a formula)."""

    name: str
    name_column: int
    value: Value | None
    formula: str = ""


@dataclass(frozen=True, slots=True)
class ListStatement:
    """``start``/``excess``/``feed``/``formula``/``molar_mass`` NAME = VALUE, ...

    Examples
    --------
    >>> code = "start A = 0.5 mol/L, B = 1 mmol/L"
    >>> s = ListStatement.from_line(Line("t", 1, code, code))
    >>> s.kind, [(i.name, i.value.text) for i in s.items]
    ('start', [('A', '0.5 mol/L'), ('B', '1 mmol/L')])
    """

    kind: str
    items: tuple[Item, ...]
    line: Line
    declared: tuple[str, ...] = ()  # every name listed, also those with a bad value

    #: An example of each list statement (in hints).
    EXAMPLES: ClassVar[dict[str, str]] = {
        "start": "start A = 0.5 mol/L",
        "excess": "excess W = 55 mol/L",
        "feed": "feed A = 0.01 mol/L/min",
        "formula": "formula A = C6H12O6",
        "molar_mass": "molar_mass A = 180.2 g/mol",
    }
    #: What the value of each kind is, as a message names it ({} is the species).
    _WHAT: ClassVar[dict[str, str]] = {
        "start": "the start value of {}",
        "excess": "the excess concentration of {}",
        "feed": "the feed rate of {}",
        "molar_mass": "the molar mass of {}",
    }

    @classmethod
    def from_line(cls, line: Line) -> ListStatement | KeptList | list[SchemeError] | None:
        """The statement of ``line``, or its errors, or None when the line lists nothing.

        A line with errors gives the statement that keeps the declared names together with
        the errors (:class:`KeptList`), or only the errors.
        """
        code = line.code
        match = re.match(r"\s*(start|excess|feed|formula|molar_mass)(?=\s|$)", code)
        if not match:
            return None
        kind = match.group(1)
        body = code[match.end() :]
        if ARROW_RE.search(body):  # "start -> B  k1 = ...": a reaction with a keyword
            return [keyword_error(line, kind, match.start(1), "a species")]
        if body.lstrip().startswith("="):  # "start = 0.1 1/s": a constant named so
            return [keyword_error(line, kind, match.start(1), "a constant")]
        if not body.strip():
            problem = f"'{kind}' lists nothing"
            hint = f"write e.g. {cls.EXAMPLES[kind]}"
            return [line.error(problem, match.start(1) + 1, kind, hint)]
        items: list[Item] = []
        declared: list[str] = []
        errors: list[SchemeError] = []
        for piece, col0 in split_plain(body, match.end()):
            found = cls._read_item(line, kind, piece, col0, declared)
            if isinstance(found, SchemeError):
                errors.append(found)
            else:
                items.append(found)
        if not errors:
            return cls(kind, tuple(items), line, tuple(declared))
        # keep the names: an excess species with a bad value is still in excess
        return KeptList(cls(kind, (), line, tuple(declared)), errors)

    @classmethod
    def _read_item(
        cls, line: Line, kind: str, piece: str, col0: int, declared: list[str]
    ) -> Item | SchemeError:
        """One item of a list at 0-based ``col0``; its name goes to ``declared``."""
        example = cls.EXAMPLES[kind]
        article = "an" if kind == "excess" else "a"
        if not piece:
            return line.error(
                f"an empty item in {article} '{kind}' statement (a comma too many?)",
                col0 + 1,
                " ",
                f"write NAME = VALUE items separated by commas, e.g. {example}",
            )
        m = ITEM_RE.match(piece)
        if not m:
            lead = NAME_RE.match(piece)
            if lead:  # "excess W 55 M": W is still meant to be in excess
                declared.append(lead.group(0))
            return line.error(
                f"could not read {quoted(piece)} in {article} '{kind}' statement",
                col0 + 1,
                piece or " ",
                f"write NAME = VALUE, e.g. {example}",
            )
        name = m.group("name")
        declared.append(name)
        rest = piece[m.end() :]
        rest_col0 = col0 + m.end()
        if kind == "formula":
            if not rest.strip():
                hint = f"write e.g. {example}"
                return line.error(f"formula of {name} is empty", rest_col0 + 1, " ", hint)
            return Item(name, col0 + 1, None, rest.strip())
        what = cls._WHAT[kind].format(name)
        value = read_value(line, rest, rest_col0, what, example.split("= ", 1)[1])
        if isinstance(value, SchemeError):
            return value
        return Item(name, col0 + 1, value)


class KeptList(NamedTuple):
    """A list statement kept despite errors in its items, with those errors.

    The statement lists no items but keeps every declared name: a species with
    a bad excess value is still in excess (no follow-on errors about it).
    """

    statement: ListStatement
    errors: list[SchemeError]


class ConstantSpec(NamedTuple):
    """A definition ``name = ...``: a plain value, Arrhenius parameters, or an expression.

    The Arrhenius parameters are plain values.  An immutable record, like
    :class:`~kinetics.language.quantities.Value`.

    Examples
    --------
    >>> spec = ConstantSpec("k1", 1, Value("0.12", "1/min", 6, 11), text="0.12 1/min")
    >>> spec.is_arrhenius, spec.expression is None
    (False, True)
    """

    name: str
    column: int
    value: Value | None = None
    prefactor: Value | None = None
    energy: Value | None = None
    text: str = ""
    expression: Expr | None = None

    @property
    def is_arrhenius(self) -> bool:
        """True for ``arrhenius(A = ..., Ea = ...)`` with plain values."""
        return self.prefactor is not None


def read_constant(
    line: Line, name: str, name_col0: int, text: str, text_col0: int, *, rate: bool = True
) -> ConstantSpec | list[SchemeError]:
    """Read the right-hand side of ``name = ...``.

    It is a value with a unit, Arrhenius parameters or an expression
    (:mod:`~kinetics.language.arithmetic`).

    A plain value (a number and a unit pint reads, or words without operators) and an
    Arrhenius law of plain values keep their own readers and messages; anything else is
    read as an expression.

    Parameters
    ----------
    line : Line
        The line read.
    name : str
        The constant's name.
    name_col0, text_col0 : int
        0-based columns of the name and of the right-hand side ``text``.
    text : str
        The right-hand side.
    rate : bool, optional
        True on a reaction line (the value is a rate constant: it needs a unit and
        cannot be negative); False on a line of its own (a named quantity of any
        dimension, checked once it is known how the file uses it).

    Returns
    -------
    ConstantSpec or list of SchemeError

    Examples
    --------
    >>> code = "k3 = arrhenius(A = 1.0e13 1/s, Ea = 95 kJ/mol)"
    >>> spec = read_constant(Line("t", 1, code, code), "k3", 0, code[5:], 5)
    >>> spec.prefactor.text, spec.energy.text
    ('1.0e13 1/s', '95 kJ/mol')
    >>> [e.problem for e in read_constant(Line("t", 1, "k1 = 2", "k1 = 2"), "k1", 0, "2", 5)]
    ['rate constant k1 has no unit']
    >>> code = "k2 = k1 / 3"
    >>> read_constant(Line("t", 1, code, code), "k2", 0, code[5:], 5).expression.op
    '/'
    """
    arr = ARRHENIUS_RE.match(text)
    if arr and all(_plain_value(piece.partition("=")[2]) for piece, _ in split_top(arr["body"], 0)):
        return _read_arrhenius(line, name, name_col0, text, text_col0, arr)
    if not _plain_value(text):
        what = f"rate constant {name}" if rate else name
        tree = read_expression(line, text, text_col0, what, name)
        if isinstance(tree, list):
            return tree
        return ConstantSpec(name, name_col0 + 1, text=text.strip(), expression=tree)
    what, example = (f"rate constant {name}", "0.12 1/min") if rate else (name, "50 h")
    value = read_value(line, text, text_col0, what, example, signed=not rate)
    if isinstance(value, SchemeError):
        return [value]
    if not value.unit and rate:
        return [
            line.error(
                f"rate constant {name} has no unit",
                value.column,
                value.number,
                f"write its unit after the number, e.g. {name} = {value.number} 1/s",
            )
        ]
    return ConstantSpec(name, name_col0 + 1, value=value, text=text.strip())


def _plain_value(text: str) -> bool:
    """True for a number followed by nothing, by a unit pint reads, or by plain words.

    Words without operators are read as a unit, with the messages of a unit.
    """
    match = NUMBER_RE.match(text.strip())
    if match is None:
        return False
    rest = text.strip()[match.end() :].strip()
    if not rest or rest == "%":
        return True
    try:
        parse_unit(rest)
    except ValueError:
        core = re.sub(r"(?<=[^\W\d])(?:\^|\*\*)?[-+]?\d+", "", rest)  # s-1, s^-1, m3
        core = re.sub(r"^1\s*/", "", core)  # 1/min
        return not re.search(r"[-+*^(),=%]|\s/|/\s", core)
    return True


def _read_arrhenius(
    line: Line, name: str, name_col0: int, text: str, text_col0: int, arr: re.Match[str]
) -> ConstantSpec | list[SchemeError]:
    """``arrhenius(A = ..., Ea = ...)`` matched by ``arr`` in ``text``."""
    body_col0 = text_col0 + arr.start("body")
    parts: dict[str, Value] = {}
    errors: list[SchemeError] = []
    for piece, col0 in split_top(arr.group("body"), body_col0):
        m = re.match(r"(?P<key>\w+)\s*=\s*", piece)
        key = m.group("key") if m else ""
        if m is None or key not in ("A", "Ea"):
            problem = f"could not read {quoted(piece)} in the Arrhenius parameters of {name}"
            errors.append(line.error(problem, col0 + 1, piece or " ", _ARRHENIUS_EXAMPLE))
            continue
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
        if key == "A":
            what, example = f"the pre-exponential factor A of {name}", "1.0e13 1/s"
        else:
            what, example = f"the activation energy Ea of {name}", "95 kJ/mol"
        value = read_value(line, piece[m.end() :], col0 + m.end(), what, example)
        if isinstance(value, SchemeError):
            errors.append(value)
        else:
            parts[key] = value
    if not errors and set(parts) != {"A", "Ea"}:
        missing = " and ".join(sorted({"A", "Ea"} - set(parts)))
        problem = f"the Arrhenius parameters of {name} lack {missing}"
        errors.append(line.error(problem, text_col0 + 1, text, _ARRHENIUS_EXAMPLE))
    if errors:
        return errors
    return ConstantSpec(
        name, name_col0 + 1, prefactor=parts["A"], energy=parts["Ea"], text=text.strip()
    )


@dataclass(frozen=True, slots=True)
class ConstantStatement:
    """``NAME = expression`` on a line of its own: a rate constant or a named quantity.

    A rate constant: ``k1 = 0.12 1/min``, ``k3 = arrhenius(A = ..., Ea = ...)``; a named
    quantity of any dimension: ``t_p = 50 h``, ``lam = 0.88 * ln(2) / t_p``.

    Examples
    --------
    >>> code = "k1 = 0.12 1/min"
    >>> ConstantStatement.from_line(Line("t", 1, code, code)).spec.value.text
    '0.12 1/min'
    """

    spec: ConstantSpec
    line: Line

    @classmethod
    def from_line(cls, line: Line) -> ConstantStatement | list[SchemeError] | None:
        """The statement of ``line``, its errors, or None when it defines no constant."""
        match = CONSTANT_LINE.match(line.code.lstrip())
        if not match or ARROW_RE.search(line.code):
            return None
        lead = len(line.code) - len(line.code.lstrip())
        name = match.group("name")
        rest = line.code.lstrip()[match.end() :]
        rest_col0 = lead + match.end() + (len(rest) - len(rest.lstrip()))
        if top_level_equals(rest) and TERM_RE.match(rest) and not NUMBER_RE.match(rest.lstrip()):
            # "A = B + C  k1 = ...": a reaction written with '=' for its arrow
            return [unknown_arrow(line, "=", line.code.index("=", lead))]
        if name in RESERVED or name in CALLABLE or name in DECAY_KEYS:
            return [keyword_error(line, name, lead, "a constant")]
        spec = read_constant(line, name, lead, rest.strip(), rest_col0, rate=False)
        if isinstance(spec, list):
            return spec
        return cls(spec, line)


#: An example of a requirement (in hints).
REQUIRE_EXAMPLE = "require IMP <= 0.15 % of API"
_COMPARISON = re.compile(r"\s*(<=|>=|≤|≥|==|=<|=>|<|>|=)")
_PERCENT = re.compile(
    rf"\s*(?P<number>{NUMBER_RE.pattern})\s*%\s*(?:of\s+(?P<of>{NAME_RE.pattern}))?\s*$"
)


@dataclass(frozen=True, slots=True)
class RequireStatement:
    """``require S <= VALUE`` or ``require S >= VALUE``.

    ``VALUE`` is a concentration or amount (``2 mmol/L``), a percentage of the species'
    own start value (``90 %``) or a percentage of another species' start value
    (``0.15 % of API``).

    Examples
    --------
    >>> code = "require IMP <= 0.15 % of API"
    >>> s = RequireStatement.from_line(Line("t", 1, code, code))
    >>> s.species, s.comparison, s.share, s.of, s.text
    ('IMP', '<=', Fraction(3, 2000), 'API', 'IMP <= 0.15 % of API')
    """

    species: str
    species_column: int
    comparison: str
    value: Value | None
    share: Fraction | None
    of: str | None
    value_column: int
    text: str
    line: Line

    @classmethod
    def from_line(cls, line: Line) -> RequireStatement | list[SchemeError] | None:
        """The statement of ``line``, its errors, or None when it is no requirement."""
        code = line.code
        match = re.match(r"\s*require(?=\s|$)", code)
        if not match:
            return None
        if ARROW_RE.search(code):
            return [keyword_error(line, "require", match.end() - 7, "a species")]
        body = code[match.end() :]
        name = re.match(rf"\s*({NAME_RE.pattern})", body)
        if name is None:
            problem = (
                "'require' states nothing"
                if not body.strip()
                else f"expected a species name after 'require', found {quoted(body.strip())}"
            )
            col = match.end() + len(body) - len(body.lstrip()) + 1 if body.strip() else 1
            snippet = body.strip() or "require"
            return [line.error(problem, col, snippet, f"write e.g. {REQUIRE_EXAMPLE}")]
        at = match.end() + name.end()
        comparison = _COMPARISON.match(code, at)
        if comparison is None or comparison.group(1) not in ("<=", ">=", "≤", "≥"):
            found = comparison.group(1) if comparison else (code[at:].split() or [""])[0]
            column = (
                comparison.start(1) if comparison else at + len(code[at:]) - len(code[at:].lstrip())
            ) + 1
            return [
                line.error(
                    f"unknown comparison {quoted(found)} in a requirement"
                    if found
                    else "a requirement needs a comparison",
                    column,
                    found or " ",
                    "write <= (stays at or below) or >= (stays at or above), e.g. "
                    + REQUIRE_EXAMPLE,
                )
            ]
        op = {"≤": "<=", "≥": ">="}.get(comparison.group(1), comparison.group(1))
        rest = code[comparison.end() :]
        rest_col0 = comparison.end() + len(rest) - len(rest.lstrip())
        text = code[match.end() :].strip()
        species, species_col = name.group(1), match.end() + name.start(1) + 1
        percent = _PERCENT.match(rest)
        if percent is not None:
            number = percent.group("number")
            trouble = number_problem(number, f"the limit of {species}", "90 %", False)
            if trouble is not None:
                return [line.error(trouble[0], rest_col0 + 1, number, trouble[1])]
            share = fraction(number) / 100
            of = percent.group("of") or species
            return cls(species, species_col, op, None, share, of, rest_col0 + 1, text, line)
        value = read_value(line, rest.strip(), rest_col0, f"the limit of {species}", "2 mmol/L")
        if isinstance(value, SchemeError):
            return [value]
        return cls(species, species_col, op, value, None, None, value.column, text, line)
