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
from typing import ClassVar, NamedTuple

from ..errors import SchemeError
from .grammar import (
    ARRHENIUS_RE,
    ARROW_RE,
    CONSTANT_LINE,
    ITEM_RE,
    NAME_RE,
    NUMBER_RE,
    RESERVED,
    TERM_RE,
    split_plain,
    split_top,
)
from .messages import keyword_error, quoted, unknown_arrow
from .quantities import Value, read_value
from .source import Line

__all__ = [
    "BalanceStatement",
    "ConstantSpec",
    "ConstantStatement",
    "Item",
    "KeptList",
    "ListStatement",
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
        """The statement of ``line``; with errors, the statement that keeps the declared
        names and the errors; only errors; or None when the line lists nothing."""
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
    """A rate-constant definition: a plain value or Arrhenius parameters (an immutable
    record, like :class:`~kinetics.language.quantities.Value`).

    Examples
    --------
    >>> spec = ConstantSpec("k1", 1, Value("0.12", "1/min", 6, 11), text="0.12 1/min")
    >>> spec.is_arrhenius
    False
    """

    name: str
    column: int
    value: Value | None = None
    prefactor: Value | None = None
    energy: Value | None = None
    text: str = ""

    @property
    def is_arrhenius(self) -> bool:
        """True for ``arrhenius(A = ..., Ea = ...)``."""
        return self.prefactor is not None


def read_constant(
    line: Line, name: str, name_col0: int, text: str, text_col0: int
) -> ConstantSpec | list[SchemeError]:
    """Read the right-hand side of ``name = ...``: a value with a unit, or Arrhenius.

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
    """
    arr = ARRHENIUS_RE.match(text)
    if arr:
        return _read_arrhenius(line, name, name_col0, text, text_col0, arr)
    value = read_value(line, text, text_col0, f"rate constant {name}", "0.12 1/min")
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
    return ConstantSpec(name, name_col0 + 1, value=value, text=text.strip())


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
    """``k1 = 0.12 1/min`` or ``k3 = arrhenius(A = ..., Ea = ...)`` on a line of its own.

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
        if "=" in rest and TERM_RE.match(rest) and not NUMBER_RE.match(rest.lstrip()):
            # "A = B + C  k1 = ...": a reaction written with '=' for its arrow
            if not ARRHENIUS_RE.match(rest.strip()):
                return [unknown_arrow(line, "=", line.code.index("=", lead))]
        spec = read_constant(line, name, lead, rest.strip(), rest_col0)
        if isinstance(spec, list):
            return spec
        if name in RESERVED:
            return [keyword_error(line, name, lead, "a constant")]
        return cls(spec, line)
